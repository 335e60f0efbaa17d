"""Whole-file checks and warnings (kinetics/language/checks.py), through their units."""

from __future__ import annotations

import pytest

from kinetics import SchemeErrors, parse
from kinetics.language.checks import nothing_to_start, unused_constants
from kinetics.language.messages import Diagnostics
from kinetics.language.reader import read_statements


def test_a_step_written_twice_with_one_constant_is_an_error():
    with pytest.raises(SchemeErrors) as info:
        parse("A -> B + C  k1 = 1 1/s\nA -> C + B  k1", "t")
    assert info.value.errors[0].headline() == (
        "t:2:3: the step A -> C + B with k1 is written twice (lines 1 and 2); its rate would "
        "count twice; remove one of the two lines"
    )


def test_a_reversible_line_repeated_is_reported_once():
    with pytest.raises(SchemeErrors) as info:
        parse("A <=> B  kf = 1 1/s, kr = 1 1/s\nA <=> B  kf, kr", "t")
    assert len(info.value.errors) == 1


def test_parallel_steps_are_a_warning():
    scheme = parse("A -> B  k1 = 1 1/s\nA -> B  k2 = 2 1/s\nstart A = 1 M", "t")
    assert scheme.warnings == (
        "t:2: the step A -> B also occurs on line 1: parallel steps, their constants add up "
        "(k1 + k2)",
    )


def test_an_effective_rate_that_underflows():
    text = "A + W -> B  k1 = 1e-300 M-1 s-1\nexcess W = 1e-30 M\nstart A = 1 M"
    with pytest.raises(SchemeErrors) as info:
        parse(text, "t")
    assert info.value.errors[0].problem == (
        "the effective rate constant of A + W -> B underflows to 0 (it is below 5e-324 1/s)"
    )


def test_an_excess_written_as_zero_is_no_underflow():
    scheme = parse("A + W -> B  k1 = 1 M-1 s-1\nexcess W = 0 M\nstart A = 1 M", "t")
    assert scheme.rates[0] == 0


def test_unused_constant_warning():
    parsed = read_statements("k9 = 1 1/s\nk1 = 1 1/s\nA -> B  k1", "t")
    found = Diagnostics("t")
    unused_constants(parsed.statements, parsed.reactions, found)
    assert found.warnings == [
        "t:1: rate constant k9 is defined but no reaction uses it (a misspelt name?)"
    ]


def test_nothing_to_start_warnings():
    parsed = read_statements("A -> B  k1\nstart A = 0 M", "t")
    found = Diagnostics("t")
    nothing_to_start({"A": 0.0}, {}, parsed.lists, parsed.reactions, found)
    nothing_to_start({}, {}, (), parsed.reactions, found)
    nothing_to_start({}, {"A": 1.0}, (), parsed.reactions, found)  # a feed starts it
    assert found.warnings == [
        "t:2: every start value is 0 and nothing is fed: all concentrations stay 0",
        "t: the file has no start line, so every species starts at 0 and all concentrations "
        "stay 0; add e.g. start A = 1 mol/L",
    ]
