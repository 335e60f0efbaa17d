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
   (:class:`_Ladder`; the shift-and-Taylor idea of Xue & Ye 2013, no subtraction
   anywhere).
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
   at their quarters.
5. *Refinement.*  A bracket is narrowed by quarters with the next lower ladder level
   until :math:`u \|B\| \le 1/4`; then a safeguarded Newton iteration on the
   nonnegative Taylor series of the state from the bracket's left end, with the exact
   derivatives :math:`g' = (K D)_i` for a maximum and :math:`g' = D_i` for a half-life,
   stops when the step is below :math:`10^{-13}` of the time.  :math:`c_{max}` is the
   concentration at the root.

The curves of a sweep are not computed here: they come from
:func:`kinetics.propagate.propagate_batch` (:func:`kinetics.sweep.chunk_result`).

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
# ladder and scan grid in scaled time: levels u_l = 2^-15 4^l; the scan starts with 4
# steps of level 2 up to tau0 = 2^-9, then segments [tau0 4^d, tau0 4^(d+1)] of 12 steps
# of level d + 2 (about 20 points per decade)
_U0 = 2.0**-15
_RATIO = 4
_TAU0 = 2.0**-9
_SEGMENT_STEPS = 12
# brackets are narrowed until u ||B|| <= 1/4, then a Taylor series of this many terms
# beyond the longest path of the species graph gives the state (remainder < 0.25^14/14!)
_NEWTON_Y = 0.25
_NEWTON_TERMS = 14
_MAX_NEWTON = 60

_NEVER, _DECAY, _CONST, _EXP = -2, -1, 0, 10**9
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
# Scan and root finding on a ladder of exact powers
# ---------------------------------------------------------------------------------------


class _Ladder:
    r"""Exponentials :math:`P_\ell = e^{u_\ell A}` of the scaled (augmented) matrices.

    :math:`A = s_i [[K, f], [0, 0]]` per member (the feed row only with a feed),
    :math:`u_\ell = 2^{-15} 4^\ell`, :math:`B = A + \sigma I \ge 0`.  While
    :math:`y_\ell = u_\ell \|B\|_1 \le 1/2` a level is the Taylor sum of the shifted matrix,

    .. math:: P_\ell = e^{-\sigma u_\ell} \sum_{k=0}^{m} \frac{u_\ell^k}{k!} B^k,

    from one set of powers :math:`B^k` shared by all these levels, with :math:`m = n + 16`
    (every path of the species graph plus a remainder below :math:`2^{-17}/17!`); above, a level
    is the exact power :math:`P_{\ell+1} = (P_\ell^2)^2`.  Every operation adds and
    multiplies nonnegative numbers (Xue & Ye 2013), so no entry suffers cancellation; the
    relative error of a squared level doubles with each squaring (Xue & Ye 2013,
    Theorem 3.2), which the Taylor levels keep to a few squarings (:math:`y \le 128` at
    the top of a scan).  Entries below 1e-290 are set to zero (outside the relative-accuracy
    range, and slow subnormals).
    """

    def __init__(self, K, f, scale, levels: int) -> None:
        b, n, _ = K.shape
        na = n + (0 if f is None else 1)
        A = np.zeros((b, na, na))
        A[:, :n, :n] = K * scale[:, None, None]  # exact: powers of two
        if f is not None:
            A[:, :n, n] = f[None, :] * scale[:, None]
        sigma = np.maximum(-np.diagonal(A, axis1=1, axis2=2).min(axis=1), 0.0)
        B = A + sigma[:, None, None] * np.eye(na)
        self.n, self.na, self.scale, self.sigma, self.B = n, na, scale, sigma, B
        self.norm = np.abs(B[:, :n, :n]).sum(axis=1).max(axis=1) + sigma
        steps = self.step(np.arange(levels + 1))
        taylor = steps[None, :] * self.norm[:, None] <= 0.5  # (b, levels + 1)
        taylor[:, :2] = True  # scaled norms are a few units: y_1 = 2^-13 ||B|| is tiny
        top = int(np.flatnonzero(taylor.any(axis=0)).max())
        m = na + 16
        powers = [np.broadcast_to(np.eye(na), B.shape)]
        for _ in range(m):
            powers.append(powers[-1] @ B)
        P = np.empty((levels + 1, b, na, na))
        P[0] = np.nan  # level 0 (2^-15) is not used
        for level in range(1, top + 1):  # level 0 is not used
            u = float(steps[level])
            mm = m
            acc = powers[mm] * (u / mm)
            for k in range(mm - 1, 0, -1):  # Horner in the scalar u: sum u^k/k! B^k
                acc = (powers[k] + acc) * (u / k)
            acc = powers[0] + acc
            P[level] = self._flush(acc * np.exp(-sigma * u)[:, None, None])
        for level in range(2, levels + 1):
            sq = ~taylor[:, level]
            if sq.any():
                Q = P[level - 1, sq]
                for _ in range(2):
                    Q = self._flush(Q @ Q)
                P[level, sq] = Q
        self.P = P  # (levels + 1, b, na, na)
        # the same, structure of arrays: (na, na, (levels + 1) * b), index level * b + member
        self.b = b
        self.Ps = np.ascontiguousarray(P.transpose(2, 3, 0, 1)).reshape(na, na, -1)
        # lowest level to which a bracket is narrowed before the Taylor-Newton phase
        with np.errstate(divide="ignore"):
            stop = np.floor(np.log(_NEWTON_Y / (_U0 * self.norm)) / np.log(_RATIO))
        self.stop = np.clip(np.nan_to_num(stop, posinf=levels), 1, levels).astype(np.int64)

    def soa(self, level, member) -> np.ndarray:
        """Levels ``level`` of members ``member`` as (na, na, p) (structure of arrays)."""
        return self.Ps[:, :, level * self.b + member]

    @staticmethod
    def _flush(M):
        return np.where(M < 1e-290, 0.0, M)

    @staticmethod
    def step(level):
        return _U0 * np.power(float(_RATIO), level)


def _mvs(M, x):
    """Matrix-vector products in structure-of-arrays layout: (k, k, p) @ (k, p)."""
    return np.einsum("ijp,jp->ip", M, x)


def _mv(M, x):
    """Stacked matrix-vector products (b, k, k) @ (b, k)."""
    return np.matmul(M, x[:, :, None])[:, :, 0]


def _scan(lad: _Ladder, x0, n_segments):
    r"""States on the shared scaled grid.

    Points: 0, then 4 steps of :math:`u_2` up to :math:`\tau_0 = 2^{-9}`, then for
    :math:`d = 0 .. S-1` 12 steps of :math:`u_{d+2}` from :math:`\tau_0 4^d` to
    :math:`\tau_0 4^{d+1}`.  Returns scaled times (M,), states (b, M, na) and the ladder
    level of each interval (M - 1,).
    """
    plan = [(2, 4)] + [(d + 2, _SEGMENT_STEPS) for d in range(n_segments)]
    total = 1 + sum(count for _, count in plan)
    X = np.empty((x0.shape[0], total, x0.shape[1]))
    X[:, 0] = x0
    taus = np.zeros(total)
    levels = np.empty(total - 1, dtype=np.int64)
    j = 0
    x = np.ascontiguousarray(x0.T)
    members = np.arange(x0.shape[0])
    for level, count in plan:
        P = lad.soa(level, members)
        u = float(lad.step(level))
        for _ in range(count):
            x = _mvs(P, x)
            j += 1
            X[:, j] = x.T
            taus[j] = taus[j - 1] + u
            levels[j - 1] = level
    return taus, X, levels


def _species_values(K, f, x, sp, deriv, level, scale, n):
    """g and dg/dtau at states x (p, na) for problems (species sp, kind deriv)."""
    c = x[:, :n]
    rows = np.arange(x.shape[0])
    Ki = K[rows, sp, :]  # (p, n)
    di = np.einsum("pj,pj->p", Ki, c) + (0.0 if f is None else f[sp])
    g = np.where(deriv, di, c[rows, sp] - level)
    return g, c[rows, sp], di, Ki


def _hidden_turn_flags(T, D, D2, N, s) -> np.ndarray:
    r"""Intervals (b, M-1, n) where a cubic Hermite model of the derivative (values and
    slopes at both ends) changes sign although both ends have the same sign: two turning
    points may hide there (the test of :mod:`kinetics.analysis`).

    Only intervals where the slopes point away from the end values at the start and back
    at the end are candidates (a curve decaying through the interval, as fast exponentials
    do, makes the cubic overshoot without any turning point), and of those only the ones
    where the slopes can pull the cubic to zero: with
    :math:`h_{00} + h_{01} = 1` and :math:`|h_{10}|, |h_{11}| \le 4/27` the cubic stays
    above :math:`\min(|g_0|, |g_1|) - \tfrac{4}{27}(|m_0| + |m_1|)`.
    """
    same = (s[:, :-1] == s[:, 1:]) & (s[:, :-1] != 0)
    flag = np.zeros_like(same)
    sg = s[:, :-1]
    # a dip to the other sign and back needs the slope to point away from the end values
    # at the start and back towards them at the end (a curve that decays through the
    # interval, as fast exponentials do, is not a candidate)
    cand = same & (np.sign(D2[:, :-1]) == -sg) & (np.sign(D2[:, 1:]) == sg)
    idx = np.nonzero(cand)
    if idx[0].size == 0:
        return flag
    h = (T[:, 1:] - T[:, :-1])[idx[:2]]
    g0, g1 = D[:, :-1][idx], D[:, 1:][idx]
    m0, m1 = h * D2[:, :-1][idx], h * D2[:, 1:][idx]
    tol = np.maximum(N[:, :-1][idx], N[:, 1:][idx])
    sg = sg[idx]
    near = 4.0 / 27.0 * (np.abs(m0) + np.abs(m1)) >= np.minimum(np.abs(g0), np.abs(g1)) - tol
    idx = tuple(i[near] for i in idx)
    g0, g1, m0, m1, tol, sg = g0[near], g1[near], m0[near], m1[near], tol[near], sg[near]
    hit = np.zeros(g0.size, dtype=bool)
    for x in np.linspace(0.0, 1.0, 17)[1:-1]:
        h00 = 2 * x**3 - 3 * x**2 + 1
        h10 = x**3 - 2 * x**2 + x
        h01 = -2 * x**3 + 3 * x**2
        h11 = x**3 - x**2
        p = h00 * g0 + h10 * m0 + h01 * g1 + h11 * m1
        hit |= (np.sign(p) != sg) & (np.abs(p) > tol)
    flag[idx] = hit
    return flag


def _hidden_turns(lad: _Ladder, K, f, X, s, flags, ilevel, cols) -> np.ndarray:
    """Members (b,) with a turning point inside a flagged interval.

    Each flagged interval is sampled at its interior quarters by the next lower ladder
    level from its left end (:mod:`kinetics.analysis` inserts eighths); a
    significant derivative sign different from the interval's sign there is a real hidden
    turning point.  Other flags were artefacts of the cubic model (fast exponential decay
    within one interval).
    """
    b = K.shape[0]
    n = lad.n
    bad = np.zeros(b, dtype=bool)
    fb, fj = np.nonzero(flags.any(axis=2))
    if fb.size == 0:
        return bad
    P = np.ascontiguousarray(lad.P[ilevel[fj] - 1, fb])
    x = X[fb, fj]
    Kb = K[fb][:, cols, :]
    fc = None if f is None else f[cols]
    ref = s[fb, fj]
    fl = flags[fb, fj]
    turn = np.zeros(fb.size, dtype=bool)
    for _ in range(_RATIO - 1):
        x = _mv(P, x)
        c = x[:, :n]
        D = np.einsum("bij,bj->bi", Kb, c) + (0.0 if fc is None else fc)
        N = _REL_NOISE_D * (
            np.einsum("bij,bj->bi", np.abs(Kb), c) + (0.0 if fc is None else np.abs(fc))
        )
        ss = np.sign(D) * (np.abs(D) > N)
        turn |= ((ss != 0) & (ss != ref) & fl).any(axis=1)
    bad[fb[turn]] = True
    return bad


def _sign_changes(s: np.ndarray):
    """Sign changes between consecutive significant points, one pass over time.

    Parameters
    ----------
    s : ndarray of int8, shape (b, M, k)
        -1, 0 (not significant) or +1 per member, point and species.

    Returns
    -------
    members, species, left, right : ndarray
        Each + to - change (a maximum): the last significant point before it and the
        point where the sign is first negative.
    bad : ndarray of bool, shape (b,)
        Members that need the general route: a - to + change (a minimum), more than one
        change of one species, or points of unknown sign inside a bracket.
    """
    b, M, k = s.shape
    ff = np.zeros((b, k), dtype=np.int8)  # the last significant sign so far
    last = np.full((b, k), -1)
    left = np.full((b, k), -1)
    right = np.full((b, k), -1)
    count = np.zeros((b, k), dtype=np.int64)
    bad = np.zeros((b, k), dtype=bool)
    for j in range(M):
        sj = s[:, j]
        nz = sj != 0
        ch = nz & (ff != 0) & (sj != ff)
        if ch.any():
            count += ch
            bad |= ch & ((sj > 0) | (j - last > 1))
            down = ch & (sj < 0)
            left = np.where(down, last, left)
            right = np.where(down, j, right)
        ff = np.where(nz, sj, ff)
        last = np.where(nz, j, last)
    bad |= count > 1
    mb, mi = np.nonzero(right >= 0)
    return mb, mi, left[mb, mi], right[mb, mi], bad.any(axis=1)


def _refine(lad: _Ladder, K, f, member, sp, deriv, level, tau_a, x_a, ilev, sign_a):
    r"""Roots [s] and c_i at the roots [conc] for bracket problems starting on the scan.

    1. *Narrowing by quarters*: a bracket of one interval of ladder level l is split into
       four by level l - 1 (three products from its left end); the first quarter whose
       end has the other sign becomes the bracket, until :math:`u_l \|B\| \le 1/4`.
    2. *Newton*: on the last bracket the state is the nonnegative Taylor series
       :math:`x(\delta) = e^{-\sigma\delta} \sum_k \delta^k B^k x_a / k!` (the longest
       path of the species graph plus 14 terms); Newton steps on g with the exact
       derivative (:math:`dg/dt = (K D)_i` for a maximum, :math:`D_i` for a half-life) and
       a bisection safeguard, until the step is below 1e-13 of the time.
    """
    n = lad.n
    m = member
    rows_all = np.arange(m.size)
    Ki_all = K[m, sp, :]  # the row of each problem's species (p, n)
    fi_all = 0.0 if f is None else f[sp]
    tau_a = tau_a.copy()
    lev = ilev.copy()
    stop = lad.stop[m]

    KiT = np.ascontiguousarray(Ki_all.T)  # (n, p)

    def g_of(xs, idx):
        """g for problems idx at states xs (na, len(idx)), structure of arrays."""
        c = xs[:n]
        fi = fi_all if f is None else fi_all[idx]
        di = np.einsum("jp,jp->p", KiT[:, idx], c) + fi
        return np.where(deriv[idx], di, c[sp[idx], rows_all[: idx.size]] - level[idx])

    xs_a = np.ascontiguousarray(x_a.T)  # (na, p)
    # g at both ends of the starting brackets (for the secant start of Newton)
    ga = g_of(xs_a, rows_all)
    gb = g_of(_mvs(lad.soa(lev, m), xs_a), rows_all)
    while True:
        act = np.flatnonzero(lev > stop)
        if act.size == 0:
            break
        P = lad.soa(lev[act] - 1, m[act])
        u = lad.step(lev[act] - 1)
        sa = sign_a[act]
        prev = xs_a[:, act]
        x = prev
        g_prev = ga[act]
        found = np.zeros(act.size, dtype=bool)
        new_a = prev.copy()
        new_ga = g_prev.copy()
        new_gb = gb[act]
        shift = np.full(act.size, float(_RATIO - 1))
        for k in range(1, _RATIO):
            x = _mvs(P, x)
            g = g_of(x, act)
            hit = ((np.sign(g) != sa) | (g == 0)) & ~found
            new_a[:, hit] = prev[:, hit]
            new_ga[hit] = g_prev[hit]
            new_gb[hit] = g[hit]
            shift[hit] = k - 1
            found |= hit
            prev = x
            g_prev = g
        new_a[:, ~found] = prev[:, ~found]  # the change is in the last quarter
        new_ga[~found] = g_prev[~found]
        xs_a[:, act] = new_a
        ga[act] = new_ga
        gb[act] = new_gb
        tau_a[act] += shift * u
        lev[act] -= 1
    # Newton on the Taylor series of the last bracket [tau_a, tau_a + u]
    p = m.size
    w = lad.step(lev)
    Bs = np.ascontiguousarray(lad.B[m].transpose(1, 2, 0))  # (na, na, p)
    sig = lad.sigma[m]
    J = lad.na + _NEWTON_TERMS
    terms = [xs_a]
    for k in range(1, J + 1):
        terms.append(_mvs(Bs, terms[-1]) / k)
    W = np.stack(terms)  # (J+1, na, p)
    sc = lad.scale[m]
    Ks = np.ascontiguousarray(K[m].transpose(1, 2, 0))  # (n, n, p)
    fcol = 0.0 if f is None else f[:, None]

    def state(delta, idx):
        acc = W[J][:, idx]
        for k in range(J - 1, -1, -1):
            acc = W[k][:, idx] + delta * acc
        return acc * np.exp(-sig[idx] * delta)

    lo = np.zeros(p)
    hi = w.copy()
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.clip(np.nan_to_num(ga / (ga - gb), nan=0.5), 0.02, 0.98)
    delta = frac * w  # secant start
    height = np.zeros(p)
    active = np.ones(p, dtype=bool)
    for _ in range(_MAX_NEWTON):
        k = np.flatnonzero(active)
        if k.size == 0:
            break
        whole = k.size == p
        idx = slice(None) if whole else k
        x = state(delta[idx], idx)
        c = x[:n]
        rows = rows_all[: k.size]
        D = _mvs(Ks if whole else Ks[:, :, k], c) + fcol
        ci = c[sp[k], rows]
        di = D[sp[k], rows]
        d2 = np.einsum("jp,jp->p", KiT[:, idx], D)
        g = np.where(deriv[k], di, ci - level[k])
        gp = np.where(deriv[k], d2, di) * sc[k]  # dg/dtau
        height[k] = ci
        left = np.sign(g) == sign_a[k]
        lo[k] = np.where(left, delta[k], lo[k])
        hi[k] = np.where(left, hi[k], delta[k])
        with np.errstate(divide="ignore", invalid="ignore"):
            new = delta[k] - g / gp
        bad = ~np.isfinite(new) | (new <= lo[k]) | (new >= hi[k])
        new = np.where(bad, 0.5 * (lo[k] + hi[k]), new)
        new = np.where(g == 0, delta[k], new)
        done = (np.abs(new - delta[k]) <= _XTOL * (tau_a[k] + delta[k])) | (g == 0)
        delta[k] = new
        active[k[done]] = False
    return (tau_a + delta) * sc, height


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
        _group(K, c0, f, members, offdiag[members[0]], out, fallback)
    if fallback.any():
        _reference(K, c0, f, t_window, out, np.flatnonzero(fallback))
    return out


def _group(K, c0, f, members, offdiag, out, fallback) -> None:
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
    n_seg = max(1, math.ceil(math.log(float(tau_hi.max()) / _TAU0) / math.log(_RATIO)))
    lad = _Ladder(Kf, f, sc, n_seg + 1)
    n = Kf.shape[1]
    x0 = cf if f is None else np.concatenate([cf, np.ones((fast.size, 1))], axis=1)
    tau, X, ilevel = _scan(lad, x0, n_seg)
    C = X[:, :, :n]
    T = tau[None, :] * sc[:, None]  # (b, M) real times [s]
    valid = T <= t_hi[fast][:, None]
    # only species that are formed (a step or the feed) and consumed can turn over
    formed = offdiag.any(axis=1)
    if f is not None:
        formed |= f > 0
    mx = np.flatnonzero(formed & (np.diagonal(Kf[0]) < 0))
    hl = np.flatnonzero(cf[0] > 0)
    ok = np.ones(fast.size, dtype=bool)
    steps = np.arange(X.shape[1])[None, :, None]
    pm, ps, pj, pderiv, plevel = [], [], [], [], []
    if mx.size:
        Kt = np.swapaxes(Kf, 1, 2)
        Kmx = np.ascontiguousarray(Kt[:, :, mx])
        # D = K c + f and its derivative K D = K^2 c + K f, for these species only
        K2mx = np.ascontiguousarray(np.swapaxes(Kf @ Kf, 1, 2)[:, :, mx])
        D = C @ Kmx
        D2 = C @ K2mx
        if f is not None:
            D = D + f[mx]
            D2 = D2 + (Kf @ f)[:, None, mx]
        N = _REL_NOISE_D * (C @ np.abs(Kmx) + (0.0 if f is None else np.abs(f[mx])))
        s = np.where((np.abs(D) > N) & valid[:, :, None], np.sign(D), 0.0).astype(np.int8)
        flags = _hidden_turn_flags(T, D, D2, N, s)
        hidden = _hidden_turns(lad, Kf, f, X, s, flags, ilevel, mx)
        mb, mi, ma, mj, bad = _sign_changes(s)
        ok = ~(hidden | bad)
        keep = ok[mb]
        mb, mi, ma, mj = mb[keep], mi[keep], ma[keep], mj[keep]
        pm.append(mb)
        ps.append(mx[mi])
        pj.append(mj - 1)
        pderiv.append(np.ones(mb.size, dtype=bool))
        plevel.append(np.zeros(mb.size))
    if hl.size:
        # half-lives: first significant fall below half the start value
        target = 0.5 * cf[:, hl]
        Ch = C[:, :, hl]
        gv = Ch - target[:, None, :]
        noise = _REL_NOISE_C * np.maximum(Ch, target[:, None, :])
        sh = np.where((np.abs(gv) > noise) & valid[:, :, None], np.sign(gv), 0.0).astype(np.int8)
        neg = sh < 0
        has_neg = neg.any(axis=1) & ok[:, None]
        kb = np.argmax(neg, axis=1)
        lastpos = np.maximum.accumulate(np.where(sh > 0, steps, -1), axis=1)
        hb, hi = np.nonzero(has_neg)
        jb = kb[hb, hi]
        ja = lastpos[hb, jb - 1, hi]
        # noise points between the last point above and the first below: general route
        loose = jb - ja > 1
        ok[hb[loose]] = False
        keep = ~loose & ok[hb]
        hb, hi, jb = hb[keep], hi[keep], jb[keep]
        pm.append(hb)
        ps.append(hl[hi])
        pj.append(jb - 1)
        pderiv.append(np.zeros(hb.size, dtype=bool))
        plevel.append(target[hb, hi])
    if any(len(x) for x in pm):
        pm = np.concatenate(pm)
        ps = np.concatenate(ps)
        pj = np.concatenate(pj)
        deriv = np.concatenate(pderiv)
        lvl = np.concatenate(plevel)
        keep = ok[pm]
        pm, ps, pj, deriv, lvl = pm[keep], ps[keep], pj[keep], deriv[keep], lvl[keep]
    else:
        pm = np.zeros(0, dtype=np.int64)
    if pm.size:
        roots, heights = _refine(
            lad, Kf, f, pm, ps, deriv, lvl, tau[pj], X[pm, pj], ilevel[pj], np.ones(pm.size)
        )
        Lf = L[fast]
        # maxima: global when at least the start value and the long-time limit
        mxp = np.flatnonzero(deriv)
        ceiling = np.maximum(cf[pm[mxp], ps[mxp]], Lf[pm[mxp], ps[mxp]])
        glob = heights[mxp] >= ceiling * (1 - _GLOBAL_TOL)
        sel = mxp[glob]
        rows = members[fast[pm[sel]]]
        out["t_max"][rows, ps[sel]] = roots[sel]
        out["c_max"][rows, ps[sel]] = heights[sel]
        hlp = np.flatnonzero(~deriv)
        out["half_life"][members[fast[pm[hlp]]], ps[hlp]] = roots[hlp]
    fallback[members[fast[~ok]]] = True
