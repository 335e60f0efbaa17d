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
2. *Scan.*  Each member ``i`` is scanned in its own scaled time :math:`\tau = t/s_i` with
   :math:`s_i = 2^{\lfloor \log_2 (1/r_{max,i}) \rfloor}` (a power of two, so the scaled
   matrix :math:`s_i K_i` is exact), on a grid shared by the stack: :math:`\tau_0 = 2^{-10}`,
   then segments :math:`[\tau_0 8^d, \tau_0 8^{d+1}]` of 24 equal steps, each segment one
   call of :func:`kinetics.propagate.propagate_batch` on a uniform grid (one exponential
   per member and segment, then products with nonnegative matrices).  A member uses the
   points up to its own :math:`t_{hi} = 50/r_{min}` (:mod:`kinetics.analysis` scans from
   :math:`10^{-3}/r_{max}` to :math:`50/r_{min}`), so its result does not depend on the
   other members of the stack.
3. *Brackets.*  Signs of the exact derivative :math:`D = Kc + f` (below
   :math:`10^{-12}\,(|K|c + |f|)` counted as unknown, as in :mod:`kinetics.analysis`) give
   the maxima; signs of :math:`c_i - c_{0,i}/2` give the half-lives.
4. *Refinement.*  Every bracket is refined by a safeguarded Newton iteration, with the
   exact derivatives :math:`g' = (K D)_i` for a maximum and :math:`g' = D_i` for a
   half-life, evaluated by one stacked engine call per iteration for all brackets
   (:math:`c(x) = e^{x K} c_0`, as the scaled problem :math:`(xK, x f)` at time 1); it
   stops when the Newton step is below :math:`10^{-13} x`.

Members that need the general treatment of :mod:`kinetics.analysis` -- several turning
points of one species, minima, damped oscillations (complex eigenvalues with
:math:`|\mathrm{Im}| > 0.2 |\mathrm{Re}|`), exponential growth, a cubic model of the
derivative that hints at two turning points hidden between scan points, or a scheme
without any rate -- are handed to :func:`kinetics.analysis.summarise` one by one.  The
result equals :func:`kinetics.analysis.summarise` per member to about 1e-12 relative
(tested at 1e-9).

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

from .errors import UsageError

__all__ = ["summarise_batch"]

# the same thresholds as kinetics.analysis (see there)
_REL_NOISE_D = 1e-12
_REL_NOISE_C = 1e-12
_SCAN_FAST = 1e-3
_SCAN_SLOW = 50.0
_XTOL = 1e-13
_CLASS_TOL = 1e-12
_GLOBAL_TOL = 1e-12
# scan grid in scaled time
_TAU0 = 2.0**-10
_SEGMENT_RATIO = 8.0
_SEGMENT_STEPS = 24
_MAX_NEWTON = 60

_NEVER, _DECAY, _CONST, _EXP = -2, -1, 0, 10**9
_DECAYING, _CRITICAL, _GROWING = 0, 1, 2


# ---------------------------------------------------------------------------------------
# Class structure of a nonzero pattern
# ---------------------------------------------------------------------------------------


class _Pattern:
    """Strongly connected components of one nonzero pattern, in topological order."""

    def __init__(self, offdiag: np.ndarray) -> None:
        import networkx as nx
        import scipy.sparse
        from scipy.sparse.csgraph import connected_components

        n = offdiag.shape[0]
        rows, cols = np.nonzero(offdiag)
        adj = scipy.sparse.csr_array((np.ones(rows.size), (cols, rows)), shape=(n, n))
        ncomp, labels = connected_components(adj, directed=True, connection="strong")
        src, dst = labels[cols], labels[rows]
        cross = src != dst
        dag = nx.DiGraph()
        dag.add_nodes_from(range(ncomp))
        dag.add_edges_from(set(zip(src[cross].tolist(), dst[cross].tolist(), strict=True)))
        self.n = n
        self.labels = labels
        self.ncomp = ncomp
        self.order = list(nx.topological_sort(dag))
        self.preds = [list(dag.predecessors(c)) for c in range(ncomp)]
        self.members = [np.flatnonzero(labels == c) for c in range(ncomp)]


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
    """sum over species j outside the class of K[i, j] x_j, for the members i of a class.

    Zero entries of K are skipped, so an infinite x_j of an unconnected species is harmless.
    """
    rows = K[:, idx, :]  # (b, k, n)
    mask = np.ones(K.shape[-1], dtype=bool)
    mask[idx] = False
    with np.errstate(invalid="ignore"):
        terms = np.where(rows[:, :, mask] != 0, rows[:, :, mask] * x[:, None, mask], 0.0)
    return terms.sum(axis=2)


def _solve_class(K: np.ndarray, idx: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """x = (-K_CC)^{-1} rhs for a decaying class (a nonsingular M-matrix), stacked."""
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
# Scan and root finding
# ---------------------------------------------------------------------------------------


def _propagate(K, c0, times, f, precision):
    from .propagate import propagate_batch

    return propagate_batch(K, c0, times, f, precision=precision)


def _at_times(K, c0, f, x, precision) -> np.ndarray:
    """c(x_k) for member k of the stack (b, n): the scaled problem (x K, x f) at time 1."""
    Kx = K * x[:, None, None]
    fx = None if f is None else f[None, :] * x[:, None]
    return _propagate(Kx, c0, np.array([1.0]), fx, precision)[:, 0, :]


def _scan(K, c0, f, scale, n_segments, precision):
    """c on the shared scaled grid: times (M,) in scaled units and C (b, M, n)."""
    Ks = K * scale[:, None, None]  # exact: powers of two
    fs = None if f is None else f[None, :] * scale[:, None]
    first = _propagate(Ks, c0, np.array([0.0, _TAU0]), fs, precision)
    taus = [np.array([0.0, _TAU0])]
    parts = [first]
    start = first[:, -1, :]
    for d in range(n_segments):
        a = _TAU0 * _SEGMENT_RATIO**d
        local = np.linspace(0.0, (_SEGMENT_RATIO - 1.0) * a, _SEGMENT_STEPS + 1)
        seg = _propagate(Ks, start, local, fs, precision)
        taus.append(a + local[1:])
        parts.append(seg[:, 1:, :])
        start = seg[:, -1, :]
    return np.concatenate(taus), np.concatenate(parts, axis=1)


def _hidden_turn_flags(T, D, D2, N, valid) -> np.ndarray:
    """Intervals (b, M-1, n) where a cubic Hermite model of the derivative (values and
    slopes at both ends) changes sign although both ends have the same sign: two turning
    points may hide there (the test of :mod:`kinetics.analysis`)."""
    s = np.sign(D) * (np.abs(D) > N)
    s = np.where(valid[:, :, None], s, 0.0)
    same = (s[:, :-1] == s[:, 1:]) & (s[:, :-1] != 0)
    flag = np.zeros_like(same)
    if not same.any():
        return flag
    h = np.diff(T, axis=1)[:, :, None]
    g0, g1, m0, m1 = D[:, :-1], D[:, 1:], h * D2[:, :-1], h * D2[:, 1:]
    tol = np.maximum(N[:, :-1], N[:, 1:])
    for x in np.linspace(0.0, 1.0, 17)[1:-1]:
        h00 = 2 * x**3 - 3 * x**2 + 1
        h10 = x**3 - 2 * x**2 + x
        h01 = -2 * x**3 + 3 * x**2
        h11 = x**3 - x**2
        p = h00 * g0 + h10 * m0 + h01 * g1 + h11 * m1
        flag |= same & (np.sign(p) != s[:, :-1]) & (np.abs(p) > tol)
    return flag


def _hidden_turns(K, f, T, C, s, flags, precision) -> np.ndarray:
    """Members (b,) with a turning point inside a flagged interval.

    Each flagged interval is sampled at 7 interior points (eighths, as in
    :mod:`kinetics.analysis`) by one exponential of the sub-step from its left end; a
    significant derivative sign different from the interval's sign there is a real hidden
    turning point.  Other flags were artefacts of the cubic model (fast exponential decay
    within one interval).
    """
    bad = np.zeros(K.shape[0], dtype=bool)
    fb, fj = np.nonzero(flags.any(axis=2))
    if fb.size == 0:
        return bad
    count = np.bincount(fb, minlength=K.shape[0])
    bad |= count > 400
    h = (T[fb, fj + 1] - T[fb, fj]) / 8.0
    Ks = K[fb] * h[:, None, None]
    fs = None if f is None else f[None, :] * h[:, None]
    sub = _propagate(Ks, C[fb, fj], np.arange(9.0), fs, precision)[:, 1:8, :]
    Kb = K[fb]
    D = sub @ np.swapaxes(Kb, 1, 2)
    if f is not None:
        D = D + f
    N = _REL_NOISE_D * (sub @ np.swapaxes(np.abs(Kb), 1, 2) + (0.0 if f is None else np.abs(f)))
    ss = np.sign(D) * (np.abs(D) > N)
    ref = s[fb, fj][:, None, :]
    turn = ((ss != 0) & (ss != ref) & flags[fb, fj][:, None, :]).any(axis=(1, 2))
    bad[fb[turn]] = True
    return bad


def _newton(K, c0, f, member, species, a, b, ga, deriv, level, precision):
    """Safeguarded Newton iteration on g(t) = D_i(t) (deriv) or c_i(t) - level.

    All problems advance together (one stacked engine call per iteration).  The bracket
    [a, b] with g(a) of sign ga is kept; a Newton step that leaves it is replaced by the
    midpoint.  Returns the roots [s] and c_i at the last evaluated point [conc].
    """
    m = a.size
    a = a.copy()
    b = b.copy()
    root = np.full(m, np.nan)
    height = np.full(m, np.nan)
    x = 0.5 * (a + b)
    active = np.ones(m, dtype=bool)
    sa = np.sign(ga)
    shrink = b - a
    for it in range(_MAX_NEWTON):
        k = np.flatnonzero(active)
        if k.size == 0:
            break
        mk = member[k]
        fk = None if f is None else f
        C = _at_times(K[mk], c0[mk], fk, x[k], precision)
        rows = np.arange(k.size)
        Kk = K[mk]
        D = np.einsum("bij,bj->bi", Kk, C)
        if f is not None:
            D = D + f
        sp = species[k]
        ci = C[rows, sp]
        di = D[rows, sp]
        dk = deriv[k]
        if dk.any():
            D2i = np.einsum("bj,bj->b", Kk[rows, sp, :], D)
        else:
            D2i = np.zeros(k.size)
        g = np.where(dk, di, ci - level[k])
        gp = np.where(dk, D2i, di)
        height[k] = ci
        hit = g == 0
        left = np.sign(g) == sa[k]
        a[k] = np.where(left & ~hit, x[k], a[k])
        b[k] = np.where(~left & ~hit, x[k], b[k])
        with np.errstate(divide="ignore", invalid="ignore"):
            step = g / gp
            new = x[k] - step
        bad = ~np.isfinite(new) | (new <= a[k]) | (new >= b[k])
        if it % 4 == 3:  # bisect when the bracket has not halved in four steps
            slow = (b[k] - a[k]) > 0.5 * shrink[k]
            bad |= slow
            shrink[k] = b[k] - a[k]
        new = np.where(bad, 0.5 * (a[k] + b[k]), new)
        done = (
            hit
            | (np.abs(new - x[k]) <= _XTOL * np.abs(x[k]))
            | ((b[k] - a[k]) <= _XTOL * np.abs(b[k]) + 1e-300)
        )
        root[k] = np.where(hit, x[k], new)
        x[k] = new
        active[k[done]] = False
    return root, height


# ---------------------------------------------------------------------------------------
# The public function
# ---------------------------------------------------------------------------------------


def _reference(K, c0, f, t_window, out, members) -> None:
    from .analysis import summarise

    n = c0.shape[1]
    names = [f"s{i}" for i in range(n)]
    for i in members:
        s = summarise(K[i], c0[i], names, feed=f, t_window=t_window)
        for j, name in enumerate(names):
            d = s[name]
            for q in ("half_life", "t_max", "c_max", "limit"):
                v = getattr(d, q)
                out[q][i, j] = v if v is not None and math.isfinite(v) else np.nan


def summarise_batch(
    K: np.ndarray,
    c0: np.ndarray,
    feed: np.ndarray | None = None,
    *,
    t_window: float | None = None,
    precision: str = "double",
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
    precision : {"double", "auto", "double-double"}
        Precision of :func:`kinetics.propagate.propagate_batch`.

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
        raise UsageError("summarise_batch needs K (b, n, n) and c0 (b, n)", "check the shapes")
    b, n, _ = K.shape
    f = None if feed is None else np.asarray(feed, dtype=float).reshape(n)
    if f is not None and not f.any():
        f = None
    out = {q: np.full((b, n), np.nan) for q in ("half_life", "t_max", "c_max", "limit")}
    if b == 0:
        return out
    eye = np.eye(n, dtype=bool)
    offdiag = (K != 0) & ~eye
    key = np.concatenate(
        [offdiag.reshape(b, -1), (np.diagonal(K, axis1=1, axis2=2) != 0), c0 > 0], axis=1
    )
    _, group_of = np.unique(np.packbits(key, axis=1), axis=0, return_inverse=True)
    group_of = group_of.reshape(-1)
    fallback = np.zeros(b, dtype=bool)
    for g in np.unique(group_of):
        members = np.flatnonzero(group_of == g)
        _group(K, c0, f, members, offdiag[members[0]], t_window, precision, out, fallback)
    if fallback.any():
        _reference(K, c0, f, t_window, out, np.flatnonzero(fallback))
    return out


def _group(K, c0, f, members, offdiag, t_window, precision, out, fallback) -> None:
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
    _, kind_group = np.unique(cls.kind, axis=0, return_inverse=True)
    kind_group = kind_group.reshape(-1)
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
    special = growing | oscillating | ~any_rate
    t_lo = _SCAN_FAST / r_max
    t_hi = np.maximum(_SCAN_SLOW / r_min, 10 * t_lo)
    scale = np.exp2(np.floor(np.log2(1.0 / r_max)))
    fast = np.flatnonzero(~special)
    fallback[members[special]] = True
    if fast.size == 0:
        return
    Kf, cf = Kg[fast], cg[fast]
    sc = scale[fast]
    tau_hi = t_hi[fast] / sc
    n_seg = max(1, math.ceil(math.log(float(tau_hi.max()) / _TAU0) / math.log(_SEGMENT_RATIO)))
    tau, C = _scan(Kf, cf, f, sc, n_seg, precision)
    T = tau[None, :] * sc[:, None]  # (b, M) real times
    valid = T <= t_hi[fast][:, None]
    absK = np.abs(Kf)
    Kt = np.swapaxes(Kf, 1, 2)
    D = C @ Kt
    if f is not None:
        D = D + f
    N = _REL_NOISE_D * (C @ np.swapaxes(absK, 1, 2) + (0.0 if f is None else np.abs(f)))
    D2 = D @ Kt

    # turning points: sign changes of D between significant points
    s = np.sign(D) * (np.abs(D) > N)
    s = np.where(valid[:, :, None], s, 0.0)
    hidden = _hidden_turns(Kf, f, T, C, s, _hidden_turn_flags(T, D, D2, N, valid), precision)
    M = s.shape[1]
    steps = np.arange(M)[None, :, None]
    last = np.maximum.accumulate(np.where(s != 0, steps, -1), axis=1)
    prev = np.concatenate([np.full((s.shape[0], 1, s.shape[2]), -1), last[:, :-1]], axis=1)
    prev_sign = np.take_along_axis(s, np.maximum(prev, 0), axis=1)
    change = (s != 0) & (prev >= 0) & (prev_sign != s)
    n_change = change.sum(axis=1)  # (b, n)
    minima = (change & (s > 0)).any(axis=1)  # - to +
    bad = hidden | (n_change > 1).any(axis=1) | minima.any(axis=1)
    ok = ~bad

    problems_m, problems_s, pa, pb, pga, pderiv, plevel = [], [], [], [], [], [], []
    # maxima: one + to - change per species
    mb, mj, mi = np.nonzero(change & (s < 0) & ok[:, None, None])
    if mb.size:
        ia = prev[mb, mj, mi]
        problems_m.append(mb)
        problems_s.append(mi)
        pa.append(T[mb, ia])
        pb.append(T[mb, mj])
        pga.append(D[mb, ia, mi])
        pderiv.append(np.ones(mb.size, dtype=bool))
        plevel.append(np.zeros(mb.size))
    # half-lives: first significant fall below half the start value
    target = 0.5 * cf
    gv = C - target[:, None, :]
    noise = _REL_NOISE_C * np.maximum(C, target[:, None, :])
    sh = np.sign(gv) * (np.abs(gv) > noise)
    sh = np.where(valid[:, :, None], sh, 0.0)
    neg = sh < 0
    has_neg = neg.any(axis=1) & (cf > 0) & ok[:, None]
    kb = np.argmax(neg, axis=1)  # (b, n)
    lastpos = np.maximum.accumulate(np.where(sh > 0, steps, -1), axis=1)
    hb, hi = np.nonzero(has_neg)
    if hb.size:
        jb = kb[hb, hi]
        ja = lastpos[hb, jb - 1, hi]
        problems_m.append(hb)
        problems_s.append(hi)
        pa.append(T[hb, ja])
        pb.append(T[hb, jb])
        pga.append(gv[hb, ja, hi])
        pderiv.append(np.zeros(hb.size, dtype=bool))
        plevel.append(target[hb, hi])
    if problems_m:
        pm = np.concatenate(problems_m)
        ps = np.concatenate(problems_s)
        deriv = np.concatenate(pderiv)
        roots, heights = _newton(
            Kf,
            cf,
            f,
            pm,
            ps,
            np.concatenate(pa),
            np.concatenate(pb),
            np.concatenate(pga),
            deriv,
            np.concatenate(plevel),
            precision,
        )
        Lf = L[fast]
        # maxima: global when at least the start value and the long-time limit
        mx = np.flatnonzero(deriv)
        ceiling = np.maximum(cf[pm[mx], ps[mx]], Lf[pm[mx], ps[mx]])
        glob = heights[mx] >= ceiling * (1 - _GLOBAL_TOL)
        sel = mx[glob]
        rows = members[fast[pm[sel]]]
        out["t_max"][rows, ps[sel]] = roots[sel]
        out["c_max"][rows, ps[sel]] = heights[sel]
        hl = np.flatnonzero(~deriv)
        out["half_life"][members[fast[pm[hl]]], ps[hl]] = roots[hl]
    fallback[members[fast[bad]]] = True
