"""The propagation engine's public functions, under the name they have always had.

The engine lives in :mod:`kinetics.engine`; this module keeps ``kinetics.propagate`` as a
stable place to import them from.
"""

from kinetics.engine import (
    AUTO_RTOL,
    DENSE_MAX,
    TINY,
    Precision,
    Propagation,
    StretchPropagator,
    expm_nonnegative,
    expm_nonnegative_certified,
    propagate,
    propagate_batch,
    propagate_certified,
)

__all__ = [
    "AUTO_RTOL",
    "DENSE_MAX",
    "TINY",
    "Precision",
    "Propagation",
    "StretchPropagator",
    "expm_nonnegative",
    "expm_nonnegative_certified",
    "propagate",
    "propagate_batch",
    "propagate_certified",
]
