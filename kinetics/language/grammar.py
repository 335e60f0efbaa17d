"""The words and patterns of the scheme language: arrows, keywords, names and numbers.

One home for the lexical rules; the statement readers build on these
patterns and never write their own version of a name or a number.
"""

from __future__ import annotations

import re

__all__ = [
    "ARROWS",
    "ARROW_CHARS",
    "ARROW_RE",
    "BAD_ARROW_RE",
    "DECAY_KEYS",
    "DIRECTIVES",
    "NAME",
    "NAME_RE",
    "NUMBER_RE",
    "RESERVED",
    "TERM_RE",
    "split_plain",
    "split_top",
    "top_level_equals",
]

#: Arrows of the language: irreversible and reversible, with Unicode synonyms.
ARROWS = {"->": False, "→": False, "<=>": True, "⇌": True}
#: Directive keywords that start a line.
DIRECTIVES = (
    "start",
    "excess",
    "feed",
    "formula",
    "molar_mass",
    "temperature",
    "require",
    "volume",
)
#: Words that cannot name a species or a constant.
RESERVED = frozenset({*DIRECTIVES, "title", "balance", "arrhenius"})
#: Keys of a decay step written without a named constant
#: (``P -> D  half_life = 65.9 h, fraction = 87.6 %``); they cannot name a constant.
DECAY_KEYS = ("half_life", "fraction")

#: A species or constant name: a letter, then letters, digits, ``_`` and ``'``.
NAME = r"[^\W\d_][\w']*"
NAME_RE = re.compile(NAME)
#: A number as the readers accept it (``nan`` and ``inf`` are read to be refused).
NUMBER_RE = re.compile(
    r"[-+]?(?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?|(?:nan|inf(?:inity)?)(?![\w]))",
    re.IGNORECASE,
)
#: One term of a reaction side: an optional coefficient and a name.
TERM_RE = re.compile(rf"\s*(?:(?P<coef>\d+(?:\.\d*)?|\.\d+)\s*)?(?P<name>{NAME})")
#: ``NAME NAME =``: a directive-like line (``strat A = 1 M``).
DIRECTIVE_LIKE = re.compile(rf"\s*{NAME}\s+{NAME}\s*=")
PLUS_RE = re.compile(r"\s*\+")
#: A constant after the products: ``k1`` or ``k1 =`` (not ``=>`` or ``==``).
REF_RE = re.compile(rf"(?P<name>{NAME})\s*(?P<eq>=(?![=>]))?\s*")
FIRST_WORD = re.compile(r"\s*([^\W\d]\w*)")
#: ``NAME =`` at the start of a list item.
ITEM_RE = re.compile(rf"(?P<name>{NAME})\s*=\s*")
#: ``NAME =`` at the start of a line of its own: a constant.
CONSTANT_LINE = re.compile(rf"^(?P<name>{NAME})\s*=(?![=>])")
ARROW_RE = re.compile(r"<=>|⇌|->|→")
#: Characters an ASCII arrow is drawn with; a run of them that is not a known arrow
#: (``=>``, ``<->``, ``-->``) is reported as an unknown arrow.
ARROW_CHARS = "<>=-~"
BAD_ARROW_RE = re.compile(r"[<>=~-]+|[↔⇄⟶⟷←⇒⇔⇋⟵⟹⟺↦⟼⤳⇀⇁↽⇉]")
ARRHENIUS_RE = re.compile(r"arrhenius\s*\((?P<body>.*)\)\s*$", re.IGNORECASE)


def _piece(raw: str, column0: int) -> tuple[str, int]:
    """``raw`` stripped, with the 0-based column of its first character."""
    return raw.strip(), column0 + len(raw) - len(raw.lstrip())


def split_plain(text: str, offset: int) -> list[tuple[str, int]]:
    """Split at every comma; return (piece, 0-based column) pairs, stripped.

    Parameters
    ----------
    text : str
        The text to split.
    offset : int
        0-based column of ``text`` in its line.

    Examples
    --------
    >>> split_plain(" A = 1 M,  B = 2 M", 5)
    [('A = 1 M', 6), ('B = 2 M', 16)]
    """
    pieces: list[tuple[str, int]] = []
    start = 0
    for raw in text.split(","):
        pieces.append(_piece(raw, offset + start))
        start += len(raw) + 1
    return pieces


def split_top(text: str, offset: int) -> list[tuple[str, int]]:
    """Split at commas outside parentheses; return (piece, 0-based column) pairs, stripped.

    The last piece is always returned, also when a parenthesis is left open (the
    piece then fails to parse and is reported where it stands).

    Parameters
    ----------
    text : str
        The text to split.
    offset : int
        0-based column of ``text`` in its line.

    Examples
    --------
    >>> split_top("k1 = arrhenius(A = 1 1/s, Ea = 9 kJ/mol), k2", 0)
    [('k1 = arrhenius(A = 1 1/s, Ea = 9 kJ/mol)', 0), ('k2', 42)]
    """
    if "(" not in text:  # the common case
        return split_plain(text, offset)
    pieces: list[tuple[str, int]] = []
    depth = 0
    start = 0
    for i, ch in enumerate(text):
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth = max(0, depth - 1)
        elif ch == "," and depth == 0:
            pieces.append(_piece(text[start:i], offset + start))
            start = i + 1
    pieces.append(_piece(text[start:], offset + start))
    return pieces


def top_level_equals(text: str) -> bool:
    """True when ``text`` holds ``=`` outside parentheses.

    So ``A = B + C  k1 = ...`` (a reaction written with ``=`` for its arrow) holds one, and
    ``arrhenius(A = ..., Ea = ...)`` does not.

    Examples
    --------
    >>> top_level_equals("B + C  k1 = 1 1/s"), top_level_equals("eyring(dH = 1 J/mol)")
    (True, False)
    """
    depth = 0
    for ch in text:
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth = max(0, depth - 1)
        elif ch == "=" and depth == 0:
            return True
    return False
