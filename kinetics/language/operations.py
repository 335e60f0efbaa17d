"""Operation lines of a scheme (the first pass): ``at``, ``every``, ``from``, ``volume``.

The lines ``at ...``, ``every ...`` and ``from ... to ...``, and the run's ``volume``.

One operation per line; a time ``T`` is a duration with a unit or the name of one::

    at 30 min: add A = 0.25 mol/L, B = 0.1 mol/L
    at t_q: remove 100 % of D
    every 24 h from 0 h until 10 d: remove 95 % of D
    at 2 h: temperature = 60 degC
    from 1 h to 3 h: feed A = 0.01 mol/L/min
    from 2 h to 2.5 h: temperature 25 degC -> 60 degC
    volume = 1.0 L
    at 30 min: add 100 mL with B = 0.5 mol/L

:class:`OperationStatement` keeps what each line says, with the columns of its parts;
:mod:`~kinetics.language.schedule` resolves names and units into a
:class:`~kinetics.timeline.Timeline`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import NamedTuple

from ..errors import SchemeError
from .grammar import ARROW_RE, NAME, NAME_RE, NUMBER_RE, split_plain
from .messages import quoted
from .quantities import Value, read_value
from .source import Line

__all__ = [
    "OPERATION_EXAMPLES",
    "OPERATION_KEYWORDS",
    "AddAction",
    "AmountItem",
    "FeedAction",
    "OperationStatement",
    "Quantity",
    "RampAction",
    "RemoveAction",
    "StepAction",
    "VolumeStatement",
    "read_quantity",
]

#: The words that start an operation line.
OPERATION_KEYWORDS = ("at", "every", "from")
#: An example of each kind of operation (in hints).
OPERATION_EXAMPLES = {
    "at": "at 30 min: add A = 0.25 mol/L",
    "every": "every 24 h: remove 100 % of D",
    "from": "from 1 h to 3 h: feed A = 0.01 mol/L/min",
    "volume": "volume = 1.0 L",
}
_HEAD = re.compile(r"\s*(?P<kw>at|every|from)(?=[\s:])(?!\s*=)")
_EVERY = re.compile(
    r"every\s*(?P<p>.*?)(?:\s+from\s+(?P<a>.*?))?(?:\s+until\s+(?P<b>.*?))?\s*$", re.DOTALL
)
_WINDOW = re.compile(r"from\s+(?P<a>.*?)\s+to\s+(?P<b>.*?)\s*$")
_ACTION = re.compile(r"(?P<word>[^\W\d]\w*)")
_REMOVE = re.compile(r"remove\s+(?P<p>.*?)\s+of\s+(?P<s>.*)$")
_PERCENT = re.compile(rf"(?P<n>{NUMBER_RE.pattern})\s*%$")
_RAMP = re.compile(r"temperature\s+(?P<a>.*?)\s*(?:->|→)\s*(?P<b>.*)$")
_STEP = re.compile(r"temperature\s*=\s*")
_PORTION = re.compile(r"add\s+(?P<v>[^=]*?)(?:\s+with\s+(?P<items>.*))?$")
_ITEM = re.compile(rf"(?P<name>{NAME})\s*=\s*")


class Quantity(NamedTuple):
    """A number with a unit, or the name of a named quantity, as written.

    Attributes
    ----------
    value : Value or None
        The number and unit (None for a name).
    name : str
        The name ("" for a number).
    column : int
        1-based column.
    text : str
        As written.
    """

    value: Value | None
    name: str
    column: int
    text: str


def read_quantity(
    line: Line, text: str, column0: int, what: str, example: str, *, signed: bool = False
) -> Quantity | SchemeError:
    """``NUMBER UNIT`` or ``NAME`` at 0-based ``column0`` of ``line``.

    Examples
    --------
    >>> line = Line("t", 1, "at t_q: add A = 1 M", "at t_q: add A = 1 M")
    >>> read_quantity(line, "t_q", 3, "the time", "30 min")
    Quantity(value=None, name='t_q', column=4, text='t_q')
    >>> read_quantity(line, "-1 h", 3, "the time of an operation", "30 min").problem
    'the time of an operation is negative (-1)'
    """
    stripped = text.strip()
    col0 = column0 + len(text) - len(text.lstrip())
    if not stripped:
        return line.error(
            f"{what} is missing", col0 + 1, " ", f"write a number and a unit, e.g. {example}"
        )
    if NAME_RE.fullmatch(stripped) and not NUMBER_RE.fullmatch(stripped):
        return Quantity(None, stripped, col0 + 1, stripped)
    value = read_value(line, stripped, col0, what, example, signed=signed)
    if isinstance(value, SchemeError):
        return value
    return Quantity(value, "", col0 + 1, stripped)


class AmountItem(NamedTuple):
    """``S = AMOUNT`` of an addition (or ``S = RATE`` of a feed)."""

    name: str
    name_column: int
    amount: Quantity


@dataclass(frozen=True, slots=True)
class AddAction:
    """``add S = C unit, ...`` or ``add V unit [with S = C unit, ...]``."""

    items: tuple[AmountItem, ...]
    volume: Quantity | None
    column: int
    text: str


@dataclass(frozen=True, slots=True)
class RemoveAction:
    """``remove P % of S, ...`` (``P`` a number or the name of a pure number)."""

    share: Quantity
    species: tuple[tuple[str, int], ...]
    column: int
    text: str


@dataclass(frozen=True, slots=True)
class StepAction:
    """``temperature = X degC``."""

    value: Value
    column: int
    text: str


@dataclass(frozen=True, slots=True)
class FeedAction:
    """``feed S = R unit, ...`` (inside a window)."""

    items: tuple[AmountItem, ...]
    column: int
    text: str


@dataclass(frozen=True, slots=True)
class RampAction:
    """``temperature X1 degC -> X2 degC`` (inside a window)."""

    first: Value
    last: Value
    column: int
    text: str


Action = AddAction | RemoveAction | StepAction | FeedAction | RampAction


@dataclass(frozen=True, slots=True)
class OperationStatement:
    """One operation line.

    Attributes
    ----------
    kind : str
        ``"at"``, ``"every"`` or ``"from"`` (a window).
    times : tuple of Quantity or None
        ``(T,)`` for at; ``(P, T0, T1)`` for every (T0 and T1 None when not written);
        ``(T0, T1)`` for a window.
    action : AddAction, RemoveAction, StepAction, FeedAction or RampAction
    line : Line
    column : int
        1-based column of the keyword.
    text : str
        The statement as written (without its comment).

    Examples
    --------
    >>> code = "every 24 h from 0 h: remove 100 % of D"
    >>> s = OperationStatement.from_line(Line("t", 1, code, code))
    >>> [q and q.text for q in s.times], s.action.species
    (['24 h', '0 h', None], (('D', 38),))
    """

    kind: str
    times: tuple[Quantity | None, ...]
    action: Action
    line: Line
    column: int
    text: str

    @property
    def names(self) -> tuple[str, ...]:
        """The named quantities the line refers to."""
        found = [q.name for q in self.times if q is not None and q.name]
        action = self.action
        if isinstance(action, AddAction | FeedAction):
            found += [i.amount.name for i in action.items if i.amount.name]
        if isinstance(action, AddAction) and action.volume is not None and action.volume.name:
            found.append(action.volume.name)
        if isinstance(action, RemoveAction) and action.share.name:
            found.append(action.share.name)
        return tuple(found)

    @classmethod
    def from_line(cls, line: Line) -> OperationStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when it is no operation."""
        code = line.code
        head = _HEAD.match(code)
        if head is None:
            return None
        if ":" not in code:
            if ARROW_RE.search(code):
                return None  # a reaction of a species called 'at', 'every' or 'from'
            keyword = head["kw"]
            return [
                line.error(
                    "an operation needs ':' after its time",
                    head.start("kw") + 1,
                    code.strip(),
                    f"write e.g. {OPERATION_EXAMPLES[keyword]}",
                )
            ]
        colon = code.index(":")
        start = head.start("kw")
        errors: list[SchemeError] = []
        times = _times(line, head["kw"], code[start:colon], start, errors)
        action = _action(line, head["kw"], code[colon + 1 :], colon + 1, errors)
        if errors or action is None:
            return errors
        return cls(head["kw"], times, action, line, start + 1, code.strip())


def _times(
    line: Line, keyword: str, head: str, start: int, errors: list[SchemeError]
) -> tuple[Quantity | None, ...]:
    """The times of the part before the colon (``head`` starts at 0-based ``start``)."""
    example = OPERATION_EXAMPLES[keyword]
    if keyword == "at":
        groups = [(head[2:], start + 2, "the time of an operation")]
    elif keyword == "every":
        m = _EVERY.match(head)
        assert m is not None  # 'every' and anything after it
        groups = [
            (m["p"], start + m.start("p"), "the period of a repeated operation"),
            (m["a"], start + m.start("a"), "the first time of a repeated operation"),
            (m["b"], start + m.start("b"), "the end of a repeated operation"),
        ]
    else:
        m = _WINDOW.match(head)
        if m is None:
            errors.append(
                line.error(
                    "a window reads 'from T0 to T1'",
                    start + 1,
                    head.strip(),
                    f"write e.g. {example}",
                )
            )
            return ()
        groups = [
            (m["a"], start + m.start("a"), "the start of the window"),
            (m["b"], start + m.start("b"), "the end of the window"),
        ]
    out: list[Quantity | None] = []
    for text, col0, what in groups:
        if text is None:
            out.append(None)
            continue
        q = read_quantity(line, text, col0, what, "30 min")
        if isinstance(q, SchemeError):
            errors.append(q)
            out.append(None)
        else:
            out.append(q)
    return tuple(out)


def _action(
    line: Line, keyword: str, text: str, col0: int, errors: list[SchemeError]
) -> Action | None:
    """The action after the colon (``text`` at 0-based ``col0``)."""
    lead = len(text) - len(text.lstrip())
    body, at = text.strip(), col0 + lead
    word = _ACTION.match(body)
    verb = word["word"].lower() if word else ""
    window = keyword == "from"
    if window and verb == "feed":
        items = _items(line, body[4:], at + 4, "a feed", "A = 0.01 mol/L/min", errors)
        return FeedAction(items, at + 1, body) if items else None
    if window and verb == "temperature" and _RAMP.match(body):
        return _ramp(line, body, at, errors)
    if not window and verb == "add":
        return _add(line, body, at, errors)
    if not window and verb == "remove":
        return _remove(line, body, at, errors)
    if not window and verb == "temperature" and _STEP.match(body):
        m = _STEP.match(body)
        assert m is not None
        value = read_value(
            line, body[m.end() :], at + m.end(), "the new temperature", "60 degC", signed=True
        )
        if isinstance(value, SchemeError):
            errors.append(value)
            return None
        return StepAction(value, at + 1, body)
    if window:
        problem = "a window 'from T0 to T1' holds a feed or a temperature ramp"
        hint = "write e.g. from 1 h to 3 h: feed A = 0.01 mol/L/min, or from 2 h to 3 h: " + (
            "temperature 25 degC -> 60 degC"
        )
    elif verb in ("feed", "temperature"):
        problem = f"{quoted(body)} is not an operation at one time"
        hint = (
            "a feed or a ramp runs in a window: from 1 h to 3 h: feed A = 0.01 mol/L/min; "
            "a step reads at 2 h: temperature = 60 degC"
        )
    else:
        problem = f"unknown operation {quoted(verb or body)}"
        hint = "an operation is add, remove or temperature =, e.g. at 30 min: add A = 0.25 mol/L"
    errors.append(line.error(problem, at + 1, (word[0] if word else body) or " ", hint))
    return None


def _items(
    line: Line, text: str, col0: int, what: str, example: str, errors: list[SchemeError]
) -> tuple[AmountItem, ...]:
    """``S = Q, S2 = Q2`` (``text`` at 0-based ``col0``)."""
    if not text.strip():
        verb = "feed" if what == "a feed" else "add"
        errors.append(
            line.error(f"{what} names nothing", col0 + 1, " ", f"write e.g. {verb} {example}")
        )
        return ()
    items = []
    bad = False
    for piece, c0 in split_plain(text, col0):
        m = _ITEM.match(piece)
        if m is None:
            errors.append(
                line.error(
                    f"could not read {quoted(piece)} in {what}",
                    c0 + 1,
                    piece or " ",
                    f"write SPECIES = AMOUNT, e.g. {example}",
                )
            )
            bad = True
            continue
        q = read_quantity(
            line, piece[m.end() :], c0 + m.end(), f"the amount of {m['name']}", example
        )
        if isinstance(q, SchemeError):
            errors.append(q)
            bad = True
            continue
        items.append(AmountItem(m["name"], c0 + 1, q))
    return () if bad else tuple(items)


def _add(line: Line, body: str, at: int, errors: list[SchemeError]) -> AddAction | None:
    """``add S = C, ...`` or ``add V [with S = C, ...]`` (``body`` at 0-based ``at``)."""
    portion = _PORTION.match(body)
    rest = body[3:]
    if portion is not None and _is_volume(portion["v"], portion["items"]):
        volume = read_quantity(
            line, portion["v"], at + portion.start("v"), "the volume added", "100 mL"
        )
        if isinstance(volume, SchemeError):
            errors.append(volume)
            return None
        items: tuple[AmountItem, ...] = ()
        if portion["items"] is not None:
            items = _items(
                line, portion["items"], at + portion.start("items"), "an addition",
                "B = 0.5 mol/L", errors,
            )  # fmt: skip
            if not items:
                return None
        return AddAction(items, volume, at + 1, body)
    items = _items(line, rest, at + 3, "an addition", "A = 0.25 mol/L", errors)
    return AddAction(items, None, at + 1, body) if items else None


def _is_volume(text: str, items: str | None) -> bool:
    """True when the words after ``add`` are a portion's volume.

    A number (with its unit), a single name, or anything followed by ``with``.
    """
    text = text.strip()
    if not text or "=" in text:
        return False
    return items is not None or bool(NUMBER_RE.match(text)) or bool(NAME_RE.fullmatch(text))


def _remove(line: Line, body: str, at: int, errors: list[SchemeError]) -> RemoveAction | None:
    """``remove P % of S, ...`` (``body`` at 0-based ``at``)."""
    m = _REMOVE.match(body)
    if m is None:
        errors.append(
            line.error(
                "could not read this removal",
                at + 1,
                body,
                "write the part removed and the species, e.g. remove 100 % of D",
            )
        )
        return None
    text, c0 = m["p"], at + m.start("p")
    percent = _PERCENT.match(text.strip())
    if percent is not None:
        share = read_quantity(line, percent["n"], c0, "the part removed", "30 %")
        if isinstance(share, SchemeError):
            errors.append(share)
            return None
        assert share.value is not None  # a number was read
        share = share._replace(value=share.value._replace(unit="%"), text=text.strip())
    elif NAME_RE.fullmatch(text.strip()):
        share = Quantity(None, text.strip(), c0 + 1, text.strip())
    else:
        errors.append(
            line.error(
                f"the part removed {quoted(text.strip())} is not a percentage",
                c0 + 1,
                text.strip() or " ",
                "write it with %, e.g. remove 30 % of D, or name a pure number (p_el = 95 %)",
            )
        )
        return None
    species = []
    for piece, s0 in split_plain(m["s"], at + m.start("s")):
        if not NAME_RE.fullmatch(piece):
            errors.append(
                line.error(
                    f"expected a species name, found {quoted(piece)}",
                    s0 + 1,
                    piece or " ",
                    "list the species removed from, e.g. remove 30 % of D, E",
                )
            )
            return None
        species.append((piece, s0 + 1))
    return RemoveAction(share, tuple(species), at + 1, body)


def _ramp(line: Line, body: str, at: int, errors: list[SchemeError]) -> RampAction | None:
    """``temperature X1 -> X2`` (``body`` at 0-based ``at``)."""
    m = _RAMP.match(body)
    assert m is not None
    values = []
    for key, what in (("a", "the ramp's first temperature"), ("b", "the ramp's last temperature")):
        value = read_value(line, m[key], at + m.start(key), what, "60 degC", signed=True)
        if isinstance(value, SchemeError):
            errors.append(value)
            return None
        values.append(value)
    return RampAction(values[0], values[1], at + 1, body)


@dataclass(frozen=True, slots=True)
class VolumeStatement:
    """``volume = 1.0 L``: the volume of the run at time 0 (for additions with volumes).

    Examples
    --------
    >>> VolumeStatement.from_line(Line("t", 1, "volume = 1.0 L", "volume = 1.0 L")).value.text
    '1.0 L'
    """

    value: Value
    line: Line

    @classmethod
    def from_line(cls, line: Line) -> VolumeStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when it sets no volume."""
        match = re.match(r"\s*volume\s*=\s*", line.code)
        if not match:
            return None
        value = read_value(line, line.code[match.end() :], match.end(), "the volume", "1.0 L")
        if isinstance(value, SchemeError):
            return [value]
        return cls(value, line)
