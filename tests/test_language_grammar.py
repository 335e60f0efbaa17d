"""Words and patterns of the scheme language (kinetics/language/grammar.py)."""

from __future__ import annotations

import string

from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics.language.grammar import (
    ARROWS,
    DIRECTIVES,
    NAME_RE,
    NUMBER_RE,
    RESERVED,
    split_plain,
    split_top,
)


def test_arrows_and_their_direction():
    assert ARROWS == {"->": False, "→": False, "<=>": True, "⇌": True}


def test_every_directive_is_reserved():
    assert set(DIRECTIVES) <= RESERVED
    assert {"title", "balance", "arrhenius"} <= RESERVED


def test_names_start_with_a_letter():
    assert NAME_RE.fullmatch("k_1'")
    assert NAME_RE.fullmatch("Ä2")
    assert not NAME_RE.match("_k")
    assert not NAME_RE.match("1k")


def test_numbers_as_the_readers_see_them():
    for text in ("1", "-2.5", ".5", "1e-3", "2.E+4", "nan", "Infinity"):
        assert NUMBER_RE.fullmatch(text), text
    assert NUMBER_RE.match("info") is None  # a word that starts like inf


def test_split_top_keeps_parentheses_together():
    assert split_top("a(b, c), d", 2) == [("a(b, c)", 2), ("d", 11)]


def test_split_top_reports_an_unclosed_parenthesis_as_the_last_piece():
    assert split_top("a(b, c", 0) == [("a(b, c", 0)]


pieces = st.text(string.ascii_letters + " =()", max_size=8)


@settings(max_examples=200, deadline=None)
@given(st.lists(pieces, min_size=1, max_size=5), st.integers(0, 50))
def test_split_plain_columns_point_at_each_piece(parts, offset):
    text = ",".join(parts)
    line = " " * offset + text
    found = split_plain(text, offset)
    assert [piece for piece, _ in found] == [p.strip() for p in parts]
    for piece, column in found:
        assert line[column : column + len(piece)] == piece


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(string.ascii_letters + " =", max_size=8), min_size=1, max_size=5))
def test_split_top_equals_split_plain_without_parentheses(parts):
    text = ",".join(parts)
    assert split_top(text, 3) == split_plain(text, 3)
