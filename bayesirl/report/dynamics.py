"""The report's "Dynamics uncertainty" section, from the plain record of
:meth:`bayesirl.posterior.dynamics.CutPosterior.summary` (this module imports no posterior).

For each weight: the interval with the dynamics' uncertainty carried in (the cut
posterior, pooled over dynamics draws) beside the interval with the dynamics fixed at their
posterior mean (plug-in), and the share of the weight's posterior variance that comes from
the dynamics, with one sentence in plain words.
"""

from __future__ import annotations

from html import escape

# A share this many times its Monte-Carlo floor is taken as measured, not noise (common
# practice: about two standard errors; the floor is the expected share from noise alone).
NOISE_FACTOR = 2.0


def sentence(row: dict) -> str:
    """One plain-words sentence about where a weight's uncertainty comes from."""
    name, share = row["feature"], row["share"]
    pct = f"{share:.0%}"
    if share <= NOISE_FACTOR * row["floor"]:
        return (f"{name}: no measurable part of its uncertainty comes from the transitions "
                f"(the {pct} measured is within Monte-Carlo noise); more demonstrations, "
                "not more logged transitions, are what would narrow it.")
    if share >= 0.5:
        return (f"{name}: {pct} of its uncertainty comes from not knowing the transitions "
                "well enough; that part stays however many demonstrations are added, so "
                "logging more transitions is the larger lever here.")
    return (f"{name}: {pct} of its uncertainty comes from not knowing the transitions, the "
            "rest from the demonstrations themselves; more demonstrations address the "
            "larger part, more logged transitions the smaller.")


def _width(iv) -> float:
    return float(iv[1] - iv[0])


def render_text(record: dict) -> str:
    """The section as plain text (terminal and Markdown code block)."""
    lvl = f"{record['level']:.0%}"
    lines = [f"dynamics uncertainty ({record['dynamics_draws']} dynamics draws, "
             f"{record['logged']} logged transitions counted)",
             f"{'feature':<14}{lvl + ' with dynamics':>26}{lvl + ' plug-in':>26}"
             f"{'width x':>9}{'from dynamics':>15}"]
    for r in record["weights"]:
        lo, hi = r["interval"]
        plug, ratio = "-", "-"
        if r["plug_in"] is not None:
            plug = f"[{r['plug_in'][0]:.3f}, {r['plug_in'][1]:.3f}]"
            ratio = f"{_width(r['interval']) / _width(r['plug_in']):.2f}"
        lines.append(f"{r['feature']:<14}{f'[{lo:.3f}, {hi:.3f}]':>26}{plug:>26}{ratio:>9}"
                     f"{r['share']:>14.0%} ")
    lines += [""] + [sentence(r) for r in record["weights"]]
    lines += ["", _caveat(record)]
    return "\n".join(lines)


def _caveat(record: dict) -> str:
    warn = ""
    if record.get("rhat", 1.0) >= 1.01:
        warn = (f" Some run's chains disagree (R-hat up to {record['rhat']:.3f}): run "
                "longer before trusting the split.")
    return ("The dynamics are learned from the logged transitions alone (a cut posterior): "
            "the demonstrators' choices do not update them. The split is the law of total "
            "variance over the dynamics draws; with few draws its between-draw part is "
            "itself uncertain." + warn)


def render_html(record: dict) -> str:
    """The section as an HTML fragment (a table and the sentences)."""
    lvl = f"{record['level']:.0%}"
    head = (f"<tr><th>feature</th><th>{lvl} interval, dynamics uncertain</th>"
            f"<th>{lvl} interval, plug-in dynamics</th><th>width ratio</th>"
            "<th>share of variance from dynamics</th></tr>")
    body = []
    for r in record["weights"]:
        plug = "&ndash;" if r["plug_in"] is None else (
            f"[{r['plug_in'][0]:.3f}, {r['plug_in'][1]:.3f}]")
        ratio = "&ndash;" if r["plug_in"] is None else (
            f"{_width(r['interval']) / _width(r['plug_in']):.2f}")
        body.append(f"<tr><td>{escape(r['feature'])}</td><td>[{r['interval'][0]:.3f}, "
                    f"{r['interval'][1]:.3f}]</td><td>{plug}</td><td>{ratio}</td>"
                    f"<td>{r['share']:.0%}</td></tr>")
    words = "".join(f"<li>{escape(sentence(r))}</li>" for r in record["weights"])
    return (f"<section id='dynamics'><h2>Dynamics uncertainty</h2><p>"
            f"{record['dynamics_draws']} draws of the dynamics from "
            f"{record['logged']} logged transitions.</p><table>{head}{''.join(body)}</table>"
            f"<ul>{words}</ul><p>{escape(_caveat(record))}</p></section>")
