r"""Compiled kernel of the exponential's action on single vectors (private; numba).

See :mod:`kinetics.engine.action` for the method and its bound.  Double-double
arithmetic as in :mod:`kinetics.engine.kernels` (Dekker's TwoProduct, Knuth's TwoSum,
strict IEEE semantics).
"""

from __future__ import annotations

import numpy as np
from numba import njit

from kinetics.engine.kernels import KERNEL, dd_exp, two_prod, two_sum


@njit(**KERNEL)
def taylor_actions(A, Al, sigma, sigma_lo, t, V, m, tiny, Oh, Ol, ratio):
    r"""``O_q = exp(t_q (A + Al)) V_q`` by the Taylor series of the shifted matrix.

    With :math:`B = A + \sigma I \ge 0` (``sigma + sigma_lo`` the exact largest outflow)
    and :math:`Y = t_q B`: :math:`S = \sum_{k=0}^{m} w_k`, :math:`w_0 = V_q`,
    :math:`w_k = Y w_{k-1} / k`, in double-double; then :math:`O = e^{-\sigma t_q} S`.
    ``ratio[q]`` is the largest :math:`(Y^{m+1} S/(m+1)!)_i / S_i` over the entries
    :math:`S_i > ` ``tiny`` (plain double), for the a posteriori truncation bound.
    """
    # One body on purpose: a flat loop over members compiles faster than inlined helpers.
    N = A.shape[0]
    # B = A + sigma I in double-double (sigma - q_a >= 0 by the choice of sigma), its
    # nonzero entries by rows (shared by all members)
    count = 0
    for a in range(N):
        for c in range(N):
            if A[a, c] != 0.0 or Al[a, c] != 0.0 or a == c:
                count += 1
    ptr = np.zeros(N + 1, dtype=np.int64)
    col = np.empty(count, dtype=np.int64)
    Bh = np.empty(count)
    Bl = np.empty(count)
    k = 0
    for a in range(N):
        for c in range(N):
            xh = A[a, c]
            xl = Al[a, c]
            if a == c:
                s, e = two_sum(xh, sigma)
                e += xl + sigma_lo
                xh = s + e
                xl = e - (xh - s)
                if xh < 0.0:
                    xh = 0.0
                    xl = 0.0
            elif xh == 0.0 and xl == 0.0:
                continue
            col[k] = c
            Bh[k] = xh
            Bl[k] = xl
            k += 1
        ptr[a + 1] = k
    Yh = np.empty(count)
    Yl = np.empty(count)
    # 1/j as double-double pairs (divisions cost more than the products that replace them)
    rh = np.empty(m + 2)
    rl = np.empty(m + 2)
    for j in range(1, m + 2):
        q1 = 1.0 / j
        qp, qe = two_prod(q1, float(j))
        q2 = ((1.0 - qp) - qe) / j
        rh[j] = q1 + q2
        rl[j] = q2 - (rh[j] - q1)
    wh = np.empty(N)
    wl = np.empty(N)
    ph = np.empty(N)
    pl = np.empty(N)
    z = np.empty(N)
    y = np.empty(N)
    for q in range(t.shape[0]):
        tt = t[q]
        for k in range(count):
            p, e = two_prod(Bh[k], tt)
            e += Bl[k] * tt
            hi = p + e
            Yh[k] = hi
            Yl[k] = e - (hi - p)
        for i in range(N):
            wh[i] = V[q, i]
            wl[i] = 0.0
            Oh[q, i] = V[q, i]
            Ol[q, i] = 0.0
        for j in range(1, m + 1):
            # p = Y w: TwoProduct of the high parts, the cross terms in double, the sum
            # by TwoSum with the errors gathered in double (Dot2)
            for a in range(N):
                sh = 0.0
                se = 0.0
                for k in range(ptr[a], ptr[a + 1]):
                    c = col[k]
                    p, e = two_prod(Yh[k], wh[c])
                    e += Yh[k] * wl[c] + Yl[k] * wh[c]
                    s = sh + p
                    d = s - sh
                    se += ((sh - (s - d)) + (p - d)) + e
                    sh = s
                hi = sh + se
                ph[a] = hi
                pl[a] = se - (hi - sh)
            for i in range(N):
                # w = p (1/j) in double-double, then S += w
                p, e = two_prod(ph[i], rh[j])
                e += ph[i] * rl[j] + pl[i] * rh[j]
                hi = p + e
                wh[i] = hi
                wl[i] = e - (hi - p)
                s, e = two_sum(Oh[q, i], wh[i])
                e += Ol[q, i] + wl[i]
                hi = s + e
                Ol[q, i] = e - (hi - s)
                Oh[q, i] = hi
        # a posteriori: z = Y^(m+1) S / (m+1)! in plain double, against S
        for i in range(N):
            z[i] = Oh[q, i]
        for j in range(1, m + 2):
            for a in range(N):
                acc = 0.0
                for k in range(ptr[a], ptr[a + 1]):
                    acc += Yh[k] * z[col[k]]
                y[a] = acc * rh[j]
            for a in range(N):
                z[a] = y[a]
        worst = 0.0
        for i in range(N):
            if Oh[q, i] > tiny:
                r = z[i] / Oh[q, i]
                if r > worst:
                    worst = r
        ratio[q] = worst
        # times the factor exp(-sigma t)
        xh, xl = two_prod(sigma, tt)
        xl += sigma_lo * tt
        eh, el = dd_exp(-xh, -xl)
        for i in range(N):
            p, e = two_prod(eh, Oh[q, i])
            e += eh * Ol[q, i] + el * Oh[q, i]
            hi = p + e
            Ol[q, i] = e - (hi - p)
            Oh[q, i] = hi
