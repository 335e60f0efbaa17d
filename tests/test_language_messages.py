"""Shared wordings and the collector of a file's problems (kinetics/language/messages.py)."""

from __future__ import annotations

import pytest

from kinetics.errors import SchemeErrors
from kinetics.language.messages import (
    MAX_SUGGESTIONS,
    Diagnostics,
    keyword_error,
    quoted,
    unknown_arrow,
)
from kinetics.language.source import Line

LINE = Line("t.scheme", 4, "start -> B  k1 = 1 1/s", "start -> B  k1 = 1 1/s")


def test_quoted_cuts_long_text():
    assert quoted("sec-1") == "'sec-1'"
    assert quoted("x" * 61) == "'" + "x" * 60 + "… (61 characters)'"


def test_keyword_error_wording_for_species_and_constants():
    species = keyword_error(LINE, "start", 0, "a species")
    assert species.headline() == (
        "t.scheme:4:1: 'start' is a keyword of the scheme language and cannot name a species; "
        "choose another name"
    )
    constant = keyword_error(LINE, "start", 0, "a constant")
    assert constant.hint == "choose another name, e.g. k1"


def test_unknown_arrow_wording():
    error = unknown_arrow(LINE, "=>", 6)
    assert error.headline() == (
        "t.scheme:4:7: unknown arrow '=>'; write -> (or →) for an irreversible step and <=> "
        "(or ⇌) for a reversible one"
    )


def test_warnings_name_file_and_line():
    found = Diagnostics("t.scheme")
    found.warn(LINE, "first")
    found.warn(None, "second")
    assert found.warnings == ["t.scheme:4: first", "t.scheme: second"]


def test_suggestions_stop_after_the_budget():
    found = Diagnostics("t", suggestions=2)
    assert found.suggest("k_1", ["k1"]) == "did you mean k1?"
    assert found.suggest("k_2", ["k1", "k2"]) == "did you mean k2?"
    assert found.suggest("k_1", ["k1"]) == ""  # a scan of all names costs time
    assert MAX_SUGGESTIONS == 50


def test_no_close_name_gives_no_suggestion_but_spends_the_budget():
    found = Diagnostics("t", suggestions=1)
    assert found.suggest("zzz", ["k1"]) == ""
    assert found.suggestions_left == 0


def test_errors_raise_together_in_line_order():
    first = Line("t", 1, "x", "x").error("first", 1, "x")
    found = Diagnostics("t", [first])
    found.error(Line("t", 0, "", ""), "whole file")
    with pytest.raises(SchemeErrors) as info:
        found.raise_if_any()
    assert [e.problem for e in info.value.errors] == ["whole file", "first"]


def test_no_errors_raise_nothing():
    Diagnostics("t").raise_if_any()
