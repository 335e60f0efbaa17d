"""Names across a scheme file: species, species held in excess, statements made once.

Species are listed in order of appearance; a statement that may occur once is refused
the second time.
"""

from __future__ import annotations

from collections.abc import Iterable
from fractions import Fraction
from typing import Protocol, TypeVar

from ..amounts import kind_of
from ..units import parse_unit
from .messages import Diagnostics
from .reactions import ReactionStatement
from .source import Line
from .statements import Item, ListStatement

__all__ = ["ExcessDeclarations", "single", "species_order"]


class _Located(Protocol):
    @property
    def line(self) -> Line: ...


_S = TypeVar("_S", bound=_Located)


def species_order(reactions: Iterable[ReactionStatement]) -> dict[str, Line]:
    r"""Every species of the reactions, in order of first appearance, with that line.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("A -> B + C  k1 = 1 1/s\nC <=> A  k2, k3", "t")
    >>> {name: line.number for name, line in species_order(parsed.reactions).items()}
    {'A': 1, 'B': 1, 'C': 1}
    """
    order: dict[str, Line] = {}
    for r in reactions:
        for term in r.left:
            order.setdefault(term.name, r.line)
        for term in r.right:
            order.setdefault(term.name, r.line)
    return order


class ExcessDeclarations:
    """The species declared ``excess``, and the dimension of each excess value.

    Parameters
    ----------
    lists : iterable of ListStatement
        The list statements of the file.

    Attributes
    ----------
    names : frozenset of str
        Every species listed in an ``excess`` statement, also with a bad value.
    dims : dict
        Species -> dimension exponents of the amount its value stands for (a mass
        concentration counts as the amount it converts to); values whose unit
        cannot be read are left out (their statement reports them).

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("excess W = 55 mol/L, X = 1 g/L", "t")
    >>> excess = ExcessDeclarations(parsed.lists)
    >>> sorted(excess.names), excess.dims["W"] == {"[length]": -3, "[substance]": 1}
    (['W', 'X'], True)
    """

    def __init__(self, lists: Iterable[ListStatement]) -> None:
        names: set[str] = set()
        items: dict[str, Item] = {}
        for s in lists:
            if s.kind == "excess":
                names.update(s.declared)
                for item in s.items:
                    items.setdefault(item.name, item)
        self.names = frozenset(names)
        self.dims: dict[str, dict[str, Fraction]] = {}
        for name, item in items.items():
            if item.value is None:
                continue
            try:
                kind = kind_of(item.value.unit)
                self.dims[name] = kind.amount_dims if kind else parse_unit(item.value.unit).dims
            except ValueError:
                pass  # reported with the excess statement


def single(
    statements: Iterable[object], kind: type[_S], what: str, found: Diagnostics
) -> _S | None:
    r"""The statement of ``kind`` that may occur once (title, balance mode), or None.

    Every further one is an error in ``found``.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.language.statements import TitleStatement
    >>> parsed = read_statements("title: one\ntitle: two", "t")
    >>> found = Diagnostics("t")
    >>> single(parsed.statements, TitleStatement, "title", found).text
    'one'
    >>> found.errors[0].headline()
    't:2:1: the title is given twice (first on line 1); keep one title line'
    """
    matches = [s for s in statements if isinstance(s, kind)]
    for extra in matches[1:]:
        line = extra.line
        found.error(
            line,
            f"the {what} is given twice (first on line {matches[0].line.number})",
            len(line.code) - len(line.code.lstrip()) + 1,
            line.code.strip(),
            f"keep one {what} line",
        )
    return matches[0] if matches else None
