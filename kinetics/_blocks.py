"""Block-triangular propagation of large schemes (private; work in progress)."""

from __future__ import annotations

import numpy as np
import scipy.sparse


def propagate_blocks(K, c0, times, feed):
    """Temporary: dense double-double route for every size."""
    from kinetics import propagate as P

    K = K.toarray() if scipy.sparse.issparse(K) else np.asarray(K)
    n = K.shape[0]
    A = P._augment(K[None], None if feed is None else feed[None])
    x0 = c0 if feed is None else np.append(c0, 1.0)
    X, bound, _ = P._propagate_dense_stack(A, x0[None], times, "auto")
    return X[0, :, :n], bound[0]
