"""``bayesirl compare`` on run folders: a table on the same data, exit 2 on other data."""

from __future__ import annotations

from cli.helpers import TINY_CSV, TINY_TOML

from bayesirl.cli import main


def fit(folder, toml: str, csv: str, name: str):
    (folder / f"{name}.toml").write_text(toml)
    (folder / f"{name}.csv").write_text(csv)
    assert main(["--quiet", "fit", str(folder / f"{name}.toml"), str(folder / f"{name}.csv"),
                 "--out", str(folder / name)]) == 0
    return folder / name


def test_compare_runs_and_refuses_other_data(tmp_path, capsys):
    no_mud = TINY_TOML.replace('features = ["mud", "water"]', 'features = ["water"]').replace(
        '"m" = { mud = 1 }', '"m" = {}')
    a = fit(tmp_path, TINY_TOML, TINY_CSV, "both")
    b = fit(tmp_path, no_mud, TINY_CSV, "water-only")
    capsys.readouterr()
    assert main(["compare", str(a), str(b)]) == 0
    out = capsys.readouterr().out
    assert "elpd" in out and "water-only" in out and "episodes" in out  # few-episodes caveat
    other = fit(tmp_path, TINY_TOML, TINY_CSV.replace("b,2,0,0,right", "b,2,0,0,down"), "other")
    capsys.readouterr()
    assert main(["compare", str(a), str(other)]) == 2
    assert "other data" in capsys.readouterr().err
