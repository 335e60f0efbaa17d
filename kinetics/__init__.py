r"""Check, solve exactly, analyse, sweep and export first-order reaction schemes.

>>> import kinetics
>>> scheme = kinetics.parse("A -> B  k1 = 0.1 1/min\nstart A = 1 mol/L")
>>> result = kinetics.solve(scheme, [0.0, 600.0])
>>> result.to_frame(time_unit="min").columns.tolist()
['time [min]', 'A [mol/L]', 'B [mol/L]']
"""

import sys
import types

from ._version import __version__
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

#: Public names loaded on first use (the command line starts without numba, pandas
#: and the fitting and sweep machinery): name -> module that defines it.
_LAZY = {
    "FitResult": "fit",
    "fit": "fit",
    "Measurements": "measurements",
    "read_measurements": "measurements",
    "load": "language",
    "parse": "language",
    "Scheme": "scheme",
    "Solution": "solution",
    "solve": "solution",
    "monte_carlo": "sweep",
    "sweep": "sweep",
}


def __getattr__(name: str):
    """Import a public name, or a submodule, on first use (PEP 562)."""
    import importlib

    if name in _LAZY:
        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    try:
        return importlib.import_module(f".{name}", __name__)
    except ModuleNotFoundError as exc:
        if exc.name != f"{__name__}.{name}":
            raise
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}") from None


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


class _Package(types.ModuleType):
    """The package module: ``kinetics.fit`` and ``kinetics.sweep`` stay the functions.

    Importing the submodules ``kinetics.fit`` or ``kinetics.sweep`` would
    otherwise rebind those attributes to the modules (the import system sets a
    submodule as an attribute of its package).
    """

    def __setattr__(self, name: str, value) -> None:
        if name in _LAZY and isinstance(value, type(sys)):
            return  # a submodule that shares its name with a public function
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package

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
