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

from collections.abc import Sequence
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
    "first_broken_batch",
    "requirement_times",
    "requirements_on",
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
    """

    requirement: Requirement
    holds_at_start: bool
    first_broken: float | None
    beyond_window: bool
    holds_between: tuple[tuple[float, float], ...]

    def to_dict(self) -> dict:
        """JSON-ready, times [s] (null for never / for ever)."""
        return {
            "text": self.requirement.text,
            "species": self.requirement.species,
            "first_broken": None if self.first_broken is None else float(self.first_broken),
            "beyond_window": bool(self.beyond_window),
            "holds_at_start": bool(self.holds_at_start),
            "holds_between": [[float(a), finite_or_none(b)] for a, b in self.holds_between],
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
    try:
        return problem.names.index(name)
    except ValueError:
        raise SpeciesError(
            f"the requirement names {name}, which is not a species of the problem",
            "species are " + ", ".join(problem.names),
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
        index = [names.index(req.species) for req in requirements]
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
