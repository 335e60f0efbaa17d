r"""What the chemist reads: half-lives, intermediate maxima, limits, time scales, areas.

Every quantity here is computed from the exact solution of a first-order scheme,

.. math::

    \frac{dc}{dt} = K c + f, \qquad
    c(t) = e^{tK} c_0 + \int_0^t e^{sK}\,ds\, f ,

with the rate matrix ``K`` [1/s] (column ``j`` is the outflow of species ``j``:
``K[j, j] = -sum k_out(j)``, ``K[i, j] = nu * k`` for a step ``j -> i``), the start
concentrations ``c0`` and an optional zero-order feed ``f`` [conc/s].  Concentrations
come from :func:`kinetics.propagate.propagate`; times of events are found by root
finding on the exact curve and its exact derivative ``(K c + f)_i``, never by reading a
grid.  All functions take plain arrays; times are in seconds and concentrations in the
caller's unit.

Definitions
-----------
Half-life, time to a fraction (DT50, DT90, t90)
    The half-life of a species with a start value is the first time its concentration
    falls to half of the start value, :math:`c_i(t_{1/2}) = c_{0,i}/2`.  More generally
    the time to a fraction :math:`\phi` is the first :math:`t` with
    :math:`c_i(t) = \phi\,c_{0,i}`.  It is found by root finding on the exact solution
    (relative accuracy 1e-10 or better) and is ``None``, with a sentence saying why, when the
    concentration never falls that low (a reversible step whose equilibrium lies above
    the fraction, a species that is not consumed, growth without bound).  "t90" has two
    opposite meanings in the trade: in shelf-life work it is the time until 90 % is
    *left* (:math:`\phi = 0.9`, :math:`t = \ln(10/9)/k \approx 0.105/k` for first
    order); in degradation studies DT90 is the time until 90 % has *gone*
    (:math:`\phi = 0.1`, :math:`t = \ln 10/k`).  The summary reports both, under names
    that say which is which.

Lifetime and first-order half-life
    :math:`\tau_i = 1/\sum k_{out}(i) = -1/K_{ii}` and :math:`\ln 2\,\tau_i`: how long one
    molecule of ``i`` survives on average once formed, ignoring that it may be formed
    again.  Infinite for a species with no outgoing step.  It equals the half-life above
    only for a species that decays by first-order steps and is not formed.

Intermediate maxima
    Every local maximum of :math:`c_i(t)` over :math:`t > 0`, located where the exact
    derivative :math:`(K c + f)_i` changes sign from + to - (bracketed on a log-spaced
    scan that spans all time scales of ``K``, refined by root finding to 1e-13 relative in
    time).  The highest one is flagged *global* when it is also at least the start value
    and the long-time limit (otherwise the supremum over :math:`t \ge 0` is at
    :math:`t = 0` or approached as :math:`t \to \infty`).  Maxima after the end of the
    chosen time window are found all the same and flagged ``beyond_window``.  Where
    :math:`(Kc + f)_i` is only rounding noise (a species in quasi-steady state, e.g. the
    short-lived daughter of a long-lived parent), the derivative is taken as
    :math:`e^{tK}g^+ - e^{tK}g^-` with :math:`g^\pm` the positive and negative parts of
    :math:`Kc_0 + f`, each propagated entrywise accurately.  Cycles can
    give several local maxima; all are listed.  Local maxima whose size is below the
    rounding level of the curve (damped oscillation about an equilibrium after ~30
    relaxation times) cannot be resolved in double precision and are not reported.

Long-time limit
    :math:`c(\infty) = \lim_{t\to\infty} c(t)`, computed exactly from the class structure
    of ``K`` (strongly connected components of the species graph).  Material in a
    *transient* class (one that loses material) ends up downstream; a *closed* class
    (no outlet, e.g. a final reversible equilibrium or a single end product) keeps what
    flows into it, distributed as its stationary vector :math:`v` (``K_CC v = 0``,
    computed subtraction-free by the Grassmann-Taksar-Heyman algorithm):
    :math:`c_C(\infty) = v\,\mathbf 1^T (c_{0,C} + K_{C,T} X_T)/\mathbf 1^T v`, with
    :math:`X_T = -K_{TT}^{-1} c_{0,T}` the areas of the transient species upstream.  This
    is the projection of :math:`c_0` onto the null space of ``K`` along its range (the
    conserved quantities of a closed reversible network).  A feed into transient species
    gives the steady state :math:`-K^{-1} f` on them; a feed that reaches a species with no
    outlet makes it grow without bound (linearly in ``t``), and a class that makes more
    than it uses (stoichiometric factors above one in a loop) grows exponentially: those
    species are reported as unbounded, with a sentence saying so.

Time to the limit
    For a tolerance :math:`\epsilon` (default 0.01): the time after which every species
    stays within :math:`\epsilon` of its own limit,
    :math:`|c_i(s) - c_i(\infty)| \le \epsilon\,c_i(\infty)` for all :math:`s \ge t`.  A
    species whose limit is zero is compared with :math:`\epsilon` times the largest finite
    limit of any species (the largest start value when all limits are zero).  Reported per
    species and for the whole scheme (the largest of them).  A species that grows without
    bound has none; the others are still reported, and the whole scheme has ``None``.

Relaxation times
    :math:`\tau_k = 1/|\operatorname{Re}\lambda_k|` for the nonzero eigenvalues
    :math:`\lambda_k` of ``K`` (one per complex pair), longest first, and the periods
    :math:`2\pi/|\operatorname{Im}\lambda_k|` of complex pairs (damped oscillation, from
    cycles).  For ``A <=> B`` the single relaxation time is :math:`1/(k_f + k_r)`.  When
    ``K`` is defective (a rate repeated along a reaction path, e.g. equal constants in a
    chain), the curves contain terms :math:`t\,e^{-kt}` (:math:`t^m e^{-kt}` for
    :math:`m+1` equal rates) instead of pure exponentials; this is flagged with a note.

Yield at the maximum and selectivity
    The yield of an intermediate (a species that starts at zero and has a global maximum)
    at its maximum is :math:`Y_i = c_{i,\max} / \sum_j c_{0,j}`, the peak concentration
    relative to the total start concentration of all starting materials (or of one chosen
    starting material, ``basis``).  It is a fraction of material only for 1:1
    stoichiometry.  End products are the species in closed classes (no outlet) that are
    formed.  The selectivity between end products is the ratio of the amounts formed,
    :math:`S_{P/Q}(t) = (c_P(t) - c_{0,P})/(c_Q(t) - c_{0,Q})`, and the fractional
    selectivity :math:`s_P(t) = \Delta c_P(t)/\sum_Q \Delta c_Q(t)`, reported at the end of
    the time window and in the limit :math:`t \to \infty`.

Areas and mean residence time
    :math:`AUC_i(T) = \int_0^T c_i\,dt`, exact, from the exponential of the augmented
    matrix :math:`\begin{pmatrix} K & 0 \\ I & 0 \end{pmatrix}` (Van Loan 1978; no
    quadrature), and :math:`AUC_i(\infty) = (-K_{TT}^{-1} c_{0,T})_i` for species that decay
    to zero (infinite when the limit is nonzero).  The mean residence time of a species
    that starts with material is :math:`MRT_i = AUC_i(\infty)/c_{0,i}`, which is
    :math:`1/k` for a single first-order decay; when ``i`` is also formed from other
    starting materials that material is counted too.

References
----------
Bateman, H. "Solution of a system of differential equations occurring in the theory of
radioactive transformations." Proc. Cambridge Philos. Soc. 15, 423-427 (1910).

Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University Press
(2014): consecutive and parallel first-order reactions, pre-equilibria.

IUPAC Compendium of Chemical Terminology (the Gold Book), entries "chemical relaxation"
and "relaxation time".

Grassmann, W. K.; Taksar, M. I.; Heyman, D. P. "Regenerative analysis and steady state
distributions for Markov chains." Operations Research 33, 1107-1116 (1985).

Berman, A.; Plemmons, R. J. "Nonnegative Matrices in the Mathematical Sciences",
Academic Press (1979), ch. 6 (M-matrices) and ch. 8 (class structure, limits).

Rothblum, U. G. "Algebraic eigenspaces of nonnegative matrices." Linear Algebra Appl. 12,
281-292 (1975).

Van Loan, C. F. "Computing integrals involving the matrix exponential." IEEE Trans.
Automat. Control 23, 395-404 (1978).

Gibaldi, M.; Perrier, D. "Pharmacokinetics", 2nd ed., Marcel Dekker (1982).

Yamaoka, K.; Nakagawa, T.; Uno, T. "Statistical moments in pharmacokinetics."
J. Pharmacokinet. Biopharm. 6, 547-558 (1978).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
import scipy.linalg
import scipy.sparse

from kinetics import checks
from kinetics.errors import UsageError
from kinetics.network import condensation
from kinetics.propagate import DENSE_MAX, propagate, propagate_batch

__all__ = [
    "MAX_LIFETIMES",
    "MAX_RATE",
    "MAX_SCALE",
    "MAX_TIME",
    "Areas",
    "FractionTime",
    "Limit",
    "Maximum",
    "RelaxationTimes",
    "SchemeSummary",
    "SpeciesSummary",
    "TimeToLimit",
    "YieldsAndSelectivity",
    "areas",
    "check_working_range",
    "half_life",
    "half_life_detail",
    "intermediate_maxima",
    "lifetimes",
    "long_time_limit",
    "mean_residence_time",
    "relaxation_times",
    "summarise",
    "summarise_all",
    "time_to_fraction",
    "time_to_fraction_detail",
    "time_to_limit",
    "yields_and_selectivity",
]

# A derivative (K c + f)_i whose size is below this fraction of the flux magnitudes
# sum_j |K_ij| c_j + |f_i| is rounding noise: its sign carries no information.
_REL_NOISE_D = 1e-12
# Same for a concentration compared with a level.
_REL_NOISE_C = 1e-12
# Log-spaced scan: points per decade, and its span in units of the time scales.
_PER_OCTAVE = 8  # about 27 per decade
_SCAN_FAST = 1e-3  # first scan point: this many of the fastest time constants
_SCAN_SLOW = 50.0  # last scan point: this many of the slowest time constants
_MAX_LOG_POINTS = 1500
_MAX_OSC_POINTS = 4000
# Relative tolerance of the bracketing root finder (in time).
_XTOL = 1e-13
# Eigenvalue gaps (relative) for "repeated" and "nearly repeated" rates.
_REPEATED = 1e-10
_NEARLY = 1e-3

#: Working range of the engine and of the scan (README, "Limits of the method"): the
#: fastest consumption rate sum k of a species [1/s], the latest time [s], and the
#: number of shortest lifetimes 1/sigma (sigma = the largest sum k) a time may span.
#: The entrywise error of the exponential grows about in proportion to sigma t
#: (measured: 4e-6 relative at sigma t = 5e26 in double-double).
MAX_RATE = 1e100
MAX_TIME = 1e100
MAX_LIFETIMES = 1e27
#: Largest concentration times the cube of the fastest consumption rate (the summary forms
#: third derivatives of the curves; the double range ends near 1.8e308).
MAX_SCALE = 1e300

_NEVER, _DECAY, _CONST = -2, -1, 0  # growth degree of a class: t^q (see _Structure)
_EXP = 10**9


def _hermite_basis(x):
    """Cubic Hermite basis h00, h10, h01, h11 on [0, 1]."""
    x2, x3 = x * x, x * x * x
    return 2 * x3 - 3 * x2 + 1, x3 - 2 * x2 + x, -2 * x3 + 3 * x2, x3 - x2


def _quintic_basis(x):
    """Quintic Hermite basis on [0, 1]: value, slope, curvature at 0, then at 1."""
    x2, x3, x4, x5 = x * x, x**3, x**4, x**5
    return (
        1 - 10 * x3 + 15 * x4 - 6 * x5,
        x - 6 * x3 + 8 * x4 - 3 * x5,
        0.5 * x2 - 1.5 * x3 + 1.5 * x4 - 0.5 * x5,
        10 * x3 - 15 * x4 + 6 * x5,
        -4 * x3 + 7 * x4 - 3 * x5,
        0.5 * x3 - x4 + 0.5 * x5,
    )


def _hermite_root(a, b, ga, gb, gpa, gpb, gppa, gppb) -> np.ndarray:
    """First root in (a, b) of the Hermite model of g from both ends (opposite signs).

    Quintic (values, slopes, curvatures; error O(h^6)) where the curvatures are known,
    cubic (error O(h^4)) where they are nan; the secant point as a last resort."""
    h = b - a
    s = np.linspace(0.0, 1.0, 129)[None, :]
    h00, h10, h01, h11 = _hermite_basis(s)
    P = h00 * ga[:, None] + h10 * (h * gpa)[:, None] + h01 * gb[:, None] + h11 * (h * gpb)[:, None]
    quint = np.isfinite(gppa) & np.isfinite(gppb)
    if quint.any():
        q0, q1, q2, q3, q4, q5 = _quintic_basis(s)
        hh = h[quint]
        Q = (
            q0 * ga[quint, None]
            + q1 * (hh * gpa[quint])[:, None]
            + q2 * (hh * hh * gppa[quint])[:, None]
            + q3 * gb[quint, None]
            + q4 * (hh * gpb[quint])[:, None]
            + q5 * (hh * hh * gppb[quint])[:, None]
        )
        P[quint] = Q
    flip = np.sign(P) != np.sign(ga)[:, None]
    j = np.argmax(flip, axis=1)
    ok = flip[np.arange(j.size), j] & (j > 0)
    jj = np.maximum(j, 1)
    rows = np.arange(j.size)
    p0, p1 = P[rows, jj - 1], P[rows, jj]
    s0, s1 = s[0, jj - 1], s[0, jj]
    with np.errstate(divide="ignore", invalid="ignore"):
        # refine the bracketing pair by one secant step of the model itself
        sr = np.where(ok, s0 - p0 * (s1 - s0) / (p1 - p0), ga / (ga - gb))
    sr = np.where(np.isfinite(sr), sr, 0.5)
    sr = np.clip(sr, 1e-6, 1 - 1e-6)
    # the model's curvature near the root, |g''| [per s^2], for the Newton error estimate
    jc = np.clip(jj, 1, s.shape[1] - 2)
    ds = s[0, 1] - s[0, 0]
    curv = np.abs(P[rows, jc + 1] - 2 * P[rows, jc] + P[rows, jc - 1]) / (ds * h) ** 2
    return a + sr * h, curv


# ---------------------------------------------------------------------------------------
# Input checks
# ---------------------------------------------------------------------------------------

_K_HINT = (
    "column j holds the outflow of species j: K[j, j] = -(sum of its rate constants), "
    "K[i, j] = nu*k for a step j -> i, all in 1/s"
)


def _check_matrix(K) -> tuple[np.ndarray | None, scipy.sparse.csr_array]:
    """Validate a rate matrix; return (dense or None, CSR) copies as float."""
    if scipy.sparse.issparse(K):
        Ks = scipy.sparse.csr_array(K, dtype=float)
        if Ks.ndim != 2 or Ks.shape[0] != Ks.shape[1]:
            raise UsageError(f"the rate matrix K has shape {Ks.shape}; it must be square", _K_HINT)
        if not np.all(np.isfinite(Ks.data)):
            raise UsageError("the rate matrix K contains inf or nan", _K_HINT)
        coo = Ks.tocoo()
        bad = (coo.row != coo.col) & (coo.data < 0)
        if bad.any():
            k = int(np.flatnonzero(bad)[0])
            i, j, v = int(coo.row[k]), int(coo.col[k]), float(coo.data[k])
            raise UsageError(
                f"K[{i}, {j}] = {v:g} is negative; off-diagonal entries are rates of "
                "formation and must be >= 0",
                _K_HINT,
            )
        Ks.eliminate_zeros()
        n = Ks.shape[0]
        Kd = Ks.toarray() if n <= 1500 else None
    else:
        try:
            Kd = np.array(K, dtype=float)
        except (TypeError, ValueError) as exc:
            raise UsageError("the rate matrix K is not a numeric array", _K_HINT) from exc
        if Kd.ndim != 2 or Kd.shape[0] != Kd.shape[1]:
            raise UsageError(f"the rate matrix K has shape {Kd.shape}; it must be square", _K_HINT)
        if not np.all(np.isfinite(Kd)):
            raise UsageError("the rate matrix K contains inf or nan", _K_HINT)
        off = Kd - np.diag(np.diag(Kd))
        if (off < 0).any():
            i, j = (int(x) for x in np.argwhere(off < 0)[0])
            raise UsageError(
                f"K[{i}, {j}] = {Kd[i, j]:g} is negative; off-diagonal entries are rates of "
                "formation and must be >= 0",
                _K_HINT,
            )
        Ks = scipy.sparse.csr_array(Kd)
        Ks.eliminate_zeros()
        n = Kd.shape[0]
    if n == 0:
        raise UsageError("the rate matrix K is empty", "a scheme needs at least one species")
    return Kd, Ks


def _check_vector(x, n: int, what: str, hint: str) -> np.ndarray:
    try:
        v = np.array(x, dtype=float).reshape(-1)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"{what} is not a numeric array", hint) from exc
    if v.shape != (n,):
        raise UsageError(f"{what} has {v.size} entries but K has {n} species", hint)
    if not np.all(np.isfinite(v)):
        raise UsageError(f"{what} contains inf or nan", hint)
    if (v < 0).any():
        k = int(np.flatnonzero(v < 0)[0])
        raise UsageError(f"{what}[{k}] = {v[k]:g} is negative", hint)
    return v


def _check_index(i, n: int) -> int:
    if isinstance(i, bool) or not isinstance(i, int | np.integer):
        raise UsageError(f"species index {i!r} is not an integer", f"use 0 .. {n - 1}")
    i = int(i)
    if not 0 <= i < n:
        raise UsageError(f"species index {i} is out of range", f"use 0 .. {n - 1}")
    return i


def _check_positive_time(t, what: str) -> float:
    try:
        t = float(t)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"{what} {t!r} is not a number", "give a time in seconds") from exc
    if not math.isfinite(t) or t <= 0:
        raise UsageError(f"{what} must be a positive finite time, got {t!r}", "seconds, > 0")
    return t


def _check_fraction(x, what: str) -> float:
    try:
        x = float(x)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"{what} {x!r} is not a number", "give a number between 0 and 1") from exc
    if not 0.0 < x < 1.0:
        raise UsageError(f"{what} must lie strictly between 0 and 1, got {x!r}", "e.g. 0.5")
    return x


def check_working_range(
    rates, t_end: float, names: Sequence[str] | None = None, amount: float = 0.0
) -> None:
    r"""Refuse a problem outside the engine's working range, before any work is done.

    Parameters
    ----------
    rates : array_like, shape (n,)
        Consumption rate :math:`\sum k` of each species [1/s] (:math:`-K_{ii}`).
    t_end : float
        The latest time asked for [s].
    names : sequence of str, optional
        Species names for the message.
    amount : float, optional
        The largest concentration the problem can reach by simple bounds [conc]: start
        values plus feed times the time span.

    Raises
    ------
    kinetics.errors.UsageError
        When a rate exceeds :data:`MAX_RATE`, ``t_end`` exceeds :data:`MAX_TIME`,
        :math:`\sigma t_{end}` (:math:`\sigma = \max \sum k`) exceeds :data:`MAX_LIFETIMES`,
        or :math:`\max(\sigma, 1)^3` ``amount`` exceeds :data:`MAX_SCALE` (the summary forms
        the third derivative of the curves).

    Examples
    --------
    >>> check_working_range([1e-8, 1e10], 1e9)
    >>> try:
    ...     check_working_range([1.0], 1e300)
    ... except UsageError as exc:
    ...     print(exc.problem)
    the times reach 1e+300 s, beyond the working range of 1e+100 s
    """
    r = np.asarray(rates, dtype=float).reshape(-1)
    if names is None:
        names = [f"species {i}" for i in range(r.size)]
    k = int(np.argmax(r)) if r.size else 0
    sigma = float(r[k]) if r.size else 0.0
    if not sigma <= MAX_RATE:  # also nan
        raise UsageError(
            f"{names[k]} is consumed at {sigma:.3g} 1/s (its sum of rate constants), beyond "
            f"the working range of {MAX_RATE:.0e} 1/s (the fastest chemical steps take about "
            "1e13 1/s)",
            "check the constants and their units",
        )
    if t_end > MAX_TIME:
        raise UsageError(
            f"the times reach {t_end:.6g} s, beyond the working range of {MAX_TIME:.0e} s",
            "give a shorter time span",
        )
    if sigma * t_end > MAX_LIFETIMES:
        raise UsageError(
            f"the times reach {t_end:.6g} s, {sigma * t_end:.3g} times the shortest lifetime "
            f"in the scheme ({names[k]}: 1/sum k = {1 / sigma:.3g} s); the exact engine spans "
            f"at most {MAX_LIFETIMES:.0e} lifetimes",
            "give a shorter time span",
        )
    if amount * max(sigma, 1.0) ** 3 > MAX_SCALE:
        raise UsageError(
            f"the concentrations (up to {amount:.3g} in the scheme's unit) are too large for "
            f"the rates of the scheme ({names[k]} is consumed at {sigma:.3g} 1/s): their rates "
            "of change leave the range of numbers",
            "give the start values and feeds in a larger unit",
        )


# ---------------------------------------------------------------------------------------
# Result types
# ---------------------------------------------------------------------------------------


def _num(x) -> float | None:
    """A JSON-friendly number: float, or None for nan and inf."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


@dataclass(frozen=True)
class Maximum:
    """One local maximum of a concentration curve.

    Attributes
    ----------
    species : int
        Index of the species.
    time : float
        Time of the maximum [s].
    height : float
        Concentration at the maximum [conc].
    beyond_window : bool
        True when ``time`` lies after the end of the chosen time window.
    is_global : bool
        True for the highest local maximum when it is also the maximum over all
        :math:`t \\ge 0` (at least the start value and the long-time limit).
    """

    species: int
    time: float
    height: float
    beyond_window: bool = False
    is_global: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {
            "time": _num(self.time),
            "height": _num(self.height),
            "beyond_window": bool(self.beyond_window),
            "global": bool(self.is_global),
        }


@dataclass(frozen=True)
class FractionTime:
    """Time at which a species first falls to a fraction of its start value.

    Attributes
    ----------
    species : int
    fraction : float
    time : float or None
        [s]; None when it never falls that low.
    reason : str
        Why ``time`` is None (empty otherwise).
    """

    species: int
    fraction: float
    time: float | None
    reason: str = ""


@dataclass(frozen=True)
class Limit:
    """The long-time limit :math:`c(\\infty)` of every species.

    Attributes
    ----------
    values : ndarray
        :math:`c_i(\\infty)` [conc]; ``inf`` where the species grows without bound.
    unbounded : ndarray of bool
    kind : tuple of str
        Per species: ``"not formed"`` (stays zero), ``"transient"`` (decays to zero),
        ``"end product"`` (single species without outlet), ``"equilibrium"`` (member of a
        closed reversible network), ``"inert"`` (neither formed nor consumed),
        ``"steady state"`` (finite nonzero limit kept up by a feed or an upstream
        reservoir), ``"unbounded"``.
    growth : tuple of str or None
        ``"linear"``, ``"polynomial"`` or ``"exponential"`` for unbounded species.
    growth_rate : ndarray
        Asymptotic slope :math:`dc_i/dt` [conc/s] of linearly growing species, the
        exponent [1/s] of exponentially growing ones, nan otherwise.
    notes : tuple of str
        Sentences for the reader (one per group of unbounded species).
    """

    values: np.ndarray
    unbounded: np.ndarray
    kind: tuple[str, ...]
    growth: tuple[str | None, ...]
    growth_rate: np.ndarray
    notes: tuple[str, ...] = ()

    @property
    def bounded(self) -> bool:
        """True when every species has a finite limit."""
        return not bool(np.any(self.unbounded))


@dataclass(frozen=True)
class TimeToLimit:
    """Time to come within a tolerance of the long-time limit (see module Definitions).

    Attributes
    ----------
    time : float or None
        [s] the largest of ``per_species``; None when some species has no finite limit.
    per_species : ndarray
        [s] per species; nan for unbounded species.
    tolerance : float
    reason : str
        Why ``time`` is None (empty otherwise).
    """

    time: float | None
    per_species: np.ndarray
    tolerance: float
    reason: str = ""


@dataclass(frozen=True)
class RelaxationTimes:
    """Characteristic times from the eigenvalues of ``K``.

    Attributes
    ----------
    eigenvalues : ndarray of complex
        Nonzero eigenvalues [1/s] with :math:`\\operatorname{Im} \\ge 0` (one per complex
        pair), slowest first.
    times : ndarray
        :math:`1/|\\operatorname{Re}\\lambda|` [s] of the decaying ones, longest first.
    periods : ndarray
        :math:`2\\pi/\\operatorname{Im}\\lambda` [s] of the complex pairs.
    growth_times : ndarray
        :math:`1/\\operatorname{Re}\\lambda` [s] of growing modes (e-folding times).
    zero_modes : int
        Number of zero eigenvalues (one per closed class: conserved quantities).
    defective, nearly_defective : bool
    note : str
        What a (nearly) repeated rate means for the curve shape; empty otherwise.
    """

    eigenvalues: np.ndarray
    times: np.ndarray
    periods: np.ndarray
    growth_times: np.ndarray
    zero_modes: int
    defective: bool
    nearly_defective: bool
    note: str = ""


@dataclass(frozen=True)
class Areas:
    """Areas under the curves.

    Attributes
    ----------
    times_end : ndarray
        [s] the upper limits T.
    to_end : ndarray
        :math:`\\int_0^T c_i\\,dt` [conc*s], shape ``(len(times_end), n)``.
    to_infinity : ndarray
        :math:`\\int_0^\\infty c_i\\,dt` [conc*s], inf where the limit is nonzero.
    """

    times_end: np.ndarray
    to_end: np.ndarray
    to_infinity: np.ndarray


@dataclass(frozen=True)
class YieldsAndSelectivity:
    """Yields of intermediates at their maxima and selectivity between end products.

    Attributes
    ----------
    basis : float
        Start amount the yields refer to [conc].
    yield_at_max : ndarray
        :math:`c_{i,\\max}/\\text{basis}` for intermediates, nan for other species.
    end_products : tuple of int
    formed_at_window_end, formed_in_limit : ndarray or None
        :math:`\\Delta c_P` of each end product [conc] at the end of the window and for
        :math:`t\\to\\infty` (None without window / without finite limit).
    selectivity_at_window_end, selectivity_in_limit : ndarray or None
        Fractional selectivity :math:`\\Delta c_P / \\sum_Q \\Delta c_Q`.
    """

    basis: float
    yield_at_max: np.ndarray
    end_products: tuple[int, ...]
    formed_at_window_end: np.ndarray | None
    formed_in_limit: np.ndarray | None
    selectivity_at_window_end: np.ndarray | None
    selectivity_in_limit: np.ndarray | None

    def ratio(self, p: int, q: int, where: str = "limit") -> float:
        """Selectivity :math:`S_{P/Q} = \\Delta c_P / \\Delta c_Q` between two end products.

        Parameters
        ----------
        p, q : int
            Species indices (both end products).
        where : {"limit", "window_end"}
        """
        if p not in self.end_products or q not in self.end_products:
            raise UsageError(
                f"species {p} and {q} must both be end products",
                f"end products here: {list(self.end_products)}",
            )
        formed = self.formed_in_limit if where == "limit" else self.formed_at_window_end
        if where not in ("limit", "window_end"):
            raise UsageError(f"where={where!r} is not known", "use 'limit' or 'window_end'")
        if formed is None:
            raise UsageError(f"no amounts formed are available at {where!r}", "give t_window")
        a = formed[self.end_products.index(p)]
        b = formed[self.end_products.index(q)]
        return float(a / b) if b != 0 else math.inf


@dataclass(frozen=True)
class SpeciesSummary:
    """Derived quantities of one species (units: seconds and the caller's concentration).

    ``to_dict`` gives a JSON-ready mapping (numbers or None).
    """

    name: str
    start: float
    lifetime: float
    first_order_half_life: float
    half_life: float | None
    half_life_note: str
    time_to_90_percent_remaining: float | None
    time_to_10_percent_remaining: float | None
    t_max: float | None
    c_max: float | None
    t_max_beyond_window: bool
    yield_at_max: float | None
    maxima: tuple[Maximum, ...]
    limit: float | None
    limit_kind: str
    unbounded: bool
    time_to_limit: float | None
    area_to_window_end: float | None
    area_to_infinity: float | None
    mean_residence_time: float | None
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        return {
            "start": _num(self.start),
            "half_life": _num(self.half_life),
            "half_life_note": self.half_life_note or None,
            "time_to_90_percent_remaining": _num(self.time_to_90_percent_remaining),
            "time_to_10_percent_remaining": _num(self.time_to_10_percent_remaining),
            "lifetime": _num(self.lifetime),
            "first_order_half_life": _num(self.first_order_half_life),
            "t_max": _num(self.t_max),
            "c_max": _num(self.c_max),
            "t_max_beyond_window": bool(self.t_max_beyond_window),
            "yield_at_max": _num(self.yield_at_max),
            "maxima": [m.to_dict() for m in self.maxima],
            "limit": _num(self.limit),
            "limit_kind": self.limit_kind,
            "unbounded": bool(self.unbounded),
            "time_to_limit": _num(self.time_to_limit),
            "area_to_window_end": _num(self.area_to_window_end),
            "area_to_infinity": _num(self.area_to_infinity),
            "mean_residence_time": _num(self.mean_residence_time),
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class SchemeSummary:
    """Scheme-wide derived quantities (seconds, caller's concentration unit).

    Attributes
    ----------
    relaxation_times, oscillation_periods, growth_times : tuple of float
        [s], see :class:`RelaxationTimes`.
    defective, nearly_defective : bool
    relaxation_note : str
    time_to_limit : float or None
        [s] every species within ``tolerance`` of its limit (module Definitions).
    time_to_limit_note : str
    tolerance : float
    end_products : tuple of str
    selectivity_at_window_end, selectivity_in_limit : dict of str to float, or None
        Fractional selectivity of each end product.
    yield_basis : float
        [conc] total start concentration the yields refer to.
    limit_notes : tuple of str
    formed_at_window_end, formed_in_limit : dict of str to float, or None
        [conc] amount of each end product formed, Delta c_P.
    """

    relaxation_times: tuple[float, ...]
    oscillation_periods: tuple[float, ...]
    growth_times: tuple[float, ...]
    defective: bool
    nearly_defective: bool
    relaxation_note: str
    time_to_limit: float | None
    time_to_limit_note: str
    tolerance: float
    end_products: tuple[str, ...]
    selectivity_at_window_end: dict[str, float] | None
    selectivity_in_limit: dict[str, float] | None
    yield_basis: float
    limit_notes: tuple[str, ...] = ()
    formed_at_window_end: dict[str, float] | None = None
    formed_in_limit: dict[str, float] | None = None

    def to_dict(self) -> dict[str, Any]:
        def sel(d):
            return None if d is None else {k: _num(v) for k, v in d.items()}

        def ratios(d):
            # S_P/Q = dc_P / dc_Q for each pair of end products, in their order
            if d is None:
                return None
            names = list(d)
            return {
                f"{p}/{q}": _num(d[p] / d[q]) if d[q] != 0 else None
                for k, p in enumerate(names)
                for q in names[k + 1 :]
            }

        return {
            "relaxation_times": [_num(x) for x in self.relaxation_times],
            "oscillation_periods": [_num(x) for x in self.oscillation_periods],
            "growth_times": [_num(x) for x in self.growth_times],
            "defective": bool(self.defective),
            "nearly_defective": bool(self.nearly_defective),
            "relaxation_note": self.relaxation_note or None,
            "time_to_limit": _num(self.time_to_limit),
            "time_to_limit_note": self.time_to_limit_note or None,
            "tolerance": float(self.tolerance),
            "end_products": list(self.end_products),
            "selectivity_at_window_end": sel(self.selectivity_at_window_end),
            "selectivity_in_limit": sel(self.selectivity_in_limit),
            "yield_basis": _num(self.yield_basis),
            "limit_notes": list(self.limit_notes),
            "amount_formed_at_window_end": sel(self.formed_at_window_end),
            "amount_formed_in_limit": sel(self.formed_in_limit),
            "selectivity_ratios_at_window_end": ratios(self.formed_at_window_end),
            "selectivity_ratios_in_limit": ratios(self.formed_in_limit),
        }


# ---------------------------------------------------------------------------------------
# Class structure of K
# ---------------------------------------------------------------------------------------


def _gth(B: np.ndarray) -> np.ndarray:
    """Stationary vector of an irreducible conservative block (column sums zero).

    Grassmann, Taksar & Heyman 1985 state reduction: only off-diagonal rates are used and
    every operation is an addition, multiplication or division of nonnegative numbers, so
    each entry is accurate to a few rounding errors.
    """
    A = np.array(B, dtype=float).T  # row convention: A[i, j] = rate i -> j
    m = A.shape[0]
    np.fill_diagonal(A, 0.0)
    for k in range(m - 1, 0, -1):
        s = A[k, :k].sum()
        A[:k, k] /= s
        A[:k, :k] += np.outer(A[:k, k], A[k, :k])
    pi = np.zeros(m)
    pi[0] = 1.0
    for k in range(1, m):
        pi[k] = pi[:k] @ A[:k, k]
    return pi / pi.sum()


def _null_vector(B: np.ndarray) -> np.ndarray:
    """Positive null vector of a singular irreducible Metzler block (general case)."""
    _, _, vh = np.linalg.svd(B)
    v = np.abs(vh[-1])
    return v / v.sum()


@dataclass
class _Class:
    members: np.ndarray
    kind: str  # "decaying" | "critical" | "growing"
    perron: float
    eigenvalues: np.ndarray
    u: np.ndarray | None = None  # left null vector (critical)
    v: np.ndarray | None = None  # right null vector (critical)
    outlet: bool = False


class _Structure:
    """Strongly connected components of the species graph, in topological order."""

    def __init__(self, Ks: scipy.sparse.csr_array, Kd: np.ndarray | None) -> None:
        n = Ks.shape[0]
        self.n = n
        coo = Ks.tocoo()
        off = coo.row != coo.col
        rows, cols = coo.row[off], coo.col[off]
        comps = condensation(cols, rows, n)  # edge j -> i for K[i, j] > 0
        labels, ncomp, members = comps.labels, comps.count, comps.members
        self.labels = labels
        self.dag = comps.dag
        self.order = comps.order
        self.preds = comps.predecessors
        src, dst = labels[cols], labels[rows]
        cross = src != dst
        outlet = np.zeros(ncomp, dtype=bool)
        outlet[src[cross]] = True
        diag = Ks.diagonal()
        self.classes: list[_Class] = []
        for c in range(ncomp):
            idx = members[c]
            if idx.size == 1:
                r = float(diag[idx[0]])
                kind = "decaying" if r < 0 else ("critical" if r == 0 else "growing")
                one = np.ones(1)
                cl = _Class(idx, kind, r, np.array([r], dtype=complex), one, one, outlet[c])
            else:
                B = Kd[np.ix_(idx, idx)] if Kd is not None else Ks[idx][:, idx].toarray()
                cl = self._classify_block(idx, B, outlet[c])
            self.classes.append(cl)
        self.ncomp = ncomp
        self._rates_cache = None

    @staticmethod
    def _classify_block(idx: np.ndarray, B: np.ndarray, outlet: bool) -> _Class:
        eig = np.linalg.eigvals(B)
        s = B.sum(axis=0)
        tol = 1e-12 * np.abs(B).sum(axis=0)
        if np.all(s <= tol):
            if np.all(np.abs(s) <= tol):
                v = _gth(B)
                kind, perron, u = "critical", 0.0, np.ones(idx.size)
            else:
                # irreducible, column sums <= 0 and one < 0: a nonsingular M-matrix
                # (Berman & Plemmons 1979, ch. 6, condition of diagonal dominance)
                return _Class(idx, "decaying", float(eig.real.max()), eig, outlet=outlet)
        else:
            perron = float(eig.real.max())
            scale = np.abs(B).max()
            if perron > 1e-12 * scale:
                return _Class(idx, "growing", perron, eig, outlet=outlet)
            if perron < -1e-12 * scale:
                return _Class(idx, "decaying", perron, eig, outlet=outlet)
            kind, perron = "critical", 0.0
            v = _null_vector(B)
            u = _null_vector(B.T)
        # the Perron eigenvalue of a critical class is exactly zero
        k = int(np.argmin(np.abs(eig)))
        eig = eig.copy()
        eig[k] = 0.0
        return _Class(idx, kind, perron, eig, u, v, outlet)

    def downstream(self, marks: np.ndarray, inclusive: bool = True) -> np.ndarray:
        """Classes reachable from the marked classes (including them if ``inclusive``)."""
        out = np.zeros(self.ncomp, dtype=bool)
        for c in self.order:
            hit = any(out[p] or marks[p] for p in self.preds[c])
            out[c] = hit or (inclusive and marks[c])
        return out

    def species_to_classes(self, mask: np.ndarray) -> np.ndarray:
        out = np.zeros(self.ncomp, dtype=bool)
        out[self.labels[mask]] = True
        return out

    def rates(self) -> np.ndarray:
        """Nonzero time-scale rates [1/s]: |Re|, |Im| of nonzero eigenvalues, outflows."""
        if self._rates_cache is None:
            parts = []
            for cl in self.classes:
                ev = cl.eigenvalues
                parts.append(np.abs(ev.real))
                parts.append(np.abs(ev.imag))
            r = np.concatenate(parts) if parts else np.zeros(0)
            self._rates_cache = r[r > 0]
        return self._rates_cache


# ---------------------------------------------------------------------------------------
# The analysis context: one scheme, one start, one feed
# ---------------------------------------------------------------------------------------


#: Largest scheme whose reported quantities use the double-double engine.
_FULL_PRECISION_MAX = 20
#: Larger schemes too when sigma t over the scan exceeds this (plain double would lose
#: more than the 1e-12 rounding-noise level assumed for the scan).
_DOUBLE_SIGMA_T = 1e4


class _Context:
    """Shared work for all derived quantities of one problem (K, c0, feed)."""

    def __init__(self, K, c0, feed=None, *, names=None, t_window=None, K_low=None) -> None:
        self.Kd, self.Ks = _check_matrix(K)
        n = self.Ks.shape[0]
        self.n = n
        # low-order parts of K (the exact matrix is K + K_low, see
        # kinetics.ratematrix.rate_matrix_pair): every propagation takes them
        self.K_low = None
        if K_low is not None:
            self.K_low = (
                checks.low_parts(K_low, (n, n), "K_low")
                if self.Kd is not None
                else scipy.sparse.csr_array(K_low, dtype=float)
            )
        self.c0 = _check_vector(c0, n, "c0", "start concentrations, one per species, >= 0")
        if feed is None:
            self.f = np.zeros(n)
            self.feed = None
        else:
            self.f = _check_vector(feed, n, "feed", "zero-order feed rates [conc/s], >= 0")
            self.feed = self.f if self.f.any() else None
        if names is None:
            names = [f"species {i}" for i in range(n)]
        names = [str(x) for x in names]
        if len(names) != n:
            raise UsageError(f"{len(names)} species names for {n} species", "one name per row")
        self.names = names
        self.t_window = None if t_window is None else _check_positive_time(t_window, "t_window")
        window = self.t_window or 0.0
        amount = float(self.c0.sum() + self.f.sum() * window)
        check_working_range(-self.Ks.diagonal(), window, names, amount)
        self.struct = _Structure(self.Ks, self.Kd)
        self.absK = abs(self.Ks)
        self._limit: tuple | None = None
        self._grid: dict | None = None
        self._stat: list | None = None
        # every value (scan and refinement) from the entrywise engine in full ("auto")
        # precision on small schemes; above _FULL_PRECISION_MAX species its plain-double
        # route, whose entrywise error (about 1e-16 per unit of sigma t) stays below the
        # rounding-noise level assumed here unless the scheme is stiff over the scan
        span = self._scan_span()
        sigma_t = float(np.max(-self.Ks.diagonal())) * (span[1] if span else 0.0)
        small = n <= _FULL_PRECISION_MAX
        self.precision = "auto" if small or sigma_t > _DOUBLE_SIGMA_T else "double"
        # exact split K c0 + f = g+ - g- of the derivative at t = 0 (see _state)
        self._split = None
        if self.Kd is not None and n <= DENSE_MAX:
            diag = np.diag(self.Kd)
            gp = (self.Kd - np.diag(diag)) @ self.c0 + self.f
            self._split = (gp, -diag * self.c0)

    # -- matrix helpers ----------------------------------------------------------------
    @property
    def K(self):
        return self.Kd if self.Kd is not None else self.Ks

    def _apply(self, X: np.ndarray) -> np.ndarray:
        """Rows of X times K^T, i.e. K x for each row x."""
        if self.Kd is not None:
            return X @ self.Kd.T
        return (self.Ks @ X.T).T

    def _noise_d(self, C: np.ndarray) -> np.ndarray:
        return _REL_NOISE_D * ((self.absK @ C.T).T + np.abs(self.f))

    def _propagate(self, times: np.ndarray, precision: str | None = None) -> np.ndarray:
        """c at arbitrary (unsorted) times, one engine call."""
        times = np.asarray(times, dtype=float)
        if times.size == 0:
            return np.zeros((0, self.n))
        order = np.argsort(times, kind="stable")
        out = np.empty((times.size, self.n))
        precision = precision or self.precision
        out[order] = propagate(
            self.K, self.c0, times[order], self.feed, precision=precision, K_low=self.K_low
        )
        return out

    def _state(self, times: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        r"""c, its exact derivative :math:`d = Kc + f` and the noise of ``d`` at (unsorted) times.

        Two evaluations of the derivative, and per entry the one with the smaller
        rounding noise is kept:

        * :math:`Kc + f` from the propagated ``c`` (noise :math:`10^{-12}(|K|c + f)`);
        * :math:`d(t) = e^{tK} g^+ - e^{tK} g^-` with the exact split
          :math:`Kc_0 + f = g^+ - g^-`, :math:`g^+ = K_{off} c_0 + f`,
          :math:`g^- = -\operatorname{diag}(K) c_0` (both >= 0), each propagated entrywise
          accurately (noise: the larger of :math:`10^{-12}` and the engine's bound, times
          :math:`e^{tK}(g^+ + g^-)`).

        The second one keeps the sign of the derivative of a species in quasi-steady state
        (inflow and outflow equal to many digits, e.g. a short-lived daughter of a
        long-lived parent), where :math:`Kc + f` is pure cancellation.  Dense schemes only
        (up to :data:`kinetics.propagate.DENSE_MAX` species); larger ones use the first.
        """
        times = np.asarray(times, dtype=float)
        C = self._propagate(times)
        D = self._apply(C) + self.f
        N = self._noise_d(C)
        # the second evaluation only where the first leaves a sign unknown
        unknown = np.flatnonzero(np.any((np.abs(D) <= N) & (N > 0), axis=1))
        if self._split is None or unknown.size == 0:
            return C, D, N
        t = times[unknown]
        order = np.argsort(t, kind="stable")
        Kd = self.Kd
        Kl = np.zeros_like(Kd) if self.K_low is None else self.K_low
        X, bound = propagate_batch(
            np.stack([Kd, Kd]),
            np.stack(self._split),
            t[order],
            precision=self.precision,
            return_bound=True,
            K_low=np.stack([Kl, Kl]),
        )
        P, Q = np.empty((2, t.size, self.n))
        P[order], Q[order] = X[0], X[1]
        rel = np.empty(t.size)
        rel[order] = np.maximum(bound.max(axis=0), _REL_NOISE_D)
        N_split = rel[:, None] * (P + Q)
        better = N_split < N[unknown]
        D[unknown] = np.where(better, P - Q, D[unknown])
        N[unknown] = np.where(better, N_split, N[unknown])
        return C, D, N

    def _solve_block(self, cl: _Class, rhs: np.ndarray) -> np.ndarray:
        """x = (-K_CC)^{-1} rhs for a decaying class (a nonsingular M-matrix)."""
        idx = cl.members
        if idx.size == 1:
            return rhs / -float(self.Ks[idx[0], idx[0]])
        B = self.Kd[np.ix_(idx, idx)] if self.Kd is not None else self.Ks[idx][:, idx].toarray()
        return scipy.linalg.solve(-B, rhs)

    def _inflow(self, cl: _Class, x: np.ndarray) -> np.ndarray:
        """sum over other species j of K[i, j] x_j for the members i of a class."""
        idx = cl.members
        rows = self.Ks[idx]
        tot = rows @ x
        return tot - rows[:, idx] @ x[idx]

    # -- long-time limit -----------------------------------------------------------------
    def limit_parts(self):
        """(Limit, X) with X = area to infinity per species (inf where infinite)."""
        if self._limit is not None:
            return self._limit
        st = self.struct
        n = self.n
        has_c0 = st.species_to_classes(self.c0 > 0)
        has_f = st.species_to_classes(self.f > 0)
        q = np.full(st.ncomp, _NEVER)
        L = np.zeros(n)
        X = np.zeros(n)
        rate = np.full(n, np.nan)
        gexp = np.full(st.ncomp, np.nan)
        for c in st.order:
            cl = st.classes[c]
            idx = cl.members
            forcing = max((q[p] for p in st.preds[c]), default=_NEVER)
            if has_f[c]:
                forcing = max(forcing, _CONST)
            reached = has_c0[c] or has_f[c] or forcing > _NEVER
            if not reached:
                continue
            if cl.kind == "growing" or forcing >= _EXP:
                q[c] = _EXP
            elif cl.kind == "critical":
                q[c] = forcing + 1 if forcing >= _CONST else _CONST
            else:
                q[c] = forcing if forcing >= _CONST else _DECAY
            if q[c] == _DECAY:
                # transient: X_C = (-K_CC)^{-1} (c0_C + inflow of upstream areas)
                X[idx] = self._solve_block(cl, self.c0[idx] + self._inflow(cl, X))
            elif q[c] == _CONST and cl.kind == "critical":
                # closed class: keeps what it starts with plus all that flows in
                amount = cl.u @ (self.c0[idx] + self._inflow(cl, X))
                L[idx] = cl.v * amount / (cl.u @ cl.v)
                X[idx] = np.inf
            elif q[c] == _CONST:
                L[idx] = self._solve_block(cl, self.f[idx] + self._inflow(cl, L))
                X[idx] = np.inf
            else:
                L[idx] = np.inf
                X[idx] = np.inf
                if q[c] == 1 and cl.kind == "critical":
                    Lfin = np.where(np.isfinite(L), L, 0.0)
                    total = cl.u @ (self.f[idx] + self._inflow(cl, Lfin))
                    rate[idx] = cl.v * total / (cl.u @ cl.v)
                elif q[c] == 1:
                    r = np.where(np.isfinite(rate), rate, 0.0)
                    rate[idx] = self._solve_block(cl, self._inflow(cl, r))
                elif q[c] >= _EXP:
                    # growth exponent: the largest Perron root of a growing class upstream
                    ups = [gexp[p] for p in st.preds[c] if q[p] >= _EXP]
                    own = [cl.perron] if cl.kind == "growing" else []
                    gexp[c] = max(ups + own)
                    rate[idx] = gexp[c]
        self.q = q
        kinds: list[str] = []
        growth: list[str | None] = []
        for i in range(n):
            c = st.labels[i]
            cl = st.classes[c]
            qc = q[c]
            if qc == _NEVER:
                kinds.append("not formed")
            elif qc == _DECAY:
                kinds.append("transient")
            elif qc == _CONST and cl.kind == "critical":
                if cl.members.size > 1:
                    kinds.append("equilibrium")
                elif not st.preds[c]:
                    kinds.append("inert")
                else:
                    kinds.append("end product")
            elif qc == _CONST:
                kinds.append("steady state")
            else:
                kinds.append("unbounded")
            if qc >= _EXP:
                growth.append("exponential")
            elif qc == 1:
                growth.append("linear")
            elif qc > 1:
                growth.append("polynomial")
            else:
                growth.append(None)
        unb = np.isinf(L)
        notes = self._limit_notes(q, growth, rate)
        lim = Limit(L, unb, tuple(kinds), tuple(growth), rate, tuple(notes))
        self._limit = (lim, X)
        return self._limit

    def _limit_notes(self, q, growth, rate) -> list[str]:
        st = self.struct
        notes: list[str] = []
        self.note_of: dict[int, tuple[str, ...]] = {}
        for kind in ("exponential", "linear", "polynomial"):
            who = [i for i in range(self.n) if growth[i] == kind]
            if not who:
                continue
            names = ", ".join(self.names[i] for i in who)
            verb = "grows" if len(who) == 1 else "grow"
            if kind == "linear":
                fed = [
                    i
                    for i in who
                    if st.classes[st.labels[i]].kind == "critical" and np.isfinite(rate[i])
                ]
                detail = "; ".join(
                    f"{self.names[i]} by about {rate[i]:.6g} per second" for i in fed
                )
                notes.append(
                    f"{names} {verb} without bound: a feed reaches "
                    f"{'it' if len(who) == 1 else 'them'} (directly or through other species) "
                    "and there is no outlet, so the concentration rises steadily"
                    + (f" ({detail} at long times)" if detail else "")
                    + "; there is no finite limit."
                )
            elif kind == "polynomial":
                notes.append(
                    f"{names} {verb} without bound like a power of t: material keeps flowing "
                    "out of one species without outlet into another; there is no finite limit."
                )
            else:
                r = float(max(rate[i] for i in who))
                notes.append(
                    f"{names} {verb} without bound, exponentially (about e^({r:.6g} t) with t "
                    "in s): a cycle of steps makes more of its members than it uses "
                    "(stoichiometric factors above one); there is no finite limit."
                )
            for i in who:
                self.note_of[i] = (notes[-1],)
        return notes

    # -- scan grid -------------------------------------------------------------------------
    def _scan_span(self) -> tuple[float, float] | None:
        r = self.struct.rates()
        if r.size == 0:
            return None
        t_lo = _SCAN_FAST / r.max()
        t_hi = _SCAN_SLOW / r.min()
        grow = [cl.perron for cl in self.struct.classes if cl.kind == "growing"]
        if grow:
            t_hi = min(t_hi, 300.0 / max(grow))
        t_hi = max(t_hi, 10 * t_lo)
        # within the working range (quantities later than that are reported as not found)
        sigma = float(np.max(-self.Ks.diagonal()))
        t_hi = min(t_hi, MAX_TIME, MAX_LIFETIMES / sigma if sigma > 0 else MAX_TIME)
        return t_lo, t_hi

    def _base_times(self) -> np.ndarray:
        """Scan times: a log-like grid made of octaves [2^e, 2^(e+1)) with 8 equal steps
        each (about 27 points per decade).  All points are exact binary multiples of their
        octave's step, so the engine needs one exponential per octave (it reuses the
        exponential of a repeated step)."""
        span = self._scan_span()
        if span is None:
            return np.array([0.0, self.t_window or 1.0])
        t_lo, t_hi = span
        e0 = math.floor(math.log2(t_lo))
        e1 = math.ceil(math.log2(t_hi))
        per = _PER_OCTAVE
        while per > 2 and (e1 - e0) * per > _MAX_LOG_POINTS:
            per //= 2
        parts = [np.zeros(1)]
        for e in range(e0, e1):
            base = 2.0**e
            parts.append(base + (base / per) * np.arange(per))
        parts.append(np.array([2.0**e1]))
        # damped oscillations (complex pairs from cycles): about 8 points per period
        osc = []
        for cl in self.struct.classes:
            for ev in cl.eigenvalues:
                a, b = -ev.real, abs(ev.imag)
                if b > 0.2 * abs(a) and b > 0:
                    t_end = min(t_hi, 35.0 / a) if a > 0 else t_hi
                    step = 2.0 ** math.floor(math.log2(2 * math.pi / b / 8))
                    osc.append([step, t_end])
        total = sum(t_end / step for step, t_end in osc)
        while total > _MAX_OSC_POINTS:
            for o in osc:
                o[0] *= 2
            total = sum(t_end / step for step, t_end in osc)
        for step, t_end in osc:
            parts.append(step * np.arange(1, math.ceil(t_end / step) + 1))
        if self.t_window is not None and self.t_window <= t_hi:
            parts.append(np.array([self.t_window]))
        return np.unique(np.concatenate(parts))

    def grid(self) -> dict:
        """Scan grid with c, K c + f, K (K c + f) and derivative noise at each point."""
        if self._grid is not None:
            return self._grid
        T = self._base_times()
        g = self._eval_grid(T, *self._state(T))
        for _ in range(3):
            new = self._hidden_turns(g)
            if new.size == 0:
                break
            Cn, Dn, Nn = self._state(new)
            T = np.concatenate([g["T"], new])
            order = np.argsort(T, kind="stable")
            parts = zip("CDN", (Cn, Dn, Nn), strict=True)
            C, D, N = (np.concatenate([g[k], x])[order] for k, x in parts)
            g = self._eval_grid(T[order], C, D, N)
        self._grid = g
        return g

    def _eval_grid(self, T, C, D, N) -> dict:
        ok = np.all(np.isfinite(C), axis=1)
        T, C, D, N = T[ok], C[ok], D[ok], N[ok]
        D2 = self._apply(D)
        # rounding noise of K (K c + f): the noise of each d_j carried through |K|
        N2 = (self.absK @ (N + _REL_NOISE_D * np.abs(D)).T).T
        D3 = self._apply(D2)
        N3 = (self.absK @ (N2 + _REL_NOISE_D * np.abs(D2)).T).T
        return {"T": T, "C": C, "D": D, "D2": D2, "D3": D3, "N": N, "N2": N2, "N3": N3}

    def _hidden_turns(self, g: dict) -> np.ndarray:
        """New points inside intervals where a cubic Hermite model of the derivative
        (from its values and slopes at both ends) changes sign although the end values
        have the same sign: two turning points may hide between the grid points."""
        T, D, D2, N = g["T"], g["D"], g["D2"], g["N"]
        if T.size < 2:
            return np.zeros(0)
        s = np.sign(D) * (np.abs(D) > N)
        s2 = np.sign(D2) * (np.abs(D2) > g["N2"])
        same = (s[:-1] == s[1:]) & (s[:-1] != 0)
        # a hidden pair of turning points needs the derivative to move towards zero at
        # the left end and away from it at the right end
        same &= (s2[:-1] == -s[:-1]) & (s2[1:] == s[:-1])
        if not same.any():
            return np.zeros(0)
        h = np.diff(T)[:, None]
        g0, g1, m0, m1 = D[:-1], D[1:], h * D2[:-1], h * D2[1:]
        tol = np.maximum(N[:-1], N[1:])
        flag = np.zeros_like(same)
        for x in np.linspace(0.0, 1.0, 17)[1:-1]:
            h00, h10, h01, h11 = _hermite_basis(x)
            p = h00 * g0 + h10 * m0 + h01 * g1 + h11 * m1
            flag |= same & (np.sign(p) != s[:-1]) & (np.abs(p) > tol)
        k = np.flatnonzero(flag.any(axis=1))
        if k.size == 0:
            return np.zeros(0)
        k = k[:400]
        frac = np.arange(1, 8) / 8.0
        new = (T[k][:, None] + (T[k + 1] - T[k])[:, None] * frac[None, :]).ravel()
        return np.setdiff1d(new, T)

    # -- root finding --------------------------------------------------------------------
    def _roots(self, a, b, ga, gb, gpa, gpb, gppa, gppb, species, level, deriv, na, nb):
        """Safeguarded Newton iteration for many bracketed roots at once.

        Solves g_k(t) = 0 on [a_k, b_k] with sign(g(a)) != sign(g(b)), where
        g_k = (K c + f)_i (``deriv``, a turning point of c_i) or c_i - level_k (a level
        crossing), i = species_k.  The slope g' is exact too: (K (K c + f))_i or
        (K c + f)_i.  Start: root of the cubic Hermite model from the bracket ends;
        then Newton steps on the exact solution, one engine call per round for all
        problems, keeping the bracket; a step leaving the bracket or a stalling bracket
        falls back to bisection.  Converged when the Newton step is below 1e-9 of t
        (error then ~1e-18 t), when |g| is at rounding-noise level, or when the bracket
        is below 1e-13 relative.

        Returns (roots [s], c_i at the roots [conc]).
        """
        a = np.array(a, dtype=float)
        b = np.array(b, dtype=float)
        ga = np.array(ga, dtype=float)
        gb = np.array(gb, dtype=float)
        species = np.asarray(species, dtype=int)
        level = np.asarray(level, dtype=float)
        deriv = np.asarray(deriv, dtype=bool)
        m = a.size
        na = np.array(na, dtype=float)
        nb = np.array(nb, dtype=float)
        x, curv = _hermite_root(
            a,
            b,
            ga,
            gb,
            np.asarray(gpa, float),
            np.asarray(gpb, float),
            np.asarray(gppa, float),
            np.asarray(gppb, float),
        )
        root = np.full(m, np.nan)
        value = np.full(m, np.nan)
        wref = b - a
        active = np.ones(m, dtype=bool)
        # an end already at rounding-noise level is the root (as good as any nearby)
        qa, qb = np.abs(ga) <= na, np.abs(gb) <= nb
        for q, t in ((qa, a), (qb & ~qa, b)):
            root[q] = t[q]
            active[q] = False
        for it in range(200):
            k = np.flatnonzero(active)
            if k.size == 0:
                break
            C, D, N1 = self._state(x[k])
            rows = np.arange(k.size)
            sp = species[k]
            ci, di = C[rows, sp], D[rows, sp]
            D2 = self._apply(D)
            d2i = D2[rows, sp]
            d3i = self._apply(D2)[rows, sp]
            N2 = (self.absK @ (N1 + _REL_NOISE_D * np.abs(D)).T).T
            N3 = (self.absK @ (N2 + _REL_NOISE_D * np.abs(D2)).T).T
            dk = deriv[k]
            g = np.where(dk, di, ci - level[k])
            gp = np.where(dk, d2i, di)
            # bound on |g''| (value plus its rounding noise) for the Newton error estimate
            exact = np.where(dk, np.abs(d3i), np.abs(d2i))
            known = exact > np.where(dk, N3[rows, sp], N2[rows, sp])
            # exact |g''| where it stands above its rounding noise, else 4x the model's
            gpp = np.where(known, exact, 4 * curv[k])
            noise = np.where(dk, N1[rows, sp], _REL_NOISE_C * np.maximum(ci, level[k]))
            left = np.sign(g) == np.sign(ga[k])
            a[k[left]], ga[k[left]] = x[k[left]], g[left]
            b[k[~left]], gb[k[~left]] = x[k[~left]], g[~left]
            na[k[left]], nb[k[~left]] = noise[left], noise[~left]
            xk = x[k]
            with np.errstate(divide="ignore", invalid="ignore"):
                xn = xk - g / gp
            inside = np.isfinite(xn) & (xn > a[k]) & (xn < b[k])
            # Newton error after the step: |g''/(2 g')| dt^2 (Taylor), wanted below 1e-13 t
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                est = gpp / (2 * np.abs(gp)) * (xn - xk) ** 2
            small = (np.abs(xn - xk) <= 1e-9 * np.abs(xk)) | (est <= 1e-13 * np.abs(xk))
            quiet = np.abs(g) <= noise
            tight = (b[k] - a[k]) <= _XTOL * np.abs(b[k])
            stop = (g == 0) | quiet
            done = stop | (inside & small) | tight
            near = np.clip(np.where(np.isfinite(xn), xn, xk), a[k], b[k])
            r = np.where(stop, near, np.where(inside, xn, 0.5 * (a[k] + b[k])))
            dt = r - xk
            # value at the root from the last exact evaluation (Taylor, |dt| tiny)
            v = ci + di * dt + 0.5 * d2i * dt * dt
            root[k[done]] = r[done]
            value[k[done]] = v[done]
            active[k[done]] = False
            nd = ~done
            if it % 3 == 2:
                slow = (b[k] - a[k]) > 0.5 * wref[k]
                wref[k] = b[k] - a[k]
            else:
                slow = np.zeros(k.size, dtype=bool)
            mid = 0.5 * (a[k] + b[k])
            with np.errstate(divide="ignore", invalid="ignore"):
                sec = b[k] - gb[k] * (b[k] - a[k]) / (gb[k] - ga[k])
            ok_sec = np.isfinite(sec) & (sec > a[k]) & (sec < b[k]) & ~slow
            fall = np.where(ok_sec, sec, mid)
            x[k[nd]] = np.where((~inside | slow)[nd], fall[nd], xn[nd])
        left = np.isnan(root)
        root[left] = 0.5 * (a + b)[left]
        left |= np.isnan(value)
        if left.any():
            C = self._propagate(root[left])
            value[left] = C[np.arange(C.shape[0]), species[left]]
        return root, value

    # -- stationary points ---------------------------------------------------------------
    def stationary(self) -> list[dict]:
        """Per species: times, heights and types (+1 max, -1 min) of turning points."""
        if self._stat is not None:
            return self._stat
        g = self.grid()
        T, D, D2, N = g["T"], g["D"], g["D2"], g["N"]
        s = np.sign(D) * (np.abs(D) > N)
        A, B, GA, GB, PA, PB, QA, QB, SP, TY, NA, NB = ([] for _ in range(12))
        D3, N3 = g["D3"], g["N3"]
        for i in range(self.n):
            sig = np.flatnonzero(s[:, i])
            if sig.size < 2:
                continue
            ss = s[sig, i]
            for k in np.flatnonzero(ss[:-1] != ss[1:]):
                ia, ib = sig[k], sig[k + 1]
                A.append(T[ia])
                B.append(T[ib])
                GA.append(D[ia, i])
                GB.append(D[ib, i])
                PA.append(D2[ia, i])
                PB.append(D2[ib, i])
                QA.append(D3[ia, i] if abs(D3[ia, i]) > N3[ia, i] else np.nan)
                QB.append(D3[ib, i] if abs(D3[ib, i]) > N3[ib, i] else np.nan)
                NA.append(N[ia, i])
                NB.append(N[ib, i])
                SP.append(i)
                TY.append(1 if ss[k] > 0 else -1)
        empty = {"t": np.zeros(0), "c": np.zeros(0), "type": np.zeros(0, dtype=int)}
        stat = [dict(empty) for _ in range(self.n)]
        if A:
            SP = np.array(SP)
            TY = np.array(TY)
            ones = np.ones(len(A), dtype=bool)
            t, h = self._roots(A, B, GA, GB, PA, PB, QA, QB, SP, np.zeros(len(A)), ones, NA, NB)
            for i in np.unique(SP):
                sel = SP == i
                o = np.argsort(t[sel])
                stat[i] = {"t": t[sel][o], "c": h[sel][o], "type": TY[sel][o]}
        self._stat = stat
        return stat

    def samples(self, i: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Times, values, slopes and curvatures (nan if unknown) of c_i on the grid plus
        its turning points.

        Between consecutive samples c_i is monotone (every turning point is a sample)."""
        g = self.grid()
        st = self.stationary()[i]
        t = np.concatenate([g["T"], st["t"]])
        v = np.concatenate([g["C"][:, i], st["c"]])
        d = np.concatenate([g["D"][:, i], np.zeros(st["t"].size)])
        sig = np.abs(g["D2"][:, i]) > g["N2"][:, i]
        d2 = np.concatenate([np.where(sig, g["D2"][:, i], np.nan), np.full(st["t"].size, np.nan)])
        o = np.argsort(t, kind="stable")
        return t[o], v[o], d[o], d2[o]

    # -- quantities ----------------------------------------------------------------------
    def maxima(self, i: int) -> list[Maximum]:
        st = self.stationary()[i]
        lim, _ = self.limit_parts()
        sel = st["type"] == 1
        times, heights = st["t"][sel], st["c"][sel]
        if times.size == 0:
            return []
        top = int(np.argmax(heights))
        ceiling = max(self.c0[i], lim.values[i])
        is_global = heights[top] >= ceiling * (1 - 1e-12)
        w = self.t_window
        return [
            Maximum(
                i,
                float(times[k]),
                float(heights[k]),
                beyond_window=bool(w is not None and times[k] > w),
                is_global=bool(is_global and k == top),
            )
            for k in range(times.size)
        ]

    def _level_roots(self, probs: list[tuple]) -> np.ndarray:
        """Roots of c_i(t) = level on monotone sample intervals [ka, kb] of species i."""
        if not probs:
            return np.zeros(0)
        A, B, GA, GB, PA, PB, QA, QB, SP, LV = ([] for _ in range(10))
        for i, (t, v, d, d2), ka, kb, lev in probs:
            QA.append(d2[ka])
            QB.append(d2[kb])
            A.append(t[ka])
            B.append(t[kb])
            GA.append(v[ka] - lev)
            GB.append(v[kb] - lev)
            PA.append(d[ka])
            PB.append(d[kb])
            SP.append(i)
            LV.append(lev)
        no = np.zeros(len(A), dtype=bool)
        A, B, GA, GB, LV = (np.array(x, dtype=float) for x in (A, B, GA, GB, LV))
        NA = _REL_NOISE_C * np.maximum(np.abs(GA + LV), LV)
        NB = _REL_NOISE_C * np.maximum(np.abs(GB + LV), LV)
        return self._roots(A, B, GA, GB, PA, PB, QA, QB, SP, LV, no, NA, NB)[0]

    def fraction_times(self, requests: Sequence[tuple[int, float]]) -> list[FractionTime]:
        """First times c_i = phi c0_i for each (i, phi), found together."""
        lim, _ = self.limit_parts()
        out: list[FractionTime | None] = [None] * len(requests)
        probs, where = [], []
        for r, (i, phi) in enumerate(requests):
            name = self.names[i]
            c0 = self.c0[i]
            if c0 <= 0:
                out[r] = FractionTime(
                    i, phi, None, f"{name} starts at zero, so a fraction of its start is undefined"
                )
                continue
            target = phi * c0
            smp = self.samples(i)
            t, v = smp[0], smp[1]
            gv = v - target
            noise = _REL_NOISE_C * np.maximum(v, target)
            s = np.sign(gv) * (np.abs(gv) > noise)
            neg = np.flatnonzero(s < 0)
            if neg.size:
                kb = int(neg[0])
                ka = int(np.flatnonzero(s[:kb] > 0)[-1])
                probs.append((i, smp, ka, kb, target))
                where.append(r)
                continue
            out[r] = FractionTime(i, phi, None, self._never_reason(i, phi, lim, t[-1]))
        for r, t in zip(where, self._level_roots(probs), strict=True):
            i, phi = requests[r]
            out[r] = FractionTime(i, phi, float(t), "")
        return out  # type: ignore[return-value]

    def _never_reason(self, i: int, phi: float, lim: Limit, t_end: float) -> str:
        name = self.names[i]
        pct = f"{100 * phi:g} %"
        L = lim.values[i]
        c0 = self.c0[i]
        if self.Ks[i, i] == 0:
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
        return f"{name} did not fall to {pct} of its start value within the scanned {t_end:.6g} s"

    def time_to_limit(self, tolerance: float) -> TimeToLimit:
        lim, _ = self.limit_parts()
        n = self.n
        per = np.full(n, np.nan)
        L = lim.values
        finite = L[~lim.unbounded]
        big = finite.max(initial=0.0)
        big = big if big > 0 else self.c0.max()
        probs = []
        for i in range(n):
            if lim.unbounded[i]:
                continue  # no limit to approach; the others are still timed
            thr = tolerance * (L[i] if L[i] > 0 else big)
            smp = self.samples(i)
            v = smp[1]
            dev = np.abs(v - L[i]) - thr
            noise = _REL_NOISE_C * np.maximum(v, L[i])
            s = np.sign(dev) * (np.abs(dev) > noise)
            out_band = np.flatnonzero(s > 0)
            if out_band.size == 0:
                per[i] = 0.0
                continue
            ka = int(out_band[-1])
            inside = np.flatnonzero(s[ka + 1 :] < 0)
            if inside.size == 0:
                per[i] = np.inf  # not settled within the scan
                continue
            kb = ka + 1 + int(inside[0])
            lev = L[i] + thr if v[ka] > L[i] else L[i] - thr
            probs.append((i, smp, ka, kb, lev))
        if probs:
            per[np.array([p[0] for p in probs])] = self._level_roots(probs)
        if not lim.bounded:
            who = ", ".join(self.names[i] for i in np.flatnonzero(lim.unbounded))
            verb = "grows" if lim.unbounded.sum() == 1 else "grow"
            return TimeToLimit(None, per, tolerance, f"no finite limit: {who} {verb} without bound")
        if np.isinf(per).any():
            return TimeToLimit(None, per, tolerance, "not settled within the scanned time span")
        return TimeToLimit(float(per.max()), per, tolerance, "")

    def areas(self, times_end: np.ndarray) -> np.ndarray:
        """Exact int_0^T c dt via the augmented system d(area)/dt = c (Van Loan 1978)."""
        n = self.n
        Kal = None
        if self.Kd is not None:
            Ka = np.zeros((2 * n, 2 * n))
            Ka[:n, :n] = self.Kd
            Ka[n:, :n] = np.eye(n)
            if self.K_low is not None:
                Kal = np.zeros((2 * n, 2 * n))
                Kal[:n, :n] = self.K_low
        else:
            eye = scipy.sparse.identity(n, format="csr")
            Ka = scipy.sparse.bmat([[self.Ks, None], [eye, None]], format="csr")
            Ka = scipy.sparse.csr_array(Ka)
        c0a = np.concatenate([self.c0, np.zeros(n)])
        fa = None if self.feed is None else np.concatenate([self.f, np.zeros(n)])
        order = np.argsort(times_end, kind="stable")
        out = np.empty((times_end.size, n))
        out[order] = propagate(Ka, c0a, times_end[order], fa, K_low=Kal)[:, n:]
        return out


# ---------------------------------------------------------------------------------------
# Public functions
# ---------------------------------------------------------------------------------------


def lifetimes(K) -> tuple[np.ndarray, np.ndarray]:
    r"""First-order lifetime and half-life of each species from its total outflow.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].

    Returns
    -------
    lifetime : ndarray
        :math:`\tau_i` [s], ``inf`` for a species with no outgoing step.
    first_order_half_life : ndarray
        :math:`\ln 2\,\tau_i` [s].

    .. math::

        \tau_i = \frac{1}{\sum k_{out}(i)} = -\frac{1}{K_{ii}}, \qquad
        t_{1/2,i} = \ln 2 \, \tau_i

    Notes
    -----
    The survival time of one molecule of ``i`` once formed; equal to the half-life of
    :math:`c_i` only when ``i`` is not formed by any step.

    References
    ----------
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014), first-order reactions.
    """
    _, Ks = _check_matrix(K)
    k_out = -Ks.diagonal()
    with np.errstate(divide="ignore"):
        tau = np.where(k_out > 0, 1.0 / np.where(k_out > 0, k_out, 1.0), np.inf)
    return tau, math.log(2.0) * tau


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
    """
    ctx = _Context(K, c0, feed)
    i = _check_index(i, ctx.n)
    fraction = _check_fraction(fraction, "fraction")
    return ctx.fraction_times([(i, fraction)])[0]


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
    """
    return half_life_detail(K, c0, i, feed).time


def intermediate_maxima(K, c0, i: int, feed=None, t_window: float | None = None) -> list[Maximum]:
    r"""Every local maximum of :math:`c_i(t)` over :math:`t > 0`.

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
    t_window : float, optional
        End of the chosen time window [s]; later maxima are flagged ``beyond_window``.

    Returns
    -------
    list of Maximum
        In time order; the global one (if any) has ``is_global=True``.

    .. math::

        \frac{dc_i}{dt} = (K c(t) + f)_i = 0, \qquad
        t_{max} = \frac{\ln(k_1/k_2)}{k_1 - k_2}, \;
        c_{B,max} = A_0 \left(\frac{k_1}{k_2}\right)^{k_2/(k_2-k_1)}
        \text{ for } A \to B \to C

    Notes
    -----
    The derivative is evaluated exactly from the solution on a log-spaced scan from
    1e-3 of the fastest to 50 of the slowest time constant of ``K`` (8 points per octave,
    about 27 per decade, plus about 8 points per period for damped oscillations), refined
    where a cubic model of the derivative suggests two hidden turning points.  Each + to -
    sign change is refined by a safeguarded Newton iteration on the exact derivative (its
    slope :math:`(K(Kc+f))_i` is exact too), started from the quintic Hermite model of the
    bracket and never leaving the bracket, to about 1e-13 relative in time.  Signs of derivatives
    smaller than 1e-12 of the flux magnitudes are treated as unknown (rounding noise).

    References
    ----------
    Bateman, H. Proc. Cambridge Philos. Soc. 15, 423-427 (1910).
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014), consecutive reactions.
    """
    ctx = _Context(K, c0, feed, t_window=t_window)
    i = _check_index(i, ctx.n)
    return ctx.maxima(i)


def long_time_limit(K, c0, feed=None, *, names: Sequence[str] | None = None) -> Limit:
    r"""The exact long-time limit :math:`c(\infty)`.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    names : sequence of str, optional
        Species names for the notes.

    Returns
    -------
    Limit

    .. math::

        c_C(\infty) = \frac{v_C\, u_C^T\left(c_{0,C} + K_{CT} X_T\right)}{u_C^T v_C},
        \quad X_T = -K_{TT}^{-1} c_{0,T}, \qquad
        c_S(\infty) = -K_{SS}^{-1}\left(f_S + K_{S\cdot}\, c(\infty)\right)

    for closed classes C (left/right null vectors u, v; u = 1 for conservative schemes),
    transient classes T upstream, and fed transient classes S.

    Notes
    -----
    Classes are the strongly connected components of the species graph, treated in
    topological order (Berman & Plemmons 1979, ch. 8).  A class is closed when its
    column sums vanish to 1e-12 relative (or its Perron root does, for stoichiometric
    factors other than one).  For ``A <=> B`` the limit of A is
    :math:`A_0 k_r/(k_f+k_r)`.  Growth without bound is detected from the class structure
    (feed reaching a class without outlet: linear; a chain of such classes: polynomial;
    a class whose Perron root is positive: exponential).

    References
    ----------
    Berman, A.; Plemmons, R. J. "Nonnegative Matrices in the Mathematical Sciences",
    Academic Press (1979).
    Grassmann, W. K.; Taksar, M. I.; Heyman, D. P. Operations Research 33, 1107-1116 (1985).
    IUPAC Gold Book, "chemical relaxation".
    """
    return _Context(K, c0, feed, names=names).limit_parts()[0]


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
    """
    tolerance = _check_fraction(tolerance, "tolerance")
    return _Context(K, c0, feed).time_to_limit(tolerance)


def relaxation_times(K, *, names: Sequence[str] | None = None) -> RelaxationTimes:
    r"""Relaxation times and oscillation periods from the eigenvalues of ``K``.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    names : sequence of str, optional
        Species names for the note.

    Returns
    -------
    RelaxationTimes

    .. math::

        \tau_k = \frac{1}{|\operatorname{Re}\lambda_k|}, \qquad
        P_k = \frac{2\pi}{|\operatorname{Im}\lambda_k|}, \qquad
        \tau_{A\rightleftharpoons B} = \frac{1}{k_f + k_r}

    Notes
    -----
    Eigenvalues are those of the diagonal blocks of the strongly connected components
    (``K`` is block triangular in their topological order), so a triangular scheme has
    exactly its outflow rates.  ``defective`` is set when two classes linked by a reaction
    path share an eigenvalue (to 1e-10 relative): then the Jordan block has size >= 2
    (Rothblum 1975) and the curves contain :math:`t e^{-kt}` terms; ``nearly_defective``
    when they agree to 1e-3, or when the eigenvectors of one class are ill-conditioned
    (condition number above 1e6).

    References
    ----------
    IUPAC Gold Book, "chemical relaxation", "relaxation time".
    Rothblum, U. G. Linear Algebra Appl. 12, 281-292 (1975).
    """
    Kd, Ks = _check_matrix(K)
    n = Ks.shape[0]
    nm = [str(x) for x in names] if names is not None else [f"species {i}" for i in range(n)]
    st = _Structure(Ks, Kd)
    evs, owner = [], []
    zero_modes = 0
    cond_bad = []
    for c, cl in enumerate(st.classes):
        for ev in cl.eigenvalues:
            if ev == 0:
                zero_modes += 1
            else:
                evs.append(ev)
                owner.append(c)
        if cl.members.size > 1:
            B = Kd[np.ix_(cl.members, cl.members)] if Kd is not None else None
            if B is None:
                B = Ks[cl.members][:, cl.members].toarray()
            _, V = np.linalg.eig(B)
            if np.linalg.cond(V) > 1e6:
                cond_bad.append(c)
    evs = np.array(evs, dtype=complex)
    owner = np.array(owner, dtype=int)
    keep = evs.imag >= 0
    ev_k = evs[keep]
    order = np.argsort(np.abs(ev_k.real), kind="stable")
    ev_k = ev_k[order]
    dec = ev_k.real < 0
    times = 1.0 / np.abs(ev_k.real[dec])
    periods = 2 * math.pi / ev_k.imag[ev_k.imag > 0]
    growth = 1.0 / ev_k.real[ev_k.real > 0]
    # repeated eigenvalues along reaction paths (defective K)
    defective, nearly = False, bool(cond_bad)
    pairs_exact, pairs_near = [], []
    srt = np.argsort(evs.real, kind="stable")
    for a_pos in range(srt.size):
        a = srt[a_pos]
        for b in srt[a_pos + 1 :]:
            scale = max(abs(evs[a]), abs(evs[b]))
            if evs[b].real - evs[a].real > _NEARLY * scale:
                break
            gap = abs(evs[a] - evs[b])
            if gap > _NEARLY * scale or owner[a] == owner[b]:
                continue
            ca, cb = int(owner[a]), int(owner[b])
            if nx.has_path(st.dag, cb, ca):
                pair = (b, a)  # upstream class first in the note
            elif nx.has_path(st.dag, ca, cb):
                pair = (a, b)
            else:
                continue
            (pairs_exact if gap <= _REPEATED * scale else pairs_near).append(pair)
    if pairs_exact:
        defective = True
    if pairs_near:
        nearly = True
    note = ""
    if pairs_exact or pairs_near or cond_bad:
        parts = []

        def who(c):
            return "/".join(nm[j] for j in st.classes[c].members)

        for a, b in pairs_exact[:3]:
            k = -evs[a].real
            parts.append(
                f"the rate {k:.6g} 1/s occurs for both {who(owner[a])} and {who(owner[b])}, "
                "which are linked by a reaction path, so K is defective: the curves contain "
                f"terms t*exp(-{k:.6g} t) (t^m exp(-k t) for m+1 equal rates in a row) besides "
                "pure exponentials, and an intermediate fed and drained at the same rate k rises "
                "and falls as k t exp(-k t), peaking at t = 1/k"
            )
        for a, b in pairs_near[:3]:
            ka, kb = -evs[a].real, -evs[b].real
            gap = abs(evs[a] - evs[b])
            parts.append(
                f"the rates {ka:.6g} and {kb:.6g} 1/s of {who(owner[a])} and {who(owner[b])} "
                "are nearly equal, so K is nearly defective: for t well below "
                f"1/|difference| = {1 / gap:.3g} s the curves look like t*exp(-k t); the "
                "classical closed form with differences of rates cancels badly here (the "
                "solution used does not rely on it)"
            )
        for c in cond_bad:
            parts.append(
                f"the eigenvectors of the reaction network {who(c)} are nearly parallel "
                "(K is nearly defective there), so its curves have t*exp(-k t)-like shapes"
            )
        note = "; ".join(parts) + "."
        note = note[0].upper() + note[1:]
    return RelaxationTimes(ev_k, times, periods, growth, zero_modes, defective, nearly, note)


def areas(K, c0, times_end, feed=None) -> Areas:
    r"""Exact areas under the concentration curves, to each ``T`` and to infinity.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    times_end : float or array_like
        Upper limits T [s], >= 0.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    Returns
    -------
    Areas
        ``to_end`` [conc*s] of shape ``(len(times_end), n)`` and ``to_infinity`` [conc*s].

    .. math::

        \frac{d}{dt}\begin{pmatrix} c \\ a \end{pmatrix} =
        \begin{pmatrix} K & 0 \\ I & 0 \end{pmatrix}
        \begin{pmatrix} c \\ a \end{pmatrix} + \begin{pmatrix} f \\ 0 \end{pmatrix},
        \qquad a(T) = \int_0^T c\,dt, \qquad
        a(\infty)_T = -K_{TT}^{-1} c_{0,T}

    Notes
    -----
    The augmented matrix is still essentially nonnegative, so the same exact engine
    computes the areas (Van Loan 1978); no quadrature.  The area to infinity is finite
    exactly for species whose limit is zero (transient or never formed).

    References
    ----------
    Van Loan, C. F. IEEE Trans. Automat. Control 23, 395-404 (1978).
    Gibaldi, M.; Perrier, D. "Pharmacokinetics", 2nd ed., Marcel Dekker (1982): AUC.
    """
    ctx = _Context(K, c0, feed)
    T = _check_times_end(times_end)
    to_end = ctx.areas(T) if T.size else np.zeros((0, ctx.n))
    return Areas(T, to_end, ctx.limit_parts()[1].copy())


def _check_times_end(times_end) -> np.ndarray:
    try:
        T = np.atleast_1d(np.array(times_end, dtype=float)).reshape(-1)
    except (TypeError, ValueError) as exc:
        raise UsageError("times_end is not numeric", "give times in seconds") from exc
    if not np.all(np.isfinite(T)) or (T < 0).any():
        raise UsageError("times_end must be finite and >= 0", "give times in seconds")
    return T


def mean_residence_time(K, c0, feed=None) -> np.ndarray:
    r"""Mean residence time :math:`\int_0^\infty c_i\,dt / c_{0,i}` [s] per species.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    Returns
    -------
    ndarray
        [s]; nan for species that start at zero or whose area is infinite.

    .. math::

        MRT_i = \frac{\int_0^\infty c_i(t)\,dt}{c_{0,i}} = \frac{1}{k}
        \text{ for a single first-order decay}

    Notes
    -----
    Material of ``i`` formed from other starting materials is counted in the area too.

    References
    ----------
    Yamaoka, K.; Nakagawa, T.; Uno, T. J. Pharmacokinet. Biopharm. 6, 547-558 (1978).
    """
    ctx = _Context(K, c0, feed)
    return _mrt(ctx)


def _mrt(ctx: _Context) -> np.ndarray:
    X = ctx.limit_parts()[1]
    ok = (ctx.c0 > 0) & np.isfinite(X)
    return np.where(ok, X / np.where(ok, ctx.c0, 1.0), np.nan)


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
    """
    ctx = _Context(K, c0, feed, t_window=t_window)
    return _yields(ctx, basis)


def _yields(ctx: _Context, basis: int | None) -> YieldsAndSelectivity:
    if basis is None:
        base = float(ctx.c0.sum())
    else:
        base = float(ctx.c0[_check_index(basis, ctx.n)])
    lim, _ = ctx.limit_parts()
    y = np.full(ctx.n, np.nan)
    for i in range(ctx.n):
        if ctx.c0[i] == 0 and base > 0:
            for m in ctx.maxima(i):
                if m.is_global:
                    y[i] = m.height / base
    products = tuple(
        i
        for i in range(ctx.n)
        if ctx.struct.classes[ctx.struct.labels[i]].kind == "critical"
        and lim.kind[i] in ("end product", "equilibrium", "unbounded")
    )
    idx = np.array(products, dtype=int)
    fw = sw = fl = sl = None
    if products and ctx.t_window is not None:
        cw = ctx._propagate(np.array([ctx.t_window]))[0]
        fw = cw[idx] - ctx.c0[idx]
        sw = fw / fw.sum() if fw.sum() > 0 else None
    if products and np.all(np.isfinite(lim.values[idx])):
        fl = lim.values[idx] - ctx.c0[idx]
        sl = fl / fl.sum() if fl.sum() > 0 else None
    return YieldsAndSelectivity(base, y, products, fw, fl, sw, sl)


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
    """
    names = list(species)
    ctx = _Context(K, c0, feed, names=names, t_window=t_window, K_low=K_low)
    tolerance = _check_fraction(tolerance, "tolerance")
    n = ctx.n
    if len(set(names)) != n:
        raise UsageError("species names are not unique", "give each species its own name")
    lim, X = ctx.limit_parts()
    tau, hl1 = lifetimes(ctx.K)
    reqs = [(i, phi) for i in range(n) for phi in (0.5, 0.9, 0.1)]
    fr = ctx.fraction_times(reqs)
    frac = {(r.species, r.fraction): r for r in fr}
    ttl = ctx.time_to_limit(tolerance)
    mrt = _mrt(ctx)
    ys = _yields(ctx, None)
    aw = ctx.areas(np.array([ctx.t_window]))[0] if ctx.t_window is not None else None
    out: dict[str, SpeciesSummary] = {}
    for i, name in enumerate(names):
        maxima = tuple(ctx.maxima(i))
        glob = [m for m in maxima if m.is_global]
        notes = []
        hl = frac[(i, 0.5)]
        if hl.reason and ctx.c0[i] > 0:
            notes.append(hl.reason)
        if glob and glob[0].beyond_window:
            notes.append(f"the maximum of {name} lies beyond the chosen time window")
        if lim.unbounded[i]:
            notes.extend(ctx.note_of.get(i, ()))
        out[name] = SpeciesSummary(
            name=name,
            start=float(ctx.c0[i]),
            lifetime=float(tau[i]),
            first_order_half_life=float(hl1[i]),
            half_life=hl.time,
            half_life_note=hl.reason,
            time_to_90_percent_remaining=frac[(i, 0.9)].time,
            time_to_10_percent_remaining=frac[(i, 0.1)].time,
            t_max=glob[0].time if glob else None,
            c_max=glob[0].height if glob else None,
            t_max_beyond_window=bool(glob and glob[0].beyond_window),
            yield_at_max=None if np.isnan(ys.yield_at_max[i]) else float(ys.yield_at_max[i]),
            maxima=maxima,
            limit=None if lim.unbounded[i] else float(lim.values[i]),
            limit_kind=lim.kind[i],
            unbounded=bool(lim.unbounded[i]),
            time_to_limit=_num(ttl.per_species[i]),
            area_to_window_end=None if aw is None else float(aw[i]),
            area_to_infinity=_num(X[i]),
            mean_residence_time=_num(mrt[i]),
            notes=tuple(notes),
        )
    rt = relaxation_times(ctx.K, names=names)
    prods = [names[i] for i in ys.end_products]

    def share(x):
        return None if x is None else {p: float(v) for p, v in zip(prods, x, strict=True)}

    scheme = SchemeSummary(
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
    return out, scheme
