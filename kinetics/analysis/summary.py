r"""Everything at once: per-species and whole-scheme quantities from one shared scan.

Also the yields of intermediates and the selectivity between end products.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from kinetics.analysis import inputs
from kinetics.analysis.areas import areas_to, residence_times
from kinetics.analysis.crossings import fraction_times, settling_times
from kinetics.analysis.problem import Problem
from kinetics.analysis.relaxation import lifetimes, relaxation_times
from kinetics.analysis.results import (
    FractionTime,
    Limit,
    SchemeSummary,
    SpeciesSummary,
    TimeToLimit,
    YieldsAndSelectivity,
)
from kinetics.analysis.structure import CRITICAL
from kinetics.analysis.survey import Survey
from kinetics.errors import SpeciesError
from kinetics.jsonready import finite_or_none

__all__ = [
    "BATCH_QUANTITIES",
    "summarise",
    "summarise_all",
    "yields_and_selectivity",
    "yields_of",
]

#: The per-species quantities a batched summary (a sweep) reports for every parameter
#: set, in the order of its table columns.
BATCH_QUANTITIES = ("half_life", "t_max", "c_max", "limit")


def yields_of(survey: Survey, basis: int | None) -> YieldsAndSelectivity:
    """Yields at the maxima and amounts of end products formed (module Definitions)."""
    p = survey.problem
    base = float(p.c0.sum()) if basis is None else float(p.c0[inputs.species_index(basis, p.n)])
    lim = survey.limits.limit
    y = np.full(p.n, np.nan)
    for i in range(p.n):
        if p.c0[i] == 0 and base > 0:
            for m in survey.maxima(i):
                if m.is_global:
                    y[i] = m.height / base
    st = p.struct
    products = tuple(
        i
        for i in range(p.n)
        if st.classes[st.labels[i]].kind == CRITICAL
        and lim.kind[i] in ("end product", "equilibrium", "unbounded")
    )
    idx = np.array(products, dtype=int)
    fw = sw = fl = sl = None
    if products and p.t_window is not None:
        cw = p.propagate(np.array([p.t_window]))[0]
        fw = cw[idx] - p.c0[idx]
        sw = fw / fw.sum() if fw.sum() > 0 else None
    if products and np.all(np.isfinite(lim.values[idx])):
        fl = lim.values[idx] - p.c0[idx]
        sl = fl / fl.sum() if fl.sum() > 0 else None
    return YieldsAndSelectivity(base, y, products, fw, fl, sw, sl)


def yields_and_selectivity(
    K, c0, feed=None, t_window: float | None = None, basis: int | None = None
) -> YieldsAndSelectivity:
    r"""Yield of each intermediate at its maximum and selectivity between end products.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    t_window : float, optional
        End of the time window [s] for the selectivity "at the end of the window".
    basis : int, optional
        Index of the starting material the yields refer to; default: all starting
        materials together.

    Returns
    -------
    YieldsAndSelectivity

    .. math::

        Y_i = \frac{c_{i,\max}}{\sum_j c_{0,j}}, \qquad
        S_{P/Q}(t) = \frac{c_P(t) - c_{0,P}}{c_Q(t) - c_{0,Q}}, \qquad
        s_P(t) = \frac{\Delta c_P(t)}{\sum_Q \Delta c_Q(t)}

    Notes
    -----
    Intermediates: species that start at zero and have a global maximum.  End products:
    formed species in classes without outlet.  Definitions differ between textbooks
    (some use the amount of starting material *consumed* as the basis of the yield); the
    ones here are stated in the module Definitions.  For parallel steps ``A -> B`` (k1),
    ``A -> C`` (k2), :math:`S_{B/C} = k_1/k_2` at every time.

    References
    ----------
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014), parallel and consecutive reactions.

    Examples
    --------
    Parallel steps A -> B (k1 = 0.2 1/s) and A -> C (k2 = 0.1 1/s): closed form yields
    k1/(k1 + k2) = 2/3 and k2/(k1 + k2) = 1/3:

    >>> result = yields_and_selectivity([[-0.3, 0, 0], [0.2, 0, 0], [0.1, 0, 0]], [1.0, 0, 0])
    >>> result.end_products, result.formed_in_limit.round(15).tolist()
    ((1, 2), [0.666666666666667, 0.333333333333333])
    """
    return yields_of(Survey.of(Problem(K, c0, feed, t_window=t_window)), basis)


@dataclass(frozen=True)
class _Shared:
    """The quantities of all species, computed together, that each summary picks from."""

    survey: Survey
    fractions: dict[tuple[int, float], FractionTime]
    settling: TimeToLimit
    residence: np.ndarray
    yields: YieldsAndSelectivity
    area_window: np.ndarray | None
    lifetimes: tuple[np.ndarray, np.ndarray]


def _species_summary(sh: _Shared, i: int) -> SpeciesSummary:
    p = sh.survey.problem
    name = p.names[i]
    lim, X = sh.survey.limits.limit, sh.survey.limits.areas
    tau, hl1 = sh.lifetimes
    maxima = tuple(sh.survey.maxima(i))
    glob = [m for m in maxima if m.is_global]
    notes = []
    hl = sh.fractions[(i, 0.5)]
    if hl.reason and p.c0[i] > 0:
        notes.append(hl.reason)
    if glob and glob[0].beyond_window:
        notes.append(f"the maximum of {name} lies beyond the chosen time window")
    if lim.unbounded[i]:
        notes.extend(sh.survey.limits.notes_of.get(i, ()))
    y = sh.yields.yield_at_max[i]
    return SpeciesSummary(
        name=name,
        start=float(p.c0[i]),
        lifetime=float(tau[i]),
        first_order_half_life=float(hl1[i]),
        half_life=hl.time,
        half_life_note=hl.reason,
        time_to_90_percent_remaining=sh.fractions[(i, 0.9)].time,
        time_to_10_percent_remaining=sh.fractions[(i, 0.1)].time,
        t_max=glob[0].time if glob else None,
        c_max=glob[0].height if glob else None,
        t_max_beyond_window=bool(glob and glob[0].beyond_window),
        yield_at_max=None if np.isnan(y) else float(y),
        maxima=maxima,
        limit=None if lim.unbounded[i] else float(lim.values[i]),
        limit_kind=lim.kind[i],
        unbounded=bool(lim.unbounded[i]),
        time_to_limit=finite_or_none(sh.settling.per_species[i]),
        area_to_window_end=None if sh.area_window is None else float(sh.area_window[i]),
        area_to_infinity=finite_or_none(X[i]),
        mean_residence_time=finite_or_none(sh.residence[i]),
        notes=tuple(notes),
    )


def _scheme_summary(
    p: Problem, ys: YieldsAndSelectivity, ttl: TimeToLimit, tolerance: float, lim: Limit
) -> SchemeSummary:
    rt = relaxation_times(p.K, names=p.names)
    prods = [p.names[i] for i in ys.end_products]

    def share(x):
        return None if x is None else {q: float(v) for q, v in zip(prods, x, strict=True)}

    return SchemeSummary(
        relaxation_times=tuple(float(x) for x in rt.times),
        oscillation_periods=tuple(float(x) for x in rt.periods),
        growth_times=tuple(float(x) for x in rt.growth_times),
        defective=rt.defective,
        nearly_defective=rt.nearly_defective,
        relaxation_note=rt.note,
        time_to_limit=ttl.time,
        time_to_limit_note=ttl.reason,
        tolerance=tolerance,
        end_products=tuple(prods),
        selectivity_at_window_end=share(ys.selectivity_at_window_end),
        selectivity_in_limit=share(ys.selectivity_in_limit),
        yield_basis=ys.basis,
        limit_notes=lim.notes,
        formed_at_window_end=share(ys.formed_at_window_end),
        formed_in_limit=share(ys.formed_in_limit),
    )


def summarise(
    K,
    c0,
    species: Sequence[str],
    feed=None,
    t_window: float | None = None,
    tolerance: float = 0.01,
    *,
    K_low=None,
) -> dict[str, SpeciesSummary]:
    r"""All derived quantities per species, ready for a table or JSON.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    species : sequence of str
        Species names, in the order of the rows of ``K``.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    t_window : float, optional
        End of the chosen time window [s] (for flags and the windowed area).
    tolerance : float
        Tolerance of the time to the limit [-], default 0.01.
    K_low : array_like or sparse, optional
        Low-order parts of ``K`` (the exact matrix is ``K + K_low``; see
        :func:`kinetics.ratematrix.rate_matrix_pair`).

    Returns
    -------
    dict of str to SpeciesSummary
        ``half_life``, ``t_max``, ``c_max``, ``limit`` and the other quantities of the
        module Definitions; None where not applicable.

    .. math::

        c_i(t_{1/2}) = \tfrac12 c_{0,i}, \quad (Kc + f)_i(t_{max}) = 0, \quad
        c(\infty) = \lim_{t\to\infty} c(t)

    Notes
    -----
    One shared scan and batched root finding serve all species (a few dozen engine calls
    in all).  ``t_max``/``c_max`` are those of the global interior maximum (None for a
    species whose largest value is its start or its limit).

    References
    ----------
    See the module docstring.

    Examples
    --------
    The intermediate of A -> B -> C with k1 = 0.1 and k2 = 0.05 1/s: closed forms
    τ_B = 1/k2, t_max = ln(k2/k1)/(k2 - k1) = 13.86 s, c_max = 0.5 and ∫ c_B dt = 1/k2:

    >>> K = [[-0.1, 0, 0], [0.1, -0.05, 0], [0, 0.05, 0]]
    >>> b = summarise(K, [1.0, 0, 0], ["A", "B", "C"])["B"]
    >>> b.lifetime, round(b.t_max, 10), round(b.c_max, 13), round(b.area_to_infinity, 12)
    (20.0, 13.8629436112, 0.5, 20.0)
    """
    return summarise_all(K, c0, species, feed, t_window, tolerance, K_low=K_low)[0]


def summarise_all(
    K,
    c0,
    species: Sequence[str],
    feed=None,
    t_window: float | None = None,
    tolerance: float = 0.01,
    *,
    K_low=None,
) -> tuple[dict[str, SpeciesSummary], SchemeSummary]:
    r"""Per-species summaries and the scheme-wide quantities, from one shared scan.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    species : sequence of str
        Species names, in the order of the rows of ``K``.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    t_window : float, optional
        End of the chosen time window [s].
    tolerance : float
        Tolerance of the time to the limit [-], default 0.01.
    K_low : array_like or sparse, optional
        Low-order parts of ``K`` (see :func:`summarise`).

    Returns
    -------
    (dict of str to SpeciesSummary, SchemeSummary)

    .. math::

        t_{lim} = \max_i t_i, \qquad \tau_k = 1/|\operatorname{Re}\lambda_k|, \qquad
        s_P = \Delta c_P / \sum_Q \Delta c_Q

    Notes
    -----
    Same definitions as :func:`summarise`, :func:`relaxation_times`,
    :func:`time_to_limit` and :func:`yields_and_selectivity`.

    References
    ----------
    See the module docstring.

    Examples
    --------
    A -> B -> C with k1 = 0.1 and k2 = 0.05 1/s: the relaxation times are the closed forms
    1/k2 and 1/k1, and all of A ends in C:

    >>> K = [[-0.1, 0, 0], [0.1, -0.05, 0], [0, 0.05, 0]]
    >>> species, scheme = summarise_all(K, [1.0, 0, 0], ["A", "B", "C"])
    >>> scheme.relaxation_times, scheme.end_products, scheme.formed_in_limit
    ((20.0, 10.0), ('C',), {'C': 1.0})
    """
    names = list(species)
    problem = Problem(K, c0, feed, names=names, t_window=t_window, K_low=K_low)
    tolerance = inputs.fraction(tolerance, "tolerance")
    if len(set(names)) != problem.n:
        raise SpeciesError("species names are not unique", "give each species its own name")
    survey = Survey.of(problem)
    reqs = [(i, phi) for i in range(problem.n) for phi in (0.5, 0.9, 0.1)]
    fractions = {(r.species, r.fraction): r for r in fraction_times(survey, reqs)}
    settling = settling_times(survey, tolerance)
    ys = yields_of(survey, None)
    shared = _Shared(
        survey,
        fractions,
        settling,
        residence_times(problem, survey.limits),
        ys,
        None if problem.t_window is None else areas_to(problem, np.array([problem.t_window]))[0],
        lifetimes(problem.K),
    )
    out = {name: _species_summary(shared, i) for i, name in enumerate(names)}
    return out, _scheme_summary(problem, ys, settling, tolerance, survey.limits.limit)
