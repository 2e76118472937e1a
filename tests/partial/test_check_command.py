"""``bayesirl check`` with episode files that have blanks and with comparison files.

The expected errors are known by hand on the deterministic 2 x 3 map of
``tests/cli/helpers.py``; every bad file exits 2 with one message naming file and line.
"""

from __future__ import annotations

from cli.helpers import TINY_CSV, TINY_TOML

from bayesirl.cli import main

from .test_episode_files import CSV

EPISODES = ('{"episode": "a", "cells": [[0,0],[0,1],[0,2],[1,2]], '
            '"actions": ["right","right","down"]}\n'
            '{"episode": "b", "cells": [[0,0],[1,0],[0,0]], "actions": ["down","up"]}\n')


def _run(tmp_path, capsys, files: dict, *args) -> tuple[int, str, str]:
    (tmp_path / "p.toml").write_text(TINY_TOML)
    for name, text in files.items():
        (tmp_path / name).write_text(text)
    code = main(["check", str(tmp_path / "p.toml"), *[str(tmp_path / a) if "." in a and
                                                       not a.startswith("-") else a
                                                       for a in args]])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_check_reads_blanks_and_comparisons(tmp_path, capsys):
    files = {"e.csv": CSV, "c.jsonl": EPISODES + '{"preferred": "a", "other": "b"}\n'}
    code, out, _ = _run(tmp_path, capsys, files, "e.csv", "--comparisons", "c.jsonl")
    assert code == 0
    assert "1 answers (0 'no preference') comparing 2 episodes (Bradley-Terry" in out
    assert "1 fully recorded, 2 with unrecorded parts (4 actions and 1 states" in out


def test_ties_with_a_tie_parameter_and_a_sampled_judge(tmp_path, capsys):
    judge = "\n[judge]\nrationality = { log_mean = 0.5, log_sd = 0.3 }\ntie = 0.8\n"
    (tmp_path / "p.toml").write_text(TINY_TOML + judge)
    (tmp_path / "c.jsonl").write_text(EPISODES + '{"no_preference": ["a", "b"]}\n'
                                      '{"preferred": "b", "other": "a"}\n')
    code = main(["check", str(tmp_path / "p.toml"), "--comparisons",
                 str(tmp_path / "c.jsonl")])
    out = capsys.readouterr().out
    assert code == 0
    assert ("2 answers (1 'no preference') comparing 2 episodes (Davidson's tie model on "
            "discounted returns; judge rationality sampled, log-normal prior (log_mean 0.5, "
            "log_sd 0.3), tie parameter 0.8 (fixed))") in out
    # negative control: a bad [judge] value is refused naming table and key
    (tmp_path / "p.toml").write_text(TINY_TOML + "\n[judge]\ntie = -1\n")
    code = main(["check", str(tmp_path / "p.toml")])
    assert code == 2 and "[judge] tie" in capsys.readouterr().err


def test_files_without_blanks_read_as_before(tmp_path, capsys):
    code, out, _ = _run(tmp_path, capsys, {"d.csv": TINY_CSV}, "d.csv")
    assert code == 0 and "d.csv: ok - 2 episodes, 6 steps\n" in out


def test_bad_comparison_files_name_line_and_value(tmp_path, capsys):
    cases = {
        '{"preferred": "a", "other": "zz"}\n': "line 3: episode 'zz' is not in the file",
        '{"preferred": "a", "other": "b", "tie": true}\n': "line 3: a tie or 'no preference'",
        '{"preferred": null, "other": "b"}\n': "line 3: a tie or 'no preference'",
        '{"preferred": "a", "other": "a"}\n': "line 3: episode 'a' compared with itself",
        '{"no_preference": ["a"]}\n': "line 3: no_preference ['a'] is not a list of two",
        '{"no_preference": ["a", "b"], "other": "a"}\n': "line 3: keys ['no_preference', "
                                                         "'other']",
        # a tie with no tie parameter in the problem file: refused, naming the remedy
        '{"no_preference": ["a", "b"]}\n': "line 3: a 'no preference' answer (1 in the "
                                           "file); modelling it needs Davidson's tie",
        '{"episode": "x", "cells": [[0,0],[1,1]], "actions": ["down"]}\n':
            "line 3: state (1, 1) is a blocked cell",
    }
    for extra, want in cases.items():
        code, _, err = _run(tmp_path, capsys, {"c.jsonl": EPISODES + extra}, "--comparisons",
                            "c.jsonl")
        assert code == 2, extra
        assert f"c.jsonl {want}" in err, err
    # a demonstration file with a forbidden move between two recorded states
    bad = "episode,step,row,col,action\nw,0,0,0,\nw,1,1,2,\n"
    code, _, err = _run(tmp_path, capsys, {"e.csv": bad}, "e.csv")
    assert code == 2 and ("e.csv line 3: episode 'w' step 1: the dynamics cannot go from "
                          "state 0 by any action to state 5") in err, err
    gap = "episode,step,row,col,action\nw,0,0,0,right\nw,1,,,\nw,2,9,2,\n"
    code, _, err = _run(tmp_path, capsys, {"e.csv": gap}, "e.csv")
    assert code == 2 and "e.csv line 4: cell (row=9, col=2) is off the map" in err, err


def test_nulls_in_json_lines_are_unrecorded_parts(tmp_path, capsys):
    """Formerly refused as bad input (tests/cli/test_hostile.py); now what was not recorded.
    The hostile-input file's first episode, (0,0) --right--> (0,1), is possible."""
    for episode in ('{"states": [0, null], "actions": ["right"]}',
                    '{"states": [0, 1], "actions": [null]}'):
        code, out, err = _run(tmp_path, capsys, {"w.jsonl": episode + "\n"}, "w.jsonl")
        assert code == 0, err
        assert "0 fully recorded, 1 with unrecorded parts" in out
    # negative control: a null where a number is required (the first state) is still refused
    code, _, err = _run(tmp_path, capsys, {"w.jsonl": '{"states": [null, 1], "actions": '
                                                      '["right"]}\n'}, "w.jsonl")
    assert code == 2 and "the first state is not recorded" in err
