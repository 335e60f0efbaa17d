"""Decay steps written with half-lives (kinetics/language/decay.py).

Messages are pinned with their places in tests/test_parsing.py (NOTATION_ERRORS).
lambda = ln 2 / t_half (textbook definition).
"""

from __future__ import annotations

import math

import pytest

from kinetics import parse
from kinetics.language.decay import remainders
from kinetics.language.reactions import decay_name
from kinetics.language.reader import read_statements


def test_the_untracked_share_is_a_step_to_nothing():
    scheme = parse("P -> D  half_life = 10 h, fraction = 75 %\nstart P = 1 mol")
    assert [s.equation for s in scheme.steps] == ["P -> D", "P -> (untracked)"]
    k = scheme.exact_constants()
    assert float(k["lambda(P->D)"]) == pytest.approx(0.75 * math.log(2) / 36000, rel=1e-15)
    assert float(k["lambda(P untracked)"]) == pytest.approx(0.25 * math.log(2) / 36000, rel=1e-15)


def test_a_named_fraction_keeps_the_untracked_step_even_at_zero():
    scheme = parse("f = 100 %\nP -> D  half_life = 10 h, fraction = f\nstart P = 1 mol")
    assert [s.equation for s in scheme.steps] == ["P -> D", "P -> (untracked)"]
    assert scheme.constants["lambda(P untracked)"].value_si == 0
    less = scheme.with_values(quantities={"f": 0.5})
    assert less.rates[0] == pytest.approx(less.rates[1], rel=1e-15)


def test_parents_and_names():
    text = "P -> D  half_life = 5 h, fraction = 90 %\nQ -> R  half_life = 2 h"
    assert [r.parent for r in remainders(read_statements(text, "t").reactions)] == ["P"]
    assert decay_name("P", ("D", "E")) == "lambda(P->D+E)"
