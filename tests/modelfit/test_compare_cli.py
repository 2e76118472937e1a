"""``bayesirl compare`` on run folders: a table on the same data, exit 2 on other data,
exact refits of the episodes whose Pareto k is too large with ``--refit``."""

from __future__ import annotations

import numpy as np
import pytest
from cli.helpers import TINY_CSV, TINY_TOML

import bayesirl as bi
import bayesirl.modelfit.loo as loo_module
from bayesirl.cli import main
from bayesirl.commands.views import load_posterior
from bayesirl.io import RunFolder
from bayesirl.modelfit import episode_loo, refit_episodes


def fit(folder, toml: str, csv: str, name: str):
    (folder / f"{name}.toml").write_text(toml)
    (folder / f"{name}.csv").write_text(csv)
    assert main(["--quiet", "fit", str(folder / f"{name}.toml"), str(folder / f"{name}.csv"),
                 "--out", str(folder / name)]) == 0
    return folder / name


@pytest.fixture(scope="module")
def two_runs(tmp_path_factory):
    """The tiny problem fitted with both features and with water only (same episodes)."""
    folder = tmp_path_factory.mktemp("runs")
    no_mud = TINY_TOML.replace('features = ["mud", "water"]', 'features = ["water"]').replace(
        '"m" = { mud = 1 }', '"m" = {}')
    return fit(folder, TINY_TOML, TINY_CSV, "both"), fit(folder, no_mud, TINY_CSV, "water-only")


def test_compare_runs_and_refuses_other_data(tmp_path, capsys, two_runs):
    a, b = two_runs
    capsys.readouterr()
    assert main(["compare", str(a), str(b)]) == 0
    out = capsys.readouterr().out
    assert "elpd" in out and "water-only" in out and "episodes" in out  # few-episodes caveat
    assert main(["compare", "--over", "comparisons", str(a), str(b)]) == 2
    assert "no comparisons" in capsys.readouterr().err  # these runs have no comparison file
    other = fit(tmp_path, TINY_TOML, TINY_CSV.replace("b,2,0,0,right", "b,2,0,0,down"), "other")
    capsys.readouterr()
    assert main(["compare", str(a), str(other)]) == 2
    assert "other data" in capsys.readouterr().err


def test_compare_refit_replaces_the_unreliable_episodes_by_exact_refits(capsys, monkeypatch,
                                                                        two_runs):
    a, b = two_runs
    plain = episode_loo(load_posterior(RunFolder(a)))
    # The tiny runs' k are all below 0.7; a limit below the largest k makes that episode the
    # unreliable one (what the command does with it does not depend on why k is large).
    worst = int(np.argmax(plain.pareto_k))
    monkeypatch.setattr(loo_module, "K_LIMIT", float(np.mean(plain.pareto_k)))
    capsys.readouterr()
    assert main(["compare", str(a), str(b)]) == 0
    named = capsys.readouterr().out
    assert f"#{worst} of both" in named and "compare --refit" in named  # named, not refitted
    assert main(["compare", "--refit", str(a), str(b)]) == 0
    out = capsys.readouterr().out
    assert "Refitted exactly" in out and f"#{worst} of both" in out
    row = next(line.split() for line in out.splitlines() if line.startswith("both "))
    # The exact value: the same refit made directly (same seed and settings: the same draws,
    # whether the chains run in worker processes, as in the command, or one after another).
    exact = refit_episodes(load_posterior(RunFolder(a)), [worst], backend=bi.Serial())[0]
    elpd_i = plain.elpd_i.copy()
    elpd_i[worst] = exact
    assert row[1] == f"{elpd_i.sum():.2f}"
    assert row[5] == "0"  # no unreliable episode left in this run
    # Negative control: the PSIS estimate of that episode differs from the exact value.
    assert f"{plain.elpd:.2f}" != row[1]
