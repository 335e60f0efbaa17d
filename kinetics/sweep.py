r"""Parameter sweeps and Monte Carlo propagation of uncertainty, evaluated in stacked batches.

A sweep evaluates one scheme for many *parameter sets*.  Each set replaces some of the
scheme's inputs: rate constants, Arrhenius parameters, the temperature, start or excess
concentrations.  Sets are laid out either as a Cartesian grid (``--vary``) or as Monte
Carlo samples around each grid point (``--samples``/``--spread``), and are evaluated in
*chunks*: a chunk of ``b`` sets builds a stack of ``b`` rate matrices at once; the
summary quantities of :mod:`kinetics.analysis` are computed for the whole stack by
:mod:`kinetics.sweep_summary`, and the curves (when asked for) by
:func:`kinetics.propagate.propagate_batch`.  No Python loop runs over the sets.

Parameter names (as in the scheme file)
---------------------------------------
``k2``
    A rate constant defined by value (not an Arrhenius constant).
``k3.A``, ``k3.Ea``
    Pre-exponential factor and activation energy of an Arrhenius constant ``k3``,

    .. math:: k(T) = A \exp\left(-\frac{E_a}{R T}\right)

    with :math:`R = 8.314462618` J/(mol K) (CODATA 2018).
``temperature``
    The temperature of the scheme (changes every Arrhenius constant).
``start:A``, ``excess:W``
    The start concentration of a species, the concentration of a co-reactant held in excess.

Value specifications (``NAME=VALUES``)
--------------------------------------
``LO:HI:N[:lin|:log][:UNIT]``
    ``N`` values from ``LO`` to ``HI`` inclusive, evenly spaced (``lin``, the default) or
    evenly spaced in the logarithm (``log``, needs ``LO, HI > 0``).
``V1,V2,...[:UNIT]``
    An explicit list (a single value is a list of one); the unit may also follow after a space.

A value without a unit is in the unit the file wrote for that quantity: the unit of the
constant's definition (``k2 = 0.045 min-1`` -> ``min-1``), of ``A`` or ``Ea`` in the
``arrhenius(...)`` definition, of the ``temperature`` line, and the scheme's concentration
unit for start and excess values.  Columns of the result are named ``NAME [UNIT]``.

Monte Carlo spreads (``NAME=SPREAD``)
-------------------------------------
Rate constants, pre-exponential factors, start and excess concentrations are *lognormal*
around their value :math:`x_0` with a relative spread ``s`` written as a percentage
(``k1=15%``): the spread is the geometric standard deviation minus one,

.. math:: \ln x = \ln x_0 + \ln(1 + s)\, z, \qquad z \sim N(0, 1),

so :math:`x_0` is the median and 68.3 % of the samples lie in
:math:`[x_0/(1+s),\ x_0(1+s)]`.  The temperature and activation energies are *normal*,
:math:`x = x_0 + \sigma z`, with an absolute standard deviation (``temperature=2K``,
``temperature=1.5`` in the file's temperature unit, ``k3.Ea=2kJ/mol``) or a percentage of
the value (of the absolute temperature in K).  The standard normal numbers come from the
counter-based Philox generator keyed by ``--seed`` (sample ``i``, parameter ``j`` uses
counter block ``i``), so a sample does not depend on the chunking or on the engine.

Set numbering
-------------
Grid points are numbered in C order (the first ``--vary`` varies slowest).  With
``samples = N``, set ``i`` is sample ``i % N`` of grid point ``i // N``.

References
----------
S. Arrhenius, "Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch
Säuren", Z. Phys. Chem. 4, 226-248 (1889).
J. K. Salmon, M. A. Moraes, R. O. Dror, D. E. Shaw, "Parallel random numbers: as easy as
1, 2, 3", Proc. Int. Conf. High Performance Computing, Networking, Storage and Analysis
(SC11), 2011. doi:10.1145/2063384.2063405
J. Aitchison, J. A. C. Brown, "The Lognormal Distribution", Cambridge University Press
(1957).
"""

from __future__ import annotations

import hashlib
import json
import math
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from . import _doubledouble as dd
from . import parameters
from .errors import ArgumentTypeError, GrowthError, UsageError, type_name
from .parameters import NUMBER, SweepWords, Target
from .units import parse_unit

if TYPE_CHECKING:
    import pandas as pd

    from .scheme import Scheme

__all__ = [
    "BOUND_COLUMN",
    "DEFAULT_CHUNK",
    "PERCENTILES",
    "ChunkResult",
    "Column",
    "Parameter",
    "Spread",
    "SweepPlan",
    "chunk_result",
    "curve_bands",
    "curves_array",
    "curves_frame",
    "curves_long_frame",
    "evaluate_chunk",
    "make_plan",
    "monte_carlo",
    "parse_spread",
    "parse_vary",
    "percentile_bands",
    "run_chunks",
    "set_inputs",
    "set_matrices",
    "summary_frame",
    "sweep",
]

#: Percentiles of the Monte Carlo bands.
PERCENTILES = (2.5, 50.0, 97.5)
#: Most values on one grid axis (each is converted with an exact rational unit factor).
MAX_AXIS = 1_000_000
#: Most parameter sets of one sweep (about 1.4 h at 50 us per set).
MAX_SETS = 100_000_000
#: Most values a sweep keeps in memory (API, or the command without --out): sets x
#: columns, or sets x times x species with curves.
MAX_MEMORY_VALUES = 100_000_000
#: Sets per chunk by default (memory per chunk: about sets x points x species x 8 bytes
#: when curves are kept).
DEFAULT_CHUNK = 1000
_VERSION = 2  # of the chunk layout and the definition hash (2: the curves' bound)
#: Column of the summary table with the certified relative error bound of each set's
#: curves (the worst over its times); present when the curves are computed.
BOUND_COLUMN = "relative error bound"

_NUMBER_RE = re.compile(rf"^\s*{NUMBER}\s*$")
_VARY_HELP = (
    "write NAME=LO:HI:N[:log][:UNIT] or NAME=V1,V2,V3[:UNIT], e.g. k2=0.01:1:25:log, "
    "temperature=20:80:13:degC, k3.Ea=80:100:5:kJ/mol, start:A=0.1,0.2,0.5"
)
_GRID_HELP = (
    "give each parameter a list of numbers in the unit the file uses for it, e.g. "
    "{'k2': [0.02, 0.045, 0.09]}, or a range as text, e.g. {'k2': '0.01:1:25:log'}"
)
_SPREAD_HELP = (
    "write NAME=P% (lognormal for rate constants, A, start and excess values) or an "
    "absolute standard deviation for temperature and Ea, e.g. k1=15%, temperature=2K, "
    "k3.Ea=2kJ/mol"
)


# ---------------------------------------------------------------------------------------
# --vary
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Parameter:
    """One axis of a sweep grid.

    Attributes
    ----------
    name : str
        Canonical name: ``k2``, ``k3.A``, ``k3.Ea``, ``temperature``, ``start:A``, ``excess:W``.
    kind : str
        ``constant``, ``prefactor``, ``energy``, ``temperature``, ``start`` or ``excess``.
    target : str
        The constant or species it changes (empty for the temperature).
    unit : str
        Unit of :attr:`values` (as written in the spec, or the file's unit).
    values : numpy.ndarray
        Values in :attr:`unit`, as they appear in the result table.
    internal : numpy.ndarray
        The same values in internal units: SI base units for constants and ``A``
        [1/s for first order], [J/mol] for ``Ea``, [K] for the temperature, the scheme's
        concentration unit for start and excess values.
    spacing : str
        ``lin``, ``log`` or ``list``.
    column : str
        Column name of the result table, e.g. ``k2 [1/min]``.
    internal_low : numpy.ndarray or None
        The exact rest of each internal value (``internal + internal_low`` is the exact
        conversion of what was written, see :func:`kinetics.parameters.to_internal`);
        None: zero.
    """

    name: str
    kind: str
    target: str
    unit: str
    values: np.ndarray
    internal: np.ndarray
    spacing: str
    column: str
    internal_low: np.ndarray | None = None

    def describe(self) -> dict[str, Any]:
        """JSON-ready definition (used in the definition hash and the manifest)."""
        return {
            "name": self.name,
            "unit": self.unit,
            "spacing": self.spacing,
            "values": [float(v).hex() for v in self.values],
        }


def _split_unit(text: str) -> tuple[str, str]:
    """``'0.1,0.2 1/min'`` -> (``'0.1,0.2'``, ``'1/min'``); no unit -> (text, '')."""
    text = re.sub(r",\s+", ",", text.strip())
    parts = text.split(None, 1)
    if len(parts) == 2:
        return parts[0], parts[1].strip()
    return text, ""


def parse_vary(scheme: Scheme, spec: str, option: str = "--vary") -> Parameter:
    """Parse one ``NAME=VALUES`` specification into a grid axis.

    Parameters
    ----------
    scheme : Scheme
        The scheme whose constants, temperature or species the name refers to.
    spec : str
        ``NAME=LO:HI:N[:lin|:log][:UNIT]`` or ``NAME=V1,V2,...[:UNIT]`` (see the module
        docstring); a value without unit is in the unit the file uses for that quantity.
    option : str
        Option name for messages.

    Returns
    -------
    Parameter

    Raises
    ------
    kinetics.errors.UsageError
        One sentence saying what is wrong and how to write it.

    Notes
    -----
    .. math::

        x_j = x_{lo} + \\frac{j}{N-1}(x_{hi} - x_{lo}) \\ \\text{(lin)}, \\qquad
        x_j = x_{lo} \\left(\\frac{x_{hi}}{x_{lo}}\\right)^{j/(N-1)} \\ \\text{(log)},
        \\qquad j = 0 \\ldots N-1

    computed with ``numpy.linspace`` and ``numpy.geomspace`` (end points exact).  Values
    are converted to internal units with exact rational unit factors (one rounding).
    """
    return _parse_vary(scheme, spec, f"{option} {spec!r}", _VARY_HELP)


def _parse_vary(scheme: Scheme, spec: str, where: str, help_: str) -> Parameter:
    """:func:`parse_vary` with the place and the hint of its messages given."""
    if "=" not in spec:
        raise UsageError(f"{where} has no '='", help_)
    name, _, body = spec.partition("=")
    body = body.strip()
    if not name.strip() or not body:
        raise UsageError(f"{where} needs a name and values", help_)
    target = parameters.resolve(scheme, name, SweepWords(where))
    texts = None
    fields = [f.strip() for f in body.split(":")]
    unit = ""
    spacing = "list"
    if len(fields) >= 3 and all(_NUMBER_RE.match(f) for f in fields[:3]) and "," not in body:
        lo, hi = float(fields[0]), float(fields[1])
        try:
            count = int(fields[2])
        except ValueError:
            raise UsageError(
                f"{where}: the number of values {fields[2]!r} is not a whole number", help_
            ) from None
        if count < 1 or str(count) != fields[2].lstrip("+"):
            raise UsageError(
                f"{where}: the number of values must be a whole number >= 1, not {fields[2]!r}",
                help_,
            )
        if count > MAX_AXIS:
            raise UsageError(
                f"{where}: {count:,} values on one axis are too many (at most {MAX_AXIS:,})",
                "use fewer values",
            )
        spacing = "lin"
        for extra in fields[3:]:
            if extra.lower() in ("log", "lin", "linear"):
                spacing = "log" if extra.lower() == "log" else "lin"
            elif extra and not unit:
                unit = extra
            else:
                raise UsageError(f"{where}: unexpected field {extra!r}", help_)
        if not (math.isfinite(lo) and math.isfinite(hi)):
            raise UsageError(f"{where}: the range ends must be finite numbers", help_)
        if count == 1 and lo != hi:
            raise UsageError(
                f"{where}: a range from {lo:g} to {hi:g} needs at least 2 values", help_
            )
        if spacing == "log":
            if lo <= 0 or hi <= 0:
                raise UsageError(
                    f"{where}: log spacing needs positive ends", "use linear spacing or LO > 0"
                )
            values = np.geomspace(lo, hi, count) if count > 1 else np.array([lo])
        else:
            values = np.linspace(lo, hi, count) if count > 1 else np.array([lo])
    else:
        head, *rest = fields
        if len(rest) > 1:
            raise UsageError(f"{where} is neither a range LO:HI:N nor a list", help_)
        numbers, spaced_unit = _split_unit(head)
        unit = rest[0] if rest else spaced_unit
        if rest and spaced_unit:
            raise UsageError(f"{where} gives two units", help_)
        items = [x for x in numbers.split(",")]
        if any(not _NUMBER_RE.match(x) for x in items):
            bad = next(x for x in items if not _NUMBER_RE.match(x))
            raise UsageError(f"{where}: {bad!r} is not a number", help_)
        values = np.array([float(x) for x in items])
        texts = items
    return _parameter(target, values, unit or target.unit, spacing, where, help_, texts)


def _check_range(values: np.ndarray, texts: list[str], where: str) -> None:
    """Values that are not finite: written beyond the range of doubles (``1e400``), or nan."""
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        k = bad[0]
        what = "not a number" if np.isnan(values[k]) else "beyond the range of numbers (1.8e308)"
        raise UsageError(
            f"{where}: {texts[k].strip()} is {what}",
            "give finite values within the working range (README, Limits of the method)",
        )


def _parameter(
    target: Target, values, unit: str, spacing: str, where: str, help_: str, texts=None
) -> Parameter:
    """A grid axis from values in ``unit`` (checked and converted to internal units)."""
    _check_range(values, texts or [repr(float(v)) for v in values], where)
    parameters.check_unit(target, unit, where, help_)
    internal, low = parameters.to_internal(target, values, unit, texts)
    parameters.check_values(target, internal, where, help_)
    return Parameter(
        target.name,
        target.kind,
        target.target,
        unit,
        values,
        internal,
        spacing,
        f"{target.label} [{unit}]",
        low,
    )


def _grid_axis(scheme: Scheme, name, value) -> Parameter:
    """One entry ``name: value`` of an API grid mapping (numbers in the file's unit or text)."""
    if not isinstance(name, str):
        raise ArgumentTypeError(
            f"a grid name must be text such as 'k2', not {type_name(name)}", _GRID_HELP
        )
    if isinstance(value, str):
        return _parse_vary(scheme, f"{name}={value}", f"grid[{name!r}] = {value!r}", _GRID_HELP)
    where = f"grid[{name!r}]"
    target = parameters.resolve(scheme, name, SweepWords(where))
    if value is None or isinstance(value, Mapping | bytes):
        raise ArgumentTypeError(
            f"{where} must be a list of numbers, not {type_name(value)}", _GRID_HELP
        )
    items = np.atleast_1d(np.asarray(value, dtype=object))
    if items.ndim != 1:
        raise UsageError(
            f"{where} must be a flat list of values, not an array of shape {items.shape}",
            _GRID_HELP,
        )
    if items.size == 0:
        raise UsageError(f"{where} has no values", _GRID_HELP)
    if items.size > MAX_AXIS:
        raise UsageError(
            f"{where}: {items.size:,} values on one axis are too many (at most {MAX_AXIS:,})",
            "use fewer values",
        )
    values = np.empty(items.size)
    for j, x in enumerate(items):
        if isinstance(x, bool) or not isinstance(x, int | float | np.integer | np.floating):
            raise UsageError(f"{where}: {x!r} is not a number", _GRID_HELP)
        values[j] = float(x)
    return _parameter(target, values, target.unit, "list", where, _GRID_HELP)


# ---------------------------------------------------------------------------------------
# --spread
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Spread:
    """The distribution of one Monte Carlo parameter.

    Attributes
    ----------
    name, kind, target : str
        As for :class:`Parameter`.
    unit : str
        Unit of the sampled values in the result table (the file's unit).
    distribution : str
        ``lognormal`` (:math:`x = x_0 (1+s)^z`) or ``normal`` (:math:`x = x_0 + \\sigma z`).
    sigma : float
        Lognormal: :math:`\\ln(1+s)`; normal: :math:`\\sigma` in internal units
        ([K] or [J/mol]); or, for a relative normal spread, the fraction of the nominal value.
    relative : bool
        Normal spreads only: ``sigma`` is a fraction of the nominal value.
    nominal : float
        The file's value in internal units (used when no grid axis gives it).
    column : str
        ``k1 [1/min]``.
    text : str
        The spec as written.
    """

    name: str
    kind: str
    target: str
    unit: str
    distribution: str
    sigma: float
    relative: bool
    nominal: float
    column: str
    text: str

    def as_target(self) -> Target:
        """What the spread varies (name, kind, target and the file's unit)."""
        return Target(self.name, self.kind, self.target, self.unit)

    def describe(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "distribution": self.distribution,
            "sigma": float(self.sigma).hex(),
            "relative": self.relative,
        }


def parse_spread(scheme: Scheme, spec: str, option: str = "--spread") -> Spread:
    """Parse one ``NAME=SPREAD`` Monte Carlo specification.

    Parameters
    ----------
    scheme : Scheme
    spec : str
        ``k1=15%`` (lognormal, geometric standard deviation 1.15), ``temperature=2K``,
        ``temperature=2`` (file's unit), ``k3.Ea=2kJ/mol`` or ``k3.Ea=3%`` (normal).
    option : str

    Returns
    -------
    Spread

    Raises
    ------
    kinetics.errors.UsageError

    Notes
    -----
    .. math::

        \\text{lognormal: } \\ln x \\sim N(\\ln x_0, \\ln^2(1+s)); \\qquad
        \\text{normal: } x \\sim N(x_0, \\sigma^2)

    A temperature standard deviation in degC (or degF) is a temperature *difference*
    (1 degC = 1 K).
    """
    return _parse_spread(scheme, spec, f"{option} {spec!r}")


def _parse_spread(scheme: Scheme, spec: str, where: str) -> Spread:
    """:func:`parse_spread` with the place of its messages given."""
    if not isinstance(spec, str):
        raise ArgumentTypeError(
            f"a spread must be text such as 'k1=15%', not {type_name(spec)}", _SPREAD_HELP
        )
    if "=" not in spec:
        raise UsageError(f"{where} has no '='", _SPREAD_HELP)
    name, _, body = spec.partition("=")
    body = body.strip()
    if not name.strip() or not body:
        raise UsageError(f"{where} needs a name and a spread", _SPREAD_HELP)
    target = parameters.resolve(scheme, name, SweepWords(where))
    normal = target.kind in ("temperature", "energy")
    column = f"{target.label} [{target.unit}]"
    m = re.match(rf"^({NUMBER})\s*%$", body)
    if m:
        pct = float(m[1])
        if not (math.isfinite(pct) and pct > 0):
            raise UsageError(f"{where}: the spread must be a positive percentage", _SPREAD_HELP)
        s = pct / 100.0
        if normal:
            if s >= 0.25:
                raise UsageError(f"{where}: a spread of {pct:g} % is too wide", "use below 25 %")
            return Spread(
                target.name,
                target.kind,
                target.target,
                target.unit,
                "normal",
                s,
                True,
                target.nominal,
                column,
                spec,
            )
        return Spread(
            target.name,
            target.kind,
            target.target,
            target.unit,
            "lognormal",
            math.log1p(s),
            False,
            target.nominal,
            column,
            spec,
        )
    if not normal:
        raise UsageError(
            f"{where}: the spread of {target.name} must be a percentage (lognormal)",
            f"write e.g. {target.name}=15%",
        )
    m = re.match(rf"^({NUMBER})\s*(?P<unit>.*?)\s*$", body)
    if not m:
        raise UsageError(f"{where}: {body!r} is not a number with a unit", _SPREAD_HELP)
    value = float(m[1])
    unit = m["unit"] or target.unit
    if not (math.isfinite(value) and value > 0):
        raise UsageError(f"{where}: the standard deviation must be positive", _SPREAD_HELP)
    if target.kind == "temperature":
        per_kelvin = {
            "K": 1.0,
            "kelvin": 1.0,
            "degC": 1.0,
            "°C": 1.0,
            "celsius": 1.0,
            "degF": 5.0 / 9.0,
            "°F": 5.0 / 9.0,
        }
        if unit not in per_kelvin:
            raise UsageError(f"{where}: {unit!r} is not a temperature unit", "use K or degC")
        sigma = value * per_kelvin[unit]
        if sigma >= 0.25 * target.nominal:
            raise UsageError(
                f"{where}: a standard deviation of {value:g} {unit} is too wide",
                "it would give temperatures near or below 0 K",
            )
    else:
        parameters.check_unit(target, unit, where, _VARY_HELP)
        sigma = float(Fraction(value) * parse_unit(unit).factor)
    return Spread(
        target.name,
        target.kind,
        target.target,
        target.unit,
        "normal",
        sigma,
        False,
        target.nominal,
        column,
        spec,
    )


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

    quantity: str  # half_life | t_max | c_max | limit
    species: str
    index: int  # matrix index of the species
    unit: str

    @property
    def header(self) -> str:
        return f"{self.quantity} {self.species} [{self.unit}]"


_QUANTITIES = ("half_life", "t_max", "c_max", "limit")


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
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    # -- sizes -------------------------------------------------------------------------
    @property
    def grid_shape(self) -> tuple[int, ...]:
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
        return -(-self.n_sets // self.chunk_size)

    def chunk_bounds(self, k: int) -> tuple[int, int]:
        """First and one-past-last set of chunk ``k``."""
        if not 0 <= k < self.n_chunks:
            raise UsageError(f"chunk {k} does not exist", f"chunks are 0 .. {self.n_chunks - 1}")
        return k * self.chunk_size, min(self.n_sets, (k + 1) * self.chunk_size)

    # -- columns -------------------------------------------------------------------------
    @property
    def parameter_columns(self) -> list[str]:
        """Grid axes, then sampled parameters."""
        return [p.column for p in self.parameters] + [s.column for s in self.spreads]

    @property
    def summary_columns(self) -> list[str]:
        return [c.header for c in self.columns]

    @property
    def grid_columns(self) -> list[str]:
        return [p.column for p in self.parameters]

    @property
    def concentration_unit(self) -> str:
        return self.scheme.concentration_unit

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
        }

    def definition_hash(self, curves: bool = False) -> str:
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
            j = idx % self.samples
            z = np.empty((b, len(self.spreads)))
            cut = np.flatnonzero(np.diff(j) != 1) + 1
            for lo, hi in zip(np.r_[0, cut], np.r_[cut, b], strict=True):
                z[lo:hi] = _standard_normals(self.seed, int(j[lo]), int(hi - lo), len(self.spreads))
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


def _summary_columns(scheme: Scheme, parameters, spreads, time_unit: str) -> tuple[Column, ...]:
    """Which quantities can apply to which species, in a fixed order.

    * ``half_life``: species with a start value (in the file, or varied/sampled);
    * ``t_max``, ``c_max``: species that are formed (a step or a feed) and consumed
      (an outgoing step) -- only those can have an interior maximum;
    * ``limit``: every species.
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
    conc = scheme.concentration_unit
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

    Returns
    -------
    SweepPlan

    Raises
    ------
    kinetics.errors.UsageError
    """
    from .solution import check_times, require_scheme, time_factor

    words = _API_WORDS if api else _CLI_WORDS
    require_scheme(scheme, "sweep" if api else "make_plan")
    t = check_times(times)
    if t[-1] <= 0:
        raise UsageError("the time grid has no time after 0", "give a positive end time")
    time_factor(time_unit)
    parameters = _axes(scheme, vary, words)
    if isinstance(spread, str):
        spread = [spread]
    if spread is None or not isinstance(spread, Iterable):
        raise ArgumentTypeError(
            f"the spread must be a list of texts such as 'k1=15%', not {type_name(spread)}",
            _SPREAD_HELP,
        )
    spreads = tuple(
        s if isinstance(s, Spread) else _parse_spread(scheme, s, words.place(words.spread, s))
        for s in spread
    )
    seen: set[str] = set()
    for p in (*parameters, *spreads):
        if p.name in seen:
            raise UsageError(f"{p.name} is varied twice", words.once)
        seen.add(p.name)
    if isinstance(samples, bool) or not isinstance(samples, int | np.integer) or samples < 0:
        raise UsageError(
            f"{words.samples} must be a whole number >= 0, not {samples!r}", "e.g. 1000"
        )
    samples = int(samples)
    if spreads and samples == 0:
        raise UsageError(words.spread_needs, words.mc_example)
    if samples and not spreads:
        raise UsageError(words.samples_need, words.mc_example)
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise UsageError(f"{words.seed} must be a whole number >= 0, not {seed!r}", "e.g. 1")
    if (
        isinstance(chunk_size, bool)
        or not isinstance(chunk_size, int | np.integer)
        or (chunk_size < 1)
    ):
        raise UsageError(
            f"the chunk size must be a whole number >= 1, not {chunk_size!r}", "e.g. 2000"
        )
    if precision not in ("double", "auto", "double-double"):
        raise UsageError(f"unknown precision {precision!r}", "use double, auto or double-double")
    if summary_method not in ("batch", "reference"):
        raise UsageError(f"unknown summary method {summary_method!r}", "use batch or reference")
    if scheme.temperature is None and any(
        p.kind in ("prefactor", "energy") for p in (*parameters, *spreads)
    ):
        raise UsageError("the scheme sets no temperature", "add a temperature line")
    columns = _summary_columns(scheme, parameters, spreads, time_unit)
    n_sets = math.prod(p.values.size for p in parameters) * max(samples, 1)
    if n_sets > MAX_SETS:
        raise UsageError(
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
    )
    if api:  # the API keeps every result in memory: refuse before checking each set
        _check_memory(plan, curves=False)
    _check_sets(plan)
    return plan


@dataclass(frozen=True)
class _Words:
    """How messages name the parts of a sweep: command-line options or API arguments."""

    vary: str
    spread: str
    samples: str
    seed: str
    once: str
    mc_example: str
    vary_help: str
    spread_needs: str
    samples_need: str

    @staticmethod
    def place(option: str, spec: str) -> str:
        return f"{option} {spec!r}"


_CLI_WORDS = _Words(
    "--vary",
    "--spread",
    "--samples",
    "--seed",
    "give each parameter once, in either --vary or --spread",
    "e.g. --samples 1000 --spread k1=15%",
    _VARY_HELP,
    "--spread needs --samples",
    "--samples needs at least one --spread",
)
_API_WORDS = _Words(
    "grid entry",
    "spread entry",
    "samples",
    "seed",
    "give each parameter once, in either the grid or the spread",
    "e.g. monte_carlo(scheme, ['k1=15%'], 1000, times)",
    _GRID_HELP,
    "a spread needs samples > 0",
    "samples need at least one spread",
)


def _axes(scheme: Scheme, vary, words: _Words) -> tuple[Parameter, ...]:
    """Grid axes from texts, a mapping (API) or ready parameters."""
    if isinstance(vary, Mapping):
        return tuple(_grid_axis(scheme, k, v) for k, v in vary.items())
    if isinstance(vary, str):
        vary = [vary]
    if not isinstance(vary, Iterable):
        raise ArgumentTypeError(
            f"the grid must be a mapping or a list of texts, not {type_name(vary)}",
            _GRID_HELP,
        )
    out = []
    for p in vary:
        if isinstance(p, Parameter):
            out.append(p)
        elif isinstance(p, str):
            out.append(_parse_vary(scheme, p, words.place(words.vary, p), words.vary_help))
        else:
            raise ArgumentTypeError(
                f"a grid entry must be text such as 'k2=0.01:1:25:log', not {type_name(p)}",
                _GRID_HELP,
            )
    return tuple(out)


def _check_sets(plan: SweepPlan, block: int = 100_000) -> None:
    """Refuse a plan with a set outside the engine's working range, before any work."""
    from .analysis import MAX_RATE, MAX_SCALE, check_working_range
    from .ratematrix import rate_pattern

    pattern = rate_pattern(plan.scheme)
    diag = np.flatnonzero(pattern.rows == pattern.cols)
    n = pattern.n
    t_end = float(plan.times[-1])
    check_working_range([], t_end)  # the time span alone, for every set
    for start in range(0, plan.n_sets, block):
        stop = min(plan.n_sets, start + block)
        display, internal = plan.set_values(start, stop)
        rates, c0, feed = _inputs(plan, internal)
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
        except UsageError as exc:
            values = ", ".join(
                f"{c} = {v:.6g}" for c, v in zip(plan.parameter_columns, display[i], strict=True)
            )
            raise UsageError(f"set {start + i} ({values}): {exc.problem}", exc.hint) from None


# ---------------------------------------------------------------------------------------
# Inputs of a set: rates, start and feed in batch
# ---------------------------------------------------------------------------------------


class _SetValues:
    """The varied values of a range of sets, by parameter name, as pairs ``(hi, lo)``."""

    def __init__(self, plan: SweepPlan, internal: np.ndarray, low: np.ndarray) -> None:
        named = [*plan.parameters, *plan.spreads]
        self.columns = {p.name: j for j, p in enumerate(named)}
        self.internal = internal
        self.low = low

    def get(self, name: str):
        j = self.columns.get(name)
        return None if j is None else (self.internal[:, j], self.low[:, j])


def _constant_pairs(plan: SweepPlan, name: str, varied: _SetValues):
    """Values of constant ``name`` [SI] for the sets, as pairs; None when no set changes it.

    .. math:: k = A \\exp(-E_a/(R T)) \\text{ for Arrhenius constants}
    """
    from .scheme import arrhenius_pairs

    scheme = plan.scheme
    law = scheme.constants[name].arrhenius
    if law is None:
        return varied.get(name)
    a, ea, t = varied.get(f"{name}.A"), varied.get(f"{name}.Ea"), varied.get("temperature")
    if a is None and ea is None and t is None:
        return None
    return arrhenius_pairs(  # the one Arrhenius law (exact, cached per distinct value)
        law,
        scheme.temperature if t is None else t[0],
        prefactor=None if a is None else a[0],
        prefactor_low=None if a is None else a[1],
        energy=None if ea is None else ea[0],
    )


def _excess_power(w, nu):
    """:math:`W^\\nu` for excess concentrations ``w`` [SI] given as pairs ``(hi, lo)``.

    Integer powers by double-double products; others exactly to 40 digits
    (:func:`kinetics._doubledouble.decimal_power`), once per distinct value.
    """
    wh, wl = w
    nu = Fraction(nu)
    if nu.denominator == 1 and 0 <= nu <= 64:
        ph, pl = np.ones(wh.shape), np.zeros(wh.shape)
        for _ in range(int(nu)):
            ph, pl = dd.product(ph, pl, wh, wl)
        return ph, pl
    rows, inverse = np.unique(np.stack([wh, wl], axis=1), axis=0, return_inverse=True)
    exact = [dd.pair(dd.decimal_power(Fraction(h) + Fraction(lo), nu)) for h, lo in rows.tolist()]
    out = np.array(exact)[inverse.reshape(-1)]
    return out[:, 0], out[:, 1]


def _step_rate(plan: SweepPlan, s: int, k, varied: _SetValues, b: int):
    """Effective rate pairs of step ``s`` for the sets (None: the file's own, unchanged).

    .. math:: k_\\mathrm{eff} = k \\prod_j [W_j]^{\\nu_j}
    """
    scheme = plan.scheme
    step = scheme.steps[s]
    excess = [(nu, w, varied.get(f"excess:{w}")) for nu, w in step.co_reactants]
    if k is None and all(v is None for *_, v in excess):
        return None
    if k is None:
        d = scheme.constants[step.constant]
        k = dd.pair(d.value_si if d.arrhenius is None else d.arrhenius.exact(scheme.temperature))
    kh = np.broadcast_to(np.asarray(k[0], dtype=float), (b,))
    kl = np.broadcast_to(np.asarray(k[1], dtype=float), (b,))
    if not step.co_reactants:
        return kh, kl
    if all(v is None for *_, v in excess):
        # the file's excess concentrations: their exact factor, rounded once
        fh, fl = plan.cached("excess factors", lambda: _fixed_excess_factors(scheme))
        return dd.product(kh, kl, np.full(b, fh[s]), np.full(b, fl[s]))
    unit = [np.full(b, x) for x in dd.pair(scheme.concentration_si)]
    for nu, w, v in excess:
        if v is None:  # the file's value, exact in SI
            w_si = tuple(np.full(b, x) for x in dd.pair(scheme.excess_si[w]))
        else:  # varied in the scheme's unit: times the exact SI value of that unit
            w_si = dd.product(v[0], v[1], *unit)
        kh, kl = dd.product(kh, kl, *_excess_power(w_si, nu))
    return kh, kl


def _fixed_excess_factors(scheme: Scheme):
    """The exact excess factor of every step (its constant set to 1), as pairs."""
    from .ratematrix import step_rate_pairs

    return step_rate_pairs(scheme, constants=dict.fromkeys(scheme.constants, 1.0))


def _input_pairs(plan: SweepPlan, internal: np.ndarray, low: np.ndarray):
    """Step rates as pairs ``(hi, lo)`` (b, n_steps) [1/s], start (b, n) [conc], feed (n,).

    Steps that no parameter changes keep :attr:`kinetics.scheme.Scheme.rate_pairs` bit for
    bit; changed ones are formed from the exact values (constants as written, Arrhenius
    constants through :func:`kinetics.scheme.arrhenius_pairs`, excess factors exactly).
    """
    scheme = plan.scheme
    b = internal.shape[0]
    varied = _SetValues(plan, internal, low)
    base_hi, base_lo = scheme.rate_pairs
    hi = np.broadcast_to(base_hi, (b, base_hi.size)).copy()
    lo = np.broadcast_to(base_lo, (b, base_lo.size)).copy()
    constants = {c: _constant_pairs(plan, c, varied) for c in scheme.constants}
    for s, step in enumerate(scheme.steps):
        rate = _step_rate(plan, s, constants[step.constant], varied, b)
        if rate is not None:
            hi[:, s], lo[:, s] = rate
    c0 = np.broadcast_to(scheme.initial_vector, (b, len(scheme.species))).copy()
    for p in [*plan.parameters, *plan.spreads]:
        if p.kind == "start":
            c0[:, scheme.index[p.target]] = varied.get(p.name)[0]
    feed = scheme.feed_vector if scheme.feed else None
    return hi, lo, c0, feed


def _inputs(plan: SweepPlan, internal: np.ndarray):
    """Step rates (b, n_steps) [1/s], start (b, n) [conc] and feed (n,) [conc/s] or None.

    The high parts of :func:`_input_pairs` for values without low parts (checks of the
    working range, references in tests and benchmarks).
    """
    hi, _, c0, feed = _input_pairs(plan, internal, np.zeros_like(internal))
    return hi, c0, feed


def set_inputs(plan: SweepPlan, i: int) -> dict[str, Any]:
    """The inputs of set ``i`` in the form :func:`kinetics.ratematrix.step_rates` and
    :meth:`kinetics.scheme.Scheme.with_values` take (for checking single sets).

    Returns
    -------
    dict
        ``constants`` (name -> SI value, Arrhenius constants evaluated), ``temperature``
        [K] or None, ``initial`` (species -> conc), ``excess`` (species -> conc).
    """
    if not 0 <= i < plan.n_sets:
        raise UsageError(f"set {i} does not exist", f"sets are 0 .. {plan.n_sets - 1}")
    _, internal = plan.set_values(i, i + 1)
    varied = _SetValues(plan, internal, plan.internal_low(i, i + 1))
    out: dict[str, Any] = {"constants": {}, "temperature": None, "initial": {}, "excess": {}}
    if varied.get("temperature") is not None:
        out["temperature"] = float(varied.get("temperature")[0][0])
    for c in plan.scheme.constants:
        k = _constant_pairs(plan, c, varied)
        if k is not None:
            out["constants"][c] = float(np.asarray(k[0]).reshape(-1)[0])
    for p in [*plan.parameters, *plan.spreads]:
        if p.kind in ("start", "excess"):
            out["initial" if p.kind == "start" else "excess"][p.target] = float(
                varied.get(p.name)[0][0]
            )
    return out


def _pattern(plan: SweepPlan):
    """The scheme's :class:`kinetics.ratematrix.RatePattern` (once per plan)."""
    from .ratematrix import rate_pattern

    return plan.cached("pattern", lambda: rate_pattern(plan.scheme))


def set_matrices(plan: SweepPlan, start: int, stop: int):
    """The exact rate matrices of sets ``start .. stop-1`` and their other inputs.

    Returns
    -------
    K, K_low : ndarray, shape (b, n, n)
        Rate matrices [1/s] as double-double pairs: ``K + K_low`` is the matrix of the
        exact constants of each set (:meth:`kinetics.ratematrix.RatePattern.dense_pair`;
        steps no parameter changes carry :attr:`kinetics.scheme.Scheme.rate_pairs` bit
        for bit).
    c0 : ndarray, shape (b, n)
        Start concentrations [conc].
    feed : ndarray, shape (n,) or None
        Zero-order feed [conc/s].
    """
    _, internal = plan.set_values(start, stop)
    hi, lo, c0, feed = _input_pairs(plan, internal, plan.internal_low(start, stop))
    K, K_low = _pattern(plan).dense_pair(hi, lo)
    return K, K_low, c0, feed


# ---------------------------------------------------------------------------------------
# Evaluating a chunk
# ---------------------------------------------------------------------------------------


@dataclass
class ChunkResult:
    """What one chunk produces.

    Attributes
    ----------
    index : int
        Chunk number.
    start, stop : int
        Sets ``start .. stop-1``.
    parameters : ndarray, shape (b, p + s)
        Parameter values in the units of the columns.
    summary : ndarray, shape (b, q)
        Summary quantities in the units of the columns; NaN where not applicable.
    curves : ndarray, shape (b, m, n) or None
        Concentrations [conc] at the plan's times.
    bound : ndarray, shape (b,) or None
        With the curves: the certified relative error bound of each set's curves, the
        worst over its times (see :func:`kinetics.propagate.propagate_certified`).
    """

    index: int
    start: int
    stop: int
    parameters: np.ndarray
    summary: np.ndarray
    curves: np.ndarray | None = None
    bound: np.ndarray | None = None


#: Curves of a plain-double sweep are recomputed in full precision for the members whose
#: certified bound exceeds this (stiff sets: the double route loses about 1e-16 sigma t).
CURVE_RTOL = 1e-9


def _propagate_batch(K, K_low, c0, times, feed, precision):
    """Curves (b, m, n) [conc] of the exact pairs ``K + K_low`` and the worst certified
    relative bound of each member (b,).

    With ``precision="double"`` the members whose plain-double bound exceeds
    :data:`CURVE_RTOL` (or that overflow in double) are recomputed with ``"auto"``.
    """
    from .propagate import propagate_batch

    if precision != "double":
        conc, bound = propagate_batch(
            K, c0, times, feed, precision=precision, return_bound=True, K_low=K_low
        )
        return conc, bound.max(axis=1, initial=0.0)
    try:
        conc, bound = propagate_batch(
            K, c0, times, feed, precision="double", return_bound=True, K_low=K_low
        )
        worst = bound.max(axis=1, initial=0.0)
    except GrowthError:  # plain double can overflow on very stiff members: decide below
        conc = np.zeros((K.shape[0], np.size(times), K.shape[1]))
        worst = np.full(K.shape[0], np.inf)
    redo = np.flatnonzero(~(worst <= CURVE_RTOL))
    if redo.size:
        conc[redo], again = propagate_batch(
            K[redo], c0[redo], times, feed, precision="auto", return_bound=True, K_low=K_low[redo]
        )
        worst[redo] = again.max(axis=1, initial=0.0)
    return conc, worst


def _reference_summaries(plan: SweepPlan, K, K_low, c0, feed) -> dict[str, np.ndarray]:
    """:func:`kinetics.analysis.summarise` once per set (the definition; slow)."""
    from .analysis import summarise

    b, n = c0.shape
    out = {q: np.full((b, n), np.nan) for q in _QUANTITIES}
    names = plan.scheme.species_names
    t_window = float(plan.times[-1])
    for i in range(b):
        s = summarise(K[i], c0[i], names, feed=feed, t_window=t_window, K_low=K_low[i])
        for j, name in enumerate(names):
            d = s[name]
            for q in _QUANTITIES:
                v = getattr(d, q)
                if v is not None and math.isfinite(v):
                    out[q][i, j] = v
    return out


def chunk_result(
    plan: SweepPlan, start: int, stop: int, curves: bool = False, index: int = -1
) -> ChunkResult:
    """Evaluate sets ``start .. stop-1`` of ``plan`` (one stacked batch).

    Parameters
    ----------
    plan : SweepPlan
    start, stop : int
        Set range.
    curves : bool
        Also return the concentration curves at ``plan.times``.
    index : int
        Chunk number to record in the result.

    Returns
    -------
    ChunkResult

    Notes
    -----
    .. math:: c^{(i)}(t) = e^{tK^{(i)}} c_0^{(i)} + \\int_0^t e^{sK^{(i)}}\\,ds\\, f

    for every set ``i`` at once; the summary quantities are those of
    :func:`kinetics.analysis.summarise` (see :mod:`kinetics.sweep_summary`).  Each member is
    computed independently of the others, so the result does not depend on how the sets
    are split into chunks or which machine runs them.
    """
    display, _ = plan.set_values(start, stop)
    K, K_low, c0, feed = set_matrices(plan, start, stop)
    if plan.summary_method == "reference":
        q = _reference_summaries(plan, K, K_low, c0, feed)
    else:
        from .sweep_summary import summarise_batch

        q = summarise_batch(K, c0, feed, t_window=float(plan.times[-1]), K_low=K_low)
    from .solution import time_factor

    tf = time_factor(plan.time_unit)
    summary = np.empty((stop - start, len(plan.columns)))
    for j, col in enumerate(plan.columns):
        v = q[col.quantity][:, col.index]
        summary[:, j] = v / tf if col.quantity in ("half_life", "t_max") else v
    if not curves:
        return ChunkResult(index, start, stop, display, summary)
    conc, bound = _propagate_batch(K, K_low, c0, plan.times, feed, plan.precision)
    return ChunkResult(index, start, stop, display, summary, conc, bound)


def evaluate_chunk(plan: SweepPlan, k: int, curves: bool = False) -> ChunkResult:
    """Evaluate chunk ``k`` of ``plan`` (see :func:`chunk_result`)."""
    start, stop = plan.chunk_bounds(k)
    return chunk_result(plan, start, stop, curves, index=k)


# ---------------------------------------------------------------------------------------
# Engines
# ---------------------------------------------------------------------------------------


def run_chunks(
    plan: SweepPlan,
    chunks: Sequence[int],
    on_result: Callable[[ChunkResult], None],
    *,
    curves: bool = False,
    engine: str = "local",
    scheduler: str | None = None,
    workers: int | None = None,
    connect_timeout: float = 10.0,
    threads: int | None = None,
) -> None:
    """Evaluate ``chunks`` of ``plan`` and hand each result to ``on_result`` as it completes.

    Parameters
    ----------
    plan : SweepPlan
    chunks : sequence of int
        Chunk numbers to evaluate.
    on_result : callable
        Called once per finished chunk (in completion order) in the calling process; this
        is where results are stored.
    curves : bool
        Keep the concentration curves.
    engine : {"local", "dask"}
        ``local``: in this process (several chunks at once on a thread pool).  ``dask``:
        each chunk is a task on a Dask distributed cluster: the one at ``scheduler``, or a
        local cluster of worker processes started for this run.
    scheduler : str, optional
        Address of a running Dask scheduler (``tcp://host:8786``); only with ``dask``.
    workers : int, optional
        Worker processes of the local cluster (default: the number of CPUs).
    connect_timeout : float
        Seconds to wait for the scheduler at ``scheduler`` [s].
    threads : int, optional
        Local engine: chunks evaluated at the same time by a pool of threads (numpy
        releases the interpreter lock in its array loops); default: the number of CPUs,
        at most the number of chunks.  ``1`` evaluates them one after another.

    Raises
    ------
    kinetics.errors.UsageError
        Unknown engine, ``dask`` not installed, scheduler unreachable.

    Notes
    -----
    Workers of a remote cluster need this package installed in the same version.  Results
    are identical whatever the engine: every chunk is evaluated by the same code on the
    same inputs.
    """
    chunks = list(chunks)
    if engine == "local":
        if scheduler is not None:
            raise UsageError("--scheduler needs --engine dask", "add --engine dask")
        _run_local(plan, chunks, on_result, curves, threads)
        return
    if engine != "dask":
        raise UsageError(f"unknown engine {engine!r}", "use --engine local or --engine dask")
    client, cluster = _dask_client(scheduler, workers, connect_timeout)
    try:
        _run_dask(client, plan, chunks, on_result, curves)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _run_local(
    plan: SweepPlan, chunks: list[int], on_result, curves: bool, threads: int | None
) -> None:
    import os

    n = threads if threads is not None else (os.cpu_count() or 1)
    if isinstance(n, bool) or not isinstance(n, int) or n < 1:
        raise UsageError(f"the number of threads must be a whole number >= 1, not {n!r}", "e.g. 2")
    n = min(n, len(chunks))
    if n <= 1:
        for k in chunks:
            on_result(evaluate_chunk(plan, k, curves))
        return
    from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait

    todo = iter(chunks)
    with ThreadPoolExecutor(max_workers=n, thread_name_prefix="kinetics-sweep") as pool:
        running = set()
        try:
            for k in todo:
                running.add(pool.submit(evaluate_chunk, plan, k, curves))
                if len(running) >= n:
                    done, running = wait(running, return_when=FIRST_COMPLETED)
                    for f in done:
                        on_result(f.result())
            while running:
                done, running = wait(running, return_when=FIRST_COMPLETED)
                for f in done:
                    on_result(f.result())
        except BaseException:
            for f in running:
                f.cancel()
            raise


def _dask_client(scheduler: str | None, workers: int | None, timeout: float = 10.0):
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise UsageError(
            "the dask engine needs the optional dependency dask[distributed]",
            'install it with pip install "stepwise-kinetics[dask]"',
        ) from None
    if scheduler is not None:
        try:
            return Client(scheduler, timeout=f"{timeout}s"), None
        except (OSError, TimeoutError) as exc:
            raise UsageError(
                f"cannot reach the Dask scheduler at {scheduler!r} ({exc})",
                "check the address (e.g. tcp://host:8786) and that the scheduler runs",
            ) from None
    import os

    n = workers or os.cpu_count() or 1
    cluster = LocalCluster(
        n_workers=n, processes=True, threads_per_worker=1, dashboard_address=None
    )
    return Client(cluster), cluster


def _run_dask(client, plan: SweepPlan, chunks: list[int], on_result, curves: bool) -> None:
    from dask.distributed import as_completed

    if not chunks:
        return
    remote_plan = client.scatter(plan, broadcast=True)
    futures = [
        client.submit(
            evaluate_chunk, remote_plan, k, curves, key=f"kinetics-chunk-{k}-{id(plan)}", pure=False
        )
        for k in chunks
    ]
    try:
        for future in as_completed(futures):
            on_result(future.result())
            future.release()
    finally:
        for f in futures:
            f.cancel()


# ---------------------------------------------------------------------------------------
# Tables
# ---------------------------------------------------------------------------------------


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
    from .solution import time_factor

    if result.curves is None:
        raise UsageError("this chunk was evaluated without curves", "pass curves=True")
    parameters = {name: result.parameters[:, j] for j, name in enumerate(plan.parameter_columns)}
    return _long_frame(
        np.arange(result.start, result.stop),
        parameters,
        (f"time [{plan.time_unit}]", plan.times / time_factor(plan.time_unit)),
        plan.scheme.species_names,
        f"concentration [{plan.concentration_unit}]",
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


def curves_array(plan: SweepPlan, results: Sequence[ChunkResult]):
    """The curves of consecutive chunks as one labelled array.

    Parameters
    ----------
    plan : SweepPlan
    results : sequence of ChunkResult
        Chunks evaluated with curves, in set order.

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

    .. math:: c^{(i)}(t) = e^{tK^{(i)}} c_0^{(i)} + \\int_0^t e^{sK^{(i)}}\\,ds\\, f
    """
    import xarray as xr

    from .solution import time_factor

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
    named = [*plan.parameters, *plan.spreads]
    for j, (p, column) in enumerate(zip(named, plan.parameter_columns, strict=True)):
        coords[p.name] = ("set", parameters[:, j], {"units": p.unit, "column": column})
    if all(r.bound is not None for r in results):
        bound = np.concatenate([r.bound for r in results])
        coords["error_bound"] = ("set", bound, {"units": "1", "column": BOUND_COLUMN})
    unit = plan.concentration_unit
    return xr.DataArray(
        values,
        dims=("set", "time", "species"),
        coords=coords,
        name="concentration",
        attrs={"units": unit, "column": f"concentration [{unit}]"},
    )


def curves_long_frame(curves) -> pd.DataFrame:
    """The labelled curves of :func:`curves_array` as a long table (one row per value).

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
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/min\\nstart A = 1 M")
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


def _band_label(column: str, p: float) -> str:
    """``'t_max B [min]'`` and 2.5 -> ``'t_max B p2.5 [min]'``."""
    m = re.match(r"^(.*?)\s*(\[[^\]]*\])$", column)
    tag = f"p{p:g}"
    return f"{m[1]} {tag} {m[2]}" if m else f"{column} {tag}"


def percentile_bands(plan: SweepPlan, summary: pd.DataFrame) -> pd.DataFrame:
    """Percentile bands (2.5/50/97.5) of every summary quantity, one row per grid point.

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
    With the sorted values :math:`x_{(1)} \\le \\dots \\le x_{(N)}` of the samples in
    which the quantity exists,

    .. math:: Q(p) = x_{(\\lfloor h \\rfloor + 1)} + (h - \\lfloor h \\rfloor)
              (x_{(\\lfloor h \\rfloor + 2)} - x_{(\\lfloor h \\rfloor + 1)}), \\qquad
              h = (N - 1)\\, p / 100

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
        raise UsageError("percentile bands need a Monte Carlo plan", "give --samples")
    values = summary[plan.summary_columns].to_numpy(dtype=float)
    if values.shape[0] % n:
        raise UsageError("the sample rows do not cover whole grid points", "internal")
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
        for k, p in enumerate(PERCENTILES):
            data[_band_label(name, p)] = pct[k, :, j]
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

    from .solution import time_factor

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
    label = f"concentration [{plan.concentration_unit}]"
    for k, p in enumerate(PERCENTILES):
        data[_band_label(label, p)] = pct[k].reshape(-1)
    return pd.DataFrame(data)


# ---------------------------------------------------------------------------------------
# The Python API
# ---------------------------------------------------------------------------------------


def _check_memory(plan: SweepPlan, curves: bool) -> None:
    """Refuse a sweep whose results held in memory exceed :data:`MAX_MEMORY_VALUES`."""
    values = plan.n_sets * (len(plan.parameter_columns) + len(plan.columns))
    if curves:
        values = max(values, plan.n_sets * plan.times.size * len(plan.scheme.species))
    if values > MAX_MEMORY_VALUES:
        raise UsageError(
            f"the sweep would hold {values:,} values in memory ({plan.n_sets:,} sets), more "
            f"than {MAX_MEMORY_VALUES:,} (about {8 * MAX_MEMORY_VALUES // 10**6} MB per copy)",
            "sweep fewer sets, or write the table to a file chunk by chunk (the command "
            "kinetics sweep does that with --out)",
        )


def _in_memory(plan: SweepPlan, curves: bool, engine: str, scheduler: str | None):
    _check_memory(plan, curves)
    results: dict[int, ChunkResult] = {}
    run_chunks(
        plan,
        range(plan.n_chunks),
        lambda r: results.__setitem__(r.index, r),
        curves=curves,
        engine=engine,
        scheduler=scheduler,
    )
    return [results[k] for k in range(plan.n_chunks)]


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
        )
    parts = _in_memory(plan, curves, engine, scheduler)
    table = pd.concat([summary_frame(plan, r) for r in parts]) if parts else None
    if not curves:
        return table
    return table, curves_array(plan, parts)


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
    time_unit, chunk_size, precision
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
    )
    parts = _in_memory(plan, False, "local", None)
    table = pd.concat([summary_frame(plan, r) for r in parts])
    return table, percentile_bands(plan, table)
