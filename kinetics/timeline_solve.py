r"""Exact solution of a scheme under a timeline of operations.

Between two operations the scheme is linear with constant coefficients, so each
stretch :math:`[a, b]` is propagated exactly by the entrywise engine
(:class:`kinetics.propagate.StretchPropagator`):

.. math:: c(t) = e^{(t - a)K} c(a^+) + \int_0^{t - a} e^{uK}\,\mathrm{d}u\, f,
          \qquad a \le t \le b,

and at each operation time the concentrations jump by a nonnegative map: an addition
:math:`c \mapsto c + a`, a removal :math:`c_i \mapsto (1 - p)\,c_i` (the amount
:math:`p\,c_i` recorded).  A time step changes :math:`K` (Arrhenius constants at the new
temperature), a feed window changes :math:`f`.

**Error bound.**  Every map is nonnegative, so a start vector within relative error
:math:`\epsilon` of the exact one gives a result within :math:`\epsilon` too; the bounds
of the stretches and of the roundings at the operations compose as
:math:`(1 + \epsilon_1)(1 + \epsilon_2) - 1`.  ``error_bound`` covers everything between
the exact inputs (the scheme's constants, the start values, the amounts, the fractions
and the times as given) and the returned doubles, for every concentration above 1e-290.

**Ramps.**  Under a linear temperature ramp :math:`K(t)` changes continuously.  The ramp
is cut into sub-steps (also at output times and operations inside it).  A sub-step
:math:`[a, a + h]` is two half-stretches of length :math:`h/2` with constant, essentially
nonnegative matrices: with the moments :math:`m_0 = \int k\,\mathrm{d}t` and
:math:`m_1 = \int (\tfrac{t - a}{h} - \tfrac12)\, k\,\mathrm{d}t` of each Arrhenius
constant, the first half uses :math:`(m_0 - 4 m_1)/h`, the second :math:`(m_0 + 4m_1)/h`.
This is the commutator-free fourth-order Magnus-type scheme (the exponents sum to
:math:`\int K`, their commutator gives the second Magnus term); it is exact when the
:math:`K(t)` commute, e.g. for a single temperature-dependent step.  The whole timeline is
solved with :math:`N`, :math:`2N`, :math:`4N`, ... sub-steps until the entrywise relative
difference of the two finest solutions is within ``ramp_rtol`` and shrinks at least
twofold per halving (about sixteenfold for this scheme, so the difference is several
times the error of the finer solution).  ``ramp_estimate`` at a row is the largest such
difference up to that row (a difference can pass through zero while the error does not).
It is an estimate, checked against a stiff integrator in the tests and reported beside
the certified ``error_bound``; it may not be below the true error.

References
----------
W. Magnus, "On the exponential solution of differential equations for a linear
operator", Comm. Pure Appl. Math. 7, 649-673 (1954). doi:10.1002/cpa.3160070404
S. Blanes, F. Casas, J. A. Oteo, J. Ros, "The Magnus expansion and some of its
applications", Phys. Rep. 470, 151-238 (2009). doi:10.1016/j.physrep.2008.11.001
S. Blanes, P. C. Moan, "Fourth- and sixth-order commutator-free Magnus integrators for
linear and non-linear dynamical systems", Appl. Numer. Math. 56, 1519-1537 (2006).
J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013) (the entrywise engine).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from . import _doubledouble as dd
from .collector import collector_paused
from .engine import TINY, Precision, StretchPropagator
from .engine.chain_kernels import chain
from .engine.checks import time_list
from .engine.kernels import loaded
from .engine.plan import compose
from .errors import SettingError, shown_value
from .timeline import Plan, Timeline, expand
from .timeline_chain import Chain

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = ["Event", "Stretch", "TimelineSolution", "solve_timeline"]

#: Sub-steps of all ramps together beyond which refinement stops (with a note).
MAX_RAMP_SUBSTEPS = 4096
#: Gauss-Legendre nodes and weights on [-1, 1] for the moments of a ramp sub-step: with
#: ln k changing by at most 1/2 per panel, the relative error is below 1e-16.
_NODES = np.polynomial.legendre.leggauss(6)


@dataclass(frozen=True, slots=True)
class Event:
    """One recorded operation.

    Attributes
    ----------
    time : float
        [s].
    action : str
        ``"add"``, ``"remove"``, ``"temperature"``, ``"feed on"`` or ``"feed off"``.
    species : str or None
        The species concerned (None for a temperature).
    change : float
        Signed concentration moved [concentration_unit]: the amount added, minus the
        amount removed (the eluate), 0 for temperatures and feeds.  In a run with
        volumes, an addition's change is its rise after mixing (the dilution of what was
        there is not counted); an addition of solvent alone has species None.
    value : float or None
        New temperature [K] (``"temperature"``) or feed rate [concentration_unit/s]
        (``"feed on"``, ``"feed off"``).
    error_bound : float
        Relative bound of ``change`` (certified, as ``error_bound`` of the solution).
    ramp_estimate : float
        Relative estimate of the ramp sub-stepping error in ``change`` (0 without ramps).
    statement : int
        Index of the timeline statement it comes from (-1 for a temperature record).
    volume : float or None
        Volume of the run just after an addition or removal [m^3] (None in a run
        without volumes, and for temperatures and feeds).
    """

    time: float
    action: str
    species: str | None
    change: float
    value: float | None = None
    error_bound: float = 0.0
    ramp_estimate: float = 0.0
    statement: int = -1
    volume: float | None = None


@dataclass(frozen=True)
class TimelineSolution:
    """Concentrations under a timeline, with the operations recorded.

    Attributes
    ----------
    times : numpy.ndarray
        [s], shape ``(m,)``, nondecreasing; a time of an addition or removal appears
        twice: just before and just after the operations at that time.
    after : numpy.ndarray of bool
        Shape ``(m,)``: True for the row just after operations.
    species : list of str
        Matrix order.
    concentrations : numpy.ndarray
        [concentration_unit], shape ``(m, n)``, all >= 0.
    error_bound : numpy.ndarray
        Shape ``(m,)``: certified relative bound of every entry above 1e-290 of the
        row, against the exact piecewise solution (see the module docstring).
    ramp_estimate : numpy.ndarray
        Shape ``(m,)``: estimated relative error of the ramp sub-steps (0 before the
        first ramp and without ramps).
    temperatures : numpy.ndarray or None
        Shape ``(m,)``: the temperature in force [K] (None for a scheme without
        temperature and a timeline without temperature operations).
    events : tuple of Event
        Every applied operation in time order.
    notes : tuple of str
        Operations not applied (after the window) or without effect, unconverged ramps.
    concentration_unit : str
    ramp_substeps : int
        Sub-steps of all ramps in the returned solution (0 without ramps).
    stretches : tuple of Stretch
        The stretches of constant conditions the window was solved in, in time order
        (for the summary quantities of the run).
    """

    times: np.ndarray
    after: np.ndarray
    species: list[str]
    concentrations: np.ndarray
    error_bound: np.ndarray
    ramp_estimate: np.ndarray
    temperatures: np.ndarray | None
    events: tuple[Event, ...]
    notes: tuple[str, ...]
    concentration_unit: str
    ramp_substeps: int = 0
    stretches: tuple[Stretch, ...] = ()

    def __getitem__(self, name: str) -> np.ndarray:
        """The curve of one species [concentration_unit]."""
        return self.concentrations[:, self.species.index(name)]

    def removed(self, species: str) -> tuple[np.ndarray, np.ndarray]:
        """Times [s] and amounts [concentration_unit] of every removal of ``species``."""
        picked = [e for e in self.events if e.action == "remove" and e.species == species]
        return np.array([e.time for e in picked]), np.array([-e.change for e in picked])


# --------------------------------------------------------------------------
# conditions of a stretch: temperature and feed
# --------------------------------------------------------------------------


class _Conditions:
    """Rate matrices, feeds and propagators of the stretches, each built once."""

    def __init__(self, scheme: Scheme, plan: Plan, precision: Precision) -> None:
        self.scheme = scheme
        self.plan = plan
        self.precision = precision
        self.arrhenius = {
            name: c.arrhenius for name, c in scheme.constants.items() if c.arrhenius is not None
        }
        self._propagators: dict[tuple, StretchPropagator] = {}
        self._matrices: dict[tuple, tuple] = {}
        self._moments: dict[tuple, dict] = {}

    def propagator(self, key: tuple) -> StretchPropagator:
        """The propagator of a stretch with ``key = (temperature key, feed key)``."""
        found = self._propagators.get(key)
        if found is None:
            Kh, Kl = self._matrix(key[0])
            feed, feed_low = self._feed(key[1])
            found = StretchPropagator(
                Kh, feed, precision=self.precision, K_low=Kl, feed_low=feed_low
            )
            if key[0][0] == "T":  # ramp sub-steps are used once per level
                self._propagators[key] = found
        return found

    def _matrix(self, key: tuple):
        if not self.arrhenius or key == ("T", None):
            return self.scheme.rate_matrix_pair()
        if key not in self._matrices:
            if key[0] == "T":
                values = self.scheme.with_values(temperature=key[1])
            else:
                _, ramp, a, b, half = key
                values = self.scheme.with_values(constants=self._combined(ramp, a, b, half))
            self._matrices[key] = values.rate_matrix_pair()
        return self._matrices[key]

    def _combined(self, ramp: int, a: float, b: float, half: int) -> dict[str, float]:
        r"""Arrhenius constants of one half of a fourth-order ramp sub-step ``[a, b]`` [SI].

        With the moments :math:`m_0 = \int_a^b k\,\mathrm{d}t` and
        :math:`m_1 = \int_a^b (\tfrac{t - a}{h} - \tfrac12) k\,\mathrm{d}t` of each
        constant, the first half (length :math:`h/2`) uses :math:`(m_0 - 4 m_1)/h` and
        the second :math:`(m_0 + 4 m_1)/h`: the exponents sum to :math:`\int K`, and
        their commutator gives the second Magnus term to fourth order (the
        commutator-free form of Blanes & Moan 2006 with exact moments).  Both are >= 0
        while :math:`\ln k` changes by less than 3 over the sub-step.
        """
        key = (ramp, a, b)
        if key not in self._moments:
            self._moments = {key: self._ramp_moments(ramp, a, b)}  # the two halves share
        h = b - a
        out = {}
        for name, (m0, m1) in self._moments[key].items():
            k = (m0 - 4.0 * m1) / h if half == 0 else (m0 + 4.0 * m1) / h
            if not k >= 0.0:  # sub-steps keep the change of ln k below 1/4 (_first_substeps)
                raise ArithmeticError(f"ramp sub-step too long for {name} ({a} s to {b} s)")
            out[name] = k
        return out

    def _ramp_moments(self, ramp: int, a: float, b: float) -> dict[str, tuple[float, float]]:
        """Moments m0, m1 of every Arrhenius constant over ``[a, b]``.

        By Gauss-Legendre on panels over which ln k changes by at most 1/2.
        """
        from .units import GAS_CONSTANT

        r = self.plan.ramps[ramp]
        slope = (r.final - r.initial) / (r.end - r.start)
        Ta, Tb = r.initial + slope * (a - r.start), r.initial + slope * (b - r.start)
        spread = max(abs(law.activation_energy) for law in self.arrhenius.values()) / GAS_CONSTANT
        panels = max(1, math.ceil(2.0 * spread * abs(1.0 / Ta - 1.0 / Tb)))
        x, w = _NODES
        edges = np.linspace(a, b, panels + 1)
        mid, half = (edges[1:] + edges[:-1]) / 2, (edges[1:] - edges[:-1]) / 2
        nodes = (mid[:, None] + half[:, None] * x[None, :]).ravel()
        weights = (half[:, None] * w[None, :]).ravel()
        lever = (nodes - a) / (b - a) - 0.5
        temperatures = (r.initial + slope * (nodes - r.start)).tolist()
        out = {}
        for name, law in self.arrhenius.items():
            k = np.array([law.at(T) for T in temperatures])
            out[name] = (float(weights @ k), float((weights * lever) @ k))
        return out

    def _feed(self, active: tuple[int, ...]):
        """The feed in force as a double-double pair (None without feed)."""
        base = self.scheme.feed_vector
        if not active:
            return (base, None) if self.scheme.feed else (None, None)
        hi, lo = base.copy(), np.zeros_like(base)
        index = self.scheme.index
        for k in active:
            window, _ = self.plan.feeds[k]
            add = np.zeros_like(base)
            for name, rate in window.rates:
                add[index[name]] += rate
            hi, err = dd.two_sum(hi, add)
            lo = lo + err
        return hi, lo


# --------------------------------------------------------------------------
# stretches
# --------------------------------------------------------------------------


def _temperature_regions(scheme: Scheme, plan: Plan) -> list[tuple[float, object]]:
    """``(from time, regime)`` in time order.

    The regime is a temperature [K] (None: the scheme's) or the index of a ramp.
    """
    # at one time: a ramp's end, then a step (which overrides it), then a ramp's start
    changes: list[tuple[float, int, object]] = [(0.0, -1, None)]
    changes += [(t, 1, T) for t, T, _ in plan.steps]
    for i, r in enumerate(plan.ramps):
        changes += [(r.start, 2, ("ramp", i)), (r.end, 0, r.final)]
    changes.sort(key=lambda c: (c[0], c[1]))
    return [(t, regime) for t, _, regime in changes]


def _pieces(scheme: Scheme, plan: Plan, level: list[int], times: np.ndarray):
    """Stretches ``(start, end, key)`` covering ``[0, end]``.

    ``level[i]`` is the number of sub-steps of ramp ``i``; the output times inside a ramp
    also end sub-steps, and each sub-step is two half-stretches (see :meth:`_Conditions._combined`).
    """
    edges = set(plan.breakpoints())
    for i, r in enumerate(plan.ramps):
        N = level[i]
        span = Fraction(r.end) - Fraction(r.start)
        edges.update(float(Fraction(r.start) + k * span / N) for k in range(1, N))
        edges.update(t for t in times.tolist() if r.start < t < r.end)
    cuts = sorted(t for t in edges | {0.0, plan.end} if t <= plan.end)
    regions = _temperature_regions(scheme, plan)
    region_starts = np.array([t for t, _ in regions])
    feeds = [(w.start, w.end) for w, _ in plan.feeds]
    found = np.searchsorted(region_starts, cuts[:-1], side="right") - 1
    pieces: list[tuple[float, float, tuple]] = []
    for (a, b), r in zip(itertools.pairwise(cuts), found.tolist(), strict=True):
        regime = regions[r][1]
        active = tuple(k for k, (s, e) in enumerate(feeds) if s <= a and b <= e) if feeds else ()
        if isinstance(regime, tuple):
            m = a + (b - a) / 2
            pieces.append((a, m, (("ramp", regime[1], a, b, 0), active)))
            pieces.append((m, b, (("ramp", regime[1], a, b, 1), active)))
        else:
            pieces.append((a, b, (("T", regime), active)))
    return pieces


# --------------------------------------------------------------------------
# the grid
# --------------------------------------------------------------------------


def _rows(times: np.ndarray, chain: Chain):
    """Rows of the output: each time once, a jump time twice (before, after).

    Returns the times of the rows, whether each is just after operations, and each
    row's source: 0 a time of the grid, 1 just before operations, 2 just after.
    """
    twice = np.isin(times, np.array(list(chain.jumps), dtype=float))
    repeats = np.where(twice, 2, 1)
    first = np.cumsum(repeats) - repeats
    source = np.zeros(int(repeats.sum()), dtype=np.int64)
    source[first[twice]] = 1
    source[first[twice] + 1] = 2
    return np.repeat(times, repeats), source == 2, source


def _evaluate(times: np.ndarray, source: np.ndarray, chain: Chain, conditions: _Conditions):
    """Concentrations and bounds of every row.

    Rows at operations and at stretch ends come from the chain.  The other rows of a
    stretch are reached one after the other (the first from the stretch start, each next
    one from the previous row: a uniform grid needs one or two exponentials per stretch
    kind); rows of one depth are batched across stretches of one kind.
    """
    m, n = times.size, chain.start.shape[1]
    conc = np.empty((m, n))
    bound = np.zeros(m)
    for row in np.flatnonzero(source).tolist():
        before, eb, after, ea = chain.jumps[float(times[row])]
        conc[row], bound[row] = (before, eb) if source[row] == 1 else (after, ea)
    grid = source == 0
    ends = np.array([b for _, b, _ in chain.pieces])
    if not ends.size:
        conc[grid], bound[grid] = chain.scheme.initial_vector, 0.0
        return conc, bound
    starts = np.array([a for a, _, _ in chain.pieces])
    piece = np.searchsorted(ends, times, side="left")
    at_zero = grid & (times == 0.0)
    conc[at_zero], bound[at_zero] = chain.start[0], chain.start_bound[0]
    grid &= ~at_zero
    at_end = grid & (times == ends[np.minimum(piece, ends.size - 1)])
    conc[at_end], bound[at_end] = chain.end[piece[at_end]], chain.end_bound[piece[at_end]]
    rows = np.flatnonzero(grid & ~at_end)  # inside a stretch, in time order
    j = piece[rows]
    first = np.r_[True, j[1:] != j[:-1]]
    depth = np.arange(rows.size) - np.maximum.accumulate(np.where(first, np.arange(rows.size), 0))
    kinds = chain.kinds[j]
    for d in range(int(depth.max(initial=-1)) + 1):
        level = depth == d
        for kind in np.unique(kinds[level]).tolist():
            k = np.flatnonzero(level & (kinds == kind))
            if d == 0:
                x, e, a = chain.start[j[k]], chain.start_bound[j[k]], starts[j[k]]
            else:
                x, e, a = conc[rows[k - 1]], bound[rows[k - 1]], times[rows[k - 1]]
            h, low = dd.two_sum(times[rows[k]], -a)
            propagator = conditions.propagator(chain.keys[kind])
            if d > 0 and k.size == 1:  # one row after the previous: the cheap single step
                state, eps = propagator.step(x[0], float(h[0]), float(low[0]))
                conc[rows[k[0]]], bound[rows[k[0]]] = state, compose(float(e[0]), eps)
                continue
            r = propagator.advance(x, h, low, remember=d > 0)
            conc[rows[k]] = r.concentrations
            bound[rows[k]] = compose(e, r.error_bound)
    return conc, bound


def _relative_difference(fine: np.ndarray, coarse: np.ndarray) -> np.ndarray:
    """Largest entrywise relative difference per row (entries above 1e-290)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        d = np.where(fine > TINY, np.abs(fine - coarse) / fine, 0.0)
    return d.max(axis=-1, initial=0.0)


# --------------------------------------------------------------------------
# the solve
# --------------------------------------------------------------------------


@dataclass
class _Pass:
    """One solution of the whole timeline at one number of ramp sub-steps."""

    times: np.ndarray
    after: np.ndarray
    conc: np.ndarray
    bound: np.ndarray
    moved: list
    substeps: int
    chain: Chain


def _one_pass(scheme, plan, conditions, times, level) -> _Pass:
    pieces = _pieces(scheme, plan, level, times)
    chain = Chain(scheme, plan, conditions, pieces)
    chain.run()
    rows_t, after, source = _rows(times, chain)
    conc, bound = _evaluate(rows_t, source, chain, conditions)
    return _Pass(rows_t, after, conc, bound, chain.moved, sum(level), chain)


@dataclass(frozen=True)
class Stretch:
    """One stretch of constant conditions of a solved run (a sub-step inside a ramp).

    Attributes
    ----------
    start, end : float
        [s].
    K, K_low : numpy.ndarray
        The rate matrix as a double-double pair [1/s] (shared between stretches of
        the same conditions: do not modify).
    feed : numpy.ndarray or None
        The feed in force [concentration_unit/s].
    start_values, end_values : numpy.ndarray
        Concentrations just after the operations at ``start`` and just before those at
        ``end`` [concentration_unit].
    ramp : bool
        True for a half sub-step of a temperature ramp (its ``K`` the Magnus-type
        average, see the module docstring).
    """

    start: float
    end: float
    K: np.ndarray
    K_low: np.ndarray
    feed: np.ndarray | None
    start_values: np.ndarray
    end_values: np.ndarray
    ramp: bool = False


def _stretches(chain: Chain, conditions: _Conditions) -> tuple[Stretch, ...]:
    matrices = [conditions._matrix(key[0]) for key in chain.keys]
    feeds = [conditions._feed(key[1])[0] for key in chain.keys]
    ramps = [key[0][0] == "ramp" for key in chain.keys]
    return tuple(
        Stretch(
            a, b, matrices[k][0], matrices[k][1], feeds[k], chain.start[j], chain.end[j], ramps[k]
        )
        for j, ((a, b, _), k) in enumerate(zip(chain.pieces, chain.kinds.tolist(), strict=True))
    )


def _first_substeps(plan: Plan, conditions: _Conditions) -> list[int]:
    """Sub-steps of each ramp at the first level: 4 per unit change of ln k, at least 4."""
    from .units import GAS_CONSTANT

    if not conditions.arrhenius:
        return [1] * len(plan.ramps)
    spread = max(abs(law.activation_energy) for law in conditions.arrhenius.values()) / GAS_CONSTANT
    return [
        max(4, math.ceil(4.0 * spread * abs(1.0 / r.initial - 1.0 / r.final))) for r in plan.ramps
    ]


def _refine(scheme, plan, conditions, times, ramp_rtol: float):
    """Passes with doubled sub-steps until the ramp estimate is confirmed (see module doc).

    Returns the finest pass, the estimate per row and per moved amount, and notes.
    """
    first = _first_substeps(plan, conditions)
    passes: list[_Pass] = []
    factor = 1
    while True:
        passes.append(_one_pass(scheme, plan, conditions, times, [N * factor for N in first]))
        passes = passes[-3:]
        if not plan.ramps or not conditions.arrhenius:
            return passes[-1], np.zeros(passes[-1].times.size), np.zeros(len(passes[-1].moved)), []
        if len(passes) == 3:
            rows = [_relative_difference(passes[i + 1].conc, passes[i].conc) for i in range(2)]
            moved = [_moved_difference(passes[i + 1].moved, passes[i].moved) for i in range(2)]
            d1, d2 = (
                max(rows[0].max(), moved[0].max(initial=0)),
                max(rows[1].max(), moved[1].max(initial=0)),
            )
            shrinks = d1 >= 2.0 * d2
            if d2 <= ramp_rtol and (shrinks or d1 <= ramp_rtol):
                if shrinks:
                    return passes[-1], rows[1], moved[1], []
                return passes[-1], np.maximum(*rows), np.maximum(*moved), []
            if 2 * passes[-1].substeps > MAX_RAMP_SUBSTEPS:
                note = (
                    f"the ramp sub-steps did not reach the requested accuracy "
                    f"({ramp_rtol:g}) with {passes[-1].substeps:,} sub-steps; the ramp "
                    "estimate is the difference of the last two refinements"
                    + ("" if shrinks else " and may be too small (they did not converge)")
                )
                return passes[-1], np.maximum(*rows), np.maximum(*moved), [note]
        factor *= 2


def _moved_difference(fine: list, coarse: list) -> np.ndarray:
    """Relative difference of the recorded amounts of two passes (same operations)."""
    a = np.array([abs(m[3]) for m in fine])
    b = np.array([abs(m[3]) for m in coarse])
    return _relative_difference(a[:, None], b[:, None]) if a.size else np.zeros(0)


def _envelope(plan: Plan, best: _Pass, rows: np.ndarray, moved: np.ndarray):
    """The ramp estimate as a running maximum from the first ramp on.

    The difference of two refinements can pass through zero at one time while the
    error of the finer one does not; errors made during a ramp are carried forward
    (the maps after it are nonnegative, so relative errors do not grow), hence the
    estimate at a time is the largest difference seen up to it.  An amount moved by an
    operation shares the estimate of the concentrations just before it.
    """
    rows = np.where(best.times <= plan.ramps[0].start, 0.0, rows)
    rows = np.maximum.accumulate(rows) if rows.size else rows
    when = np.array([m[0] for m in best.moved])
    up_to = np.searchsorted(best.times, when, side="right") - 1
    carried = np.where(up_to >= 0, rows[np.maximum(up_to, 0)], 0.0) if rows.size else 0.0
    moved = np.where(when <= plan.ramps[0].start, 0.0, np.maximum(moved, carried))
    return rows, np.maximum.accumulate(moved) if moved.size else moved


def _events(plan: Plan, best: _Pass, moved_estimate: np.ndarray) -> tuple[Event, ...]:
    """Every applied operation as an :class:`Event`, in time order."""
    moved = [
        Event(m[0], m[1], m[2], m[3], None, m[4], est, m[5], m[6])
        for m, est in zip(best.moved, moved_estimate.tolist(), strict=True)
    ]
    if not (plan.steps or plan.ramps or plan.feeds):  # already by time, then statement
        return tuple(moved)
    records = [(e.time, e.statement, e) for e in moved]
    for t, T, i in plan.steps:
        records.append((t, i, Event(t, "temperature", None, 0.0, T, statement=i)))
    for r, i in zip(plan.ramps, plan.ramp_statements, strict=True):
        records.append(
            (r.start, i, Event(r.start, "temperature", None, 0.0, r.initial, statement=i))
        )
        if r.end <= plan.end:
            records.append((r.end, i, Event(r.end, "temperature", None, 0.0, r.final, statement=i)))
    for window, i in plan.feeds:
        for name, rate in window.rates:
            records.append(
                (window.start, i, Event(window.start, "feed on", name, 0.0, rate, statement=i))
            )
            if window.end <= plan.end:
                records.append(
                    (window.end, i, Event(window.end, "feed off", name, 0.0, rate, statement=i))
                )
    records.sort(key=lambda r: (r[0], r[1]))
    return tuple(r[2] for r in records)


def _temperatures(scheme: Scheme, plan: Plan, times: np.ndarray) -> np.ndarray | None:
    """The temperature in force at each row [K] (None when there is none)."""
    regions = _temperature_regions(scheme, plan)
    if scheme.temperature is None and len(regions) == 1:
        return None
    starts = np.array([t for t, _ in regions])
    out = np.empty(times.size)
    for row, t in enumerate(times.tolist()):
        regime = regions[int(np.searchsorted(starts, t, side="right")) - 1][1]
        if isinstance(regime, tuple):
            r = plan.ramps[regime[1]]
            out[row] = r.initial + (r.final - r.initial) * (t - r.start) / (r.end - r.start)
        else:
            kelvin = scheme.temperature if regime is None else regime
            out[row] = np.nan if kelvin is None else float(kelvin)  # type: ignore[arg-type]
    return out


def solve_timeline(
    scheme: Scheme,
    timeline: Timeline,
    times,
    *,
    precision: Precision = "auto",
    ramp_rtol: float = 1e-10,
    include_operations: bool = False,
) -> TimelineSolution:
    r"""Solve a scheme exactly under a timeline of operations.

    .. math:: c(t) = e^{(t - a)K_j} c(a^+) + \int_0^{t - a} e^{uK_j}\,\mathrm{d}u\, f_j
              \quad\text{on each stretch } [a, b] \text{ between operations}

    Parameters
    ----------
    scheme : Scheme
        Start values at time 0, constants, temperature and always-on feed.
    timeline : Timeline
        The operations (see :mod:`kinetics.timeline`).
    times : array_like
        Output times [s], nondecreasing, >= 0; the last one ends the window.
    precision : {"auto", "double", "double-double"}
        Arithmetic of the engine (see :func:`kinetics.propagate.propagate_certified`).
    ramp_rtol : float
        Relative accuracy the ramp sub-steps are refined to (see the module docstring).
    include_operations : bool
        Also give rows at every addition and removal not on ``times`` (for plots that
        draw the jumps).

    Returns
    -------
    TimelineSolution

    Raises
    ------
    kinetics.errors.SchemeErrors
        For mistakes in the timeline, all at once.
    kinetics.errors.SettingError
        For a ``ramp_rtol`` outside (0, 1).
    kinetics.errors.ArgumentValueError
        For bad times (:func:`kinetics.engine.checks.time_list`).

    Examples
    --------
    A generator P -> D (half-lives 66 h and 6 h, rounded from memory) eluted completely
    every 24 h; the first eluate follows the ingrowth formula
    :math:`D = P_0 \frac{k_P}{k_D - k_P}(e^{-k_P t} - e^{-k_D t})` (Bateman 1910):

    >>> import kinetics, math
    >>> from kinetics.timeline import Every, Removal, Timeline
    >>> s = kinetics.parse("P -> D  kP = 0.0105 1/h\nD -> X  kD = 0.1155 1/h\nstart P = 1 M")
    >>> line = Timeline([Every(86400.0, Removal.percent(100, "D"))])
    >>> sol = solve_timeline(s, line, [0.0, 2 * 86400.0])
    >>> kP, kD = 0.0105, 0.1155
    >>> first = kP / (kD - kP) * (math.exp(-kP * 24) - math.exp(-kD * 24))
    >>> bool(abs(sol.removed("D")[1][0] - first) < 1e-15)
    True
    """
    t = time_list(times)
    if not (isinstance(ramp_rtol, float | int) and 0 < ramp_rtol < 1):
        raise SettingError(
            f"ramp_rtol must be a number between 0 and 1, not {shown_value(ramp_rtol)}",
            "e.g. 1e-10 (relative accuracy of the ramp sub-steps)",
        )
    plan = expand(scheme, timeline, float(t[-1]))
    if include_operations:
        extra = np.setdiff1d([op.time for op in plan.operations if op.time >= t[0]], t)
        t = np.sort(np.concatenate([t, extra]), kind="stable")
    conditions = _Conditions(scheme, plan, precision)
    # the first run of a process loads the engine's and the chain's kernels from disk (or
    # compiles them): collector passes over numba's objects would walk them again and again
    with collector_paused(not loaded(chain)):
        best, estimate, moved_estimate, notes = _refine(scheme, plan, conditions, t, ramp_rtol)
    if plan.ramps and conditions.arrhenius:
        estimate, moved_estimate = _envelope(plan, best, estimate, moved_estimate)
    return TimelineSolution(
        times=best.times,
        after=best.after,
        species=scheme.species_names,
        concentrations=best.conc,
        error_bound=best.bound,
        ramp_estimate=estimate,
        temperatures=_temperatures(scheme, plan, best.times),
        events=_events(plan, best, moved_estimate),
        notes=plan.notes + tuple(notes),
        concentration_unit=scheme.concentration_unit,
        ramp_substeps=best.substeps if plan.ramps and conditions.arrhenius else 0,
        stretches=_stretches(best.chain, conditions),
    )
