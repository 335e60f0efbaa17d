"""The exact matrix-exponential engine (PLACEHOLDER: to be replaced by the entrywise engine).

Contract used by the rest of the package (keep these signatures):

propagate(K, c0, times, feed=None) -> ndarray, shape (len(times), n)
    c(t) = exp(t K) c0 + int_0^t exp(s K) ds f, K essentially nonnegative [1/s],
    dense ndarray or scipy.sparse; c0 [conc]; times [s], nondecreasing, >= 0; feed [conc/s].
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
import scipy.sparse

__all__ = ["propagate"]


def propagate(K, c0, times, feed=None) -> np.ndarray:
    """Concentrations at each time (placeholder implementation with scipy expm)."""
    if scipy.sparse.issparse(K):
        K = K.toarray()
    K = np.asarray(K, dtype=float)
    n = K.shape[0]
    c0 = np.asarray(c0, dtype=float)
    times = np.asarray(times, dtype=float)
    f = np.zeros(n) if feed is None else np.asarray(feed, dtype=float)
    aug = np.zeros((n + 1, n + 1))
    aug[:n, :n] = K
    aug[:n, n] = f
    x0 = np.append(c0, 1.0)
    out = np.empty((times.size, n))
    for j, t in enumerate(times):
        out[j] = np.maximum(scipy.linalg.expm(t * aug) @ x0, 0.0)[:n]
    return out
