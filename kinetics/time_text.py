r"""Times in words: the one formatter of a time [s] in the unit a user reads.

The core keeps times in seconds; a note written by the core (an operation after the end
of the window, the time from which material is added) is shown to a user who chose hours
or days.  :class:`TimedText` is such a note: text that quotes times, shown in seconds as a
plain string, and in any unit of time by :func:`in_time_unit` (the summary, the terminal,
the report and the JSON of a command call it with the command's time unit).

Examples
--------
>>> note = TimedText("material is added from ", 5400.0, " on")
>>> str(note), in_time_unit(note, "h"), in_time_unit("plain text", "h")
('material is added from 5400 s on', 'material is added from 1.5 h on', 'plain text')
"""

from __future__ import annotations

from collections.abc import Iterable

from .units import time_factor

__all__ = ["TimedText", "in_time_unit", "joined", "shown_time"]


def shown_time(seconds: float, unit: str = "s") -> str:
    """A time [s] in ``unit``, six significant digits and the unit: ``"1.5 h"``.

    Parameters
    ----------
    seconds : float
        [s].
    unit : str
        A unit of time (:func:`kinetics.units.time_factor`).

    Examples
    --------
    1 h = 3600 s and 1 d = 86 400 s (SI brochure, 9th edition, 2019, table 8):

    >>> shown_time(5400.0, "h"), shown_time(172800.0, "d"), shown_time(1800.0)
    ('1.5 h', '2 d', '1800 s')
    """
    return f"{float(seconds) / time_factor(unit):.6g} {unit}"


class TimedText(str):
    """Text that quotes times [s]; a plain string in seconds.

    Parameters
    ----------
    *parts : str or float
        Text (``str``) and times [s] (any other number), in reading order.
    """

    parts: tuple[str | float, ...]

    def __new__(cls, *parts: str | float) -> TimedText:
        """The text of ``parts`` in seconds, keeping the parts."""
        kept = tuple(p if isinstance(p, str) else float(p) for p in parts)
        text = super().__new__(cls, _render(kept, "s"))
        text.parts = kept
        return text

    def in_unit(self, unit: str) -> str:
        """The text with every time in ``unit``."""
        return _render(self.parts, unit)

    def __add__(self, other: str) -> TimedText:
        return TimedText(*self.parts, *_parts(other))

    def __radd__(self, other: str) -> TimedText:
        return TimedText(*_parts(other), *self.parts)

    def __reduce__(self):
        return (TimedText, self.parts)


def _parts(text: str) -> tuple[str | float, ...]:
    return text.parts if isinstance(text, TimedText) else (str(text),)


def _render(parts: tuple[str | float, ...], unit: str) -> str:
    return "".join(p if isinstance(p, str) else shown_time(p, unit) for p in parts)


def in_time_unit(text: str, unit: str) -> str:
    """``text`` with its times in ``unit`` (a :class:`TimedText`); other text as it is."""
    return text.in_unit(unit) if isinstance(text, TimedText) else text


def joined(separator: str, texts: Iterable[str]) -> str:
    """``separator.join(texts)`` that keeps the times of :class:`TimedText` parts.

    Examples
    --------
    >>> in_time_unit(joined("; ", ["a", TimedText("b at ", 7200.0)]), "h")
    'a; b at 2 h'
    """
    items = list(texts)
    if not any(isinstance(t, TimedText) for t in items):
        return separator.join(items)
    parts: list[str | float] = []
    for k, t in enumerate(items):
        if k:
            parts.append(separator)
        parts.extend(_parts(t))
    return TimedText(*parts)
