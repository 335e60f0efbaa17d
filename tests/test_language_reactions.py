"""Reaction lines (kinetics/language/reactions.py).

The fast reader must return exactly what the general reader returns (also checked on
generated lines in tests/test_parsing_properties.py).
"""

from __future__ import annotations

import pytest

from kinetics.errors import SchemeError
from kinetics.language.reactions import (
    ConstantRef,
    ReactionStatement,
    Term,
    fast_reaction,
    read_terms,
)
from kinetics.language.source import Line


def line(code: str) -> Line:
    return Line("t", 1, code, code)


PLAIN = [
    "A -> B  k1",
    "A -> B + 2 C  k1 = 0.12 1/min",
    "A + W -> B  kw = 1e-3 M-1 s-1",
    "B <=> D  kf = 2.0e-3 1/s, kr = 5.0e-4 1/s",
    "X → 0.5 Y + Z'  k_2 = .5 h-1",
    "P ⇌ Q  kf, kr",
]


@pytest.mark.parametrize("code", PLAIN)
def test_fast_and_general_readers_agree(code):
    fast = fast_reaction(line(code))
    assert fast is not None
    assert fast == ReactionStatement.from_line_general(line(code))


@pytest.mark.parametrize(
    "code",
    ["A -> B", "A => B  k1", "A -> B -> C  k1", "start -> B  k1", "A -> 0 B  k1", "A -> B  k1 k2"],
)
def test_the_fast_reader_leaves_the_rest_to_the_general_one(code):
    assert fast_reaction(line(code)) is None


def test_terms_and_columns():
    statement = ReactionStatement.from_line(line("A + W -> B + 2 C  k1"))
    assert statement.left == (Term(1.0, "A", 1), Term(1.0, "W", 5))
    assert statement.right == (Term(1.0, "B", 10), Term(2.0, "C", 16))
    assert statement.constants == (ConstantRef("k1", 19, None),)
    assert (statement.reversible, statement.arrow_column) == (False, 7)


def test_read_terms_returns_the_rest():
    terms, rest = read_terms(line("A + 2 B junk"), "A + 2 B junk", 0, "left")
    assert [t.name for t in terms] == ["A", "B"]
    assert rest == " junk"


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("A + ", "expected a species name after '+' on the right of the arrow"),
        ("", "expected a species name here on the right of the arrow"),
        ("0 A", "stoichiometric coefficient of A is 0"),
        (
            "9" * 400 + " A",
            "stoichiometric coefficient of A is '" + "9" * 60 + "… (400 characters)', "
            "which is too large to count molecules",
        ),
        ("excess", "'excess' is a keyword of the scheme language and cannot name a species"),
    ],
)
def test_read_terms_errors(text, problem):
    error = read_terms(line(text), text, 0, "right")
    assert isinstance(error, SchemeError)
    assert error.problem == problem


@pytest.mark.parametrize(
    ("code", "problem"),
    [
        ("A -> B -> C  k1", "a reaction line has one arrow; this one has several"),
        ("A --> B  k1", "unknown arrow '-->'"),
        ("A -> B", "this reaction has no rate constant"),
        (
            "A <=> B  k1",
            "a reversible step needs two rate constants (forward, then reverse); found 1",
        ),
        (
            "A -> B  k1, k2",
            "an irreversible step has one rate constant; found 2 (did you mean the "
            "reversible arrow <=>?)",
        ),
        ("A -> B  k1 C", "unexpected text after 'k1': 'C'"),
    ],
)
def test_general_reader_errors(code, problem):
    [error] = ReactionStatement.from_line(line(code))
    assert error.problem == problem


def test_not_a_reaction_line():
    assert ReactionStatement.from_line(line("k1 = 1 1/s")) is None


def test_reaction_statements_are_immutable():
    statement = fast_reaction(line("A -> B  k1"))
    with pytest.raises(AttributeError):
        statement.reversible = True  # type: ignore[misc]
