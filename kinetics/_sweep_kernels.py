r"""Compiled per-member core of the batched summaries (private; numba).

:mod:`kinetics.sweep_summary` finds the class structure, the limits and the time scales
of a stack of problems with stacked linear algebra, then hands the members without
special behaviour to :func:`summarise_members`, which does steps 2-5 of its method for
one member after the other in compiled code: the ladder of exact exponentials, the scan
on the shared log grid, the signs and brackets, the check for hidden turning points and
the refinement (narrowing by quarters, then safeguarded Newton on the nonnegative
Taylor series).  Each member is computed on its own, so its result does not depend on
the other members of the stack; the kernel releases the interpreter lock, so the
threads of the local sweep engine run members in parallel.

The constants and every step follow :mod:`kinetics.sweep_summary` (see its docstring
for the method and the references).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .analysis.tolerances import (
    MAX_NEWTON,
    NEWTON_TERMS,
    NEWTON_Y,
    RATIO,
    REL_NOISE_C,
    REL_NOISE_D,
    SEGMENT_STEPS,
    U0,
    XTOL,
)
from .collector import collector_paused
from .engine.kernels import HELPER, KERNEL, loaded, matmul_double, two_sum
from .engine.plan import TINY as FLUSH  # entries below: no relative accuracy (and slow)

# the constants of the method live in kinetics.analysis.tolerances (numba reads module
# globals as compile-time constants)

# no reference counting (``_nrt``): the kernels allocate nothing (the scratch comes from
# Python), so numba's runtime is not needed, and without it no incref/decref code is
# emitted at every array view (and the runtime is not compiled on first use); no C
# callback wrapper (``no_cfunc_wrapper``): nothing takes the kernels' addresses; no IR
# rewrites (``no_rewrites``): they serve array expressions and constant folding, which
# the kernels do not use.  About 0.5 s less of the first sweep (DEVELOPERS.md,
# "Compiled kernels")
_JIT = {**KERNEL, "_nrt": False, "no_rewrites": True}
# steps and helpers called only from member_kernel: no wrapper for calls from Python and
# no cache file of their own (member_kernel's cached code includes them)
_STEP = {**HELPER, "_nrt": False, "no_rewrites": True}

TAIL = 0.5**17 / math.factorial(17)  # remainder of the ladder's Taylor sum at y = 1/2

#: status codes of a member
OK, FALLBACK = 0, 1


@njit(**_STEP)
def _matvec_t(AT, x, out):
    """``out = A x`` from the transpose ``AT``.

    One contiguous row of ``AT`` per entry of ``x`` (independent lanes, so the inner loop
    vectorises).
    """
    m, n = AT.shape
    for i in range(n):
        out[i] = 0.0
    for j in range(m):
        xj = x[j]
        if xj == 0.0:
            continue
        for i in range(n):
            out[i] += AT[j, i] * xj


@njit(**_STEP)
def _flush(M):
    n, m = M.shape
    for i in range(n):
        for j in range(m):
            if M[i, j] < FLUSH:
                M[i, j] = 0.0


@njit(**_STEP)
def _ladder(B, bp, bi, bv, sigma, norm, steps, P, degree, powers, flat, acc, Q, Pflat):
    r"""Levels :math:`P_\ell = e^{u_\ell A}`, :math:`u_\ell = 2^{-15} 4^\ell`, of one member.

    ``A`` is the scaled (feed-augmented) matrix, :math:`B = A + \sigma I \ge 0` (also in
    compressed rows ``bp, bi, bv``).  While :math:`u_\ell \|B\|_1 \le 1/2` (and always
    for level 1) a level is the Taylor sum of the shifted matrix,

    .. math:: P_\ell = e^{-\sigma u_\ell} \sum_{k=0}^{m} \frac{u_\ell^k}{k!} B^k,

    from one set of powers :math:`B^k`, with :math:`m = n_a - 1 + t + 1` (every path of the
    species graph plus :math:`t + 1` terms, :math:`t \le 16` the least with
    :math:`y^{t+1}/(t+1)! \le 2^{-17}/17!`, the remainder at :math:`y = 1/2`, so every entry
    carries a relative truncation error below that bound); above, a level is the exact
    power :math:`P_{\ell+1} = (P_\ell^2)^2`.  Only nonnegative numbers are added and
    multiplied (Xue & Ye 2013), so no entry suffers cancellation; entries below 1e-290 are
    set to zero.  Scratch arrays: ``degree`` (levels + 1,) (integer), ``powers``
    (na + 17, na, na) and ``flat``, a flat view of it (na + 17, na * na), ``acc``
    (na * na,), ``Q`` (na, na); ``Pflat`` is a flat view of ``P`` (levels + 1, na * na).
    """
    na = len(B)
    levels = len(steps) - 1
    top = np.int64(1)  # np.int64: no literal changed by the loop (DEVELOPERS.md)
    for level in range(2, levels + 1):
        if steps[level] * norm <= 0.5:
            top = level
    # degree of each Taylor level: every path (na - 1 steps) plus the terms until the
    # scalar remainder y^(t+1)/(t+1)! is below that of the top case, y = 1/2 and 17 terms
    # (2^-17/17!); the low levels, with tiny y, need far fewer terms
    for level in range(1, top + 1):
        y = steps[level] * norm
        t = np.int64(0)
        term = y
        while term > TAIL and t < 16:
            t += 1
            term *= y / (t + 1)
        degree[level] = na + t
    m = degree[top]
    for level in range(1, top + 1):
        if degree[level] > m:
            m = degree[level]
    for i in range(na):
        for j in range(na):
            powers[0, i, j] = 1.0 if i == j else 0.0
    for k in range(1, m + 1):
        # B^k = B B^(k-1): one row operation per rate (B is as sparse as the scheme)
        for i in range(na):
            for j in range(na):
                powers[k, i, j] = 0.0
            for e in range(bp[i], bp[i + 1]):
                r = bi[e]
                v = bv[e]
                for j in range(na):
                    powers[k, i, j] += v * powers[k - 1, r, j]
    # Horner in the scalar u, sum_k u^k/k! B^k, on the flattened matrices (long loops)
    for level in range(1, top + 1):
        u = steps[level]
        ml = degree[level]
        c = u / ml
        for e in range(na * na):
            acc[e] = flat[ml, e] * c
        for k in range(ml - 1, 0, -1):
            c = u / k
            for e in range(na * na):
                acc[e] = (flat[k, e] + acc[e]) * c
        ex = math.exp(-sigma * u)
        out = Pflat[level]
        for e in range(na * na):
            out[e] = (flat[0, e] + acc[e]) * ex
        _flush(P[level])
    for level in range(top + 1, levels + 1):
        matmul_double(P[level - 1], P[level - 1], Q)
        _flush(Q)
        matmul_double(Q, Q, P[level])
        _flush(P[level])


@njit(**_STEP)
def _sparse(M, ptr, idx, val):
    """Compressed rows of ``M``: row ``i`` holds ``val[ptr[i]:ptr[i+1]]`` at ``idx``."""
    n, m = M.shape
    k = np.int64(0)  # np.int64: no literal changed by the loop
    for i in range(n):
        ptr[i] = k
        for j in range(m):
            if M[i, j] != 0.0:
                idx[k] = j
                val[k] = M[i, j]
                k += 1
    ptr[n] = k


@njit(**_STEP)
def _row_dot(ptr, idx, val, i, x):
    s = 0.0
    for k in range(ptr[i], ptr[i + 1]):
        s += val[k] * x[idx[k]]
    return s


@njit(**_STEP)
def _noise(d, fi, kii, ci):
    r"""Noise level :math:`10^{-12} (|K| c + |f|)_i` of :math:`d = (K c + f)_i`.

    :math:`(|K| c)_i = (K c)_i - k_{ii} c_i + |k_{ii}| c_i`, as off-diagonal rates are
    >= 0, so it needs no second product.
    """
    return REL_NOISE_D * ((d - fi) - kii * ci + abs(kii) * ci + abs(fi))


@njit(**_STEP)
def _sign(x):
    return 1 if x > 0 else (-1 if x < 0 else 0)


@njit(**_STEP)
def _g(kp, ki, kv, f, x, sp, deriv, level):
    """G at state x: ``(K c + f)_sp`` for a maximum, ``c_sp - level`` for a half-life."""
    if deriv:
        return f[sp] + _row_dot(kp, ki, kv, sp, x)
    return x[sp] - level


@njit(**_STEP)
def _mark(i, mark, need, used):
    """Append species ``i`` to ``need[:used]`` once."""
    if not mark[i]:
        mark[i] = True
        need[used] = i
        used += 1
    return used


# longer than the usual limit, as compiled kernels may be (see member_kernel)
@njit(**_STEP)
def _refine(
    kp, ki, kv, bp, bi, bv, f, sigma, P, steps, ratio, stop, sc, sp, deriv, level, tau_a, x_a, lev,
    out, x, xa, W, D, mark, need,
):  # fmt: skip
    r"""Root [s] and :math:`c_{sp}` at the root of one bracket problem; writes ``out[0:2]``.

    The problem is :math:`g = (K c + f)_{sp}` (a maximum, ``deriv``) or
    :math:`g = c_{sp} - level` (a half-life), positive at the bracket's left end
    ``(tau_a, x_a)`` on ladder level ``lev``.

    1. *Narrowing by quarters*: the bracket is split into ``ratio`` (four) by level
       ``lev - 1`` (three products from its left end); the first quarter whose end is not
       positive becomes the bracket, until level ``stop`` (:math:`u \|B\| \le 1/4`).
    2. *Newton*: on the last bracket the state is the nonnegative Taylor series
       :math:`x(\delta) = e^{-\sigma\delta} \sum_k \delta^k B^k x_a / k!` (the longest
       path plus 14 terms); Newton steps on g with the exact derivative
       (:math:`dg/dt = (K D)_{sp}` for a maximum, :math:`D_{sp}` for a half-life), started
       at the secant point and safeguarded by bisection, until the step is below 1e-13
       of the time.

    ``P`` holds the ladder levels transposed; ``K`` and ``B`` come in compressed rows
    (``kp, ki, kv`` and ``bp, bi, bv``); scratch arrays: ``x``, ``xa`` (na,), ``W``
    (na + 15, na), ``D`` (n,), ``mark`` (na,) (bool) and ``need`` (na,) (integer).
    ``ratio`` is the ratio of consecutive ladder steps, an argument rather than the
    constant, so that LLVM does not unroll the loop over the quarters with its products
    (0.1 s less on first use).
    """
    na = len(x_a)
    for i in range(na):
        xa[i] = x_a[i]
    ga = _g(kp, ki, kv, f, xa, sp, deriv, level)
    _matvec_t(P[lev], xa, x)
    gb = _g(kp, ki, kv, f, x, sp, deriv, level)
    # 1. narrowing by quarters with the next lower level
    while lev > stop:
        u = steps[lev - 1]
        Pm = P[lev - 1]
        shift = float(ratio - 1)
        g_prev = ga
        found = False
        for k in range(1, ratio):
            _matvec_t(Pm, xa, x)
            g = _g(kp, ki, kv, f, x, sp, deriv, level)
            if _sign(g) != 1:
                # the change is in this quarter: [xa, x] is the new bracket
                ga = g_prev
                gb = g
                shift = k - 1.0
                found = True
                break
            for i in range(na):
                xa[i] = x[i]
            g_prev = g
        if not found:  # in the last quarter
            ga = g_prev
        tau_a += shift * u
        lev -= 1
    # 2. Newton on the Taylor series of the last bracket [tau_a, tau_a + w]
    w = steps[lev]
    J = na + NEWTON_TERMS
    for i in range(na):
        W[0, i] = xa[i]
    for k in range(1, J + 1):
        # x = B W[k - 1] in compressed rows (reaction schemes have a few rates per species)
        Wk = W[k - 1]
        for i in range(na):
            x[i] = _row_dot(bp, bi, bv, i, Wk)
        for i in range(na):
            W[k, i] = x[i] / k
    lo = 0.0
    hi = w
    den = ga - gb
    frac = ga / den if den != 0.0 else (np.nan if ga == 0.0 else np.inf * ga)
    if math.isnan(frac):
        frac = 0.5
    frac = 0.02 if 0.02 > frac else (0.98 if 0.98 < frac else frac)
    delta = frac * w
    height = 0.0
    # g and dg/dt need c only at sp, at the species of the row of sp and (for a maximum)
    # at the species of their rows: the state is summed at those entries only
    for i in range(na):
        mark[i] = False
    used = _mark(sp, mark, need, np.int64(0))  # an int64, not the literal 0: one signature
    for e in range(kp[sp], kp[sp + 1]):
        used = _mark(ki[e], mark, need, used)
    rows_used = used
    if deriv:
        for r in range(rows_used):
            j = need[r]
            for e in range(kp[j], kp[j + 1]):
                used = _mark(ki[e], mark, need, used)
    for _ in range(MAX_NEWTON):
        ex = math.exp(-sigma * delta)
        for r in range(used):
            i = need[r]
            acc = W[J, i]
            for k in range(J - 1, -1, -1):
                acc = W[k, i] + delta * acc
            x[i] = acc * ex
        # D at sp and at the species of its row (need[:rows_used])
        for r in range(rows_used if deriv else 1):
            j = need[r]
            D[j] = _row_dot(kp, ki, kv, j, x) + f[j]
        ci = x[sp]
        di = D[sp]
        d2 = _row_dot(kp, ki, kv, sp, D) if deriv else 0.0
        g = di if deriv else ci - level
        gp = (d2 if deriv else di) * sc
        height = ci
        if _sign(g) == 1:
            lo = delta
        else:
            hi = delta
        new = delta - g / gp
        if not math.isfinite(new) or new <= lo or new >= hi:
            new = 0.5 * (lo + hi)
        if g == 0.0:
            new = delta
        done = abs(new - delta) <= XTOL * (tau_a + delta) or g == 0.0
        delta = new
        if done:
            break
    out[0] = (tau_a + delta) * sc
    out[1] = height


@njit(**_STEP)
def _hermite_hit(g0, g1, m0, m1, tol, sg):
    """A sign change of the cubic Hermite model at the interior sixteenths."""
    for q in range(1, 16):
        x = q / 16.0
        x2 = x * x
        x3 = x * x2
        h00 = 2 * x3 - 3 * x2 + 1
        h10 = x3 - 2 * x2 + x
        h01 = -2 * x3 + 3 * x2
        h11 = x3 - x2
        p = h00 * g0 + h10 * m0 + h01 * g1 + h11 * m1
        if _sign(p) != sg and abs(p) > tol:
            return True
    return False


@njit(**_STEP)
def _hidden_turn(
    taus, sc, s, D, D2, N, flags, X, PT, ilevel, ratio, mx, kp, ki, kv, f, diag, x, y, Dq, Nq
):  # fmt: skip
    r"""True if a scan interval hides a turn of a species ``mx`` (the general route).

    An interval ``[jj, jj + 1]`` of the scan ``X`` (times ``taus * sc`` [s]) where the
    derivative ``D`` has the same significant sign ``s`` at both ends while the second
    derivative ``D2`` points to a turn is flagged when the cubic Hermite model of the
    derivative changes sign at one of its sixteenths (beyond the noise levels ``N``); a
    flagged interval is sampled at its ``ratio - 1`` inner points with the next lower
    ladder level of ``PT`` (the levels transposed), and a significant sign against ``s``
    there is a hidden turn.  ``K`` comes in compressed rows ``kp, ki, kv``, ``diag`` is its
    diagonal; scratch arrays: ``flags`` (nm,) (bool), ``x``, ``y`` (na,), ``Dq``, ``Nq``
    (nm,).  A kernel of its own, not written into :func:`member_kernel`: numba's typing and
    lowering take longer per statement the larger the function (0.15 s less on first use).
    """
    M = len(s)
    nm = len(mx)
    _, na = X.shape
    for jj in range(M - 1):
        flagged = np.bool_(False)  # np.bool_: no literal changed by the loop
        h = (taus[jj + 1] - taus[jj]) * sc
        for a in range(nm):
            flags[a] = False
            sg = s[jj, a]
            if sg == 0 or s[jj + 1, a] != sg:
                continue
            if _sign(D2[jj, a]) != -sg or _sign(D2[jj + 1, a]) != sg:
                continue
            g0, g1 = D[jj, a], D[jj + 1, a]
            m0, m1 = h * D2[jj, a], h * D2[jj + 1, a]
            tol = N[jj + 1, a] if N[jj + 1, a] > N[jj, a] else N[jj, a]
            low = abs(g1) if abs(g1) < abs(g0) else abs(g0)
            if 4.0 / 27.0 * (abs(m0) + abs(m1)) < low - tol:
                continue
            if _hermite_hit(g0, g1, m0, m1, tol, sg):
                flags[a] = True
                flagged = True
        if not flagged:
            continue
        # sample the interval at its quarters with the next lower level
        for i in range(na):
            y[i] = X[jj, i]
        Pm = PT[ilevel[jj] - 1]
        for _ in range(ratio - 1):
            _matvec_t(Pm, y, x)
            for i in range(na):
                y[i] = x[i]
            # D = (K x + f)_i and its noise level for the species mx
            for a in range(nm):
                i = mx[a]
                Dq[a] = _row_dot(kp, ki, kv, i, x) + f[i]
                Nq[a] = _noise(Dq[a], f[i], diag[i], x[i])
            for a in range(nm):
                if not flags[a]:
                    continue
                sg = s[jj, a]
                ss = _sign(Dq[a]) if abs(Dq[a]) > Nq[a] else 0
                if ss != 0 and ss != sg:
                    return True
    return False


def summarise_members(
    K, q_low, f, has_feed, c0, scale, t_hi, mx, hl, n_seg, tmax, cmax, half, status
):
    """Steps 2-5 of :mod:`kinetics.sweep_summary` for each member of a stack.

    ``K`` (b, n, n) [1/s] with ``q_low`` (b, n) the low parts of its diagonal (the exact
    diagonal is ``K[i, i] + q_low[i]``); ``f`` (n,) feed (zeros without); ``scale`` the
    powers of two of the scaled time; ``t_hi`` the scan ends [s]; ``mx`` the species that
    can turn over, ``hl`` those with a start value; ``n_seg`` the scan segments of the
    stack.  Writes ``tmax``, ``cmax`` (interior maxima, global or not), ``half`` [s] and
    ``status``.  The scan grid is formed here, the members are computed by
    :func:`member_kernel`.
    """
    # ladder steps u_l = 2^-15 4^l (exact powers of two) and the scan grid: 0, four steps
    # of level 2, then n_seg segments of SEGMENT_STEPS steps of levels 2, 3, ...
    steps = U0 * float(RATIO) ** np.arange(n_seg + 2)
    levels = np.arange(2, n_seg + 2, dtype=np.int64)
    ilevel = np.concatenate((np.full(4, 2, dtype=np.int64), np.repeat(levels, SEGMENT_STEPS)))
    taus = np.zeros(ilevel.size + 1)
    np.cumsum(steps[ilevel], out=taus[1:])  # sequential sums, as the scan adds them
    n = K.shape[1]
    work = _work(n, n + 1 if has_feed else n, mx.shape[0], taus.size, n_seg + 1)
    # the first call in a process compiles the kernel (or loads it from disk); numba's
    # objects would set off collector passes (0.4 s of the first use)
    with collector_paused(not loaded(member_kernel)):
        member_kernel(
            K, q_low, f, has_feed, c0, scale, t_hi, mx, hl, steps, RATIO, taus, ilevel, tmax,
            cmax, half, status, *work,
        )  # fmt: skip


def _work(n, na, nm, total, levels):
    """The scratch arrays of :func:`member_kernel`.

    Allocated here, not in the kernel: each kind of ``np.empty`` call in a kernel
    compiles code of its own.
    """
    empty, zeros = np.empty, np.zeros
    # points along rows for the products of the kernel, as flat buffers: an (n, M) view of
    # one is C-contiguous (a column slice of an (n, total) array would not be, and would
    # compile a second version of matmul_double)
    P = empty((levels + 1, na, na))
    mats = (
        zeros((na, na)), P,
        empty((levels + 1, na, na)), empty((total, na)), empty((total, nm)),
        empty((total, nm)), empty((total, nm)), zeros((total, nm), dtype=np.int8),
        zeros(nm, dtype=np.bool_), empty(n * total), empty(n * total), empty(n * total),
        empty(n),
    )  # fmt: skip
    rows = (
        empty(n + 1, dtype=np.int64), empty(n * n, dtype=np.int64), empty(n * n),
        empty(na + 1, dtype=np.int64), empty(na * na, dtype=np.int64), empty(na * na),
        empty(na), empty(na), empty(nm), empty(nm), empty(2),
    )  # fmt: skip
    powers = empty((na + 17, na, na))
    ladder = (
        empty(levels + 1, dtype=np.int64), powers, powers.reshape(na + 17, na * na),
        empty(na * na), empty((na, na)), P.reshape(levels + 1, na * na),
    )  # fmt: skip
    refine = (
        empty((na + NEWTON_TERMS + 1, na)), empty(n), zeros(na, dtype=np.bool_),
        empty(na, dtype=np.int64),
    )  # fmt: skip
    return mats + rows + ladder + refine


# longer than the usual limit, as compiled kernels may be: one body compiles faster than
# the same code in kernels of its own (DEVELOPERS.md, "Compiled kernels")
@njit(**_JIT)
def member_kernel(
    K, q_low, f, has_feed, c0, scale, t_hi, mx, hl, steps, ratio, taus, ilevel, tmax, cmax,
    half, status, B, P, PT, X, D, D2, N, s, flags, CTbuf, DTbuf, D2Tbuf, diag,
    kp, ki, kv, bp, bi, bv, x, y, Dq, Nq, res, degree, powers, flat, acc, Q, Pflat,
    W, Dn, mark, need,
):  # fmt: skip
    """Steps 2-5 of :mod:`kinetics.sweep_summary` for each member of a stack.

    The arguments of :func:`summarise_members`, with the ladder steps ``steps``, the ratio
    of consecutive steps ``ratio`` (see :func:`_refine`) and the scan grid ``taus``,
    ``ilevel`` (points and the level of each step) instead of ``n_seg``, then the scratch
    arrays of :func:`_work` (allocated by the caller: each kind of ``np.empty`` call in a
    kernel compiles code of its own).
    """
    b, n, _ = K.shape
    na = n + 1 if has_feed else n
    levels = len(steps) - 1
    total = len(taus)
    nm = len(mx)
    for q in range(b):
        Kq = K[q]
        sc = scale[q]
        # scaled augmented matrix A in B (its feed row stays zero), then the shift and the
        # norm (exact: powers of two)
        for a in range(n):
            for c in range(n):
                B[a, c] = Kq[a, c] * sc
            if has_feed:
                B[a, n] = f[a] * sc
        # the shift from the exact diagonal: sigma, a double, at least every exact outflow
        # (the next double up when the largest one has a positive low part), and each
        # sigma - q_a formed from the pair before one rounding (unchanged where q_low = 0)
        sigma = 0.0
        sigma_lo = 0.0
        for a in range(n):
            qh = -B[a, a]
            ql = -q_low[q, a] * sc
            if qh > sigma or (qh == sigma and ql > sigma_lo):
                sigma = qh
                sigma_lo = ql
        if sigma_lo > 0.0:
            sigma = math.nextafter(sigma, math.inf)
        for a in range(na):
            sh, sl = two_sum(sigma, B[a, a] if a < n else 0.0)
            B[a, a] = sh + (sl + (q_low[q, a] * sc if a < n else 0.0))
        norm = 0.0  # largest column sum of |B| over the species, plus the shift
        for c in range(n):
            col = 0.0
            for a in range(n):
                col += abs(B[a, c])
            norm = col if col > norm else norm
        norm += sigma
        _sparse(Kq, kp, ki, kv)
        _sparse(B, bp, bi, bv)
        _ladder(B, bp, bi, bv, sigma, norm, steps, P, degree, powers, flat, acc, Q, Pflat)
        # the levels transposed: matrix-vector products then read contiguous rows
        for level in range(1, levels + 1):
            for a in range(na):
                for c in range(na):
                    PT[level, c, a] = P[level, a, c]
        for i in range(n):
            diag[i] = Kq[i, i]
        stop_f = (
            math.floor(math.log(NEWTON_Y / (U0 * norm)) / math.log(RATIO)) if norm > 0 else levels
        )
        stop = 1 if stop_f < 1 else (levels if stop_f > levels else stop_f)
        # scan, up to the member's own t_hi
        for i in range(n):
            X[0, i] = c0[q, i]
        if has_feed:
            X[0, n] = 1.0
        M = total  # points of the member's scan
        for jj in range(1, total):
            if taus[jj] * sc > t_hi[q]:
                M = jj
                break
            _matvec_t(PT[ilevel[jj - 1]], X[jj - 1], X[jj])
        bad = False
        # maxima: signs of the derivative, hidden turns, sign changes
        if nm:
            # all scan points at once, points along rows: D = K C + f, D2 = K D (a few
            # rates per species, each an operation on a whole row of points)
            CT = CTbuf[: n * M].reshape((n, M))
            DT = DTbuf[: n * M].reshape((n, M))
            D2T = D2Tbuf[: n * M].reshape((n, M))
            for jj in range(M):
                for i in range(n):
                    CT[i, jj] = X[jj, i]
            matmul_double(Kq, CT, DT)
            for i in range(n):
                for jj in range(M):
                    DT[i, jj] += f[i]
            matmul_double(Kq, DT, D2T)
            for jj in range(M):
                for a in range(nm):
                    i = mx[a]
                    d = DT[i, jj]
                    D[jj, a] = d
                    D2[jj, a] = D2T[i, jj]
                    N[jj, a] = _noise(d, f[i], diag[i], X[jj, i])
                    s[jj, a] = _sign(d) if abs(d) > N[jj, a] else 0
            bad = _hidden_turn(
                taus, sc, s[:M], D, D2, N, flags, X, PT, ilevel, ratio, mx, kp, ki, kv, f, diag,
                x, y, Dq, Nq,
            )  # fmt: skip
            # sign changes between consecutive significant points: every + to - change is a
            # local maximum, refined on its interval; the highest is the candidate for the
            # global one (a - to + change, a minimum, needs nothing); a change across points
            # of unknown sign has no one-interval bracket: the general route
            if not bad:
                for a in range(nm):
                    ff = np.int64(0)  # np.int64: no literal changed by the loop
                    lastsig = np.int64(-1)
                    for jj in range(M):
                        sj = s[jj, a]
                        if sj == 0:
                            continue
                        if ff != 0 and sj != ff and jj - lastsig > 1:
                            bad = True
                            break
                        ff = sj
                        lastsig = jj
                    if bad:
                        break
                    best = -1.0
                    for jj in range(1, M):
                        if not (s[jj - 1, a] > 0 and s[jj, a] < 0):
                            continue
                        jb = jj - 1
                        # arguments written out: star arguments pack and unpack tuples of
                        # arrays (7 times the code per call); np.bool_, as a literal True
                        # or False would compile _refine once for each
                        _refine(
                            kp, ki, kv, bp, bi, bv, f, sigma, PT, steps, ratio, stop, sc,
                            mx[a], np.bool_(True), 0.0, taus[jb], X[jb], ilevel[jb], res,
                            x, y, W, Dn, mark, need,
                        )  # fmt: skip
                        if res[1] > best:  # the first of equal heights, as analysis does
                            best = res[1]
                            tmax[q, mx[a]] = res[0]
                            cmax[q, mx[a]] = res[1]
        # half-lives: first significant fall below half the start value
        if not bad:
            for a in range(len(hl)):
                i = hl[a]
                target = 0.5 * c0[q, i]
                lastpos = np.int64(-1)  # np.int64: no literal changed by the loop
                jb = -1
                for jj in range(M):
                    gv = X[jj, i] - target
                    noise = REL_NOISE_C * (target if target > X[jj, i] else X[jj, i])
                    if abs(gv) <= noise:
                        continue
                    if gv > 0:
                        lastpos = jj
                    else:
                        jb = jj
                        break
                if jb < 0:
                    continue
                if jb - lastpos > 1:
                    bad = True
                    break
                _refine(
                    kp, ki, kv, bp, bi, bv, f, sigma, PT, steps, ratio, stop, sc,
                    i, np.bool_(False), target, taus[jb - 1], X[jb - 1], ilevel[jb - 1], res,
                    x, y, W, Dn, mark, need,
                )  # fmt: skip
                half[q, i] = res[0]
        status[q] = FALLBACK if bad else OK
