"""Bounded reading of scheme text: files read in chunks, text cut into checked lines.

Nothing here understands statements.  This module makes sure that what the
readers see is text of a bounded size: a file larger than
:data:`MAX_SCHEME_BYTES`, binary or not UTF-8 is refused at the first chunk that
shows it, and a line longer than :data:`MAX_LINE_LENGTH` or holding a control
character is refused before it is parsed.
"""

from __future__ import annotations

import codecs
import os
import re
from collections.abc import Iterator
from pathlib import Path
from typing import NamedTuple

from ..errors import SchemeError, SchemeErrors, SchemeFileError

__all__ = [
    "CONTROL_RE",
    "MAX_LINE_LENGTH",
    "MAX_SCHEME_BYTES",
    "MAX_SHOWN_LINE",
    "TOO_LARGE_HINT",
    "Line",
    "check_text_size",
    "raw_lines",
    "read_file",
    "read_text",
    "unreadable_line",
]

#: Longest line read [characters]; a longer one is refused before it is parsed, so that
#: the work per statement stays bounded (README states the limit).
MAX_LINE_LENGTH = 10_000
#: Largest scheme file or text read [bytes of UTF-8; characters for text] (README).
MAX_SCHEME_BYTES = 32 * 1024 * 1024
#: Characters of a refused line kept for its message.
MAX_SHOWN_LINE = 100
#: Bytes read from a file at a time.
CHUNK_BYTES = 1 << 20
#: The hint of every "too large" message.
TOO_LARGE_HINT = (
    "a scheme of 500,000 reactions takes about 25 MB; is this the right file? (split a "
    "larger scheme into independent parts)"
)

#: Control characters that never occur in a text file (tab, form feed, vertical tab and
#: line ends aside, which count as white space).
CONTROL_RE = re.compile(r"[\x00-\x08\x0e-\x1f\x7f]")


class Line(NamedTuple):
    r"""One line of a scheme: where it is, the text as written, and its code.

    An immutable record (a named tuple: one per line of a large file).

    Attributes
    ----------
    source : str
        The file name (``"<text>"`` for a string).
    number : int
        1-based line number.
    text : str
        The whole line as written.
    code : str
        The line without its comment, right-stripped.
    shown : str
        The line as messages show it, each tab one space so that the caret under the
        line stays aligned; empty when that is ``text`` itself.  Made once by the
        reader (a line may have many errors, and they share it):
        ``text.replace("\t", " ") if "\t" in text else ""``.

    Examples
    --------
    >>> line = Line("t.scheme", 3, "A => B  k1 = 1 1/s  # first", "A => B  k1 = 1 1/s")
    >>> print(line.error("unknown arrow '=>'", 3, "=>", "write ->"))
    t.scheme:3:3: unknown arrow '=>'; write ->
        A => B  k1 = 1 1/s  # first
          ^^
    """

    source: str
    number: int
    text: str
    code: str
    shown: str = ""

    def error(
        self, problem: str, column: int = 0, snippet: str = "", hint: str = ""
    ) -> SchemeError:
        """A :class:`~kinetics.errors.SchemeError` at ``column`` (1-based) of this line.

        Examples
        --------
        >>> Line("t", 1, "A -> B", "A -> B").error("a problem", 1, "A").headline()
        't:1:1: a problem'
        """
        shown = self.shown or self.text
        return SchemeError(problem, self.source, self.number, column, shown, snippet, hint)


def check_text_size(text: str, source: str) -> None:
    """Refuse scheme text longer than :data:`MAX_SCHEME_BYTES` characters.

    Parameters
    ----------
    text : str
        The whole scheme.
    source : str
        Its name in the message.

    Raises
    ------
    SchemeErrors
        When the text is too long.

    Examples
    --------
    >>> check_text_size("A -> B  k1 = 1 1/s", "t.scheme") is None
    True
    """
    if len(text) > MAX_SCHEME_BYTES:
        limit = f"{MAX_SCHEME_BYTES:,}"
        problem = f"the scheme text has {len(text):,} characters; the limit is {limit}"
        raise SchemeErrors([SchemeError(problem, source, hint=TOO_LARGE_HINT)])


def raw_lines(text: str) -> Iterator[tuple[int, str]]:
    r"""The lines of ``text`` with their 1-based numbers, as editors count them.

    A byte-order mark at the start is dropped; lines end at ``"\n"``, ``"\r\n"``
    or a lone ``"\r"``.

    Examples
    --------
    >>> list(raw_lines("\ufeffA -> B\r\nstart A = 1 M\rx"))
    [(1, 'A -> B'), (2, 'start A = 1 M'), (3, 'x')]
    """
    if text.startswith("\ufeff"):  # a byte-order mark left by some editors
        text = text[1:]
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return enumerate(text.split("\n"), start=1)


def unreadable_line(source: str, number: int, raw: str) -> SchemeError:
    r"""The error for a line refused before it is parsed: too long, or not text.

    Call it for a line longer than :data:`MAX_LINE_LENGTH` or one that
    :data:`CONTROL_RE` finds a control character in.

    Parameters
    ----------
    source : str
        The file name.
    number : int
        1-based line number.
    raw : str
        The line as written.

    Returns
    -------
    SchemeError

    Examples
    --------
    >>> unreadable_line("t", 2, "A\x00").headline()
    't:2:2: this line contains the control character U+0000, which a scheme file never
    holds; save the scheme as plain UTF-8 text (is this a scheme file?)'
    """
    if len(raw) > MAX_LINE_LENGTH:
        return SchemeError(
            f"this line has {len(raw):,} characters; a line may have at most {MAX_LINE_LENGTH:,}",
            source,
            number,
            1,
            raw[:MAX_SHOWN_LINE] + "…",
            raw[:1],
            "write one statement per line (is this a scheme file?)",
        )
    bad = CONTROL_RE.search(raw)
    assert bad is not None  # the line is not too long, so it holds a control character
    return SchemeError(
        f"this line contains the control character U+{ord(bad.group(0)):04X}, which a "
        "scheme file never holds",
        source,
        number,
        bad.start() + 1,
        CONTROL_RE.sub(" ", raw),
        " ",
        "save the scheme as plain UTF-8 text (is this a scheme file?)",
    )


def read_file(path: str | os.PathLike[str]) -> str:
    """The text of a scheme file, with the file's problems told as a chemist's message.

    Parameters
    ----------
    path : str or os.PathLike
        The scheme file (UTF-8 text).

    Returns
    -------
    str

    Raises
    ------
    SchemeFileError
        When the file is missing, a folder, unreadable, too large or not UTF-8 text.

    Examples
    --------
    >>> read_file("no/such.scheme")
    Traceback (most recent call last):
    ...
    kinetics.errors.SchemeFileError: no/such.scheme: no such file; check the path (and \
the current folder)
    """
    p = Path(path)
    if not p.exists():
        raise SchemeFileError("no such file", str(path), "check the path (and the current folder)")
    if p.is_dir():
        raise SchemeFileError("this is a folder, not a scheme file", str(path), "name a file")
    return read_text(p, str(path))


def read_text(path: Path, name: str) -> str:
    r"""The UTF-8 text of a file, read in chunks up to :data:`MAX_SCHEME_BYTES`.

    Reading stops at the first chunk that shows the file is not a scheme: too
    large, binary (a NUL byte) or not UTF-8, so that ``/dev/zero`` or a large
    binary file is refused at once and never held in memory.

    Parameters
    ----------
    path : pathlib.Path
        The file.
    name : str
        Its name in messages.

    Returns
    -------
    str
        The text, a byte-order mark removed.

    Raises
    ------
    SchemeFileError
        When the file cannot be read, is too large, or is not UTF-8 text.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     path = Path(folder) / "t.scheme"
    ...     _ = path.write_bytes(b"\xef\xbb\xbfA -> B  k1 = 1 1/s\n")
    ...     read_text(path, "t.scheme")
    'A -> B  k1 = 1 1/s\n'
    """
    decoder = codecs.getincrementaldecoder("utf-8-sig")()
    parts: list[str] = []
    size = lines = 0
    try:
        with path.open("rb") as handle:
            _refuse_large(os.fstat(handle.fileno()).st_size, name)
            while chunk := handle.read(CHUNK_BYTES):
                size += len(chunk)
                _refuse_large(size, name)
                _refuse_binary(chunk, lines, name)
                parts.append(_decoded(decoder, chunk, lines, name))
                lines += chunk.count(b"\n")
            parts.append(_decoded(decoder, b"", lines, name))
    except OSError as exc:
        if isinstance(exc, SchemeFileError):
            raise
        raise SchemeFileError(f"cannot read the file ({exc.strerror or exc})", name) from exc
    return "".join(parts)


def _refuse_large(size: int, name: str) -> None:
    if size > MAX_SCHEME_BYTES:
        limit = f"{MAX_SCHEME_BYTES // (1024 * 1024)} MiB"
        raise SchemeFileError(
            f"the file is larger than {limit}, the limit for a scheme", name, TOO_LARGE_HINT
        )


def _refuse_binary(chunk: bytes, lines: int, name: str) -> None:
    """Refuse a chunk holding a NUL byte; ``lines`` lines came before it."""
    if b"\0" in chunk:
        line = lines + chunk[: chunk.index(b"\0")].count(b"\n") + 1
        raise SchemeFileError(
            f"the file is not text (it holds a NUL byte, first on line {line})",
            name,
            "a scheme is plain UTF-8 text; is this the right file?",
        )


def _decoded(decoder: codecs.IncrementalDecoder, chunk: bytes, lines: int, name: str) -> str:
    """One chunk decoded (an empty chunk ends the text); ``lines`` lines came before it."""
    try:
        return decoder.decode(chunk, final=not chunk)
    except UnicodeDecodeError as exc:
        line = lines + exc.object[: exc.start].count(b"\n") + 1
        raise SchemeFileError(
            f"the file is not UTF-8 text (undecodable byte at line {line})",
            name,
            "save it as UTF-8 (plain text)",
        ) from None
