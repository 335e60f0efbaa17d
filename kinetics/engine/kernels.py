r"""Compiled kernels of the dense entrywise engine (private; numba).

The dense engine of :mod:`kinetics.engine.propagate` spends its time in a few dozen
products of small nonnegative matrices per exponential and per time grid.  As
array expressions (a temporary tensor per product) their cost is dominated by
interpreter overhead; here each product is one compiled loop nest, and a whole
exponential or a whole time grid of a stack of parameter sets is one call.

Every kernel takes a flag ``dd`` per call or per member:

* ``dd`` true: double-double arithmetic (value ``hi + lo``, about 106 bits).
  Each term :math:`a_{il} b_{lj}` of a product is split exactly by TwoProduct
  (the rounding error of ``a * b`` as one fused multiply-add, :func:`fma`), the
  cross terms :math:`a b_{lo} + a_{lo} b` added to that error by two more fused
  multiply-adds (one rounding each, of a term :math:`2^{-52}` below the product),
  and summed with Knuth's TwoSum, the low parts in plain double, as in Ogita, Rump &
  Oishi's ``Dot2``.  For nonnegative operands nothing cancels, so every entry of the
  product carries a relative error of about :math:`k^2 2^{-106}` for inner
  dimension ``k`` (Ogita, Rump & Oishi 2005, Prop. 5.5 with nonnegative data).
* ``dd`` false: plain double, relative error at most
  :math:`\gamma_k = k u/(1 - k u)` per entry (nonnegative data).

Numba compiles with strict IEEE semantics (no ``fastmath``, no contraction of
``a * b + c`` into a fused multiply-add), which the error-free transformations
rely on; the one fused multiply-add is the explicit :func:`fma`, rounded once by
definition; ``tests/test_kernels.py`` checks TwoProduct and the products against
exact rational arithmetic.  Zero entries of the left factor are skipped, which makes products
of the sparse, often triangular matrices of reaction schemes cheaper.

The compiled code is cached on disk next to this module (numba ``cache=True``),
so only the very first call after installation pays the compilation (about
4 s of CPU for the kernels of a solve; :func:`on_disk` lets the command line say
so).  Python calls one kernel per step (:func:`exponentials`, :func:`grid`,
:func:`product` and a few small ones); helpers called only from kernels are
compiled into them (DEVELOPERS.md, "Compiled kernels", says why).

References
----------
T. J. Dekker, "A floating-point technique for extending the available
precision", Numer. Math. 18, 224-242 (1971). doi:10.1007/BF01397083
T. Ogita, S. M. Rump, S. Oishi, "Accurate sum and dot product", SIAM J. Sci.
Comput. 26, 1955-1988 (2005). doi:10.1137/030601818
IEEE Std 754-2008, sec. 5.4.1 (fusedMultiplyAdd: one rounding of ``a b + c``).
M. S. Paterson, L. J. Stockmeyer, "On the number of nonscalar multiplications
necessary to evaluate polynomials", SIAM J. Comput. 2, 60-66 (1973).
doi:10.1137/0202007
"""

from __future__ import annotations

import threading

import numpy as np
from numba import njit, types
from numba.extending import intrinsic

#: plain-double products with at least this many multiply-adds go to BLAS (the loops
#: win below, where a call's overhead dominates)
BLAS_FROM = 48**3
#: the vector width (in doubles) the compiled loops are padded to: loops over whole groups
#: of LANES entries need no scalar remainder (AVX2 registers hold 4 doubles)
LANES = 4

#: numba options of every compiled kernel of the package that Python calls: compiled code
#: cached on disk, the interpreter lock released (the sweep engine's threads), numpy's
#: error model (no exceptions for divisions), no C callback wrapper (nothing takes a
#: kernel's address; 0.17 s less of a first use)
KERNEL = {"cache": True, "nogil": True, "error_model": "numpy", "no_cfunc_wrapper": True}
#: helpers called only from kernels: no wrapper for calls from Python and no cache file of
#: their own (a kernel's cached code includes the helpers it calls); each saves about
#: 50 ms of the first use
HELPER = {
    "nogil": True,
    "error_model": "numpy",
    "no_cfunc_wrapper": True,
    "no_cpython_wrapper": True,
}


@intrinsic
def fma(typingctx, a, b, c):
    """``a * b + c`` rounded once (LLVM's ``llvm.fma``; kernels only).

    Exact by definition on every machine: one instruction where the processor has a fused
    multiply-add, the C library's correctly rounded ``fma`` elsewhere (slower, as exact).
    """
    sig = types.float64(types.float64, types.float64, types.float64)

    def codegen(context, builder, signature, args):
        return builder.fma(*args)

    return sig, codegen


@njit(**KERNEL)
def two_prod(a, b):
    """Error-free product ``p + e == a * b`` (TwoProduct: ``e`` is one fused multiply-add).

    The error ``a b - p`` of a rounded product is itself a double unless it underflows
    (Dekker 1971, who computes it without a fused multiply-add by splitting both
    factors), so the single rounding of :func:`fma` leaves it exact.
    """
    p = a * b
    return p, fma(a, b, -p)


@njit(**KERNEL)
def two_sum(a, b):
    """Error-free sum ``s + e == a + b`` (Knuth's TwoSum)."""
    s = a + b
    z = s - a
    e = (a - (s - z)) + (b - z)
    return s, e


# ln 2 as an unevaluated sum of three doubles (each the double nearest the remainder)
_LN2 = (0.6931471805599453, 2.3190468138462996e-17, 5.707708438416212e-34)


@njit(**HELPER)
def _dd_add(ah, al, bh, bl):
    """Double-double sum, either sign (the accurate variant of Bailey's QD library)."""
    s, e = two_sum(ah, bh)
    t, f = two_sum(al, bl)
    e += t
    hi = s + e
    e = e - (hi - s)
    e += f
    out = hi + e
    return out, e - (out - hi)


@njit(**KERNEL)
def dd_exp(xh, xl):
    r"""``exp(xh + xl)`` as a double-double, for ``|xh| <= 700``.

    Argument reduction :math:`x = k \ln 2 + r`, :math:`|r| \le \ln 2 / 2`, with
    :math:`\ln 2` in three parts (the products :math:`k \ln 2` are formed with
    TwoProduct, so :math:`r` is accurate to about :math:`2^{-106}` absolute);
    then the Taylor series of :math:`e^r` to degree 27 (remainder below
    :math:`10^{-40}`) by Horner's rule in double-double, where each step adds a
    term smaller than the previous sum, so the rounding errors stay near
    :math:`2^{-105}` relative; finally the exact scaling by :math:`2^k`.
    """
    if xh == 0.0 and xl == 0.0:
        return 1.0, 0.0
    k = np.floor(xh / _LN2[0] + 0.5)
    p, e = two_prod(k, _LN2[0])
    rh, rl = _dd_add(xh, xl, -p, -e)
    p, e = two_prod(k, _LN2[1])
    rh, rl = _dd_add(rh, rl, -p, -e - k * _LN2[2])
    sh = 1.0
    sl = 0.0
    for i in range(27, 0, -1):
        # s <- 1 + r s / i
        ph, pe = two_prod(rh, sh)
        pe += rh * sl + rl * sh
        mh = ph + pe
        ml = pe - (mh - ph)
        q1 = mh / i
        qp, qe = two_prod(q1, float(i))
        q2 = (((mh - qp) - qe) + ml) / i
        sh, sl = _dd_add(1.0, 0.0, q1, q2)
    scale = 2.0 ** int(k)
    return sh * scale, sl * scale


@njit(**KERNEL)
def shift_and_norm(A, Al, t, sigma, sigma_lo, beta):
    r"""Shift :math:`\sigma = \max_i(-a_{ii})` and :math:`\beta = \max(\|tB\|_1, \sigma t)`.

    ``A + Al`` is the matrix as a double-double pair (``Al`` the low parts, zero for a
    matrix given in doubles), so :math:`\sigma` is the exact largest outflow
    ``sigma + sigma_lo``; the norm uses the high parts (it only chooses plans and scales
    bounds, and is rounded up to a quarter power of two by the caller).
    """
    b, n, _ = A.shape
    for q in range(b):
        sh = 0.0
        sl = 0.0
        if n:
            sh = -A[q, 0, 0]
            sl = -Al[q, 0, 0]
        for i in range(1, n):
            xh = -A[q, i, i]
            xl = -Al[q, i, i]
            if xh > sh or (xh == sh and xl > sl):
                sh = xh
                sl = xl
        norm = 0.0
        for c in range(n):
            col = 0.0
            for a in range(n):
                x = A[q, a, c]
                if a == c:
                    x += sh
                col += abs(x)
            if col > norm:
                norm = col
        sigma[q] = sh
        sigma_lo[q] = sl
        ash = abs(sh)
        beta[q] = (ash if ash > norm else norm) * t[q]  # max(norm, |sh|)


@njit(**KERNEL)
def uniform_step(t, tol):
    """Step ``dt`` if ``t`` is ``t[0] + k dt`` within ``tol`` for every ``k``, else -1."""
    p = t.shape[0]
    dt = (t[p - 1] - t[0]) / (p - 1)
    if not dt > 0.0:
        return -1.0
    for k in range(p):
        if abs(t[k] - (t[0] + k * dt)) > tol:
            return -1.0
    return dt


@njit(**HELPER)
def copy(A, B):
    """``B = A`` for 2-D arrays, by explicit loops.

    A slice assignment would cost numba seconds of compilation per call site.
    """
    n, m = A.shape
    for i in range(n):
        for j in range(m):
            B[i, j] = A[i, j]


@njit(**HELPER)
def fill(A, value):
    """Every entry of the 2-D array ``A`` set to ``value``."""
    n, m = A.shape
    for i in range(n):
        for j in range(m):
            A[i, j] = value


@njit(**HELPER)
def matmul_double(A, B, out):
    """``out = A B`` in plain double for nonnegative data; zero entries of ``A`` are skipped."""
    n, k = A.shape
    m = B.shape[1]
    for i in range(n):
        for j in range(m):
            out[i, j] = 0.0
        for r in range(k):
            a = A[i, r]
            if a == 0.0:
                continue
            for j in range(m):
                out[i, j] += a * B[r, j]


@njit(**KERNEL)
def product(Ah, Al, Bh, Bl, Ch, Cl, dd):
    """``C = A B`` for nonnegative ``A`` (n, k) and ``B`` (k, m); ``C`` must not alias them."""
    n, k = Ah.shape
    m = Bh.shape[1]
    if not dd:
        if n * k * m >= BLAS_FROM:
            # large plain-double products (schemes of 65-200 species): BLAS
            np.dot(Ah, Bh, Ch)
        else:
            matmul_double(Ah, Bh, Ch)
        fill(Cl, 0.0)
        return
    sh = np.empty(m)
    se = np.empty(m)
    for i in range(n):
        for j in range(m):
            sh[j] = 0.0
            se[j] = 0.0
        for r in range(k):
            a = Ah[i, r]
            al = Al[i, r]
            if a == 0.0 and al == 0.0:
                continue
            for j in range(m):
                b = Bh[r, j]
                p = a * b
                # TwoProduct error of a*b, then the cross terms of the dd product
                e = fma(a, Bl[r, j], fma(al, b, fma(a, b, -p)))
                # TwoSum of the running sum and p; errors gathered in plain double
                s0 = sh[j]
                s = s0 + p
                z = s - s0
                sh[j] = s
                se[j] += ((s0 - (s - z)) + (p - z)) + e
        for j in range(m):
            s0 = sh[j]
            hi = s0 + se[j]
            Cl[i, j] = se[j] - (hi - s0)
            Ch[i, j] = hi


@njit(**KERNEL)
def exponentials(
    A, Al, t, sigma, sigma_lo, j, s, r, ih, il, dd, Fh, Fl, Y, P, M, power, coef, tiny, ratio
):
    r"""Exponentials ``exp(t_q (A_q + Al_q))`` of a stack sharing one plan, shift and scale inside.

    ``A + Al`` (b, n, n) essentially nonnegative, a double-double pair (``Al`` zero for a
    matrix given in doubles); ``sigma + sigma_lo`` the shifts (:func:`shift_and_norm`);
    ``ih + il`` the inverse factorials.  The shifted diagonal :math:`\sigma - q_i` is
    formed in double-double from the exact outflow :math:`q_i`, so a large outflow does
    not leave a rounding error that acts like a leak over long times.  Per member:

    1. ``Y = t B / 2^j`` (written to ``Y``, double) and the factor
       :math:`e^{-\sigma t / 2^j}`;
    2. the Taylor polynomial :math:`T_m(Y)` of degree ``m = s (r + 1) - 1`` by
       Paterson-Stockmeyer (powers ``Y^0 .. Y^s``, then Horner in ``Y^s``), times the
       factor, squared ``j`` times, written to ``Fh``, ``Fl``;
    3. ``ratio[q]``, the largest ``(coef Y^power F)_ab / F_ab`` over the entries
       ``F_ab > tiny`` (plain double), for the a posteriori truncation bound; ``Y^power``
       is a power of ``Y^s`` when ``power`` is a multiple of ``s`` (``power = m + 1``
       always is: a few products instead of about :math:`\log_2 m`).

    ``P`` (2, s + 1, n, n) and ``M`` (6, n, n) are scratch space (see :func:`scratch`;
    fresh memory per member made the double route twice as slow).
    """
    # One body on purpose, longer than the usual limit: numba compiles every kernel
    # called from Python with all it calls, and one body compiles faster than the same
    # code in inlined helpers (benchmarks/bench_first_use.py).
    b, n, _ = A.shape
    plain = dd and not dd  # false, as a variable: product() keeps a single signature
    scale = 2.0**-j
    Ph, Pl = P[0], P[1]
    Yh, Yl = Ph[1], Pl[1]  # Y is the first power
    Th, Tl, Wh, Wl = M[2], M[3], M[4], M[5]  # Horner sum and product (swapped, not copied)
    zero, G, W, Z = M[0], M[1], M[2], M[3]  # the truncation check (after the sum is stored)
    fill(Ph[0], 0.0)  # Y^0
    fill(Pl[0], 0.0)
    for i in range(n):
        Ph[0, i, i] = 1.0
    for q in range(b):
        # 1. Y and the factor
        tt = t[q] * scale  # exact: power-of-two scaling
        for a in range(n):
            for c in range(n):
                xh = A[q, a, c]
                xl = Al[q, a, c]
                if a == c:  # B = A + sigma I in double-double (nonnegative by the choice of sigma)
                    xh, xl = _dd_add(xh, xl, sigma[q], sigma_lo[q])
                    if xh < 0.0:
                        xh = 0.0
                        xl = 0.0
                if dd:
                    p, e = two_prod(xh, tt)
                    e += xl * tt
                    hi = p + e
                    Yh[a, c] = hi
                    Yl[a, c] = e - (hi - p)
                else:
                    Yh[a, c] = (xh + xl) * tt
                    Yl[a, c] = 0.0
        copy(Yh, Y[q])
        # sigma t by TwoProduct, the scaling exact
        xh, xl = two_prod(sigma[q], t[q])
        xl += sigma_lo[q] * t[q]
        if dd:
            eh, el = dd_exp(-xh * scale, -xl * scale)
        else:
            eh, el = np.exp(-(xh + xl) * scale), 0.0
        # 2. powers of Y, and Horner steps, with the sparser factor on the left (its zero
        # entries are skipped; everything here is a polynomial in Y, so the factors commute)
        for k in range(2, s + 1):
            product(Yh, Yl, Ph[k - 1], Pl[k - 1], Ph[k], Pl[k], dd)
        # Horner in Y^s over the blocks sum_l c_(i s + l) Y^l
        fill(Th, 0.0)
        fill(Tl, 0.0)
        for blk in range(r, -1, -1):
            if blk < r:
                product(Ph[s], Pl[s], Th, Tl, Wh, Wl, dd)
                Th, Wh = Wh, Th
                Tl, Wl = Wl, Tl
            # T += c_(blk s + k) Y^k (nonnegative terms)
            for k in range(s):
                ch = ih[blk * s + k]
                cl = il[blk * s + k]
                if not dd:  # the route is decided outside the loops: the plain one vectorises
                    for a in range(n):
                        for c in range(n):
                            Th[a, c] += ch * Ph[k, a, c]
                    continue
                for a in range(n):
                    for c in range(n):
                        p, e = two_prod(ch, Ph[k, a, c])
                        e += ch * Pl[k, a, c] + cl * Ph[k, a, c]
                        sm, f = two_sum(Th[a, c], p)
                        f += Tl[a, c] + e
                        hi = sm + f
                        Tl[a, c] = f - (hi - sm)
                        Th[a, c] = hi
        # times the factor, then the squarings
        if dd:
            for a in range(n):
                for c in range(n):
                    p, e = two_prod(eh, Th[a, c])
                    e += eh * Tl[a, c] + el * Th[a, c]
                    hi = p + e
                    Tl[a, c] = e - (hi - p)
                    Th[a, c] = hi
        else:
            for a in range(n):
                for c in range(n):
                    Th[a, c] *= eh
        for _ in range(j):
            product(Th, Tl, Th, Tl, Wh, Wl, dd)
            Th, Wh = Wh, Th
            Tl, Wl = Wl, Tl
        copy(Th, Fh[q])
        copy(Tl, Fl[q])
        # 3. G = Y^power by binary powering, from the power Y^s at hand when power is a
        # multiple of s (as m + 1 = s (r + 1) is), then G F (nonnegative, plain double)
        F = Fh[q]
        fill(zero, 0.0)
        fill(G, 0.0)
        for i in range(n):
            G[i, i] = 1.0
        bits = power
        if power % s == 0:
            copy(Ph[s], W)
            bits = power // s
        else:
            copy(Y[q], W)
        while bits > 0:
            if bits & 1:
                product(G, zero, W, zero, Z, zero, plain)
                copy(Z, G)
            bits >>= 1
            if bits:
                product(W, zero, W, zero, Z, zero, plain)
                copy(Z, W)
        product(G, zero, F, zero, Z, zero, plain)
        worst = 0.0
        for a in range(n):
            for c in range(n):
                g = coef * Z[a, c]
                f = F[a, c]
                if f > tiny:
                    rq = g / f
                elif g > tiny:
                    rq = np.inf
                else:
                    rq = 0.0
                if rq > worst:
                    worst = rq
        ratio[q] = worst


@njit(**KERNEL)
def grid(Fh, Fl, x0h, x0l, columns, skip, dd, X, row0, eps, gamma, start_bound, bound):
    r"""A uniform time grid: the states and their error bounds.

    1. States ``F^k x0`` for ``k = 0 .. columns - 1`` by repeated products, per member.
       Each state is one product ``x_{k+1} = F x_k`` (as the row ``x_k^T F^T``, so that
       the inner loop runs over contiguous entries), in double-double for members with
       ``dd``: TwoProduct (:func:`fma`), TwoSum of the running sums (Ogita, Rump &
       Oishi's ``Dot2``).  This costs ``columns`` matrix-vector products and no
       squarings (doubling ``F`` would add one ``N^3`` product per level).  State
       ``k >= skip`` is rounded to double and written to ``X[q, row0 + k - skip, :]``
       (``X`` has shape (b, p, N)).
    2. Their bounds, written to ``bound[q, row0 + k - skip]``: each product with
       :math:`F` (bound :math:`\epsilon`) in arithmetic with product error
       :math:`\gamma` multiplies the relative error by :math:`(1 + \epsilon)(1 +
       \gamma)`, so state ``k`` has :math:`(1 + s)\,((1 + \epsilon)(1 + \gamma))^k - 1`
       with ``s`` the bound of the start state (``start_bound``; relative errors of
       nonnegative factors multiply).

    The times the states stand for, and how far the requested times differ from them,
    are :func:`grid_residuals`.
    """
    # One body on purpose, longer than the usual limit (see exponentials).
    # 1. states
    b, N, _ = Fh.shape
    # the product loops run over whole groups of LANES entries (F^T padded with zero
    # columns): no scalar remainder loop (10 species: 13% faster, 7 species: twice as fast)
    Np = -(-N // LANES) * LANES
    Th = np.zeros((N, Np))  # F^T
    Tl = np.zeros((N, Np))
    vh = np.empty(N)
    vl = np.empty(N)
    sh = np.empty(Np)
    se = np.empty(Np)
    for q in range(b):
        for i in range(N):
            for j in range(N):
                Th[j, i] = Fh[q, i, j]
                Tl[j, i] = Fl[q, i, j]
        for i in range(N):
            vh[i] = x0h[q, i]
            vl[i] = x0l[q, i]
        if skip == 0:
            for i in range(N):
                x = vh[i] + vl[i]
                X[q, row0, i] = 0.0 if 0.0 > x else x  # max(x, 0.0)
        for k in range(1, columns):
            for j in range(Np):
                sh[j] = 0.0
                se[j] = 0.0
            if dd[q]:
                for r in range(N):
                    a = vh[r]
                    al = vl[r]
                    if a == 0.0 and al == 0.0:
                        continue
                    for j in range(Np):
                        bb = Th[r, j]
                        p = a * bb
                        e = fma(a, Tl[r, j], fma(al, bb, fma(a, bb, -p)))
                        s0 = sh[j]
                        s = s0 + p
                        z = s - s0
                        sh[j] = s
                        se[j] += ((s0 - (s - z)) + (p - z)) + e
                for j in range(N):
                    hi = sh[j] + se[j]
                    vl[j] = se[j] - (hi - sh[j])
                    vh[j] = hi
            else:
                for r in range(N):
                    a = vh[r]
                    if a == 0.0:
                        continue
                    for j in range(Np):
                        sh[j] += a * Th[r, j]
                for j in range(N):
                    vh[j] = sh[j]
                    vl[j] = 0.0
            if k >= skip:
                for i in range(N):
                    x = vh[i] + vl[i]
                    X[q, row0 + k - skip, i] = 0.0 if 0.0 > x else x  # max(x, 0.0)
    # 2. bounds
    for q in range(eps.shape[0]):
        step = eps[q] + gamma[q] + eps[q] * gamma[q]
        acc = start_bound[q]
        for k in range(columns):
            if k:
                acc = acc + step + acc * step
            if k >= skip:
                bound[q, row0 + k - skip] = acc


@njit(**KERNEL)
def grid_residuals(times, row0, skip, t_first, dt, residual):
    """What each requested time exceeds the exact time the grid of :func:`grid` reaches.

    ``residual[k] = times[k] - T_k`` for ``k >= row0``, with ``T_k = t_first + (k - row0)
    dt`` (or ``(k - row0 + 1) dt`` with ``skip``), formed with TwoProduct so that the
    residual is exact up to one rounding of a tiny number.
    """
    for k in range(row0, times.shape[0]):
        steps = float(k - row0 + skip)
        p, e = two_prod(steps, dt)
        base = 0.0 if skip else t_first
        s, f = two_sum(base, p)
        f += e
        residual[k] = (times[k] - s) - f


@njit(**KERNEL)
def apply(Fh, Fl, vh, vl, dd, oh, ol):
    """``o = F v`` per member: (b, N, N) times (b, N, c)."""
    for q in range(Fh.shape[0]):
        product(Fh[q], Fl[q], vh[q], vl[q], oh[q], ol[q], dd[q])


def loaded(kernel) -> bool:
    """Whether this process has compiled ``kernel`` or loaded it from disk yet.

    Its overloads (a dict): the ``signatures`` property costs 3 us, paid on every call
    that asks.

    Examples
    --------
    >>> loaded(uniform_step) in (True, False)
    True
    """
    return bool(kernel.overloads)


def on_disk(kernel) -> bool:
    """Whether numba's on-disk cache holds compiled code for ``kernel``.

    Used only to tell the user that the first run compiles; True when numba's cache
    layout cannot be read (a future numba), so that nothing is said.
    """
    from pathlib import Path

    try:
        return Path(kernel._cache._cache_file._index_path).exists()
    except AttributeError:
        return True


_scratch = threading.local()


def scratch(name: str, shape: tuple[int, ...]) -> np.ndarray:
    """A float64 work array of the calling thread, reused from call to call.

    Kernels get their scratch space from here instead of allocating it: arrays above
    glibc's mmap threshold (128 kB) are mapped and unmapped on every call otherwise, and
    the page faults doubled the cost of a 100-species exponential.  One array per name
    and thread; its contents are undefined.
    """
    pool = getattr(_scratch, "pool", None)
    if pool is None:
        pool = _scratch.pool = {}
    a = pool.get(name)
    if a is None or a.shape != shape:
        a = pool[name] = np.empty(shape)
    return a


@njit(**KERNEL)
def squared_bound(eps, gamma):
    r"""Relative bound of :math:`F^2` from the bound ``eps`` of ``F`` (nonnegative ``F``).

    .. math:: \epsilon' = 2\epsilon + \epsilon^2 + \gamma (1 + \epsilon)^2

    (Xue & Ye 2013, Theorem 3.2), with :math:`\gamma` the relative error of one
    nonnegative product in the route's arithmetic.  Python calls the same formula
    uncompiled (``squared_bound.py_func``): a kernel for one scalar costs compilation on
    first use and a slower call; the square as a product rounds alike in both.
    """
    return 2.0 * eps + eps * eps + gamma * ((1.0 + eps) * (1.0 + eps))


@njit(**HELPER)
def nonzero_range(M, first, last):
    """``first[r]``, ``last[r]``: row ``r`` of ``M`` is zero outside ``first[r] .. last[r] - 1``.

    A product loop over that range only adds the same values in the same order (a zero
    term leaves a sum of nonnegative or finite values as it is); for the triangular
    matrices of schemes without cycles it skips about half of the terms.
    """
    n, m = M.shape
    for r in range(n):
        lo = m
        hi = 0
        for j in range(m):
            if M[r, j] != 0.0:
                if j < lo:
                    lo = j
                hi = j + 1
        first[r] = lo if lo < hi else 0
        last[r] = hi


@njit(**KERNEL)
def residual_corrections(A, X, delta, species, gamma, tiny, bound):
    r"""Carry the states from the grid's exact times to the requested ones; bound the step.

    The grid route reaches :math:`T_k = t_k - \delta_k` instead of :math:`t_k` (a time
    that differs in its last bits).  With :math:`|\delta_k|\,\|A\|` at the rounding
    level, :math:`x(t_k) = e^{\delta_k A} x(T_k) \approx (I + \delta_k A)\,x(T_k)`; the
    state is corrected so, and the bound grows by the rounding of the correction,
    :math:`\gamma |\delta_k| (|A|x)_i / x_i + u`, plus twice the second-order remainder
    :math:`\tfrac12 \delta_k^2 (|A|^2 x)_i / x_i`.  Where the correction would not be
    small (:math:`|\delta_k| (|A|x)_i / x_i > 10^{-3}`, a transient far faster than
    the grid's rounding), the state is left and the first-order effect
    :math:`2|\delta_k| (|Ax| + \gamma |A|x)_i / x_i` is added to the bound instead.  Only
    the first ``species`` rows count in the bound (the feed row of an augmented matrix is
    constant).
    """
    # One body on purpose (see exponentials).  The points with a residual are gathered
    # as columns, so that every loop below runs over them (contiguous, the same
    # operations for each): each sum still adds its terms in the order of A x.
    b, _, N = X.shape
    P = 0
    for k in range(delta.shape[0]):
        if delta[k] != 0.0:
            P += 1
    cols = np.empty(P, dtype=np.int64)  # the points with a residual, by explicit loops
    d = np.empty(P)  # (an array expression would cost seconds of compilation)
    P = 0
    for k in range(delta.shape[0]):
        if delta[k] != 0.0:
            cols[P] = k
            d[P] = delta[k]
            P += 1
    AT = np.empty((N, N))  # A of the member, transposed
    first = np.empty(N, dtype=np.int64)  # column c of A is zero outside first..last - 1
    last = np.empty(N, dtype=np.int64)
    x = np.empty((N, P))  # the states, one column per point
    y = np.empty((N, P))  # A x
    a = np.empty((N, P))  # |A| x (x >= 0)
    z = np.empty((N, P))  # |A| a
    largest = np.empty(P)
    worst = np.empty(P)
    for q in range(b):
        for i in range(N):
            for c in range(N):
                AT[c, i] = A[q, i, c]
        nonzero_range(AT, first, last)
        for c in range(N):
            for m in range(P):
                x[c, m] = X[q, cols[m], c]
                y[c, m] = 0.0
                a[c, m] = 0.0
                z[c, m] = 0.0
        for c in range(N):
            for i in range(first[c], last[c]):
                w = AT[c, i]
                for m in range(P):
                    v = w * x[c, m]
                    y[i, m] += v
                    a[i, m] += abs(v)
        for c in range(N):
            for i in range(first[c], last[c]):
                w = abs(AT[c, i])
                for m in range(P):
                    z[i, m] += w * a[c, m]
        for m in range(P):
            largest[m] = 0.0
            worst[m] = 0.0
        # one division per entry: g = |d| (|A|x)_i / x_i and the bound's terms from 1 / x_i
        for i in range(species):
            for m in range(P):
                xi = x[i, m]
                r = 1.0 / xi
                dm = d[m]
                g = abs(dm) * a[i, m] * r
                e = gamma * g + dm * dm * z[i, m] * r + 2.0**-53
                if xi > tiny:
                    if g > largest[m]:
                        largest[m] = g
                    if e > worst[m]:
                        worst[m] = e
        for m in range(P):
            k = cols[m]
            dm = d[m]
            if largest[m] <= 1e-3:
                for i in range(N):
                    xi = x[i, m] + dm * y[i, m]
                    X[q, k, i] = 0.0 if 0.0 > xi else xi  # max(xi, 0.0)
            else:
                worst[m] = 0.0
                for i in range(species):
                    xi = x[i, m]
                    if xi > tiny:
                        e = np.expm1(2.0 * abs(dm) * (abs(y[i, m]) + gamma * a[i, m]) / xi)
                        if e > worst[m]:
                            worst[m] = e
            bound[q, k] = bound[q, k] + worst[m] + bound[q, k] * worst[m]
