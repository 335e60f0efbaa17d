"""The dense engine on stacks: exponentials of a stack of matrices and their time grids.

Everything runs in the compiled kernels of :mod:`kinetics.engine.kernels`; Python keeps the
decisions (routes, plans, retries) and the bounds (:mod:`kinetics.engine.plan`).
"""

from __future__ import annotations

import math
import struct
from typing import NamedTuple

import numpy as np

from kinetics import _doubledouble as dd
from kinetics.collector import collector_paused
from kinetics.engine.plan import (
    AUTO_RTOL,
    TINY,
    Plan,
    U,
    choose_plan,
    compose,
    pattern_stats,
    predicted_double,
    product_error,
    remembered,
    rounding_bound,
)

__all__ = [
    "augment",
    "distinct",
    "expm_group",
    "expm_stack",
    "gamma_stack",
    "mv",
    "propagate_stack",
    "uniform_step",
]


def augment(K, feed):
    """Rate matrix of the fed system, Eq. (1) of the module docstring."""
    if feed is None:
        return K
    *lead, n, _ = K.shape
    A = np.zeros((*lead, n + 1, n + 1))
    A[..., :n, :n] = K
    A[..., :n, n] = feed
    return A


def expm_group(A, Al, t, sigma, sigma_lo, plan: Plan):
    r"""Exponentials ``exp(t_i (A_i + Al_i))`` for members sharing one plan.

    Returns ``(Fh, Fl, trunc)`` (``Fl`` is zero on the double route).  The Taylor
    sum, the factor :math:`e^{-\sigma t/2^j}` and the squarings run in the compiled
    kernels of :mod:`kinetics.engine.kernels`.

    ``trunc`` bounds the Taylor truncation entrywise, a posteriori: with
    :math:`G = Y^{m+1}/(m+1)!` the remainder of nonnegative terms satisfies
    :math:`0 \le e^{Y} - T_m(Y) \le G e^{Y}`, and since everything commutes,
    :math:`0 \le e^{2^j Y} - T_m(Y)^{2^j} \le 2^j G e^{2^j Y}`.  With
    :math:`r = \max (2^j G F)_{ab} / F_{ab}` for the computed :math:`F \approx
    T_m(Y)^{2^j}`, the error :math:`E \le cF` satisfies :math:`c \le r + rc`, so
    :math:`c \le r/(1 - r) \le 2r` for :math:`r \le 1/2` (Shao, Gao & Xue 2014, sec. 4,
    for the estimate; the factor 2 also covers the rounding of :math:`G F`).
    """
    from kinetics.engine import kernels

    use_dd = plan.route == "double-double"
    ih, il = dd.inverse_factorials(plan.degree)
    if not use_dd:
        # zero low parts, read-only like the cached ones (one compiled signature for both)
        il = np.zeros_like(ih)
        il.flags.writeable = False
    Fh = np.empty_like(A)
    Fl = np.empty_like(A)
    n = A.shape[-1]
    Y = kernels.scratch("scaled", A.shape)  # internal to this function
    mats = kernels.scratch("mats", (6, n, n))  # work matrices of the kernel
    m = plan.degree
    ratio = np.empty(A.shape[0])
    kernels.exponentials(
        A, Al, np.ascontiguousarray(t, dtype=float), np.ascontiguousarray(sigma, dtype=float),
        np.ascontiguousarray(sigma_lo, dtype=float), plan.j, plan.ps, plan.pr, ih, il,
        np.bool_(use_dd), Fh, Fl, Y, kernels.scratch("powers", (2, plan.ps + 1, n, n)), mats,
        m + 1, math.exp(-math.lgamma(m + 2)), TINY, ratio,
    )  # fmt: skip
    r = 2.0**plan.j * ratio
    return Fh, Fl, np.where(r <= 0.5, 2.0 * r, np.inf)


def distinct(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values of ``x`` and the index of each entry among them (no sort for one)."""
    if x.size == 1:  # a single solve
        return x, np.zeros(1, dtype=np.intp)
    values, inverse = np.unique(x, return_inverse=True)
    return values, inverse.reshape(-1)


def expm_stack(A, Al, t, precision: str, target: float | None = None, columns: int = 1):
    """``exp(t_i (A_i + Al_i))`` for a stack, with per-member route and error bound.

    Returns ``(Fh, Fl, bound, is_dd)``; ``bound[i]`` is the componentwise relative
    bound of ``Fh + Fl`` against the exponential of the exact pair ``A + Al`` (before
    any rounding to double), ``is_dd[i]`` tells whether member ``i`` took the
    double-double route.  Under ``precision="auto"`` plain double is taken only where
    its a priori bound, grown over a grid of ``columns`` states, stays within
    :data:`AUTO_RTOL`.
    """
    from kinetics.engine import kernels

    b, n, _ = A.shape
    t = np.full(b, t, dtype=float) if np.ndim(t) == 0 else np.array(t, dtype=float)
    sigma = np.empty(b)
    sigma_lo = np.empty(b)
    beta = np.empty(b)
    kernels.shift_and_norm(A, Al, t, sigma, sigma_lo, beta)
    Fh = np.empty_like(A)
    Fl = np.empty_like(A)
    bound = np.empty(b)
    is_dd = np.zeros(b, dtype=bool)
    # plans are chosen for beta rounded up to a quarter power of two: a plan valid for a
    # larger norm is valid (conservative), and the members of a sweep share a few plans
    positive = beta > 0
    bq = np.where(
        positive, np.exp2(np.ceil(4.0 * np.log2(np.where(positive, beta, 1.0))) / 4.0), 0.0
    )
    bq = np.maximum(bq, beta)
    values, which = distinct(bq)
    reach, density = pattern_stats(A)
    if precision == "auto":
        # plain double where its a priori bound (over the whole grid) is small enough
        predicted = np.array(
            [predicted_double(v, n, columns, reach, density) for v in values.tolist()]
        )
        route_dd = ~(predicted[which] <= AUTO_RTOL)  # guard: a nan bound is not small
    else:
        route_dd = np.full(b, precision == "double-double")
    kinds, inverse = distinct(2 * which + route_dd)
    members_of = (
        [np.arange(b)]
        if kinds.size == 1
        else [np.flatnonzero(inverse == u) for u in range(kinds.size)]
    )
    groups: dict[tuple, np.ndarray] = {}
    plans: dict[tuple, Plan] = {}
    for code, sel in zip(kinds.tolist(), members_of, strict=True):
        v, use_dd = divmod(code, 2)
        route = "double-double" if use_dd else "double"
        tgt = target if target is not None else (2.0**-64 if use_dd else U / 2)
        p = choose_plan(float(values[v]), n, route, tgt, reach=reach, density=density)
        key = (p.route, p.j, p.ps, p.pr)
        groups[key] = np.concatenate([groups[key], sel]) if key in groups else sel
        plans[key] = p
    for key, members in groups.items():
        plan = plans[key]
        # one group holding the whole stack (the usual case) needs no gathering
        idx = slice(None) if members.size == b else np.sort(members)
        tgt = U / 2 if plan.route == "double" else 2.0**-64
        for _attempt in range(4):
            h, lo, trunc = expm_group(A[idx], Al[idx], t[idx], sigma[idx], sigma_lo[idx], plan)
            if (trunc <= tgt).all() or plan.pr > 80:
                break
            plan = Plan(plan.route, plan.j, plan.ps, plan.pr + 2, plan.ymax)
        Fh[idx], Fl[idx] = h, lo
        is_dd[idx] = plan.route == "double-double"
        rounding = rounding_bound(beta[idx], n, plan)
        bound[idx] = rounding + trunc + rounding * trunc
    return Fh, Fl, bound, is_dd


def uniform_step(t: np.ndarray) -> float | None:
    """Step ``dt`` if ``t[1:]`` is a uniform grid from ``t[0]`` (else None)."""
    if t.size < 3:
        return None
    from kinetics.engine import kernels

    dt = kernels.uniform_step(np.ascontiguousarray(t, dtype=float), 4 * U * float(t[-1]))
    return dt if dt > 0 else None


def mv(Fh, Fl, vh, vl, is_dd):
    """Stacked nonnegative products ``F v``, double-double for members with ``is_dd``."""
    from kinetics.engine import kernels

    oh = np.empty(vh.shape)
    ol = np.empty(vh.shape)
    if vh.shape[0] <= 4:
        # a few members: the product kernel itself, member by member (it is compiled with
        # the exponentials; the loop over a stack is compiled only when a batch needs it)
        for q in range(vh.shape[0]):
            kernels.product(Fh[q], Fl[q], vh[q], vl[q], oh[q], ol[q], np.bool_(is_dd[q]))
    else:
        kernels.apply(Fh, Fl, vh, vl, np.asarray(is_dd, dtype=bool), oh, ol)
    return oh, ol


def gamma_stack(N: int, is_dd):
    """Relative bound of one product of each member, by its route (double-double or not)."""
    return np.where(is_dd, product_error(N, True), product_error(N, False))


def propagate_stack(A, Al, x0, times, precision: str, species: int):
    """Core grid propagation for a stack of (augmented) matrices ``A + Al``.

    A, Al: (b, N, N), x0: (b, N).  Returns (X (b, p, N), bound (b, p), route label);
    ``bound`` covers everything between the exact pair, the given start values and
    times, and the returned doubles (the final rounding included); the first
    ``species`` rows are concentrations (the others a constant feed row).  The states at
    time 0 are ``x0`` exactly.
    """
    from kinetics.engine import kernels

    if not kernels.loaded(kernels.grid):
        # the first call of the process loads the kernels from disk (or compiles them):
        # numba makes many lasting objects, and collector passes over them cost a tenth
        # of a warm command-line solve
        with collector_paused():
            return _blas_sized(A, Al, x0, times, precision, species)
    return _blas_sized(A, Al, x0, times, precision, species)


def _blas_sized(A, Al, x0, times, precision: str, species: int):
    """:func:`_run_stack`, with one BLAS thread for the sizes whose products go to BLAS."""
    from kinetics.engine import kernels

    if A.shape[-1] ** 3 < kernels.BLAS_FROM:
        return _run_stack(A, Al, x0, times, precision, species)
    from kinetics.engine.threads import one_blas_thread

    # the kernels call BLAS for plain-double products of this size; threaded BLAS on
    # these matrices was 5-40 times slower on two cores (threads wait for each other)
    with one_blas_thread():
        return _run_stack(A, Al, x0, times, precision, species)


def _run_stack(A, Al, x0, times, precision: str, species: int):
    """:func:`propagate_stack` itself: leading zeros, then a uniform grid or each interval."""
    from kinetics.engine import kernels

    b, N, _ = A.shape
    p = times.size
    X = np.empty((b, p, N))  # every row is written below (fresh pages are costly to zero)
    bound = np.zeros((b, p))
    start = 0
    # leading zeros: exactly c0
    while start < p and times[start] == 0.0:
        X[:, start] = x0
        start += 1
    if start == p:
        return X, bound, precision
    exps = _StackExponentials(A, Al, precision)
    plan = _uniform_plan(exps, times, start)
    if plan is not None:
        _uniform_grid(plan, x0, times, start, X, bound)
        residual = plan.residual  # times[k] minus the exact time the route reaches
    elif p - start <= FROM_START:
        _each_from_start(exps, x0, times, start, X, bound)
        residual = None  # each exponential is of the requested time itself
    else:
        residual = np.zeros(p)
        _each_interval(exps, x0, times, start, X, bound, residual)
        residual = residual if residual.any() else None
    if residual is not None:
        gamma = (N + 2) * U
        kernels.residual_corrections(A, X, residual, species, gamma, TINY, bound)
    # the final rounding of hi + lo to double
    bound[:, start:] = compose(bound[:, start:], U)
    # the grid kernel and the interval loop clip at zero as they write (a sum hi + lo
    # of nonnegative products can round to -0.0 or a tiny negative lo)
    return X, bound, exps.label()


#: a stack of at most this many matrix entries has its exponentials remembered (at most
#: 256 of them, :func:`kinetics.engine.plan.remembered`; 32 MB with their keys at this
#: size): a scheme solved again on the same grid, as in a repeated call, skips the plan
#: and the exponential (for 10 species they cost more than the grid itself)
REMEMBER_ENTRIES = 64 * 64
_EXPONENTIALS: dict[tuple[bytes, float, int], tuple] = {}


class _StackExponentials:
    """The exponentials of one stack over steps of given lengths, and the routes they took."""

    def __init__(self, A, Al, precision: str) -> None:
        self.A = A
        self.Al = Al
        self.precision = precision
        self.routes: set[str] = set()
        # what the exponentials depend on besides the step (None: too large to remember)
        self.key = (
            struct.pack("<3q", *A.shape) + precision.encode() + A.tobytes() + Al.tobytes()
            if A.size <= REMEMBER_ENTRIES
            else None
        )

    def of(self, h: float, columns: int = 1):
        """``(Fh, Fl, eps, is_dd, gamma)`` for the step ``h`` [s].

        :func:`expm_stack`'s exponentials, bounds and routes, and the bound of one product
        with each member (:func:`gamma_stack`).
        """
        b, N, _ = self.A.shape

        def compute():
            Fh, Fl, eps, is_dd = expm_stack(
                self.A, self.Al, np.full(b, h), self.precision, columns=columns
            )
            routes = frozenset(
                ("double-double",) * bool(is_dd.any()) + ("double",) * (not is_dd.all())
            )
            return Fh, Fl, eps, is_dd, gamma_stack(N, is_dd), routes

        if self.key is None:
            *result, routes = compute()
        else:
            key = (self.key, h, columns)  # a tuple: the matrix bytes are hashed once
            # shared by the calls that remember them: only read (by the kernels), never
            # written (not flagged read-only: the kernels would be compiled twice)
            *result, routes = remembered(_EXPONENTIALS, key, compute)
        self.routes |= routes
        return tuple(result)

    def label(self) -> str:
        """The routes taken (``double``, ``double-double`` or both), or the precision asked."""
        return "+".join(sorted(self.routes)) if self.routes else self.precision


class _UniformPlan(NamedTuple):
    """How a uniform grid is propagated: what depends on the matrices and the times only."""

    dt: float  # the step [s]
    skip: int  # 1: the first time is dt itself (no exponential of its own)
    first: tuple | None  # exponential of the first time when it is not dt (StackExponentials.of)
    step: tuple  # exponential of dt, for the grid's number of states
    #: what each time exceeds the one the grid reaches [s] (read only; None: all zero)
    residual: np.ndarray | None
    routes: frozenset[str]


#: grids of at most this many times have their plan remembered with the exponentials (at
#: most 256 plans, :func:`kinetics.engine.plan.remembered`; a key holds the times, 32 kB at
#: this size: 8 MB in all)
REMEMBER_TIMES = 4096
_UNIFORM_PLANS: dict[tuple[bytes, bytes], _UniformPlan | bool] = {}


def _uniform_plan(exps: _StackExponentials, times, start: int) -> _UniformPlan | None:
    """The plan of a uniform grid ``times[start:]`` (None for another grid), remembered."""
    p = times.size

    def compute() -> _UniformPlan | bool:
        from kinetics.engine import kernels

        dt = uniform_step(times[start:]) if p - start >= 3 else None
        if dt is None:
            return False
        t_first = float(times[start])
        # a grid dt, 2 dt, ... (the usual linspace from 0) needs one exponential
        skip = 1 if abs(t_first - dt) <= 4 * U * float(times[-1]) else 0
        columns = p - start + skip
        first = None if skip else exps.of(t_first)
        step = exps.of(dt, columns=columns)
        residual = np.zeros(p)
        kernels.grid_residuals(times, start, skip, t_first, dt, residual)
        kept = residual if residual.any() else None
        return _UniformPlan(dt, skip, first, step, kept, frozenset(exps.routes))

    if exps.key is None or p > REMEMBER_TIMES:
        plan = compute()
    else:
        plan = remembered(_UNIFORM_PLANS, (exps.key, times.tobytes()), compute)
    if not plan:
        return None
    assert isinstance(plan, _UniformPlan)
    exps.routes |= plan.routes
    return plan


def _uniform_grid(plan: _UniformPlan, x0, times, start: int, X, bound):
    """The states at a uniform grid ``times[start:]`` of step ``plan.dt``, in place.

    One exponential of ``dt`` (and one of the first time when the grid does not start at
    ``dt``); the states :math:`F^k v` and their bounds come from one call of the grid
    kernel (the time residuals are the plan's).
    """
    from kinetics.engine import kernels

    b, N = x0.shape
    # the start state as a double-double pair (b, N); the kernel only reads it
    vh = np.ascontiguousarray(x0)
    vl = np.zeros((b, N))
    cur_bound = np.zeros(b)
    if plan.first is not None:
        Fh, Fl, eps, is_dd, gamma = plan.first
        oh, ol = mv(Fh, Fl, x0[:, :, None], vl[:, :, None], is_dd)  # as column blocks
        vh, vl = oh[..., 0].copy(), ol[..., 0].copy()
        cur_bound = compose(eps, gamma)
    Fh, Fl, eps, is_dd, gamma = plan.step
    # states F^k v for k = 0..M (one product each), their bounds and time residuals
    kernels.grid(
        Fh, Fl, vh, vl, times.size - start + plan.skip, plan.skip, is_dd, X, start, eps, gamma,
        cur_bound, bound,
    )  # fmt: skip


#: a grid of at most this many times (after the leading zeros), not uniform, is computed
#: time by time from the start (:func:`_each_from_start`)
FROM_START = 4


def _each_from_start(exps: _StackExponentials, x0, times, start: int, X, bound):
    """The states at a few times ``times[start:]``, each from the start state, in place.

    One exponential per distinct time, as many as a step per interval would need when the
    intervals differ (the usual case for a few times), but each is of the requested time
    itself: no time residual to correct, and one product's bound per state instead of a
    chain of them.
    """
    b, N = x0.shape
    start_h = x0[:, :, None].copy()  # column blocks (b, N, 1); exact (no low part)
    start_l = np.zeros((b, N, 1))
    done: dict[float, int] = {}
    for k in range(start, times.size):
        t = float(times[k])
        if t in done:  # a repeated time: the same state
            X[:, k] = X[:, done[t]]
            bound[:, k] = bound[:, done[t]]
            continue
        # the route as a step per interval would take it (states ahead: all of them)
        Fh, Fl, eps, is_dd, gamma = exps.of(t, columns=times.size - start + 1)
        oh, ol = mv(Fh, Fl, start_h, start_l, is_dd)
        np.maximum((oh + ol)[:, :, 0], 0.0, out=X[:, k])
        bound[:, k] = compose(eps, gamma)
        done[t] = k


def _each_interval(exps: _StackExponentials, x0, times, start: int, X, bound, residual):
    """The states at any grid ``times[start:]``, one step per interval, in place.

    An exponential per distinct interval length (kept); the time reached is summed in
    double-double, so that ``residual`` holds what each grid time still exceeds it by.
    """
    from kinetics.engine import kernels

    b = x0.shape[0]
    p = times.size
    vh = x0[:, :, None].copy()  # state as double-double column blocks (b, N, 1)
    vl = np.zeros_like(vh)
    cur_bound = np.zeros(b)
    cache: dict[float, tuple] = {}
    reached = (0.0, 0.0)  # exact time reached so far, double-double
    t_prev = 0.0
    for k in range(start, p):
        h = times[k] - t_prev
        if h > 0:
            if h not in cache:
                cache[h] = exps.of(h, columns=p - start + 1)  # states ahead: all of them
            Fh, Fl, eps, is_dd, gamma = cache[h]
            vh, vl = mv(Fh, Fl, vh, vl, is_dd)
            cur_bound = compose(cur_bound, compose(eps, gamma))
            hi, lo = kernels.two_sum(reached[0], h)
            lo += reached[1]
            reached = (hi + lo, lo - ((hi + lo) - hi))
        np.maximum((vh + vl)[:, :, 0], 0.0, out=X[:, k])
        bound[:, k] = cur_bound
        residual[k] = (times[k] - reached[0]) - reached[1]
        t_prev = times[k]
