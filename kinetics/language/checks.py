"""Whole-file checks of a scheme: steps written twice and rates a double cannot hold.

Also the warnings about probable mistakes that do not stop the file (``Scheme.warnings``).
"""

from __future__ import annotations

import sys
from collections.abc import Iterable, Mapping, Sequence

import numpy as np

from ..scheme import Scheme, Step
from .messages import Diagnostics
from .reactions import ReactionStatement
from .statements import ConstantStatement, ListStatement

__all__ = ["check_rates", "nothing_to_start", "repeated_steps", "unused_constants"]


def repeated_steps(
    steps: Sequence[Step], reactions: Sequence[ReactionStatement], found: Diagnostics
) -> None:
    r"""A step written twice with one constant is an error; with two, a warning.

    Steps are compared by what they do (:attr:`Step.key`), so ``A -> B + C`` and
    ``A -> C + B`` are the same step; the rates of parallel steps add up.

    Examples
    --------
    >>> from kinetics import parse
    >>> parse("A -> B  k1 = 1 1/s\nA -> B  k2 = 2 1/s\nstart A = 1 M").warnings
    ('<text>:2: the step A -> B also occurs on line 1: parallel steps, their constants
    add up (k1 + k2)',)
    """
    first: dict[tuple[object, ...], Step] = {}
    told: set[tuple[int, int]] = set()
    for step in steps:
        seen = first.setdefault(step.key, step)
        if seen is step:
            continue
        pair = (seen.reaction, step.reaction)
        if pair in told:
            continue  # the reverse step of a reversible line repeated
        told.add(pair)
        earlier, r = reactions[seen.reaction].line.number, reactions[step.reaction]
        if seen.constant == step.constant:
            found.error(
                r.line,
                f"the step {step.equation} with {step.constant} is written twice "
                f"(lines {earlier} and {r.line.number}); its rate would count twice",
                r.arrow_column,
                "<=>" if r.reversible else "->",
                "remove one of the two lines",
            )
        else:
            found.warn(
                r.line,
                f"the step {step.equation} also occurs on line {earlier}: parallel "
                f"steps, their constants add up ({seen.constant} + {step.constant})",
            )


def check_rates(scheme: Scheme, reactions: Sequence[ReactionStatement], found: Diagnostics) -> None:
    r"""Every effective rate constant must be a finite double that does not underflow to 0.

    The effective constant of a pseudo-first-order step is :math:`k \prod_j w_j^{\nu_j}`
    over its partners in excess (:attr:`kinetics.scheme.Scheme.rates`).

    Examples
    --------
    >>> from kinetics import parse
    >>> text = "A + W -> B  k1 = 1e300 M-1 s-1\nexcess W = 1e10 M\nstart A = 1 M"
    >>> try:
    ...     parse(text)
    ... except Exception as exc:
    ...     print(exc.errors[0].problem)
    the effective rate constant of A + W -> B overflows (it is beyond 1.8e+308 1/s)
    """
    rates = scheme.rates
    bad = np.flatnonzero(~np.isfinite(rates) | (rates == 0))
    reported: set[int] = set()
    for index in bad:
        step = scheme.steps[index]
        if step.reaction in reported:
            continue
        if rates[index] == 0:
            constant = scheme.constants[step.constant]
            nominal = (
                constant.value_si != 0
                if constant.arrhenius is None
                else constant.arrhenius.prefactor_si != 0
            )
            if not nominal or any(scheme.excess[n] == 0 for _, n in step.co_reactants):
                continue  # a constant or an excess concentration written as 0
            what = "underflows to 0 (it is below 5e-324 1/s)"
        else:
            what = f"overflows (it is beyond {sys.float_info.max:.3g} 1/s)"
        reported.add(step.reaction)
        statement = reactions[step.reaction]
        ref = statement.constants[0 if step.direction == "forward" else 1]
        found.error(
            statement.line,
            f"the effective rate constant of {step.equation} {what}",
            ref.column,
            ref.name,
            "check the value and unit of the constant and of the excess concentrations",
        )


def unused_constants(
    statements: Iterable[object],
    reactions: Iterable[ReactionStatement],
    found: Diagnostics,
    expressions: Iterable[str] = (),
    quantities: Iterable[str] = (),
) -> None:
    r"""Warn about a definition on a line of its own that nothing uses.

    A constant or named quantity is unused when neither a reaction nor another definition
    refers to it.

    Parameters
    ----------
    statements : iterable
        The statements of the file.
    reactions : iterable of ReactionStatement
        Its reactions.
    found : Diagnostics
        Where warnings go.
    expressions : iterable of str, optional
        The names the file's expressions refer to.
    quantities : iterable of str, optional
        The definitions that are named quantities rather than rate constants.

    Examples
    --------
    >>> from kinetics import parse
    >>> parse("k9 = 1 1/s\nA -> B  k1 = 1 1/s\nstart A = 1 M").warnings
    ('<text>:1: rate constant k9 is defined but no reaction uses it (a misspelt name?)',)
    >>> parse("t_q = 5 h\nA -> B  k1 = 1 1/s\nstart A = 1 M").warnings
    ('<text>:1: t_q is defined but nothing uses it (a misspelt name?)',)
    """
    used = {ref.name for r in reactions for ref in r.constants} | set(expressions)
    named = set(quantities)
    for s in statements:
        if isinstance(s, ConstantStatement) and s.spec.name not in used:
            what = s.spec.name if s.spec.name in named else f"rate constant {s.spec.name}"
            user = "nothing" if s.spec.name in named else "no reaction"
            found.warn(s.line, f"{what} is defined but {user} uses it (a misspelt name?)")


def nothing_to_start(
    start: Mapping[str, float],
    feed: Mapping[str, float],
    lists: Iterable[ListStatement],
    reactions: Sequence[ReactionStatement],
    found: Diagnostics,
) -> None:
    """Warn when every concentration stays 0 (no start value above 0, no feed).

    Examples
    --------
    >>> from kinetics import parse
    >>> parse("A -> B  k1 = 1 1/s").warnings
    ('<text>: the file has no start line, so every species starts at 0 and all \
concentrations stay 0; add e.g. start A = 1 mol/L',)
    """
    if any(v > 0 for v in start.values()) or any(v > 0 for v in feed.values()):
        return
    starts = [s for s in lists if s.kind == "start"]
    if starts:
        found.warn(
            starts[0].line,
            "every start value is 0 and nothing is fed: all concentrations stay 0",
        )
    else:
        found.warn(
            None,
            "the file has no start line, so every species starts at 0 and all "
            "concentrations stay 0; add e.g. start "
            f"{reactions[0].left[0].name} = 1 mol/L",
        )
