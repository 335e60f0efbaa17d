"""Settings of an optimisation (kinetics/optimise/settings.py): the --over grammar, exact
unit conversion and the scheme at a set of values.  Unit factors: SI brochure, 9th ed.
(2019), tables 8 and section 2.3.1 (T/K = t/degC + 273.15)."""

from __future__ import annotations

import doctest
import math
from fractions import Fraction

import pytest

import kinetics
from kinetics.errors import SettingError, TimesError
from kinetics.optimise import settings as module
from kinetics.optimise.settings import apply, parse_over
from kinetics.optimise.words import CLI_WORDS

SCHEME = kinetics.parse(
    "t_p = 5 h\nT_ref = 25 degC\n"
    "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    "B -> C  k2 = ln(2) / t_p\nC -> D  k3 = 0.1 1/min\n"
    "A + W -> E  k4 = 0.01 M-1 s-1\nexcess W = 2 mol/L\n"
    "temperature = 50 degC\nstart A = 1 mol/L\nrequire C <= 10 % of A"
)


def test_doctests_run():
    failed, _ = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert failed == 0


@pytest.mark.parametrize(
    ("spec", "kind", "unit", "low", "high"),
    [
        ("temperature=20:80:degC", "temperature", "degC", 293.15, 353.15),
        ("T=300:320", "temperature", "degC", 573.15, 593.15),  # the file's unit, degC
        ("time=0:5:h", "time", "h", 0.0, 18000.0),
        ("t_p=1:10:h", "quantity", "h", 3600.0, 36000.0),
        ("T_ref=20:30:degC", "quantity", "degC", 293.15, 303.15),
        ("k3=0.06:6", "quantity", "1/min", 0.001, 0.1),
        ("start:A=500:2000:mmol/L", "start", "mol/L", 0.5, 2.0),
        ("excess:W=1:3", "excess", "mol/L", 1.0, 3.0),
    ],
)
def test_ranges_are_read_and_converted_exactly(spec, kind, unit, low, high):
    s = parse_over(SCHEME, spec)
    assert (s.kind, s.unit) == (kind, unit)
    assert s.lo_internal == pytest.approx(low, rel=1e-15)
    assert s.hi_internal == pytest.approx(high, rel=1e-15)
    assert s.shown(s.lo_internal) == pytest.approx(s.low, rel=1e-12)


@pytest.mark.parametrize(
    ("spec", "message"),
    [
        (
            "temperature",
            "over entry 'temperature' has no '='; write NAME=LO:HI:UNIT, e.g. "
            "temperature=20:80:degC, time=0:10:h, t_p=40:60:h, start:A=0.5:2:mol/L",
        ),
        (
            "=1:2",
            "over entry '=1:2' needs a name before '='; write NAME=LO:HI:UNIT, e.g. "
            "temperature=20:80:degC, time=0:10:h, t_p=40:60:h, start:A=0.5:2:mol/L",
        ),
        (
            "temperature=a:b",
            "over entry 'temperature=a:b': the range must be LO:HI:UNIT; write "
            "NAME=LO:HI:UNIT, e.g. temperature=20:80:degC, time=0:10:h, t_p=40:60:h, "
            "start:A=0.5:2:mol/L",
        ),
        (
            "temperature=80:20:degC",
            "over entry 'temperature=80:20:degC': the upper bound 20 is not above the lower bound "
            "80; write the lower bound first, e.g. temperature=20:80:degC",
        ),
        (
            "temperature=20:80:m",
            "over entry 'temperature=20:80:m': 'm' is not a temperature unit; use K or degC",
        ),
        (
            "time=0:5",
            "over entry 'time=0:5': the time range has no unit; write e.g. time=0:10:h",
        ),
        (
            "time=0:5:K",
            "over entry 'time=0:5:K': 'K' is not a unit of time; write e.g. time=0:10:h",
        ),
        (
            "time=-1:5:h",
            "over entry 'time=-1:5:h': a time is negative; times start at 0",
        ),
        (
            "t_p=1:5:K",
            "over entry 't_p=1:5:K': 'K' is not a time, the dimension of t_p; write the range in h",
        ),
        (
            "k1=1:2:1/s",
            "over entry 'k1=1:2:1/s': k1 follows the Arrhenius law, so the temperature sets it; "
            "optimise the temperature, or its parts k1.A or k1.Ea",
        ),
        (
            "t_q=1:2:h",
            "over entry 't_q=1:2:h': 't_q' is not a setting of the scheme; did you mean 't_p'? "
            "settings are time, temperature, t_p, T_ref, k1, k2, k3, k4, start:<species>, "
            "excess:<species>",
        ),
        (
            "start:Z=1:2",
            "over entry 'start:Z=1:2': 'Z' is not a species of the scheme; the species are A, "
            "B, C, D, E",
        ),
        (
            "excess:A=1:2",
            "over entry 'excess:A=1:2': 'A' is not a species held in excess; the species are W",
        ),
        (
            "temperature=-300:20:degC",
            "over entry 'temperature=-300:20:degC': a temperature is at or below absolute zero; "
            "check the unit",
        ),
        (
            "k3=-1:2",
            "over entry 'k3=-1:2': a rate constant is negative; give values >= 0",
        ),
        (
            "t_p=1:5:xyz",
            "over entry 't_p=1:5:xyz': 'xyz' is not a unit; write NAME=LO:HI:UNIT, e.g. "
            "temperature=20:80:degC, time=0:10:h, t_p=40:60:h, start:A=0.5:2:mol/L",
        ),
        (
            "time=0:5:xyz",
            "over entry 'time=0:5:xyz': 'xyz' is not a unit; write e.g. time=0:10:h",
        ),
        (
            "k9.A=1:2:1/s",
            "over entry 'k9.A=1:2:1/s': the scheme has no rate constant 'k9'; the constants are "
            "k1, k2, k3, k4",
        ),
        (
            "k3.A=1:2:1/s",
            "over entry 'k3.A=1:2:1/s': k3 is given as a number, not by the Arrhenius law, so it "
            "has no A; optimise k3 itself, e.g. give 'k3=0.5:2:1/min' in over",
        ),
    ],
)
def test_every_mistake_is_one_sentence(spec, message):
    expected = TimesError if spec.startswith("time=") else SettingError
    with pytest.raises(expected) as err:
        parse_over(SCHEME, spec)
    assert type(err.value) is expected
    assert str(err.value) == message


def test_the_command_line_names_its_option():
    with pytest.raises(SettingError) as err:
        parse_over(SCHEME, "k3.A=1:2:1/s", CLI_WORDS)
    assert str(err.value) == (
        "--over 'k3.A=1:2:1/s': k3 is given as a number, not by the Arrhenius law, so it has "
        "no A; optimise k3 itself, e.g. write --over 'k3=0.5:2:1/min'"
    )


def test_the_parts_of_an_arrhenius_constant_are_settings():
    from kinetics.units import GAS_CONSTANT_EXACT

    over = [parse_over(SCHEME, s) for s in ("k1.A=1e9:1e11:1/s", "k1.Ea=70:90:kJ/mol")]
    assert [(s.kind, s.target, s.unit) for s in over] == [
        ("prefactor", "k1", "1/s"),
        ("energy", "k1", "kJ/mol"),
    ]
    assert over[1].lo_internal == 70000.0
    assert over[1].shown(85000.0) == pytest.approx(85.0, rel=1e-15)
    here = apply(SCHEME, over, [2e10, 85000.0])
    law = here.constants["k1"].arrhenius
    assert (float(law.prefactor_si), law.activation_energy) == (2e10, 85000.0)
    # the law stays a law at the scheme's 50 degC: k = A exp(-Ea/RT) (Arrhenius 1889)
    k1 = 2e10 * math.exp(-85000.0 / (float(GAS_CONSTANT_EXACT) * 323.15))
    assert float(here.exact_constants()["k1"]) == pytest.approx(k1, rel=1e-14)


def test_the_scheme_at_a_set_of_values_follows_every_definition():
    over = [parse_over(SCHEME, s) for s in ("temperature=20:80:degC", "t_p=1:10:h", "start:A=1:2")]
    here = apply(SCHEME, over, [313.15, 7200.0, 2.0])
    exact = here.exact_constants()
    assert float(exact["k2"]) == pytest.approx(math.log(2) / 7200, rel=1e-15)
    assert here.temperature == 313.15
    assert here.initial["A"] == 2.0
    assert here.requirements[0].threshold == pytest.approx(0.2)  # 10 % of the new start
    assert apply(SCHEME, [], []) is SCHEME
    assert exact["k3"] == Fraction(1, 600)  # untouched, exact
