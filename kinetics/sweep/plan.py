"""The sweep plan: everything needed to evaluate any chunk (picklable, sent to workers).

:func:`make_plan` checks a sweep definition (grid axes, spreads, samples, times, chunking)
and refuses, before any work, a plan whose sets leave the engine's working range or whose
results would not fit in memory.  :meth:`SweepPlan.set_values` gives the parameter values of
any range of sets, the Monte Carlo samples from counter-based random numbers (a sample does
not depend on the chunk it falls in, nor on the engine).
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .. import parameters
from ..engine import checks
from ..errors import (
    ActivityError,
    ExpressionError,
    ParameterSpecError,
    SettingError,
    TableSizeError,
    TemperatureError,
    TimesError,
    WorkingRangeError,
)
from .inputs import input_rates
from .spec import API_WORDS, CLI_WORDS, Parameter, Spread, Words, axes, spreads_of

if TYPE_CHECKING:
    from ..scheme import Scheme

__all__ = [
    "DEFAULT_CHUNK",
    "MAX_MEMORY_VALUES",
    "MAX_SETS",
    "Column",
    "SweepPlan",
    "check_memory",
    "make_plan",
]

#: Most parameter sets of one sweep (about 1.4 h at 50 us per set).
MAX_SETS = 100_000_000
#: Most values a sweep keeps in memory (API, or the command without --out): sets x
#: columns, or sets x times x species with curves.
MAX_MEMORY_VALUES = 100_000_000
#: Sets per chunk by default (memory per chunk: about sets x points x species x 8 bytes
#: when curves are kept).
DEFAULT_CHUNK = 1000
_VERSION = 2  # of the chunk layout and the definition hash (2: the curves' bound)


# ---------------------------------------------------------------------------------------
# Counter-based standard normal numbers (chunk- and engine-independent)
# ---------------------------------------------------------------------------------------


def _standard_normals(seed: int, first: int, count: int, width: int) -> np.ndarray:
    """Standard normal numbers ``z[i, j]`` for sets ``first .. first+count-1``.

    Set ``i`` uses the Philox-4x64 counter blocks ``i*w + 1 .. i*w + w`` with
    ``w = ceil(width/4)`` under the key ``seed``; each 64-bit output ``x`` becomes
    ``u = (floor(x / 2^11) + 1/2) / 2^53`` in (0, 1) and ``z = Phi^{-1}(u)``
    (:func:`scipy.special.ndtri`).  The same set therefore gets the same numbers whatever
    the chunk it falls in.
    """
    import scipy.special

    if width == 0 or count == 0:
        return np.zeros((count, width))
    per_set = -(-width // 4)
    bg = np.random.Philox(
        key=np.uint64(seed % 2**64), counter=np.array([first * per_set, 0, 0, 0], dtype=np.uint64)
    )
    raw = bg.random_raw(count * per_set * 4).reshape(count, per_set * 4)[:, :width]
    u = ((raw >> np.uint64(11)).astype(np.float64) + 0.5) * 2.0**-53
    return scipy.special.ndtri(u)


# ---------------------------------------------------------------------------------------
# The plan: everything needed to evaluate any chunk (picklable, sent to workers)
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Column:
    """One summary column: ``<quantity> <species> [unit]``."""

    quantity: str  # half_life | t_max | c_max | limit | first_broken (of a requirement)
    species: str
    index: int  # matrix index of the species
    unit: str

    @property
    def header(self) -> str:
        """The column header: quantity, species and unit."""
        return f"{self.quantity} {self.species} [{self.unit}]"


@dataclass(frozen=True, eq=False)
class SweepPlan:
    """A sweep definition: scheme, grid axes, Monte Carlo spreads, times and chunking.

    Build it with :func:`make_plan`.  All chunks of a plan can be evaluated independently
    (:func:`evaluate_chunk`), in any order and on any machine.

    Attributes
    ----------
    scheme : Scheme
    parameters : tuple of Parameter
        Grid axes (C order: the first varies slowest).
    spreads : tuple of Spread
        Monte Carlo parameters.
    samples : int
        Samples per grid point (0: a plain grid sweep).
    seed : int
    times : numpy.ndarray
        Output times [s] of the curves; the time window for the summary flags ends at
        ``times[-1]``.
    time_unit : str
        Unit of time in the result table.
    chunk_size : int
    precision : str
        Passed to :func:`kinetics.propagate.propagate_batch`.
    columns : tuple of Column
        Summary columns.
    summary_method : str
        ``batch`` (vectorised, :mod:`kinetics.sweep_summary`) or ``reference``
        (:func:`kinetics.analysis.summarise` once per set; slow, for checks).
    activity_unit : str or None
        Heights, limits and curves as activities in this unit (each set's decay
        constants, :func:`kinetics.activity.activity_factors_for`); None: concentrations.
    """

    scheme: Scheme
    parameters: tuple[Parameter, ...]
    spreads: tuple[Spread, ...]
    samples: int
    seed: int
    times: np.ndarray
    time_unit: str
    chunk_size: int
    precision: str
    columns: tuple[Column, ...]
    summary_method: str = "batch"
    activity_unit: str | None = None
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    # -- sizes -------------------------------------------------------------------------
    @property
    def grid_shape(self) -> tuple[int, ...]:
        """Number of values of each grid axis."""
        return tuple(p.values.size for p in self.parameters)

    @property
    def n_grid(self) -> int:
        """Number of grid points (1 without ``--vary``)."""
        return int(np.prod(self.grid_shape, dtype=np.int64)) if self.parameters else 1

    @property
    def n_sets(self) -> int:
        """Number of parameter sets evaluated."""
        return self.n_grid * (self.samples if self.samples else 1)

    @property
    def n_chunks(self) -> int:
        """Number of chunks (the last one may be shorter)."""
        return -(-self.n_sets // self.chunk_size)

    def chunk_bounds(self, k: int) -> tuple[int, int]:
        """First and one-past-last set of chunk ``k``."""
        if not 0 <= k < self.n_chunks:
            raise SettingError(f"chunk {k} does not exist", f"chunks are 0 .. {self.n_chunks - 1}")
        return k * self.chunk_size, min(self.n_sets, (k + 1) * self.chunk_size)

    # -- columns -------------------------------------------------------------------------
    @property
    def parameter_columns(self) -> list[str]:
        """Grid axes, then sampled parameters."""
        return [p.column for p in self.parameters] + [s.column for s in self.spreads]

    @property
    def varied(self) -> tuple[Parameter | Spread, ...]:
        """Grid axes, then sampled parameters (the order of :attr:`parameter_columns`)."""
        return (*self.parameters, *self.spreads)

    @property
    def summary_columns(self) -> list[str]:
        """Headers of the summary columns."""
        return [c.header for c in self.columns]

    @property
    def grid_columns(self) -> list[str]:
        """Headers of the grid axes."""
        return [p.column for p in self.parameters]

    @property
    def concentration_unit(self) -> str:
        """The unit of heights, limits and curves (an activity unit for activities)."""
        return self.activity_unit or self.scheme.concentration_unit

    @property
    def value_name(self) -> str:
        """What the curves hold: ``"activity"`` or ``"concentration"``."""
        return "activity" if self.activity_unit else "concentration"

    # -- definition hash -------------------------------------------------------------------
    def definition(self, curves: bool = False) -> dict[str, Any]:
        """JSON-ready description of everything that determines the results."""
        return {
            "version": _VERSION,
            "scheme_sha256": hashlib.sha256(self.scheme.text.encode("utf-8")).hexdigest(),
            "parameters": [p.describe() for p in self.parameters],
            "spreads": [s.describe() for s in self.spreads],
            "samples": self.samples,
            "seed": self.seed,
            "times_sha256": hashlib.sha256(np.ascontiguousarray(self.times).tobytes()).hexdigest(),
            "points": int(self.times.size),
            "time_unit": self.time_unit,
            "chunk_size": self.chunk_size,
            "precision": self.precision,
            "summary_method": self.summary_method,
            "columns": self.summary_columns,
            "curves": bool(curves),
            **({"activity_unit": self.activity_unit} if self.activity_unit else {}),
        }

    def definition_hash(self, curves: bool = False) -> str:
        """SHA-256 of :meth:`definition`: equal plans give equal results."""
        text = json.dumps(self.definition(curves), sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()

    def cached(self, key: str, make: Callable[[], Any]) -> Any:
        """A value derived from the plan alone, computed once per plan (and process)."""
        if key not in self._cache:
            self._cache[key] = make()
        return self._cache[key]

    # -- parameter values of a range of sets -------------------------------------------
    def internal_low(self, start: int, stop: int) -> np.ndarray:
        """Exact low parts of the internal values of sets ``start .. stop-1`` (b, p + s).

        Grid axes carry the rest of their exact conversion; sampled values are the
        doubles drawn, with no rest.
        """
        idx = np.arange(start, stop, dtype=np.int64)
        grid = idx // self.samples if self.samples else idx
        out = np.zeros((idx.size, len(self.parameters) + len(self.spreads)))
        if self.parameters:
            pos = np.unravel_index(grid, self.grid_shape)
            for j, p in enumerate(self.parameters):
                if p.internal_low is not None:
                    out[:, j] = p.internal_low[pos[j]]
        return out

    def set_values(self, start: int, stop: int) -> tuple[np.ndarray, np.ndarray]:
        """Parameter values of sets ``start .. stop-1``.

        Returns
        -------
        display : ndarray, shape (b, p + s)
            In the units of the result columns (:attr:`parameter_columns`).
        internal : ndarray, shape (b, p + s)
            In internal units (see :class:`Parameter`).
        """
        idx = np.arange(start, stop, dtype=np.int64)
        b = idx.size
        grid = idx // self.samples if self.samples else idx
        ncol = len(self.parameters) + len(self.spreads)
        display = np.empty((b, ncol))
        internal = np.empty((b, ncol))
        if self.parameters:
            pos = np.unravel_index(grid, self.grid_shape)
            for j, p in enumerate(self.parameters):
                display[:, j] = p.values[pos[j]]
                internal[:, j] = p.internal[pos[j]]
        if self.spreads:
            # common random numbers: sample j of every grid point uses counter block j
            sample = idx % self.samples
            z = np.empty((b, len(self.spreads)))
            cut = np.flatnonzero(np.diff(sample) != 1) + 1
            for lo, hi in zip(np.r_[0, cut], np.r_[cut, b], strict=True):
                first = int(sample[lo])
                z[lo:hi] = _standard_normals(self.seed, first, int(hi - lo), len(self.spreads))
            for k, s in enumerate(self.spreads):
                j = len(self.parameters) + k
                if s.distribution == "lognormal":
                    x = s.nominal * np.exp(s.sigma * z[:, k])
                elif s.relative:
                    x = s.nominal * (1.0 + s.sigma * z[:, k])
                else:
                    x = s.nominal + s.sigma * z[:, k]
                internal[:, j] = x
                display[:, j] = parameters.from_internal(s.as_target(), x, s.unit)
        return display, internal


def _summary_columns(
    scheme: Scheme, parameters, spreads, time_unit: str, conc: str
) -> tuple[Column, ...]:
    """Which quantities can apply to which species, in a fixed order.

    * ``half_life``: species with a start value (in the file, or varied/sampled);
    * ``t_max``, ``c_max``: species that are formed (a step or a feed) and consumed
      (an outgoing step) -- only those can have an interior maximum;
    * ``limit``: every species;
    * ``first_broken``: every requirement (``first_broken <text> [unit]``).
    """
    names = scheme.species_names
    started = {n for n, v in scheme.initial.items() if v > 0}
    started |= {p.target for p in (*parameters, *spreads) if p.kind == "start"}
    formed = set(scheme.feed)
    consumed = set()
    for step in scheme.steps:
        consumed.add(step.reactant)
        for _, product in step.products:
            if product != step.reactant:
                formed.add(product)
    cols: list[Column] = []
    for i, n in enumerate(names):
        if n in started:
            cols.append(Column("half_life", n, i, time_unit))
    for i, n in enumerate(names):
        if n in formed and n in consumed:
            cols.append(Column("t_max", n, i, time_unit))
            cols.append(Column("c_max", n, i, conc))
    for i, n in enumerate(names):
        cols.append(Column("limit", n, i, conc))
    # one column per require line: first_broken <text> [time unit] (the text stands in
    # the place of the species; index is the requirement's position)
    for k, r in enumerate(scheme.requirements):
        cols.append(Column("first_broken", r.text, k, time_unit))
    return tuple(cols)


def make_plan(
    scheme: Scheme,
    vary: Sequence[str] | Mapping[str, Any] | Sequence[Parameter] = (),
    times: Sequence[float] | np.ndarray = (),
    *,
    samples: int = 0,
    spread: Sequence[str] | Sequence[Spread] = (),
    seed: int = 0,
    time_unit: str = "s",
    chunk_size: int = DEFAULT_CHUNK,
    precision: str = "double",
    summary_method: str = "batch",
    api: bool = False,
    activity_unit: str | None = None,
) -> SweepPlan:
    """Check a sweep definition and build its :class:`SweepPlan`.

    Parameters
    ----------
    scheme : Scheme
    vary : sequence of str, mapping or sequence of Parameter
        Grid axes: ``["k2=0.01:1:25:log", "temperature=20:80:13:degC"]``, or a mapping
        ``{"k2": "0.01:1:25:log", "start:A": [0.1, 0.2]}`` (numbers in the file's unit).
    times : array_like
        Output times [s] (nondecreasing, >= 0, last one > 0).
    samples : int
        Monte Carlo samples per grid point (0: none).
    spread : sequence of str or Spread
        Monte Carlo distributions, e.g. ``["k1=15%", "temperature=2K"]``.
    seed : int
        Key of the random number generator (>= 0).
    time_unit : str
        Unit of time in the result table.
    chunk_size : int
        Sets per chunk.
    precision : {"double", "auto", "double-double"}
        Precision of the propagation engine.
    summary_method : {"batch", "reference"}
    api : bool
        Word the messages for the Python API (``grid['k2']``, ``samples``) instead of the
        command line (``--vary 'k2=...'``, ``--samples``).
    activity_unit : str, optional
        Report heights, limits and curves as activities in this unit (``MBq``).

    Returns
    -------
    SweepPlan

    Raises
    ------
    kinetics.errors.ArgumentValueError
        A typed error per mistake: times, parameter names, values or spreads, settings.
    """
    from ..solution import check_times, require_scheme, time_factor

    words = API_WORDS if api else CLI_WORDS
    require_scheme(scheme, "sweep" if api else "make_plan")
    t = check_times(times)
    if t[-1] <= 0:
        raise TimesError("the time grid has no time after 0", "give a positive end time")
    time_factor(time_unit)
    parameters = axes(scheme, vary, words)
    spreads = spreads_of(scheme, spread, words)
    seen: set[str] = set()
    varied: tuple[Parameter | Spread, ...] = (*parameters, *spreads)
    for p in varied:
        if p.name in seen:
            raise ParameterSpecError(f"{p.name} is varied twice", words.once)
        seen.add(p.name)
    samples = _check_sampling(samples, seed, bool(spreads), words)
    _check_options(chunk_size, precision, summary_method)
    if scheme.temperature is None and any(p.kind in ("prefactor", "energy") for p in varied):
        raise TemperatureError("the scheme sets no temperature", "add a temperature line")
    if activity_unit is not None:
        from ..activity import activity_factors

        activity_factors(scheme, activity_unit)  # refuses a unit of another kind
        activity_unit = activity_unit.strip()
    conc = activity_unit or scheme.concentration_unit
    columns = _summary_columns(scheme, parameters, spreads, time_unit, conc)
    n_sets = math.prod(p.values.size for p in parameters) * max(samples, 1)
    if n_sets > MAX_SETS:
        raise SettingError(
            f"{n_sets:,} parameter sets are too many (at most {MAX_SETS:,}; about 50 us each)",
            f"use fewer values or {words.samples}",
        )
    plan = SweepPlan(
        scheme,
        parameters,
        spreads,
        samples,
        int(seed),
        t,
        time_unit,
        int(chunk_size),
        precision,
        columns,
        summary_method,
        activity_unit,
    )
    if api:  # the API keeps every result in memory: refuse before checking each set
        check_memory(plan, curves=False)
    _check_sets(plan)
    return plan


def check_memory(plan: SweepPlan, curves: bool) -> None:
    """Refuse a sweep whose results held in memory exceed :data:`MAX_MEMORY_VALUES`."""
    values = plan.n_sets * (len(plan.parameter_columns) + len(plan.columns))
    if curves:
        values = max(values, plan.n_sets * plan.times.size * len(plan.scheme.species))
    if values > MAX_MEMORY_VALUES:
        raise TableSizeError(
            f"the sweep would hold {values:,} values in memory ({plan.n_sets:,} sets), more "
            f"than {MAX_MEMORY_VALUES:,} (about {8 * MAX_MEMORY_VALUES // 10**6} MB per copy)",
            "sweep fewer sets, or write the table to a file chunk by chunk (the command "
            "kinetics sweep does that with --out)",
        )


def _whole(value, least: int) -> bool:
    """A whole number (not a bool) of at least ``least``."""
    return (
        not isinstance(value, bool) and isinstance(value, int | np.integer) and bool(value >= least)
    )


def _check_sampling(samples, seed, has_spreads: bool, words: Words) -> int:
    """The Monte Carlo counts: samples and spreads go together; whole numbers >= 0."""
    if not _whole(samples, 0):
        raise SettingError(
            f"{words.samples} must be a whole number >= 0, not {samples!r}", "e.g. 1000"
        )
    if has_spreads and samples == 0:
        raise SettingError(words.spread_needs, words.mc_example)
    if samples and not has_spreads:
        raise SettingError(words.samples_need, words.mc_example)
    if not _whole(seed, 0):
        raise SettingError(f"{words.seed} must be a whole number >= 0, not {seed!r}", "e.g. 1")
    return int(samples)


def _check_options(chunk_size, precision: str, summary_method: str) -> None:
    if not _whole(chunk_size, 1):
        raise SettingError(
            f"the chunk size must be a whole number >= 1, not {chunk_size!r}", "e.g. 2000"
        )
    checks.precision(precision)
    if summary_method not in ("batch", "reference"):
        raise SettingError(f"unknown summary method {summary_method!r}", "use batch or reference")


def _set_text(plan: SweepPlan, values) -> str:
    return ", ".join(f"{c} = {v:.6g}" for c, v in zip(plan.parameter_columns, values, strict=True))


def _located_inputs(plan: SweepPlan, start: int, display, internal):
    """:func:`input_rates` of a block of sets, naming a set that cannot be evaluated.

    A set whose values a definition of the scheme cannot take is named
    (``set 3 (t_p [h] = -1): ...``).
    """
    try:
        return input_rates(plan, internal)
    except (ExpressionError, ActivityError):
        for i in range(internal.shape[0]):
            try:
                input_rates(plan, internal[i : i + 1])
            except (ExpressionError, ActivityError) as exc:
                raise type(exc)(
                    f"set {start + i} ({_set_text(plan, display[i])}): {exc.problem}", exc.hint
                ) from None
        raise  # pragma: no cover - a block fails only where one of its sets does


def _check_sets(plan: SweepPlan, block: int = 100_000) -> None:
    """Refuse a plan with a set outside the engine's working range, before any work."""
    from ..analysis import MAX_RATE, MAX_SCALE, check_working_range
    from ..ratematrix import rate_pattern

    pattern = rate_pattern(plan.scheme)
    diag = np.flatnonzero(pattern.rows == pattern.cols)
    n = pattern.n
    t_end = float(plan.times[-1])
    check_working_range([], t_end)  # the time span alone, for every set
    for start in range(0, plan.n_sets, block):
        stop = min(plan.n_sets, start + block)
        display, internal = plan.set_values(start, stop)
        rates, c0, feed = _located_inputs(plan, start, display, internal)
        out = np.zeros((stop - start, n))
        for e in diag:
            out[:, pattern.rows[e]] -= pattern.coefficients[e] * rates[:, pattern.steps[e]]
        amount = c0.sum(axis=1) + (0.0 if feed is None else feed.sum() * t_end)
        with np.errstate(invalid="ignore", over="ignore"):
            worst = np.where(np.isfinite(out), out, np.inf).max(axis=1)
            worst = np.maximum(worst / MAX_RATE, amount * np.maximum(worst, 1.0) ** 3 / MAX_SCALE)
        i = int(np.argmax(np.where(np.isnan(worst), np.inf, worst)))
        try:
            check_working_range(out[i], t_end, plan.scheme.species_names, float(amount[i]))
        except WorkingRangeError as exc:
            values = _set_text(plan, display[i])
            raise WorkingRangeError(
                f"set {start + i} ({values}): {exc.problem}", exc.hint
            ) from None
