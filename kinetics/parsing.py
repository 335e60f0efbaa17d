"""Scheme text -> :class:`~kinetics.scheme.Scheme`: the names this module has always offered.

The language and its reader live in the subpackage :mod:`kinetics.language`
(its docstring describes the syntax).  This module re-exports the public
names, so that ``from kinetics.parsing import parse, load`` keeps working.

Atom balance and its opt-out: an atom imbalance is an error by default; a
lumped scheme opts out with the line ``balance: lumped`` in the file, or with
``parse(text, strict_balance=False)`` / ``load(path, strict_balance=False)``
from Python (``kinetics check FILE --allow-imbalance`` on the command line).
"""

from __future__ import annotations

from .language import (
    ARROWS,
    DIRECTIVES,
    MAX_LINE_LENGTH,
    MAX_NUMBER_LENGTH,
    MAX_SCHEME_BYTES,
    load,
    parse,
)
from .language.reactions import ReactionStatement
from .language.statements import (
    BalanceStatement,
    ConstantStatement,
    ListStatement,
    TemperatureStatement,
    TitleStatement,
)

__all__ = [
    "ARROWS",
    "DIRECTIVES",
    "MAX_LINE_LENGTH",
    "MAX_NUMBER_LENGTH",
    "MAX_SCHEME_BYTES",
    "BalanceStatement",
    "ConstantStatement",
    "ListStatement",
    "ReactionStatement",
    "TemperatureStatement",
    "TitleStatement",
    "load",
    "parse",
]
