"""Units of time and the readers of durations and time lists.

The one home of the seconds per unit of time (:func:`time_factor`) and of the readers of
``--until``, ``--times`` and ``--time-unit``.
"""

from __future__ import annotations

import math
import re

from ..errors import ArgumentTypeError, TimesError, shorten, type_name
from .reading import parse_unit

__all__ = ["MAX_DURATION_TEXT", "TIME_UNITS", "parse_duration", "parse_time_list", "time_factor"]

#: The units of time offered in messages; pint also reads plurals and prefixed seconds.
TIME_UNITS = (
    "s, min, h, d, week, month (1/12 year), year (365.25 d; also yr or a), or prefixed "
    "seconds such as ms and us"
)

_DURATION = re.compile(
    r"^\s*(?P<number>[-+]?(?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
    r"|(?:nan|inf(?:inity)?)(?![\w])))\s*(?P<unit>.*)$",
    re.IGNORECASE | re.DOTALL,
)
#: Longest text read as a duration or a time list [characters] (a list of 10,000 times).
MAX_DURATION_TEXT = 200_000


def time_factor(unit: str) -> float:
    """Seconds per ``unit`` (``"min"`` -> 60.0).

    Parameters
    ----------
    unit : str
        A unit of time in chemists' notation (``s``, ``min``, ``h``, ``d``, ``week``,
        ``year``...).

    Returns
    -------
    float
        The exact factor to seconds, rounded once [s per unit].

    Raises
    ------
    TimesError
        When ``unit`` is unknown or not a unit of time.

    Examples
    --------
    1 h = 3600 s and 1 d = 86 400 s (SI brochure, 9th edition, 2019, table 8); a week is
    7 d and a year the Julian year of 365.25 d (closed forms):

    >>> time_factor("h"), time_factor("week"), time_factor("year")
    (3600.0, 604800.0, 31557600.0)
    """
    hint = f"use {TIME_UNITS}"
    if not isinstance(unit, str):
        raise ArgumentTypeError(
            f"the time unit must be text such as 'min', not {type_name(unit)}", hint
        )
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise TimesError(f"unknown time unit {shorten(unit)!r}", hint) from None
    if spec.offset or spec.dims != {"[time]": 1}:
        raise TimesError(f"{shorten(unit)!r} is not a unit of time", hint)
    return float(spec.factor)


def _number_and_unit(text: str):
    match = _DURATION.match(text)
    if not match:
        return None, ""
    return match["number"], match["unit"].strip()


def _finite_value(number: str, quoted: str, example: str) -> float:
    """``float(number)``, refusing nan and infinities with a message that quotes the user."""
    value = float(number)
    if math.isnan(value):
        raise TimesError(f"{quoted} is not a number", example)
    if math.isinf(value):
        spelled = number.lstrip("+-")[:1].lower() == "i"
        reason = "" if spelled else " (beyond the range of double precision, about 1.8e308)"
        raise TimesError(f"{quoted} is not a finite duration{reason}", example)
    return value


def parse_duration(text: str, option: str = "--until") -> tuple[float, str]:
    """Read a duration with its unit: ``"90 min"`` -> ``(5400.0, "min")``.

    Parameters
    ----------
    text : str
        A positive, finite number and a unit of time, as typed on the command line.
    option : str, optional
        The option the text came from, for messages.

    Returns
    -------
    tuple of (float, str)
        The duration [s] and the unit as written.

    Raises
    ------
    TimesError
        For a missing or unknown unit, a number that is not finite, zero or negative;
        the message quotes the text as written (in the user's unit).

    Examples
    --------
    1 min = 60 s and 1 d = 86 400 s (SI brochure, 9th edition, 2019, table 8):

    >>> parse_duration("90 min"), parse_duration("1.5 d")
    ((5400.0, 'min'), (129600.0, 'd'))
    """
    example = f"write e.g. {option} '90 min'"
    quoted = f"{option} {shorten(text)!r}"
    if len(text) > MAX_DURATION_TEXT:
        raise TimesError(f"{quoted} is too long to be a duration", example)
    number, unit = _number_and_unit(text)
    if number is None or not unit:
        raise TimesError(f"{quoted} is not a duration with a unit", example)
    value = _finite_value(number, quoted, example)
    try:
        factor = time_factor(unit)
    except TimesError as exc:
        raise TimesError(f"{quoted}: {exc.problem}", exc.hint) from None
    if not value > 0:
        raise TimesError(f"{quoted} is not a positive duration", example)
    seconds = value * factor
    if not math.isfinite(seconds):
        raise TimesError(
            f"{quoted} is beyond the range of double precision in seconds (about 1.8e308 s)",
            example,
        )
    return seconds, unit


def parse_time_list(text: str, option: str = "--times") -> tuple[list[float], str]:
    """Read a list of times with one unit at the end: ``"0,5,10 min"`` -> seconds and unit.

    Parameters
    ----------
    text : str
        Comma-separated numbers, the unit written once after the last one.
    option : str, optional
        The option the text came from, for messages.

    Returns
    -------
    tuple of (list of float, str)
        The times [s], in the order given, and the unit as written.

    Raises
    ------
    TimesError
        For a missing or unknown unit, a piece that is not a finite number, a negative
        time or times out of order; messages quote the times as written.

    Examples
    --------
    1 min = 60 s (SI brochure, 9th edition, 2019, table 8):

    >>> parse_time_list("0,5,10 min")
    ([0.0, 300.0, 600.0], 'min')
    """
    example = f"write e.g. {option} '0,5,10,30 min'"
    quoted = f"{option} {shorten(text)!r}"
    if len(text) > MAX_DURATION_TEXT:
        raise TimesError(
            f"{quoted} is too long (at most {MAX_DURATION_TEXT:,} characters)", example
        )
    numbers, unit = _numbers_and_unit(text, quoted, example)
    try:
        factor = time_factor(unit)
    except TimesError as exc:
        raise TimesError(f"{quoted}: {exc.problem}", exc.hint) from None
    values = _ordered_times(numbers, unit, quoted, example)
    seconds = [v * factor for v, _ in values]
    if not math.isfinite(seconds[-1]):
        raise TimesError(
            f"{quoted}: {values[-1][1]} {unit} is beyond the range of double precision in "
            "seconds (about 1.8e308 s)",
            example,
        )
    return seconds, unit


def _numbers_and_unit(text: str, quoted: str, example: str) -> tuple[list[str], str]:
    """The numbers of a time list as written and its unit (written once, at the end)."""
    pieces = [p.strip() for p in text.split(",")]
    if not pieces[-1]:
        raise TimesError(f"{quoted} is not a list of times with one unit", example)
    number, unit = _number_and_unit(pieces[-1])
    for piece in [*pieces[:-1], number]:
        if piece == "":
            raise TimesError(f"{quoted} has an empty item (a comma too many?)", example)
        if piece is None or _number_and_unit(piece) != (piece, ""):
            bad = pieces[-1] if piece is None else piece
            raise TimesError(f"{quoted}: {shorten(bad)!r} is not a number", example)
    if not unit:
        raise TimesError(
            f"{quoted} does not end with a unit of time", example + " (unit once, at the end)"
        )
    return [*pieces[:-1], number], unit


def _ordered_times(
    numbers: list[str], unit: str, quoted: str, example: str
) -> list[tuple[float, str]]:
    """The times in the list's unit with their text: finite, >= 0 and in increasing order."""
    values: list[tuple[float, str]] = []
    for piece in numbers:
        value = float(piece)
        if not math.isfinite(value):
            raise TimesError(f"{quoted}: {shorten(piece)} {unit} is not a finite time", example)
        if value < 0:
            raise TimesError(
                f"{quoted}: {shorten(piece)} {unit} is negative",
                "times start at 0 (the start values)",
            )
        if values and value < values[-1][0]:
            raise TimesError(
                f"{quoted}: the times are not in increasing order ({values[-1][1]} {unit} "
                f"comes before {shorten(piece)} {unit})",
                "sort the time list",
            )
        values.append((value, shorten(piece)))
    return values
