"""The settings an optimisation may change and what they do to the scheme.

A *setting* is one input with its bounds (``--over NAME=LO:HI:UNIT``):

``time``
    The end time (the quench), with ``--at-end``.
``temperature`` (also ``T``)
    The temperature of the scheme (every temperature law follows it).
a named quantity (``t_p``, ``Ea1``)
    A quantity of the file (``name = expression``); the constants defined from it follow.
a rate constant written as a value (``k2``)
    Through the one parameter grammar (:mod:`kinetics.parameters`), as a sweep names it.
``k1.A``, ``k1.Ea``
    The prefactor or the activation energy of a constant that follows the Arrhenius law
    (the law stays a law: the constant follows the temperature too).
``start:A``, ``excess:W``
    A start concentration or the concentration of a co-reactant held in excess.

Values are read in the unit given (or the file's unit for the quantity), converted with
exact rational unit factors (:mod:`kinetics.units`) and kept in *internal units*: seconds,
kelvin, SI base units for named quantities, constants and Arrhenius parts, the scheme's
concentration unit for start and excess values.  :func:`apply` makes the scheme of a set
of values with :func:`kinetics.parameters.scheme_with` (through
:meth:`kinetics.scheme.Scheme.with_values`), so that every derived constant, start activity
and percentage threshold follows exactly as it does anywhere else.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from .. import parameters
from ..errors import ArgumentValueError, SettingError, TimesError
from ..parameters import NUMBER, SweepWords
from ..units import describe_dimension, parse_unit, temperature_to_kelvin
from .words import API_WORDS, Words

if TYPE_CHECKING:
    from ..scheme import Scheme

__all__ = ["OVER_HELP", "SETTING_KINDS", "Setting", "apply", "parse_over"]

#: What a setting can be.
SETTING_KINDS = ("time", "temperature", "quantity", "start", "excess", "prefactor", "energy")
OVER_HELP = (
    "write NAME=LO:HI:UNIT, e.g. temperature=20:80:degC, time=0:10:h, t_p=40:60:h, "
    "start:A=0.5:2:mol/L"
)
_RANGE = re.compile(rf"^\s*({NUMBER})\s*:\s*({NUMBER})\s*(?::\s*(?P<unit>.+?))?\s*$")


@dataclass(frozen=True)
class Setting:
    """One thing an optimisation changes, with its bounds.

    Attributes
    ----------
    name : str
        ``time``, ``temperature``, a named quantity, a constant, ``k1.A``, ``k1.Ea``,
        ``start:A``, ``excess:W``.
    kind : str
        One of :data:`SETTING_KINDS` (a constant counts as a ``quantity``; ``prefactor``
        and ``energy`` are the parts of an Arrhenius constant).
    target : str
        The quantity, constant or species it changes (empty for time and temperature).
    unit : str
        The unit of :attr:`low` and :attr:`high` and of the reported values.
    low, high : float
        The bounds in :attr:`unit`.
    lo_internal, hi_internal : float
        The bounds in internal units (s, K, SI, the scheme's concentration unit).
    """

    name: str
    kind: str
    target: str
    unit: str
    low: float
    high: float
    lo_internal: float
    hi_internal: float

    def shown(self, internal):
        """Internal values -> :attr:`unit` (arrays give arrays)."""
        x = np.asarray(internal, dtype=float)
        if self.kind == "temperature" or (self.kind == "quantity" and _is_temperature(self)):
            offset = temperature_to_kelvin(0.0, self.unit)
            scale = temperature_to_kelvin(1.0, self.unit) - offset
            out = (x - offset) / scale
        else:
            out = x / float(self._factor())
        return float(out) if out.ndim == 0 else out

    def _factor(self) -> Fraction:
        if self.kind in ("start", "excess"):
            return Fraction(1)  # the unit is the scheme's own
        return parse_unit(self.unit).factor

    @property
    def label(self) -> str:
        """Axis label and column stem: ``temperature [degC]``."""
        return f"{self.name} [{self.unit}]" if self.unit else self.name


def _is_temperature(setting: Setting) -> bool:
    return parse_unit(setting.unit).dims == {"[temperature]": 1}


class _OverWords(SweepWords):
    """The messages of :func:`kinetics.parameters.resolve` for an optimisation."""

    def __init__(self, where: str, scheme: Scheme, words: Words) -> None:
        super().__init__(where)
        self.quantities = list(scheme.quantities)
        self.units = {name: d.unit for name, d in scheme.constants.items()}
        self.words = words

    def unknown(self, scheme: Scheme, name: str) -> SettingError:
        known = [*self.quantities, *scheme.constants]
        listed = ["time", "temperature", *known, "start:<species>", "excess:<species>"]
        return SettingError(
            f"{self.where}: {name!r} is not a setting of the scheme",
            self._did_you_mean(name, known) + "settings are " + ", ".join(listed),
        )

    def temperature_unused(self) -> SettingError:
        return SettingError(
            f"{self.where}: no constant of the scheme follows the temperature, so it "
            "changes nothing",
            "define a constant by a temperature law, e.g. k = arrhenius(A = ..., Ea = ...), "
            "to optimise the temperature",
        )

    def whole_arrhenius(self, name: str) -> SettingError:
        return SettingError(
            f"{self.where}: {name} follows the Arrhenius law, so the temperature sets it",
            f"optimise the temperature, or its parts {name}.A or {name}.Ea",
        )

    def no_part(self, name: str, base: str, part: str) -> SettingError:
        example = self.words.give(f"{base}=0.5:2:{self.units[base]}")
        return SettingError(
            f"{self.where}: {base} is given as a number, not by the Arrhenius law, so it has "
            f"no {part}",
            f"optimise {base} itself, e.g. {example}",
        )


def _bounds(where: str, body: str) -> tuple[float, float, str, tuple[str, str]]:
    m = _RANGE.match(body)
    if m is None:
        raise SettingError(f"{where}: the range must be LO:HI:UNIT", OVER_HELP)
    lo, hi = float(m[1]), float(m[2])
    if not (np.isfinite(lo) and np.isfinite(hi)):
        raise SettingError(f"{where}: a bound is not a finite number", OVER_HELP)
    if not hi > lo:
        raise SettingError(
            f"{where}: the upper bound {m[2]} is not above the lower bound {m[1]}",
            "write the lower bound first, e.g. temperature=20:80:degC",
        )
    return lo, hi, (m["unit"] or "").strip(), (m[1], m[2])


def _time(where: str, lo: float, hi: float, unit: str) -> Setting:
    if not unit:
        raise TimesError(f"{where}: the time range has no unit", "write e.g. time=0:10:h")
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise TimesError(f"{where}: {unit!r} is not a unit", "write e.g. time=0:10:h") from None
    if spec.dims != {"[time]": 1}:
        raise TimesError(f"{where}: {unit!r} is not a unit of time", "write e.g. time=0:10:h")
    if lo < 0:
        raise TimesError(f"{where}: a time is negative", "times start at 0")
    f = float(spec.factor)
    return Setting("time", "time", "", unit, lo, hi, lo * f, hi * f)


def _quantity(scheme: Scheme, where: str, name: str, lo, hi, unit, texts) -> Setting:
    q = scheme.quantities[name]
    unit = unit or q.unit
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise SettingError(f"{where}: {unit!r} is not a unit", OVER_HELP) from None
    wanted = dict(q.dims)
    if spec.dims != wanted:
        raise SettingError(
            f"{where}: {unit!r} is not {describe_dimension(wanted)}, the dimension of {name}",
            f"write the range in {q.unit or 'the unit of ' + name}",
        )
    if wanted == {"[temperature]": 1}:
        a, b = (temperature_to_kelvin(Fraction(t), unit) for t in texts)
    else:
        a, b = (float(Fraction(t) * spec.factor) for t in texts)
    return Setting(name, "quantity", name, unit, lo, hi, a, b)


def parse_over(scheme: Scheme, spec: str, words: Words = API_WORDS) -> Setting:
    r"""Read one ``NAME=LO:HI[:UNIT]`` into a :class:`Setting`.

    Parameters
    ----------
    scheme : Scheme
    spec : str
        ``temperature=20:80:degC``, ``time=0:10:h``, ``t_p=40:60:h``, ``k2=0.01:1:1/min``,
        ``start:A=0.5:2:mol/L``; without a unit the file's unit for that quantity.
    words : Words
        How messages name the setting (:data:`~kinetics.optimise.words.API_WORDS`:
        ``over entry '...'``; the command line passes ``CLI_WORDS``: ``--over '...'``).

    Returns
    -------
    Setting

    Raises
    ------
    kinetics.errors.TimesError
        For a time range without a unit of time, or from a negative time.
    kinetics.errors.SettingError
        For any other mistake: one sentence naming the setting, what is wrong and how to
        write it.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    ...                    "temperature = 40 degC\nstart A = 1 mol/L")
    >>> t = parse_over(s, "temperature=20:80:degC")
    >>> (t.kind, t.lo_internal, t.hi_internal)
    ('temperature', 293.15, 353.15)
    """
    where = words.place(spec)
    if "=" not in spec:
        raise SettingError(f"{where} has no '='", OVER_HELP)
    name, _, body = spec.partition("=")
    name = name.strip()
    if not name:
        raise SettingError(f"{where} needs a name before '='", OVER_HELP)
    lo, hi, unit, texts = _bounds(where, body)
    if name == "time":
        return _time(where, lo, hi, unit)
    if name in scheme.quantities:
        return _quantity(scheme, where, name, lo, hi, unit, texts)
    try:
        return _parameter(scheme, where, name, (lo, hi, unit, texts), words)
    except SettingError:
        raise
    except ArgumentValueError as error:  # a message of kinetics.parameters, typed here
        raise SettingError(error.problem, error.hint) from None


def _parameter(scheme: Scheme, where: str, name: str, bounds, words: Words) -> Setting:
    """A setting of a rate constant, the temperature or a start or excess value."""
    lo, hi, unit, texts = bounds
    target = parameters.resolve(scheme, name, _OverWords(where, scheme, words))
    unit = unit or target.unit
    parameters.check_unit(target, unit, where, OVER_HELP)
    hi_lo, _ = parameters.to_internal(target, [lo, hi], unit, list(texts))
    parameters.check_values(target, hi_lo, where, OVER_HELP)
    kind = "quantity" if target.kind == "constant" else target.kind
    if kind in ("start", "excess") and unit != scheme.concentration_unit:
        # start and excess values are kept in the scheme's unit: report them in it
        lo, hi, unit = float(hi_lo[0]), float(hi_lo[1]), scheme.concentration_unit
    return Setting(target.name, kind, target.target, unit, lo, hi, *map(float, hi_lo))


def apply(scheme: Scheme, settings, values) -> Scheme:
    """The scheme with the settings (other than ``time``) at ``values`` [internal units].

    Derived constants, start activities and thresholds written as percentages of start
    values follow (:func:`kinetics.parameters.scheme_with`); values are taken exactly
    (each double as the rational it is).
    """
    targets, chosen = [], []
    for s, v in zip(settings, values, strict=True):
        if s.kind != "time":
            kind = "constant" if s.kind == "quantity" else s.kind
            targets.append(parameters.Target(s.name, kind, s.target, s.unit))
            chosen.append(float(v))
    if not targets:
        return scheme
    return parameters.scheme_with(scheme, targets, chosen)
