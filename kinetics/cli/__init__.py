"""The command line: argument parsing only; the work is done by the library.

Modules, one per command family: :mod:`~kinetics.cli.entry` (the command group,
``main`` and how a run ends), :mod:`~kinetics.cli.check`, :mod:`~kinetics.cli.solving`
(``solve`` and ``report``), :mod:`~kinetics.cli.sweep`, :mod:`~kinetics.cli.fit` and
:mod:`~kinetics.cli.safety`; what they share is :mod:`~kinetics.cli.common` and
:mod:`~kinetics.cli.paths`; :mod:`~kinetics.cli.terminal` draws the tables.  The
library never imports this package.
"""

from kinetics.cli.entry import main, run
from kinetics.output.overview import CAUTION

__all__ = ["CAUTION", "main", "run"]
