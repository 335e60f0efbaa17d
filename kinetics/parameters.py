r"""The one grammar of parameter names, shared by sweeps and fits.

A *parameter* is one input of a scheme that a sweep varies or a fit frees:

``k2``
    A rate constant defined by value (not an Arrhenius constant).
``k3.A``, ``k3.Ea``
    Pre-exponential factor and activation energy of an Arrhenius constant ``k3``,

    .. math:: k(T) = A \exp\left(-\frac{E_a}{R T}\right)

    evaluated only by :func:`kinetics.scheme.arrhenius_pairs` (R exact, CODATA 2018).
``temperature`` (also ``T``)
    The temperature of the scheme (changes every Arrhenius constant).
``start:A``, ``excess:W``
    The start concentration of a species, the concentration of a co-reactant held in
    excess (``start A`` with a space is read the same way).
``t_p`` (any named quantity of the file)
    A quantity defined on a line of its own (``t_p = 50 h``, ``Ea_f = 80 kJ/mol``,
    ``T_ref = 25 degC``): the constants defined from it follow it exactly
    (:meth:`kinetics.scheme.Scheme.exact_constants`).  A rate constant defined by an
    expression (``k2 = k1 / 3``) is a ``constant``: varied, it becomes the value given.
``t_q``, ``dose``, ``p_el`` (named quantities an operation uses)
    The time of an operation, an amount added, a volume or a part removed (``at t_q: add
    A = dose``, ``every t_el: remove p_el of D``; :attr:`kinetics.timeline.Timeline.names`):
    kind ``operation``; the operations move with them.

:func:`resolve` maps a name to its :class:`Target` (what it changes and the unit the file
uses for it); :func:`check_unit` and :func:`to_internal` read values in a unit and convert
them to the *internal units* of the core:

============  ===============================================  ==========================
kind          internal unit                                    low part kept
============  ===============================================  ==========================
constant      SI base units (1/s for first order)              exact conversion
prefactor     SI base units of A                               exact conversion
energy        J/mol                                            none: Ea is the double
temperature   K                                                none: T is the double
start         the scheme's concentration unit                  exact conversion
excess        the scheme's concentration unit                  exact conversion
quantity      SI base units (K for temperatures)               exact conversion
operation     SI base units (s, mol/m^3, m^3; a pure number)   exact conversion
============  ===============================================  ==========================

Values are converted with exact rational unit factors and kept as double-double pairs
``(hi, lo)``: ``hi`` the nearest double, ``lo`` the rest, so a rate constant of a sweep is
the exact value of what was written (a value given as text, ``k2=0.045``, is read as the
decimal it is, exactly as the scheme file reads it).  Activation energies and temperatures
follow the scheme's own convention (:meth:`kinetics.scheme.Arrhenius.exact` takes them
as the doubles nearest to what was written), so a sweep at the file's own values
reproduces the file's rate constants bit for bit.

Messages name the parameter the way the caller presents it: a sweep names the place of
the name (``--vary 'k2=...'``, ``grid['k2']``, see :class:`SweepWords`), a fit the free
parameter (:data:`FIT_WORDS`); both wordings live here, beside the grammar.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, replace
from decimal import Decimal
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from . import _doubledouble as dd
from .errors import (
    ArgumentValueError,
    ConcentrationError,
    ConstantError,
    SpeciesError,
    TemperatureError,
    UnitError,
)
from .units import OFFSET_TEMPERATURES, normalise_unit, parse_unit, temperature_to_kelvin

if TYPE_CHECKING:
    from .rate_constants import Arrhenius
    from .scheme import Scheme

__all__ = [
    "ALL_KINDS",
    "FIT_KINDS",
    "FIT_WORDS",
    "NUMBER",
    "SweepWords",
    "Target",
    "check_unit",
    "check_values",
    "closest",
    "column_header",
    "energy_unit",
    "file_temperature_unit",
    "from_internal",
    "resolve",
    "scheme_with",
    "to_internal",
    "value_error",
]

#: Every kind of parameter, in the order of the table in the module docstring.
ALL_KINDS = (
    "constant",
    "prefactor",
    "energy",
    "temperature",
    "start",
    "excess",
    "quantity",
    "operation",
)
#: The kinds a fit can free.
FIT_KINDS = ("constant", "prefactor", "energy", "start", "quantity", "operation")
#: A decimal number as users write it (the values of ``--vary``, the number before a unit).
NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_NAME_START = re.compile(r"^(start|excess)\s*[:\s]\s*(?P<species>\S+)$")
_ENERGY_DIMS = {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1}


@dataclass(frozen=True)
class Target:
    """What a parameter name refers to, with the unit the file uses for it.

    Attributes
    ----------
    name : str
        Canonical name: ``k2``, ``k3.A``, ``k3.Ea``, ``temperature``, ``start:A``,
        ``excess:W``, ``t_p``.
    kind : str
        One of :data:`ALL_KINDS`.
    target : str
        The constant, species or named quantity it changes (empty for the temperature).
    unit : str
        The unit the file uses for it (the display unit of results).
    label : str
        Stem of a table column (``start A``; the column is ``start A [mol/L]``).
    nominal : float
        The file's value in internal units (``nan`` when the file has none).
    """

    name: str
    kind: str
    target: str
    unit: str
    label: str = ""
    nominal: float = float("nan")

    @property
    def log(self) -> bool:
        """True when a fit searches the logarithm of the value.

        So it does for every kind but ``energy`` and named quantities whose value is not
        above 0 (an activation entropy).
        """
        if self.kind == "quantity":
            return self.nominal > 0
        return self.kind != "energy"

    @property
    def is_temperature(self) -> bool:
        """True for the temperature and for named quantities that are temperatures."""
        if self.kind == "quantity":
            return parse_unit(self.unit).dims == {"[temperature]": 1}
        return self.kind == "temperature"

    @property
    def si_per_unit(self) -> float:
        """Internal value of one :attr:`unit`; not defined for units with an offset.

        It is 1 for start and excess values, which the core keeps in the scheme's
        concentration unit.
        """
        if self.kind in ("start", "excess"):
            return 1.0
        spec = parse_unit(self.unit)
        if self.kind == "temperature" or spec.offset:
            raise ValueError("a temperature unit has an offset, not a factor")
        return float(spec.factor)

    @property
    def column(self) -> str:
        """The header of its table column: ``k2 [1/min]``, ``f [-]`` for a pure number."""
        return column_header(self.label, self.unit)


def column_header(label: str, unit: str) -> str:
    """A table header with its unit: ``k2 [1/min]``; a pure number is ``[-]``.

    >>> column_header("start A", "mol/L"), column_header("f", "")
    ('start A [mol/L]', 'f [-]')
    """
    return f"{label} [{unit or '-'}]"


# ---------------------------------------------------------------------------------------
# Wording of the mistakes
# ---------------------------------------------------------------------------------------


def closest(name: str, candidates, fold_case: bool = False) -> str | None:
    """The candidate closest to a mistyped ``name`` (same letters in another case first)."""
    candidates = list(candidates)
    if fold_case:
        same = [c for c in candidates if c.lower() == name.lower()]
        if same:
            return same[0]
    close = difflib.get_close_matches(name, candidates, n=1)
    return close[0] if close else None


class SweepWords:
    """Messages of :func:`resolve` for a sweep: each starts with the place of the name.

    Each method returns the error to raise: a sweep's are :class:`ConstantError`,
    :class:`TemperatureError` and :class:`SpeciesError`; the words of another command may
    return another kind of :class:`ArgumentValueError` (an optimisation's setting errors).

    Parameters
    ----------
    where : str
        ``--vary 'k2=0.1:1:3'``, ``grid['k2']``, ``--spread 'k1=15%'``.
    """

    allowed = ALL_KINDS

    def __init__(self, where: str) -> None:
        self.where = where

    @staticmethod
    def _did_you_mean(name: str, known) -> str:
        close = closest(name, known)
        return f"did you mean {close!r}? " if close else ""

    def unknown(self, scheme: Scheme, name: str) -> ArgumentValueError:
        """The error for a name that is no rate constant or parameter of the scheme."""
        names = [*scheme.constants, *scheme.quantities]
        known = [*names, "temperature", "start:<species>", "excess:<species>"]
        return ConstantError(
            f"{self.where}: {name!r} is not a rate constant or parameter of the scheme",
            self._did_you_mean(name, names) + "parameters are " + ", ".join(known),
        )

    def drives_nothing(self, name: str) -> ConstantError:
        """The error for a named quantity that no rate constant is defined from."""
        return ConstantError(
            f"{self.where}: no rate constant is defined from {name}, so it changes nothing",
            f"vary a quantity that a constant is defined from, e.g. k = ln(2) / {name}",
        )

    def whole_arrhenius(self, name: str) -> ArgumentValueError:
        """The error for a constant that follows the Arrhenius law, varied as a whole."""
        return ConstantError(
            f"{self.where}: {name} follows the Arrhenius law",
            f"vary {name}.A, {name}.Ea or temperature instead",
        )

    def no_constant(self, scheme: Scheme, name: str, base: str) -> ConstantError:
        """The error for ``base.A`` or ``base.Ea`` where the scheme has no constant ``base``."""
        constants = scheme.constants
        return ConstantError(
            f"{self.where}: the scheme has no rate constant {base!r}",
            self._did_you_mean(base, constants) + "the constants are " + ", ".join(constants),
        )

    def not_a_part(self, scheme: Scheme, name: str, base: str, part: str) -> ArgumentValueError:
        """The error for ``base.part`` whose part is no Arrhenius parameter (unknown name)."""
        return self.unknown(scheme, name)

    def no_part(self, name: str, base: str, part: str) -> ArgumentValueError:
        """The error for ``base.A`` or ``base.Ea`` of a constant given as a number."""
        return ConstantError(
            f"{self.where}: {base} is given as a number, not by the Arrhenius law, so it has "
            f"no {part}",
            f"vary {base} itself, e.g. {base}=0.1:1:10:log",
        )

    def not_a_species(self, scheme: Scheme, name: str, kind: str, species: str) -> SpeciesError:
        """The error for ``start:S`` or ``excess:S`` naming no species of that kind."""
        known = scheme.species_names if kind == "start" else [s.name for s in scheme.excess_species]
        if kind == "start" and species in scheme.excess:
            hint = f"{species} is held in excess: vary excess:{species}"
        elif kind == "excess" and not known:
            hint = "the scheme declares no species in excess"
        else:
            hint = self._did_you_mean(species, known) + "the species are " + ", ".join(known)
        what = "a species of the scheme" if kind == "start" else "a species held in excess"
        return SpeciesError(f"{self.where}: {species!r} is not {what}", hint)

    def temperature_unused(self) -> ArgumentValueError:
        """The error for varying the temperature of a scheme without an Arrhenius constant."""
        return TemperatureError(
            f"{self.where}: the scheme has no Arrhenius constant, so the temperature changes "
            "nothing",
            "define a constant as k = arrhenius(A = ..., Ea = ...) to sweep temperatures",
        )


class _FitWords:
    """Messages of :func:`resolve` for a fit: each names the free parameter."""

    allowed = FIT_KINDS

    @staticmethod
    def _listing(name: str, candidates, listing: str) -> str:
        candidates = list(candidates)
        close = closest(name, candidates, fold_case=True)
        text = f"{listing} " + ", ".join(candidates)
        return f"did you mean {close!r}? ({text})" if close else text

    def unknown(self, scheme: Scheme, name: str) -> ConstantError:
        if scheme.quantities:
            return ConstantError(
                f"free parameter {name!r} is not a rate constant or named quantity of the scheme",
                self._listing(name, [*scheme.constants, *scheme.quantities], "the names are")
                + "; start values are written start:SPECIES",
            )
        return ConstantError(
            f"free parameter {name!r} is not a rate constant of the scheme",
            self._listing(name, scheme.constants, "the constants are")
            + "; start values are written start:SPECIES",
        )

    def drives_nothing(self, name: str) -> ConstantError:
        return ConstantError(
            f"free parameter {name!r}: no rate constant is defined from it, so the data "
            "cannot tell its value",
            f"free a quantity that a constant is defined from, e.g. k = ln(2) / {name}",
        )

    def whole_arrhenius(self, name: str) -> ConstantError:
        return ConstantError(
            f"free parameter {name!r} follows the Arrhenius law",
            f"free its parameters instead: {name}.A and {name}.Ea",
        )

    def no_constant(self, scheme: Scheme, name: str, base: str) -> ConstantError:
        return ConstantError(
            f"free parameter {name!r}: there is no rate constant {base!r}",
            self._listing(base, scheme.constants, "the constants are"),
        )

    def not_a_part(self, scheme: Scheme, name: str, base: str, part: str) -> ConstantError:
        return ConstantError(
            f"free parameter {name!r}: {part!r} is not an Arrhenius parameter",
            f"write {base}.A or {base}.Ea",
        )

    def no_part(self, name: str, base: str, part: str) -> ConstantError:
        return ConstantError(
            f"free parameter {name!r}: {base} is not an Arrhenius constant",
            f"free {base} itself, or define it as {base} = arrhenius(A = ..., Ea = ...)",
        )

    def not_a_species(self, scheme: Scheme, name: str, kind: str, species: str) -> SpeciesError:
        return SpeciesError(
            f"free parameter {name!r}: {species!r} is not a species of the scheme",
            self._listing(species, scheme.species_names, "the species are"),
        )

    def temperature_unused(self) -> TemperatureError:  # pragma: no cover - no temperature fit
        raise AssertionError("a fit does not free the temperature")


#: Messages of :func:`resolve` for the free parameters of a fit.
FIT_WORDS = _FitWords()


# ---------------------------------------------------------------------------------------
# Names
# ---------------------------------------------------------------------------------------


def energy_unit(arrhenius: Arrhenius) -> str:
    """The unit the file wrote ``Ea`` in (``J/mol`` when it wrote none).

    >>> from fractions import Fraction
    >>> from kinetics.scheme import Arrhenius
    >>> energy_unit(Arrhenius(Fraction(1), 8.0e4, "1e10 1/s", "80 kJ/mol"))
    'kJ/mol'
    """
    m = re.match(rf"^\s*{NUMBER}\s*(?P<unit>.*?)\s*$", arrhenius.energy_text or "")
    return m["unit"] if m and m["unit"] else "J/mol"


def file_temperature_unit(scheme: Scheme) -> str:
    """The unit written on the ``temperature`` line of the scheme (``K`` if none)."""
    for raw in scheme.text.splitlines():
        code = raw.split("#", 1)[0]
        m = re.match(rf"^\s*temperature\s*=\s*({NUMBER})\s*(?P<unit>.*?)\s*$", code)
        if m:
            return m["unit"] or "K"
    return "K"


def resolve(scheme: Scheme, name: str, words) -> Target:
    r"""Map a parameter name to what it changes in the scheme.

    Parameters
    ----------
    scheme : Scheme
    name : str
        ``k2``, ``k3.A``, ``k3.Ea``, ``temperature``, ``start:A``, ``excess:W`` (surrounding
        blanks are ignored).
    words : SweepWords or FIT_WORDS
        Who asks: the kinds it allows (``words.allowed``) and the wording of its messages.

    Returns
    -------
    Target

    Raises
    ------
    kinetics.errors.ConstantError
        For a name that refers to nothing the caller may change, worded by ``words``
        (:class:`~kinetics.errors.SpeciesError` for an unknown species,
        :class:`~kinetics.errors.TemperatureError` for a temperature that changes nothing).

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 0.12 1/min\nstart A = 1 mol/L")
    >>> t = resolve(s, "k1", FIT_WORDS)
    >>> (t.kind, t.unit, round(t.nominal, 6))
    ('constant', '1/min', 0.002)
    """
    name = name.strip()
    constants = scheme.constants
    allowed = words.allowed
    if "temperature" in allowed and name in ("temperature", "T"):
        if not scheme.temperature_constants:
            raise words.temperature_unused()
        unit = file_temperature_unit(scheme)
        # a file with an Arrhenius constant sets a temperature (the parser refuses it otherwise)
        assert scheme.temperature is not None
        return Target("temperature", "temperature", "", unit, "temperature", scheme.temperature)
    m = _NAME_START.match(name)
    if m and m[1] in allowed:
        return _species_target(scheme, name, m[1], m["species"], words)
    base, dot, part = name.partition(".")
    if dot:
        return _arrhenius_target(scheme, name, base, part, words)
    if name in constants:
        d = constants[name]
        if d.arrhenius is not None:
            raise words.whole_arrhenius(name)
        return Target(name, "constant", name, d.unit, name, _nominal(scheme, name))
    if "operation" in allowed and name in scheme.timeline.names:
        q = scheme.quantities[name]
        return Target(name, "operation", name, q.unit, name, _nominal(scheme, name))
    if "quantity" in allowed and name in scheme.quantities:
        if not scheme.driven_by(name):
            raise words.drives_nothing(name)
        q = scheme.quantities[name]
        return Target(name, "quantity", name, q.unit, name, _nominal(scheme, name))
    raise words.unknown(scheme, name)


def _nominal(scheme: Scheme, name: str) -> float:
    """The file's value of a constant or named quantity [SI; K].

    One that follows the temperature is taken at the scheme's temperature (``nan``
    without one).
    """
    known = scheme.quantities.get(name) or scheme.constants[name]
    if known.value_si is not None:
        return float(known.value_si)
    if scheme.temperature is None:
        return float("nan")
    return float(scheme.dependencies.value(name, scheme.temperature))


def scheme_with(
    scheme: Scheme,
    targets,
    values,
    lows=None,
    *,
    temperature: float | None = None,
    initial: dict[str, float] | None = None,
    given: dict | None = None,
) -> Scheme:
    r"""The scheme with new values of parameters of any kind, exactly.

    The values are a sweep's set or a fit's estimates.

    Rate constants and named quantities go through :meth:`kinetics.scheme.Scheme.
    with_values` as exact values (the constants defined from them, and the operations
    whose numbers are named, follow); Arrhenius parameters replace ``A`` or ``Ea`` in the
    constant's law, which stays a law (it follows the temperature of operations too).

    Parameters
    ----------
    scheme : Scheme
    targets : sequence of Target
        What each value changes.
    values : sequence of float
        In internal units (see the module docstring).
    lows : sequence of float, optional
        Exact rests of ``values`` (double-double pairs).
    temperature : float, optional
        [K], unless a target sets it.
    initial : dict of str to float, optional
        Start values [concentration_unit] besides the targets.
    given : dict of str to float or Fraction, optional
        Other rate constants or named quantities [SI].

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    ...                    "temperature = 25 degC\nstart A = 1 M")
    >>> t = resolve(s, "k.Ea", FIT_WORDS)
    >>> new = scheme_with(s, [t], [90e3])
    >>> new.constants["k"].arrhenius.activation_energy
    90000.0
    """
    lows = [0.0] * len(targets) if lows is None else lows
    quantities: dict[str, float | Fraction] = {n: Fraction(v) for n, v in (given or {}).items()}
    start, excess = dict(initial or {}), {}
    parts: dict[str, dict[str, Fraction]] = {}  # constant -> its new A or Ea
    for t, v, lo in zip(targets, values, lows, strict=True):
        exact = Fraction(float(v)) + Fraction(float(lo))
        if t.kind == "temperature":
            temperature = float(v)
        elif t.kind == "start":
            start[t.target] = float(v)
        elif t.kind == "excess":
            excess[t.target] = float(v)
        elif t.kind in ("prefactor", "energy"):
            parts.setdefault(t.target, {})[t.kind] = exact
        else:  # a rate constant, a named quantity
            quantities[t.target or t.name] = exact
    new = scheme.with_values(
        temperature=temperature, initial=start, excess=excess, quantities=quantities
    )
    if not parts:
        return new
    constants = dict(new.constants)
    for name, part in parts.items():
        old = constants[name]
        law = old.arrhenius
        assert law is not None  # resolve gives A and Ea of Arrhenius constants only
        law = replace(
            law,
            prefactor_si=part.get("prefactor", law.prefactor_si),
            activation_energy=float(part.get("energy", law.activation_energy)),
        )
        constants[name] = replace(old, arrhenius=law, text=f"{old.text} (new A or Ea)")
    return replace(new, constants=constants)


def _species_target(scheme: Scheme, name: str, kind: str, species: str, words) -> Target:
    if kind == "start":
        known = scheme.species_names
        table = scheme.initial
    else:
        known = [s.name for s in scheme.excess_species]
        table = scheme.excess
    if species not in known:
        raise words.not_a_species(scheme, name, kind, species)
    return Target(
        f"{kind}:{species}",
        kind,
        species,
        scheme.concentration_unit,
        f"{kind} {species}",
        float(table.get(species, 0.0)),
    )


def _arrhenius_target(scheme: Scheme, name: str, base: str, part: str, words) -> Target:
    constants = scheme.constants
    if base not in constants:
        if isinstance(words, SweepWords) and not _is_part_name(base, part):
            raise words.unknown(scheme, name)
        raise words.no_constant(scheme, name, base)
    if part not in ("A", "Ea"):
        raise words.not_a_part(scheme, name, base, part)
    d = constants[base]
    if d.arrhenius is None:
        raise words.no_part(name, base, part)
    if part == "A":
        return Target(name, "prefactor", base, d.unit, name, float(d.arrhenius.prefactor_si))
    unit = energy_unit(d.arrhenius)
    return Target(name, "energy", base, unit, name, float(d.arrhenius.activation_energy))


def _is_part_name(base: str, part: str) -> bool:
    """``k3.A`` or ``k3.Ea`` with an identifier before the dot (how a sweep reads names)."""
    return part in ("A", "Ea") and re.match(r"^[^\W\d_][\w']*$", base) is not None


# ---------------------------------------------------------------------------------------
# Units and values
# ---------------------------------------------------------------------------------------


def value_error(target: Target) -> type[ArgumentValueError]:
    """The typed error of a wrong unit or value given for ``target``.

    :class:`~kinetics.errors.TemperatureError` for a temperature,
    :class:`~kinetics.errors.ConcentrationError` for a start or excess concentration,
    :class:`~kinetics.errors.ConstantError` for a rate constant, its Arrhenius parameters
    or a named quantity.

    Examples
    --------
    >>> value_error(Target("start:A", "start", "A", "mol/L")).__name__
    'ConcentrationError'
    """
    if target.is_temperature:
        return TemperatureError
    if target.kind in ("start", "excess"):
        return ConcentrationError
    return ConstantError


def check_unit(target: Target, unit: str, where: str, hint: str) -> None:
    """Refuse a ``unit`` without the dimension of the file's unit for ``target``.

    Raises
    ------
    kinetics.errors.ArgumentValueError
        Of the type :func:`value_error` gives for ``target``:
        ``{where}: 'm' is not a unit``, ``... is not a temperature unit``, ``... is not a
        molar energy`` or ``... does not have the dimension of '1/min', the unit of k1 in
        the file``.
    """
    error = value_error(target)
    try:
        spec = parse_unit(unit)
    except UnitError:
        raise error(f"{where}: {unit!r} is not a unit", hint) from None
    if target.is_temperature:
        if spec.dims != {"[temperature]": 1}:
            raise error(f"{where}: {unit!r} is not a temperature unit", "use K or degC")
        return
    if target.kind == "energy":
        if spec.dims != _ENERGY_DIMS:
            raise error(f"{where}: {unit!r} is not a molar energy", "write Ea in kJ/mol or J/mol")
        return
    ref = parse_unit(target.unit)
    if spec.dimensions != ref.dimensions:
        raise error(
            f"{where}: {unit!r} does not have the dimension of {target.unit!r}, the unit of "
            f"{target.name} in the file",
            f"write the values in {target.unit} or leave out the unit",
        )


def to_internal(target: Target, values, unit: str, texts=None) -> tuple[np.ndarray, np.ndarray]:
    r"""Values in ``unit`` -> internal units, as double-double pairs ``(hi, lo)``.

    Parameters
    ----------
    target : Target
    values : array_like
        The values in ``unit``.
    unit : str
        A unit of the dimension of ``target.unit`` (see :func:`check_unit`).
    texts : sequence of str, optional
        The values as written (decimal text): converted exactly from the text, so
        ``0.045`` is 45/1000, not the double nearest to it.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        ``hi`` (each value rounded once) and ``lo`` (the exact rest; zero for temperatures
        and activation energies, which are defined as doubles, see the module docstring).

    .. math:: x_\mathrm{internal} = x \cdot f_\mathrm{unit}, \qquad
              T/\mathrm{K} = (t + t_0)\, s \ \text{(offset temperature scales)}

    Examples
    --------
    0.045 1/min is exactly 0.00075 1/s (1 min = 60 s, SI brochure, 9th ed., table 8):

    >>> from fractions import Fraction
    >>> hi, lo = to_internal(Target("k", "constant", "k", "1/s"), [0.045], "1/min", ["0.045"])
    >>> Fraction(hi[0]) + Fraction(lo[0]) - Fraction(3, 4000) < Fraction(1, 10**35)
    True
    """
    values = np.asarray(values, dtype=float).reshape(-1)
    lo = np.zeros(values.size)
    if target.kind == "temperature":
        exact = _exact_numbers(values, texts)
        return np.array([temperature_to_kelvin(x, unit) for x in exact]), lo
    if target.is_temperature and parse_unit(unit).offset:  # a named temperature in degC
        hi = np.empty(values.size)
        for i, x in enumerate(_exact_numbers(values, texts)):
            hi[i], lo[i] = dd.pair(_offset_kelvin(x, unit))
        return hi, lo
    if target.kind == "energy":
        factor = parse_unit(unit).factor
        return np.array([float(x * factor) for x in _exact_numbers(values, texts)]), lo
    if target.kind in ("start", "excess"):
        factor = parse_unit(unit).factor / parse_unit(target.unit).factor
    else:
        factor = parse_unit(unit).factor
    hi = np.empty(values.size)
    for i, x in enumerate(_exact_numbers(values, texts)):
        hi[i], lo[i] = dd.pair(x * factor)
    return hi, lo


def _offset_kelvin(x: Fraction, unit: str) -> Fraction:
    """A temperature on a scale with an offset (degC, degF) in kelvin, exactly."""
    scale_offset = OFFSET_TEMPERATURES.get(normalise_unit(unit))
    if scale_offset is None:
        return Fraction(temperature_to_kelvin(x, unit))
    scale, offset = scale_offset
    return (x + offset) * scale


def _exact_numbers(values: np.ndarray, texts) -> list[Fraction]:
    """The values as exact rationals: of their decimal text where given, else of the double."""
    if texts is None:
        return [Fraction(float(v)) for v in values]
    out = []
    for text, v in zip(texts, values, strict=True):
        d = Decimal(text.strip())
        # beyond 1e+-400 the double is 0 or out of range anyway: no huge exact integers
        out.append(Fraction(d) if -400 <= d.adjusted() <= 400 else Fraction(float(v)))
    return out


def from_internal(target: Target, x: np.ndarray, unit: str) -> np.ndarray:
    """Internal values -> ``unit`` (the inverse of :func:`to_internal`, rounded)."""
    if target.kind in ("start", "excess"):
        return (
            x
            if unit == target.unit
            else x / float(parse_unit(unit).factor / parse_unit(target.unit).factor)
        )
    if target.is_temperature:
        if unit in ("K", "kelvin"):
            return x
        offset = temperature_to_kelvin(0.0, unit)
        scale = temperature_to_kelvin(1.0, unit) - offset
        return (x - offset) / scale
    return x / float(parse_unit(unit).factor)


def check_values(target: Target, internal: np.ndarray, where: str, hint: str) -> None:
    """Refuse values a scheme cannot take: not finite, negative, at or below 0 K.

    Raises
    ------
    kinetics.errors.ArgumentValueError
        Of the type :func:`value_error` gives for ``target``.
    """
    error = value_error(target)
    if not np.all(np.isfinite(internal)):
        raise error(f"{where}: a value is not a finite number", hint)
    if target.is_temperature and np.any(internal <= 0):
        raise error(f"{where}: a temperature is at or below absolute zero", "check the unit")
    if target.kind in ("constant", "prefactor", "start", "excess", "operation") and np.any(
        internal < 0
    ):
        what = {
            "start": "a start concentration",
            "excess": "an excess concentration",
            "operation": f"a value of {target.name}",
        }.get(target.kind, "a rate constant")
        raise error(f"{where}: {what} is negative", "give values >= 0")
