"""Solving a checked scheme on a time grid: :func:`solve` and :class:`Solution`.

This is the model layer on top of the array engine in :mod:`kinetics.propagate`:
it takes a :class:`~kinetics.scheme.Scheme`, builds its rate matrix and feed
vector and returns concentrations with their names and units.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from .errors import UsageError
from .propagate import propagate_certified
from .units import time_factor

if TYPE_CHECKING:
    import pandas as pd

    from .scheme import Scheme

__all__ = ["Solution", "check_times", "solve", "time_grid"]


def check_times(times) -> np.ndarray:
    """Validate a time list [s]: finite, >= 0, nondecreasing; return it as a float array."""
    try:
        t = np.asarray(times, dtype=float).reshape(-1)
    except (TypeError, ValueError) as exc:
        raise UsageError(
            "the times are not numbers", "give times in seconds as a list of numbers"
        ) from exc
    if t.size == 0:
        raise UsageError("the time list is empty", "give at least one time")
    if not np.all(np.isfinite(t)):
        raise UsageError("a time is not a finite number", "give finite times in seconds")
    if np.any(t < 0):
        raise UsageError(
            f"a time is negative ({float(t[t < 0][0]):g} s)", "times start at 0 (the start values)"
        )
    if np.any(np.diff(t) < 0):
        raise UsageError("the times are not in increasing order", "sort the time list")
    return t


def time_grid(until: float, points: int = 201) -> np.ndarray:
    """A uniform grid of ``points`` times from 0 to ``until`` [s] inclusive."""
    if not (np.isfinite(until) and until > 0):
        raise UsageError(
            f"the end time must be positive and finite, not {float(until):g} s",
            "give the end of the window in seconds, e.g. 5400 for 90 min",
        )
    if points < 2:
        raise UsageError(f"a grid needs at least 2 points, not {points}", "e.g. --points 201")
    return np.linspace(0.0, until, points)


@dataclass(frozen=True)
class Solution:
    """Concentrations of every matrix species on a time grid.

    Attributes
    ----------
    times : numpy.ndarray
        [s], shape ``(m,)``.
    species : list of str
        Matrix order.
    concentrations : numpy.ndarray
        [concentration_unit], shape ``(m, n)``; every entry >= 0.
    concentration_unit : str
    scheme : Scheme
    error_bound : numpy.ndarray or None
        Shape ``(m,)``: the relative error the engine certifies for every entry
        above 1e-290 at each time (see :func:`kinetics.propagate.propagate_certified`).
    unit_factors : numpy.ndarray or None
        Shape ``(n,)``: per species, the factor from the scheme's unit to
        ``concentration_unit`` (set by :meth:`in_unit`; None in the scheme's unit).
    """

    times: np.ndarray
    species: list[str]
    concentrations: np.ndarray
    concentration_unit: str
    scheme: Scheme
    error_bound: np.ndarray | None = None
    unit_factors: np.ndarray | None = None
    _amounts: np.ndarray | None = field(default=None, repr=False)  # in the scheme's unit

    def in_unit(self, unit: str) -> Solution:
        """The same solution with concentrations in another unit.

        Mass units are applied per species with its molar mass; "% of applied" is the
        percentage of the total amount at time zero (see :mod:`kinetics.amounts`).

        .. math:: m_i(t) = n_i(t)\\, M_i, \\qquad
                  p_i(t) = 100\\, n_i(t) / \\textstyle\\sum_j n_j(0)

        Parameters
        ----------
        unit : str
            An amount or mass unit of the scheme's kind (``mmol/L``, ``mg/L``; ``mg/kg``
            for a scheme per mass of soil) or ``"% of applied"``.

        Returns
        -------
        Solution
            Its :meth:`summary`, :meth:`to_frame` and :meth:`plot` use ``unit``.

        Raises
        ------
        UsageError
            For a unit of another kind, or a mass unit where a species that can be
            present has no molar mass.

        Examples
        --------
        >>> import kinetics
        >>> s = kinetics.parse("A -> B  k1 = 1 1/s\\nstart A = 0.5 M\\nformula A = H2O, B = H2O")
        >>> # 0.5 mol/L times 18.015 g/mol (water, standard atomic weights)
        >>> float(kinetics.solve(s, [0.0]).in_unit("g/L").concentrations[0, 0])
        9.0075
        """
        from .amounts import PERCENT_OF_APPLIED, is_percent_of_applied, output_factors

        factors = output_factors(self.scheme, unit)
        amounts = self.concentrations if self._amounts is None else self._amounts
        label = PERCENT_OF_APPLIED if is_percent_of_applied(unit) else unit.strip()
        return replace(
            self,
            concentrations=amounts * factors,
            concentration_unit=label,
            unit_factors=factors,
            _amounts=amounts,
        )

    def __getitem__(self, name: str) -> np.ndarray:
        """The curve of one species [concentration_unit]."""
        try:
            return self.concentrations[:, self.species.index(name)]
        except ValueError:
            raise UsageError(
                f"{name} is not a species of this scheme",
                "species are " + ", ".join(self.species),
            ) from None

    def to_frame(self, time_unit: str = "s") -> pd.DataFrame:
        """The table as a DataFrame with unit-labelled columns.

        Columns are ``time [<time_unit>]`` then ``<species> [<concentration_unit>]``.

        Parameters
        ----------
        time_unit : str, optional
            Unit of the time column, e.g. ``"min"``.
        """
        import pandas as pd

        factor = time_factor(time_unit)
        data = {f"time [{time_unit}]": self.times / factor}
        for i, name in enumerate(self.species):
            data[f"{name} [{self.concentration_unit}]"] = self.concentrations[:, i]
        return pd.DataFrame(data)

    def summary(self, time_unit: str = "s") -> dict[str, dict]:
        """The exact summary quantities of every species, times in ``time_unit``.

        Half-lives, maxima, long-time limits and the other quantities of
        :func:`kinetics.analysis.summarise`, computed on the exact solution over
        this solution's time window (not read off the grid).

        Parameters
        ----------
        time_unit : str, optional
            Unit of every time in the result; concentrations stay in
            :attr:`concentration_unit`, areas are in concentration x ``time_unit``.

        Returns
        -------
        dict of str to dict
            Species name -> quantities (``half_life``, ``t_max``, ``c_max``, ``limit``...),
            ``None`` where a quantity does not apply.
        """
        from .overview import compute_summary, summary_in_units

        return summary_in_units(compute_summary(self) or {}, time_unit)

    def plot(
        self,
        path=None,
        *,
        time_unit: str = "s",
        summary: dict | str | None = "auto",
        species: list[str] | None = None,
    ):
        """Plot concentration against time (linear and log panels); optionally save it.

        Parameters
        ----------
        path : str or os.PathLike, optional
            Write the figure there (``.png`` or ``.svg``), atomically.
        time_unit : str, optional
            Unit of the time axis.
        summary : dict, "auto" or None, optional
            Quantities to mark (maxima, half-lives) in ``time_unit``; ``"auto"``
            computes them with :meth:`summary`; ``None`` marks nothing.
        species : list of str, optional
            Species to draw (default: all).

        Returns
        -------
        matplotlib.figure.Figure
        """
        from .plotting import concentration_figure, save_figure

        for name in species or []:
            self[name]  # raises UsageError for an unknown name
        if isinstance(summary, str):
            if summary != "auto":
                raise UsageError(f"summary={summary!r} is not known", "use 'auto', None or a dict")
            summary = self.summary(time_unit)
        if path is not None:
            from pathlib import Path

            if Path(path).suffix.lower() not in (".png", ".svg"):
                raise UsageError(
                    f"cannot save a plot as {str(path)!r}", "use a .png or .svg file name"
                )
        fig = concentration_figure(self, time_unit, summary, species=species)
        if path is not None:
            save_figure(fig, path)
        return fig


def solve(scheme: Scheme, times) -> Solution:
    """Solve a scheme exactly on a list of times.

    .. math:: c(t) = e^{tK} c_0 + \\int_0^t e^{sK}\\,ds\\, f

    Parameters
    ----------
    scheme : Scheme
        A checked scheme (from :func:`kinetics.load` or :func:`kinetics.parse`).
    times : array_like
        Times [s], nondecreasing, >= 0.

    Returns
    -------
    Solution

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 1 1/s\\nstart A = 1 mol/L")
    >>> round(float(kinetics.solve(s, [0, 1]).concentrations[1, 0]), 12)
    0.367879441171
    """
    t = check_times(times)
    Kh, Kl = scheme.rate_matrix_pair()
    feed = scheme.feed_vector if scheme.feed else None
    result = propagate_certified(Kh, scheme.initial_vector, t, feed, K_low=Kl)
    return Solution(
        t,
        scheme.species_names,
        result.concentrations,
        scheme.concentration_unit,
        scheme,
        result.error_bound,
    )
