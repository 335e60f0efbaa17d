r"""Amounts and masses: what a concentration unit measures, and molar-mass conversions.

Stoichiometry counts molecules, so a scheme is solved in amounts of substance.
A file may give its values as amounts (``mmol/L``) or as masses (``mg/L``); masses
are converted to amounts with each species' molar mass
(:math:`n = m / M`), and results can be reported back per species in a mass unit
(:math:`m_i = n_i M_i`).  Three bases are known, and one file keeps to one:

========================  ======================  =========================
basis                     amounts                 masses
========================  ======================  =========================
per volume                ``mol/L``, ``mmol/L``   ``g/L``, ``mg/L``, ``ug/L``
per mass of soil          ``mol/kg``, ``mmol/kg`` ``mg/kg``, ``ug/g``
absolute (no basis)       ``mol``, ``mmol``       ``g``, ``mg``
========================  ======================  =========================

plus pure numbers (``1``, ``%``, ``ppm``), which are neither.  pint calls a mass per
mass (``mg/kg``) a pure number; here it is a mass per mass of soil, because its
numerator and denominator are both masses.

The output unit :data:`PERCENT_OF_APPLIED` reports every species as a percentage of
the total amount applied at time zero (the sum of the start values in amounts):
:math:`100\, n_i(t) / \sum_j n_j(0)`.
"""

from __future__ import annotations

import functools
import re
from collections import deque
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from .errors import OutputUnitError, shorten
from .units import is_mass_ratio, parse_unit

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "PERCENT_OF_APPLIED",
    "Kind",
    "amount_unit",
    "is_percent_of_applied",
    "kind_of",
    "output_factors",
    "reachable",
]

#: The label of the output unit "percent of the amount applied at time zero".
PERCENT_OF_APPLIED = "% of applied"
_PERCENT_RE = re.compile(r"^\s*(?:%|percent)\s*(?:of\s*)?applied\s*$", re.IGNORECASE)

_SUBSTANCE = {"[substance]": 1}
_BASES: dict[tuple[tuple[str, Fraction | int], ...], str] = {  # basis dimension -> name
    (("[length]", -3),): "volume",
    (("[mass]", -1),): "soil",
    (): "absolute",
}
#: Names of the amount units the scheme may be kept in, per basis, by SI factor
#: (mol/m^3, mol/kg, mol); the first is the basis' default.
_AMOUNT_UNITS = {
    "volume": {
        Fraction(1000): "mol/L",
        Fraction(1): "mmol/L",
        Fraction(1, 10**3): "umol/L",
        Fraction(1, 10**6): "nmol/L",
        Fraction(1, 10**9): "pmol/L",
    },
    "soil": {
        Fraction(1): "mol/kg",
        Fraction(1, 10**3): "mmol/kg",
        Fraction(1, 10**6): "umol/kg",
        Fraction(1, 10**9): "nmol/kg",
        Fraction(1, 10**12): "pmol/kg",
    },
    "absolute": {
        Fraction(1): "mol",
        Fraction(1, 10**3): "mmol",
        Fraction(1, 10**6): "umol",
        Fraction(1, 10**9): "nmol",
        Fraction(1, 10**12): "pmol",
    },
}
#: What each kind is called in messages: (substance, basis) -> (name, plural, article).
_NAMES = {
    ("amount", "volume"): ("concentration", "concentrations", "a"),
    ("mass", "volume"): ("mass concentration", "mass concentrations", "a"),
    ("amount", "absolute"): ("amount", "amounts", "an"),
    ("mass", "absolute"): ("mass", "masses", "a"),
    ("amount", "soil"): ("amount per mass of soil", "amounts per mass of soil", "an"),
    ("mass", "soil"): ("mass per mass of soil", "masses per mass of soil", "a"),
    ("number", "ratio"): ("pure number", "pure numbers", "a"),
}


@dataclass(frozen=True)
class Kind:
    """What a concentration unit measures.

    Attributes
    ----------
    substance : str
        ``"amount"``, ``"mass"`` or ``"number"`` (a pure number).
    basis : str
        ``"volume"``, ``"soil"`` (per mass of soil), ``"absolute"`` or ``"ratio"``
        (pure numbers).
    factor : Fraction
        Exact factor of the unit to SI: mol/m^3, kg/m^3, mol/kg, kg/kg, mol, kg or 1
        (per second as well for a feed).
    """

    substance: str
    basis: str
    factor: Fraction

    @property
    def name(self) -> str:
        """``"mass concentration"``, ``"amount per mass of soil"`` ..."""
        return _NAMES[(self.substance, self.basis)][0]

    @property
    def plural(self) -> str:
        """``"mass concentrations"`` ..."""
        return _NAMES[(self.substance, self.basis)][1]

    @property
    def article(self) -> str:
        """``"a"`` or ``"an"``."""
        return _NAMES[(self.substance, self.basis)][2]

    @property
    def amount_dims(self) -> dict[str, Fraction]:
        """The dimension of the amount this kind converts to (mass -> substance)."""
        if self.basis == "ratio":
            return {}
        basis = dict(next(k for k, v in _BASES.items() if v == self.basis))
        return {**{k: Fraction(v) for k, v in basis.items()}, "[substance]": Fraction(1)}


@functools.lru_cache(maxsize=1024)
def kind_of(unit: str, per_time: bool = False) -> Kind | None:
    """What ``unit`` measures, or None when it is no concentration, amount or mass.

    Parameters
    ----------
    unit : str
        A unit in chemists' notation (``"mg/L"``, ``"mmol/kg"``, ``"ug/g"``, ``"%"``).
    per_time : bool, optional
        True for a feed: the unit is a concentration per time (``"mg/L/d"``).

    Returns
    -------
    Kind or None

    Raises
    ------
    ValueError
        When the unit cannot be read at all (see :func:`kinetics.units.parse_unit`).

    Examples
    --------
    >>> kind_of("mg/kg").name, kind_of("mmol/L").name, kind_of("1/s") is None
    ('mass per mass of soil', 'concentration', True)

    The factor to SI: 1 mg/L is 10⁻⁶ kg / 10⁻³ m³ = 10⁻³ kg/m³ (closed form; 1 L = 10⁻³ m³,
    SI brochure, 9th edition, 2019, table 8):

    >>> kind_of("mg/L").factor
    Fraction(1, 1000)
    """
    spec = parse_unit(unit)
    if spec.offset:
        return None
    dims = spec.dims
    if per_time:
        dims["[time]"] = dims.get("[time]", Fraction(0)) + 1
    dims = {k: v for k, v in dims.items() if v}
    if not dims:
        if unit.strip() and is_mass_ratio(_without_time(unit) if per_time else unit):
            return Kind("mass", "soil", spec.factor)
        return Kind("number", "ratio", spec.factor)
    for substance, key in (("amount", "[substance]"), ("mass", "[mass]")):
        if dims.get(key) != 1:
            continue
        rest = {k: v for k, v in dims.items() if k != key}
        basis = _BASES.get(tuple(sorted(rest.items())))
        if basis is not None and not (substance == "mass" and basis == "soil"):
            return Kind(substance, basis, spec.factor)
    return None


def _without_time(unit: str) -> str:
    """``mg/kg/d`` -> ``mg/kg``: the mass ratio of a feed unit (its time cut off)."""
    return re.sub(r"\s*(?:/\s*[^/\s]+|\s+\S+-1)\s*$", "", unit.strip())


def amount_unit(kind: Kind) -> tuple[str, Fraction]:
    """The amount unit a scheme written in ``kind`` is kept in, and its SI factor.

    An amount kind keeps its own unit (the caller's text); a mass kind gets the amount
    unit whose number is the mass number divided by the molar mass in g/mol:
    ``mg/L`` -> ``mmol/L``, ``ug/L`` -> ``umol/L``, ``mg/kg`` -> ``mmol/kg``,
    ``g`` -> ``mol``.  Units without such a twin (``lb/gal``) get the basis' default
    (``mol/L``, ``mol/kg``, ``mol``).

    Examples
    --------
    Closed form n = m / M: a number of mg/L divided by M [g/mol] is a number of mmol/L, and
    1 mmol/L is 1 mol/m³ (SI factor 1):

    >>> amount_unit(kind_of("mg/L")), amount_unit(kind_of("ug/kg"))
    (('mmol/L', Fraction(1, 1)), ('umol/kg', Fraction(1, 1000000)))
    """
    if kind.substance != "mass":
        raise ValueError("amount_unit() converts mass kinds only")
    units = _AMOUNT_UNITS[kind.basis]
    factor = kind.factor * 1000  # kg -> g: a number of g per (g/mol) is a number of mol
    if factor in units:
        return units[factor], factor
    default = next(iter(units.items()))
    return default[1], default[0]


def is_percent_of_applied(unit: str) -> bool:
    """True for the output unit "% of applied" (also ``%applied``, ``percent of applied``)."""
    return bool(_PERCENT_RE.match(unit))


def reachable(scheme: Scheme) -> set[str]:
    """Matrix species that can ever be present: started, fed, or formed from those.

    A breadth-first walk along the steps from every species with a start value or
    a feed above zero.
    """
    sources = [n for n, v in {**scheme.initial, **scheme.feed}.items() if v > 0]
    products: dict[str, list[str]] = {}
    for step in scheme.steps:
        products.setdefault(step.reactant, []).extend(n for _, n in step.products)
    seen = set(sources)
    queue = deque(sources)
    while queue:
        for name in products.get(queue.popleft(), ()):
            if name not in seen:
                seen.add(name)
                queue.append(name)
    return seen & set(scheme.index)


def _kind_or_none(unit: str) -> Kind | None:
    try:
        return kind_of(unit)
    except ValueError:
        return None


def output_factors(scheme: Scheme, unit: str) -> np.ndarray:
    r"""Per matrix species, the factor from the scheme's unit to the output ``unit``.

    .. math:: c_i^{\mathrm{out}} = f_i\, c_i, \qquad
              f_i = \frac{u_\mathrm{scheme}\, M_i / 1000}{u_\mathrm{out}}
              \ \text{(mass units)}, \qquad
              f_i = \frac{100}{\sum_j c_j(0)} \ \text{(\% of applied)}

    with :math:`u` the SI factors of the units and :math:`M_i` [g/mol].

    Parameters
    ----------
    scheme : Scheme
    unit : str
        An amount or mass unit of the scheme's basis (``mmol/L``, ``mg/L``; ``mg/kg``
        for a scheme per mass of soil), or :data:`PERCENT_OF_APPLIED`.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_species,)``.

    Raises
    ------
    OutputUnitError
        For a unit of another basis, a mass unit where a species that can be present
        has no molar mass, and "% of applied" with a feed or nothing applied.

    Examples
    --------
    Closed forms: a mass concentration is the amount concentration times the molar mass
    (mmol/L times g/mol is mg/L), 1 mmol/L is 1000 umol/L, and "% of applied" divides by
    the 2 mmol/L applied:

    >>> from kinetics import parse
    >>> s = parse("A -> B  k1 = 0.1 1/s\nmolar_mass A = 180.16 g/mol, B = 90.08 g/mol\n"
    ...           "start A = 2 mmol/L")
    >>> [output_factors(s, u).tolist() for u in ("mg/L", "umol/L", "% of applied")]
    [[180.16, 90.08], [1000.0, 1000.0], [50.0, 50.0]]
    """
    n = len(scheme.species)
    if is_percent_of_applied(unit):
        applied = float(np.sum(scheme.initial_vector))
        if scheme.feed:
            raise OutputUnitError(
                f"'{PERCENT_OF_APPLIED}' is not defined for a scheme with a feed (the "
                "applied amount grows with time)",
                f"choose a unit such as {scheme.concentration_unit}",
            )
        if not applied > 0:
            raise OutputUnitError(
                f"'{PERCENT_OF_APPLIED}' needs start values above 0 (nothing is applied)",
                "add a start line, e.g. start A = 1 mg/kg",
            )
        return np.full(n, 100.0 / applied)
    if unit.strip() == scheme.concentration_unit:
        return np.ones(n)
    here, there = _kind_or_none(scheme.concentration_unit), _kind_or_none(unit)
    if here is None or there is None or there.basis != here.basis or here.basis == "ratio":
        described = f"{there.article} {there.name}" if there else "no amount or mass unit"
        gives = here.plural if here else "values"
        raise OutputUnitError(
            f"the output unit {shorten(unit)!r} is {described}, but the scheme gives "
            f"{gives} ({scheme.concentration_unit})",
            "report in an amount or a mass unit of the same kind (e.g. mmol/L or mg/L for "
            f"a scheme per volume, mmol/kg or mg/kg per mass of soil) or in "
            f"'{PERCENT_OF_APPLIED}'",
        )
    ratio = float(here.factor / there.factor)
    if there.substance == "amount":
        return np.full(n, ratio)
    present = reachable(scheme)
    missing = [s.name for s in scheme.species if s.molar_mass is None and s.name in present]
    if missing:
        raise OutputUnitError(
            f"{', '.join(missing[:5])}{' ...' if len(missing) > 5 else ''} "
            f"{'has' if len(missing) == 1 else 'have'} no molar mass, so "
            f"{'its' if len(missing) == 1 else 'their'} {shorten(unit)} cannot be computed",
            f"give formula {missing[0]} = ... or molar_mass {missing[0]} = ... g/mol in the "
            f"file, or report in an amount unit ({scheme.concentration_unit}) or in "
            f"'{PERCENT_OF_APPLIED}'",
        )
    masses = np.array([s.molar_mass or 0.0 for s in scheme.species], dtype=float)
    return ratio * masses / 1000.0
