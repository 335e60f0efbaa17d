"""Input checks of the propagation engine: one home for each check and its wording.

Every public function of the engine (:mod:`kinetics.engine.propagate`,
:mod:`kinetics.sensitivity`) validates its arrays here, so a mistake gets the same
message whichever function received it.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterator

import numpy as np
import scipy.sparse

from kinetics.errors import (
    ArgumentTypeError,
    ArgumentValueError,
    ConcentrationError,
    GrowthError,
    RateMatrixError,
    SettingError,
    TimesError,
    type_name,
)

__all__ = [
    "END_HINT",
    "FEED_HINT",
    "K_HINT",
    "PRECISIONS",
    "START_HINT",
    "end_time",
    "guard_growth",
    "low_parts",
    "offdiagonal_nonnegative",
    "precision",
    "rate_matrix",
    "time_list",
    "time_points",
    "times",
    "vector",
]

#: Arithmetic of the dense engine: ``auto`` chooses per member (see
#: :func:`kinetics.propagate.propagate_certified`).
PRECISIONS = ("auto", "double", "double-double")

#: What a rate matrix holds, the hint of every mistake in one.
K_HINT = (
    "column j holds the outflow of species j: K[j, j] = -(sum of its rate constants), "
    "K[i, j] = nu*k for a step j -> i, all in 1/s"
)
#: What start concentrations are, the hint of every mistake in them.
START_HINT = "start concentrations, one per species, >= 0"
#: What the end of a time window is, the hint of every mistake in it.
END_HINT = "give the end of the window in seconds, e.g. 5400 for 90 min"
#: What feed rates are, the hint of every mistake in them.
FEED_HINT = "zero-order feed rates [conc/s], >= 0"


def _negative_entry(index, value: float) -> RateMatrixError:
    place = ", ".join(str(int(i)) for i in index)
    return RateMatrixError(
        f"K[{place}] = {value:g} is negative; off-diagonal entries are rates of "
        "formation and must be >= 0",
        K_HINT,
    )


def _square(shape: tuple) -> None:
    if len(shape) != 2 or shape[0] != shape[1]:
        raise RateMatrixError(f"the rate matrix K has shape {shape}; it must be square", K_HINT)


def _sparse_rate_matrix(K) -> scipy.sparse.csr_array:
    Ks = scipy.sparse.csr_array(K, dtype=float)
    _square(Ks.shape)
    if not np.isfinite(Ks.data).all():
        raise RateMatrixError("the rate matrix K contains inf or nan", K_HINT)
    coo = Ks.tocoo()
    bad = (coo.row != coo.col) & (coo.data < 0)
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        raise _negative_entry((coo.row[k], coo.col[k]), float(coo.data[k]))
    return Ks


def rate_matrix(K, allow_sparse: bool = True):
    """A rate matrix [1/s] as a float array (or CSR): square, finite, off-diagonals >= 0.

    Raises
    ------
    kinetics.errors.RateMatrixError
        Not numeric, not square, inf or nan, or a negative off-diagonal entry.
    """
    if scipy.sparse.issparse(K):
        if allow_sparse:
            return _sparse_rate_matrix(K)
        K = K.toarray()
    try:
        K = np.array(K, dtype=float)
    except (TypeError, ValueError) as exc:
        raise RateMatrixError("the rate matrix K is not a numeric array", K_HINT) from exc
    _square(K.shape)
    _entries(K[None], member=False)
    return K


def _entries(K, member: bool) -> None:
    """Refuse a stack (b, n, n) with inf or nan or a negative off-diagonal entry."""
    if not np.isfinite(K).all():
        raise RateMatrixError("the rate matrix K contains inf or nan", K_HINT)
    b, n, _ = K.shape
    if n < 2 or b == 0:
        return
    # the off-diagonal entries of each member as a view: the n*n entries flattened, the
    # first dropped, as n - 1 rows of n + 1 of which the last is a diagonal entry (no
    # compiled kernel: its compilation cost 0.2 s of the first solve)
    rows = np.ascontiguousarray(K).reshape(b, n * n)[:, 1:].reshape(b, n - 1, n + 1)
    if rows[:, :, :n].min() < 0.0:
        off = (K < 0) & ~np.eye(K.shape[1], dtype=bool)
        place = np.argwhere(off)[0]
        raise _negative_entry(place if member else place[1:], K[tuple(place)])


def offdiagonal_nonnegative(K) -> None:
    """Refuse a stack of rate matrices (b, n, n) with inf or nan or a negative off-diagonal.

    A negative entry is named with its member first, ``K[m, i, j]``.

    Raises
    ------
    kinetics.errors.RateMatrixError
    """
    _entries(K, member=True)


def vector(v, n: int, what: str, hint: str, lead: tuple = ()) -> np.ndarray:
    """Start values [conc] or feed rates [conc/s] of shape ``(*lead, n)``: finite and >= 0.

    Without ``lead`` any array of ``n`` values is taken as a flat list; with it a flat list
    of ``n`` values is repeated for every member.

    Raises
    ------
    kinetics.errors.ConcentrationError
        Not numeric, a wrong number of values, inf or nan, or a negative value.
    """
    try:
        v = np.array(v, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ConcentrationError(f"{what} is not a numeric array", hint) from exc
    if not lead:
        v = v.reshape(-1)
        if v.shape != (n,):
            raise ConcentrationError(f"{what} has {v.size} entries but K has {n} species", hint)
    elif v.shape == (n,):
        v = np.broadcast_to(v, (*lead, n)).copy()
    elif v.shape != (*lead, n):
        raise ConcentrationError(
            f"{what} has shape {v.shape}; it must have shape {(*lead, n)}", hint
        )
    if v.size and v.min() >= 0.0 and v.max() < math.inf:
        return v  # the usual case in two reductions: a nan fails both comparisons
    if not np.isfinite(v).all():
        raise ConcentrationError(f"{what} contains inf or nan", hint)
    if (v < 0).any():
        place = np.argwhere(v < 0)[0]
        index = ", ".join(str(int(i)) for i in place)
        raise ConcentrationError(f"{what}[{index}] = {v[tuple(place)]:g} is negative", hint)
    return v


def _numbers(times) -> np.ndarray:
    """Times as a float array of any shape; a wrong type or kind of number refused."""
    if isinstance(times, Iterator):
        times = list(times)
    if times is None or isinstance(times, str | bytes | dict):
        raise ArgumentTypeError(
            f"the times must be a list of numbers in seconds, not {type_name(times)}",
            "e.g. [0, 600, 1200] or numpy.linspace(0, 3600, 201)",
        )
    try:
        given = np.asarray(times)
        kind = given.dtype.kind
        if kind not in "bc":
            return given.astype(float)
    except (TypeError, ValueError) as exc:
        raise TimesError(
            "the times are not numbers", "give times in seconds as a list of numbers"
        ) from exc
    what = "True/False values" if kind == "b" else "complex numbers"
    raise TimesError(f"the times are {what}", "give times in seconds as real numbers")


def _flat(t: np.ndarray, ordered: bool = True) -> np.ndarray:
    """``t`` itself when it is a flat list of finite times >= 0 (nondecreasing if ``ordered``)."""
    if t.ndim != 1:
        shape = "a single number" if t.ndim == 0 else f"an array of shape {t.shape}"
        raise TimesError(
            f"the times must be a flat list of times, not {shape}",
            "e.g. [0, 600, 1200] or numpy.linspace(0, 3600, 201); for one time give [t]",
        )
    if ordered and t.size and t[0] >= 0.0 and t[-1] < math.inf and (t[1:] >= t[:-1]).all():
        # the usual case in one pass: nondecreasing from t[0] >= 0 to a finite last time
        # (any nan fails a comparison), so every time is finite and >= 0
        return t
    if not np.isfinite(t).all():
        raise TimesError("a time is not a finite number", "give finite times in seconds")
    if (t < 0).any():
        raise TimesError(
            f"a time is negative ({float(t[t < 0][0]):g} s)", "times start at 0 (the start values)"
        )
    if ordered and (t[1:] < t[:-1]).any():
        raise TimesError("the times are not in increasing order", "sort the time list")
    return t


def times(times) -> np.ndarray:
    """Times [s] for the engine as a 1-D float array: finite, >= 0, nondecreasing.

    Like :func:`time_list`, with the same wording per mistake, but one number stands for
    a list of one time and an empty list is allowed (an engine call for no times).

    Raises
    ------
    kinetics.errors.TimesError
    kinetics.errors.ArgumentTypeError
        ``None``, text or a mapping instead of times.
    """
    t = _numbers(times)
    return _flat(t.reshape(1) if t.ndim == 0 else t)


def time_points(times) -> np.ndarray:
    """Times [s] in any order (upper limits of areas...): one number or any array of them.

    Flattened; each time finite and >= 0, with the wording of :func:`time_list`.

    Raises
    ------
    kinetics.errors.TimesError
    kinetics.errors.ArgumentTypeError
        ``None``, text or a mapping instead of times.
    """
    return _flat(_numbers(times).reshape(-1), ordered=False)


def time_list(times) -> np.ndarray:
    """Validate a time list [s] a user gave and return it as floats.

    For :func:`kinetics.solve` and the timeline solver: a flat list, finite, >= 0,
    nondecreasing, at least one time.

    Raises
    ------
    kinetics.errors.TimesError
    kinetics.errors.ArgumentTypeError
        ``None``, text or a mapping instead of times.
    """
    t = _numbers(times)
    if t.ndim == 1 and t.size == 0:
        raise TimesError("the time list is empty", "give at least one time")
    return _flat(t)


def end_time(t, what: str = "the end time", hint: str = END_HINT) -> float:
    """The end of a time window [s]: a positive finite number.

    For :func:`kinetics.solution.time_grid`, the ``t_window`` of the analysis and the
    ``until`` of an optimisation; ``what`` names the argument in the message and ``hint``
    says what to give instead.

    Raises
    ------
    kinetics.errors.TimesError

    Examples
    --------
    >>> end_time(5400)
    5400.0
    """
    if isinstance(t, bool):
        raise TimesError(f"{what} {t!r} is not a number", hint)
    try:
        end = float(t)
    except (TypeError, ValueError) as exc:
        raise TimesError(f"{what} {t!r} is not a number", hint) from exc
    if not (math.isfinite(end) and end > 0):
        raise TimesError(f"{what} must be positive and finite, not {end:g} s", hint)
    return end


def precision(precision) -> None:
    """Refuse a precision that is not one of :data:`PRECISIONS`.

    Raises
    ------
    kinetics.errors.SettingError
    """
    if precision not in PRECISIONS:
        raise SettingError(
            f"unknown precision {precision!r}", "use 'auto', 'double' or 'double-double'"
        )


def low_parts(
    low, shape: tuple, what: str, error: type[ArgumentValueError], keep_sparse: bool = False
):
    """Low-order parts of a double-double input (zeros when not given).

    ``error`` is the typed error of the input they belong to (:class:`RateMatrixError`
    for ``K_low``...); a sparse ``low`` stays sparse (CSR) when ``keep_sparse``.

    Raises
    ------
    kinetics.errors.ArgumentValueError
        As ``error``: not numeric, a wrong shape, or inf or nan.
    """
    if low is None:
        return np.zeros(shape)
    if scipy.sparse.issparse(low):
        if keep_sparse:
            low = scipy.sparse.csr_array(low, dtype=float)
            _low_shape_and_entries(low.shape, low.data, shape, what, error)
            return low
        low = low.toarray()
    try:
        low = np.array(low, dtype=float)
    except (TypeError, ValueError) as exc:
        raise error(f"{what} is not a numeric array") from exc
    _low_shape_and_entries(low.shape, low, shape, what, error)
    return low


def _low_shape_and_entries(got: tuple, values, shape: tuple, what: str, error) -> None:
    if got != shape:
        raise error(f"{what} has shape {got}; it must have shape {shape}")
    if not np.isfinite(values).all():
        raise error(f"{what} contains inf or nan")


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
            if isinstance(values, np.ndarray) and not np.isfinite(values).all():
                raise GrowthError(
                    "the concentrations grow beyond the range of double precision (about 1e308)",
                    "the scheme makes more of a species than it consumes (e.g. A -> 2 A) or "
                    "feeds it for a very long time; shorten the time window or check the "
                    "stoichiometry",
                )
        return result

    return wrapper
