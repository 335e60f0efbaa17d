"""Named quantities written as expressions (kinetics/language/named.py).

The messages are pinned with their places in tests/test_parsing.py (NOTATION_ERRORS);
here the units of the module: references, cycles, evaluation, the graph.  Values: hand
arithmetic (common practice, no source).
"""

from __future__ import annotations

from fractions import Fraction

from kinetics import parse
from kinetics.expressions import ExactQuantity
from kinetics.language.messages import Diagnostics
from kinetics.language.named import Entry, check_references, evaluate_entries, plain_value
from kinetics.language.reader import read_statements
from kinetics.scheme import RateConstant

RATE = (("[time]", Fraction(-1)),)


def entries_of(text):
    parsed = read_statements(text, "t")
    return {
        s.spec.name: Entry(s.spec, s.line, False)
        for s in parsed.statements
        if s.spec.expression is not None
    }


def test_every_cycle_is_reported_once_and_its_followers_are_not_evaluated():
    entries = entries_of("a = b\nb = a\nc = a * 2\nd = d + 1\ne = 2 h * 3")
    found = Diagnostics("t")
    bad = check_references(entries, (), (), (), found)
    assert bad == {"a", "b", "c", "d"}
    assert [e.headline() for e in found.errors] == [
        "t:2:5: a depends on itself: a -> b -> a; define one of them by a value",
        "t:4:5: d depends on itself: d -> d; define one of them by a value",
    ]


def test_names_on_lines_that_failed_are_not_reported_again():
    found = Diagnostics("t")
    assert check_references(entries_of("k = 2 * q"), (), (), {"q"}, found) == {"k"}
    assert found.errors == []


def test_evaluation_in_dependency_order():
    entries = entries_of("k2 = k1 / 3\nk1 = 1 / t\nt = 2 h * 3")
    entries = {n: Entry(e.spec, e.line, n != "t") for n, e in entries.items()}
    results = evaluate_entries(entries, {}, set(), None, False, Diagnostics("t"))
    assert results.constants["k2"].value_si == Fraction(1, 64800)
    assert results.quantities["t"].value_si == 21600
    assert list(results.constants) == ["k2", "k1"]
    hours = ExactQuantity(Fraction(3600), (("[time]", Fraction(1)),))
    plain = evaluate_entries(
        {"k1": entries["k1"]}, {"t": hours}, set(), None, False, Diagnostics("t")
    )
    assert plain.constants["k1"].value_si == Fraction(1, 3600)


def test_plain_values_enter_expressions_exactly():
    c = RateConstant("k1", "0.12 1/min", Fraction(1, 500), "1/min", 0)
    assert plain_value(c, None) == ExactQuantity(Fraction(1, 500), RATE)


def test_constants_derived_from_a_temperature_law_keep_no_value():
    scheme = parse(
        "kf = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\nk2 = kf / 2\nA -> B  kf\nB -> C  k2\n"
        "temperature = 300 K\nstart A = 1 M"
    )
    assert scheme.constants["k2"].value_si is None
    assert scheme.constants["k2"].derived is scheme.dependencies
    assert float(scheme.rates[1]) == float(scheme.exact_constants()["kf"] / 2)
    assert scheme.dependencies.on_temperature == {"kf", "k2"}
