"""Bounded reading of scheme text (kinetics/language/source.py).

The limits and messages are ours (common practice, no source); each message is
pinned verbatim.
"""

from __future__ import annotations

import pytest

from kinetics.errors import SchemeErrors, SchemeFileError
from kinetics.language import source
from kinetics.language.source import (
    MAX_LINE_LENGTH,
    Line,
    check_text_size,
    raw_lines,
    read_file,
    read_text,
    unreadable_line,
)


def test_line_error_carries_place_text_and_caret():
    line = Line("t.scheme", 3, "A => B  k1 = 1 1/s  # c", "A => B  k1 = 1 1/s")
    error = line.error("unknown arrow '=>'", 3, "=>", "write ->")
    assert (error.source, error.line, error.column, error.snippet) == ("t.scheme", 3, 3, "=>")
    assert str(error) == (
        "t.scheme:3:3: unknown arrow '=>'; write ->\n    A => B  k1 = 1 1/s  # c\n      ^^"
    )


def test_line_shows_its_shown_form_when_given():
    line = Line("t", 1, "A\t=> B", "A\t=> B", "A => B")
    assert line.error("p", 3, "=>").text == "A => B"
    assert Line("t", 1, "A => B", "A => B").error("p").text == "A => B"


def test_line_is_immutable():
    line = Line("t", 1, "A", "A")
    with pytest.raises(AttributeError):
        line.text = "B"  # type: ignore[misc]


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("A\nB", [(1, "A"), (2, "B")]),
        ("A\r\nB", [(1, "A"), (2, "B")]),
        ("A\rB", [(1, "A"), (2, "B")]),
        ("\ufeffA\n", [(1, "A"), (2, "")]),
        ("", [(1, "")]),
    ],
)
def test_raw_lines_count_as_editors_do(text, expected):
    assert list(raw_lines(text)) == expected


def test_a_line_beyond_the_limit_is_refused_with_its_length():
    raw = "A" * (MAX_LINE_LENGTH + 1)
    error = unreadable_line("t", 7, raw)
    assert error.headline() == (
        "t:7:1: this line has 10,001 characters; a line may have at most 10,000; write one "
        "statement per line (is this a scheme file?)"
    )
    assert error.text == "A" * 100 + "…"


def test_a_control_character_is_refused_where_it_stands():
    error = unreadable_line("t", 2, "A -> B\x07")
    assert error.headline() == (
        "t:2:7: this line contains the control character U+0007, which a scheme file never "
        "holds; save the scheme as plain UTF-8 text (is this a scheme file?)"
    )
    assert error.text == "A -> B "


def test_text_size_limit(monkeypatch):
    monkeypatch.setattr(source, "MAX_SCHEME_BYTES", 10)
    check_text_size("A -> B", "t")
    with pytest.raises(SchemeErrors) as info:
        check_text_size("A -> B  k1 = 1 1/s", "t")
    assert info.value.errors[0].headline() == (
        "t: the scheme text has 18 characters; the limit is 10; a scheme of 500,000 reactions "
        "takes about 25 MB; is this the right file? (split a larger scheme into independent "
        "parts)"
    )


def test_read_file_missing_and_folder(tmp_path):
    with pytest.raises(SchemeFileError) as info:
        read_file(tmp_path / "none.scheme")
    assert str(info.value) == (
        f"{tmp_path / 'none.scheme'}: no such file; check the path (and the current folder)"
    )
    with pytest.raises(SchemeFileError) as info:
        read_file(tmp_path)
    assert str(info.value) == f"{tmp_path}: this is a folder, not a scheme file; name a file"


def test_read_text_strips_the_byte_order_mark(tmp_path):
    path = tmp_path / "t.scheme"
    path.write_bytes("\ufeffA -> B  k1 = 1 1/s\n".encode())
    assert read_text(path, "t.scheme") == "A -> B  k1 = 1 1/s\n"


def test_nul_byte_line_is_counted_across_chunks(tmp_path, monkeypatch):
    monkeypatch.setattr(source, "CHUNK_BYTES", 4)
    path = tmp_path / "t.scheme"
    path.write_bytes(b"A\nB\nC\nD\n\0")
    with pytest.raises(SchemeFileError) as info:
        read_text(path, "t.scheme")
    assert str(info.value) == (
        "t.scheme: the file is not text (it holds a NUL byte, first on line 5); a scheme is "
        "plain UTF-8 text; is this the right file?"
    )


def test_undecodable_byte_line_is_counted_across_chunks(tmp_path, monkeypatch):
    monkeypatch.setattr(source, "CHUNK_BYTES", 3)
    path = tmp_path / "t.scheme"
    path.write_bytes(b"A\nB\nC\n\xff\n")
    with pytest.raises(SchemeFileError) as info:
        read_text(path, "t.scheme")
    assert str(info.value) == (
        "t.scheme: the file is not UTF-8 text (undecodable byte at line 4); save it as UTF-8 "
        "(plain text)"
    )


def test_a_character_split_between_chunks_is_decoded(tmp_path, monkeypatch):
    monkeypatch.setattr(source, "CHUNK_BYTES", 1)
    path = tmp_path / "t.scheme"
    path.write_text("A → B  k1 = 1 1/s", encoding="utf-8")
    assert read_text(path, "t") == "A → B  k1 = 1 1/s"


def test_a_file_over_the_limit_is_refused_before_it_is_read(tmp_path, monkeypatch):
    monkeypatch.setattr(source, "MAX_SCHEME_BYTES", 4)
    path = tmp_path / "t.scheme"
    path.write_bytes(b"A -> B\n")
    with pytest.raises(SchemeFileError) as info:
        read_text(path, "t.scheme")
    assert str(info.value).startswith("t.scheme: the file is larger than 0 MiB, the limit")
