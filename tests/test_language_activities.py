"""Start values written as activities (kinetics/language/activities.py and the activity
items of kinetics/language/values.py).

N_A = 6.02214076e23 /mol (2019 SI, exact); lambda = ln 2 / t_half (textbook definition).
Messages are pinned with their places in tests/test_parsing.py (NOTATION_ERRORS).
"""

from __future__ import annotations

import math

import pytest

from kinetics import parse
from kinetics.language.values import activity_basis
from kinetics.units import parse_unit


@pytest.mark.parametrize(
    ("unit", "basis"),
    [
        ("GBq", "absolute"),
        ("mCi", "absolute"),
        ("MBq/L", "volume"),
        ("kBq/kg", "soil"),
        ("1/s", "absolute"),
        ("mol", None),
        ("Bq/m2", None),
    ],
)
def test_the_basis_of_an_activity(unit, basis):
    assert activity_basis(parse_unit(unit)) == basis


@pytest.mark.parametrize(
    ("start", "unit", "amount"),
    [
        ("10 GBq", "mol", 1e10 * 3600 / math.log(2) / 6.02214076e23),
        ("2 mCi", "mol", 2 * 3.7e7 * 3600 / math.log(2) / 6.02214076e23),
        ("5 MBq/L", "mol/L", 5e6 * 3600 / math.log(2) / 6.02214076e23),
    ],
)
def test_activities_set_amounts_of_their_basis(start, unit, amount):
    scheme = parse(f"P -> D  half_life = 1 h\nstart P = {start}")
    assert scheme.concentration_unit == unit
    assert scheme.initial["P"] == pytest.approx(amount, rel=1e-15)


def test_activities_mix_with_amounts_of_the_same_basis():
    scheme = parse("P -> D  half_life = 1 h\nstart D = 2 nmol, P = 10 GBq")
    assert scheme.concentration_unit == "nmol"
    assert scheme.initial["D"] == 2.0
    assert scheme.initial["P"] == pytest.approx(
        1e10 * 3600 / math.log(2) / 6.02214076e14, rel=1e-15
    )
