"""Solving a checked scheme on a time grid: :func:`solve` and :class:`Solution`.

This is the model layer on top of the array engine in :mod:`kinetics.propagate`:
it takes a :class:`~kinetics.scheme.Scheme`, builds its rate matrix and feed
vector and returns concentrations with their names and units.
"""

from __future__ import annotations

import math
import os
import weakref
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from .engine import CheckedInputs, check_inputs
from .engine.checks import end_time
from .engine.checks import time_list as check_times
from .errors import (
    ArgumentTypeError,
    SettingError,
    SpeciesError,
    TimesError,
    WorkingRangeError,
    type_name,
)
from .units import time_factor

if TYPE_CHECKING:
    import pandas as pd

    from .scheme import Scheme
    from .timeline_solve import Event

#: relative rounding a unit conversion adds: the factor (a few roundings) and the product
_CONVERSION_ROUNDING = 4 * 2.0**-53

__all__ = [
    "MAX_VALUES",
    "Solution",
    "check_times",
    "require_scheme",
    "solve",
    "time_grid",
]


#: Largest table a solve produces: points x species (80 MB per copy of the table; the
#: JSON and spreadsheet outputs hold several copies).  README, "Limits of the method".
MAX_VALUES = 10_000_000


def require_scheme(scheme, function: str) -> Scheme:
    """Return ``scheme`` if it is a checked :class:`~kinetics.scheme.Scheme`, else refuse it.

    Parameters
    ----------
    scheme : object
        What the caller passed.
    function : str
        The public function's name for the message, e.g. ``"solve"``.

    Raises
    ------
    kinetics.errors.ArgumentTypeError
        With a hint to :func:`kinetics.load` (a file name) or :func:`kinetics.parse` (text).
    """
    from .scheme import Scheme

    if isinstance(scheme, Scheme):
        return scheme
    if isinstance(scheme, str) and ("\n" in scheme or "->" in scheme):
        raise ArgumentTypeError(
            f"{function}() needs a checked scheme, not the text of one",
            f"parse it first: kinetics.{function}(kinetics.parse(text), ...)",
        )
    if isinstance(scheme, str | os.PathLike):
        name = os.fspath(scheme)
        raise ArgumentTypeError(
            f"{function}() needs a checked scheme, not the file name {name!r}",
            f"read it first: kinetics.{function}(kinetics.load({name!r}), ...)",
        )
    raise ArgumentTypeError(
        f"{function}() needs a checked scheme, not {type_name(scheme)}",
        "get one from kinetics.load('file.scheme') or kinetics.parse(text)",
    )


def _check_size(points: int, species: int = 0) -> None:
    """Refuse a table above :data:`MAX_VALUES` values before it is allocated."""
    if points * max(species, 1) <= MAX_VALUES:
        return
    size = f"{MAX_VALUES:,} values (times x species; about {8 * MAX_VALUES // 10**6} MB per copy)"
    if species == 0:
        raise WorkingRangeError(
            f"{points:,} times are too many: one run computes at most {size}",
            "use fewer times, e.g. 201 (the default), or solve the time span in parts",
        )
    raise WorkingRangeError(
        f"{points:,} times x {species} species = {points * species:,} values are too many: "
        f"one run computes at most {size}",
        f"use at most {MAX_VALUES // species:,} times, or solve the time span in parts",
    )


def time_grid(until: float, points: int = 201) -> np.ndarray:
    """A uniform grid of ``points`` times from 0 to ``until`` [s] inclusive.

    At most :data:`MAX_VALUES` points (a larger grid is refused before it is made).

    Examples
    --------
    >>> time_grid(60.0, 4).tolist()
    [0.0, 20.0, 40.0, 60.0]
    """
    until = end_time(until)
    if points < 2:
        raise TimesError(f"a grid needs at least 2 points, not {points}", "e.g. points=201")
    _check_size(points)
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
    activity_unit : str or None
        The unit of activity when the values are activities (:meth:`in_activity`).
    events : tuple of kinetics.timeline_solve.Event
        The operations of the scheme's timeline that were applied, in time order, each
        with what it moved (``change`` in :attr:`concentration_unit`); empty for a run
        without operations.
    notes : tuple of str
        Operations not applied (after the window) or without effect.
    after : numpy.ndarray of bool or None
        Shape ``(m,)``, with operations: True for the row just after the operations at
        its time (such a time appears twice: just before and just after).
    temperatures : numpy.ndarray or None
        Shape ``(m,)``: the temperature in force [K] when the timeline changes it.
    ramp_estimate : numpy.ndarray or None
        Shape ``(m,)``: the estimated relative error of temperature-ramp sub-steps
        (see :mod:`kinetics.timeline_solve`), reported beside ``error_bound``.
    stretches : tuple of kinetics.timeline_solve.Stretch
        With operations: the stretches of constant conditions of the run (the summary
        quantities are computed on them).
    """

    times: np.ndarray
    species: list[str]
    concentrations: np.ndarray
    concentration_unit: str
    scheme: Scheme
    error_bound: np.ndarray | None = None
    unit_factors: np.ndarray | None = None
    activity_unit: str | None = None
    _amounts: np.ndarray | None = field(default=None, repr=False)  # in the scheme's unit
    events: tuple[Event, ...] = ()
    notes: tuple[str, ...] = ()
    after: np.ndarray | None = None
    temperatures: np.ndarray | None = None
    ramp_estimate: np.ndarray | None = None
    stretches: tuple = ()
    _events: tuple[Event, ...] | None = field(default=None, repr=False)  # the scheme's unit

    @property
    def quantity(self) -> str:
        """What the values are: ``"activity"`` or ``"concentration"`` (axis labels)."""
        return "activity" if self.activity_unit else "concentration"

    def in_activity(self, unit: str) -> Solution:
        r"""The same solution as activities :math:`A_i = \lambda_i N_A n_i` in ``unit``.

        Parameters
        ----------
        unit : str
            ``Bq``, ``kBq``, ``MBq``, ``GBq``, ``Ci``, ``mCi``, ``uCi`` for a scheme in
            amounts; per volume or mass (``MBq/L``) for one per volume or mass
            (:func:`kinetics.activity.activity_factors`).

        Returns
        -------
        Solution
            Its table headers read ``P [MBq]``; its :meth:`summary` gives activities
            (maxima, limits, areas as numbers of decays); stable species have 0.

        Raises
        ------
        ActivityError
            For a unit that is no activity of the scheme's kind.

        Examples
        --------
        >>> import kinetics
        >>> s = kinetics.parse("P -> D  k1 = 1 1/s\nstart P = 1 umol")
        >>> a = kinetics.solve(s, [0.0]).in_activity("MBq")
        >>> a.to_frame().columns.tolist(), float(a["P"][0])
        (['time [s]', 'P [MBq]', 'D [MBq]'], 602214076000.0)
        """
        from .activity import activity_factors

        return self._converted(activity_factors(self.scheme, unit), unit.strip(), unit.strip())

    def in_unit(self, unit: str) -> Solution:
        r"""The same solution with concentrations in another unit.

        Mass units are applied per species with its molar mass; "% of applied" is the
        percentage of the total amount at time zero (see :mod:`kinetics.amounts`).

        .. math:: m_i(t) = n_i(t)\, M_i, \qquad
                  p_i(t) = 100\, n_i(t) / \textstyle\sum_j n_j(0)

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
        OutputUnitError
            For a unit of another kind, or a mass unit where a species that can be
            present has no molar mass.

        Examples
        --------
        >>> import kinetics
        >>> s = kinetics.parse("A -> B  k1 = 1 1/s\nstart A = 0.5 M\nformula A = H2O, B = H2O")
        >>> # 0.5 mol/L times 18.015 g/mol (water, standard atomic weights)
        >>> float(kinetics.solve(s, [0.0]).in_unit("g/L").concentrations[0, 0])
        9.0075
        """
        from .amounts import PERCENT_OF_APPLIED, is_percent_of_applied, output_factors

        label = PERCENT_OF_APPLIED if is_percent_of_applied(unit) else unit.strip()
        return self._converted(output_factors(self.scheme, unit), label, None)

    def _converted(self, factors: np.ndarray, unit: str, activity_unit: str | None) -> Solution:
        """The same solution with each species' values times its factor, labelled ``unit``.

        The amounts and the events' changes in the scheme's unit are kept aside, so that
        conversions never compound; the bound grows by the rounding of the conversion.
        """
        amounts = self.concentrations if self._amounts is None else self._amounts
        bound = self.error_bound
        if bound is not None:  # the factor and the product: a few more units of rounding
            bound = bound + _CONVERSION_ROUNDING * (1 + bound)
        scale = dict(zip(self.species, factors.tolist(), strict=True))
        base = self.events if self._events is None else self._events
        events = tuple(
            e if e.species is None else replace(e, change=e.change * scale[e.species]) for e in base
        )
        return replace(
            self,
            concentrations=amounts * factors,
            concentration_unit=unit,
            unit_factors=factors,
            activity_unit=activity_unit,
            error_bound=bound,
            _amounts=amounts,
            events=events,
            _events=base,
        )

    def __getitem__(self, name: str) -> np.ndarray:
        """The curve of one species [concentration_unit]."""
        try:
            return self.concentrations[:, self.species.index(name)]
        except ValueError:
            raise SpeciesError(
                f"{name} is not a species of this scheme",
                "species are " + ", ".join(self.species),
            ) from None

    def to_frame(self, time_unit: str = "s") -> pd.DataFrame:
        r"""The table as a DataFrame with unit-labelled columns.

        Columns are ``time [<time_unit>]`` then ``<species> [<concentration_unit>]``.

        Parameters
        ----------
        time_unit : str, optional
            Unit of the time column, e.g. ``"min"``.

        Examples
        --------
        A -> B with k = 0.1 1/min: closed form c_A = c_A(0) e^(-kt), e^-1 = 0.3679 after
        10 min (1 min = 60 s, SI brochure, 9th edition, 2019, table 8):

        >>> import kinetics
        >>> s = kinetics.parse("A -> B  k1 = 0.1 1/min\nstart A = 1 mol/L")
        >>> frame = kinetics.solve(s, [0.0, 600.0]).to_frame("min")
        >>> frame.columns.tolist(), frame["time [min]"].tolist()
        (['time [min]', 'A [mol/L]', 'B [mol/L]'], [0.0, 10.0])
        >>> round(float(frame["A [mol/L]"].iloc[1]), 6)
        0.367879
        """
        import pandas as pd

        factor = time_factor(time_unit)
        data = {f"time [{time_unit}]": self.times / factor}
        for i, name in enumerate(self.species):
            data[f"{name} [{self.concentration_unit}]"] = self.concentrations[:, i]
        return pd.DataFrame(data)

    def summary(self, time_unit: str = "s") -> dict[str, dict]:
        r"""The exact summary quantities of every species, times in ``time_unit``.

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

        Examples
        --------
        A -> B -> C with k1 = 0.1 and k2 = 0.05 1/min: closed forms t½(A) = ln 2 / k1 =
        6.93 min, t_max(B) = ln(k2/k1) / (k2 - k1) = 13.86 min and c_max(B) = 0.5 mol/L
        (Bateman 1910):

        >>> import kinetics
        >>> s = kinetics.parse("A -> B  k1 = 0.1 1/min\nB -> C  k2 = 0.05 1/min\n"
        ...                    "start A = 1 mol/L")
        >>> summary = kinetics.solve(s, [0.0, 1200.0]).summary("min")
        >>> a, b = summary["A"], summary["B"]
        >>> round(a["half_life"], 9), round(b["t_max"], 9), b["c_max"]
        (6.931471806, 13.862943611, 0.5)
        """
        from .analysis.solution_summary import compute_summary, summary_in_units

        return summary_in_units(compute_summary(self) or {}, time_unit)

    def plot(
        self,
        path=None,
        *,
        time_unit: str = "s",
        summary: dict | str | None = "auto",
        species: list[str] | None = None,
        linear: str = "auto",
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
        linear : {"auto", "shared"}, optional
            ``"auto"`` gives the few species that rise far above all others (e.g. a lumped
            end product with a large stoichiometric factor) a right-hand axis of their own in
            the linear panel; ``"shared"`` draws all against one axis.

        Returns
        -------
        matplotlib.figure.Figure
        """
        from .output.plotting import concentration_figure, save_figure

        _check_plot_choices(self, summary, species)
        if isinstance(summary, str):  # "auto"
            summary = self.summary(time_unit)
        _check_plot_path(path)
        fig = concentration_figure(self, time_unit, summary, species=species, linear=linear)
        if path is not None:
            save_figure(fig, path)
        return fig


def _check_plot_choices(solution: Solution, summary, species) -> None:
    """Refuse a ``species`` or ``summary`` argument of :meth:`Solution.plot` it cannot draw."""
    if isinstance(species, str):
        raise ArgumentTypeError(
            f"species must be a list of names, not the string {species!r}",
            f"write species=[{species!r}]",
        )
    for name in species or []:
        solution[name]  # raises SpeciesError for an unknown name
    if not (summary is None or isinstance(summary, str | dict)):
        raise ArgumentTypeError(
            f"summary must be 'auto', None or a dict, not {type_name(summary)}",
            "leave it out to mark the maxima and half-lives",
        )
    if isinstance(summary, str) and summary != "auto":
        raise SettingError(f"summary={summary!r} is not known", "use 'auto', None or a dict")


def _check_plot_path(path) -> None:
    """Refuse a ``path`` of :meth:`Solution.plot` that is no ``.png`` or ``.svg`` file name."""
    if path is None:
        return
    from pathlib import Path

    if not isinstance(path, str | os.PathLike):
        raise ArgumentTypeError(
            f"path must be a file name, not {type_name(path)}",
            "e.g. solution.plot('curves.png')",
        )
    if Path(path).suffix.lower() not in (".png", ".svg"):
        raise SettingError(f"cannot save a plot as {str(path)!r}", "use a .png or .svg file name")


def solve(scheme: Scheme, times) -> Solution:
    r"""Solve a scheme exactly on a list of times.

    .. math:: c(t) = e^{tK} c_0 + \int_0^t e^{sK}\,ds\, f

    Parameters
    ----------
    scheme : Scheme
        A checked scheme (from :func:`kinetics.load` or :func:`kinetics.parse`).
    times : array_like
        Times [s], nondecreasing, >= 0.

    Returns
    -------
    Solution

    Notes
    -----
    A scheme with operations (:attr:`Scheme.timeline <kinetics.scheme.Scheme.timeline>`,
    written in its file or given by :meth:`~kinetics.scheme.Scheme.with_timeline`) is
    solved exactly stretch by stretch (:func:`kinetics.timeline_solve.solve_timeline`):
    a time of an addition or removal appears twice in the result (just before and just
    after), and :attr:`Solution.events` records what each operation moved.

    Examples
    --------
    Closed form c_A = c_A(0) e^(-kt): e^-1 = 0.367879441171 after 1 s at k = 1 1/s:

    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 1 1/s\nstart A = 1 mol/L")
    >>> round(float(kinetics.solve(s, [0, 1]).concentrations[1, 0]), 12)
    0.367879441171
    """
    scheme = require_scheme(scheme, "solve")
    t = check_times(times)
    _check_size(t.size, len(scheme.species))
    inputs = _INPUTS.get(scheme)
    if inputs is None:
        inputs = _INPUTS[scheme] = _SchemeInputs(scheme)
    inputs.check_range(float(t[-1]))
    if scheme.timeline:
        return _solve_timeline(scheme, t)
    result = inputs.engine_inputs().propagate(t)
    return Solution(
        t,
        list(inputs.names),
        result.concentrations,
        scheme.concentration_unit,
        scheme,
        result.error_bound,
    )


class _SchemeInputs:
    """What :func:`solve` needs of a scheme, worked out once per scheme (it is frozen)."""

    def __init__(self, scheme: Scheme) -> None:
        self.K, self.K_low = scheme.rate_matrix_pair()
        self.c0 = scheme.initial_vector
        self.feed = scheme.feed_vector if scheme.feed else None
        self.names = scheme.species_names
        self.rates = -self.K.diagonal()  # consumption rates [1/s]
        self.start = float(self.c0.sum())  # total start amount [conc]
        self.fed = 0.0 if self.feed is None else float(self.feed.sum())  # [conc/s]
        # the latest end time [s] that passed the working-range check: every condition of
        # the check grows with the end time, so an earlier one passes too
        self.checked_until = -math.inf
        self.checked: CheckedInputs | None = None  # the engine's inputs, checked on first use

    def check_range(self, t_end: float) -> None:
        """:func:`kinetics.analysis.check_working_range` for times up to ``t_end`` [s]."""
        if t_end > self.checked_until:
            from .analysis import check_working_range

            check_working_range(self.rates, t_end, self.names, self.start + self.fed * t_end)
            self.checked_until = t_end

    def engine_inputs(self) -> CheckedInputs:
        """The engine's inputs (:func:`kinetics.engine.check_inputs`), checked once."""
        if self.checked is None:
            self.checked = check_inputs(self.K, self.c0, self.feed, K_low=self.K_low)
        return self.checked


#: the inputs of each scheme solved
_INPUTS: weakref.WeakKeyDictionary[Scheme, _SchemeInputs] = weakref.WeakKeyDictionary()


def _solve_timeline(scheme: Scheme, t: np.ndarray) -> Solution:
    """:func:`solve` of a scheme with operations (times checked)."""
    from .timeline_solve import solve_timeline

    run = solve_timeline(scheme, scheme.timeline, t)
    _check_size(run.times.size, len(scheme.species))
    return Solution(
        run.times,
        scheme.species_names,
        run.concentrations,
        scheme.concentration_unit,
        scheme,
        run.error_bound,
        events=run.events,
        notes=run.notes,
        after=run.after,
        temperatures=run.temperatures,
        ramp_estimate=run.ramp_estimate if run.ramp_substeps else None,
        stretches=run.stretches,
    )
