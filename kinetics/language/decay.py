r"""Decay steps written with half-lives: ``P -> D   half_life = 65.9 h, fraction = 87.6 %``.

Each branch of a decaying parent gets the constant :math:`k = f \ln 2 / t_{1/2}` with
:math:`t_{1/2}` the parent's half-life (of all its decays) and :math:`f` the share of its
decays that take the branch (1 when not given).  The checks of this module:

* the half-life is a time above 0, the fraction a pure number from 0 to 100 %;
* every branch of one parent gives the same half-life, and the parent has no other steps
  written with rate constants;
* the fractions of one parent add up to at most 100 %.  The rest goes to no species of
  the scheme: a step of the parent to nothing tracked, with the constant
  :math:`(1 - \sum f) \ln 2 / t_{1/2}`, so that the parent still decays with its
  half-life (a warning says so).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction

from ..errors import ExpressionError
from ..expressions import Binary, ExactQuantity, Expr, Function, Number, evaluate, names_in, shown
from ..units import describe_dimension
from .messages import Diagnostics
from .named import Entry
from .reactions import DECAY_EXAMPLE, ReactionStatement, decay_name
from .statements import ConstantSpec

__all__ = ["BranchCheck", "Remainder", "check_parents", "remainders"]

_TIME = (("[time]", Fraction(1)),)


def _equation(r: ReactionStatement) -> str:
    return f"{r.left[0].name} -> " + " + ".join(t.name for t in r.right)


def _percent(value: Fraction) -> str:
    return f"{float(value * 100):.6g}"


@dataclass(frozen=True)
class BranchCheck:
    """The checks of one branch before its constant is evaluated (``Entry.check``)."""

    statement: ReactionStatement

    def __call__(self, values: Mapping[str, ExactQuantity], found: Diagnostics | None) -> bool:
        """True when the half-life and fraction can be used; errors go to ``found``."""
        r = self.statement
        decay = r.decay
        assert decay is not None  # checks are made for decay steps only
        return _half_life(r, decay.half_life, values, found)[0] and (
            decay.fraction is None or _fraction(r, decay.fraction, values, found)[0]
        )


def _value(
    r: ReactionStatement,
    expr: Expr,
    values: Mapping[str, ExactQuantity],
    found: Diagnostics | None,
) -> ExactQuantity | None:
    try:
        return evaluate(expr, values, None)
    except ExpressionError as exc:
        if found is not None:
            found.error(r.line, exc.problem, exc.column, exc.snippet, exc.hint)
        return None


def _half_life(
    r: ReactionStatement,
    expr: Expr,
    values: Mapping[str, ExactQuantity],
    found: Diagnostics | None,
) -> tuple[bool, Fraction | None]:
    """(usable, the half-life [s] or None when unknown); errors go to ``found``."""
    q = _value(r, expr, values, found)
    if q is None:
        return False, None
    problem = None
    if q.dims != _TIME:
        problem = f"which is {describe_dimension(dict(q.dims))}, not a time"
    elif q.value is not None and not q.value > 0:
        problem = "which is not above 0"
    if problem is None:
        return True, q.value
    if found is not None:
        found.error(
            r.line,
            f"the half-life of {_equation(r)} is {expr.text}, {problem}",
            expr.column,
            expr.text,
            f"write a time above 0, e.g. {DECAY_EXAMPLE}",
        )
    return False, None


def _fraction(
    r: ReactionStatement,
    expr: Expr,
    values: Mapping[str, ExactQuantity],
    found: Diagnostics | None,
) -> tuple[bool, Fraction | None]:
    """(usable, the fraction or None when unknown); errors go to ``found``."""
    q = _value(r, expr, values, found)
    if q is None:
        return False, None
    problem = None
    if q.dims:
        problem = f"which is {describe_dimension(dict(q.dims))}, not a pure number"
    elif q.value is not None and not 0 <= q.value <= 1:
        shown_as = "" if expr.text.endswith("%") else f" ({_percent(q.value)} %)"
        problem = f"outside 0 to 100 %{shown_as}"
    if problem is None:
        return True, q.value
    if found is not None:
        found.error(
            r.line,
            f"the fraction of {_equation(r)} is {expr.text}, {problem}",
            expr.column,
            expr.text,
            f"write a percentage or a number from 0 to 1, e.g. {DECAY_EXAMPLE}",
        )
    return False, None


@dataclass(frozen=True)
class Remainder:
    """The share of a parent's decays that no branch takes: its entry and its checks."""

    parent: str
    branches: tuple[ReactionStatement, ...]
    reaction: int

    @property
    def name(self) -> str:
        """The name of the untracked share's constant (the parent's decay to nothing)."""
        return decay_name(self.parent, ())

    def entry(self) -> Entry:
        r"""The constant :math:`(1 - \sum f) \ln 2 / t_{1/2}` as an expression entry."""
        first = self.branches[0]
        decay = first.decay
        assert decay is not None
        col = decay.column
        shares = [_share(r) for r in self.branches]
        total = _balanced_sum(shares, col)
        one = Number(Fraction(1), (), "1", col)
        rest = Binary("-", one, total, f"1 - ({total.text})", col)
        ln2 = Function("ln", Number(Fraction(2), (), "2", col), "ln(2)", col)
        top = Binary("*", rest, ln2, f"({rest.text}) * ln(2)", col)
        text = f"{top.text} / ({decay.half_life.text})"
        expr = Binary("/", top, decay.half_life, text, col)
        spec = ConstantSpec(self.name, col, text=text, expression=expr)
        return Entry(spec, first.line, True, self)

    def __call__(self, values: Mapping[str, ExactQuantity], found: Diagnostics) -> bool:
        """The fractions add up to at most 100 % (a warning below); False after an error."""
        total = Fraction(0)
        for r in self.branches:
            if not BranchCheck(r)(values, None):
                return False  # the branch reports it
            decay = r.decay
            assert decay is not None
            f = Fraction(1)
            if decay.fraction is not None:
                f_known = _fraction(r, decay.fraction, values, None)[1]
                if f_known is None:
                    return True  # unknown until the temperature is known
                f = f_known
            total += f
        last = self.branches[-1]
        lines = ", ".join(str(r.line.number) for r in self.branches)
        if total > 1:
            decay = last.decay
            assert decay is not None
            where = decay.fraction if decay.fraction is not None else decay.half_life
            found.error(
                last.line,
                f"the branching fractions of {self.parent} add up to {_percent(total)} %, "
                "more than 100 %",
                where.column,
                where.text,
                f"the branches of one decaying species share its decays; check the fractions "
                f"on lines {lines}",
            )
            return False
        if total < 1:
            found.warn(
                self.branches[0].line,
                f"the branching fractions of {self.parent} add up to {_percent(total)} %; the "
                f"other {_percent(1 - total)} % of its decays go to no species of the scheme "
                "(untracked)",
            )
        return True

    def kept(self, values: Mapping[str, ExactQuantity]) -> bool:
        """True when the untracked share is a step: above 0, or written with names.

        A share written with names is kept even at 0, since a sweep may change it.
        """
        q = values.get(self.name)
        if q is None:
            return False
        named = any(
            r.decay is not None and r.decay.fraction is not None and names_in(r.decay.fraction)
            for r in self.branches
        )
        return named or q.value is None or q.value > 0


def _share(r: ReactionStatement) -> Expr:
    decay = r.decay
    assert decay is not None
    if decay.fraction is not None:
        return decay.fraction
    return Number(Fraction(1), (), "100 %", decay.column)


def _balanced_sum(terms: list[Expr], col: int) -> Expr:
    if len(terms) == 1:
        return terms[0]
    middle = len(terms) // 2
    left, right = _balanced_sum(terms[:middle], col), _balanced_sum(terms[middle:], col)
    return Binary("+", left, right, f"{left.text} + {right.text}", col)


def remainders(reactions: Sequence[ReactionStatement]) -> list[Remainder]:
    r"""The untracked share of every parent with several branches or a fraction.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> text = "P -> D  half_life = 5 h, fraction = 90 %\nQ -> R  half_life = 2 h"
    >>> [(r.parent, r.name) for r in remainders(read_statements(text, "t").reactions)]
    [('P', 'lambda(P untracked)')]
    """
    groups: dict[str, list[int]] = {}
    for index, r in enumerate(reactions):
        if r.decay is not None:
            groups.setdefault(r.left[0].name, []).append(index)
    out = []
    for parent, indices in groups.items():
        branches = tuple(reactions[i] for i in indices)
        if len(branches) > 1 or any(r.decay is not None and r.decay.fraction for r in branches):
            out.append(Remainder(parent, branches, indices[0]))
    return out


def check_parents(
    reactions: Sequence[ReactionStatement],
    values: Mapping[str, ExactQuantity],
    found: Diagnostics,
) -> None:
    r"""One half-life per parent, and no parent that also reacts by a rate constant.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> text = "P -> D  half_life = 5 h, fraction = 50 %\n"
    >>> text += "P -> E  half_life = 6 h, fraction = 50 %"
    >>> found = Diagnostics("t")
    >>> check_parents(read_statements(text, "t").reactions, {}, found)
    >>> found.errors[0].problem
    'the half-life of P is 6 h here but 5 h on line 1 (21600 s and 18000 s)'
    """
    first: dict[str, tuple[ReactionStatement, Fraction | None]] = {}
    other: dict[str, ReactionStatement] = {}
    for r in reactions:
        if r.decay is None:
            for t in (*r.left, *(r.right if r.reversible else ())):
                other.setdefault(t.name, r)
    for r in reactions:
        decay = r.decay
        if decay is None:
            continue
        parent = r.left[0].name
        if parent in other:
            o = other[parent]
            found.error(
                r.line,
                f"{parent} decays by half_life here and also reacts by the rate constant "
                f"{o.constants[0].name} on line {o.line.number}",
                r.left[0].column,
                parent,
                f"give all of {parent}'s steps by half_life and fraction, or all by rate constants",
            )
            continue
        usable, value = _half_life(r, decay.half_life, values, None)
        if not usable:
            continue
        seen = first.setdefault(parent, (r, value))
        if seen[0] is r or seen[1] is None or value is None or seen[1] == value:
            continue
        earlier = seen[0].decay
        assert earlier is not None
        found.error(
            r.line,
            f"the half-life of {parent} is {decay.half_life.text} here but "
            f"{earlier.half_life.text} on line {seen[0].line.number} ({shown(value)} s and "
            f"{shown(seen[1])} s)",
            decay.half_life.column,
            decay.half_life.text,
            "each branch gives the half-life of the decaying species (of all its decays): "
            "write the same one on every branch",
        )
