r"""A timeline of operations on a scheme: additions, removals, temperature steps, ramps, feeds.

A run is rarely one stretch of constant conditions from time 0.  A timeline lists what
happens during it, in the core's units (seconds, kelvin, the scheme's concentration unit).
Each statement is what one line of the scheme language says:

* ``At(T, Addition({S: C}))`` (``at T: add S = C``): the named species rise instantly;
* ``At(T, Removal.percent(P, S))`` (``at T: remove P % of S``): that part of each named
  species is taken out, and the amount removed is recorded (elution, filtration, a sample);
* ``At(T, TemperatureStep(X))`` (``at T: temperature = X``): from T on every Arrhenius
  constant follows the new temperature;
* ``Every(P, action, start=T0, until=T1)`` (``every P from T0 until T1: ...``): the
  addition or removal at T0, T0 + P, ... up to T1 and the end of the solved window (T0
  defaults to P; repetitions up to T1 after the window are not applied, and noted);
* ``FeedWindow(T0, T1, {S: R})`` (``from T0 to T1: feed S = R``): a zero-order feed that
  runs only between T0 and T1 (the scheme's own ``feed`` stays always on);
* ``TemperatureRamp(T0, T1, X1, X2)`` (``from T0 to T1: temperature X1 -> X2``): a linear
  ramp.

Between operations the scheme is linear with constant coefficients, and each operation
is a nonnegative map of the concentrations (:math:`c \mapsto c + a` with
:math:`a \ge 0`, or :math:`c_i \mapsto (1 - p) c_i` with :math:`0 \le p \le 1`), so the
whole timeline is solved exactly stretch by stretch (:mod:`kinetics.timeline_solve`).

Each statement may carry a :class:`Place` (file, line, column, text): the scheme
language fills it, so a mistake is reported where it was written.  :func:`check` finds
every mistake that does not depend on the solved window (for the language, which reports
all mistakes of a file at once); :func:`expand` checks a timeline against a scheme and a
window, raises every mistake at once, and turns the timeline into the sorted operations
the solver applies.  A timeline may create at most :data:`MAX_OPERATIONS` operations.

Examples
--------
A second portion of reagent at 30 min and a heating step at 2 h (K):

>>> line = Timeline([At(1800.0, Addition({"A": 0.25})), At(7200.0, TemperatureStep(333.15))])
>>> len(line.statements)
2
"""

from __future__ import annotations

import itertools
import math
import numbers
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import TYPE_CHECKING

from .errors import SchemeError, SchemeErrors, shown_value
from .suggest import close_matches
from .time_text import TimedText, shown_time
from .timeline_statements import (
    TIME_FIELDS,
    Action,
    Addition,
    At,
    Binding,
    Every,
    FeedWindow,
    Place,
    Removal,
    TemperatureRamp,
    TemperatureStep,
    Timeline,
)

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "MAX_OPERATIONS",
    "TIME_FIELDS",
    "Addition",
    "At",
    "Binding",
    "Every",
    "FeedWindow",
    "Operation",
    "Place",
    "Plan",
    "Removal",
    "TemperatureRamp",
    "TemperatureStep",
    "Timeline",
    "attach",
    "check",
    "expand",
]

#: Most operations a timeline may create inside the solved window (a repeated operation
#: counts once per repetition): about 250,000 stretches take some seconds to solve.
MAX_OPERATIONS = 250_000


# --------------------------------------------------------------------------
# the expanded plan
# --------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Operation:
    """One applied addition or removal.

    Attributes
    ----------
    time : float
        [s].
    action : Addition or Removal
    statement : int
        Index of the statement it comes from.
    kept : Fraction
        For an addition in a run with volumes: :math:`V/(V + v)`, the factor every
        concentration is diluted by (1 otherwise).
    share : Fraction
        For an addition in a run with volumes: :math:`V_0/(V + v)`, the factor of its
        amounts (1 otherwise); see :class:`Addition`.
    volume : float or None
        Volume of the run just after [m^3] (None without volumes).
    """

    time: float
    action: Action
    statement: int
    kept: Fraction = Fraction(1)
    share: Fraction = Fraction(1)
    volume: float | None = None


@dataclass(frozen=True)
class Plan:
    """A checked timeline inside a window ``[0, end]``, ready to solve.

    Attributes
    ----------
    end : float
        Last solved time [s].
    operations : tuple of Operation
        Additions and removals in the order applied (by time, then statement).
    steps : tuple of (float, float, int)
        Temperature steps ``(time [s], temperature [K], statement)`` in time order.
    ramps : tuple of TemperatureRamp
        In time order, none overlapping.
    ramp_statements : tuple of int
        The statement of each ramp.
    feeds : tuple of (FeedWindow, int)
        Feed windows that start inside the window, with their statement.
    skipped : tuple of (int, int, float)
        Per statement, operations after the end of the window that were not applied:
        ``(statement, count, first time [s])``.
    notes : tuple of str
        Sentences about operations without effect (a temperature operation in a
        scheme with no Arrhenius constant, operations after the window).
    """

    end: float
    operations: tuple[Operation, ...]
    steps: tuple[tuple[float, float, int], ...]
    ramps: tuple[TemperatureRamp, ...]
    ramp_statements: tuple[int, ...]
    feeds: tuple[tuple[FeedWindow, int], ...]
    skipped: tuple[tuple[int, int, float], ...]
    notes: tuple[str, ...]

    def breakpoints(self) -> list[float]:
        """Every time inside ``[0, end]`` at which something changes [s], sorted."""
        times = {op.time for op in self.operations}
        times.update(t for t, _, _ in self.steps)
        for ramp in self.ramps:
            times.update((ramp.start, ramp.end))
        for window, _ in self.feeds:
            times.update((window.start, window.end))
        return sorted(t for t in times if t <= self.end)


def _when(value: float, place: Place) -> str:
    """A time [s] of a message.

    In the unit its line was written in (a scheme file), else in seconds as given.
    """
    if place.time_unit == "s":
        return f"{shown_value(value)} s"
    return shown_time(value, place.time_unit)


class _Checker:
    """Collects every mistake of a timeline against a scheme (one pass)."""

    def __init__(self, scheme: Scheme, end: float, volume: float | None = None) -> None:
        self.scheme = scheme
        self.end = end
        self.volume = volume
        self.errors: list[SchemeError] = []
        self.notes: list[str] = []
        self.count = 0
        matrix = set(scheme.species_names)
        self.species = matrix
        self.excess = {s.name for s in scheme.excess_species}
        self.arrhenius = bool(scheme.temperature_constants)

    def time(self, value, what: str, place: Place) -> bool:
        if isinstance(value, bool) or not isinstance(value, numbers.Real):
            self.errors.append(
                place.error(f"{what} must be a number of seconds, not {shown_value(value)}")
            )
            return False
        value = float(value)
        if not (math.isfinite(value) and value >= 0):
            self.errors.append(
                place.error(
                    f"{what} must be finite and >= 0 {place.time_unit}, not {_when(value, place)}",
                    "operations happen at or after time 0, when the start values apply",
                )
            )
            return False
        return True

    def name(self, name: str, place: Place) -> bool:
        if name in self.species:
            return True
        if name in self.excess:
            self.errors.append(
                place.error(
                    f"{name} is held in excess (constant) and cannot be changed by an operation",
                    "add or remove a species of the rate matrix",
                )
            )
        else:
            listing = "species: " + ", ".join(self.scheme.species_names)
            close = close_matches(name, self.scheme.species_names, fold_case=True)
            hint = f"did you mean {close[0]!r}? ({listing})" if close else listing
            self.errors.append(place.error(f"{name!r} is not a species of the scheme", hint))
        return False

    def amount(self, name: str, value, place: Place, rate: bool = False) -> None:
        ok = isinstance(value, numbers.Real) and not isinstance(value, bool)
        if not ok or not (math.isfinite(value) and value >= 0):
            unit = self.scheme.concentration_unit
            what = f"the feed rate of {name}" if rate else f"the amount of {name} added"
            self.errors.append(
                place.error(
                    f"{what} must be a finite number >= 0, not {shown_value(value)}",
                    f"give a rate in {unit} per second"
                    if rate
                    else f"give an amount in the scheme's concentration unit ({unit})",
                )
            )

    def action(self, action, place: Place) -> None:
        if isinstance(action, Addition):
            volume = self.added_volume(action.volume, place)
            if not action.amounts and not volume:
                self.errors.append(place.error("an addition names no species", "e.g. add A = 0.1"))
            for name, value in action.amounts:
                if self.name(name, place):
                    self.amount(name, value, place)
        elif isinstance(action, Removal):
            if not action.species:
                self.errors.append(place.error("a removal names no species", "e.g. remove D"))
            for name in action.species:
                self.name(name, place)
            p = action.fraction
            if p is None or not 0 <= p <= 1:
                shown = "a non-number" if p is None else f"{float(p * 100):g} %"
                self.errors.append(
                    place.error(
                        f"cannot remove {shown}: the part removed must be from 0 to 100 %",
                        "write 100 % for a complete removal",
                    )
                )
        elif isinstance(action, TemperatureStep):
            self.temperature(action.temperature, "the new temperature", place)
        else:
            self.errors.append(
                place.error(
                    f"{type(action).__name__} is not an operation",
                    "use Addition, Removal or TemperatureStep",
                )
            )

    def added_volume(self, value, place: Place) -> bool:
        """Check the volume an addition brings; True when it is above 0 (and usable)."""
        ok = isinstance(value, numbers.Real) and not isinstance(value, bool)
        if not ok or not (math.isfinite(value) and value >= 0):
            self.errors.append(
                place.error(
                    f"the volume added must be a finite number >= 0, not {shown_value(value)}",
                    "give a volume in m^3 (in a scheme file, e.g. add 100 mL with B = 0.5 M)",
                )
            )
            return True  # reported: no second error about the species
        if value > 0 and self.volume is None:
            self.errors.append(
                place.error(
                    "an addition with a volume of its own needs the volume of the run",
                    "give the start volume (in a scheme file, a line such as volume = 1.0 L)",
                )
            )
            return True
        return value > 0

    def temperature(self, value, what: str, place: Place) -> None:
        ok = isinstance(value, numbers.Real) and not isinstance(value, bool)
        if not ok or not (math.isfinite(value) and value > 0):
            self.errors.append(
                place.error(
                    f"{what} must be finite and above 0 K, not {shown_value(value)}"
                    + (" K" if ok else ""),
                    "give a thermodynamic temperature in kelvin",
                )
            )
        elif not self.arrhenius and not any(n.endswith(_NO_EFFECT) for n in self.notes):
            self.notes.append(_note(place, _NO_EFFECT))

    def limit(self, count: int, place: Place) -> bool:
        """Count operations; refuse (once, at the statement that crosses) beyond the limit."""
        if self.count > MAX_OPERATIONS:
            return False
        self.count += count
        if self.count > MAX_OPERATIONS:
            window = "" if math.isinf(self.end) else f" up to {_when(self.end, place)}"
            self.errors.append(
                place.error(
                    f"the timeline would create {self.count:,} operations{window}, "
                    f"more than {MAX_OPERATIONS:,}",
                    "repeat less often, end the repetition earlier with 'until', "
                    "or solve a shorter window",
                )
            )
            return False
        return True


#: The note of a temperature operation in a scheme without Arrhenius constant (once).
_NO_EFFECT = (
    "a temperature operation has no effect: no rate constant of the scheme follows the "
    "Arrhenius law"
)


def _note(place: Place, sentence: str) -> str:
    """A note led by ``source:line:`` like the warnings of a scheme (times kept)."""
    lead = f"{place.source}:{place.line}: " if place.line > 0 else ""
    return lead + sentence if lead else sentence


def _repetitions(every: Every, end: float) -> tuple[list[float], int, int, float]:
    """Times of ``every`` inside the window and after it.

    The times inside the window, their count, and the count and first time of those
    after the window (up to ``until``).

    Times are :math:`T_0 + kP`, each computed exactly and rounded once.
    """
    period = Fraction(every.period)
    first = Fraction(every.period if every.start is None else every.start)
    if every.until is None:
        last = Fraction(end)
    else:
        last = (
            Fraction(every.until) if math.isinf(end) else min(Fraction(every.until), Fraction(end))
        )
    inside = 0 if last < first else math.floor((last - first) / period) + 1
    # over a common denominator: int / int is rounded once (correctly) by Python
    scale = math.lcm(period.denominator, first.denominator)
    a, p = int(first * scale), int(period * scale)
    times = [(a + k * p) / scale for k in range(inside)] if inside <= MAX_OPERATIONS else []
    after = 0
    if every.until is not None and Fraction(every.until) >= first:
        after = math.floor((Fraction(every.until) - first) / period) + 1 - inside
    return times, inside, after, float(first + inside * period) if after else math.nan


def _check_every(check: _Checker, every: Every) -> bool:
    place = every.place
    ok = check.time(every.period, "the period of a repeated operation", place)
    if ok and every.period <= 0:
        check.errors.append(
            place.error(
                f"the period of a repeated operation must be above 0 {place.time_unit}, not 0 "
                f"{place.time_unit}",
                "e.g. every 24 h",
            )
        )
        ok = False
    if every.start is not None:
        ok = check.time(every.start, "the first time of a repeated operation", place) and ok
    if every.until is not None:
        ok = check.time(every.until, "the end of a repeated operation", place) and ok
    first = every.period if every.start is None else every.start
    if ok and every.until is not None and every.until < first:
        check.errors.append(
            place.error(
                f"the repetition ends ({_when(every.until, place)}) before it starts "
                f"({_when(first, place)})",
                "give 'until' after 'from'",
            )
        )
        ok = False
    if not isinstance(every.action, (Addition, Removal)):
        check.errors.append(
            place.error("only an addition or a removal can be repeated", "use 'at' for the rest")
        )
        return False
    check.action(every.action, place)
    return ok


def _check_window(check: _Checker, start, end, place: Place, what: str) -> bool:
    ok = check.time(start, f"the start of {what}", place)
    ok = check.time(end, f"the end of {what}", place) and ok
    if ok and not end > start:
        check.errors.append(
            place.error(
                f"{what} ends ({_when(end, place)}) before it starts ({_when(start, place)})",
                "write 'from T0 to T1' with T0 before T1",
            )
        )
        ok = False
    return ok


def _check_ramps(check: _Checker, ramps, steps) -> None:
    """Ramps must not overlap one another, and no temperature step may fall inside one."""
    ordered = sorted(ramps, key=lambda r: (r.start, r.end))
    for earlier, later in itertools.pairwise(ordered):
        at = later.place
        if later.start < earlier.end:
            check.errors.append(
                later.place.error(
                    f"this ramp ({_when(later.start, at)} to {_when(later.end, at)}) overlaps the "
                    f"ramp from {_when(earlier.start, at)} to {_when(earlier.end, at)}",
                    "let one ramp end before the next starts",
                )
            )
    for time, _, _, place in steps:
        for ramp in ordered:
            if ramp.start <= time < ramp.end:
                check.errors.append(
                    place.error(
                        f"a temperature step at {_when(time, place)} falls inside the ramp from "
                        f"{_when(ramp.start, place)} to {_when(ramp.end, place)}",
                        "move the step to the end of the ramp or split the ramp",
                    )
                )


def expand(scheme: Scheme, timeline: Timeline, end: float) -> Plan:
    r"""Check a timeline against a scheme and expand it inside the window ``[0, end]``.

    Parameters
    ----------
    scheme : Scheme
    timeline : Timeline
    end : float
        Last solved time [s].

    Returns
    -------
    Plan

    Raises
    ------
    kinetics.errors.SchemeErrors
        Every mistake at once, each at its statement's :class:`Place`.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("P -> D  k = 1 1/d\nD -> X  kd = 0.1 1/h\nstart P = 1 M")
    >>> plan = expand(s, Timeline([Every(86400.0, Removal.percent(100, "D"))]), 3 * 86400.0)
    >>> [op.time for op in plan.operations]
    [86400.0, 172800.0, 259200.0]
    """
    collect = _Collector(_checker(scheme, timeline, end), end)
    for index, statement in enumerate(timeline.statements):
        collect.add(index, statement)
    return collect.plan(timeline)


def _checker(scheme: Scheme, timeline: Timeline, end: float) -> _Checker:
    """A checker for ``timeline``, with the mistake of its start volume if any."""
    found = _Checker(scheme, end, timeline.volume)
    volume = timeline.volume
    if volume is not None:
        ok = isinstance(volume, numbers.Real) and not isinstance(volume, bool)
        if not ok or not (math.isfinite(volume) and volume > 0):
            found.errors.append(
                Place().error(
                    f"the volume of the run must be a finite number above 0, not "
                    f"{shown_value(volume)}",
                    "give the start volume in m^3 (in a scheme file: volume = 1.0 L)",
                )
            )
            found.volume = 1.0  # checked: no follow-on errors about additions
    return found


def check(scheme: Scheme, timeline: Timeline, notes: list | None = None) -> list[SchemeError]:
    r"""Every mistake of a timeline that does not depend on the solved window.

    For the scheme language, which reports all mistakes of a file at once before the
    window is known; :func:`expand` repeats these checks and adds the count of
    repetitions inside the window.

    Parameters
    ----------
    scheme : Scheme
    timeline : Timeline
    notes : list, optional
        Receives the sentences about operations without effect (a temperature
        operation in a scheme without Arrhenius constant), as :attr:`Plan.notes`.

    Returns
    -------
    list of SchemeError
        Empty for a correct timeline.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = 1 1/s\nstart A = 1 M")
    >>> [e.problem for e in check(s, Timeline([At(-1.0, Addition({"A": 1.0}))]))]
    ['the time of an operation must be finite and >= 0 s, not -1.0 s']
    """
    collect = _Collector(_checker(scheme, timeline, math.inf), math.inf)
    for index, statement in enumerate(timeline.statements):
        collect.add(index, statement)
    _check_ramps(collect.check, [r for r, _ in collect.ramps], collect.steps)
    if notes is not None:
        notes.extend(dict.fromkeys(collect.check.notes))
    return collect.check.errors


class _Collector:
    """The operations, steps, ramps and feeds of a timeline, gathered while checking."""

    def __init__(self, check: _Checker, end: float) -> None:
        self.check = check
        self.end = end
        self.operations: list[tuple[float, int, int, Action]] = []
        self.steps: list[tuple[float, float, int, Place]] = []
        self.ramps: list[tuple[TemperatureRamp, int]] = []
        self.feeds: list[tuple[FeedWindow, int]] = []
        self.skipped: list[tuple[int, int, float]] = []

    def add(self, index: int, statement) -> None:
        """Check one statement and gather what it does inside the window."""
        place = getattr(statement, "place", Place())
        if isinstance(statement, At):
            self._at(index, statement, place)
        elif isinstance(statement, Every):
            self._every(index, statement, place)
        elif isinstance(statement, FeedWindow):
            self._feed(index, statement, place)
        elif isinstance(statement, TemperatureRamp):
            self._ramp(index, statement, place)
        else:
            self.check.errors.append(
                Place().error(
                    f"statement {index + 1} ({type(statement).__name__}) is not a timeline "
                    "statement",
                    "use At, Every, FeedWindow or TemperatureRamp",
                )
            )

    def _at(self, index: int, statement: At, place: Place) -> None:
        """One operation at one time: a temperature step, or an addition or removal."""
        check = self.check
        ok = check.time(statement.time, "the time of an operation", place)
        check.action(statement.action, place)
        if not ok:
            return
        if statement.time > self.end:
            self.skipped.append((index, 1, float(statement.time)))
        elif isinstance(statement.action, TemperatureStep):
            step = (float(statement.time), statement.action.temperature, index, place)
            self.steps.append(step)
        elif check.limit(1, place):
            self.operations.append((float(statement.time), index, 0, statement.action))

    def _every(self, index: int, statement: Every, place: Place) -> None:
        """A repeated operation: its repetitions inside the window, and the count after it."""
        check = self.check
        if not _check_every(check, statement):
            return
        if math.isinf(self.end) and statement.until is None:
            return  # no window yet: nothing to count
        times, inside, after, first_after = _repetitions(statement, self.end)
        if check.limit(inside, place):
            self.operations.extend((t, index, k, statement.action) for k, t in enumerate(times))
            if after:
                self.skipped.append((index, after, first_after))

    def _feed(self, index: int, statement: FeedWindow, place: Place) -> None:
        """A feed window: its times and rates."""
        check = self.check
        ok = _check_window(check, statement.start, statement.end, place, "the feed window")
        for name, rate in statement.rates:
            if check.name(name, place):
                check.amount(name, rate, place, rate=True)
        self._window(ok, index, statement, self.feeds)

    def _ramp(self, index: int, statement: TemperatureRamp, place: Place) -> None:
        """A temperature ramp: its times and its first and last temperatures."""
        check = self.check
        ok = _check_window(check, statement.start, statement.end, place, "the ramp")
        check.temperature(statement.initial, "the ramp's first temperature", place)
        check.temperature(statement.final, "the ramp's last temperature", place)
        self._window(ok, index, statement, self.ramps)

    def _window(self, ok: bool, index: int, statement, into: list) -> None:
        if ok and self.check.limit(2, statement.place):
            if statement.start > self.end:
                self.skipped.append((index, 1, float(statement.start)))
            else:
                into.append((statement, index))

    def plan(self, timeline: Timeline) -> Plan:
        """The checked plan; every mistake found is raised at once."""
        check = self.check
        _check_ramps(check, [r for r, _ in self.ramps], self.steps)
        if check.errors:
            raise SchemeErrors(check.errors)
        notes = list(dict.fromkeys(check.notes))
        for index, count, first in self.skipped:
            many = count != 1
            sentence = TimedText(
                f"{count:,} operation{'s' if many else ''} from ",
                first,
                f" on {'fall' if many else 'falls'} after the end of the window (",
                self.end,
                f") and {'were' if many else 'was'} not applied",
            )
            notes.append(_note(timeline.statements[index].place, sentence))
        operations = sorted(self.operations, key=lambda o: (o[0], o[1], o[2]))
        applied = _volumes([Operation(t, a, i) for t, i, _, a in operations], timeline.volume)
        ramps = sorted(self.ramps, key=lambda r: r[0].start)
        steps = sorted(((t, T, i) for t, T, i, _ in self.steps), key=lambda s: (s[0], s[2]))
        return Plan(
            end=float(self.end),
            operations=applied,
            steps=tuple(steps),
            ramps=tuple(r for r, _ in ramps),
            ramp_statements=tuple(i for _, i in ramps),
            feeds=tuple(self.feeds),
            skipped=tuple(self.skipped),
            notes=tuple(notes),
        )


def _volumes(operations: list[Operation], start: float | None) -> tuple[Operation, ...]:
    """The operations with the dilution of each addition, in a run with volumes.

    With :math:`V` the volume before an addition of volume :math:`v`, the kept factor is
    :math:`V/(V + v)` and the share of its amounts :math:`V_0/(V + v)` (exact).
    """
    if start is None:
        return tuple(operations)
    V0 = Fraction(start)
    V = V0
    out = []
    for op in operations:
        if isinstance(op.action, Addition):
            v = Fraction(op.action.volume)
            out.append(replace(op, kept=V / (V + v), share=V0 / (V + v), volume=float(V + v)))
            V += v
        else:
            out.append(replace(op, volume=float(V)))
    return tuple(out)


def attach(scheme: Scheme, timeline: Timeline) -> Scheme:
    r"""A copy of ``scheme`` with the operations of ``timeline`` (replacing its own).

    The Python way to give a scheme operations without writing them in its text
    (:meth:`kinetics.scheme.Scheme.with_timeline` calls this): times in seconds,
    temperatures in kelvin, amounts in the scheme's concentration unit, volumes in m^3.
    :func:`kinetics.solve` then solves the run exactly stretch by stretch, and
    ``Solution.events`` records what each operation moved.

    Raises
    ------
    kinetics.errors.ArgumentTypeError
        When ``timeline`` is not a :class:`Timeline`.
    kinetics.errors.SchemeErrors
        Every mistake that does not depend on the solved window, at once.

    Examples
    --------
    A second portion of A after 30 min (k = 0.02 1/min; closed form
    :math:`A(t) = A_0 e^{-kt} + a\,e^{-k(t - 30)}` for t >= 30 min):

    >>> import math, kinetics
    >>> s = kinetics.parse("A -> B  k = 0.02 1/min\nstart A = 0.5 mol/L")
    >>> run = s.with_timeline(Timeline([At(1800.0, Addition({"A": 0.25}))]))
    >>> sol = kinetics.solve(run, [0.0, 1800.0, 3600.0])
    >>> sol.times.tolist()  # the time of the addition twice: just before and after
    [0.0, 1800.0, 1800.0, 3600.0]
    >>> expected = 0.5 * math.exp(-1.2) + 0.25 * math.exp(-0.6)
    >>> bool(abs(sol["A"][-1] - expected) < 1e-15)
    True
    >>> [(e.action, e.species, e.change) for e in sol.events]
    [('add', 'A', 0.25)]
    """
    from .errors import ArgumentTypeError, type_name

    if not isinstance(timeline, Timeline):
        raise ArgumentTypeError(
            f"with_timeline() needs a Timeline, not {type_name(timeline)}",
            "build one from kinetics.timeline: Timeline([At(1800.0, Addition({'A': 0.25}))])",
        )
    errors = check(scheme, timeline)
    if errors:
        raise SchemeErrors(errors)
    return replace(scheme, timeline=timeline)
