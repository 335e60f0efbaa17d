"""``require`` lines resolved (kinetics/language/requirements.py).

Molar mass of glucose C6H12O6 180.156 g/mol (standard atomic weights, IUPAC 2021, via
periodictable); hand arithmetic otherwise.  Messages are pinned with their places in
tests/test_parsing.py (NOTATION_ERRORS).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from kinetics import parse

BASE = "API -> IMP  k1 = 0.01 1/d\nstart API = 2 mmol/L\n"


@pytest.mark.parametrize(
    ("line", "threshold", "share", "of"),
    [
        ("require IMP <= 5 umol/L", 0.005, None, None),
        ("require IMP <= 0.15 % of API", 0.003, Fraction(3, 2000), "API"),
        ("require API >= 90 %", 1.8, Fraction(9, 10), "API"),
        ("require API ≥ 1 mmol/L", 1.0, None, None),
    ],
)
def test_thresholds_in_the_scheme_unit(line, threshold, share, of):
    (r,) = parse(BASE + line).requirements
    assert (r.threshold, r.share, r.of) == (threshold, share, of)
    assert r.text == line.removeprefix("require ")


def test_a_limit_given_as_a_mass_uses_the_molar_mass():
    (r,) = parse(BASE + "formula IMP = C6H12O6\nrequire IMP <= 0.180156 mg/L").requirements
    assert r.threshold == pytest.approx(0.001, rel=1e-6)
