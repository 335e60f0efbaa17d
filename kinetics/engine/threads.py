"""One BLAS thread while the engine multiplies many small matrices.

Threaded BLAS on the engine's tiles and grid products spends its time synchronising
(measured on two cores: the 2,000-species chain took 4.9 s with two OpenBLAS threads and
0.9 s with one; dense products of 65-200 species were 5-40 times slower).  Finding the
loaded BLAS libraries reads the process's memory map, about 0.7 ms, so it is done once
per process; each limit afterwards costs microseconds.

The limit is process-wide, so engine calls that overlap in threads (a threaded sweep)
share one: the first to enter sets it and the last to leave restores the caller's setting.
A limit set from a worker thread is best effort: the OpenBLAS bundled with numpy and scipy
was seen to ignore it there once the main thread had set and restored one.
"""

from __future__ import annotations

import contextlib
import threading
from collections.abc import Iterator
from functools import lru_cache

__all__ = ["one_blas_thread"]

_LOCK = threading.Lock()
_INSIDE = [0]  # engine calls inside the limit (guarded by _LOCK)
_SAVED: list = [None]  # the caller's limits, restored by the last call to leave


@lru_cache(maxsize=1)
def _controller():
    import scipy.linalg.cython_blas  # noqa: F401  (scipy's BLAS, which the kernels call, loaded first)
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


@contextlib.contextmanager
def one_blas_thread() -> Iterator[None]:
    """Hold BLAS to one thread inside the block; restore the caller's setting on exit.

    Examples
    --------
    >>> import numpy as np
    >>> with one_blas_thread():
    ...     float((np.eye(70) @ np.eye(70)).trace())
    70.0
    """
    controller = _controller()
    with _LOCK:
        if _INSIDE[0] == 0:
            _SAVED[0] = controller.limit(limits=1, user_api="blas")
        _INSIDE[0] += 1
    try:
        yield
    finally:
        with _LOCK:
            _INSIDE[0] -= 1
            if _INSIDE[0] == 0:
                _SAVED[0].restore_original_limits()
                _SAVED[0] = None
