"""The version of the installed package, in one place.

The package (``kinetics.__version__``) and every producer that stamps its output
(JSON documents, plots, the report) read it here, so none of them imports the package
root.
"""

from importlib.metadata import PackageNotFoundError, version

__all__ = ["__version__"]

try:
    __version__ = version("stepwise-kinetics")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0.0.0"
