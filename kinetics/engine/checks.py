"""Input checks of the propagation engine: one home for each check and its wording.

Every public function of the engine (:mod:`kinetics.engine.propagate`,
:mod:`kinetics.sensitivity`) validates its arrays here, so a mistake gets the same
message whichever function received it.
"""

from __future__ import annotations

import functools
import warnings
from collections.abc import Iterator

import numpy as np
import scipy.sparse

from kinetics.errors import (
    ArgumentTypeError,
    GrowthError,
    TimesError,
    UsageError,
    type_name,
)

__all__ = [
    "PRECISIONS",
    "guard_growth",
    "low_parts",
    "offdiagonal_nonnegative",
    "precision",
    "rate_matrix",
    "time_list",
    "times",
    "vector",
]

#: Arithmetic of the dense engine: ``auto`` chooses per member (see
#: :func:`kinetics.propagate.propagate_certified`).
PRECISIONS = ("auto", "double", "double-double")


def rate_matrix(K, allow_sparse: bool = True):
    """A rate matrix [1/s] as a float array (or CSR): square, finite, off-diagonals >= 0."""
    if scipy.sparse.issparse(K):
        if not allow_sparse:
            K = K.toarray()
        else:
            K = scipy.sparse.csr_array(K, dtype=float)
            if K.ndim != 2 or K.shape[0] != K.shape[1]:
                raise UsageError(f"rate matrix must be square, got shape {K.shape}")
            if not np.all(np.isfinite(K.data)):
                raise UsageError("rate matrix has a non-finite entry")
            coo = K.tocoo()
            off = coo.row != coo.col
            if np.any(coo.data[off] < 0):
                raise UsageError(
                    "rate matrix has a negative off-diagonal entry",
                    "off-diagonal entries are rates of formation and must be >= 0",
                )
            return K
    try:
        K = np.array(K, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"rate matrix is not numeric: {exc}") from None
    if K.ndim != 2 or K.shape[0] != K.shape[1]:
        raise UsageError(f"rate matrix must be square, got shape {K.shape}")
    offdiagonal_nonnegative(K[None])
    return K


def offdiagonal_nonnegative(K) -> None:
    """Refuse a stack (b, n, n) with a non-finite entry or a negative off-diagonal."""
    from kinetics.engine import kernels

    if not np.isfinite(K).all():
        raise UsageError("rate matrix has a non-finite entry")
    if kernels.negative_offdiagonal(np.ascontiguousarray(K)):
        raise UsageError(
            "rate matrix has a negative off-diagonal entry",
            "off-diagonal entries are rates of formation and must be >= 0",
        )


def vector(v, n: int, what: str, lead: tuple = ()) -> np.ndarray:
    """Start values or feed rates of shape ``(*lead, n)``: finite and >= 0."""
    try:
        v = np.array(v, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"{what} is not numeric: {exc}") from None
    if v.shape == (n,) and lead:
        v = np.broadcast_to(v, (*lead, n)).copy()
    if v.shape != (*lead, n):
        raise UsageError(f"{what} must have shape {(*lead, n)}, got {v.shape}")
    if not np.isfinite(v).all():
        raise UsageError(f"{what} has a non-finite entry")
    if (v < 0).any():
        raise UsageError(
            f"{what} has a negative entry",
            "concentrations and feed rates must be >= 0",
        )
    return v


def times(times) -> np.ndarray:
    """Times [s] as a 1-D float array: finite, >= 0, nondecreasing."""
    try:
        t = np.array(times, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"times are not numeric: {exc}") from None
    if t.ndim == 0:
        t = t.reshape(1)
    if t.ndim != 1:
        raise UsageError(f"times must be a 1-D list, got shape {t.shape}")
    if not np.isfinite(t).all():
        raise UsageError("times must be finite")
    if (t < 0).any():
        raise UsageError("times must be >= 0", "time 0 is the start of the reaction")
    if (t[1:] < t[:-1]).any():
        raise UsageError("times must be in nondecreasing order", "sort the time list")
    return t


def time_list(times) -> np.ndarray:
    """Validate a time list [s] a user gave and return it as floats.

    For :func:`kinetics.solve` and the timeline solver: a flat list, finite, >= 0,
    nondecreasing.

    The engine's own :func:`times` is terser; this one words each mistake for a chemist.
    """
    if isinstance(times, Iterator):
        times = list(times)
    if times is None or isinstance(times, str | bytes | dict):
        raise ArgumentTypeError(
            f"the times must be a list of numbers in seconds, not {type_name(times)}",
            "e.g. [0, 600, 1200] or numpy.linspace(0, 3600, 201)",
        )
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", np.exceptions.ComplexWarning)
            t = np.asarray(times, dtype=float)
    except (TypeError, ValueError) as exc:
        raise TimesError(
            "the times are not numbers", "give times in seconds as a list of numbers"
        ) from exc
    kind = np.asarray(times).dtype.kind
    if kind in "bc":
        what = "True/False values" if kind == "b" else "complex numbers"
        raise TimesError(f"the times are {what}", "give times in seconds as real numbers")
    if t.ndim != 1:
        shape = "a single number" if t.ndim == 0 else f"an array of shape {t.shape}"
        raise TimesError(
            f"the times must be a flat list of times, not {shape}",
            "e.g. [0, 600, 1200] or numpy.linspace(0, 3600, 201); for one time give [t]",
        )
    if t.size == 0:
        raise TimesError("the time list is empty", "give at least one time")
    if not np.all(np.isfinite(t)):
        raise TimesError("a time is not a finite number", "give finite times in seconds")
    if np.any(t < 0):
        raise TimesError(
            f"a time is negative ({float(t[t < 0][0]):g} s)", "times start at 0 (the start values)"
        )
    if np.any(np.diff(t) < 0):
        raise TimesError("the times are not in increasing order", "sort the time list")
    return t


def precision(precision) -> None:
    """Refuse a precision that is not one of :data:`PRECISIONS`."""
    if precision not in PRECISIONS:
        raise UsageError(
            f"unknown precision {precision!r}", "use 'auto', 'double' or 'double-double'"
        )


def low_parts(low, shape: tuple, what: str) -> np.ndarray:
    """Low-order parts of a double-double input (zeros when not given)."""
    if low is None:
        return np.zeros(shape)
    if scipy.sparse.issparse(low):
        low = low.toarray()
    try:
        low = np.array(low, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"{what} is not numeric: {exc}") from None
    if low.shape != shape:
        raise UsageError(f"{what} must have shape {shape}, got {low.shape}")
    if not np.isfinite(low).all():
        raise UsageError(f"{what} has a non-finite entry")
    return low


def guard_growth(func):
    """Run ``func`` with overflow silenced, then refuse non-finite results with a clear error.

    A result can only overflow when the scheme grows (a positive eigenvalue of K,
    e.g. ``A -> 2 A``) for long enough to exceed about 1e308.
    """

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with np.errstate(over="ignore", invalid="ignore", under="ignore"):
            result = func(*args, **kwargs)
        parts = result if isinstance(result, tuple) else (result,)
        for part in parts:
            values = getattr(part, "concentrations", part)
            if isinstance(values, np.ndarray) and not np.all(np.isfinite(values)):
                raise GrowthError(
                    "the concentrations grow beyond the range of double precision (about 1e308)",
                    "the scheme makes more of a species than it consumes (e.g. A -> 2 A) or "
                    "feeds it for a very long time; shorten the time window or check the "
                    "stoichiometry",
                )
        return result

    return wrapper
