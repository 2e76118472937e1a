"""Compact terminal rendering of an ambiguity report."""

from __future__ import annotations


def render_text(report) -> str:
    """Weights table, undetermined directions, structural findings, policy risk."""
    lvl = f"{report.level:.0%}"
    lines = [report.verdict, "",
             f"{'feature':<14}{'mean':>9}{'sd':>8}{lvl + ' interval':>22}{'contraction':>13}"
             f"  {'verdict':<22}sign"]
    for r in report.weights:
        lo, hi = r["interval"]
        c = "-" if r["contraction"] is None else f"{r['contraction']:.2f}"
        lines.append(f"{r['feature']:<14}{r['mean']:9.3f}{r['sd']:8.3f}"
                     f"{f'[{lo:.3f}, {hi:.3f}]':>22}{c:>13}  {r['verdict']:<22}{r['sign']}")
    groups = [g["text"] for g in getattr(report, "groups", [])]
    if groups:
        lines += ["", "determined only in combination:"] + [f"  {t}" for t in groups]
    und = [d["text"] for d in report.directions if d["verdict"] == "undetermined"]
    if und:
        lines += ["", "undetermined directions:"] + [f"  {t}" for t in und]
    if report.structural:
        lines += ["", "structural findings:"]
        lines += [f"  [{f['cause']}] {f['message']}" for f in report.structural]
    risk = report.policy_risk
    lines += ["", f"policy risk: {risk['alpha']:.0%} bound {risk['bound']:.3g} "
                  f"({risk['fraction_bound']:.1%} of value range), mean {risk['mean']:.3g}"]
    return "\n".join(lines)
