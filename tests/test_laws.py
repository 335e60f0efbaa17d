"""Temperature laws (kinetics/laws.py): Eyring and Q10 beside Arrhenius.

References: the Eyring equation k = (k_B T / h) exp(dS/R) exp(-dH/(R T)) (H. Eyring,
J. Chem. Phys. 3, 107 (1935)) with the exact 2019 SI values k_B = 1.380649e-23 J/K,
h = 6.62607015e-34 J s, N_A = 6.02214076e23 /mol (BIPM, SI brochure, 9th edition, 2019,
table 1), evaluated by hand with mpmath at 50 digits; Q10 scaling k_ref Q10^((T-T_ref)/10 K)
(common practice, no source).
"""

from __future__ import annotations

from fractions import Fraction

import mpmath as mp
import pytest

from kinetics import parse
from kinetics.errors import ExpressionError
from kinetics.laws import LAWS, Q10, Eyring


def eyring_by_hand(dh, ds, t):
    mp.mp.dps = 50
    kb, h, na = mp.mpf("1.380649e-23"), mp.mpf("6.62607015e-34"), mp.mpf("6.02214076e23")
    r = kb * na
    t = mp.mpf(t)
    return kb * t / h * mp.exp(mp.mpf(ds) / r) * mp.exp(-mp.mpf(dh) / (r * t))


@pytest.mark.parametrize(
    ("dh", "ds", "t"),
    [(80000, -20, 298.15), (0, 0, 298.15), (120000, 35.5, 350.0), (55000, -100, 273.15)],
)
def test_eyring_against_the_hand_formula(dh, ds, t):
    got = Eyring(Fraction(dh), Fraction(ds)).exact(t)
    expected = eyring_by_hand(dh, ds, Fraction(t))
    assert abs(mp.mpf(got.numerator) / got.denominator / expected - 1) < mp.mpf(10) ** -38


def test_eyring_in_a_scheme_at_its_temperature_and_at_another():
    scheme = parse(
        "k = eyring(dH = 80 kJ/mol, dS = -20 J/mol/K)\nA -> B  k\ntemperature = 25 degC\n"
        "start A = 1 M"
    )
    assert scheme.constants["k"].value_si is None  # depends on the temperature
    assert float(scheme.rates[0]) == pytest.approx(
        float(eyring_by_hand(80000, -20, 298.15)), rel=1e-15
    )
    hotter = scheme.with_values(temperature=320.0)
    assert float(hotter.rates[0]) == pytest.approx(
        float(eyring_by_hand(80000, -20, 320)), rel=1e-15
    )
    assert scheme.constants["k"].si_value(320.0) == float(hotter.rates[0])


def test_q10_exact_for_whole_steps_of_ten_kelvin():
    law = Q10(Fraction(1, 20), Fraction(300), Fraction(5, 2))
    assert law.exact(320.0) == Fraction(1, 20) * Fraction(25, 4)
    assert law.exact(290.0) == Fraction(1, 20) / Fraction(5, 2)
    mp.mp.dps = 50
    got = law.exact(305.0)
    expected = mp.mpf(1) / 20 * mp.mpf("2.5") ** mp.mpf("0.5")
    assert abs(mp.mpf(got.numerator) / got.denominator - expected) < mp.mpf(10) ** -40
    assert law.at(320.0) == 0.3125


def test_q10_in_a_scheme():
    scheme = parse("k = q10(0.05 1/d, 25 degC, 2)\nA -> B  k\ntemperature = 45 degC\nstart A = 1 M")
    # two steps of 10 K: four times 0.05 1/d (hand value), in 1/s
    assert float(scheme.rates[0]) == pytest.approx(0.2 / 86400, rel=1e-15)


@pytest.mark.parametrize(
    ("law", "message"),
    [
        (
            Q10(Fraction(1), Fraction(300), Fraction(0)),
            "the factor Q10 is 0, not above 0; write Q10 as a number above 0, e.g. 2.5",
        ),
        (
            Q10(Fraction(1), Fraction(0), Fraction(2)),
            "the reference temperature 0 K is not above 0 K; write T_ref above 0 K, e.g. 25 degC",
        ),
        (Eyring(Fraction(0), Fraction(0)), None),
    ],
)
def test_law_messages(law, message):
    if message is None:
        with pytest.raises(ExpressionError) as info:
            law.exact(0.0)
        assert (
            str(info.value) == "the temperature 0 K is not above 0 K; give a temperature above 0 K"
        )
        return
    with pytest.raises(ExpressionError) as info:
        law.exact(300.0)
    assert str(info.value) == message


def test_the_table_of_laws():
    assert sorted(LAWS) == ["arrhenius", "eyring", "q10"]
    assert LAWS["q10"].keys == ("k_ref", "T_ref", "Q10")
    assert LAWS["q10"].positional
    assert not LAWS["arrhenius"].positional


def test_q10_beyond_the_range_is_an_error():
    with pytest.raises(ExpressionError) as info:
        Q10(Fraction(1), Fraction(300), Fraction(5, 2)).exact(3e17)
    assert str(info.value) == (
        "the Q10 factor 2.5 over 3e+17 K is beyond 1e±3900; check the temperatures and the factor"
    )


def test_schemes_with_laws_pickle():
    import pickle

    scheme = parse(
        "k = eyring(dH = 80 kJ/mol, dS = -20 J/mol/K)\nk2 = q10(k, 30 degC, 2)\nA -> B  k\n"
        "B -> C  k2\ntemperature = 25 degC\nstart A = 1 M"
    )
    again = pickle.loads(pickle.dumps(scheme))
    assert list(again.rates) == list(scheme.rates)
    assert list(again.with_values(temperature=310.0).rates) == list(
        scheme.with_values(temperature=310.0).rates
    )
