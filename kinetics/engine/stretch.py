"""Stretches of constant conditions applied to many start vectors.

One exponential per distinct length, kept (the timeline of operations uses this).
"""

from __future__ import annotations

import contextlib

import numpy as np
import scipy.sparse

from kinetics.engine import checks
from kinetics.engine.action import actions
from kinetics.engine.dense import augment, distinct, expm_stack, gamma_stack, mv
from kinetics.engine.plan import DENSE_MAX, TINY, U, compose, product_error
from kinetics.engine.propagate import Precision, Propagation, propagate_certified
from kinetics.engine.threads import one_blas_thread
from kinetics.errors import ConcentrationError, RateMatrixError, TimesError

__all__ = ["StretchPropagator"]


class StretchPropagator:
    r"""Exact propagation over stretches of one constant rate matrix and feed.

    For start vectors :math:`s_i` and stretch lengths :math:`h_i`

    .. math::

        c_i = e^{h_i K} s_i + \int_0^{h_i} e^{uK}\,\mathrm{d}u\, f,

    each exponential computed once per distinct length and kept for later calls (a
    timeline of operations applies the same stretch many times, each start known only
    after the previous stretch).  Same engine and bounds as :func:`propagate_certified`.

    Parameters
    ----------
    K : array_like or scipy.sparse, shape (n, n)
        Rate matrix [1/s]; off-diagonal entries >= 0.
    feed : array_like, shape (n,), optional
        Zero-order feed rates [conc/s], >= 0.
    precision : {"auto", "double", "double-double"}
        As in :func:`propagate_certified`.
    K_low, feed_low : array_like, optional
        Low-order parts of double-double inputs (see :func:`propagate_certified`).

    Examples
    --------
    One decay step, k = 1/s, applied to two starts over 1 s (closed form :math:`e^{-1}`):

    >>> p = StretchPropagator([[-1.0]])
    >>> r = p.advance([[1.0], [2.0]], [1.0, 1.0])
    >>> r.concentrations[:, 0].round(12).tolist()
    [0.367879441171, 0.735758882343]
    """

    #: most distinct lengths whose exponentials are kept
    KEEP = 256
    #: up to this many distinct lengths in one call, the starts of each length are
    #: multiplied as the columns of one product (beyond, each start by its own)
    SHARED_PRODUCTS = 32

    def __init__(self, K, feed=None, *, precision: Precision = "auto", K_low=None, feed_low=None):
        checks.precision(precision)
        K = checks.rate_matrix(K)
        n = K.shape[0]
        f = None if feed is None else checks.vector(feed, n, "feed", checks.FEED_HINT)
        self.species = n
        self.precision = precision
        self._kept: dict[float, tuple] = {}
        self._ready: dict[float, tuple] = {}  # kept exponentials arranged for step()
        self._large = n > DENSE_MAX  # the dense stack holds up to DENSE_MAX species
        if scipy.sparse.issparse(K) and not self._large:
            K = K.toarray()
        self._inputs = (K, f, K_low, None if f is None else feed_low)
        self._A: np.ndarray | None = None
        self._Al: np.ndarray | None = None
        if not self._large:
            self._A, self._Al = self._augmented()

    def _augmented(self):
        """The augmented pair (1, N, N) of Eq. (1) of the module docstring."""
        K, f, K_low, feed_low = self._inputs
        n = self.species
        Kd = K.toarray() if scipy.sparse.issparse(K) else K
        Kl = checks.low_parts(K_low, (n, n), "K_low", RateMatrixError)
        fl = None if f is None else checks.low_parts(feed_low, (n,), "feed_low", ConcentrationError)
        A = np.ascontiguousarray(augment(Kd[None], None if f is None else f[None]))
        return A, np.ascontiguousarray(augment(Kl[None], None if fl is None else fl[None]))

    def _exponentials(self, lengths: np.ndarray, remember: bool):
        """``(Fh, Fl, eps, is_dd)`` stacked for ``lengths``, computing only new lengths."""
        A0, Al0 = self._A, self._Al
        assert A0 is not None  # the pair of the dense route, set in __init__
        assert Al0 is not None
        N = A0.shape[-1]
        values, which = distinct(lengths)
        listed = values.tolist()
        new = [i for i, v in enumerate(listed) if v > 0.0 and v not in self._kept]
        Fh, Fl = np.empty((len(listed), N, N)), np.zeros((len(listed), N, N))
        eps, is_dd = np.zeros(len(listed)), np.zeros(len(listed), dtype=bool)
        if new:
            # new writable copies (a broadcast view of one member is read-only: the kernels
            # would be compiled a second time for it, 1.2 s of a run's first use)
            A = np.repeat(A0, len(new), axis=0)
            Al = np.repeat(Al0, len(new), axis=0)
            Fh[new], Fl[new], eps[new], is_dd[new] = expm_stack(A, Al, values[new], self.precision)
        for i, v in enumerate(listed):
            if v in self._kept:
                Fh[i], Fl[i], eps[i], is_dd[i] = self._kept[v]
            elif v == 0.0:
                Fh[i] = np.eye(N)  # exact
            elif remember and len(self._kept) < self.KEEP:
                self._kept[v] = (Fh[i].copy(), Fl[i].copy(), float(eps[i]), bool(is_dd[i]))
        return Fh[which], Fl[which], eps[which], is_dd[which]

    @checks.guard_growth
    def advance(self, starts, lengths, lengths_low=None, *, remember: bool = True) -> Propagation:
        r"""Concentrations after each stretch, with a componentwise error bound.

        Parameters
        ----------
        starts : array_like, shape (m, n)
            Start concentrations [conc], >= 0, one row per stretch.
        lengths : array_like, shape (m,)
            Stretch lengths [s], finite and >= 0, in any order.
        lengths_low : array_like, shape (m,), optional
            Low-order parts: the exact lengths are ``lengths + lengths_low`` (a
            difference of two times is rarely a double); the bound includes the
            effect of the part not propagated.
        remember : bool
            Keep the new exponentials for later calls (up to :attr:`KEEP` lengths).

        Returns
        -------
        Propagation
            ``times`` are the lengths, ``concentrations`` has shape (m, n) and
            ``error_bound[i]`` bounds the relative error of every entry of row ``i``
            above 1e-290 against the exact stretch from the given start.
        """
        from kinetics.engine import kernels

        n = self.species
        try:
            h = np.array(lengths, dtype=float).reshape(-1)
        except (TypeError, ValueError) as exc:
            raise TimesError("stretch lengths are not numeric") from exc
        if not (np.isfinite(h).all() and (h >= 0).all()):
            raise TimesError("stretch lengths must be finite and >= 0")
        m = h.size
        starts = checks.vector(starts, n, "start concentrations", checks.START_HINT, (m,))
        low = checks.low_parts(lengths_low, (m,), "lengths_low", TimesError)
        fed = self._inputs[1] is not None
        if self._large:
            rows, bound = self._advance_large(starts, h)
            X = np.ascontiguousarray((np.hstack([rows, np.ones((m, 1))]) if fed else rows)[None])
        else:
            X, bound = self._dense_rows(starts, h, remember)
        bound = bound[None].copy()
        if low.any():  # carry each state to its exact length (first order) and bound it
            A = self._A if self._A is not None else self._augmented()[0]
            gamma = (A.shape[-1] + 2) * U
            kernels.residual_corrections(A, X, low, n, gamma, TINY, bound)
        bound = np.where(h > 0, compose(bound[0], U), bound[0])
        conc = np.where((h == 0.0)[:, None], starts, X[0, :, :n])
        return Propagation(h, conc, bound, self.precision)

    @property
    def augmented(self) -> np.ndarray:
        """The augmented rate matrix (1, N, N) of the dense route (feed as last column)."""
        if self._A is None:
            raise ValueError("the augmented matrix is kept for schemes of up to DENSE_MAX species")
        return self._A

    def factors(self, lengths) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Exponentials of the augmented matrix for ``lengths`` > 0 (kept), as one step uses them.

        Returns ``(Fh, Fl, eps, is_dd)``: the double-double pairs (m, N, N), the relative
        bound of one product with each (its exponential's and the product's rounding,
        before the final rounding to double) and the route of each.
        """
        return self._factors(np.asarray(lengths, dtype=float).reshape(-1), remember=True)

    def _factors(self, h, remember: bool):
        """:meth:`factors` for ``h``, keeping new exponentials only if ``remember``."""
        Fh, Fl, eps, is_dd = self._exponentials(h, remember)
        return Fh, Fl, compose(eps, gamma_stack(Fh.shape[-1], is_dd)), is_dd

    def _dense_rows(self, starts, h, remember: bool):
        """States (1, m, N) after each stretch and their bounds before the final rounding.

        A length needed by one start only and not kept goes by the exponential's action
        on that start (:mod:`kinetics.engine.action`), where that route certifies it; the
        others by the kept or new exponentials.
        """
        A0, Al0 = self._A, self._Al
        assert A0 is not None  # the pair of the dense route, set in __init__
        assert Al0 is not None
        n, m, N = self.species, h.size, A0.shape[-1]
        x0 = np.ones((m, N))
        x0[:, :n] = starts
        X = np.empty((m, N))
        bound = np.zeros(m)
        rest = np.ones(m, dtype=bool)
        if not remember:
            _, which, counts = np.unique(h, return_inverse=True, return_counts=True)
            once = (counts[which] == 1) & (h > 0)
            once &= ~np.isin(h, np.fromiter(self._kept, dtype=float, count=len(self._kept)))
            if once.any():
                Oh, Ol, b = actions(A0[0], Al0[0], h[once], x0[once])
                done = np.isfinite(b)
                picked = np.flatnonzero(once)[done]
                X[picked] = np.maximum(Oh[done] + Ol[done], 0.0)
                bound[picked] = b[done]
                rest[picked] = False
        if rest.any():
            X[rest], rounding = self._products(h[rest], x0[rest], remember)
            bound[rest] = np.where(h[rest] > 0, rounding, 0.0)
        return np.ascontiguousarray(X[None]), bound

    def _products(self, h, x0, remember: bool):
        """``F(h_i) x0_i`` (clipped at 0) and the bound of each before the final rounding.

        Starts that share a length are multiplied together, as the columns of one product
        (the bound of an entry is that of one product either way).
        """
        from kinetics.engine import kernels

        N = x0.shape[1]
        values, which = distinct(h)
        if values.size > self.SHARED_PRODUCTS:
            Fh, Fl, step, is_dd = self._factors(h, remember)
            v = x0[..., None]
            oh, ol = mv(Fh, Fl, v, np.zeros_like(v), is_dd)
            return np.maximum((oh + ol)[..., 0], 0.0), step
        Fh, Fl, step, is_dd = self._factors(values, remember)
        X = np.empty_like(x0)
        # plain-double products this large go to BLAS: one thread, as in the engine's grids
        # (kinetics.engine.dense.propagate_stack)
        blas = not is_dd.all() and N * N * x0.shape[0] >= kernels.BLAS_FROM
        with one_blas_thread() if blas else contextlib.nullcontext():
            for i in range(values.size):
                sel = which == i
                V = np.ascontiguousarray(x0[sel].T)
                oh, ol = np.empty_like(V), np.empty_like(V)
                kernels.product(Fh[i], Fl[i], V, np.zeros_like(V), oh, ol, np.bool_(is_dd[i]))
                X[sel] = np.maximum(oh + ol, 0.0).T
        return X, step[which]

    def step(self, start, length: float, length_low: float = 0.0) -> tuple[np.ndarray, float]:
        """One stretch from one start: the cheap form of :meth:`advance` for chains.

        Returns the concentrations (shape (n,)) and their relative bound, as one row of
        :meth:`advance` (which this calls for a new length or an unusual start).
        """
        start = np.asarray(start, dtype=float)
        ready = self._ready.get(length)
        usual = start.shape == (self.species,) and start.min() >= 0.0 and start.max() < np.inf
        if ready is None and usual and length in self._kept:
            Fh, Fl, eps, is_dd = self._kept[length]
            N = Fh.shape[-1]
            ready = (Fh[None], Fl[None], np.array([is_dd]), compose(eps, product_error(N, is_dd)))
            self._ready[length] = ready
        if ready is None or not usual:
            r = self.advance(start[None], [length], [length_low])
            return r.concentrations[0], float(r.error_bound[0])
        from kinetics.engine import kernels

        Fh, Fl, is_dd, eps = ready
        n, N = self.species, Fh.shape[-1]
        v = np.ones((1, N, 1))
        v[0, :n, 0] = start
        oh, ol = mv(Fh, Fl, v, np.zeros((1, N, 1)), is_dd)
        if not np.isfinite(oh).all():  # growth: let the checked route say so
            r = self.advance(start[None], [length], [length_low])
            return r.concentrations[0], float(r.error_bound[0])
        X = np.maximum(oh + ol, 0.0).reshape(1, 1, N)
        if not length_low:
            return X[0, 0, :n].copy(), eps + U + eps * U
        bound = np.array([[eps]])
        gamma = (N + 2) * U
        kernels.residual_corrections(self._A, X, np.array([length_low]), n, gamma, TINY, bound)
        return X[0, 0, :n].copy(), float(compose(bound[0, 0], U))

    def _advance_large(self, starts, h):
        """:func:`propagate_certified` (its own route choice), one stretch at a time."""
        K, f, K_low, feed_low = self._inputs
        conc = np.empty_like(starts)
        bound = np.zeros(h.size)
        for i, (s, t) in enumerate(zip(starts, h.tolist(), strict=True)):
            r = propagate_certified(
                K, s, [t], f, precision=self.precision, K_low=K_low, feed_low=feed_low
            )
            conc[i], bound[i] = r.concentrations[0], r.error_bound[0]
        return conc, bound
