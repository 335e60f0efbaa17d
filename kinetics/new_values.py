"""New values for a scheme: the exact constants they give, their slopes, and the copy.

Sweeps, fits and optimisations give a scheme's named quantities (``t_p = 50 h``), rate
constants, temperature and concentrations new values.  This module checks such values
(known names, finite numbers, >= 0 where they must be), evaluates every rate constant
exactly with them (:func:`exact_constants`, :func:`constant_slopes`, through
:mod:`kinetics.definitions`) and makes the copy of a scheme that holds them
(:func:`with_values`: derived constants, start activities, percentage thresholds and the
numbers of the timeline written as names follow).  These functions are also the methods
of :class:`~kinetics.scheme.Scheme` of the same names (``scheme.with_values(...)``).
"""

from __future__ import annotations

import math
from dataclasses import replace
from fractions import Fraction
from typing import TYPE_CHECKING

from . import activity, definitions
from .errors import (
    ArgumentValueError,
    ConcentrationError,
    ConstantError,
    SpeciesError,
    shown_value,
)
from .units import checked_kelvin

if TYPE_CHECKING:
    from .definitions import Dependencies, NamedQuantity
    from .rate_constants import RateConstant
    from .scheme import Scheme

__all__ = [
    "checked_constant",
    "checked_excess",
    "constant_slopes",
    "driven_by",
    "exact_constants",
    "temperature_constants",
    "with_values",
]


def exact_constants(
    scheme: Scheme,
    temperature: float | None = None,
    quantities: dict[str, float | Fraction] | None = None,
) -> dict[str, Fraction]:
    r"""The exact value of every rate constant, following the named quantities.

    Plain values as written, temperature laws at ``temperature`` (40 digits), derived
    constants from new values of what they follow (:mod:`kinetics.definitions`).
    Also the method :meth:`Scheme.exact_constants <kinetics.scheme.Scheme.exact_constants>`.

    Parameters
    ----------
    scheme : Scheme
    temperature : float, optional
        [K]; default the scheme's.
    quantities : dict of str to float or Fraction, optional
        New values of named quantities or constants [SI base units: s, K, J/mol,
        1/s], Fractions taken exactly.

    Returns
    -------
    dict of str to Fraction
        Every constant of ``scheme.constants`` [SI base units].

    Raises
    ------
    ConstantError
        For an unknown name or a value that is not finite.
    TemperatureError
        For a constant that needs a temperature when there is none.
    ExpressionError
        When a definition cannot be evaluated with the new values, or a constant
        becomes negative.

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("t_p = 50 h\nP -> D  lam = ln(2) / t_p\nstart P = 1 mol")
    >>> lam = scheme.exact_constants(quantities={"t_p": Fraction(36000)})["lam"]
    >>> round(float(lam) * 36000, 12), scheme.driven_by("t_p")  # ln 2 for t_p = 10 h
    (0.69314718056, ('lam',))
    """
    values = {n: _named_value(scheme, n, v) for n, v in (quantities or {}).items()}
    t = scheme.temperature if temperature is None else temperature
    return definitions.constant_values(scheme.constants, scheme.dependencies, t, values)


def constant_slopes(
    scheme: Scheme,
    wrt,
    temperature: float | None = None,
    quantities: dict[str, float | Fraction] | None = None,
) -> dict[str, dict[str, Fraction]]:
    r"""Exact derivatives of every rate constant by named quantities, constants, temperature.

    Also the method :meth:`Scheme.constant_slopes <kinetics.scheme.Scheme.constant_slopes>`.

    Parameters
    ----------
    scheme : Scheme
    wrt : iterable of str
        Named quantities, rate constants and ``"temperature"``.
    temperature, quantities
        As for :func:`exact_constants`.

    Returns
    -------
    dict of str to dict of str to Fraction
        Constant -> name -> :math:`\partial k/\partial p` [SI per SI unit of p]
        (:func:`kinetics.definitions.constant_slopes`; no finite differences).

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("t_p = 50 h\nP -> D  lam = ln(2) / t_p\nstart P = 1 mol")
    >>> d = scheme.constant_slopes(["t_p"])["lam"]["t_p"]  # -ln 2 / t_p**2
    >>> round(float(d) * 180000**2, 12)
    -0.69314718056
    """
    wrt = list(wrt)
    for name in wrt:
        if name != "temperature":
            _named_value(scheme, name, 0)
    values = {n: _named_value(scheme, n, v) for n, v in (quantities or {}).items()}
    t = scheme.temperature if temperature is None else temperature
    return definitions.constant_slopes(scheme.constants, scheme.dependencies, t, wrt, values)


def temperature_constants(scheme: Scheme) -> tuple[str, ...]:
    r"""The rate constants whose values follow the temperature.

    Arrhenius lines, Eyring and Q10 laws, and constants defined from them: the ones
    without a fixed value (``value_si`` None).  Also the property
    :attr:`Scheme.temperature_constants <kinetics.scheme.Scheme.temperature_constants>`.

    >>> from kinetics import parse
    >>> parse("A -> B  k1 = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\n"
    ...       "temperature = 60 degC\nstart A = 1 M").temperature_constants
    ('k1',)
    """
    return tuple(name for name, c in scheme.constants.items() if c.value_si is None)


def driven_by(scheme: Scheme, name: str) -> tuple[str, ...]:
    """The rate constants whose values follow from the named quantity ``name``.

    See the example of :func:`exact_constants`.  Also the method
    :meth:`Scheme.driven_by <kinetics.scheme.Scheme.driven_by>`.

    Raises
    ------
    ConstantError
        When the scheme has no named quantity or constant ``name``.
    """
    _named_value(scheme, name, 0)
    return tuple(n for n in scheme.dependencies.driven_by(name) if n in scheme.constants)


def with_values(
    scheme: Scheme,
    *,
    constants: dict[str, float] | None = None,
    temperature: float | None = None,
    initial: dict[str, float] | None = None,
    excess: dict[str, float] | None = None,
    quantities: dict[str, float | Fraction] | None = None,
) -> Scheme:
    r"""A copy of ``scheme`` with some values replaced.

    Also the method :meth:`Scheme.with_values <kinetics.scheme.Scheme.with_values>`.

    Parameters
    ----------
    scheme : Scheme
    constants : dict of str to float, optional
        New values of named rate constants in SI base units [1/s for first
        order]; an Arrhenius constant becomes a plain one.
    temperature : float, optional
        New temperature [K].
    initial : dict of str to float, optional
        New start concentrations [concentration_unit].
    excess : dict of str to float, optional
        New excess concentrations [concentration_unit].
    quantities : dict of str to float or Fraction, optional
        New values of named quantities [SI base units], Fractions taken exactly.

    Returns
    -------
    Scheme
        Derived constants, start activities, percentage thresholds and the numbers
        of the timeline written as names follow.

    Raises
    ------
    ConstantError
        For an unknown rate constant or named quantity, or a value of one that is
        negative or not finite.
    SpeciesError
        For an unknown species or excess species.
    ConcentrationError
        For a start value or an excess concentration that is negative or not finite.
    TemperatureError
        For a temperature that is not finite and above 0 K.
    ExpressionError
        When a definition cannot be evaluated with the new values.

    Examples
    --------
    A constant written as ``k2 = k1 / 2`` follows a new ``k1`` (closed form):

    >>> from kinetics import parse
    >>> s = parse("A -> B  k1 = 1 1/s\nB -> C  k2 = k1 / 2\nstart A = 1 M")
    >>> s.with_values(constants={"k1": 4.0}, initial={"A": 0.5}).rates.tolist()
    [4.0, 2.0]
    """
    initial, excess, quantities = initial or {}, excess or {}, quantities or {}
    new_constants, new_quantities, graph = _followed(scheme, constants or {}, quantities)
    new_initial = _new_initial(scheme, initial)
    new_excess, new_excess_si = _new_excess(scheme, excess)
    if temperature is not None:
        checked_kelvin(temperature)
    timeline = scheme.timeline
    if quantities and timeline.names:
        known = {n: q.value_si for n, q in new_quantities.items() if q.value_si is not None}
        timeline = timeline.follow(known)
    new = replace(
        scheme,
        timeline=timeline,
        constants=new_constants,
        quantities=new_quantities,
        dependencies=graph,
        temperature=scheme.temperature if temperature is None else float(temperature),
        initial=new_initial,
        excess=new_excess,
        start_activities={k: v for k, v in scheme.start_activities.items() if k not in initial},
        _excess_si=new_excess_si,  # the constructor's field, as the scheme reader sets it
    )
    return _follow_starts(new, changed=bool(initial))


def _followed(
    scheme: Scheme, constants: dict[str, float], quantities: dict[str, float | Fraction]
) -> tuple[dict[str, RateConstant], dict[str, NamedQuantity], Dependencies]:
    """Constants, named quantities and graph with new values, the definitions followed."""
    fixed: dict[str, Fraction] = {}
    texts: dict[str, str] = {}
    for name, value in constants.items():
        fixed[name] = checked_constant(scheme, name, value)
        texts[name] = f"{shown_value(value)} (SI)"
    for name, given in quantities.items():
        fixed[name] = _named_value(scheme, name, given)
        texts[name] = f"{shown_value(float(given))} (SI)"
    if not fixed:
        return scheme.constants, scheme.quantities, scheme.dependencies
    return definitions.follow(
        scheme.constants, scheme.quantities, scheme.dependencies, fixed, texts
    )


def _new_initial(scheme: Scheme, initial: dict[str, float]) -> dict[str, float]:
    """The start values with the new ones [concentration_unit], checked."""
    new_initial = dict(scheme.initial)
    for name, value in initial.items():
        if name not in scheme.index:
            raise SpeciesError(
                f"no species named {name!r} in the rate matrix of the scheme",
                "species: " + ", ".join(scheme.species_names),
            )
        _checked_fraction(value, f"start value of {name}", ConcentrationError)
        new_initial[name] = float(value)
    return new_initial


def _new_excess(
    scheme: Scheme, excess: dict[str, float]
) -> tuple[dict[str, float], dict[str, Fraction]]:
    """The excess concentrations with the new ones: as given and exact in SI [mol/m^3]."""
    new_excess = dict(scheme.excess)
    new_excess_si = scheme.excess_si
    for name, value in excess.items():
        new_excess_si[name] = checked_excess(scheme, name, value)
        new_excess[name] = float(value)
    return new_excess, new_excess_si


def checked_constant(scheme: Scheme, name: str, value) -> Fraction:
    r"""A new value of the scheme's rate constant ``name`` [its SI unit], checked, exact.

    The one check of a constant given for a scheme (new values, the rate matrix with
    other constants): a known name, a finite number >= 0.

    Raises
    ------
    kinetics.errors.ConstantError

    Examples
    --------
    >>> from kinetics import parse
    >>> s = parse("A -> B  k1 = 1 1/s\nstart A = 1 M")
    >>> checked_constant(s, "k1", 0.25)
    Fraction(1, 4)
    >>> checked_constant(s, "k1", -1.0)
    Traceback (most recent call last):
    ...
    kinetics.errors.ConstantError: rate constant k1 = -1.0 must be finite and >= 0
    """
    if name not in scheme.constants:
        raise ConstantError(
            f"no rate constant named {name!r} in the scheme",
            "known constants: " + ", ".join(scheme.constants),
        )
    return _checked_fraction(value, f"rate constant {name}", ConstantError)


def checked_excess(scheme: Scheme, name: str, value) -> Fraction:
    r"""A new concentration of the excess species ``name``, checked, exact in SI.

    ``value`` is in the scheme's concentration unit; the result is in mol/m^3.

    Raises
    ------
    kinetics.errors.SpeciesError
        Not an excess species of the scheme.
    kinetics.errors.ConcentrationError
        Not a finite number >= 0.

    Examples
    --------
    >>> from kinetics import parse
    >>> s = parse("A + W -> B  k = 2 1/(M*s)\nexcess W = 55 M\nstart A = 1 M")
    >>> checked_excess(s, "W", 10.0)  # 10 mol/L = 10,000 mol/m^3
    Fraction(10000, 1)
    """
    if name not in scheme.excess:
        raise SpeciesError(
            f"no excess species named {name!r} in the scheme",
            "excess species: " + (", ".join(scheme.excess) or "none"),
        )
    checked = _checked_fraction(value, f"excess concentration of {name}", ConcentrationError)
    return checked * scheme.concentration_si


def _named_value(scheme: Scheme, name: str, value) -> Fraction:
    """A new value of a named quantity or constant, checked [SI base units], exact."""
    if name not in scheme.quantities and name not in scheme.constants:
        known = [*scheme.quantities, *scheme.dependencies.by_name]
        raise ConstantError(
            f"no named quantity {name!r} in the scheme",
            "named quantities: " + (", ".join(dict.fromkeys(known)) or "none"),
        )
    if isinstance(value, (Fraction, int)) and not isinstance(value, bool):
        exact = Fraction(value)  # taken exactly
    elif name in scheme.constants:
        return _checked_fraction(value, f"rate constant {name}", ConstantError)
    else:
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise ConstantError(f"{name} must be a number, not {shown_value(value)}") from None
        if not math.isfinite(number):
            raise ConstantError(f"{name} = {shown_value(value)} must be finite")
        exact = Fraction(number)
    if name in scheme.constants and exact < 0:
        raise ConstantError(f"rate constant {name} = {shown_value(value)} must be finite and >= 0")
    return exact


def _follow_starts(scheme: Scheme, changed: bool) -> Scheme:
    """Start values and thresholds that follow the start values.

    Start values written as activities from the scheme's decay constants; thresholds written
    as percentages of start values from the start values.
    """
    initial = scheme.initial
    if scheme.start_activities:
        initial = {**initial, **activity.start_amounts(scheme, scheme.start_activities)}
        changed = changed or initial != scheme.initial
    if not changed:
        return scheme
    return replace(
        scheme,
        initial=initial,
        requirements=tuple(r.for_start(initial) for r in scheme.requirements),
    )


def _checked_fraction(value: float, what: str, error: type[ArgumentValueError]) -> Fraction:
    """``value`` as an exact Fraction, or ``error`` when it is not a finite number >= 0."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise error(f"{what} must be a number, not {shown_value(value)}") from None
    if not (math.isfinite(number) and number >= 0):
        raise error(f"{what} = {shown_value(value)} must be finite and >= 0")
    return Fraction(number)
