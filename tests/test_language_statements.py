"""Statements other than reactions (kinetics/language/statements.py).

Each ``from_line`` answers "not mine" (None), a statement, or the line's errors; the
messages are pinned verbatim in tests/test_parsing.py through ``parse`` and here where a
unit of this module decides them.
"""

from __future__ import annotations

import dataclasses

import pytest

from kinetics.errors import SchemeError
from kinetics.language.source import Line
from kinetics.language.statements import (
    BalanceStatement,
    ConstantStatement,
    KeptList,
    ListStatement,
    TemperatureStatement,
    TitleStatement,
    read_constant,
)


def line(code: str) -> Line:
    return Line("t", 1, code, code)


KINDS = (TitleStatement, BalanceStatement, TemperatureStatement, ListStatement, ConstantStatement)


@pytest.mark.parametrize("kind", KINDS)
def test_a_reaction_line_is_not_theirs(kind):
    assert kind.from_line(line("A -> B  k1 = 1 1/s")) is None


def test_title_keeps_the_text_after_the_colon():
    assert TitleStatement.from_line(line("Title:  Ester hydrolysis ")).text == "Ester hydrolysis"


@pytest.mark.parametrize(
    ("code", "mode"), [("balance: lumped", "lumped"), ("balance:STRICT", "strict")]
)
def test_balance_modes(code, mode):
    assert BalanceStatement.from_line(line(code)).mode == mode


def test_unknown_balance_mode_is_an_error_at_the_mode():
    [error] = BalanceStatement.from_line(line("balance:  loose"))
    assert (error.problem, error.column, error.snippet) == (
        "unknown balance mode 'loose'",
        11,
        "loose",
    )


def test_temperature_may_be_negative_in_celsius():
    statement = TemperatureStatement.from_line(line("temperature = -5 degC"))
    assert statement.value.text == "-5 degC"


def test_list_items_with_columns():
    statement = ListStatement.from_line(line("start A = 0.5 mol/L, B=2 mM"))
    assert [(i.name, i.name_column, i.value.text) for i in statement.items] == [
        ("A", 7, "0.5 mol/L"),
        ("B", 22, "2 mM"),
    ]
    assert statement.declared == ("A", "B")


def test_formula_items_have_no_value():
    statement = ListStatement.from_line(line("formula A = C6H12O6, W = H2O"))
    assert [(i.name, i.formula, i.value) for i in statement.items] == [
        ("A", "C6H12O6", None),
        ("W", "H2O", None),
    ]


def test_a_list_with_a_bad_item_is_kept_with_its_names():
    kept = ListStatement.from_line(line("excess W = fast, X 2 M"))
    assert isinstance(kept, KeptList)
    assert kept.statement.items == ()
    assert kept.statement.declared == ("W", "X")
    assert [e.problem for e in kept.errors] == [
        "could not read a number for the excess concentration of W in 'fast'",
        "could not read 'X 2 M' in an 'excess' statement",
    ]


def test_an_empty_item():
    kept = ListStatement.from_line(line("start A = 1 M,"))
    assert kept.errors[0].problem == "an empty item in a 'start' statement (a comma too many?)"


def test_a_list_keyword_used_as_a_name():
    [error] = ListStatement.from_line(line("feed = 0.1 1/s"))
    assert error.problem == "'feed' is a keyword of the scheme language and cannot name a constant"


def test_constant_line_and_its_keyword_check():
    assert ConstantStatement.from_line(line("k1 = 0.12 1/min")).spec.value.text == "0.12 1/min"
    [error] = ConstantStatement.from_line(line("title = 1 1/s"))
    assert error.problem == "'title' is a keyword of the scheme language and cannot name a constant"


def test_constant_line_with_equals_for_an_arrow():
    [error] = ConstantStatement.from_line(line("A = B + C  k1 = 1 1/s"))
    assert (error.problem, error.column) == ("unknown arrow '='", 3)


def test_read_constant_arrhenius_errors():
    code = "k = arrhenius(A = 1 1/s, A = 2 1/s, B = 3)"
    errors = read_constant(line(code), "k", 0, code[4:], 4)
    assert [e.problem for e in errors] == [
        "the Arrhenius parameters of k give A twice",
        "could not read 'B = 3' in the Arrhenius parameters of k",
    ]
    code = "k = arrhenius(A = 1 1/s)"
    [error] = read_constant(line(code), "k", 0, code[4:], 4)
    assert error.problem == "the Arrhenius parameters of k lack Ea"


def test_statements_are_immutable():
    statement = TitleStatement.from_line(line("title: x"))
    with pytest.raises(dataclasses.FrozenInstanceError):
        statement.text = "y"  # type: ignore[misc]


def test_errors_are_scheme_errors():
    result = TemperatureStatement.from_line(line("temperature = hot"))
    assert all(isinstance(e, SchemeError) for e in result)
