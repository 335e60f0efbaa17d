"""Requirements as data (kinetics/requirements.py); hand arithmetic (no source)."""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from kinetics import parse
from kinetics.requirements import COMPARISONS, Requirement


def test_holds_for_numbers_and_arrays():
    at_most = Requirement("IMP <= 2 mmol/L", "IMP", "<=", 2.0)
    at_least = Requirement("API >= 90 %", "API", ">=", 0.9, Fraction(9, 10), "API")
    assert at_most.holds(2.0)
    assert not at_most.holds(2.1)
    np.testing.assert_array_equal(at_least.holds([1.0, 0.9, 0.5]), [True, True, False])
    assert COMPARISONS == ("<=", ">=")


def test_percentages_follow_the_start_values():
    r = Requirement("IMP <= 0.15 % of API", "IMP", "<=", 0.003, Fraction(3, 2000), "API")
    assert r.for_start({"API": 4.0}).threshold == 0.006
    fixed = Requirement("IMP <= 2 mmol/L", "IMP", "<=", 2.0)
    assert fixed.for_start({"API": 4.0}) is fixed


def test_the_scheme_keeps_them_and_updates_them_with_new_start_values():
    scheme = parse(
        "API -> IMP  k1 = 0.01 1/d\nstart API = 2 mmol/L\nrequire API >= 90 %\n"
        "require IMP <= 0.15 % of API\nrequire IMP <= 1 umol/L"
    )
    assert [(r.text, r.threshold) for r in scheme.requirements] == [
        ("API >= 90 %", 1.8),
        ("IMP <= 0.15 % of API", 0.003),
        ("IMP <= 1 umol/L", 0.001),
    ]
    more = scheme.with_values(initial={"API": 4.0})
    assert [r.threshold for r in more.requirements] == [3.6, 0.006, 0.001]
