"""Check, solve exactly, analyse, sweep and export first-order reaction schemes.

>>> import kinetics
>>> scheme = kinetics.parse("A -> B  k1 = 0.1 1/min\\nstart A = 1 mol/L")
>>> result = kinetics.solve(scheme, [0.0, 600.0])
>>> result.to_frame(time_unit="min").columns.tolist()
['time [min]', 'A [mol/L]', 'B [mol/L]']
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("stepwise-kinetics")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0.0.0"

from .errors import (
    ArgumentTypeError,
    DataError,
    GrowthError,
    KineticsError,
    SchemeError,
    SchemeErrors,
    SchemeFileError,
    UsageError,
)
from .fit import FitResult, fit
from .measurements import Measurements, read_measurements
from .parsing import load, parse
from .scheme import Scheme
from .solution import Solution, solve
from .sweep import monte_carlo, sweep

__all__ = [
    "ArgumentTypeError",
    "DataError",
    "FitResult",
    "GrowthError",
    "KineticsError",
    "Measurements",
    "Scheme",
    "SchemeError",
    "SchemeErrors",
    "SchemeFileError",
    "Solution",
    "UsageError",
    "__version__",
    "fit",
    "load",
    "monte_carlo",
    "parse",
    "read_measurements",
    "solve",
    "sweep",
]
