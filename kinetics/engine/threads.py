"""One BLAS thread while the engine multiplies many small matrices.

Threaded BLAS on the engine's tiles and grid products spends its time synchronising
(measured on two cores: the 2,000-species chain took 4.9 s with two OpenBLAS threads and
0.9 s with one; dense products of 65-200 species were 5-40 times slower).  Finding the
loaded BLAS libraries reads the process's memory map, about 0.7 ms, so it is done once
per process; each limit afterwards costs microseconds.
"""

from __future__ import annotations

from functools import lru_cache

__all__ = ["one_blas_thread"]


@lru_cache(maxsize=1)
def _controller():
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


def one_blas_thread():
    """A context manager that holds BLAS to one thread and restores it on exit.

    Examples
    --------
    >>> import numpy as np
    >>> with one_blas_thread():
    ...     float((np.eye(70) @ np.eye(70)).trace())
    70.0
    """
    return _controller().limit(limits=1, user_api="blas")
