"""Tables of sweep results: summary rows, curves (labelled array or long table), bands."""

from __future__ import annotations

import re
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import SettingError
from .evaluation import ChunkResult
from .plan import SweepPlan
from .spec import API_WORDS

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "BOUND_COLUMN",
    "PERCENTILES",
    "band_label",
    "curve_bands",
    "curves_array",
    "curves_frame",
    "curves_long_frame",
    "percentile_bands",
    "summary_frame",
]

#: Percentiles of the Monte Carlo bands.
PERCENTILES = (2.5, 50.0, 97.5)
#: Column of the summary table with the certified relative error bound of each set's
#: curves (the worst over its times); present when the curves are computed.
BOUND_COLUMN = "relative error bound"


def summary_frame(plan: SweepPlan, result: ChunkResult) -> pd.DataFrame:
    """The summary rows of one chunk: parameter columns, then ``<quantity> <species> [unit]``.

    A chunk evaluated with its curves adds :data:`BOUND_COLUMN`, the certified relative
    error bound of each set's curves (the worst over its times).
    """
    import pandas as pd

    data = {}
    for j, name in enumerate(plan.parameter_columns):
        data[name] = result.parameters[:, j]
    for j, name in enumerate(plan.summary_columns):
        data[name] = result.summary[:, j]
    if result.bound is not None:
        data[BOUND_COLUMN] = result.bound
    return pd.DataFrame(data, index=pd.RangeIndex(result.start, result.stop))


def curves_frame(plan: SweepPlan, result: ChunkResult) -> pd.DataFrame:
    """Every curve of one chunk in long format (see :func:`curves_long_frame`).

    Columns: ``set`` (row number of the summary table), the parameter columns,
    ``time [unit]``, ``species``, ``concentration [unit]``.
    """
    from ..solution import time_factor

    if result.curves is None:
        raise SettingError("this chunk was evaluated without curves", "pass curves=True")
    parameters = {name: result.parameters[:, j] for j, name in enumerate(plan.parameter_columns)}
    return _long_frame(
        np.arange(result.start, result.stop),
        parameters,
        (f"time [{plan.time_unit}]", plan.times / time_factor(plan.time_unit)),
        plan.scheme.species_names,
        f"{plan.value_name} [{plan.concentration_unit}]",
        result.curves,
    )


def _long_frame(sets, parameters, time, species, label, values) -> pd.DataFrame:
    """The long table of curves ``values`` (b, m, n): one row per set, time and species."""
    import pandas as pd

    b, m, n = values.shape
    data: dict[str, Any] = {"set": np.repeat(sets, m * n)}
    for name, column in parameters.items():
        data[name] = np.repeat(column, m * n)
    data[time[0]] = np.tile(np.repeat(time[1], n), b)
    data["species"] = pd.Categorical.from_codes(np.tile(np.arange(n), b * m), species)
    data[label] = values.reshape(-1)
    return pd.DataFrame(data)


def curves_array(plan: SweepPlan, results: Sequence[ChunkResult], values=None):
    r"""The curves of consecutive chunks as one labelled array.

    Parameters
    ----------
    plan : SweepPlan
    results : sequence of ChunkResult
        Chunks evaluated with curves, in set order.
    values : numpy.ndarray, shape (b, m, n), optional
        The curves of all ``results`` as one array when the caller already holds them
        (taken as they are, without a copy).

    Returns
    -------
    xarray.DataArray
        ``concentration`` [conc] with dims ``("set", "time", "species")``: coordinates
        ``set`` (the row of the summary table), ``time`` [the plan's time unit],
        ``species``, one coordinate along ``set`` per varied or sampled parameter (named
        as in the scheme, ``k2``, ``start:A``, in the unit of its column) and
        ``error_bound``, the certified relative bound of each set's curves.  Units are in
        each coordinate's ``attrs["units"]``; ``attrs["column"]`` keeps the column name of
        the tables.  :func:`curves_long_frame` converts it to the long table.

    .. math:: c^{(i)}(t) = e^{tK^{(i)}} c_0^{(i)} + \int_0^t e^{sK^{(i)}}\,ds\, f
    """
    import xarray as xr

    from ..solution import time_factor

    if values is None:
        values = (
            results[0].curves
            if len(results) == 1
            else np.concatenate([r.curves for r in results], axis=0)
        )
    parameters = np.concatenate([r.parameters for r in results], axis=0)
    sets = np.arange(results[0].start, results[-1].stop) if results else np.arange(0)
    coords: dict[str, Any] = {
        "set": ("set", sets),
        "time": ("time", plan.times / time_factor(plan.time_unit), {"units": plan.time_unit}),
        "species": ("species", plan.scheme.species_names),
    }
    for j, (p, column) in enumerate(zip(plan.varied, plan.parameter_columns, strict=True)):
        coords[p.name] = ("set", parameters[:, j], {"units": p.unit, "column": column})
    if all(r.bound is not None for r in results):
        bound = np.concatenate([r.bound for r in results])
        coords["error_bound"] = ("set", bound, {"units": "1", "column": BOUND_COLUMN})
    unit = plan.concentration_unit
    return xr.DataArray(
        values,
        dims=("set", "time", "species"),
        coords=coords,
        name=plan.value_name,
        attrs={"units": unit, "column": f"{plan.value_name} [{unit}]"},
    )


def curves_long_frame(curves) -> pd.DataFrame:
    r"""The labelled curves of :func:`curves_array` as a long table (one row per value).

    Parameters
    ----------
    curves : xarray.DataArray
        As returned by ``sweep(..., curves=True)`` (any selection along ``set`` too).

    Returns
    -------
    pandas.DataFrame
        Columns ``set``, the parameter columns (``k1 [1/min]``), ``time [unit]``,
        ``species``, ``concentration [unit]``: the long format of the command's
        ``--curves`` file.

    Examples
    --------
    >>> import kinetics
    >>> from kinetics.sweep import sweep
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/min\nstart A = 1 M")
    >>> _, curves = sweep(s, ["k1=0.1,0.2"], [0.0, 60.0], time_unit="min", curves=True)
    >>> list(curves_long_frame(curves).columns)
    ['set', 'k1 [1/min]', 'time [min]', 'species', 'concentration [M]']
    """
    curves = curves.transpose("set", "time", "species")
    parameters = {
        c.attrs["column"]: c.values
        for name, c in curves.coords.items()
        if c.dims == ("set",) and name not in ("set", "error_bound")
    }
    time = curves.coords["time"]
    return _long_frame(
        curves.coords["set"].values,
        parameters,
        (f"time [{time.attrs['units']}]", time.values),
        [str(x) for x in curves.coords["species"].values],
        curves.attrs["column"],
        np.ascontiguousarray(curves.values),
    )


def band_label(column: str, p: float) -> str:
    """``'t_max B [min]'`` and 2.5 -> ``'t_max B p2.5 [min]'``."""
    m = re.match(r"^(.*?)\s*(\[[^\]]*\])$", column)
    tag = f"p{p:g}"
    return f"{m[1]} {tag} {m[2]}" if m else f"{column} {tag}"


def percentile_bands(plan: SweepPlan, summary: pd.DataFrame) -> pd.DataFrame:
    r"""Percentile bands (2.5/50/97.5) of every summary quantity, one row per grid point.

    Parameters
    ----------
    plan : SweepPlan
        A Monte Carlo plan (``samples > 0``).
    summary : pandas.DataFrame
        Sample rows of whole grid points (``samples`` consecutive rows each), as made by
        :func:`summary_frame`.

    Returns
    -------
    pandas.DataFrame
        Grid columns, ``samples``, then ``<quantity> <species> p2.5 [unit]``, ``... p50
        [...]``, ``... p97.5 [...]`` for every quantity.

    Notes
    -----
    With the sorted values :math:`x_{(1)} \le \dots \le x_{(N)}` of the samples in
    which the quantity exists,

    .. math:: Q(p) = x_{(\lfloor h \rfloor + 1)} + (h - \lfloor h \rfloor)
              (x_{(\lfloor h \rfloor + 2)} - x_{(\lfloor h \rfloor + 1)}), \qquad
              h = (N - 1)\, p / 100

    (:func:`numpy.nanpercentile`, linear interpolation between order statistics); a
    quantity that exists in no sample gives empty cells.

    References
    ----------
    R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages", The American
    Statistician 50, 361-365 (1996), definition 7.
    """
    import pandas as pd

    n = plan.samples
    if not n:
        raise SettingError(
            "percentile bands need a Monte Carlo plan",
            f"make the plan with samples and a spread, {API_WORDS.mc_example}",
        )
    values = summary[plan.summary_columns].to_numpy(dtype=float)
    if values.shape[0] % n:
        raise SettingError("the sample rows do not cover whole grid points", "internal")
    g = values.shape[0] // n
    blocks = values.reshape(g, n, -1)
    data: dict[str, Any] = {}
    first = summary.index[0] // n if len(summary) else 0
    if plan.parameters:
        pos = np.unravel_index(np.arange(first, first + g), plan.grid_shape)
        for j, p in enumerate(plan.parameters):
            data[p.column] = p.values[pos[j]]
    data["samples"] = np.full(g, n)
    with np.errstate(all="ignore"):
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN columns -> NaN
            pct = np.nanpercentile(blocks, PERCENTILES, axis=1)  # (3, g, q)
    for j, name in enumerate(plan.summary_columns):
        for k, percent in enumerate(PERCENTILES):
            data[band_label(name, percent)] = pct[k, :, j]
    if BOUND_COLUMN in summary:  # the worst of the grid point's samples
        data[BOUND_COLUMN] = summary[BOUND_COLUMN].to_numpy(dtype=float).reshape(g, n).max(axis=1)
    return pd.DataFrame(data)


def curve_bands(plan: SweepPlan, curves: np.ndarray, grid_point: int) -> pd.DataFrame:
    """Percentile bands of the concentration curves of one grid point, long format.

    Parameters
    ----------
    plan : SweepPlan
    curves : ndarray, shape (samples, m, n)
        Curves of all samples of the grid point [conc].
    grid_point : int

    Returns
    -------
    pandas.DataFrame
        Grid columns, ``time [unit]``, ``species``, ``concentration p2.5 [unit]``, ``p50``,
        ``p97.5``.
    """
    import pandas as pd

    from ..solution import time_factor

    _, m, n = curves.shape
    pct = np.percentile(curves, PERCENTILES, axis=0)  # (3, m, n)
    data: dict[str, Any] = {}
    if plan.parameters:
        pos = np.unravel_index(grid_point, plan.grid_shape)
        for j, p in enumerate(plan.parameters):
            data[p.column] = np.full(m * n, p.values[pos[j]])
    tf = time_factor(plan.time_unit)
    data[f"time [{plan.time_unit}]"] = np.repeat(plan.times / tf, n)
    data["species"] = pd.Categorical.from_codes(np.tile(np.arange(n), m), plan.scheme.species_names)
    label = f"{plan.value_name} [{plan.concentration_unit}]"
    for k, percent in enumerate(PERCENTILES):
        data[band_label(label, percent)] = pct[k].reshape(-1)
    return pd.DataFrame(data)
