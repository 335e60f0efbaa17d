r"""Requirements evaluated on the exact solution.

When each one is first broken, and the time window in which all of them hold together.

A requirement (:class:`kinetics.requirements.Requirement`, a ``require`` line) states
:math:`c_i(t) \le L` or :math:`c_i(t) \ge L` for a species ``i`` and a level ``L``
[conc].  With :math:`h(t) = \pm(c_i(t) - L)` (``+`` for ``>=``, ``-`` for ``<=``) it
holds where :math:`h(t) \ge 0`.  Every time :math:`h` changes sign is found over all
:math:`t \ge 0`, beyond the chosen window too:

* between the samples of the shared scan (:class:`~kinetics.analysis.survey.Survey`: a
  log-like grid over every time scale of ``K`` plus every turning point of
  :math:`c_i`, so :math:`c_i` is monotone between samples), each sign change is one
  crossing, refined by the safeguarded Newton iteration of
  :mod:`kinetics.analysis.roots` on the exact curve (about 1e-13 relative in time);
* after the scan (50 of the slowest time constants) the curve is at its long-time limit
  to rounding; when the limit (or growth without bound) lies on the other side of the
  level, the last crossing is bracketed by doubling the time and refined the same way.

For a stability scheme the first time ``API >= 90 %`` is broken is the shelf life at the
scheme's temperature, :math:`t = \ln(10/9)/k` for one first-order degradation; for a
process the window in which every requirement holds gives the earliest and the latest
safe quench.

References
----------
Connors, K. A.; Amidon, G. L.; Stella, V. J. "Chemical Stability of Pharmaceuticals",
2nd ed., Wiley (1986): shelf life as the time to 90 % of the labelled content.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from kinetics.analysis.crossings import Crossing, level_roots
from kinetics.analysis.problem import Problem
from kinetics.analysis.survey import Survey
from kinetics.analysis.tolerances import REL_NOISE_C
from kinetics.analysis.working_range import MAX_TIME
from kinetics.errors import SpeciesError
from kinetics.jsonready import finite_or_none
from kinetics.requirements import Requirement

__all__ = [
    "RequirementTime",
    "RequirementTimes",
    "RunPieces",
    "first_broken_batch",
    "requirement_times",
    "requirements_on",
    "requirements_on_run",
]

#: A limit within this fraction of the level is approached, not crossed (the curve then
#: meets the level only as t -> infinity).
_LIMIT_TOL = 1e-9
#: Most doublings of the time when a crossing lies after the scan.
_MAX_DOUBLINGS = 400


@dataclass(frozen=True)
class RequirementTime:
    r"""When one requirement holds.

    Attributes
    ----------
    requirement : Requirement
        As parsed (its threshold for the start values of the problem).
    holds_at_start : bool
        True when :math:`c_i(0)` meets it.
    first_broken : float or None
        [s] the first time it is broken (0.0 when it does not hold at the start); None
        when it holds at every :math:`t \ge 0`.
    beyond_window : bool
        True when ``first_broken`` lies after the end of the chosen time window.
    holds_between : tuple of (float, float)
        [s] the intervals in which it holds, in time order; ``inf`` as the end of the last
        one when it holds from then on.
    by_operation : bool
        True when an operation of a run (an addition or a removal) broke it at
        ``first_broken``: it held just before and not just after.
    """

    requirement: Requirement
    holds_at_start: bool
    first_broken: float | None
    beyond_window: bool
    holds_between: tuple[tuple[float, float], ...]
    by_operation: bool = False

    def to_dict(self) -> dict:
        """JSON-ready, times [s] (null for never / for ever)."""
        return {
            "text": self.requirement.text,
            "species": self.requirement.species,
            "first_broken": None if self.first_broken is None else float(self.first_broken),
            "beyond_window": bool(self.beyond_window),
            "holds_at_start": bool(self.holds_at_start),
            "holds_between": [[float(a), finite_or_none(b)] for a, b in self.holds_between],
            "broken_by_operation": bool(self.by_operation),
        }


@dataclass(frozen=True)
class RequirementTimes:
    """Every requirement of a problem, and the window in which all hold together.

    Attributes
    ----------
    times : tuple of RequirementTime
        One per requirement, in the order given.
    window : (float, float) or None
        [s] the first interval in which every requirement holds (end ``inf`` when they
        hold from then on); None when they never hold together.
    windows : tuple of (float, float)
        [s] every interval in which all hold together, in time order (``window`` is the
        first).
    """

    times: tuple[RequirementTime, ...]
    window: tuple[float, float] | None
    windows: tuple[tuple[float, float], ...] = ()

    @property
    def all_hold_until(self) -> float | None:
        """[s] the end of :attr:`window` (None when it has no end or there is none)."""
        return None if self.window is None else finite_or_none(self.window[1])

    def to_dict(self) -> dict:
        """JSON-ready form.

        Keys ``requirements``, ``all_hold_from``, ``all_hold_until`` [s], null for "no
        end"; ``all_hold_from`` null when they never hold together.
        """
        return {
            "requirements": [t.to_dict() for t in self.times],
            "all_hold_from": None if self.window is None else float(self.window[0]),
            "all_hold_until": self.all_hold_until,
        }


def _species(problem: Problem, name: str) -> int:
    return _species_index(problem.names, name, "problem")


def _species_index(names: Sequence[str], name: str, where: str) -> int:
    """The index of the species a requirement names, or our error naming ``where``."""
    try:
        return list(names).index(name)
    except ValueError:
        raise SpeciesError(
            f"the requirement names {name}, which is not a species of the {where}",
            "species are " + ", ".join(names),
        ) from None


def _signs(req: Requirement, v: np.ndarray) -> np.ndarray:
    """+1 where the requirement holds beyond rounding, -1 where broken, 0 at the level."""
    sense = 1.0 if req.comparison == ">=" else -1.0
    g = sense * (v - req.threshold)
    noise = REL_NOISE_C * np.maximum(np.abs(v), abs(req.threshold))
    return np.sign(g) * (np.abs(g) > noise)


def _final_sign(survey: Survey, i: int, req: Requirement, last: float) -> float:
    """The sign of the requirement as t -> infinity.

    ``last`` when it approaches the level only in the limit.
    """
    lim = survey.limits.limit
    sense = 1.0 if req.comparison == ">=" else -1.0
    if lim.unbounded[i]:
        return sense
    gap = lim.values[i] - req.threshold
    if abs(gap) <= _LIMIT_TOL * max(abs(lim.values[i]), abs(req.threshold)):
        return last
    return sense * float(np.sign(gap))


def _tail(problem: Problem, i: int, req: Requirement, t0: float, want: float) -> Crossing | None:
    """The crossing after the scan, bracketed by doubling the time from ``t0``."""
    ta = t0
    for _ in range(_MAX_DOUBLINGS):
        tb = 2.0 * ta if ta > 0 else 1.0
        if tb > MAX_TIME:
            return None
        if _signs(req, problem.propagate(np.array([tb]))[:, i])[0] == want:
            state = problem.state(np.array([ta, tb]))
            d2 = problem.apply(state.D)[:, i]
            smp = (np.array([ta, tb]), state.C[:, i], state.D[:, i], d2)
            return Crossing(i, smp, 0, 1, req.threshold)
        ta = tb
    return None


def _events(survey: Survey, i: int, req: Requirement):
    """(state at the start, crossings to refine with the sign after each, a tail crossing)."""
    smp = survey.samples(i)
    s = _signs(req, smp[1])
    start = bool(req.holds(survey.problem.c0[i]))
    found: list[tuple[Crossing, float]] = []
    known = np.flatnonzero(s)
    prev_k, prev = None, (1.0 if start else -1.0)
    for k in known:
        if s[k] != prev:
            if prev_k is None:  # at the level at t = 0, on the other side at once
                found.append((Crossing(i, smp, 0, 0, req.threshold), float(s[k])))
            else:
                found.append((Crossing(i, smp, int(prev_k), int(k), req.threshold), float(s[k])))
        prev_k, prev = k, float(s[k])
    final = _final_sign(survey, i, req, prev)
    tail = None
    if final != prev:
        t_last = float(smp[0][-1])
        tail = _tail(survey.problem, i, req, t_last, final)
    return start, found, (tail, final)


def _intervals(start: bool, events: list[tuple[float, bool]]) -> tuple[tuple[float, float], ...]:
    """Intervals where the requirement holds from its state at 0 and the sign changes."""
    out, since = [], 0.0 if start else None
    for t, holds in sorted(events):
        if holds and since is None:
            since = t
        elif not holds and since is not None:
            if t > since:
                out.append((since, t))
            since = None
    if since is not None:
        out.append((since, np.inf))
    return tuple(out)


def _together(intervals: Sequence[tuple[tuple[float, float], ...]]) -> list[tuple[float, float]]:
    """The intervals common to every list of intervals, in time order."""
    common: list[tuple[float, float]] = [(0.0, np.inf)]
    for own in intervals:
        common = [
            (max(a, c), min(b, d))
            for a, b in common
            for c, d in own
            if max(a, c) < min(b, d) or (max(a, c) == min(b, d) == 0.0)
        ]
    return sorted(common)


def requirements_on(survey: Survey, requirements: Sequence[Requirement]) -> RequirementTimes:
    """Evaluate ``requirements`` on the problem of ``survey`` (see the module docstring).

    The species of each requirement is looked up in ``survey.problem.names``.
    """
    problem = survey.problem
    plans = []
    refine: list[Crossing] = []
    for req in requirements:
        i = _species(problem, req.species)
        start, found, (tail, final) = _events(survey, i, req)
        plans.append((req, start, found, tail, final))
        refine.extend(c for c, _ in found if c.ka != c.kb)
        if tail is not None:
            refine.append(tail)
    roots = iter(level_roots(problem, refine))
    window_end = problem.t_window
    out = []
    for req, start, found, tail, final in plans:
        events = [(0.0 if c.ka == c.kb else float(next(roots)), after > 0) for c, after in found]
        if tail is not None:
            events.append((float(next(roots)), final > 0))
        spans = _intervals(start, events)
        if not start:
            broken: float | None = 0.0
        else:
            broken = spans[0][1] if spans and np.isfinite(spans[0][1]) else None
        beyond = bool(broken is not None and window_end is not None and broken > window_end)
        out.append(RequirementTime(req, start, broken, beyond, spans))
    windows = _together([t.holds_between for t in out]) if out else []
    return RequirementTimes(tuple(out), windows[0] if windows else None, tuple(windows))


@dataclass(frozen=True)
class RunPieces:
    r"""A run with operations as pieces of constant conditions (:func:`requirements_on_run`).

    Piece ``k`` runs from ``starts[k]`` to ``starts[k + 1]``; the last one is continued
    without end (the conditions after the last operation).  Operations act between
    pieces: at ``starts[k]`` the concentrations jump from ``before[k]`` to ``after[k]``.

    Attributes
    ----------
    starts : numpy.ndarray
        [s], shape ``(p,)``, increasing, ``starts[0] = 0``.
    before, after : numpy.ndarray
        [conc], shape ``(p, n)``: just before and just after the operations at each
        start (``before[0]``: the start values of the scheme).
    ends : numpy.ndarray
        [conc], shape ``(p, n)``: at the end of each piece (the last: anywhere; it is
        always searched).
    survey : callable
        ``survey(k)`` -> the :class:`~kinetics.analysis.survey.Survey` of piece ``k`` (its
        problem starting at ``after[k]`` at its own time 0), or None for a piece of no
        length.
    searched : callable
        ``searched(k, j)`` -> whether piece ``k`` is searched for crossings of species
        ``j`` even when its ends lie on one side of a level (True: every crossing is
        found; False: only a piece whose ends lie on different sides is searched).
    """

    starts: np.ndarray
    before: np.ndarray
    after: np.ndarray
    ends: np.ndarray
    survey: Callable[[int], Survey | None]
    searched: Callable[[int, int], bool]


def _wanted(pieces: RunPieces, k: int, plan: list) -> list[int]:
    """The requirements to search inside piece ``k``.

    All on the last piece and on pieces searched in full, else those whose ends lie on
    different sides of the level.
    """
    last = k == len(pieces.starts) - 1
    out = []
    for r, (req, j) in enumerate(plan):
        sides = _signs(req, np.array([pieces.after[k][j], pieces.ends[k][j]]))
        if last or pieces.searched(k, j) or sides[0] != sides[1]:
            out.append(r)
    return out


def _piece_events(pieces: RunPieces, k: int, plan: list, events: list) -> None:
    """Sign changes of every requirement inside piece ``k``, with exact roots.

    Appended to ``events[r]`` as ``(time, holds after)``.
    """
    a = float(pieces.starts[k])
    last = k == len(pieces.starts) - 1
    length = np.inf if last else float(pieces.starts[k + 1]) - a
    wanted = _wanted(pieces, k, plan)
    survey = pieces.survey(k) if wanted else None
    if survey is None:
        return
    refine: list[Crossing] = []
    owners: list[tuple[int, bool]] = []
    for r in wanted:
        req, j = plan[r]
        _, found, (tail, final) = _events(survey, j, req)
        if tail is not None:
            found.append((tail, final))
        for c, after in found:
            if c.ka == c.kb:  # at the level at the piece's start, on the other side at once
                events[r].append((a, after > 0))
            elif c.samples[0][c.ka] < length:
                refine.append(c)
                owners.append((r, after > 0))
    for root, (r, holds) in zip(level_roots(survey.problem, refine), owners, strict=True):
        if root < length:
            events[r].append((a + float(root), holds))


def requirements_on_run(
    pieces: RunPieces,
    requirements: Sequence[Requirement],
    species: Sequence[str],
    t_window: float | None = None,
) -> RequirementTimes:
    r"""Requirements on the exact piecewise solution of a run with operations.

    Inside each piece the exact roots as for a run without operations (see the module
    docstring); at an operation the concentration jumps, so a requirement can be broken
    (or hold again) *at* the time of an operation: that time is reported, with
    :attr:`RequirementTime.by_operation` set.  After the last operation the conditions
    are continued without end (crossings beyond the window are found and flagged).

    .. math:: t_{broken} = \min\{t \ge 0 : \pm(c_i(t^+) - L) < 0\}

    Parameters
    ----------
    pieces : RunPieces
    requirements : sequence of Requirement
        Thresholds in the unit of the concentrations (a share of a start value refers to
        the value at time 0, ``pieces.before[0]``).
    species : sequence of str
        In the order of the columns of ``pieces.after``.
    t_window : float, optional
        [s] end of the solved window: later first breaks are flagged.

    Returns
    -------
    RequirementTimes

    Examples
    --------
    A -> B (k = 1 1/h) with ``require B <= 0.5 M``, and 60 % of B removed at
    :math:`h` = 0.5 h.  With :math:`b = 1 - e^{-kh}` (closed form) B is :math:`0.4 b`
    after the removal and rises as :math:`0.4 b + (1 - b)(1 - e^{-k(t - h)})`, which
    reaches 0.5 at :math:`t = h + \ln((1 - b)/(0.5 - 0.6 b))/k`:

    >>> import math
    >>> import numpy as np
    >>> from kinetics.analysis.problem import Problem
    >>> from kinetics.analysis.survey import Survey
    >>> from kinetics.requirements import Requirement
    >>> k, h = 1 / 3600, 1800.0
    >>> K = np.array([[-k, 0.0], [k, 0.0]])
    >>> b = 1 - math.exp(-0.5)
    >>> before = np.array([[1.0, 0.0], [1 - b, b]])
    >>> after = np.array([[1.0, 0.0], [1 - b, 0.4 * b]])
    >>> problems = [Problem(K, c) for c in after]
    >>> pieces = RunPieces(np.array([0.0, h]), before, after, before[[1, 1]],
    ...                    lambda i: Survey.of(problems[i]), lambda i, j: True)
    >>> req = Requirement("B <= 0.5 M", "B", "<=", 0.5)
    >>> out = requirements_on_run(pieces, [req], ["A", "B"])
    >>> exact = h + math.log((1 - b) / (0.5 - 0.6 * b)) / k
    >>> bool(abs(out.times[0].first_broken - exact) < 1e-9 * exact)
    True
    """
    names = list(species)
    plan = []
    for req in requirements:
        plan.append((req, _species_index(names, req.species, "run")))
    events: list[list[tuple[float, bool]]] = [[] for _ in plan]
    by_operation: list[set[float]] = [set() for _ in plan]
    for k in range(len(pieces.starts)):
        t = float(pieces.starts[k])
        for r, (req, j) in enumerate(plan):
            vb, va = pieces.before[k][j], pieces.after[k][j]
            if vb != va:  # an operation moved it
                held, holds = bool(req.holds(vb)), bool(req.holds(va))
                events[r].append((t, holds))
                if held and not holds:
                    by_operation[r].add(t)
        _piece_events(pieces, k, plan, events)
    out = []
    for r, (req, j) in enumerate(plan):
        start = bool(req.holds(pieces.before[0][j]))
        spans = _run_intervals(start, events[r])
        if not start or not spans or spans[0][0] > 0.0:
            broken: float | None = 0.0
        else:
            broken = spans[0][1] if np.isfinite(spans[0][1]) else None
        beyond = bool(broken is not None and t_window is not None and broken > t_window)
        at_op = broken is not None and broken in by_operation[r]
        out.append(RequirementTime(req, start, broken, beyond, spans, at_op))
    windows = _together([t.holds_between for t in out]) if out else []
    return RequirementTimes(tuple(out), windows[0] if windows else None, tuple(windows))


def _run_intervals(start: bool, events: list[tuple[float, bool]]):
    """Intervals where a requirement holds over a run.

    Events in time order; of several at one time the last (the state after an operation)
    wins.
    """
    latest: dict[float, bool] = {}
    for t, holds in sorted(events, key=lambda e: e[0]):
        latest[t] = holds
    return _intervals(start, list(latest.items()))


def requirement_times(
    K,
    c0,
    requirements: Sequence[Requirement],
    species: Sequence[str],
    feed=None,
    t_window: float | None = None,
    *,
    K_low=None,
) -> RequirementTimes:
    r"""When each requirement is first broken, and when all hold together.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    requirements : sequence of Requirement
        Thresholds in the unit of ``c0`` (:attr:`kinetics.scheme.Scheme.requirements`;
        a percentage of a start value follows ``c0`` through
        :meth:`~kinetics.requirements.Requirement.for_start`).
    species : sequence of str
        Species names in the order of the rows of ``K``.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    t_window : float, optional
        End of the chosen time window [s]: later first breaks are flagged.
    K_low : array_like or sparse, optional
        Low-order parts of ``K`` (see :func:`kinetics.analysis.summarise`).

    Returns
    -------
    RequirementTimes

    .. math::

        t_{broken} = \min\{t \ge 0 : \pm(c_i(t) - L) < 0\}, \qquad
        t_{90} = \ln(10/9)/k \text{ for } A \to B,\ \texttt{require A >= 90 \%}

    Notes
    -----
    Every crossing of the level over :math:`t \ge 0` is found (see the module
    docstring); a requirement that does not hold at :math:`t = 0` is broken at 0.

    References
    ----------
    Connors, K. A.; Amidon, G. L.; Stella, V. J. "Chemical Stability of
    Pharmaceuticals", 2nd ed., Wiley (1986).

    Examples
    --------
    >>> import math
    >>> from kinetics.requirements import Requirement
    >>> req = Requirement("A >= 90 %", "A", ">=", 0.9)
    >>> out = requirement_times([[-0.01, 0.0], [0.01, 0.0]], [1.0, 0.0], [req], ["A", "B"])
    >>> round(out.times[0].first_broken / (math.log(10 / 9) / 0.01), 12)
    1.0
    """
    names = list(species)
    problem = Problem(K, c0, feed, names=names, t_window=t_window, K_low=K_low)
    if len(set(names)) != problem.n:
        raise SpeciesError("species names are not unique", "give each species its own name")
    return requirements_on(Survey.of(problem), list(requirements))


def first_broken_batch(
    K,
    c0,
    requirements: Sequence[Requirement],
    species: Sequence[str],
    feed=None,
    t_window: float | None = None,
    *,
    K_low=None,
) -> np.ndarray:
    """The first time each requirement is broken, for a stack of problems (a sweep).

    Parameters
    ----------
    K : ndarray, shape (b, n, n)
        Rate matrices [1/s].
    c0 : ndarray, shape (b, n)
        Start concentrations [conc]; a threshold written as a percentage of a start value
        follows each member's start value
        (:meth:`~kinetics.requirements.Requirement.for_start`).
    requirements : sequence of Requirement
    species : sequence of str
    feed : ndarray, shape (n,), optional
    t_window : float, optional
        [s] (does not change the times).
    K_low : ndarray, shape (b, n, n), optional

    Returns
    -------
    ndarray, shape (b, r)
        [s] per member and requirement the first time it is broken (0 when it does not
        hold at the start), NaN when it holds at every time.

    Notes
    -----
    Requirements on a species that only falls or only rises are answered for the whole
    stack at once (:func:`kinetics.analysis.requirements_batch.monotone_first_broken`:
    closed forms, or batched Newton steps on the exact solution); a member with any other
    requirement, or with a feed, is evaluated by :func:`requirement_times` (its own scan
    of the exact solution, about the cost of the summary of one ``solve``).
    """
    from kinetics.analysis.requirements_batch import monotone_first_broken

    names = list(species)
    K = np.asarray(K, dtype=float)
    c0 = np.asarray(c0, dtype=float)
    b, r = K.shape[0], len(requirements)
    out = np.full((b, r), np.nan)
    own = [[req.for_start(dict(zip(names, c0[m], strict=True))) for req in requirements]
           for m in range(b)]  # fmt: skip
    done = np.zeros((b, r), dtype=bool)
    if r and (feed is None or not np.any(feed)):
        index = [_species_index(names, req.species, "problem") for req in requirements]
        senses = [1.0 if req.comparison == ">=" else -1.0 for req in requirements]
        levels = np.array([[q.threshold for q in row] for row in own]).reshape(b, r)
        holds = np.array([[bool(q.holds(c0[m, i])) for q, i in zip(row, index, strict=True)]
                          for m, row in enumerate(own)]).reshape(b, r)  # fmt: skip
        out, done = monotone_first_broken(K, c0, index, senses, levels, holds, K_low=K_low)
    for m in np.flatnonzero(~done.all(axis=1)):
        low = None if K_low is None else K_low[m]
        found = requirement_times(K[m], c0[m], own[m], names, feed, t_window, K_low=low)
        for k, t in enumerate(found.times):
            out[m, k] = np.nan if t.first_broken is None else t.first_broken
    return out
