"""Reaction lines: ``A -> B + 2 C  k1 = ...`` and ``B <=> D  kf = ..., kr = ...``.

Plain reaction lines make up large files, so they first go through one compiled
pattern (:func:`fast_reaction`) that builds the very same statement as the
general reader (:meth:`ReactionStatement.from_line_general`); anything the fast
pattern does not recognise, every error included, goes to the general reader,
which words the messages.  Tests compare the two readers on generated lines.
"""

from __future__ import annotations

import re
from fractions import Fraction
from typing import NamedTuple

from ..errors import SchemeError
from ..expressions import Binary, Expr, Function, Number
from .arithmetic import CALLABLE, read_expression
from .grammar import (
    ARROW_CHARS,
    ARROW_RE,
    ARROWS,
    DECAY_KEYS,
    NAME,
    PLUS_RE,
    REF_RE,
    RESERVED,
    TERM_RE,
    split_top,
)
from .messages import keyword_error, quoted, unknown_arrow
from .quantities import Value, plain_number
from .source import Line
from .statements import ConstantSpec, read_constant

__all__ = [
    "ConstantRef",
    "DecaySpec",
    "ReactionStatement",
    "Term",
    "decay_name",
    "fast_reaction",
    "read_terms",
]

#: An example of a decay step written with its half-life (in hints).
DECAY_EXAMPLE = "P -> D  half_life = 65.9 h, fraction = 87.6 %"


class Term(NamedTuple):
    """One species of a reaction side with its stoichiometric coefficient.

    An immutable record, like :class:`~kinetics.language.quantities.Value`.
    """

    coefficient: float
    name: str
    column: int


class ConstantRef(NamedTuple):
    """A constant after the products: by name alone (``spec`` None) or defined there.

    An immutable record, like :class:`Term`.
    """

    name: str
    column: int
    spec: ConstantSpec | None


class DecaySpec(NamedTuple):
    """A decay step written without a named constant: ``half_life = ..., fraction = ...``.

    Attributes
    ----------
    half_life : Expr
        The half-life of the parent (of all its decays, not of this branch).
    fraction : Expr or None
        The share of the parent's decays that take this branch (None: all of them).
    column : int
        1-based column of ``half_life``.
    text : str
        As written.
    """

    half_life: Expr
    fraction: Expr | None
    column: int
    text: str

    def constant(self) -> Expr:
        r"""The branch's first-order constant, :math:`k = f \ln 2 / t_{1/2}`."""
        ln2 = Function("ln", Number(Fraction(2), (), "2", self.column), "ln(2)", self.column)
        top: Expr = ln2
        if self.fraction is not None:
            top = Binary("*", self.fraction, ln2, f"{self.fraction.text} * ln(2)", self.column)
        text = f"{top.text} / ({self.half_life.text})"
        return Binary("/", top, self.half_life, text, self.column)


def decay_name(parent: str, products: tuple[str, ...]) -> str:
    """The name of the constant of a decay step written with its half-life.

    Examples
    --------
    >>> decay_name("P", ("D",)), decay_name("P", ())
    ('lambda(P->D)', 'lambda(P untracked)')
    """
    if not products:
        return f"lambda({parent} untracked)"
    return f"lambda({parent}->{'+'.join(products)})"


class ReactionStatement(NamedTuple):
    """``A -> B + 2 C  k1 = ...`` or ``B <=> D  kf = ..., kr = ...``.

    Immutable, as every statement; a named tuple rather than a frozen dataclass
    because large files hold one per line and it is made four times faster.

    Examples
    --------
    >>> code = "A + W -> B + 2 C  k1 = 1e-3 M-1 s-1"
    >>> r = ReactionStatement.from_line(Line("t", 1, code, code))
    >>> [(t.coefficient, t.name) for t in r.right], r.constants[0].spec.value.text
    ([(1.0, 'B'), (2.0, 'C')], '1e-3 M-1 s-1')
    """

    left: tuple[Term, ...]
    right: tuple[Term, ...]
    reversible: bool
    arrow_column: int
    constants: tuple[ConstantRef, ...]
    line: Line
    decay: DecaySpec | None = None

    @classmethod
    def from_line(cls, line: Line) -> ReactionStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when the line has no arrow."""
        fast = fast_reaction(line)
        if fast is not None:
            return fast
        return cls.from_line_general(line)

    @classmethod
    def from_line_general(cls, line: Line) -> ReactionStatement | list[SchemeError] | None:
        """The reference reader of a reaction line (also every error message)."""
        code = line.code
        arrows = list(ARROW_RE.finditer(code))
        if not arrows:
            return None
        problem = _arrow_problem(line, arrows)
        if problem is not None:
            return [problem]
        arrow = arrows[0]
        reversible = ARROWS[arrow.group(0)]
        errors: list[SchemeError] = []
        left = read_terms(line, code[: arrow.start()], 0, "left")
        if isinstance(left, SchemeError):
            errors.append(left)
        elif left[1].strip():
            rest = left[1]
            col = arrow.start() - len(rest) + (len(rest) - len(rest.lstrip())) + 1
            errors.append(
                line.error(
                    f"could not read {quoted(rest.strip())} on the left of the arrow",
                    col,
                    rest.strip(),
                    "write species joined by '+', e.g. A + W -> B",
                )
            )
        right = read_terms(line, code[arrow.end() :], arrow.end(), "right")
        if isinstance(right, SchemeError):
            errors.append(right)
            return errors
        rest = right[1]
        constants = _read_constant_refs(line, rest, len(code) - len(rest), reversible)
        if isinstance(constants, list):
            errors.extend(constants)
        if errors or isinstance(left, SchemeError) or isinstance(constants, list):
            return errors
        decay = None
        if isinstance(constants, DecaySpec):
            decay = constants
            problem = _decay_problem(line, left[0], reversible, decay)
            if problem is not None:
                return [problem]
            name = decay_name(left[0][0].name, tuple(dict.fromkeys(t.name for t in right[0])))
            spec = ConstantSpec(name, decay.column, text=decay.text, expression=decay.constant())
            constants = (ConstantRef(name, decay.column, spec),)
        return cls(
            tuple(left[0]), tuple(right[0]), reversible, arrow.start() + 1, constants, line, decay
        )


def _arrow_problem(line: Line, arrows: list[re.Match[str]]) -> SchemeError | None:
    """Several arrows, or an arrow drawn longer than a known one (``-->``, ``<->``)."""
    code = line.code
    if len(arrows) > 1:
        second = arrows[1]
        return line.error(
            "a reaction line has one arrow; this one has several",
            second.start() + 1,
            second.group(0),
            "write each step on a line of its own",
        )
    start, end = arrows[0].span()
    while start > 0 and code[start - 1] in ARROW_CHARS:
        start -= 1
    while end < len(code) and code[end] in ARROW_CHARS:
        end += 1
    if (start, end) != arrows[0].span():
        return unknown_arrow(line, code[start:end], start)
    return None


def read_terms(
    line: Line, text: str, offset: int, side: str
) -> tuple[list[Term], str] | SchemeError:
    """Read ``[coef] NAME (+ [coef] NAME)*``; return (terms, the rest of ``text``).

    Parameters
    ----------
    line : Line
        The line read.
    text : str
        The side of the reaction (and what follows it).
    offset : int
        0-based column of ``text`` in the line.
    side : str
        ``"left"`` or ``"right"`` (for messages).

    Returns
    -------
    (list of Term, str) or SchemeError

    Examples
    --------
    >>> code = "A -> B + 2 C  k1"
    >>> terms, rest = read_terms(Line("t", 1, code, code), code[4:], 4, "right")
    >>> [(t.coefficient, t.name, t.column) for t in terms], rest
    ([(1.0, 'B', 6), (2.0, 'C', 12)], '  k1')
    """
    terms: list[Term] = []
    pos = 0
    while True:
        match = TERM_RE.match(text, pos)
        if not match:
            return _missing_term(line, text, offset, pos, side, bool(terms))
        coef_text = match.group("coef")
        name = match.group("name")
        column = offset + match.start("name") + 1
        problem = _term_problem(line, coef_text, name, offset + match.start("coef") + 1)
        if problem is not None:
            return problem
        if name in RESERVED:
            return keyword_error(line, name, column - 1, "a species")
        terms.append(Term(float(coef_text) if coef_text else 1.0, name, column))
        pos = match.end()
        plus = PLUS_RE.match(text, pos)
        if not plus:
            return terms, text[pos:]
        pos = plus.end()


def _missing_term(
    line: Line, text: str, offset: int, pos: int, side: str, after_plus: bool
) -> SchemeError:
    """No species name where one is due at ``pos`` of ``text``."""
    snippet = text[pos:].strip() or " "
    column = offset + pos + (len(text[pos:]) - len(text[pos:].lstrip())) + 1
    if side == "left":
        hint = "write one species (plus co-reactants in excess), e.g. A -> B"
    else:
        hint = "write products joined by '+', e.g. A -> B + 2 C"
    if not text[pos:].strip():
        where = "after '+'" if after_plus else "here"
        problem = f"expected a species name {where} on the {side} of the arrow"
    else:
        problem = f"expected a species name on the {side} of the arrow, found {quoted(snippet)}"
    return line.error(problem, column, snippet, hint)


def _term_problem(line: Line, coef_text: str | None, name: str, column: int) -> SchemeError | None:
    """The error of a coefficient that is not a positive count, or None."""
    if coef_text is None:
        return None
    if float(coef_text) <= 0:
        return line.error(
            f"stoichiometric coefficient of {name} is {coef_text}",
            column,
            coef_text,
            "coefficients are positive numbers; leave out a species that does not take part",
        )
    if not plain_number(coef_text):
        return line.error(
            f"stoichiometric coefficient of {name} is {quoted(coef_text)}, which is too large "
            "to count molecules",
            column,
            coef_text,
            "write a coefficient such as 2 or 0.5",
        )
    return None


def _decay_problem(
    line: Line, left: list[Term], reversible: bool, decay: DecaySpec
) -> SchemeError | None:
    """The error of a decay step that is reversible or has more than one reactant."""
    if reversible:
        return line.error(
            "a decay step written with half_life is irreversible",
            decay.column,
            "half_life",
            f"write -> (or →), e.g. {DECAY_EXAMPLE}",
        )
    if len(left) != 1:
        return line.error(
            f"a decay step written with half_life has one species on its left; this one "
            f"has {len(left)}",
            left[1].column,
            left[1].name,
            f"write the decaying species alone, e.g. {DECAY_EXAMPLE}",
        )
    return None


def _read_decay(line: Line, pieces: list[tuple[str, int]]) -> DecaySpec | list[SchemeError]:
    """``half_life = ..., fraction = ...`` after the products."""
    found: dict[str, tuple[Expr, int]] = {}
    errors: list[SchemeError] = []
    for piece, col0 in pieces:
        m = REF_RE.match(piece)
        key = m.group("name") if m else ""
        if m is None or key not in DECAY_KEYS or not m.group("eq"):
            errors.append(
                line.error(
                    f"a decay step is given by half_life and fraction only; found {quoted(piece)}",
                    col0 + 1,
                    piece or " ",
                    f"write e.g. {DECAY_EXAMPLE}",
                )
            )
            continue
        if key in found:
            errors.append(
                line.error(f"{key} is given twice", col0 + 1, piece, f"write e.g. {DECAY_EXAMPLE}")
            )
            continue
        what = "the half-life" if key == "half_life" else "the fraction"
        tree = read_expression(line, piece[m.end() :], col0 + m.end(), f"{what} of this step", key)
        if isinstance(tree, list):
            errors.extend(tree)
        else:
            found[key] = (tree, col0 + 1)
    if not errors and "half_life" not in found:
        errors.append(
            line.error(
                "this decay step gives a fraction but no half-life",
                pieces[0][1] + 1,
                pieces[0][0],
                f"give the half-life of the decaying species, e.g. {DECAY_EXAMPLE}",
            )
        )
    if errors:
        return errors
    fraction = found.get("fraction")
    text = ", ".join(p for p, _ in pieces)
    return DecaySpec(
        found["half_life"][0], fraction[0] if fraction else None, found["half_life"][1], text
    )


def _read_constant_refs(
    line: Line, text: str, offset: int, reversible: bool
) -> tuple[ConstantRef, ...] | DecaySpec | list[SchemeError]:
    """Read the constants after the products of a reaction line.

    They are ``k1``, ``k1 = ...``, ``kf = ..., kr = ...``, or a decay step's
    ``half_life = ..., fraction = ...``.
    """
    example = "kf = 2.0e-3 1/s, kr = 5.0e-4 1/s" if reversible else "k1 = 0.12 1/min"
    pieces = split_top(text, offset)
    for piece, _ in pieces:
        m = REF_RE.match(piece)
        if m and m.group("name") in DECAY_KEYS and m.group("eq"):
            return _read_decay(line, pieces)
    if not text.strip():
        return [
            line.error(
                "this reaction has no rate constant"
                + (" (a reversible step needs two)" if reversible else ""),
                len(line.code) + 1,
                " ",
                f"write it after the products, e.g. {example}",
            )
        ]
    errors: list[SchemeError] = []
    refs: list[ConstantRef] = []
    for piece, col0 in pieces:
        found = _read_constant_ref(line, piece, col0, example)
        if isinstance(found, ConstantRef):
            refs.append(found)
        else:
            errors.extend(found)
    if errors:
        return errors
    if len(refs) != (2 if reversible else 1):
        if reversible:
            problem = (
                f"a reversible step needs two rate constants (forward, then reverse); "
                f"found {len(refs)}"
            )
        else:
            problem = f"an irreversible step has one rate constant; found {len(refs)}"
            if len(refs) == 2:
                problem += " (did you mean the reversible arrow <=>?)"
        return [line.error(problem, refs[0].column, text.strip(), f"write e.g. {example}")]
    return tuple(refs)


def _read_constant_ref(
    line: Line, piece: str, col0: int, example: str
) -> ConstantRef | list[SchemeError]:
    """One constant after the products, at 0-based ``col0``."""
    m = REF_RE.match(piece)
    if not m or (not m.group("eq") and m.end() != len(piece)):
        bad = re.match(r"\S+", piece)
        snippet = bad.group(0) if bad else piece or " "
        hint = f"name the constant and give its value, e.g. {example}"
        problem = f"could not read the rate constant {quoted(piece)}"
        if m and not m.group("eq"):
            problem = f"unexpected text after {quoted(m.group('name'))}: {quoted(piece[m.end() :])}"
            hint = (
                "join products with '+' (A -> B + C) and write the constant as NAME or "
                "NAME = VALUE UNIT"
            )
            snippet = piece[m.end() :].split()[0]
            col0 = col0 + m.end()
        return [line.error(problem, col0 + 1, snippet, hint)]
    name = m.group("name")
    if name in RESERVED or name in CALLABLE or name in DECAY_KEYS:
        return [keyword_error(line, name, col0, "a constant")]
    if not m.group("eq"):
        return ConstantRef(name, col0 + 1, None)
    spec = read_constant(line, name, col0, piece[m.end() :], col0 + m.end())
    if isinstance(spec, list):
        return spec
    return ConstantRef(name, col0 + 1, spec)


# ---------------------------------------------------------------------------
# the fast reader of plain reaction lines: a subset of what the general reader
# accepts, the very same statement; anything else (errors included) goes there

_COEF = r"(?:\d+(?:\.\d*)?|\.\d+)"
_SIDE = rf"(?:{_COEF}\s*)?{NAME}(?:\s*\+\s*(?:{_COEF}\s*)?{NAME})*"
_PLAIN_NUMBER = r"(?>(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)"  # atomic, as the general reader
_PLAIN_UNIT = r"[^\s,=()<>→⇌][^,=()<>→⇌]*?"


#: Characters after a number that make a constant an expression (``2 * k1``).
_OPERATORS = re.compile(r"[+*^%]|\s[/-]|[/-]\s")


def _ref_pattern(tag: str) -> str:
    return (
        rf"(?P<{tag}>{NAME})(?:\s*=\s*(?P<{tag}n>{_PLAIN_NUMBER})\s*"
        rf"(?P<{tag}u>{_PLAIN_UNIT}))?"
    )


_FAST_REACTION = re.compile(
    rf"\s*(?P<left>{_SIDE})\s*(?P<arrow>->|→|<=>|⇌)\s*(?P<right>{_SIDE})"
    rf"\s+{_ref_pattern('a')}(?:\s*,\s*{_ref_pattern('b')})?\s*$"
)
_LEFT, _ARROW, _RIGHT = (_FAST_REACTION.groupindex[g] for g in ("left", "arrow", "right"))
_REF_A, _REF_B = _FAST_REACTION.groupindex["a"], _FAST_REACTION.groupindex["b"]


def fast_reaction(line: Line) -> ReactionStatement | None:
    """The statement of a plain reaction line, or None to use the general reader.

    Examples
    --------
    >>> code = "B <=> D  kf = 2.0e-3 1/s, kr = 5.0e-4 1/s"
    >>> r = fast_reaction(Line("t", 1, code, code))
    >>> r.reversible, [c.name for c in r.constants]
    (True, ['kf', 'kr'])
    >>> fast_reaction(Line("t", 1, "A => B  k1", "A => B  k1")) is None
    True
    """
    code = line.code
    m = _FAST_REACTION.match(code)
    if m is None:
        return None
    reversible = ARROWS[m.group(_ARROW)]
    if reversible != (m.group(_REF_B) is not None):
        return None
    left = _fast_terms(code, m.start(_LEFT), m.end(_LEFT))
    right = _fast_terms(code, m.start(_RIGHT), m.end(_RIGHT))
    if left is None or right is None:
        return None
    first = _fast_ref(code, m, _REF_A)
    if first is None:
        return None
    if reversible:
        second = _fast_ref(code, m, _REF_B)
        if second is None:
            return None
        refs: tuple[ConstantRef, ...] = (first, second)
    else:
        refs = (first,)
    return ReactionStatement(left, right, reversible, m.start(_ARROW) + 1, refs, line)


def _fast_terms(code: str, start: int, end: int) -> tuple[Term, ...] | None:
    terms = []
    for m in TERM_RE.finditer(code, start, end):
        coef, name = m.group(1, 2)
        if name in RESERVED:
            return None
        if coef is None:
            terms.append(Term(1.0, name, m.start(2) + 1))
            continue
        coefficient = float(coef)
        if not (coefficient > 0 and plain_number(coef)):
            return None  # the general reader words the message
        terms.append(Term(coefficient, name, m.start(2) + 1))
    return tuple(terms)


def _fast_ref(code: str, m: re.Match[str], name_group: int) -> ConstantRef | None:
    """The constant reference in groups ``name_group`` (name), +1 (number), +2 (unit)."""
    name, number, unit = m.group(name_group, name_group + 1, name_group + 2)
    if name in RESERVED or name in DECAY_KEYS or name in CALLABLE:
        return None
    column = m.start(name_group) + 1
    if number is None:
        return ConstantRef(name, column, None)
    if not plain_number(number) or _OPERATORS.search(unit):
        return None  # the general reader words the message, or reads an expression
    number_at, unit_at = m.start(name_group + 1), m.start(name_group + 2)
    value = Value(number, unit, number_at + 1, unit_at + 1)
    spec = ConstantSpec(name, column, value, None, None, code[number_at : m.end(name_group + 2)])
    return ConstantRef(name, column, spec)
