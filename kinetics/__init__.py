"""Check, solve exactly, analyse, sweep and export first-order reaction schemes."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("stepwise-kinetics")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0.0.0"

__all__ = ["__version__"]
