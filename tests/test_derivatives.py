"""Exact derivatives of expressions and constants (kinetics/derivatives.py, with
Dependencies.slopes and Scheme.constant_slopes).

Reference: mpmath's numerical differentiation (mpmath.diff, 50 digits) of the closed forms
written out by hand: the Arrhenius law k = A exp(-Ea/(R T)) (S. Arrhenius, Z. Phys. Chem.
4, 226 (1889)), the Eyring equation k = (k_B T/h) exp(dS/R) exp(-dH/(R T)) (H. Eyring,
J. Chem. Phys. 3, 107 (1935)), Q10 scaling k_ref Q10^((T - T_ref)/10 K) (common practice,
no source), with the exact 2019 SI constants (BIPM, SI brochure, 9th edition, table 1).
"""

from __future__ import annotations

from fractions import Fraction

import mpmath as mp
import pytest

from kinetics import parse
from kinetics.errors import ExpressionError

mp.mp.dps = 50
R = mp.mpf("1.380649e-23") * mp.mpf("6.02214076e23")
KB_H = mp.mpf("1.380649e-23") / mp.mpf("6.62607015e-34")

SCHEME = """\
t_p = 50 h
f = 87.6 %
Ea_f = 80 kJ/mol
dS = -20 J/(mol K)
T_ref = 25 degC
lam_d = f * ln(2) / t_p
P -> D  lam_d
D -> E  k2 = sqrt(lam_d * 3 / (1 s)) * exp(f) ^ 1.5 / log10(t_p / (1 s))
E -> F  kf = arrhenius(A = 4.0e10 1/s, Ea = Ea_f)
F -> G  ke = eyring(dH = 90 kJ/mol, dS = dS)
G -> H  kq = q10(0.1 1/h, T_ref, 2.5)
H -> I  ka = arrhenius(A = 1e13 1/s, Ea = 100 kJ/mol)
temperature = 30 degC
start P = 1 mol
"""
# the temperature as the scheme keeps it: the double nearest to 30 degC in kelvin
T = mp.mpf(30.0 + 273.15)


def _closed_forms():
    """Each constant as a function of (t_p, f, Ea_f, dS, T_ref, T) written by hand."""

    def lam_d(v):
        return v["f"] * mp.log(2) / v["t_p"]

    return {
        "lam_d": lam_d,
        "k2": lambda v: mp.sqrt(lam_d(v) * 3) * mp.exp(v["f"]) ** 1.5 / mp.log10(v["t_p"]),
        "kf": lambda v: mp.mpf("4e10") * mp.exp(-v["Ea_f"] / (R * v["T"])),
        "ke": lambda v: KB_H * v["T"] * mp.exp(v["dS"] / R) * mp.exp(-90000 / (R * v["T"])),
        "kq": lambda v: mp.mpf(1) / 36000 * mp.mpf("2.5") ** ((v["T"] - v["T_ref"]) / 10),
        "ka": lambda v: mp.mpf("1e13") * mp.exp(-100000 / (R * v["T"])),
    }


NOMINAL = {
    "t_p": mp.mpf(180000),
    "f": mp.mpf("0.876"),
    "Ea_f": mp.mpf(80000),
    "dS": mp.mpf(-20),
    "T_ref": mp.mpf("298.15"),
    "T": T,
}


@pytest.mark.parametrize("name", ["t_p", "f", "Ea_f", "dS", "T_ref", "temperature"])
def test_constant_slopes_match_mpmath_derivatives_of_the_closed_forms(name):
    scheme = parse(SCHEME)
    got = scheme.constant_slopes([name])
    key = "T" if name == "temperature" else name
    for constant, form in _closed_forms().items():

        def along(x, form=form):
            return form({**NOMINAL, key: x})

        expected = mp.diff(along, NOMINAL[key])
        value = got[constant].get(name, Fraction(0))
        if expected == 0:
            assert value == 0, constant
        else:
            ratio = mp.mpf(value.numerator) / value.denominator / expected
            assert abs(ratio - 1) < mp.mpf(10) ** -25, (constant, name)


def test_a_named_constant_is_a_parameter_of_its_own_and_drives_its_followers():
    scheme = parse(SCHEME)
    slopes = scheme.constant_slopes(["lam_d"])
    assert slopes["lam_d"] == {"lam_d": 1}
    assert "lam_d" in slopes["k2"]
    assert slopes["kf"] == {}
    assert slopes["ka"] == {}
    # t_p drives lam_d, but with lam_d also a parameter, lam_d holds still
    both = scheme.constant_slopes(["lam_d", "t_p"])
    assert set(both["lam_d"]) == {"lam_d"}


def test_rational_definitions_differentiate_exactly():
    # k2 = k1 / 3 + 2 k1^2 (1 s): dk2/dk1 = 1/3 + 4 k1 (1 s), exactly (hand derivative)
    s = parse("A -> B  k1 = 0.25 1/s\nB -> C  k2 = k1 / 3 + 2 * k1^2 * (1 s)\nstart A = 1 M")
    assert s.constant_slopes(["k1"])["k2"]["k1"] == Fraction(1, 3) + 4 * Fraction(1, 4)


def test_at_new_values():
    s = parse("t = 2 h\nA -> B  k = 1 / t\nstart A = 1 M")
    # dk/dt = -1/t^2 at t = 1 h
    assert s.constant_slopes(["t"], quantities={"t": Fraction(3600)})["k"]["t"] == Fraction(
        -1, 3600**2
    )


def test_a_square_root_of_zero_has_no_derivative():
    s = parse("x = 0 1/s^2\nA -> B  k = sqrt(x)\nstart A = 1 M")
    with pytest.raises(ExpressionError) as err:
        s.constant_slopes(["x"])
    assert str(err.value) == (
        "sqrt(x) has no derivative here (k); give values away from 0 and negative bases"
    )


def test_unknown_names_are_refused():
    s = parse("A -> B  k = 1 1/s\nstart A = 1 M")
    with pytest.raises(ValueError, match="no named quantity 'q'"):
        s.constant_slopes(["q"])
