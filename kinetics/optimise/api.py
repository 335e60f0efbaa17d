"""``kinetics.optimise``: the best settings of a scheme under its requirements.

Also how flat the optimum is, and the target over the settings for a figure.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from ..engine import checks
from ..errors import (
    ActivityError,
    ConcentrationError,
    SettingError,
    SpeciesError,
    TimesError,
)
from ..solution import require_scheme
from .local import refine
from .model import SENSES, Goal, Model
from .result import FLAT_SHARE, Optimum
from .search import (
    FEASIBLE_TOL,
    best_of,
    choose_starts,
    grid_candidates,
    margin_scales,
    violation,
)
from .settings import Setting, parse_over
from .words import API_WORDS, Words

if TYPE_CHECKING:
    from ..scheme import Scheme

__all__ = ["ACTIVE_TOL", "STARTS", "flat_ranges", "landscape", "optimise"]

#: A requirement whose margin is within this fraction of its level is active.
ACTIVE_TOL = 1e-6
#: Local searches started from the best distinct grid points.
STARTS = 3
#: Samples from the optimum to each bound when the flat range is bracketed.
_FLAT_SAMPLES = 12


def _settings(scheme: Scheme, over, words: Words) -> list[Setting]:
    items = [over] if isinstance(over, str | Setting) else list(over)
    out = [s if isinstance(s, Setting) else parse_over(scheme, s, words) for s in items]
    names = [s.name for s in out]
    for name in names:
        if names.count(name) > 1:
            raise SettingError(f"{words.over} names {name} twice", "give each setting once")
    return out


def _goal(scheme, species, sense, best_time, until, yield_basis, settings, time_unit, words,
          activity=None):  # fmt: skip
    if sense not in SENSES:
        raise SettingError(f"sense {sense!r} is not known", "use 'maximise' or 'minimise'")
    if species not in scheme.index:
        raise SpeciesError(
            f"{words.target}{species!r} is not a species of the scheme that changes",
            "species: " + ", ".join(scheme.species_names),
        )
    if not settings and not best_time:
        raise SettingError("nothing to optimise: no setting is given", words.first_setting)
    timed = any(s.kind == "time" for s in settings)
    if best_time and timed:
        raise SettingError(
            f"{words.best_time} finds the best time itself, so {words.time_entry} is not needed",
            words.at_end_hint,
        )
    if until is None and not timed:
        what = "the latest time to consider" if best_time else "the end time"
        raise TimesError(f"no time given: {what} is needed", words.until_hint)
    if until is not None:
        _check_until(until, words)
    if yield_basis and not scheme.initial_vector.sum() > 0:
        raise ConcentrationError(
            f"{words.yield_basis} needs start values", "give the starting materials start values"
        )
    if activity is not None:
        _check_activity(scheme, species, yield_basis, words)
    return Goal(species, sense, best_time, until, yield_basis, time_unit, activity)


def _check_activity(scheme, species, yield_basis, words: Words) -> None:
    """Refuse an activity target that cannot be optimised.

    That is one together with a yield, or one of a species that no step consumes (its
    activity is 0).
    """
    if yield_basis:
        raise SettingError(
            f"{words.yield_basis} and {words.activity} ask for two targets",
            "optimise the yield or the activity",
        )
    if not any(step.reactant == species for step in scheme.steps):
        raise ActivityError(
            f"{species} does not decay: its activity is 0 at every setting",
            "optimise its amount instead, or the activity of a species that decays",
        )


def _check_until(until, words: Words) -> None:
    """Refuse an end time that is not a positive finite number of seconds."""
    checks.end_time(until, words.until, words.until_example)


def _requirement_rows(model: Model, point) -> tuple[dict, ...]:
    rows = []
    scales = margin_scales(model, point.thresholds)
    for k, req in enumerate(model.requirements):
        level, scale = float(point.thresholds[k]), float(scales[k])
        margin = float(point.margins[k])
        rows.append(
            {
                "text": req.text,
                "value": float(level + model.senses[k] * margin),
                "threshold": level,
                "margin": margin,
                "active": bool(abs(margin) <= ACTIVE_TOL * scale),
            }
        )
    return tuple(rows)


def _inside(model: Model, best: float, x: np.ndarray) -> float:
    """The smaller of the scaled gaps of the target and of the requirements.

    It is >= 0 where the target is within FLAT_SHARE of ``best`` and every requirement
    holds.
    """
    p = model.point(x)
    gap = model.goal.sign * (p.objective - best) + FLAT_SHARE * abs(best)
    q = gap / max(abs(best), 1e-300)
    if p.margins.size:
        q = min(q, float(np.min(p.margins / margin_scales(model, p.thresholds))) + FEASIBLE_TOL)
    return float(q)


def _edge(model: Model, best: float, x: np.ndarray, j: int, bound: float) -> float:
    """How far setting ``j`` goes from ``x[j]`` towards ``bound`` staying inside."""
    from scipy.optimize import brentq

    def q(v):
        y = np.array(x, dtype=float)
        y[j] = v
        return _inside(model, best, y)

    prev, q_prev = float(x[j]), q(float(x[j]))
    for v in np.linspace(x[j], bound, _FLAT_SAMPLES + 1)[1:]:
        q_v = q(v)
        if q_v < 0:
            if q_prev < 0:  # the optimum itself is at the edge (an active requirement)
                return prev
            return float(brentq(q, prev, v, xtol=1e-12 * max(abs(v), 1e-300), rtol=1e-12))
        prev, q_prev = float(v), q_v
    return float(bound)


def flat_ranges(model: Model, x, objective: float) -> tuple[tuple[float, float], ...]:
    """Per setting the range around ``x`` (the others held) over which the optimum is flat.

    In that range [internal units] the target stays within
    :data:`~kinetics.optimise.result.FLAT_SHARE` of ``objective`` and every requirement
    holds; the roots are refined by Brent's method on exact values.
    """
    x = np.asarray(x, dtype=float)
    return tuple(
        (
            _edge(model, objective, x, j, model.lower[j]),
            _edge(model, objective, x, j, model.upper[j]),
        )
        for j in range(x.size)
    )


def optimise(
    scheme: Scheme,
    species: str,
    over: str | Sequence[str | Setting],
    *,
    sense: str = "maximise",
    best_time: bool = False,
    until: float | None = None,
    yield_basis: bool = False,
    starts: int = STARTS,
    time_unit: str = "s",
    words: Words = API_WORDS,
    sensitivity: bool = False,
    activity: str | None = None,
) -> Optimum:
    r"""The best settings for a target species under every ``require`` line of the scheme.

    Parameters
    ----------
    scheme : Scheme
    species : str
        The target species.
    over : str or sequence of str or Setting
        The settings and their bounds, ``NAME=LO:HI:UNIT`` (``temperature=20:80:degC``,
        ``time=0:10:h``, a named quantity, a constant, ``start:A``, ``excess:W``; see
        :func:`kinetics.optimise.settings.parse_over`).
    sense : {"maximise", "minimise"}
    best_time : bool
        Read the target at its best time in ``[0, until]`` (found with the settings)
        instead of at the end time.
    until : float, optional
        [s] the end time (without a ``time`` setting), or the latest time with
        ``best_time``.
    yield_basis : bool
        Optimise the yield :math:`c_B / \sum_j c_{0,j}` instead of the concentration.
    starts : int
        Local searches from the best distinct grid points.
    time_unit : str
        The unit the best time is reported in (with ``best_time``).
    words : Words
        How messages name the arguments: :data:`~kinetics.optimise.words.API_WORDS`
        (``over``, ``until``), or ``CLI_WORDS`` (``--over``, ``--until``) for the command
        line.
    activity : str, optional
        A unit of activity (``MBq``, ``mCi``): optimise the activity :math:`A = \lambda N`
        of the species (:mod:`kinetics.activity`) in that unit instead of its
        concentration.
    sensitivity : bool
        Also compute the exact normalised sensitivities of the optimum to the parameters
        of the scheme (:func:`kinetics.optimise.sensitivity.optimum_sensitivities`).

    Returns
    -------
    Optimum

    Raises
    ------
    kinetics.errors.SettingError
        For an ``over`` entry that cannot be read or names nothing the scheme has, a
        setting given twice, none at all, a time entry with ``best_time``, or an unknown
        ``sense``.
    kinetics.errors.TimesError
        For a time range without a unit of time, no end time, or an ``until`` that is not
        a positive number of seconds.
    kinetics.errors.SpeciesError
        For a target that is not a species of the scheme that changes.
    kinetics.errors.ConcentrationError
        For a yield of a scheme without start values.
    kinetics.errors.ActivityError
        For an activity unit that does not fit the scheme, or a species that does not
        decay.
    kinetics.errors.WorkingRangeError
        For a scheme of more species than the search solves.

    .. math::

        \max_{x \in [l, u]} \pm c_B(t; x) \quad \text{subject to} \quad
        \pm(c_i(t; x) - L_i(x)) \ge 0 \text{ for every requirement}

    Notes
    -----
    A coarse grid, then SLSQP with exact gradients (:mod:`kinetics.optimise.search`,
    :mod:`kinetics.optimise.model`).  Requirements are read at the time the target is
    read (the composition when the batch is stopped).  The flat range of each setting is
    where the target stays within 1 % of the best with the others held.

    References
    ----------
    D. Kraft, DFVLR-FB 88-28 (1988) (SLSQP); A. H. Al-Mohy, N. J. Higham, SIAM J. Matrix
    Anal. Appl. 30, 1639-1657 (2009) (Fréchet derivative).

    Examples
    --------
    For A -> B -> C the best quench time is t = ln(k1/k2)/(k1 - k2) (Atkins & de Paula,
    consecutive reactions):

    >>> import math, kinetics
    >>> s = kinetics.parse("A -> B  k1 = 0.3 1/s\nB -> C  k2 = 0.1 1/s\nstart A = 1 mol/L")
    >>> best = optimise(s, "B", "time=0:30:s")
    >>> round(best.best["time"] / (math.log(3) / 0.2), 8)
    1.0
    """
    scheme = require_scheme(scheme, "optimise")
    settings = _settings(scheme, over, words)
    goal = _goal(
        scheme, species, sense, best_time, until, yield_basis, settings, time_unit, words,
        activity,
    )  # fmt: skip
    model = Model(scheme, settings, goal)
    grid = grid_candidates(model)
    counts = {"grid": model.evaluations}
    chosen = choose_starts(model, grid, max(1, int(starts)))
    found: list = []
    for c in chosen:
        found.append(refine(model, c, found))
    best = best_of(model, [*found, *chosen])
    counts["local"] = model.evaluations - counts["grid"]
    counts["with_gradient"] = model.gradients
    counts["starts"] = len(chosen)
    point = model.point(best.x)
    feasible = violation(model, point) == 0
    notes = []
    if not feasible:
        notes.append(
            "no setting within the bounds meets every requirement; the settings shown come "
            "closest (the smallest shortfall)"
        )
    before = model.evaluations
    flat = (
        flat_ranges(model, best.x, point.objective)
        if feasible
        else tuple((float(v), float(v)) for v in best.x)
    )
    counts["flatness"] = model.evaluations - before
    unit = "-" if goal.yield_basis else goal.activity or scheme.concentration_unit
    rows = _requirement_rows(model, point)
    optimum = Optimum(
        model.settings, goal, best.x, point.objective, unit, feasible, rows, flat, counts,
        tuple(notes),
    )  # fmt: skip
    if not (sensitivity and feasible):
        return optimum
    from dataclasses import replace

    from .sensitivity import optimum_sensitivities

    return replace(optimum, sensitivity=optimum_sensitivities(optimum, scheme))


def landscape(optimum: Optimum, scheme: Scheme, points: int = 41):
    """The target and the requirement margins over the first one or two settings.

    The other settings are held at the optimum (for a figure).

    Returns
    -------
    axes : list of ndarray
        Values of each plotted setting [its unit].
    target : ndarray
        Shape (points,) or (points, points) [the target's unit].
    margin : ndarray
        Same shape: the smallest margin of the requirements, each divided by its level
        (>= 0 where all hold; ``inf`` without requirements).
    """
    model = Model(scheme, [s for s in optimum.settings if not _generated(s, optimum)], optimum.goal)
    shown = list(range(min(2, len(model.settings))))
    axes = [np.linspace(model.lower[j], model.upper[j], points) for j in shown]
    time_at = model.time_at if model.time_at in shown else None  # None: the time not plotted
    timed = time_at is not None
    outer = [j for j in shown if j != time_at]
    shape = tuple(a.size for a in axes)
    target = np.empty(shape)
    margin = np.full(shape, np.inf)
    for index in np.ndindex(*(axes[shown.index(j)].size for j in outer)):
        x = np.array(optimum.x, dtype=float)
        for j, k in zip(outer, index, strict=True):
            x[j] = axes[shown.index(j)][k]
        times = axes[shown.index(time_at)] if time_at is not None else [model.end_time(x)]
        values, margins, here = model.values(x, times)
        levels = margin_scales(model, np.array([r.threshold for r in here.requirements]))
        where: list = list(index)
        if time_at is not None:
            where.insert(shown.index(time_at), slice(None))
        target[tuple(where)] = values if timed else values[0]
        if levels.size:
            low = np.min(margins / levels, axis=1)
            margin[tuple(where)] = low if timed else low[0]
    return [model.settings[j].shown(a) for j, a in zip(shown, axes, strict=True)], target, margin


def _generated(setting: Setting, optimum: Optimum) -> bool:
    """The time setting a best-time search adds itself (the model adds it again)."""
    return optimum.goal.best_time and setting.kind == "time" and setting is optimum.settings[-1]
