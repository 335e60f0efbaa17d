"""The first pass (kinetics/language/reader.py)."""

from __future__ import annotations

from kinetics.language.reactions import ReactionStatement
from kinetics.language.reader import STATEMENT_KINDS, read_statements, unknown_statement
from kinetics.language.source import Line
from kinetics.language.statements import ListStatement, TemperatureStatement, TitleStatement

TEXT = """title: test   # a comment
A -> B  k1 = 1 1/s

start A = 1 M, B = x M
temperature = hot
A => C  k9
"""


def test_statements_in_line_order_and_their_groups():
    parsed = read_statements(TEXT, "t.scheme")
    assert [type(s) for s in parsed.statements] == [
        TitleStatement,
        ReactionStatement,
        ListStatement,
    ]
    assert parsed.reactions == (parsed.statements[1],)
    assert parsed.lists == (parsed.statements[2],)
    assert (parsed.source, parsed.text) == ("t.scheme", TEXT)


def test_what_failed_is_recorded():
    parsed = read_statements(TEXT, "t.scheme")
    assert [e.line for e in parsed.errors] == [4, 5, 6]
    # the kept list statement is no failure; the temperature line and the unknown arrow are
    assert parsed.failed_kinds == frozenset({TemperatureStatement})
    assert parsed.failed_names == frozenset({"temperature", "hot", "A", "C", "k9"})


def test_a_refused_line_records_its_words():
    parsed = read_statements("A -> B  k1 = 1 1/s\nC\x00 -> D  k2", "t")
    assert "D" in parsed.failed_names
    assert parsed.errors[0].problem.startswith("this line contains the control character U+0000")


def test_tabs_are_shown_as_spaces_under_the_message():
    parsed = read_statements("A\t=> B  k1", "t")
    assert str(parsed.errors[0]).splitlines()[1:] == ["    A => B  k1", "      ^^"]


def test_every_statement_kind_is_offered():
    assert len(STATEMENT_KINDS) == 9  # issue 15 adds require, issue 14 operations and volume


def test_unknown_statement_wordings():
    def of(code):
        return unknown_statement(Line("t", 1, code, code))

    assert of("A B").problem == "could not read this line: expected an arrow before 'B'"
    assert of("A ~> B").problem == "unknown arrow '~>'"
    assert of("start").problem == "could not read this 'start' statement"
    assert of("strat A = 1 M").hint == "did you mean 'start'? (start A = 0.5 mol/L)"
    assert of("initial A = 1 M").hint.startswith("a line is a reaction (A -> B  k1 = 0.1 1/s)")
