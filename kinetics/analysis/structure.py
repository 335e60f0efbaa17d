"""The class structure of a rate matrix.

Strongly connected components of the species graph in topological order, each classified as
decaying, critical (closed) or growing.

References
----------
Berman, A.; Plemmons, R. J. "Nonnegative Matrices in the Mathematical Sciences",
Academic Press (1979), ch. 6 (M-matrices) and ch. 8 (class structure, limits).

Grassmann, W. K.; Taksar, M. I.; Heyman, D. P. "Regenerative analysis and steady state
distributions for Markov chains." Operations Research 33, 1107-1116 (1985).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse

from kinetics.analysis.tolerances import CLASS_TOL, SCAN_FAST, SCAN_SLOW
from kinetics.analysis.working_range import MAX_LIFETIMES, MAX_TIME
from kinetics.network import condensation

__all__ = ["CRITICAL", "DECAYING", "GROWING", "Class", "Structure", "block", "gth_stationary"]

#: Kinds of a class: it loses material, keeps it (a zero Perron root), or makes more.
DECAYING, CRITICAL, GROWING = "decaying", "critical", "growing"


def gth_stationary(B: np.ndarray) -> np.ndarray:
    """Stationary vector of an irreducible conservative block (column sums zero).

    Grassmann, Taksar & Heyman 1985 state reduction: only off-diagonal rates are used and
    every operation is an addition, multiplication or division of nonnegative numbers, so
    each entry is accurate to a few rounding errors.

    Examples
    --------
    >>> # A <=> B with kf = 2, kr = 1 (1/s): the equilibrium shares are kr : kf = 1/3 : 2/3
    >>> gth_stationary(np.array([[-2.0, 1.0], [2.0, -1.0]])).round(12).tolist()
    [0.333333333333, 0.666666666667]
    """
    A = np.array(B, dtype=float).T  # row convention: A[i, j] = rate i -> j
    m = A.shape[0]
    np.fill_diagonal(A, 0.0)
    for k in range(m - 1, 0, -1):
        s = A[k, :k].sum()
        A[:k, k] /= s
        A[:k, :k] += np.outer(A[:k, k], A[k, :k])
    pi = np.zeros(m)
    pi[0] = 1.0
    for k in range(1, m):
        pi[k] = pi[:k] @ A[:k, k]
    return pi / pi.sum()


def _null_vector(B: np.ndarray) -> np.ndarray:
    """Positive null vector of a singular irreducible Metzler block (general case)."""
    _, _, vh = np.linalg.svd(B)
    v = np.abs(vh[-1])
    return v / v.sum()


@dataclass(frozen=True)
class Class:
    """One strongly connected component of the species graph.

    Attributes
    ----------
    members : ndarray of int
        Species indices.
    kind : str
        :data:`DECAYING`, :data:`CRITICAL` or :data:`GROWING`.
    perron : float
        Largest real part of the eigenvalues of its block [1/s] (exactly 0 when critical).
    eigenvalues : ndarray of complex
        Of its diagonal block [1/s].
    u, v : ndarray or None
        Left and right null vectors of a critical class.
    outlet : bool
        True when a step leads out of the class.
    """

    members: np.ndarray
    kind: str
    perron: float
    eigenvalues: np.ndarray
    u: np.ndarray | None = None
    v: np.ndarray | None = None
    outlet: bool = False


def _classify_block(idx: np.ndarray, B: np.ndarray, outlet: bool) -> Class:
    eig = np.linalg.eigvals(B)
    s = B.sum(axis=0)
    tol = CLASS_TOL * np.abs(B).sum(axis=0)
    if np.all(s <= tol):
        if np.all(np.abs(s) <= tol):
            v = gth_stationary(B)
            kind, perron, u = CRITICAL, 0.0, np.ones(idx.size)
        else:
            # irreducible, column sums <= 0 and one < 0: a nonsingular M-matrix
            # (Berman & Plemmons 1979, ch. 6, condition of diagonal dominance)
            return Class(idx, DECAYING, float(eig.real.max()), eig, outlet=outlet)
    else:
        perron = float(eig.real.max())
        scale = np.abs(B).max()
        if perron > CLASS_TOL * scale:
            return Class(idx, GROWING, perron, eig, outlet=outlet)
        if perron < -CLASS_TOL * scale:
            return Class(idx, DECAYING, perron, eig, outlet=outlet)
        kind, perron = CRITICAL, 0.0
        v = _null_vector(B)
        u = _null_vector(B.T)
    # the Perron eigenvalue of a critical class is exactly zero
    k = int(np.argmin(np.abs(eig)))
    eig = eig.copy()
    eig[k] = 0.0
    return Class(idx, kind, perron, eig, u, v, outlet)


class Structure:
    r"""Strongly connected components of the species graph, in topological order.

    Parameters
    ----------
    Ks : scipy.sparse.csr_array, shape (n, n)
        Rate matrix [1/s] (column j: the outflow of species j).
    Kd : ndarray or None
        The same matrix dense, when available.

    Attributes
    ----------
    n, ncomp : int
        Species and classes.
    labels : ndarray of int
        Class of each species.
    dag : networkx.DiGraph
        The condensation: class j -> class i for a step from j into i.
    order : list of int
        Classes in topological order (upstream first).
    preds : list of list of int
        Classes with a step into each class.
    classes : list of Class
    sigma : float
        Largest consumption rate :math:`\max_i -K_{ii}` [1/s].
    rates : ndarray
        Nonzero time-scale rates [1/s]: :math:`|\operatorname{Re}\lambda|` and
        :math:`|\operatorname{Im}\lambda|` of the nonzero eigenvalues of the classes.
    """

    def __init__(self, Ks: scipy.sparse.csr_array, Kd: np.ndarray | None) -> None:
        n = Ks.shape[0]
        self.n = n
        coo = Ks.tocoo()
        off = coo.row != coo.col
        rows, cols = coo.row[off], coo.col[off]
        comps = condensation(cols, rows, n)  # edge j -> i for K[i, j] > 0
        self.labels = comps.labels
        self.dag = comps.dag
        self.order = comps.order
        self.preds = comps.predecessors
        self.ncomp = comps.count
        src, dst = self.labels[cols], self.labels[rows]
        cross = src != dst
        outlet = np.zeros(comps.count, dtype=bool)
        outlet[src[cross]] = True
        diag = Ks.diagonal()
        self.classes = [
            self._classify(comps.members[c], Ks, Kd, diag, bool(outlet[c]))
            for c in range(comps.count)
        ]
        self.sigma = float(np.max(-diag))
        parts = [np.abs(cl.eigenvalues.real) for cl in self.classes]
        parts += [np.abs(cl.eigenvalues.imag) for cl in self.classes]
        r = np.concatenate(parts) if parts else np.zeros(0)
        self.rates = r[r > 0]

    @staticmethod
    def _classify(idx, Ks, Kd, diag, outlet: bool) -> Class:
        if idx.size == 1:
            r = float(diag[idx[0]])
            kind = DECAYING if r < 0 else (CRITICAL if r == 0 else GROWING)
            one = np.ones(1)
            return Class(idx, kind, r, np.array([r], dtype=complex), one, one, outlet)
        return _classify_block(idx, block(Ks, Kd, idx), outlet)

    def species_to_classes(self, mask: np.ndarray) -> np.ndarray:
        """The classes that hold at least one of the marked species (bool per class)."""
        out = np.zeros(self.ncomp, dtype=bool)
        out[self.labels[mask]] = True
        return out

    def scan_span(self) -> tuple[float, float] | None:
        """First and last time of the scan [s].

        :data:`SCAN_FAST` of the fastest and :data:`SCAN_SLOW` of the slowest time
        constant, within the working range; None for a scheme without any rate.
        """
        r = self.rates
        if r.size == 0:
            return None
        t_lo = SCAN_FAST / r.max()
        t_hi = SCAN_SLOW / r.min()
        grow = [cl.perron for cl in self.classes if cl.kind == GROWING]
        if grow:
            t_hi = min(t_hi, 300.0 / max(grow))
        t_hi = max(t_hi, 10 * t_lo)
        # within the working range (quantities later than that are reported as not found)
        sigma = self.sigma
        t_hi = min(t_hi, MAX_TIME, MAX_LIFETIMES / sigma if sigma > 0 else MAX_TIME)
        return t_lo, t_hi


def block(Ks: scipy.sparse.csr_array, Kd: np.ndarray | None, idx: np.ndarray) -> np.ndarray:
    """The dense diagonal block K[idx, idx] [1/s]."""
    return Kd[np.ix_(idx, idx)] if Kd is not None else Ks[idx][:, idx].toarray()
