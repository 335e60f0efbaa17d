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

import difflib
import hashlib
import json
import math
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import ArgumentTypeError, GrowthError, UsageError, type_name
from .units import GAS_CONSTANT, convert, parse_unit, temperature_to_kelvin

if TYPE_CHECKING:
    import pandas as pd

    from .scheme import Scheme

__all__ = [
    "DEFAULT_CHUNK",
    "PERCENTILES",
    "ChunkResult",
    "Column",
    "Parameter",
    "Spread",
    "SweepPlan",
    "chunk_result",
    "curve_bands",
    "curves_frame",
    "evaluate_chunk",
    "make_plan",
    "monte_carlo",
    "parse_spread",
    "parse_vary",
    "percentile_bands",
    "run_chunks",
    "set_inputs",
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
_VERSION = 1  # of the chunk layout and the definition hash

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_NUMBER_RE = re.compile(rf"^\s*{_NUMBER}\s*$")
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
_ENERGY_DIMS = {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1}


# ---------------------------------------------------------------------------------------
# Parameters: what a name refers to
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Target:
    """What a parameter name refers to, with the unit the file uses for it."""

    name: str  # as typed, canonical: "k2", "k3.A", "k3.Ea", "temperature", "start:A"
    kind: str  # constant | prefactor | energy | temperature | start | excess
    target: str  # constant or species name ("" for temperature)
    unit: str  # the file's unit for it
    nominal: float  # the file's value in internal units (see _to_internal)
    label: str  # column name stem


def _file_temperature_unit(scheme: Scheme) -> str:
    """The unit written on the ``temperature`` line of the scheme (``K`` if none)."""
    for raw in scheme.text.splitlines():
        code = raw.split("#", 1)[0]
        m = re.match(rf"^\s*temperature\s*=\s*({_NUMBER})\s*(?P<unit>.*?)\s*$", code)
        if m:
            return m["unit"] or "K"
    return "K"


def _energy_unit(text: str) -> str:
    m = re.match(rf"^\s*{_NUMBER}\s*(?P<unit>.*?)\s*$", text)
    return m["unit"] if m and m["unit"] else "J/mol"


def _suggest(name: str, known: Iterable[str]) -> str:
    close = difflib.get_close_matches(name, list(known), n=1)
    return f"did you mean {close[0]!r}? " if close else ""


def _resolve(scheme: Scheme, name: str, where: str) -> _Target:
    """Map a parameter name to what it changes in the scheme, or raise UsageError.

    ``where`` names the place of the name in messages (``--vary 'k2=...'``, ``grid['k2']``).
    """
    name = name.strip()
    constants = scheme.constants
    arrhenius = [c for c, d in constants.items() if d.arrhenius is not None]
    if name in ("temperature", "T"):
        if not arrhenius:
            raise UsageError(
                f"{where}: the scheme has no Arrhenius constant, so the temperature changes "
                "nothing",
                "define a constant as k = arrhenius(A = ..., Ea = ...) to sweep temperatures",
            )
        unit = _file_temperature_unit(scheme)
        return _Target("temperature", "temperature", "", unit, scheme.temperature, "temperature")
    m = re.match(r"^(start|excess)\s*[:\s]\s*(?P<species>\S+)$", name)
    if m:
        kind, species = m[1], m["species"]
        known = scheme.species_names if kind == "start" else [s.name for s in scheme.excess_species]
        if species not in known:
            if kind == "start" and species in scheme.excess:
                hint = f"{species} is held in excess: vary excess:{species}"
            elif kind == "excess" and not known:
                hint = "the scheme declares no species in excess"
            else:
                hint = _suggest(species, known) + "the species are " + ", ".join(known)
            what = "a species of the scheme" if kind == "start" else "a species held in excess"
            raise UsageError(f"{where}: {species!r} is not {what}", hint)
        table = scheme.initial if kind == "start" else scheme.excess
        return _Target(
            f"{kind}:{species}",
            kind,
            species,
            scheme.concentration_unit,
            float(table.get(species, 0.0)),
            f"{kind} {species}",
        )
    m = re.match(r"^(?P<constant>[^\W\d_][\w']*)\.(?P<part>A|Ea)$", name)
    if m:
        c, part = m["constant"], m["part"]
        if c not in constants:
            raise UsageError(
                f"{where}: the scheme has no rate constant {c!r}",
                _suggest(c, constants) + "the constants are " + ", ".join(constants),
            )
        d = constants[c]
        if d.arrhenius is None:
            raise UsageError(
                f"{where}: {c} is given as a number, not by the Arrhenius law, so it has no {part}",
                f"vary {c} itself, e.g. {c}=0.1:1:10:log",
            )
        if part == "A":
            return _Target(
                f"{c}.A", "prefactor", c, d.unit, float(d.arrhenius.prefactor_si), f"{c}.A"
            )
        unit = _energy_unit(d.arrhenius.energy_text)
        return _Target(
            f"{c}.Ea", "energy", c, unit, float(d.arrhenius.activation_energy), f"{c}.Ea"
        )
    if name in constants:
        d = constants[name]
        if d.arrhenius is not None:
            raise UsageError(
                f"{where}: {name} follows the Arrhenius law",
                f"vary {name}.A, {name}.Ea or temperature instead",
            )
        return _Target(name, "constant", name, d.unit, float(d.value_si), name)
    known = [*constants, "temperature", "start:<species>", "excess:<species>"]
    raise UsageError(
        f"{where}: {name!r} is not a rate constant or parameter of the scheme",
        _suggest(name, constants) + "parameters are " + ", ".join(known),
    )


def _check_unit(target: _Target, unit: str, where: str, hint: str = _VARY_HELP) -> None:
    """The unit must have the dimension of the file's unit for that quantity."""
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise UsageError(f"{where}: {unit!r} is not a unit", hint) from None
    if target.kind == "temperature":
        if spec.dims != {"[temperature]": 1}:
            raise UsageError(f"{where}: {unit!r} is not a temperature unit", "use K or degC")
        return
    if target.kind == "energy":
        if spec.dims != _ENERGY_DIMS:
            raise UsageError(
                f"{where}: {unit!r} is not a molar energy", "write Ea in kJ/mol or J/mol"
            )
        return
    ref = parse_unit(target.unit)
    if spec.dimensions != ref.dimensions:
        raise UsageError(
            f"{where}: {unit!r} does not have the dimension of {target.unit!r}, the unit of "
            f"{target.name} in the file",
            f"write the values in {target.unit} or leave out the unit",
        )


def _to_internal(target: _Target, values: np.ndarray, unit: str) -> np.ndarray:
    """Values in ``unit`` -> internal units.

    Constants and prefactors: SI base units (1/s for first order); energies: J/mol;
    temperatures: K; start and excess values: the scheme's concentration unit.  Each
    conversion rounds once (exact rational factors).
    """
    if target.kind == "temperature":
        return np.array([temperature_to_kelvin(float(v), unit) for v in values])
    if target.kind in ("start", "excess"):
        return np.array([convert(float(v), unit, target.unit) for v in values])
    factor = parse_unit(unit).factor
    return np.array([float(Fraction(float(v)) * factor) for v in values])


def _check_values(
    target: _Target, internal: np.ndarray, where: str, hint: str = _VARY_HELP
) -> None:
    if not np.all(np.isfinite(internal)):
        raise UsageError(f"{where}: a value is not a finite number", hint)
    if target.kind == "temperature" and np.any(internal <= 0):
        raise UsageError(f"{where}: a temperature is at or below absolute zero", "check the unit")
    if target.kind in ("constant", "prefactor", "start", "excess") and np.any(internal < 0):
        what = {"start": "a start concentration", "excess": "an excess concentration"}.get(
            target.kind, "a rate constant"
        )
        raise UsageError(f"{where}: {what} is negative", "give values >= 0")


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
    """

    name: str
    kind: str
    target: str
    unit: str
    values: np.ndarray
    internal: np.ndarray
    spacing: str
    column: str

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
    target = _resolve(scheme, name, where)
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
    target: _Target, values, unit: str, spacing: str, where: str, help_: str, texts=None
) -> Parameter:
    """A grid axis from values in ``unit`` (checked and converted to internal units)."""
    _check_range(values, texts or [repr(float(v)) for v in values], where)
    _check_unit(target, unit, where, help_)
    internal = _to_internal(target, values, unit)
    _check_values(target, internal, where, help_)
    return Parameter(
        target.name,
        target.kind,
        target.target,
        unit,
        values,
        internal,
        spacing,
        f"{target.label} [{unit}]",
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
    target = _resolve(scheme, name, where)
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
    target = _resolve(scheme, name, where)
    normal = target.kind in ("temperature", "energy")
    column = f"{target.label} [{target.unit}]"
    m = re.match(rf"^({_NUMBER})\s*%$", body)
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
    m = re.match(rf"^({_NUMBER})\s*(?P<unit>.*?)\s*$", body)
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
        _check_unit(target, unit, where)
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

    # -- parameter values of a range of sets -------------------------------------------
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
                display[:, j] = _from_internal(self.scheme, s, x)
        return display, internal


def _from_internal(scheme: Scheme, s: Spread, x: np.ndarray) -> np.ndarray:
    """Internal values -> the file's unit (for the sampled-parameter columns)."""
    if s.kind in ("start", "excess"):
        return x
    if s.kind == "temperature":
        unit = s.unit
        if unit in ("K", "kelvin"):
            return x
        offset = temperature_to_kelvin(0.0, unit)
        scale = temperature_to_kelvin(1.0, unit) - offset
        return (x - offset) / scale
    return x / float(parse_unit(s.unit).factor)


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


def _inputs(plan: SweepPlan, internal: np.ndarray):
    """Step rates (b, n_steps) [1/s], start (b, n) [conc] and feed (n,) [conc/s] or None.

    .. math:: k_\\mathrm{eff} = k \\prod_j [W_j]^{\\nu_j}, \\qquad
              k = A \\exp(-E_a/(R T)) \\text{ for Arrhenius constants}
    """
    scheme = plan.scheme
    b = internal.shape[0]
    named = list(plan.parameters) + list(plan.spreads)
    col = {p.name: j for j, p in enumerate(named)}

    def value(name: str):
        j = col.get(name)
        return None if j is None else internal[:, j]

    temperature = value("temperature")
    base = np.asarray(scheme.rates, dtype=float)
    rates = np.broadcast_to(base, (b, base.size)).copy()
    for s, step in enumerate(scheme.steps):
        c = step.constant
        d = scheme.constants[c]
        k = None
        if d.arrhenius is not None:
            a, ea = value(f"{c}.A"), value(f"{c}.Ea")
            if a is not None or ea is not None or temperature is not None:
                a = float(d.arrhenius.prefactor_si) if a is None else a
                ea = d.arrhenius.activation_energy if ea is None else ea
                tk = scheme.temperature if temperature is None else temperature
                k = a * np.exp(-ea / (GAS_CONSTANT * tk))  # Arrhenius equation
        else:
            k = value(c)
        varied_excess = [value(f"excess:{w}") is not None for _, w in step.co_reactants]
        if k is None and not any(varied_excess):
            continue  # the file's own rate, bit for bit
        if k is None:
            k = scheme.constants[c].si_value(scheme.temperature)
        factor = np.ones(b)
        for nu, w in step.co_reactants:
            wv = value(f"excess:{w}")
            if wv is None:
                fnu = Fraction(nu)
                w_si = scheme._excess_si[w]
                fixed = float(w_si ** int(fnu)) if fnu.denominator == 1 else float(w_si) ** nu
                factor = factor * fixed
            else:
                factor = factor * (wv * float(scheme._unit_factor)) ** float(nu)
        rates[:, s] = k * factor if step.co_reactants else k
    c0 = np.broadcast_to(scheme.initial_vector, (b, len(scheme.species))).copy()
    for p in named:
        if p.kind == "start":
            c0[:, scheme.index[p.target]] = internal[:, col[p.name]]
    feed = scheme.feed_vector if scheme.feed else None
    return rates, c0, feed


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
    row = internal[0]
    named = list(plan.parameters) + list(plan.spreads)
    scheme = plan.scheme
    out: dict[str, Any] = {"constants": {}, "temperature": None, "initial": {}, "excess": {}}
    by = {p.name: float(row[j]) for j, p in enumerate(named)}
    if "temperature" in by:
        out["temperature"] = by["temperature"]
    for c, d in scheme.constants.items():
        if d.arrhenius is not None:
            a, ea = by.get(f"{c}.A"), by.get(f"{c}.Ea")
            if a is None and ea is None and "temperature" not in by:
                continue
            a = float(d.arrhenius.prefactor_si) if a is None else a
            ea = d.arrhenius.activation_energy if ea is None else ea
            t = by.get("temperature", scheme.temperature)
            out["constants"][c] = a * math.exp(-ea / (GAS_CONSTANT * t))  # Arrhenius equation
        elif c in by:
            out["constants"][c] = by[c]
    for p in named:
        if p.kind == "start":
            out["initial"][p.target] = by[p.name]
        elif p.kind == "excess":
            out["excess"][p.target] = by[p.name]
    return out


def _dense_batch(plan: SweepPlan, rates: np.ndarray) -> np.ndarray:
    """Stack of dense rate matrices (b, n, n) [1/s] from step rates (b, n_steps).

    Entries are accumulated in the order of :class:`kinetics.ratematrix.RatePattern`, so a
    member equals ``rate_pattern(scheme).dense(rates[i])`` bit for bit.
    """
    pattern = plan._cache.get("pattern")
    if pattern is None:
        from .ratematrix import rate_pattern

        pattern = rate_pattern(plan.scheme)
        plan._cache["pattern"] = pattern
    n = pattern.n
    b = rates.shape[0]
    flat = np.zeros((b, n * n))
    linear = pattern.rows * n + pattern.cols
    for e in range(linear.size):
        flat[:, linear[e]] += pattern.coefficients[e] * rates[:, pattern.steps[e]]
    return flat.reshape(b, n, n)


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
    """

    index: int
    start: int
    stop: int
    parameters: np.ndarray
    summary: np.ndarray
    curves: np.ndarray | None = None


#: Curves of a plain-double sweep are recomputed in full precision for the members whose
#: certified bound exceeds this (stiff sets: the double route loses about 1e-16 sigma t).
CURVE_RTOL = 1e-9


def _propagate_batch(K, c0, times, feed, precision):
    from .propagate import propagate_batch

    if precision != "double":
        return propagate_batch(K, c0, times, feed, precision=precision)
    try:
        conc, bound = propagate_batch(K, c0, times, feed, precision="double", return_bound=True)
    except GrowthError:  # plain double can overflow on very stiff members: decide below
        conc, bound = np.zeros((K.shape[0], np.size(times), K.shape[1])), None
    redo = (
        np.arange(K.shape[0])
        if bound is None
        else np.flatnonzero(~(bound.max(axis=1, initial=0.0) <= CURVE_RTOL))
    )
    if redo.size:
        conc[redo] = propagate_batch(K[redo], c0[redo], times, feed, precision="auto")
    return conc


def _reference_summaries(plan: SweepPlan, K, c0, feed) -> dict[str, np.ndarray]:
    """:func:`kinetics.analysis.summarise` once per set (the definition; slow)."""
    from .analysis import summarise

    b, n = c0.shape
    out = {q: np.full((b, n), np.nan) for q in _QUANTITIES}
    names = plan.scheme.species_names
    for i in range(b):
        s = summarise(K[i], c0[i], names, feed=feed, t_window=float(plan.times[-1]))
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
    display, internal = plan.set_values(start, stop)
    rates, c0, feed = _inputs(plan, internal)
    K = _dense_batch(plan, rates)
    if plan.summary_method == "reference":
        q = _reference_summaries(plan, K, c0, feed)
    else:
        from .sweep_summary import summarise_batch

        q = summarise_batch(K, c0, feed, t_window=float(plan.times[-1]))
    from .solution import time_factor

    tf = time_factor(plan.time_unit)
    summary = np.empty((stop - start, len(plan.columns)))
    for j, col in enumerate(plan.columns):
        v = q[col.quantity][:, col.index]
        summary[:, j] = v / tf if col.quantity in ("half_life", "t_max") else v
    conc = _propagate_batch(K, c0, plan.times, feed, plan.precision) if curves else None
    return ChunkResult(index, start, stop, display, summary, conc)


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
    """The summary rows of one chunk: parameter columns, then ``<quantity> <species> [unit]``."""
    import pandas as pd

    data = {}
    for j, name in enumerate(plan.parameter_columns):
        data[name] = result.parameters[:, j]
    for j, name in enumerate(plan.summary_columns):
        data[name] = result.summary[:, j]
    return pd.DataFrame(data, index=pd.RangeIndex(result.start, result.stop))


def curves_frame(plan: SweepPlan, result: ChunkResult) -> pd.DataFrame:
    """Every curve of one chunk in long format.

    Columns: ``set`` (row number of the summary table), the parameter columns,
    ``time [unit]``, ``species``, ``concentration [unit]``.
    """
    import pandas as pd

    from .solution import time_factor

    if result.curves is None:
        raise UsageError("this chunk was evaluated without curves", "pass curves=True")
    b, m, n = result.curves.shape
    names = plan.scheme.species_names
    data: dict[str, Any] = {"set": np.repeat(np.arange(result.start, result.stop), m * n)}
    for j, name in enumerate(plan.parameter_columns):
        data[name] = np.repeat(result.parameters[:, j], m * n)
    tf = time_factor(plan.time_unit)
    data[f"time [{plan.time_unit}]"] = np.tile(np.repeat(plan.times / tf, n), b)
    data["species"] = pd.Categorical.from_codes(np.tile(np.arange(n), b * m), names)
    data[f"concentration [{plan.concentration_unit}]"] = result.curves.reshape(-1)
    return pd.DataFrame(data)


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
        Also return every curve in long format (see :func:`curves_frame`).
    chunk_size : int
        Sets per stacked batch.
    precision : {"double", "auto", "double-double"}
        Propagation engine precision.
    engine : {"local", "dask"}
    scheduler : str, optional
        Dask scheduler address.

    Returns
    -------
    pandas.DataFrame or (pandas.DataFrame, pandas.DataFrame)
        The summary table: one column per varied parameter (``k2 [1/min]``), then
        ``half_life A [min]``, ``t_max B [min]``, ``c_max B [mol/L]``, ``limit C [mol/L]``;
        NaN where a quantity does not apply.  With ``curves=True`` also the curves.

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
    return table, pd.concat([curves_frame(plan, r) for r in parts], ignore_index=True)


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
