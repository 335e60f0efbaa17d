"""The dependency graph of named quantities (kinetics/definitions.py) and the scheme's
re-evaluation through it (Scheme.exact_constants, Scheme.with_values(quantities=...)).

Check values: hand arithmetic (common practice, no source); ln 2 from mpmath (50 digits).
"""

from __future__ import annotations

import pickle
from fractions import Fraction

import mpmath as mp
import pytest

from kinetics import parse
from kinetics.definitions import Definition, Dependencies
from kinetics.errors import ConstantError, ExpressionError, TemperatureError
from kinetics.expressions import Binary, Name, Number, dims_of

TIME = dims_of({"[time]": 1})
RATE = dims_of({"[time]": -1})
TEXT = """\
t_p = 50 h
f = 88 %
lam = f * ln(2) / t_p
k2 = lam / 4
P -> D  lam
D -> E  k2
E -> F  k3 = 0.1 1/h
start P = 1 mol
"""


def definition(name, expr, dims):
    return Definition(name, expr, expr.text, 1, dims)


def graph():
    t = definition("t", Number(Fraction(3600), TIME, "1 h", 5), TIME)
    k = definition(
        "k", Binary("/", Number(Fraction(1), (), "1", 5), Name("t", "t", 9), "1 / t", 7), RATE
    )
    k2 = definition(
        "k2",
        Binary("*", Name("k", "k", 6), Name("k", "k", 10), "k * k", 8),
        dims_of({"[time]": -2}),
    )
    return t, k, k2


def test_order_and_what_follows():
    t, k, k2 = graph()
    deps = Dependencies.ordered([k2, k, t])
    assert [d.name for d in deps.definitions] == ["t", "k", "k2"]
    assert deps.driven_by("t") == ("k", "k2")
    assert deps.driven_by("k2") == ()
    assert [d.name for d in deps.inputs_of(["k"])] == ["t", "k"]
    assert k2.uses == ("k",)


def test_evaluation_with_new_values_is_exact():
    deps = Dependencies.ordered(graph())
    values = deps.evaluate(None, {"t": Fraction(7200)})
    assert values["k"].value == Fraction(1, 7200)
    assert deps.value("k", None) == Fraction(1, 3600)
    fixed = deps.fixed({"k": Fraction(1, 10)})
    assert fixed.evaluate(None)["k"].value == Fraction(1, 10)


def test_a_definition_must_come_after_what_it_uses():
    t, k, _ = graph()
    with pytest.raises(ExpressionError) as info:
        Dependencies((k, t))
    assert str(info.value) == (
        "k uses t, which is not defined before it; order the definitions so that every "
        "name comes after those it uses"
    )


def test_a_cycle_is_refused():
    a = definition("a", Name("b", "b", 5), TIME)
    b = definition("b", Name("a", "a", 5), TIME)
    with pytest.raises(ExpressionError) as info:
        Dependencies.ordered([a, b])
    assert str(info.value) == (
        "the definitions of a and b refer to each other in a cycle; define one of them by a value"
    )


def test_new_values_that_change_a_dimension_or_break_a_function():
    x = definition("x", Number(Fraction(2), (), "2", 5), ())
    y = definition(
        "y",
        Binary("**", Number(Fraction(4), TIME, "4 s", 5), Name("x", "x", 12), "4 s ** x", 9),
        dims_of({"[time]": 2}),
    )
    deps = Dependencies.ordered([x, y])
    with pytest.raises(ExpressionError) as info:
        deps.evaluate(None, {"x": Fraction(3)})
    assert str(info.value) == (
        "y = 4 s ** x is now the dimension time^3, not the dimension time^2 as the file "
        "defines it; give values that keep the dimension of every definition"
    )


def test_the_scheme_keeps_its_graph():
    scheme = parse(TEXT)
    assert [d.name for d in scheme.dependencies.definitions] == ["t_p", "f", "lam", "k2"]
    assert scheme.driven_by("t_p") == ("lam", "k2")
    assert scheme.driven_by("k3") == ()
    assert scheme.quantities["t_p"].value_si == 180000
    assert scheme.quantities["f"].value_si == Fraction(22, 25)
    mp.mp.dps = 50
    lam = scheme.constants["lam"].value_si
    hand = mp.mpf("0.88") * mp.log(2) / 180000  # 0.88 ln 2 / (50 h)
    assert abs(mp.mpf(lam.numerator) / lam.denominator - hand) < mp.mpf(10) ** -44
    assert scheme.constants["k2"].value_si == lam / 4  # exact
    assert pickle.loads(pickle.dumps(scheme)).dependencies == scheme.dependencies


def test_exact_constants_follow_new_values_of_named_quantities():
    scheme = parse(TEXT)
    before = scheme.exact_constants()
    after = scheme.exact_constants(quantities={"t_p": Fraction(90000)})
    assert after["lam"] == 2 * before["lam"]  # half the half-life, exactly twice the constant
    assert after["k2"] == 2 * before["k2"]
    assert after["k3"] == before["k3"] == Fraction(1, 36000)
    # a constant given a value becomes that value; what follows from it follows
    assert scheme.exact_constants(quantities={"lam": Fraction(1, 100)})["k2"] == Fraction(1, 400)


def test_with_values_of_quantities():
    scheme = parse(TEXT)
    faster = scheme.with_values(quantities={"t_p": Fraction(90000)})
    assert faster.quantities["t_p"].value_si == 90000
    assert faster.constants["lam"].value_si == 2 * scheme.constants["lam"].value_si
    assert faster.rates[0] == pytest.approx(2 * scheme.rates[0], rel=1e-15)
    # a constant given a value becomes a plain one; what follows from it follows
    fixed = scheme.with_values(constants={"lam": 0.01})
    assert fixed.constants["lam"].derived is None
    assert fixed.constants["k2"].value_si == Fraction(0.01) / 4


@pytest.mark.parametrize(
    ("values", "error", "message"),
    [
        (
            {"t_x": 1.0},
            ConstantError,
            "no named quantity 't_x' in the scheme; named quantities: t_p, f, lam, k2",
        ),
        ({"t_p": float("nan")}, ConstantError, "t_p = nan must be finite"),
        ({"t_p": "long"}, ConstantError, "t_p must be a number, not 'long'"),
        ({"lam": -1.0}, ConstantError, "rate constant lam = -1.0 must be finite and >= 0"),
        (
            {"f": -1},
            ExpressionError,
            "rate constant lam = f * ln(2) / t_p becomes negative (-3.85082e-06); give values "
            "that keep every rate constant at or above 0",
        ),
    ],
)
def test_bad_new_values(values, error, message):
    scheme = parse(TEXT)
    with pytest.raises(error) as info:
        scheme.exact_constants(quantities=values)
    assert str(info.value) == message


def test_messages_of_constants_that_need_a_temperature():
    scheme = parse(
        "k = eyring(dH = 80 kJ/mol, dS = 0 J/mol/K)\nk2 = k / 2\nA -> B  k\nB -> C  k2\n"
        "temperature = 300 K\nstart A = 1 M"
    )
    message = (
        "rate constant k2 depends on the temperature (through a temperature law) and none is "
        "given; give the temperature in kelvin"
    )
    with pytest.raises(TemperatureError) as info:
        scheme.constants["k2"].exact(None)
    assert str(info.value) == message
    with pytest.raises(ExpressionError) as info:
        scheme.dependencies.value("k2", None)
    assert str(info.value) == (
        "k2 depends on the temperature (through a temperature law); give the temperature in kelvin"
    )
    arrhenius = parse("A -> B  k = arrhenius(A = 1 1/s, Ea = 1 kJ/mol)\ntemperature = 300 K")
    with pytest.raises(TemperatureError) as info:
        arrhenius.constants["k"].exact(None)
    assert str(info.value) == (
        "rate constant k follows the Arrhenius law and needs a temperature; give the "
        "temperature in kelvin"
    )
