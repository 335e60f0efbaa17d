r"""One analysis problem with its exact curve and derivative.

A checked rate matrix, start values, feed, names and window, with the exact curve :math:`c(t)`
and its exact derivative :math:`d = Kc + f`.

Every attribute is set when the problem is built; the scan, the turning points, the
limits and the areas are computed from it by the functions of the other modules.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg

from kinetics.analysis import inputs
from kinetics.analysis.structure import Class, Structure, block
from kinetics.analysis.tolerances import REL_NOISE_D
from kinetics.analysis.working_range import check_working_range
from kinetics.engine import DENSE_MAX, Precision, checks, propagate, propagate_batch
from kinetics.errors import RateMatrixError

__all__ = ["Problem", "State"]

#: Largest scheme whose reported quantities use the double-double engine.
_FULL_PRECISION_MAX = 20
#: Larger schemes too when sigma t over the scan exceeds this (plain double would lose
#: more than the 1e-12 rounding-noise level assumed for the scan).
_DOUBLE_SIGMA_T = 1e4


@dataclass(frozen=True)
class State:
    """The curve at some times: c, its derivative and the derivative's rounding noise.

    c [conc], :math:`d = Kc + f` [conc/s] and the rounding noise of ``d`` [conc/s], each of
    shape (times, n).
    """

    C: np.ndarray
    D: np.ndarray
    N: np.ndarray


class Problem:
    """The checked inputs of one analysis: K, c0, feed, species names and time window.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc], >= 0.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s], >= 0.
    names : sequence of str, optional
        Species names for messages and notes.
    t_window : float, optional
        End of the chosen time window [s].
    K_low : array_like or sparse, optional
        Low-order parts of K (the exact matrix is K + K_low, see
        :func:`kinetics.ratematrix.rate_matrix_pair`): every propagation takes them.

    Raises
    ------
    kinetics.errors.ArgumentValueError
        A typed error per mistake (rate matrix, start or feed, names, window), or a
        :class:`~kinetics.errors.WorkingRangeError`.
    """

    def __init__(self, K, c0, feed=None, *, names=None, t_window=None, K_low=None) -> None:
        self.Kd, self.Ks = inputs.rate_matrix(K)
        n = self.Ks.shape[0]
        self.n = n
        self.K_low = None
        if K_low is not None:
            self.K_low = checks.low_parts(
                K_low, (n, n), "K_low", RateMatrixError, keep_sparse=self.Kd is None
            )
        self.c0 = checks.vector(c0, n, "c0", checks.START_HINT)
        self.f = np.zeros(n)
        self.feed = None
        if feed is not None:
            self.f = checks.vector(feed, n, "feed", checks.FEED_HINT)
            self.feed = self.f if self.f.any() else None
        self.names = inputs.species_names(names, n)
        self.t_window = None if t_window is None else checks.end_time(t_window, "t_window")
        window = self.t_window or 0.0
        amount = float(self.c0.sum() + self.f.sum() * window)
        check_working_range(-self.Ks.diagonal(), window, self.names, amount)
        self.struct = Structure(self.Ks, self.Kd)
        self.absK = abs(self.Ks)
        # every value (scan and refinement) from the entrywise engine in full ("auto")
        # precision on small schemes; above _FULL_PRECISION_MAX species its plain-double
        # route, whose entrywise error (about 1e-16 per unit of sigma t) stays below the
        # rounding-noise level assumed here unless the scheme is stiff over the scan
        span = self.struct.scan_span()
        sigma_t = float(np.max(-self.Ks.diagonal())) * (span[1] if span else 0.0)
        small = n <= _FULL_PRECISION_MAX
        self.precision: Precision = "auto" if small or sigma_t > _DOUBLE_SIGMA_T else "double"
        # exact split K c0 + f = g+ - g- of the derivative at t = 0 (see state)
        self.split: tuple[np.ndarray, np.ndarray] | None = None
        if self.Kd is not None and n <= DENSE_MAX:
            diag = np.diag(self.Kd)
            gp = (self.Kd - np.diag(diag)) @ self.c0 + self.f
            self.split = (gp, -diag * self.c0)

    @property
    def K(self):
        """The rate matrix [1/s], dense when available."""
        return self.Kd if self.Kd is not None else self.Ks

    def apply(self, X: np.ndarray) -> np.ndarray:
        """Rows of X times K^T, i.e. K x for each row x."""
        if self.Kd is not None:
            return X @ self.Kd.T
        return (self.Ks @ X.T).T

    def noise_of_product(self, N: np.ndarray, D: np.ndarray) -> np.ndarray:
        """Rounding noise of the rows of K D, from the noise N of D.

        :math:`|K| (N + 10^{-12} |D|)`, row by row.
        """
        return (self.absK @ (N + REL_NOISE_D * np.abs(D)).T).T

    def propagate(self, times: np.ndarray, precision: Precision | None = None) -> np.ndarray:
        """C at arbitrary (unsorted) times [conc], one engine call."""
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

    def state(self, times: np.ndarray) -> State:
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
        C = self.propagate(times)
        D = self.apply(C) + self.f
        N = REL_NOISE_D * ((self.absK @ C.T).T + np.abs(self.f))
        # the second evaluation only where the first leaves a sign unknown
        unknown = np.flatnonzero(np.any((np.abs(D) <= N) & (N > 0), axis=1))
        if self.split is not None and unknown.size:
            self._split_derivative(times[unknown], unknown, D, N)
        return State(C, D, N)

    def _split_derivative(self, t: np.ndarray, rows: np.ndarray, D, N) -> None:
        """Replace d and its noise at ``rows`` by the split evaluation where it is less noisy.

        The split evaluation is :math:`e^{tK}g^+ - e^{tK}g^-` (in place).
        """
        order = np.argsort(t, kind="stable")
        Kd = self.Kd
        # both are set on a dense scheme, and only there
        assert Kd is not None
        assert self.split is not None
        Kl = np.zeros_like(Kd) if self.K_low is None else self.K_low
        X, bound = propagate_batch(
            np.stack([Kd, Kd]),
            np.stack(self.split),
            t[order],
            precision=self.precision,
            return_bound=True,
            K_low=np.stack([Kl, Kl]),
        )
        P, Q = np.empty((2, t.size, self.n))
        P[order], Q[order] = X[0], X[1]
        rel = np.empty(t.size)
        rel[order] = np.maximum(bound.max(axis=0), REL_NOISE_D)
        N_split = rel[:, None] * (P + Q)
        better = N_split < N[rows]
        D[rows] = np.where(better, P - Q, D[rows])
        N[rows] = np.where(better, N_split, N[rows])

    def solve_block(self, cl: Class, rhs: np.ndarray) -> np.ndarray:
        """X = (-K_CC)^{-1} rhs for a decaying class (a nonsingular M-matrix)."""
        idx = cl.members
        if idx.size == 1:
            return rhs / -float(self.Ks[idx[0], idx[0]])
        return scipy.linalg.solve(-block(self.Ks, self.Kd, idx), rhs)

    def inflow(self, cl: Class, x: np.ndarray) -> np.ndarray:
        """Sum over other species j of K[i, j] x_j for the members i of a class."""
        idx = cl.members
        rows = self.Ks[idx]
        tot = rows @ x
        return tot - rows[:, idx] @ x[idx]
