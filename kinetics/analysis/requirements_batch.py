r"""First breaks of requirements on species that move one way, for a stack of problems.

A sweep asks, for thousands of problems :math:`(K^{(m)}, c_0^{(m)})` of one scheme, when
each requirement is first broken.  :func:`kinetics.analysis.requirements.requirement_times`
answers for one problem with a scan of its exact solution; this module answers at once
for the members and requirements whose species moves one way only, and leaves the rest
to it (``done`` is False there):

* a species that no step forms decays as :math:`c_i(t) = c_i(0)\,e^{K_{ii} t}` exactly,
  so ``S >= L`` (with :math:`0 < L < c_i(0)`) is first broken at
  :math:`t = \ln(L/c_i(0))/K_{ii}` (computed as ``log1p``), and ``S <= L`` holds for
  ever once it holds at the start;
* a species that no step consumes never falls: ``S >= L`` holds for ever once it holds
  at the start.  ``S <= L`` is broken when its limit exceeds the level: with every
  consumed species transient (the eigenvalues of :math:`-K_{TT}`, a Z-matrix, clearly in
  the right half-plane: a nonsingular M-matrix) the limit is
  :math:`c_i(0) + K_{iT}(-K_{TT})^{-1} c_T(0)`; the crossing is bracketed on times 4
  times apart and refined by Newton steps, safeguarded by bisection, on the exact
  solution (each step one batched propagation of all pending members from the left end
  of their brackets, the time step times :math:`K` formed as a double-double product so
  that no rate is rounded), with :math:`dc_i/dt = (Kc)_i`, until the step is below
  :data:`~kinetics.analysis.tolerances.XTOL` of the time.

Members with a feed, levels met at the start or in the limit to within
:data:`LIMIT_MARGIN`, and species that rise and fall are left to the scan.

References
----------
A. Berman, R. J. Plemmons, "Nonnegative Matrices in the Mathematical Sciences",
Academic Press (1979), ch. 6 (M-matrices).
J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013) (the entrywise exponential).
"""

from __future__ import annotations

import numpy as np

from kinetics import _doubledouble as dd
from kinetics.analysis.tolerances import MAX_NEWTON, REL_NOISE_C, XTOL
from kinetics.analysis.working_range import MAX_TIME

__all__ = ["LIMIT_MARGIN", "monotone_first_broken"]

#: A limit this close to the level (relative) is left to the scan.
LIMIT_MARGIN = 1e-6
#: The consumed species count as transient where every eigenvalue of :math:`-K_{TT}` has
#: a real part above this share of the largest one (well clear of a closed class).
_SEPARATION = 1e-8
#: Times per batched propagation while the crossings are bracketed (each 4 times the last).
_CHUNK = 10


def _pattern(K: np.ndarray, K_low: np.ndarray):
    """Per member and species: formed by a step, consumed by a step, exact diagonal.

    The diagonal [1/s] is the pair ``K + K_low`` rounded once; also the off-diagonal part.
    """
    n = K.shape[1]
    off = K.copy()
    off[:, np.arange(n), np.arange(n)] = 0.0
    diag_hi = np.diagonal(K, axis1=1, axis2=2)
    diag_lo = np.diagonal(K_low, axis1=1, axis2=2)
    consumed = (diag_hi < 0) | ((diag_hi == 0) & (diag_lo < 0))
    return (off > 0).any(axis=2), consumed, diag_hi + diag_lo, off


def _limits(off, diag, consumed, c0, i: int) -> np.ndarray:
    r"""The limit of species ``i`` (never consumed) per member [conc].

    NaN where the consumed species are not shown transient (an eigenvalue of
    :math:`-K_{TT}` with a real part not clearly positive, see :data:`_SEPARATION`) or
    ``i`` is formed by a species never consumed.
    """
    out = np.full(c0.shape[0], np.nan)
    keys = np.packbits(consumed, axis=1)
    for key in np.unique(keys, axis=0):
        rows = np.flatnonzero((keys == key).all(axis=1))
        T = np.flatnonzero(consumed[rows[0]])
        others = np.setdiff1d(np.arange(c0.shape[1]), [*T, i])
        stays = np.setdiff1d(np.arange(c0.shape[1]), T)
        if (off[rows][:, i, others] > 0).any() or (off[rows][:, T][:, :, stays] > 0).any():
            continue  # formed by a species that is never consumed: no limit from c_T(0)
        if T.size == 0:
            out[rows] = c0[rows, i]
            continue
        A = -off[rows][:, T][:, :, T]
        A[:, np.arange(T.size), np.arange(T.size)] = -diag[rows][:, T]
        ev = np.linalg.eigvals(A)
        ok = (ev.real > _SEPARATION * np.abs(ev).max(axis=1, keepdims=True)).all(axis=1)
        if not ok.any():
            continue
        good = rows[ok]
        y = np.linalg.solve(A[ok], c0[good][:, T, None])[:, :, 0]
        out[good] = c0[good, i] + np.einsum("bj,bj->b", off[good][:, i, T], y)
    return out


def _propagate(K, K_low, x, step) -> np.ndarray:
    r""":math:`e^{\delta K} x` per member for the time steps ``step`` (b,) [s].

    :math:`\delta K` is formed exactly, as a double-double pair.
    """
    from kinetics.engine import propagate_batch

    hi, lo = dd.product(step[:, None, None], np.zeros((step.size, 1, 1)), K, K_low)
    return propagate_batch(hi, x, np.array([1.0]), K_low=lo)[:, 0, :]


def _bracket(K, K_low, c0, i: int, level: np.ndarray, scale: np.ndarray):
    """Per member a bracket of the crossing of ``level`` by ``c_i`` in the scaled time.

    The last of the times (powers of 4) at which ``c_i`` is below ``level`` (0 and the
    start first), with the state there, and the first at which it is above; ``ok`` False
    where none is found up to the working range.
    """
    from kinetics.engine import propagate_batch

    b = c0.shape[0]
    ta, tb = np.zeros(b), np.full(b, np.nan)
    xa = c0.copy()
    ok = np.ones(b, dtype=bool)
    pending = np.arange(b)
    k0 = -30
    while pending.size:
        if np.exp2(k0) * scale[pending].min() > MAX_TIME:
            ok[pending] = False
            break
        taus = np.exp2(np.arange(k0, k0 + 2 * _CHUNK, 2, dtype=float))
        s = scale[pending, None, None]
        X = propagate_batch(K[pending] * s, c0[pending], taus, K_low=K_low[pending] * s)
        g = level[pending, None] - X[:, :, i]
        noise = REL_NOISE_C * np.maximum(np.abs(X[:, :, i]), np.abs(level[pending, None]))
        above, below = (g < -noise), (g > noise)
        first = np.where(above.any(axis=1), above.argmax(axis=1), taus.size)
        for row, m in enumerate(pending):
            h = first[row]
            under = np.flatnonzero(below[row, :h])
            if under.size:
                ta[m], xa[m] = taus[under[-1]], X[row, under[-1]]
            if h < taus.size:
                tb[m] = taus[h]
        pending = pending[np.isnan(tb[pending])]
        k0 += 2 * _CHUNK
    return ta, tb, xa, ok


def _newton(K, K_low, i: int, level, scale, ta, tb, xa) -> tuple[np.ndarray, np.ndarray]:
    """The crossing in each bracket ``[ta, tb]`` of the scaled time [s], and convergence.

    A member that has not converged within :data:`MAX_NEWTON` steps is flagged, so that
    the caller leaves it to the scan.
    """
    lo, hi = np.zeros_like(ta), tb - ta
    delta = 0.5 * hi
    pending = np.arange(ta.size)
    for _ in range(MAX_NEWTON):
        if pending.size == 0:
            break
        x = _propagate(K[pending], K_low[pending], xa[pending], delta[pending] * scale[pending])
        rate = np.einsum("bj,bj->b", K[pending, i, :], x)
        rate += np.einsum("bj,bj->b", K_low[pending, i, :], x)
        g = level[pending] - x[:, i]
        d = delta[pending]
        lo[pending] = np.where(g > 0, d, lo[pending])
        hi[pending] = np.where(g > 0, hi[pending], d)
        with np.errstate(divide="ignore", invalid="ignore"):
            new = d + g / (rate * scale[pending])
        bad = ~np.isfinite(new) | (new <= lo[pending]) | (new >= hi[pending])
        new = np.where(bad, 0.5 * (lo[pending] + hi[pending]), new)
        new = np.where(g == 0, d, new)
        finished = (np.abs(new - d) <= XTOL * (ta[pending] + d)) | (g == 0)
        delta[pending] = new
        pending = pending[~finished]
    converged = np.ones(ta.size, dtype=bool)
    converged[pending] = False
    return (ta + delta) * scale, converged


def monotone_first_broken(K, c0, species, senses, levels, holds, K_low=None):
    """First breaks of the requirements whose species moves one way (module docstring).

    Parameters
    ----------
    K : ndarray, shape (b, n, n)
        Rate matrices [1/s] (no feed).
    c0 : ndarray, shape (b, n)
        Start concentrations [conc].
    species : sequence of int, length r
        The species of each requirement.
    senses : sequence of float, length r
        +1 for ``>=``, -1 for ``<=``.
    levels : ndarray, shape (b, r)
        The level of each requirement for each member [conc].
    holds : ndarray of bool, shape (b, r)
        Whether each requirement holds at the start.
    K_low : ndarray, shape (b, n, n), optional
        Low-order parts of ``K``.

    Returns
    -------
    first_broken : ndarray, shape (b, r)
        [s] the first time each is broken, 0 where it does not hold at the start, NaN
        where it holds for ever (or where ``done`` is False).
    done : ndarray of bool, shape (b, r)
        False where the scan of :func:`~kinetics.analysis.requirements.requirement_times`
        has to decide.

    Examples
    --------
    ``A >= 90 %`` for A -> B with k = 0.01 1/s: t = ln(10/9)/k (textbook):

    >>> import math
    >>> K = np.array([[[-0.01, 0.0], [0.01, 0.0]]])
    >>> t, done = monotone_first_broken(K, np.array([[1.0, 0.0]]), [0], [1.0],
    ...                                 np.array([[0.9]]), np.array([[True]]))
    >>> bool(done[0, 0]), round(float(t[0, 0]) / (math.log(10 / 9) / 0.01), 13)
    (True, 1.0)
    """
    K = np.asarray(K, dtype=float)
    c0 = np.asarray(c0, dtype=float)
    K_low = np.zeros_like(K) if K_low is None else np.asarray(K_low, dtype=float)
    b = K.shape[0]
    out = np.full((b, len(species)), np.nan)
    done = np.zeros((b, len(species)), dtype=bool)
    formed, consumed, diag, off = _pattern(K, K_low)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_max = np.max(-np.where(consumed, diag, 0.0), axis=1)
        scale = np.exp2(np.floor(np.log2(np.where(r_max > 0, 1.0 / r_max, 1.0))))
    for k, (i, sense) in enumerate(zip(species, senses, strict=True)):
        level, ci = levels[:, k], c0[:, i]
        out[~holds[:, k], k] = 0.0
        done[~holds[:, k], k] = True
        at_level = np.abs(ci - level) <= REL_NOISE_C * np.maximum(np.abs(ci), np.abs(level))
        live = holds[:, k] & ~at_level
        falls, rises = live & ~formed[:, i], live & formed[:, i] & ~consumed[:, i]
        done[falls | (rises & (sense > 0)), k] = True  # NaN: holds for ever, or below
        if sense > 0:
            decay = np.flatnonzero(falls & consumed[:, i] & (level > 0))
            with np.errstate(divide="ignore"):
                out[decay, k] = np.log1p((level[decay] - ci[decay]) / ci[decay]) / diag[decay, i]
            continue
        grow = np.flatnonzero(rises)
        if grow.size == 0:
            continue
        limit = _limits(off[grow], diag[grow], consumed[grow], c0[grow], i)
        gap = (limit - level[grow]) / np.maximum(np.abs(limit), np.abs(level[grow]))
        done[grow[gap < -LIMIT_MARGIN], k] = True  # the limit holds: never broken
        cross = grow[gap > LIMIT_MARGIN]
        if cross.size == 0:
            continue
        args = (K[cross], K_low[cross], c0[cross], i, level[cross], scale[cross])
        ta, tb, xa, ok = _bracket(*args)
        found = cross[ok]
        if found.size:
            ok_args = (K[found], K_low[found], i, level[found], scale[found])
            out[found, k], converged = _newton(*ok_args, ta[ok], tb[ok], xa[ok])
            done[found[converged], k] = True
    return out, done
