"""Every command-line option a report names exists on the command line.

The page and the terminal tables tell a user what to pass to see more (action probabilities at
some states, a tolerance, more outer samples). A hint that names a Python-only argument, or an
option that does not exist, leaves a command-line user stuck; this test reads the hints from
rendered reports and checks each option against the real argument parser.
"""

from __future__ import annotations

import re

from bayesirl import suggest
from bayesirl.cli import build_parser
from bayesirl.report.suggestions import as_records, render_text

OPTION = re.compile(r"(?<![\w-])--[a-z][a-z-]*")


def _cli_options() -> set[str]:
    """Every option string of every sub-command."""
    parser = build_parser()
    sub = next(a for a in parser._actions if a.__class__.__name__ == "_SubParsersAction")
    return {opt for p in sub.choices.values() for a in p._actions for opt in a.option_strings}


def missing(text: str) -> set[str]:
    """Options named in ``text`` that no sub-command has (the style sheet's ``--ink``
    variables are not hints)."""
    text = re.sub(r"<style>.*?</style>", "", text, flags=re.S)
    return set(OPTION.findall(text)) - _cli_options()


def test_negative_control_an_unknown_option_is_caught():
    assert missing("add <code>--no-such-option</code> to see more") == {"--no-such-option"}
    assert missing("pass --states 0,1 or --level 0.5") == set()


def test_every_option_named_in_the_pages_and_tables_exists(pages):
    for report, _, html in pages.values():
        assert not missing(html), missing(html)
        assert not missing(report.table())
    # The page must name the options it promises: --states when no states were given.
    ring = pages["ring"][2]
    assert "--tolerance" in pages["pass"][2]
    assert "--states" in ring or "Action probabilities" in ring


def test_the_suggestion_hints_exist(park_report):
    recs = as_records(suggest(park_report.posterior, "start-states", n_outer=8, max_draws=40))
    text = render_text(recs, (6, 7))
    assert "--outer" in text or "Ranking settled" in text
    assert not missing(text)
