"""The README's examples of episode files with blanks and of comparison files are read by
the readers they document (the park map of the README's first TOML block)."""

from __future__ import annotations

from cli.test_docs import blocks

from bayesirl.io import read_problem
from bayesirl.io.comparisonfiles import read_comparisons
from bayesirl.io.episodefiles import read_episodes


def test_readme_episode_and_comparison_examples(tmp_path):
    (tmp_path / "park.toml").write_text(blocks("toml")[0])
    problem = read_problem(tmp_path / "park.toml")
    (tmp_path / "tracks.csv").write_text(blocks("csv")[2])
    (tmp_path / "tracks.jsonl").write_text(blocks("jsonl")[1])
    (tmp_path / "answers.jsonl").write_text(blocks("jsonl")[2])
    a = read_episodes(tmp_path / "tracks.csv", problem)
    assert a.incomplete == ["track-1"] and a.episodes["track-1"][0].tolist()[3] == -1
    b = read_episodes(tmp_path / "tracks.jsonl", problem)
    assert b.incomplete == ["track-2"]
    c = read_comparisons(tmp_path / "answers.jsonl", problem)
    assert c.pairs == [("short", "muddy")]
    assert c.term(problem.mdp).differences.shape == (1, 4)
