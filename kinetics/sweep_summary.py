r"""Summary quantities of :mod:`kinetics.analysis` for a whole stack of parameter sets.

:func:`kinetics.analysis.summarise` treats one problem :math:`(K, c_0, f)` at a time.  A
sweep has thousands of problems that share one scheme, so this module computes the four
quantities of the sweep table for a stack of them with array operations over the stack,
using the same definitions (see :mod:`kinetics.analysis`, section Definitions):

* ``half_life``: the first :math:`t` with :math:`c_i(t) = c_{0,i}/2`;
* ``t_max``, ``c_max``: the global interior maximum of :math:`c_i`, where
  :math:`(K c + f)_i = 0` changes sign from + to -, if it is at least the start value and
  the long-time limit;
* ``limit``: :math:`c(\infty)` from the class structure of :math:`K` (transient classes
  drain into closed classes; closed classes keep their material as their stationary
  vector; fed transient classes reach :math:`-K^{-1} f`), :math:`\infty` for growth
  without bound.

Method
------
1. *Structure.*  The strongly connected components of the species graph depend only on
   which rates are nonzero; members are grouped by that pattern (and by which species
   start or are fed), so the class recursion of the limit runs once per group with
   stacked linear algebra (batched solves; the Grassmann-Taksar-Heyman reduction for the
   stationary vectors).
2. *Ladder.*  Each member ``i`` is treated in its own scaled time :math:`\tau = t/s_i`
   with :math:`s_i = 2^{\lfloor \log_2 (1/r_{max,i}) \rfloor}` (a power of two, so the
   scaled matrix :math:`s_i K_i` is exact).  Exponentials :math:`P_\ell = e^{u_\ell A}` of
   the scaled (feed-augmented) matrix for the steps :math:`u_\ell = 2^{-15} 4^\ell` are
   formed from the shifted matrix :math:`B = A + \sigma I \ge 0` by Taylor sums of
   nonnegative terms while :math:`u_\ell \|B\| \le 1/2`, above that by exact squaring
   (``_ladder`` in :mod:`kinetics._sweep_kernels`; the shift-and-Taylor idea of Xue & Ye
   2013, no subtraction anywhere).
3. *Scan.*  A log grid shared by the stack: 0, four steps to :math:`\tau_0 = 2^{-9}`, then
   segments :math:`[\tau_0 4^d, \tau_0 4^{d+1}]` of 12 equal steps (about 20 points per
   decade), each step one product with a nonnegative ladder matrix.  A member uses the
   points up to its own :math:`t_{hi} = 50/r_{min}` (:mod:`kinetics.analysis` scans from
   :math:`10^{-3}/r_{max}` to :math:`50/r_{min}`), so its result does not depend on the
   other members of the stack (tested bit for bit).
4. *Brackets.*  Signs of the exact derivative :math:`D = Kc + f` (below
   :math:`10^{-12}\,(|K|c + |f|)` counted as unknown, as in :mod:`kinetics.analysis`) give
   the maxima; signs of :math:`c_i - c_{0,i}/2` give the half-lives.  Intervals where a
   cubic Hermite model of the derivative hints at two hidden turning points are sampled
   at their quarters.  Every + to - change is a local maximum and is refined; the highest
   is the candidate for the global one (minima need nothing).
5. *Refinement.*  A bracket is narrowed by quarters with the next lower ladder level
   until :math:`u \|B\| \le 1/4`; then a safeguarded Newton iteration on the
   nonnegative Taylor series of the state from the bracket's left end, with the exact
   derivatives :math:`g' = (K D)_i` for a maximum and :math:`g' = D_i` for a half-life,
   stops when the step is below :math:`10^{-13}` of the time.  :math:`c_{max}` is the
   concentration at the root.

Steps 2-5 run member by member in compiled code (:mod:`kinetics._sweep_kernels`, numba):
as array expressions over the stack they cost about 150 us per member of a 10-species
scheme, compiled about 50 us.

The curves of a sweep are not computed here: they come from
:func:`kinetics.propagate.propagate_batch` (:func:`kinetics.sweep.chunk_result`).

Members that need the general treatment of :mod:`kinetics.analysis` -- damped
oscillations (complex eigenvalues with :math:`|\mathrm{Im}| > 0.2 |\mathrm{Re}|`),
exponential growth, a sign change of the derivative across scan points of unknown sign,
a cubic model of the derivative that hints at two turning points hidden between scan
points, a half-life crossing across such points, a scheme without any rate, or a stiff
member whose scan spans more than 1e7 shortest lifetimes (the plain-double ladder would
lose more than 1e-10) -- are
handed to :func:`kinetics.analysis.summarise` one by one (about 8 % of random branched
networks with reverse steps; 24 % before maxima after a minimum were refined here).  The
result equals :func:`kinetics.analysis.summarise` per member to about 1e-12 relative
(tested at 1e-9), except the time of a very flat maximum: a relative error
:math:`\epsilon` of the curve moves it by about :math:`\sqrt{2\epsilon c/|c''|}`, and
the two routes (and the exact time, checked with mpmath) then differ at that level
(seen: 1e-5 relative for a maximum whose height changes by 1e-13 over 0.01 of the
time).

References
----------
Grassmann, W. K.; Taksar, M. I.; Heyman, D. P. "Regenerative analysis and steady state
distributions for Markov chains." Operations Research 33, 1107-1116 (1985).
Berman, A.; Plemmons, R. J. "Nonnegative Matrices in the Mathematical Sciences",
Academic Press (1979), ch. 6 and 8.
J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices entrywise to
high relative accuracy", Math. Comp. 82, 1577-1596 (2013).
doi:10.1090/S0025-5718-2012-02677-2
"""

from __future__ import annotations

import math

import numpy as np

from .analysis.tolerances import CLASS_TOL as _CLASS_TOL
from .analysis.tolerances import CONST as _CONST
from .analysis.tolerances import DECAY as _DECAY
from .analysis.tolerances import EXPONENTIAL as _EXP
from .analysis.tolerances import GLOBAL_TOL as _GLOBAL_TOL
from .analysis.tolerances import NEVER as _NEVER
from .analysis.tolerances import RATIO, TAU0
from .analysis.tolerances import SCAN_FAST as _SCAN_FAST
from .analysis.tolerances import SCAN_SLOW as _SCAN_SLOW
from .errors import RateMatrixError

__all__ = ["summarise_batch"]

# The compiled ladder runs in plain double: its relative error grows about as
# 1e-17 sigma t (sigma the largest sum of constants of a species; measured against the
# two-member Bateman solution: 1e-10 at sigma t = 5e7, 1e-6 at 5e10).  Members whose
# scan spans more than this go to kinetics.analysis (entrywise double-double).
_STIFF_SIGMA_T = 1e7

_DECAYING, _CRITICAL, _GROWING = 0, 1, 2


# ---------------------------------------------------------------------------------------
# Class structure of a nonzero pattern
# ---------------------------------------------------------------------------------------


class _Pattern:
    """Strongly connected components of one nonzero pattern, in topological order."""

    def __init__(self, offdiag: np.ndarray) -> None:
        from .network import condensation

        n = offdiag.shape[0]
        rows, cols = np.nonzero(offdiag)
        comps = condensation(cols, rows, n)  # edge j -> i for K[i, j] > 0
        self.n = n
        self.labels = comps.labels
        self.ncomp = comps.count
        self.order = comps.order
        self.preds = comps.predecessors
        self.members = comps.members


def _gth_batch(B: np.ndarray) -> np.ndarray:
    """Stationary vectors of a stack of irreducible conservative blocks (column sums zero).

    Grassmann, Taksar & Heyman (1985) state reduction on every member at once: only
    off-diagonal rates, additions, products and quotients of nonnegative numbers.
    """
    A = np.array(np.swapaxes(B, -1, -2), dtype=float)  # A[i, j] = rate i -> j
    m = A.shape[-1]
    idx = np.arange(m)
    A[:, idx, idx] = 0.0
    for k in range(m - 1, 0, -1):
        s = A[:, k, :k].sum(axis=1)
        A[:, :k, k] /= s[:, None]
        A[:, :k, :k] += A[:, :k, k][:, :, None] * A[:, k, :k][:, None, :]
    pi = np.zeros(A.shape[:2])
    pi[:, 0] = 1.0
    for k in range(1, m):
        pi[:, k] = np.einsum("bj,bj->b", pi[:, :k], A[:, :k, k])
    return pi / pi.sum(axis=1, keepdims=True)


def _null_batch(B: np.ndarray) -> np.ndarray:
    """Positive null vectors of a stack of singular irreducible Metzler blocks."""
    _, _, vh = np.linalg.svd(B)
    v = np.abs(vh[:, -1, :])
    return v / v.sum(axis=1, keepdims=True)


class _Classes:
    """Per-class kind, eigenvalues and null vectors for every member of a group."""

    def __init__(self, pat: _Pattern, K: np.ndarray) -> None:
        b = K.shape[0]
        self.kind = np.zeros((b, pat.ncomp), dtype=np.int8)
        self.perron = np.zeros((b, pat.ncomp))
        self.u: list = [None] * pat.ncomp
        self.v: list = [None] * pat.ncomp
        eig_parts = []
        for c in range(pat.ncomp):
            idx = pat.members[c]
            if idx.size == 1:
                r = K[:, idx[0], idx[0]]
                self.kind[:, c] = np.where(r < 0, _DECAYING, np.where(r == 0, _CRITICAL, _GROWING))
                self.perron[:, c] = r
                eig_parts.append(r[:, None].astype(complex))
                self.u[c] = np.ones((b, 1))
                self.v[c] = np.ones((b, 1))
                continue
            B = K[:, idx][:, :, idx]
            eig = np.linalg.eigvals(B)
            s = B.sum(axis=1)
            tol = _CLASS_TOL * np.abs(B).sum(axis=1)
            cons = np.all(s <= tol, axis=1)
            zero = cons & np.all(np.abs(s) <= tol, axis=1)
            perron = eig.real.max(axis=1)
            scale = np.abs(B).reshape(b, -1).max(axis=1)
            kind = np.where(
                cons,
                np.where(zero, _CRITICAL, _DECAYING),
                np.where(
                    perron > _CLASS_TOL * scale,
                    _GROWING,
                    np.where(perron < -_CLASS_TOL * scale, _DECAYING, _CRITICAL),
                ),
            )
            crit = kind == _CRITICAL
            u = np.ones((b, idx.size))
            v = np.ones((b, idx.size)) / idx.size
            if np.any(zero):
                v[zero] = _gth_batch(B[zero])
            other = crit & ~zero
            if np.any(other):
                v[other] = _null_batch(B[other])
                u[other] = _null_batch(np.swapaxes(B[other], -1, -2))
            # the Perron eigenvalue of a critical class is exactly zero
            if np.any(crit):
                k = np.argmin(np.abs(eig[crit]), axis=1)
                e = eig[crit]
                e[np.arange(e.shape[0]), k] = 0.0
                eig[crit] = e
            perron = np.where(crit, 0.0, perron)
            self.kind[:, c] = kind
            self.perron[:, c] = perron
            self.u[c] = u
            self.v[c] = v
            eig_parts.append(eig)
        self.eigenvalues = np.concatenate(eig_parts, axis=1)


def _inflow(K: np.ndarray, idx: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Sum over species j outside the class of K[i, j] x_j, for the members i of a class.

    Zero entries of K are skipped, so an infinite x_j of an unconnected species is harmless.
    """
    rows = K[:, idx, :]  # (b, k, n)
    mask = np.ones(K.shape[-1], dtype=bool)
    mask[idx] = False
    with np.errstate(invalid="ignore"):
        terms = np.where(rows[:, :, mask] != 0, rows[:, :, mask] * x[:, None, mask], 0.0)
    return terms.sum(axis=2)


def _solve_class(K: np.ndarray, idx: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """X = (-K_CC)^{-1} rhs for a decaying class (a nonsingular M-matrix), stacked."""
    if idx.size == 1:
        return rhs / -K[:, idx[0], idx[0]][:, None]
    B = K[:, idx][:, :, idx]
    return np.linalg.solve(-B, rhs[:, :, None])[:, :, 0]


def _limits(pat: _Pattern, cls: _Classes, K, c0, f, has_c0, has_f):
    """c(inf) (b, n) [conc] with inf for unbounded species, for members of equal kinds.

    The class recursion of :meth:`kinetics.analysis._Context.limit_parts` (Berman &
    Plemmons 1979, ch. 8), the growth degrees being the same for every member here.
    """
    b, n = c0.shape
    kind = cls.kind[0]
    q = np.full(pat.ncomp, _NEVER)
    L = np.zeros((b, n))
    X = np.zeros((b, n))
    for c in pat.order:
        idx = pat.members[c]
        forcing = max((q[p] for p in pat.preds[c]), default=_NEVER)
        if has_f[c]:
            forcing = max(forcing, _CONST)
        if not (has_c0[c] or has_f[c] or forcing > _NEVER):
            continue
        if kind[c] == _GROWING or forcing >= _EXP:
            q[c] = _EXP
        elif kind[c] == _CRITICAL:
            q[c] = forcing + 1 if forcing >= _CONST else _CONST
        else:
            q[c] = forcing if forcing >= _CONST else _DECAY
        if q[c] == _DECAY:
            # transient: X_C = (-K_CC)^{-1} (c0_C + inflow of upstream areas)
            X[:, idx] = _solve_class(K, idx, c0[:, idx] + _inflow(K, idx, X))
        elif q[c] == _CONST and kind[c] == _CRITICAL:
            # closed class: keeps what it starts with plus all that flows in
            u, v = cls.u[c], cls.v[c]
            amount = np.einsum("bk,bk->b", u, c0[:, idx] + _inflow(K, idx, X))
            L[:, idx] = v * (amount / np.einsum("bk,bk->b", u, v))[:, None]
            X[:, idx] = np.inf
        elif q[c] == _CONST:
            fc = np.broadcast_to(f[idx], (b, idx.size))
            L[:, idx] = _solve_class(K, idx, fc + _inflow(K, idx, L))
            X[:, idx] = np.inf
        else:
            L[:, idx] = np.inf
            X[:, idx] = np.inf
    return L, q


# ---------------------------------------------------------------------------------------
# The public function
# ---------------------------------------------------------------------------------------


def _reference(K, Kl, c0, f, t_window, out, members) -> None:
    from .analysis import summarise

    n = c0.shape[1]
    names = [f"s{i}" for i in range(n)]
    for i in members:
        s = summarise(K[i], c0[i], names, feed=f, t_window=t_window, K_low=Kl[i])
        for j, name in enumerate(names):
            d = s[name]
            for q in ("half_life", "t_max", "c_max", "limit"):
                v = getattr(d, q)
                out[q][i, j] = v if v is not None and math.isfinite(v) else np.nan


def _row_groups(rows: np.ndarray) -> np.ndarray:
    """Group number of each row of a 2-D array (equal rows, equal numbers).

    A sweep usually has a single group, found without sorting; otherwise the rows are
    compared as raw bytes (one sort of a 1-D array instead of a lexicographic one).
    """
    if (rows == rows[0]).all():
        return np.zeros(rows.shape[0], dtype=np.intp)
    rows = np.ascontiguousarray(rows)
    keys = rows.view(np.dtype((np.void, rows.dtype.itemsize * rows.shape[1]))).reshape(-1)
    _, inverse = np.unique(keys, return_inverse=True)
    return inverse.reshape(-1)


def summarise_batch(
    K: np.ndarray,
    c0: np.ndarray,
    feed: np.ndarray | None = None,
    *,
    t_window: float | None = None,
    K_low: np.ndarray | None = None,
) -> dict[str, np.ndarray]:
    r"""Half-lives, intermediate maxima and long-time limits of a stack of problems.

    Parameters
    ----------
    K : ndarray, shape (b, n, n)
        Rate matrices [1/s], essentially nonnegative.
    c0 : ndarray, shape (b, n)
        Start concentrations [conc].
    feed : ndarray, shape (n,), optional
        Zero-order feed shared by all members [conc/s].
    t_window : float, optional
        End of the time window [s] (only for flags; does not change the quantities).
    K_low : ndarray, shape (b, n, n), optional
        Low-order parts of ``K`` when the exact matrices are the double-double sums
        ``K + K_low`` (:meth:`kinetics.ratematrix.RatePattern.dense_pair`): the shifted
        diagonal :math:`\sigma - q_i` of the ladder is formed from the exact diagonal
        before it is rounded, and members handed to :func:`kinetics.analysis.summarise`
        take the pair.

    Returns
    -------
    dict of str to ndarray, shape (b, n)
        ``half_life`` [s], ``t_max`` [s], ``c_max`` [conc], ``limit`` [conc]; NaN where
        :func:`kinetics.analysis.summarise` gives None (no start value, never falls to
        half, no global interior maximum, growth without bound).

    .. math::

        c_i(t_{1/2}) = \tfrac12 c_{0,i}, \qquad (K c + f)_i(t_{max}) = 0, \qquad
        c(\infty) = \lim_{t\to\infty} c(t)

    Notes
    -----
    See the module docstring for the method and for the members that are passed to
    :func:`kinetics.analysis.summarise` one by one.  Each member is computed independently
    of the others in the stack.

    References
    ----------
    See the module docstring.
    """
    K = np.asarray(K, dtype=float)
    c0 = np.asarray(c0, dtype=float)
    if K.ndim != 3 or K.shape[1] != K.shape[2] or c0.shape != K.shape[:2]:
        raise RateMatrixError("summarise_batch needs K (b, n, n) and c0 (b, n)", "check the shapes")
    b, n, _ = K.shape
    f = None if feed is None else np.asarray(feed, dtype=float).reshape(n)
    if f is not None and not f.any():
        f = None
    Kl = np.zeros_like(K) if K_low is None else np.asarray(K_low, dtype=float)
    if Kl.shape != K.shape:
        raise RateMatrixError("summarise_batch needs K_low of the shape of K", "check the shapes")
    out = {q: np.full((b, n), np.nan) for q in ("half_life", "t_max", "c_max", "limit")}
    if b == 0:
        return out
    eye = np.eye(n, dtype=bool)
    offdiag = (K != 0) & ~eye
    key = np.concatenate(
        [offdiag.reshape(b, -1), (np.diagonal(K, axis1=1, axis2=2) != 0), c0 > 0], axis=1
    )
    group_of = _row_groups(np.packbits(key, axis=1))
    fallback = np.zeros(b, dtype=bool)
    for g in np.unique(group_of):
        members = np.flatnonzero(group_of == g)
        _group(K, Kl, c0, f, members, offdiag[members[0]], out, fallback)
    if fallback.any():
        _reference(K, Kl, c0, f, t_window, out, np.flatnonzero(fallback))
    return out


def _group(K, Kl, c0, f, members, offdiag, out, fallback) -> None:
    """Members sharing one nonzero pattern and start pattern."""
    pat = _Pattern(offdiag)
    Kg, cg = K[members], c0[members]
    cls = _Classes(pat, Kg)
    has_c0 = np.zeros(pat.ncomp, dtype=bool)
    has_c0[pat.labels[cg[0] > 0]] = True
    has_f = np.zeros(pat.ncomp, dtype=bool)
    if f is not None:
        has_f[pat.labels[f > 0]] = True
    # limits: members of equal class kinds together
    L = np.zeros(cg.shape)
    kind_group = _row_groups(cls.kind)
    growing = np.zeros(members.size, dtype=bool)
    for kg in np.unique(kind_group):
        sel = np.flatnonzero(kind_group == kg)
        sub = _Classes.__new__(_Classes)
        sub.kind = cls.kind[sel]
        sub.u = [None if u is None else u[sel] for u in cls.u]
        sub.v = [None if v is None else v[sel] for v in cls.v]
        Ls, q = _limits(pat, sub, Kg[sel], cg[sel], f, has_c0, has_f)
        L[sel] = Ls
        if np.any(q >= _EXP):
            growing[sel] = True
    out["limit"][members] = np.where(np.isinf(L), np.nan, L)

    # time scales: |Re| and |Im| of the class eigenvalues
    ev = cls.eigenvalues
    rates = np.concatenate([np.abs(ev.real), np.abs(ev.imag)], axis=1)
    pos = rates > 0
    any_rate = pos.any(axis=1)
    r_max = np.where(any_rate, np.where(pos, rates, 0.0).max(axis=1), 1.0)
    r_min = np.where(any_rate, np.where(pos, rates, np.inf).min(axis=1), 1.0)
    oscillating = np.any((np.abs(ev.imag) > 0.2 * np.abs(ev.real)) & (ev.imag != 0), axis=1)
    t_lo = _SCAN_FAST / r_max
    t_hi = np.maximum(_SCAN_SLOW / r_min, 10 * t_lo)
    # stiff members (sigma t over the scan beyond _STIFF_SIGMA_T) go to kinetics.analysis
    sigma = np.max(-np.diagonal(Kg, axis1=1, axis2=2), axis=1)
    stiff = sigma * t_hi > _STIFF_SIGMA_T
    special = growing | oscillating | ~any_rate | stiff
    scale = np.exp2(np.floor(np.log2(1.0 / r_max)))
    fast = np.flatnonzero(~special)
    fallback[members[special]] = True
    if fast.size == 0:
        return
    Kf, cf = Kg[fast], cg[fast]
    sc = scale[fast]
    tau_hi = t_hi[fast] / sc
    n_seg = max(1, math.ceil(math.log(float(tau_hi.max()) / TAU0) / math.log(RATIO)))
    n = Kf.shape[1]
    # only species that are formed (a step or the feed) and consumed can turn over
    formed = offdiag.any(axis=1)
    if f is not None:
        formed |= f > 0
    mx = np.flatnonzero(formed & (np.diagonal(Kf[0]) < 0))
    hl = np.flatnonzero(cf[0] > 0)
    # steps 2-5 of the method, member by member in compiled code
    from . import _sweep_kernels as kernels

    tmax = np.full((fast.size, n), np.nan)
    cmax = np.full((fast.size, n), np.nan)
    half = np.full((fast.size, n), np.nan)
    status = np.empty(fast.size, dtype=np.int8)
    q_low = np.ascontiguousarray(np.diagonal(Kl[members[fast]], axis1=1, axis2=2))
    kernels.summarise_members(
        np.ascontiguousarray(Kf), q_low, np.zeros(n) if f is None else f, f is not None,
        np.ascontiguousarray(cf), sc, np.ascontiguousarray(t_hi[fast]), mx, hl, n_seg,
        tmax, cmax, half, status,
    )  # fmt: skip
    ok = status == kernels.OK
    rows = members[fast[ok]]
    # maxima: global when at least the start value and the long-time limit
    ceiling = np.maximum(cf[ok], L[fast[ok]])
    glob = cmax[ok] >= ceiling * (1 - _GLOBAL_TOL)
    out["t_max"][rows] = np.where(glob, tmax[ok], np.nan)
    out["c_max"][rows] = np.where(glob, cmax[ok], np.nan)
    out["half_life"][rows] = half[ok]
    fallback[members[fast[~ok]]] = True
