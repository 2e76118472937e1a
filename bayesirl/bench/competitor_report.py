"""Markdown for the competitor suite (``bench/competitor.py``): per-gradient CPU time and
bulk-ESS per CPU second, bayesirl against the JAX + numpyro implementation of the model."""

from __future__ import annotations

# On 2 cores a 1-minute load above this means other work shared the CPU during the row.
QUIET_LOAD = 2.5


def _load(loads) -> str:
    return "-".join(f"{x:.1f}" for x in (min(loads), max(loads))) if loads else "?"


def _loaded(results: dict) -> bool:
    rows = results.get("gradient", []) + results.get("nuts", [])
    return any(max(r["load_1min"]) > QUIET_LOAD for r in rows)


def markdown(results: dict) -> list[str]:
    """The section's lines (a one-line note when the suite could not run)."""
    head = ["## Against a strong general-purpose implementation (JAX + numpyro)", ""]
    if "missing" in results:
        return [*head, f"Not measured: {results['missing']}", ""]
    lines = [*head,
             f"The same model and prior written in JAX {results['jax']} and sampled by numpyro "
             f"{results['numpyro']}'s NUTS (`bench/jaxmodel.py`: compiled fixed point, implicit-"
             "function gradient with an iterative adjoint, float64, one XLA thread; checked "
             "against `value_and_grad` to 1e-6 in `tests/bench/test_jax_competitor.py`). 50 "
             "demonstrations of length 50, F = 8, A = 4. Process CPU seconds, medians; the two "
             "codes' repeats are interleaved call by call (gradients) or chain by chain (NUTS). "
             "JAX compile time is shown apart and kept out.", ""]
    if _loaded(results):
        lines += [f"**Measured on a loaded machine** (1-minute load above {QUIET_LOAD} on 2 "
                  "cores in the columns below): absolute times are inflated and these are "
                  "not final numbers; the interleaving keeps the ratios fairer than the "
                  "times.", ""]
    lines += _gradient_md(results.get("gradient", []))
    lines += _profile_md(results.get("profile", {}))
    lines += _nuts_md(results.get("nuts", []))
    return lines


def _gradient_md(rows: list[dict]) -> list[str]:
    if not rows:
        return []
    out = ["### One gradient (log-likelihood and gradient in the weights)", "",
           "Ours: warm `value_and_grad` along a walk of 1% weight changes (its counters give "
           "Newton steps and mat-vecs per call). JAX: anchored at the walk's start (as at the "
           "posterior mode in a fit); `vi` relative value iteration, `newton` Newton-GMRES; "
           "iterations = sweeps (`vi`) or Newton steps (`newton`) at the last point.", "",
           "| problem | discount | ours ms | JAX vi ms (iters) | JAX newton ms (iters) "
           "| ours time / best JAX time | ours sweeps | Newton steps | value / adjoint mat-vecs "
           "| JAX compile s (vi / newton) | load |",
           "|---|---|---|---|---|---|---|---|---|---|---|"]
    for r in rows:
        j, w = r["jax"], r["work"]
        out.append(
            f"| {r['problem']} | {r['discount']} | {r['ours_s'] * 1e3:.2f} | "
            f"{j['vi']['seconds'] * 1e3:.2f} ({j['vi']['iterations']}) | "
            f"{j['newton']['seconds'] * 1e3:.2f} ({j['newton']['iterations']}) | "
            f"{r['ours_over_jax']:.2f}x | {r['ours_s'] / r['sweep_s']:.0f} | "
            f"{w['newton_steps']:.1f} | {w['value_matvecs']:.0f} / {w['adjoint_matvecs']:.0f} | "
            f"{j['vi']['compile_s']:.1f} / {j['newton']['compile_s']:.1f} | "
            f"{_load(r['load_1min'])} |")
    gaps = max(max(m["loglik_rel_gap"], m["grad_rel_gap"]) for r in rows
               for m in r["jax"].values())
    return [*out, "", f"Largest relative gap between the two codes' values or gradients at "
            f"the last point: {gaps:.1e} (ours at its sampling tolerance, 1e-8).", ""]


def _profile_md(profile: dict) -> list[str]:
    if not profile:
        return []
    out = ["### Where our gradient's time goes (cProfile, own time by source, warm calls)", ""]
    for name, entries in profile.items():
        out.append(f"- {name}: " + "; ".join(
            f"{e['where']} {100 * e['share']:.0f}%" for e in entries))
    return [*out, ""]


def _nuts_md(rows: list[dict]) -> list[str]:
    if not rows:
        return []
    out = ["### NUTS: bulk-ESS per CPU second", "",
           "4 chains each, run alternately in one process (ours `sample(chains=1, "
           "backend=Processes(1))` per chain; numpyro's NUTS kernel one compiled step at a time); "
           "min bulk-ESS over the 8 weights; sampling CPU = after warmup. Mean gap: largest "
           "difference of the two posterior means in Monte-Carlo standard errors.", "",
           "| problem | draws / warmup | ours ESS/CPU-s | numpyro ESS/CPU-s | ours / numpyro "
           "| incl. warmup | ours / numpyro ms per gradient | gradients per ESS (ours / "
           "numpyro) | max R-hat (ours / numpyro) | mean gap (MCSE) | load |",
           "|---|---|---|---|---|---|---|---|---|---|---|"]
    for r in rows:
        a, b = r["ours"], r["jax"]
        out.append(
            f"| {r['problem']} | {r['draws']} / {r['warmup']} | "
            f"{a['ess_per_sampling_cpu_s']:.3g} | {b['ess_per_sampling_cpu_s']:.3g} | "
            f"{r['ratio_sampling']:.2f}x | {r['ratio_total']:.2f}x | "
            f"{a['cpu_s_per_eval'] * 1e3:.2f} / {b['cpu_s_per_eval'] * 1e3:.2f} | "
            f"{a['evals_per_ess']:.1f} / {b['evals_per_ess']:.1f} | "
            f"{a['max_rhat']:.3f} / {b['max_rhat']:.3f} | {r['mean_gap_mcse']:.1f} | "
            f"{_load(r['load_1min'])} |")
    out += ["", "numpyro compile (one step, kept out) and mode-finding set-up (not charged), "
            "CPU s: " + "; ".join(f"{r['problem']} {r['jax_compile_s']:.1f} / "
                                  f"{r['jax_setup_s']:.1f}" for r in rows)]
    met = [r["ratio_sampling"] >= 3.0 for r in rows]
    return [*out, f"Target of issue 19, ours >= 3x numpyro's ESS per CPU-s: met on "
            f"{sum(met)} of {len(met)} problems.", ""]
