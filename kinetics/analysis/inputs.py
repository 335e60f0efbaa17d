"""Checks of the arrays and settings the analysis functions take, one per kind of input.

Each check returns the value in the form the analysis uses (float arrays, a CSR copy
of K) or raises the typed error of :mod:`kinetics.errors` for that mistake.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse

from kinetics.engine import checks
from kinetics.errors import (
    RateMatrixError,
    SettingError,
    SpeciesError,
)

__all__ = [
    "fraction",
    "rate_matrix",
    "species_index",
    "species_names",
    "times_end",
]

#: Largest sparse matrix also kept dense (the scan's matrix products are faster dense).
_DENSE_COPY_MAX = 1500


def rate_matrix(K) -> tuple[np.ndarray | None, scipy.sparse.csr_array]:
    """A rate matrix [1/s] as (dense copy or None, CSR copy), both float.

    The checks and their wording are the engine's (:func:`kinetics.engine.checks.rate_matrix`);
    an analysis also needs at least one species.

    Raises
    ------
    kinetics.errors.RateMatrixError
        Not numeric, not square, empty, inf or nan, or a negative off-diagonal entry.
    """
    checked = checks.rate_matrix(K)
    if scipy.sparse.issparse(checked):
        Ks = checked.copy()  # the check may share the caller's arrays: leave them as given
        Ks.eliminate_zeros()
        Kd = Ks.toarray() if Ks.shape[0] <= _DENSE_COPY_MAX else None
    else:
        Kd = checked
        Ks = scipy.sparse.csr_array(Kd)
        Ks.eliminate_zeros()
    if Ks.shape[0] == 0:
        raise RateMatrixError("the rate matrix K is empty", "a scheme needs at least one species")
    return Kd, Ks


def species_index(i, n: int) -> int:
    """A species index 0 .. n - 1 (a Python or numpy integer, not a bool).

    Raises
    ------
    kinetics.errors.SpeciesError
    """
    if isinstance(i, bool) or not isinstance(i, int | np.integer):
        raise SpeciesError(f"species index {i!r} is not an integer", f"use 0 .. {n - 1}")
    i = int(i)
    if not 0 <= i < n:
        raise SpeciesError(f"species index {i} is out of range", f"use 0 .. {n - 1}")
    return i


def species_names(names, n: int) -> list[str]:
    """One name per species as text; ``species 0``, ``species 1``... when not given.

    Raises
    ------
    kinetics.errors.SpeciesError
    """
    if names is None:
        return [f"species {i}" for i in range(n)]
    names = [str(x) for x in names]
    if len(names) != n:
        raise SpeciesError(f"{len(names)} species names for {n} species", "one name per row")
    return names


def fraction(x, what: str) -> float:
    """A number strictly between 0 and 1 (a fraction of the start value, a tolerance).

    Raises
    ------
    kinetics.errors.SettingError
    """
    try:
        x = float(x)
    except (TypeError, ValueError) as exc:
        raise SettingError(
            f"{what} {x!r} is not a number", "give a number between 0 and 1"
        ) from exc
    if not 0.0 < x < 1.0:
        raise SettingError(f"{what} must lie strictly between 0 and 1, got {x!r}", "e.g. 0.5")
    return x


def times_end(values) -> np.ndarray:
    """Upper limits of areas [s]: a flat array of finite times >= 0, in any order.

    The checks and their wording are those of every time list
    (:func:`kinetics.engine.checks.time_points`).

    Raises
    ------
    kinetics.errors.TimesError
    """
    return checks.time_points(values)
