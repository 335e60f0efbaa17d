"""The Python API of sweeps: :func:`sweep` and :func:`monte_carlo`, results in memory."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from .engines import run_chunks
from .evaluation import ChunkResult
from .plan import DEFAULT_CHUNK, SweepPlan, check_memory, make_plan
from .tables import curves_array, percentile_bands, summary_frame

if TYPE_CHECKING:
    import pandas as pd

    from ..scheme import Scheme

__all__ = ["monte_carlo", "sweep"]


def _in_memory(plan: SweepPlan, curves: bool, engine: str, scheduler: str | None):
    """Every chunk's result in set order; with curves also one array of all of them.

    Each chunk's curves are copied into the one array as the chunk arrives (while the
    other chunks are computed) and the chunk keeps a view of it, so the curves are never
    held twice and no final concatenation is needed.
    """
    check_memory(plan, curves)
    results: dict[int, ChunkResult] = {}
    n = len(plan.scheme.species)
    every = np.empty((plan.n_sets, plan.times.size, n)) if curves else None

    def keep(result: ChunkResult) -> None:
        if every is not None:
            every[result.start : result.stop] = result.curves
            result.curves = every[result.start : result.stop]
        results[result.index] = result

    run_chunks(plan, range(plan.n_chunks), keep, curves=curves, engine=engine, scheduler=scheduler)
    return [results[k] for k in range(plan.n_chunks)], every


def sweep(
    scheme: Scheme,
    grid: Sequence[str] | Mapping[str, Any] | SweepPlan,
    times: Sequence[float] | np.ndarray = (),
    *,
    time_unit: str = "s",
    curves: bool = False,
    chunk_size: int = DEFAULT_CHUNK,
    precision: str = "double",
    engine: str = "local",
    scheduler: str | None = None,
    activity: str | None = None,
) -> pd.DataFrame | tuple[pd.DataFrame, pd.DataFrame]:
    """Evaluate a scheme on a Cartesian grid of parameters; one summary row per set.

    Parameters
    ----------
    scheme : Scheme
    grid : sequence of str, mapping or SweepPlan
        ``["k2=0.01:1:25:log", "temperature=20:80:13:degC"]`` or
        ``{"k2": [0.01, 0.1, 1.0]}`` (values in the file's unit), see :func:`parse_vary`;
        or a ready :class:`SweepPlan` (then ``times`` and the other options are ignored).
    times : array_like
        Times [s] of the curves; the end of the window for the summary flags.
    time_unit : str
        Unit of time in the table (``"min"``).
    curves : bool
        Also return every curve, as a labelled array (see :func:`curves_array`;
        :func:`curves_long_frame` converts it to the long table of earlier versions).
    chunk_size : int
        Sets per stacked batch.
    precision : {"double", "auto", "double-double"}
        Propagation engine precision.
    engine : {"local", "dask"}
    scheduler : str, optional
        Dask scheduler address.
    activity : str, optional
        Report heights, limits and curves as activities in this unit (``"MBq"``), with the
        decay constants of each set (:mod:`kinetics.activity`).

    Returns
    -------
    pandas.DataFrame or (pandas.DataFrame, xarray.DataArray)
        The summary table: one column per varied parameter (``k2 [1/min]``), then
        ``half_life A [min]``, ``t_max B [min]``, ``c_max B [mol/L]``, ``limit C [mol/L]``;
        NaN where a quantity does not apply.  With ``curves=True`` the table ends in
        :data:`BOUND_COLUMN`, and the curves come as an ``xarray.DataArray`` of dims
        ``(set, time, species)``.

    .. math:: c^{(i)}(t) = e^{tK^{(i)}} c_0^{(i)} + \\int_0^t e^{sK^{(i)}}\\,ds\\, f

    Notes
    -----
    Row ``i`` equals :func:`kinetics.solve` and :func:`kinetics.analysis.summarise` of the
    scheme with the parameters of that row (to the accuracy of the engine).

    Examples
    --------
    >>> import kinetics
    >>> from kinetics.sweep import sweep
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/min\\nB -> C  k2 = 0.05 1/min\\nstart A = 1 M")
    >>> table = sweep(s, ["k2=0.05,0.2"], [0.0, 3600.0], time_unit="min")
    >>> list(table.columns)[:3]
    ['k2 [1/min]', 'half_life A [min]', 't_max B [min]']
    """
    import pandas as pd

    if isinstance(grid, SweepPlan):
        plan = grid
    else:
        plan = make_plan(
            scheme,
            grid,
            times,
            time_unit=time_unit,
            chunk_size=chunk_size,
            precision=precision,
            api=True,
            activity_unit=activity,
        )
    parts, every = _in_memory(plan, curves, engine, scheduler)
    table = pd.concat([summary_frame(plan, r) for r in parts]) if parts else None
    if not curves:
        return table
    return table, curves_array(plan, parts, values=every)


def monte_carlo(
    scheme: Scheme,
    spread: Sequence[str],
    samples: int,
    times: Sequence[float] | np.ndarray,
    *,
    seed: int = 0,
    grid: Sequence[str] | Mapping[str, Any] = (),
    time_unit: str = "s",
    chunk_size: int = DEFAULT_CHUNK,
    precision: str = "double",
    activity: str | None = None,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Monte Carlo propagation of parameter uncertainty; samples and percentile bands.

    Parameters
    ----------
    scheme : Scheme
    spread : sequence of str
        ``["k1=15%", "temperature=2K"]`` (see :func:`parse_spread`).
    samples : int
        Samples per grid point.
    times : array_like
        Times [s].
    seed : int
    grid : sequence of str or mapping, optional
        Grid axes; the samples are drawn around every grid point.
    time_unit, chunk_size, precision, activity
        As for :func:`sweep`.

    Returns
    -------
    samples : pandas.DataFrame
        One row per sample: grid columns, sampled parameters, summary quantities.
    bands : pandas.DataFrame
        One row per grid point: percentiles 2.5/50/97.5 of each quantity
        (see :func:`percentile_bands`).

    .. math:: \\ln k = \\ln k_0 + \\ln(1+s)\\,z, \\qquad T = T_0 + \\sigma_T z

    Notes
    -----
    The sample quantile of probability :math:`p` has a standard error of about
    :math:`\\sqrt{p(1-p)/N}/f(x_p)` (density :math:`f` at the quantile), so the 2.5 %
    and 97.5 % bands need a few thousand samples to be stable to about a percent.
    """
    import pandas as pd

    plan = make_plan(
        scheme,
        grid,
        times,
        samples=samples,
        spread=spread,
        seed=seed,
        time_unit=time_unit,
        chunk_size=chunk_size,
        precision=precision,
        api=True,
        activity_unit=activity,
    )
    parts, _ = _in_memory(plan, False, "local", None)
    table = pd.concat([summary_frame(plan, r) for r in parts])
    return table, percentile_bands(plan, table)
