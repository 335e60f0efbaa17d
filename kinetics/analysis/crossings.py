r"""Crossings of levels: times to a fraction of the start value and to the limit.

Half-life, DT50, DT90 and t90, and the time after which every species stays near its limit.

Each crossing is bracketed between consecutive samples of the curve (scan points and
turning points, so the curve is monotone between them) and refined by
:func:`kinetics.analysis.roots.find_roots` on the exact solution.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from kinetics.analysis import inputs
from kinetics.analysis.problem import Problem
from kinetics.analysis.results import FractionTime, Limit, TimeToLimit
from kinetics.analysis.roots import Brackets, find_roots
from kinetics.analysis.survey import Survey
from kinetics.analysis.tolerances import REL_NOISE_C
from kinetics.time_text import TimedText

__all__ = [
    "Crossing",
    "fraction_times",
    "half_life",
    "half_life_detail",
    "settling_times",
    "time_to_fraction",
    "time_to_fraction_detail",
    "time_to_limit",
]


class Crossing(NamedTuple):
    """One level crossing to find.

    c_i is monotone between samples ``ka`` and ``kb`` and crosses ``level`` [conc] there.
    """

    species: int
    samples: tuple[np.ndarray, ...]
    ka: int
    kb: int
    level: float


def level_roots(problem: Problem, crossings: list[Crossing]) -> np.ndarray:
    """Roots [s] of c_i(t) = level, one per crossing."""
    if not crossings:
        return np.zeros(0)
    sp = np.array([c.species for c in crossings], dtype=int)
    LV = np.array([c.level for c in crossings], dtype=float)

    def at(end: str, which: int) -> np.ndarray:  # sample ``which`` (t, c, c', c'') at an end
        return np.array([c.samples[which][getattr(c, end)] for c in crossings], dtype=float)

    A, B = at("ka", 0), at("kb", 0)
    GA, GB = at("ka", 1) - LV, at("kb", 1) - LV
    NA = REL_NOISE_C * np.maximum(np.abs(GA + LV), LV)
    NB = REL_NOISE_C * np.maximum(np.abs(GB + LV), LV)
    no = np.zeros(sp.size, dtype=bool)
    brackets = Brackets(
        A, B, GA, GB, at("ka", 2), at("kb", 2), at("ka", 3), at("kb", 3), sp, LV, no, NA, NB
    )
    return find_roots(problem, brackets)[0]


def _never_reason(problem: Problem, i: int, phi: float, lim: Limit, t_end: float) -> str:
    """Why species ``i`` never falls to ``phi`` of its start value, in one sentence."""
    name = problem.names[i]
    pct = f"{100 * phi:g} %"
    L = lim.values[i]
    c0 = problem.c0[i]
    if problem.Ks[i, i] == 0:
        return (
            f"{name} is not consumed (no step leads away from it), so it never falls "
            "below its start value"
        )
    if lim.unbounded[i]:
        return f"{name} grows without bound and never falls to {pct} of its start value"
    if abs(L - phi * c0) <= 1e-9 * c0:
        return (
            f"{name} approaches {pct} of its start value only as t -> infinity "
            "(that is its long-time limit), so it never reaches it in finite time"
        )
    if L > phi * c0:
        return (
            f"{name} levels off at {100 * L / c0:.6g} % of its start value (its long-time "
            f"limit, e.g. an equilibrium), above {pct}, so it never falls that low"
        )
    return TimedText(f"{name} did not fall to {pct} of its start value within the scanned ", t_end)


def fraction_times(survey: Survey, requests: Sequence[tuple[int, float]]) -> list[FractionTime]:
    """First times c_i = phi c0_i for each (i, phi), found together."""
    problem = survey.problem
    lim = survey.limits.limit
    out: list[FractionTime | None] = [None] * len(requests)
    probs, where = [], []
    for r, (i, phi) in enumerate(requests):
        c0 = problem.c0[i]
        if c0 <= 0:
            reason = f"{problem.names[i]} starts at zero, so a fraction of its start is undefined"
            out[r] = FractionTime(i, phi, None, reason)
            continue
        target = phi * c0
        smp = survey.samples(i)
        t, v = smp[0], smp[1]
        gv = v - target
        noise = REL_NOISE_C * np.maximum(v, target)
        s = np.sign(gv) * (np.abs(gv) > noise)
        neg = np.flatnonzero(s < 0)
        if neg.size:
            kb = int(neg[0])
            ka = int(np.flatnonzero(s[:kb] > 0)[-1])
            probs.append(Crossing(i, smp, ka, kb, target))
            where.append(r)
            continue
        out[r] = FractionTime(i, phi, None, _never_reason(problem, i, phi, lim, t[-1]))
    for r, t in zip(where, level_roots(problem, probs), strict=True):
        i, phi = requests[r]
        out[r] = FractionTime(i, phi, float(t), "")
    return out  # type: ignore[return-value]


def _settling_problem(survey: Survey, i: int, thr: float) -> Crossing | float:
    """The last exit of c_i from the band of half-width ``thr`` around its limit.

    0.0 when it never leaves the band, inf when it does not settle within the scan.
    """
    L = survey.limits.limit.values
    smp = survey.samples(i)
    v = smp[1]
    dev = np.abs(v - L[i]) - thr
    noise = REL_NOISE_C * np.maximum(v, L[i])
    s = np.sign(dev) * (np.abs(dev) > noise)
    out_band = np.flatnonzero(s > 0)
    if out_band.size == 0:
        return 0.0
    ka = int(out_band[-1])
    inside = np.flatnonzero(s[ka + 1 :] < 0)
    if inside.size == 0:
        return np.inf  # not settled within the scan
    kb = ka + 1 + int(inside[0])
    lev = L[i] + thr if v[ka] > L[i] else L[i] - thr
    return Crossing(i, smp, ka, kb, lev)


def settling_times(survey: Survey, tolerance: float) -> TimeToLimit:
    """Time after which each species (and the scheme) stays within ``tolerance`` of its limit.

    See the module Definitions of :mod:`kinetics.analysis`.
    """
    problem = survey.problem
    lim = survey.limits.limit
    per = np.full(problem.n, np.nan)
    L = lim.values
    big = L[~lim.unbounded].max(initial=0.0)
    big = big if big > 0 else problem.c0.max()
    probs = []
    for i in range(problem.n):
        if lim.unbounded[i]:
            continue  # no limit to approach; the others are still timed
        found = _settling_problem(survey, i, tolerance * (L[i] if L[i] > 0 else big))
        if isinstance(found, Crossing):
            probs.append(found)
        else:
            per[i] = found
    if probs:
        per[np.array([p.species for p in probs])] = level_roots(problem, probs)
    if not lim.bounded:
        who = ", ".join(problem.names[i] for i in np.flatnonzero(lim.unbounded))
        verb = "grows" if lim.unbounded.sum() == 1 else "grow"
        return TimeToLimit(None, per, tolerance, f"no finite limit: {who} {verb} without bound")
    if np.isinf(per).any():
        return TimeToLimit(None, per, tolerance, "not settled within the scanned time span")
    return TimeToLimit(float(per.max()), per, tolerance, "")


def time_to_fraction_detail(K, c0, i: int, fraction: float, feed=None) -> FractionTime:
    r"""First time a species falls to a fraction of its start value, with the reason if never.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc], >= 0.
    i : int
        Species index.
    fraction : float
        :math:`\phi` in (0, 1) [-].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    Returns
    -------
    FractionTime
        ``time`` [s] or None, and ``reason`` when None.

    .. math::

        t_\phi = \min\{t > 0 : c_i(t) = \phi\, c_{0,i}\}

    Notes
    -----
    The crossing is bracketed between consecutive points of a scan that contains every
    turning point of :math:`c_i` (so the curve is monotone between them) and refined by a
    safeguarded Newton iteration on the exact solution (never leaving the bracket) to
    about 1e-13 relative in time.  For a single first-order decay
    :math:`t_\phi = \ln(1/\phi)/k`; shelf life (90 % left) is
    :math:`\ln(10/9)/k \approx 0.105/k`.

    References
    ----------
    Connors, K. A.; Amidon, G. L.; Stella, V. J. "Chemical Stability of Pharmaceuticals",
    2nd ed., Wiley (1986).
    FOCUS Work Group on Degradation Kinetics, "Guidance document on estimating persistence
    and degradation kinetics from environmental fate studies on pesticides in EU
    registration" (2006): DT50 and DT90.

    Examples
    --------
    A <=> B with equal constants levels off at half of A's start (closed form
    c_A(∞) = kr / (kf + kr) c_A(0)), so a quarter is never reached:

    >>> detail = time_to_fraction_detail([[-1.0, 1.0], [1.0, -1.0]], [1.0, 0.0], 0, 0.25)
    >>> detail.time is None, detail.reason.split(",")[0]
    (True, 'species 0 levels off at 50 % of its start value (its long-time limit')
    """
    problem = Problem(K, c0, feed)
    i = inputs.species_index(i, problem.n)
    fraction = inputs.fraction(fraction, "fraction")
    return fraction_times(Survey.of(problem), [(i, fraction)])[0]


def time_to_fraction(K, c0, i: int, fraction: float, feed=None) -> float | None:
    r"""First time [s] with :math:`c_i(t) = \phi\,c_{0,i}`, or None when never.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    i : int
        Species index.
    fraction : float
        :math:`\phi` in (0, 1) [-].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    .. math::

        t_\phi = \min\{t > 0 : c_i(t) = \phi\, c_{0,i}\}

    Notes
    -----
    See :func:`time_to_fraction_detail` for the method and for the reason when None.

    References
    ----------
    Connors, K. A.; Amidon, G. L.; Stella, V. J. "Chemical Stability of Pharmaceuticals",
    2nd ed., Wiley (1986).

    Examples
    --------
    DT90 of first-order decay (10 % left), closed form t = ln 10 / k:

    >>> import math
    >>> t = time_to_fraction([[-0.1, 0.0], [0.1, 0.0]], [1.0, 0.0], 0, 0.1)
    >>> math.isclose(t, math.log(10) / 0.1, rel_tol=1e-12)
    True
    """
    return time_to_fraction_detail(K, c0, i, fraction, feed).time


def half_life_detail(K, c0, i: int, feed=None) -> FractionTime:
    r"""Half-life of species ``i`` with the reason when there is none.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    i : int
        Species index.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    .. math::

        c_i(t_{1/2}) = \tfrac12 c_{0,i}, \quad t_{1/2} \text{ the first such time}

    Notes
    -----
    For parallel first-order steps :math:`t_{1/2} = \ln 2/(k_1 + k_2)`.  A reversible step
    ``A <=> B`` gives None when the equilibrium fraction :math:`k_r/(k_f+k_r)` of A is at
    least one half.

    References
    ----------
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014).

    Examples
    --------
    First-order decay with k = 0.1 1/s, closed form t½ = ln 2 / k = 6.93 s:

    >>> detail = half_life_detail([[-0.1, 0.0], [0.1, 0.0]], [1.0, 0.0], 0)
    >>> round(detail.time, 10), detail.reason
    (6.9314718056, '')
    """
    return time_to_fraction_detail(K, c0, i, 0.5, feed)


def half_life(K, c0, i: int, feed=None) -> float | None:
    r"""Half-life [s] of species ``i`` (first time it falls to half its start), or None.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    i : int
        Species index.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    .. math::

        c_i(t_{1/2}) = \tfrac12 c_{0,i}

    Notes
    -----
    Root finding on the exact solution to 1e-13 relative; see :func:`half_life_detail`.

    References
    ----------
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014).

    Examples
    --------
    First-order decay A -> B with k = 0.1 1/s, closed form t½ = ln 2 / k:

    >>> import math
    >>> t = half_life([[-0.1, 0.0], [0.1, 0.0]], [1.0, 0.0], 0)
    >>> math.isclose(t, math.log(2) / 0.1, rel_tol=1e-13)
    True
    """
    return half_life_detail(K, c0, i, feed).time


def time_to_limit(K, c0, feed=None, tolerance: float = 0.01) -> TimeToLimit:
    r"""Time after which every species stays within ``tolerance`` of its limit.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    tolerance : float
        :math:`\epsilon` in (0, 1) [-], default 0.01 (1 %).

    Returns
    -------
    TimeToLimit

    .. math::

        t_i = \inf\{t : |c_i(s) - c_i(\infty)| \le \epsilon\, s_i \;\forall s \ge t\},
        \quad s_i = c_i(\infty) \text{ if } > 0 \text{ else } \max_j c_j(\infty),
        \qquad t_{lim} = \max_i t_i

    Notes
    -----
    For ``A -> B``: :math:`t = \ln(1/\epsilon)/k`.  For ``A <=> B`` from pure A:
    :math:`t = \ln(\max(1, k_f/k_r)/\epsilon)/(k_f + k_r)`.  When every limit is zero the
    largest start value is the scale.  A species that grows without bound has no time
    (nan); the others are timed all the same (the scale is then the largest finite limit),
    and the time for the whole scheme is None.

    References
    ----------
    IUPAC Gold Book, "relaxation time".

    Examples
    --------
    First-order decay: |c(t) - c(∞)| = e^(-kt) c(0), so the closed form for a tolerance of
    1 % is t = ln(100) / k:

    >>> import math
    >>> result = time_to_limit([[-0.1, 0.0], [0.1, 0.0]], [1.0, 0.0])
    >>> math.isclose(result.time, math.log(100) / 0.1, rel_tol=1e-12)
    True
    """
    tolerance = inputs.fraction(tolerance, "tolerance")
    return settling_times(Survey.of(Problem(K, c0, feed)), tolerance)
