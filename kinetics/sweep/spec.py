"""What a sweep varies: grid axes (``--vary``) and Monte Carlo spreads (``--spread``).

The names and units come from the one parameter grammar, :mod:`kinetics.parameters`; this
module reads the value specifications (ranges, lists, spreads) and words their messages for
the command line or the Python API (:class:`Words`).
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from .. import parameters
from ..errors import ArgumentTypeError, ParameterSpecError, type_name
from ..parameters import NUMBER, SweepWords, Target
from ..units import parse_unit

if TYPE_CHECKING:
    from ..scheme import Scheme

__all__ = [
    "API_WORDS",
    "CLI_WORDS",
    "GRID_HELP",
    "MAX_AXIS",
    "SPREAD_HELP",
    "VARY_HELP",
    "Parameter",
    "Spread",
    "Words",
    "axes",
    "parse_spread",
    "parse_vary",
    "spreads_of",
]

#: Most values on one grid axis (each is converted with an exact rational unit factor).
MAX_AXIS = 1_000_000

_NUMBER_RE = re.compile(rf"^\s*{NUMBER}\s*$")
VARY_HELP = (
    "write NAME=LO:HI:N[:log][:UNIT] or NAME=V1,V2,V3[:UNIT], e.g. k2=0.01:1:25:log, "
    "temperature=20:80:13:degC, k3.Ea=80:100:5:kJ/mol, start:A=0.1,0.2,0.5, t_p=40:60:5:h"
)
GRID_HELP = (
    "give each parameter a list of numbers in the unit the file uses for it, e.g. "
    "{'k2': [0.02, 0.045, 0.09]}, or a range as text, e.g. {'k2': '0.01:1:25:log'}"
)
SPREAD_HELP = (
    "write NAME=P% (lognormal for rate constants, A, start and excess values and named "
    "quantities above 0) or an absolute standard deviation for temperature, Ea and named "
    "quantities, e.g. k1=15%, temperature=2K, k3.Ea=2kJ/mol, t_p=2h, t_q=10min"
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
    r"""Parse one ``NAME=VALUES`` specification into a grid axis.

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
    kinetics.errors.ParameterSpecError
        One sentence saying what is wrong and how to write it (an unknown name: see
        :func:`kinetics.parameters.resolve`; a value the scheme cannot take: see
        :func:`kinetics.parameters.check_values`).

    Notes
    -----
    .. math::

        x_j = x_{lo} + \frac{j}{N-1}(x_{hi} - x_{lo}) \ \text{(lin)}, \qquad
        x_j = x_{lo} \left(\frac{x_{hi}}{x_{lo}}\right)^{j/(N-1)} \ \text{(log)},
        \qquad j = 0 \ldots N-1

    computed with ``numpy.linspace`` and ``numpy.geomspace`` (end points exact).  Values
    are converted to internal units with exact rational unit factors (one rounding).
    """
    return _parse_vary(scheme, spec, f"{option} {spec!r}", VARY_HELP)


def _parse_vary(scheme: Scheme, spec: str, where: str, help_: str) -> Parameter:
    """:func:`parse_vary` with the place and the hint of its messages given."""
    if "=" not in spec:
        raise ParameterSpecError(f"{where} has no '='", help_)
    name, _, body = spec.partition("=")
    body = body.strip()
    if not name.strip() or not body:
        raise ParameterSpecError(f"{where} needs a name and values", help_)
    target = parameters.resolve(scheme, name, SweepWords(where))
    texts = None
    fields = [f.strip() for f in body.split(":")]
    if len(fields) >= 3 and all(_NUMBER_RE.match(f) for f in fields[:3]) and "," not in body:
        values, unit, spacing = _range_values(fields, where, help_)
    else:
        values, unit, texts = _listed_values(fields, where, help_)
        spacing = "list"
    return _parameter(target, values, unit or target.unit, spacing, where, help_, texts)


def _range_values(fields: list[str], where: str, help_: str) -> tuple[np.ndarray, str, str]:
    """The values of a range ``LO:HI:N[:log][:UNIT]``, its unit as written and its spacing."""
    lo, hi = float(fields[0]), float(fields[1])
    count = _range_count(fields, where, help_)
    spacing, unit = _range_options(fields[3:], where, help_)
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise ParameterSpecError(f"{where}: the range ends must be finite numbers", help_)
    if count == 1 and lo != hi:
        raise ParameterSpecError(
            f"{where}: a range from {lo:g} to {hi:g} needs at least 2 values", help_
        )
    if spacing == "log":
        if lo <= 0 or hi <= 0:
            raise ParameterSpecError(
                f"{where}: log spacing needs positive ends", "use linear spacing or LO > 0"
            )
        values = np.geomspace(lo, hi, count) if count > 1 else np.array([lo])
    else:
        values = np.linspace(lo, hi, count) if count > 1 else np.array([lo])
    return values, unit, spacing


def _range_count(fields: list[str], where: str, help_: str) -> int:
    """The number of values ``N``, the third field of a range: a whole number, 1 to MAX_AXIS."""
    try:
        count = int(fields[2])
    except ValueError:
        raise ParameterSpecError(
            f"{where}: the number of values {fields[2]!r} is not a whole number", help_
        ) from None
    if count < 1 or str(count) != fields[2].lstrip("+"):
        raise ParameterSpecError(
            f"{where}: the number of values must be a whole number >= 1, not {fields[2]!r}",
            help_,
        )
    if count > MAX_AXIS:
        raise ParameterSpecError(
            f"{where}: {count:,} values on one axis are too many (at most {MAX_AXIS:,})",
            "use fewer values",
        )
    return count


def _range_options(extras: list[str], where: str, help_: str) -> tuple[str, str]:
    """The spacing (``lin`` or ``log``) and the unit written after ``LO:HI:N``."""
    unit = ""
    spacing = "lin"
    for extra in extras:
        if extra.lower() in ("log", "lin", "linear"):
            spacing = "log" if extra.lower() == "log" else "lin"
        elif extra and not unit:
            unit = extra
        else:
            raise ParameterSpecError(f"{where}: unexpected field {extra!r}", help_)
    return spacing, unit


def _listed_values(fields: list[str], where: str, help_: str) -> tuple[np.ndarray, str, list[str]]:
    """The values of a list ``V1,V2,V3[:UNIT]`` (or with the unit after a space), as written."""
    head, *rest = fields
    if len(rest) > 1:
        raise ParameterSpecError(f"{where} is neither a range LO:HI:N nor a list", help_)
    numbers, spaced_unit = _split_unit(head)
    unit = rest[0] if rest else spaced_unit
    if rest and spaced_unit:
        raise ParameterSpecError(f"{where} gives two units", help_)
    items = [x for x in numbers.split(",")]
    if any(not _NUMBER_RE.match(x) for x in items):
        bad = next(x for x in items if not _NUMBER_RE.match(x))
        raise ParameterSpecError(f"{where}: {bad!r} is not a number", help_)
    values = np.array([float(x) for x in items])
    return values, unit, items


def _check_range(target: Target, values: np.ndarray, texts: list[str], where: str) -> None:
    """Values that are not finite: written beyond the range of doubles (``1e400``), or nan."""
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        k = bad[0]
        what = "not a number" if np.isnan(values[k]) else "beyond the range of numbers (1.8e308)"
        raise parameters.value_error(target)(
            f"{where}: {texts[k].strip()} is {what}",
            "give finite values within the working range (README, Limits of the method)",
        )


def _parameter(
    target: Target, values, unit: str, spacing: str, where: str, help_: str, texts=None
) -> Parameter:
    """A grid axis from values in ``unit`` (checked and converted to internal units)."""
    _check_range(target, values, texts or [repr(float(v)) for v in values], where)
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
        parameters.column_header(target.label, unit),
        low,
    )


def _grid_axis(scheme: Scheme, name, value) -> Parameter:
    """One entry ``name: value`` of an API grid mapping (numbers in the file's unit or text)."""
    if not isinstance(name, str):
        raise ArgumentTypeError(
            f"a grid name must be text such as 'k2', not {type_name(name)}", GRID_HELP
        )
    if isinstance(value, str):
        return _parse_vary(scheme, f"{name}={value}", f"grid[{name!r}] = {value!r}", GRID_HELP)
    where = f"grid[{name!r}]"
    target = parameters.resolve(scheme, name, SweepWords(where))
    if value is None or isinstance(value, Mapping | bytes):
        raise ArgumentTypeError(
            f"{where} must be a list of numbers, not {type_name(value)}", GRID_HELP
        )
    items = np.atleast_1d(np.asarray(value, dtype=object))
    if items.ndim != 1:
        raise ParameterSpecError(
            f"{where} must be a flat list of values, not an array of shape {items.shape}",
            GRID_HELP,
        )
    if items.size == 0:
        raise ParameterSpecError(f"{where} has no values", GRID_HELP)
    if items.size > MAX_AXIS:
        raise ParameterSpecError(
            f"{where}: {items.size:,} values on one axis are too many (at most {MAX_AXIS:,})",
            "use fewer values",
        )
    values = np.empty(items.size)
    for j, x in enumerate(items):
        if isinstance(x, bool) or not isinstance(x, int | float | np.integer | np.floating):
            raise ParameterSpecError(f"{where}: {x!r} is not a number", GRID_HELP)
        values[j] = float(x)
    return _parameter(target, values, target.unit, "list", where, GRID_HELP)


# ---------------------------------------------------------------------------------------
# --spread
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Spread:
    r"""The distribution of one Monte Carlo parameter.

    Attributes
    ----------
    name, kind, target : str
        As for :class:`Parameter`.
    unit : str
        Unit of the sampled values in the result table (the file's unit).
    distribution : str
        ``lognormal`` (:math:`x = x_0 (1+s)^z`) or ``normal`` (:math:`x = x_0 + \sigma z`).
    sigma : float
        Lognormal: :math:`\ln(1+s)`; normal: :math:`\sigma` in internal units
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
        """What the spread varies (name, kind, target, the file's unit and value)."""
        return Target(self.name, self.kind, self.target, self.unit, nominal=self.nominal)

    def describe(self) -> dict[str, Any]:
        """JSON-ready definition (used in the definition hash and the manifest)."""
        return {
            "name": self.name,
            "distribution": self.distribution,
            "sigma": float(self.sigma).hex(),
            "relative": self.relative,
        }


def parse_spread(scheme: Scheme, spec: str, option: str = "--spread") -> Spread:
    r"""Parse one ``NAME=SPREAD`` Monte Carlo specification.

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
    kinetics.errors.ParameterSpecError

    Notes
    -----
    .. math::

        \text{lognormal: } \ln x \sim N(\ln x_0, \ln^2(1+s)); \qquad
        \text{normal: } x \sim N(x_0, \sigma^2)

    A temperature standard deviation in degC (or degF) is a temperature *difference*
    (1 degC = 1 K).
    """
    return _parse_spread(scheme, spec, f"{option} {spec!r}")


def _parse_spread(scheme: Scheme, spec: str, where: str) -> Spread:
    """:func:`parse_spread` with the place of its messages given."""
    if not isinstance(spec, str):
        raise ArgumentTypeError(
            f"a spread must be text such as 'k1=15%', not {type_name(spec)}", SPREAD_HELP
        )
    if "=" not in spec:
        raise ParameterSpecError(f"{where} has no '='", SPREAD_HELP)
    name, _, body = spec.partition("=")
    body = body.strip()
    if not name.strip() or not body:
        raise ParameterSpecError(f"{where} needs a name and a spread", SPREAD_HELP)
    target = parameters.resolve(scheme, name, SweepWords(where))
    # a named quantity may be spread either way (t_p=10% lognormal, dS=5J/(mol K) normal)
    normal = target.kind in ("temperature", "energy", "quantity", "operation")
    m = re.match(rf"^({NUMBER})\s*%$", body)
    if m:
        distribution, sigma, relative = _relative_spread(target, float(m[1]), where)
    elif not normal:
        raise ParameterSpecError(
            f"{where}: the spread of {target.name} must be a percentage (lognormal)",
            f"write e.g. {target.name}=15%",
        )
    else:
        distribution, sigma, relative = "normal", _absolute_spread(target, body, where), False
    column = target.column
    return Spread(
        target.name,
        target.kind,
        target.target,
        target.unit,
        distribution,
        sigma,
        relative,
        target.nominal,
        column,
        spec,
    )


def _relative_spread(target: Target, pct: float, where: str) -> tuple[str, float, bool]:
    """``k1=15%``: lognormal ln(1 + s); temperature and Ea: normal, a fraction of the value."""
    if not (math.isfinite(pct) and pct > 0):
        raise ParameterSpecError(f"{where}: the spread must be a positive percentage", SPREAD_HELP)
    s = pct / 100.0
    if target.kind not in ("temperature", "energy") and target.log:
        return "lognormal", math.log1p(s), False
    if s >= 0.25:
        raise ParameterSpecError(f"{where}: a spread of {pct:g} % is too wide", "use below 25 %")
    return "normal", s, True


#: Kelvin per degree of a temperature *difference* (1 degC = 1 K, 1 degF = 5/9 K).
_KELVIN_PER_DEGREE = {
    "K": 1.0,
    "kelvin": 1.0,
    "degC": 1.0,
    "°C": 1.0,
    "celsius": 1.0,
    "degF": 5.0 / 9.0,
    "°F": 5.0 / 9.0,
}


def _absolute_spread(target: Target, body: str, where: str) -> float:
    """``temperature=2K``, ``k3.Ea=2kJ/mol``: the standard deviation in internal units."""
    m = re.match(rf"^({NUMBER})\s*(?P<unit>.*?)\s*$", body)
    if not m:
        raise ParameterSpecError(f"{where}: {body!r} is not a number with a unit", SPREAD_HELP)
    value = float(m[1])
    unit = m["unit"] or target.unit
    if not (math.isfinite(value) and value > 0):
        raise ParameterSpecError(f"{where}: the standard deviation must be positive", SPREAD_HELP)
    if target.kind != "temperature":
        parameters.check_unit(target, unit, where, VARY_HELP)
        return float(Fraction(value) * parse_unit(unit).factor)
    if unit not in _KELVIN_PER_DEGREE:
        # the type and wording of kinetics.parameters.check_unit for a temperature
        raise parameters.value_error(target)(
            f"{where}: {unit!r} is not a temperature unit", "use K or degC"
        )
    sigma = value * _KELVIN_PER_DEGREE[unit]
    if sigma >= 0.25 * target.nominal:
        raise ParameterSpecError(
            f"{where}: a standard deviation of {value:g} {unit} is too wide",
            "it would give temperatures near or below 0 K",
        )
    return sigma


@dataclass(frozen=True)
class Words:
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
        """Where a message points: the option and the text given to it."""
        return f"{option} {spec!r}"


CLI_WORDS = Words(
    "--vary",
    "--spread",
    "--samples",
    "--seed",
    "give each parameter once, in either --vary or --spread",
    "e.g. --samples 1000 --spread k1=15%",
    VARY_HELP,
    "--spread needs --samples",
    "--samples needs at least one --spread",
)
API_WORDS = Words(
    "grid entry",
    "spread entry",
    "samples",
    "seed",
    "give each parameter once, in either the grid or the spread",
    "e.g. monte_carlo(scheme, ['k1=15%'], 1000, times)",
    GRID_HELP,
    "a spread needs samples > 0",
    "samples need at least one spread",
)


def axes(scheme: Scheme, vary, words: Words) -> tuple[Parameter, ...]:
    """Grid axes from texts, a mapping (API) or ready parameters."""
    if isinstance(vary, Mapping):
        return tuple(_grid_axis(scheme, k, v) for k, v in vary.items())
    if isinstance(vary, str):
        vary = [vary]
    if not isinstance(vary, Iterable):
        raise ArgumentTypeError(
            f"the grid must be a mapping or a list of texts, not {type_name(vary)}",
            GRID_HELP,
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
                GRID_HELP,
            )
    return tuple(out)


def spreads_of(scheme: Scheme, spread, words: Words) -> tuple[Spread, ...]:
    """Monte Carlo spreads from texts (``k1=15%``) or ready :class:`Spread` objects."""
    if isinstance(spread, str):
        spread = [spread]
    if spread is None or not isinstance(spread, Iterable):
        raise ArgumentTypeError(
            f"the spread must be a list of texts such as 'k1=15%', not {type_name(spread)}",
            SPREAD_HELP,
        )
    return tuple(
        s if isinstance(s, Spread) else _parse_spread(scheme, s, words.place(words.spread, s))
        for s in spread
    )
