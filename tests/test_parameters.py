"""The one parameter grammar (kinetics.parameters) and the one Arrhenius law.

Every message of the grammar is pinned verbatim in both wordings (a sweep names the place
of the name, a fit the free parameter).  Conversions are checked in exact rational
arithmetic against the SI definitions of the units; the Arrhenius constants against
mpmath at 50 digits.
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import numpy as np
import pytest

import kinetics
from kinetics import parameters
from kinetics.errors import ConcentrationError, ConstantError, SpeciesError, TemperatureError
from kinetics.parameters import FIT_WORDS, SweepWords, Target, resolve, to_internal
from kinetics.scheme import Arrhenius, arrhenius_pairs

SCHEME = """\
A -> B      k1 = 0.12 1/min
B + W -> C  k2 = 0.045 M-1 min-1
C -> D      k3 = arrhenius(A = 1.0e12 1/s, Ea = 83.144 kJ/mol)
excess W = 55.5 mol/L
temperature = 25 degC
start A = 0.80 mol/L
"""


@pytest.fixture(scope="module")
def scheme():
    return kinetics.parse(SCHEME)


def test_targets_of_every_kind(scheme):
    words = SweepWords("here")
    k1 = resolve(scheme, " k1 ", words)
    assert (k1.name, k1.kind, k1.unit, k1.label) == ("k1", "constant", "1/min", "k1")
    assert k1.nominal == 0.002  # 0.12 / 60 1/s
    a, ea = resolve(scheme, "k3.A", words), resolve(scheme, "k3.Ea", words)
    assert (a.kind, a.unit, a.nominal) == ("prefactor", "1/s", 1.0e12)
    assert (ea.kind, ea.unit, ea.nominal, ea.si_per_unit) == ("energy", "kJ/mol", 83144.0, 1000.0)
    t = resolve(scheme, "T", words)
    assert (t.name, t.unit, t.nominal) == ("temperature", "degC", 298.15)
    s = resolve(scheme, "start A", words)
    assert (s.name, s.kind, s.label, s.unit, s.si_per_unit) == (
        "start:A",
        "start",
        "start A",
        "mol/L",
        1.0,
    )
    w = resolve(scheme, "excess:W", words)
    assert (w.kind, w.target, w.nominal) == ("excess", "W", 55.5)
    assert not ea.log
    assert k1.log


@pytest.mark.parametrize(
    ("name", "message"),
    [
        (
            "k9",
            "--vary 'x': 'k9' is not a rate constant or parameter of the scheme; parameters are "
            "k1, k2, k3, temperature, start:<species>, excess:<species>",
        ),
        ("k3", "--vary 'x': k3 follows the Arrhenius law; vary k3.A, k3.Ea or temperature instead"),
        (
            "k7.A",
            "--vary 'x': the scheme has no rate constant 'k7'; the constants are k1, k2, k3",
        ),
        (
            "k1.Ea",
            "--vary 'x': k1 is given as a number, not by the Arrhenius law, so it has no Ea; "
            "vary k1 itself, e.g. k1=0.1:1:10:log",
        ),
        (
            "k1.X",
            "--vary 'x': 'k1.X' is not a rate constant or parameter of the scheme; did you mean "
            "'k1'? parameters are k1, k2, k3, temperature, start:<species>, excess:<species>",
        ),
        ("start:W", "--vary 'x': 'W' is not a species of the scheme; W is held in excess: vary "
         "excess:W"),
        (
            "start:Q",
            "--vary 'x': 'Q' is not a species of the scheme; the species are A, B, C, D",
        ),
        ("excess:A", "--vary 'x': 'A' is not a species held in excess; the species are W"),
    ],
)  # fmt: skip
def test_sweep_messages(scheme, name, message):
    # a wrong species is a SpeciesError, every other wrong name a ConstantError
    error = SpeciesError if name.startswith(("start:", "excess:")) else ConstantError
    with pytest.raises(error) as info:
        resolve(scheme, name, SweepWords("--vary 'x'"))
    assert str(info.value) == message


def test_sweep_messages_without_arrhenius_or_excess():
    plain = kinetics.parse("A -> B  k1 = 0.1 1/s\nstart A = 1 mol/L")
    words = SweepWords("grid['temperature']")
    with pytest.raises(TemperatureError) as info:
        resolve(plain, "temperature", words)
    assert str(info.value) == (
        "grid['temperature']: the scheme has no Arrhenius constant, so the temperature changes "
        "nothing; define a constant as k = arrhenius(A = ..., Ea = ...) to sweep temperatures"
    )
    with pytest.raises(SpeciesError) as info:
        resolve(plain, "excess:W", words)
    assert str(info.value) == (
        "grid['temperature']: 'W' is not a species held in excess; the scheme declares no "
        "species in excess"
    )


@pytest.mark.parametrize(
    ("name", "message"),
    [
        (
            "K1",
            "free parameter 'K1' is not a rate constant of the scheme; did you mean 'k1'? (the "
            "constants are k1, k2, k3); start values are written start:SPECIES",
        ),
        ("temperature", "free parameter 'temperature' is not a rate constant of the scheme; "
         "the constants are k1, k2, k3; start values are written start:SPECIES"),
        (
            "k3",
            "free parameter 'k3' follows the Arrhenius law; free its parameters instead: k3.A "
            "and k3.Ea",
        ),
        (
            "kx.A",
            "free parameter 'kx.A': there is no rate constant 'kx'; the constants are k1, k2, k3",
        ),
        ("k3.B", "free parameter 'k3.B': 'B' is not an Arrhenius parameter; write k3.A or k3.Ea"),
        (
            "k1.A",
            "free parameter 'k1.A': k1 is not an Arrhenius constant; free k1 itself, or define "
            "it as k1 = arrhenius(A = ..., Ea = ...)",
        ),
        (
            "start:a",
            "free parameter 'start:a': 'a' is not a species of the scheme; did you mean 'A'? "
            "(the species are A, B, C, D)",
        ),
    ],
)  # fmt: skip
def test_fit_messages(scheme, name, message):
    error = SpeciesError if name.startswith("start:") else ConstantError
    with pytest.raises(error) as info:
        resolve(scheme, name, FIT_WORDS)
    assert str(info.value) == message


def test_unit_messages(scheme):
    k1 = resolve(scheme, "k1", SweepWords("w"))
    cases = [
        ("bananas", "w: 'bananas' is not a unit; hint"),
        ("m", "w: 'm' does not have the dimension of '1/min', the unit of k1 in the file; write "
              "the values in 1/min or leave out the unit"),
    ]  # fmt: skip
    for unit, message in cases:
        with pytest.raises(ConstantError) as info:
            parameters.check_unit(k1, unit, "w", "hint")
        assert str(info.value) == message
    with pytest.raises(ConstantError) as info:
        parameters.check_unit(resolve(scheme, "k3.Ea", FIT_WORDS), "K", "w", "hint")
    assert str(info.value) == "w: 'K' is not a molar energy; write Ea in kJ/mol or J/mol"
    with pytest.raises(TemperatureError) as info:
        parameters.check_unit(resolve(scheme, "T", SweepWords("w")), "kJ/mol", "w", "hint")
    assert str(info.value) == "w: 'kJ/mol' is not a temperature unit; use K or degC"


def test_value_messages(scheme):
    start = resolve(scheme, "start:A", SweepWords("w"))
    with pytest.raises(ConcentrationError) as info:
        parameters.check_values(start, np.array([1.0, -2.0]), "w", "hint")
    assert str(info.value) == "w: a start concentration is negative; give values >= 0"
    with pytest.raises(ConstantError) as info:
        parameters.check_values(resolve(scheme, "k1", FIT_WORDS), np.array([np.nan]), "w", "h")
    assert str(info.value) == "w: a value is not a finite number; h"
    with pytest.raises(TemperatureError) as info:
        parameters.check_values(resolve(scheme, "T", SweepWords("w")), np.array([0.0]), "w", "h")
    assert str(info.value) == "w: a temperature is at or below absolute zero; check the unit"


def test_conversion_is_exact_from_the_text():
    # SI brochure (9th ed., table 8): 1 min = 60 s, 1 h = 3600 s; 1 mmol/L = 1e-3 mol/L
    k = Target("k", "constant", "k", "1/min")
    hi, lo = to_internal(k, [0.045, 1.3], "1/h", ["0.045", "1.3"])
    for h, lw, exact in zip(
        hi, lo, [Fraction(45, 1000) / 3600, Fraction(13, 10) / 3600], strict=True
    ):
        assert h == float(exact)  # correctly rounded
        assert abs(Fraction(h) + Fraction(lw) - exact) <= exact * Fraction(1, 2**105)
    # without the text: the exact value of the double
    hi, lo = to_internal(k, [0.045], "1/min")
    assert Fraction(hi[0]) + Fraction(lo[0]) - Fraction(0.045) / 60 < Fraction(1, 10**35)
    conc = Target("start:A", "start", "A", "mol/L")
    hi, lo = to_internal(conc, [250.0], "mmol/L", ["250"])
    assert (hi[0], lo[0]) == (0.25, 0.0)
    # temperatures and activation energies are the doubles nearest to what was written
    hi, lo = to_internal(Target("temperature", "temperature", "", "degC"), [25.0], "degC")
    assert (hi[0], lo[0]) == (298.15, 0.0)
    ea = Target("k.Ea", "energy", "k", "kJ/mol")
    assert to_internal(ea, [83.144], "kJ/mol", ["83.144"])[0][0] == 83144.0


def test_huge_exponents_in_the_text_stay_cheap():
    k = Target("k", "constant", "k", "1/s")
    hi, lo = to_internal(k, [0.0], "1/s", ["1e-999999999"])
    assert (hi[0], lo[0]) == (0.0, 0.0)


def test_arrhenius_pairs_against_mpmath():
    law = Arrhenius(Fraction(10**12), 83144.0)
    temperatures = [273.15, 298.15, 350.0, 1200.0]
    hi, lo = arrhenius_pairs(law, temperatures)
    mpmath.mp.dps = 50
    R = mpmath.mpf("8.31446261815324")  # CODATA 2018, exact in the 2019 SI
    for h, lw, T in zip(hi, lo, temperatures, strict=True):
        want = mpmath.mpf(10) ** 12 * mpmath.exp(-mpmath.mpf(83144) / (R * mpmath.mpf(T)))
        assert abs((mpmath.mpf(h) + mpmath.mpf(lw)) / want - 1) < mpmath.mpf(2) ** -100
        assert h == law.at(T)  # the scheme's own value, bit for bit
    # varied parts: A as a pair, Ea as given
    hi, lo = arrhenius_pairs(law, 300.0, prefactor=[2e12], prefactor_low=[1e-5], energy=[9e4])
    want = (mpmath.mpf(2e12) + mpmath.mpf(1e-5)) * mpmath.exp(-mpmath.mpf(9e4) / (R * 300))
    assert abs((mpmath.mpf(hi[0]) + mpmath.mpf(lo[0])) / want - 1) < mpmath.mpf(2) ** -100


def test_one_exact_evaluation_per_distinct_temperature(monkeypatch):
    calls = []
    original = Arrhenius.exact

    def counted(self, temperature):
        calls.append(temperature)
        return original(self, temperature)

    monkeypatch.setattr(Arrhenius, "exact", counted)
    law = Arrhenius(Fraction(3 * 10**11), 91234.5)
    grid = np.repeat([301.25, 311.25, 321.25], 1000)  # a temperature axis of a grid
    hi, _ = arrhenius_pairs(law, grid)
    assert len(calls) == 3
    assert np.unique(hi).size == 3
    arrhenius_pairs(law, grid)  # again: from the cache
    assert len(calls) == 3


# -- named quantities (issue 15) ----------------------------------------------------------

NAMED = """\
t_p = 50 h
f = 87.6 %
T_ref = 25 degC
dS = -20 J/(mol K)
spare = 3 h
P -> D  lam_d = f * ln(2) / t_p
D -> E  kq = q10(0.1 1/h, T_ref, 2.5)
E -> F  ke = eyring(dH = 90 kJ/mol, dS = dS)
temperature = 30 degC
start P = 1 mol
"""


def test_named_quantities_are_parameters_of_their_own_unit():
    s = kinetics.parse(NAMED)
    for words in (SweepWords("here"), FIT_WORDS):
        t_p = resolve(s, "t_p", words)
        assert (t_p.kind, t_p.unit, t_p.nominal, t_p.si_per_unit) == (
            "quantity",
            "h",
            180000.0,
            3600.0,
        )
        assert t_p.log
    f = resolve(s, "f", FIT_WORDS)
    assert (f.unit, f.nominal, f.si_per_unit) == ("%", 0.876, 0.01)
    ds = resolve(s, "dS", FIT_WORDS)
    assert ds.nominal == -20.0
    assert not ds.log  # a value below 0: a linear coordinate
    t_ref = resolve(s, "T_ref", SweepWords("here"))
    assert t_ref.is_temperature
    assert t_ref.nominal == 298.15
    # a constant defined by a temperature law: its value at the file's temperature
    assert resolve(s, "ke", FIT_WORDS).nominal == float(s.exact_constants()["ke"])


def test_named_quantities_convert_exactly():
    s = kinetics.parse(NAMED)
    # 40 h = 144000 s; 30 degC = 303.15 K exactly (SI brochure, 9th ed., 2.3.1); 50 % = 1/2
    hi, lo = to_internal(resolve(s, "t_p", FIT_WORDS), [40.0], "h", ["40"])
    assert (hi[0], lo[0]) == (144000.0, 0.0)
    hi, lo = to_internal(resolve(s, "T_ref", FIT_WORDS), [30.0], "degC", ["30"])
    assert abs(Fraction(hi[0]) + Fraction(lo[0]) - Fraction(30315, 100)) < Fraction(1, 10**28)
    assert parameters.from_internal(resolve(s, "T_ref", FIT_WORDS), hi, "degC")[0] == (
        pytest.approx(30.0, abs=1e-12)
    )
    hi, _ = to_internal(resolve(s, "f", FIT_WORDS), [50.0], "%", ["50"])
    assert hi[0] == 0.5


def test_messages_of_named_quantities():
    s = kinetics.parse(NAMED)
    with pytest.raises(ConstantError) as info:
        resolve(s, "spare", SweepWords("grid['spare']"))
    assert str(info.value) == (
        "grid['spare']: no rate constant is defined from spare, so it changes nothing; vary a "
        "quantity that a constant is defined from, e.g. k = ln(2) / spare"
    )
    with pytest.raises(ConstantError) as info:
        resolve(s, "spare", FIT_WORDS)
    assert str(info.value) == (
        "free parameter 'spare': no rate constant is defined from it, so the data cannot tell "
        "its value; free a quantity that a constant is defined from, e.g. k = ln(2) / spare"
    )
    with pytest.raises(ConstantError) as info:
        resolve(s, "t_q", FIT_WORDS)
    assert str(info.value) == (
        "free parameter 't_q' is not a rate constant or named quantity of the scheme; did you "
        "mean 't_p'? (the names are lam_d, kq, ke, t_p, f, T_ref, dS, spare); start values are "
        "written start:SPECIES"
    )
    with pytest.raises(ConstantError) as info:
        resolve(s, "t_q", SweepWords("grid['t_q']"))
    assert str(info.value) == (
        "grid['t_q']: 't_q' is not a rate constant or parameter of the scheme; did you mean "
        "'t_p'? parameters are lam_d, kq, ke, t_p, f, T_ref, dS, spare, temperature, "
        "start:<species>, excess:<species>"
    )
    with pytest.raises(TemperatureError) as info:
        parameters.check_unit(resolve(s, "T_ref", FIT_WORDS), "h", "here", "hint")
    assert str(info.value) == "here: 'h' is not a temperature unit; use K or degC"


def test_column_headers():
    assert parameters.column_header("f", "") == "f [-]"
    assert resolve(kinetics.parse(NAMED), "t_p", FIT_WORDS).column == "t_p [h]"
