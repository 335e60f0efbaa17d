"""Start, excess and feed values, formulas and molar masses of a scheme, resolved.

Each value is checked against the species (it must take part in a reaction),
against the other statements (a species in excess has no start value; nothing
is given twice) and against the concentration unit of the file, then scaled
exactly to that unit.  Values written as masses wait for the molar masses and
are converted by :func:`convert_masses`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from fractions import Fraction

from ..amounts import kind_of
from ..scheme import Species
from ..units import UnitSpec, describe_dimension
from .concentrations import ConcentrationUnit, family_error
from .messages import WHAT_LISTED, Diagnostics
from .quantities import Value, exact, scaled, unit_of
from .source import Line
from .statements import Item, ListStatement

__all__ = [
    "AMOUNT_KINDS",
    "ListedValues",
    "ValueContext",
    "activity_basis",
    "convert_masses",
    "resolve_values",
]

#: The list statements whose values are amounts or concentrations.
AMOUNT_KINDS = ("start", "excess", "feed")
#: The dimension of a molar mass in SI base units.
_MOLAR_MASS = {"[mass]": 1, "[substance]": -1}


@dataclass(frozen=True, slots=True)
class ValueContext:
    """What the values of a file are checked against.

    Attributes
    ----------
    species : Mapping of str
        The species of the reactions (a value for any other name is an error).
    excess : frozenset of str
        The species declared in excess.
    failed_names : frozenset of str
        Words on lines that failed to read (no follow-on errors about them).
    unit : ConcentrationUnit
        The concentration unit of the file.
    """

    species: Mapping[str, Line]
    excess: frozenset[str]
    failed_names: frozenset[str]
    unit: ConcentrationUnit


class ListedValues:
    """The values of the list statements of one file.

    Attributes
    ----------
    values : dict
        ``"start"``, ``"excess"``, ``"feed"`` -> species -> value in the scheme's
        concentration unit (a feed per second).
    si : dict
        The same keys -> species -> the exact value in SI units (None while a
        mass waits for its molar mass).
    formulas : dict of str to (Item, Line)
        The ``formula`` items.
    molar_masses : dict of str to float
        The ``molar_mass`` values [g/mol].
    pending : list of (ListStatement, Item, Fraction)
        The values written as masses, with their SI mass, for :func:`convert_masses`.
    activities : dict of str to (Fraction, Item, Line)
        Start values written as activities: the SI activity [Bq, or Bq per unit of the
        basis], converted to amounts once the decay constants are known
        (:func:`kinetics.language.activities.start_from_activities`).
    """

    def __init__(self) -> None:
        self.activities: dict[str, tuple[Fraction, Item, Line]] = {}
        self.values: dict[str, dict[str, float]] = {kind: {} for kind in AMOUNT_KINDS}
        self.si: dict[str, dict[str, Fraction | None]] = {kind: {} for kind in AMOUNT_KINDS}
        self.formulas: dict[str, tuple[Item, Line]] = {}
        self.molar_masses: dict[str, float] = {}
        self.pending: list[tuple[ListStatement, Item, Fraction]] = []


def resolve_values(
    lists: Iterable[ListStatement], context: ValueContext, found: Diagnostics
) -> ListedValues:
    r"""Check and scale every item of the list statements; errors go to ``found``.

    Parameters
    ----------
    lists : iterable of ListStatement
        The list statements of the file, in order.
    context : ValueContext
        Species, excess names and the concentration unit.
    found : Diagnostics
        Where errors go.

    Returns
    -------
    ListedValues

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.language.concentrations import choose_unit
    >>> from kinetics.language.names import species_order
    >>> parsed = read_statements("A -> B  k1 = 1 1/s\nstart A = 1 M, B = 20 mmol/L", "t")
    >>> context = ValueContext(
    ...     species_order(parsed.reactions), frozenset(), frozenset(), choose_unit(parsed.lists)
    ... )
    >>> resolve_values(parsed.lists, context, Diagnostics("t")).values["start"]
    {'A': 1.0, 'B': 0.02}
    """
    out = ListedValues()
    seen: dict[tuple[str, str], int] = {}
    for s in lists:
        for item in s.items:
            if _placed(s, item, context, seen, found):
                _resolve_item(s, item, context, out, found)
    return out


def _placed(
    s: ListStatement,
    item: Item,
    context: ValueContext,
    seen: dict[tuple[str, str], int],
    found: Diagnostics,
) -> bool:
    """True when ``item`` names a species that may have this value, once."""
    if item.name not in context.species:
        if item.name in context.failed_names:
            return False  # on a line that failed to read: that error is the cause
        hint = found.suggest(item.name, context.species) or (
            "a species must take part in a reaction before it can be given " + WHAT_LISTED[s.kind]
        )
        found.error(s.line, f"{item.name} occurs in no reaction", item.name_column, item.name, hint)
        return False
    if s.kind in ("start", "feed") and item.name in context.excess:
        assert item.value is not None
        found.error(
            s.line,
            f"{item.name} is held in excess (constant), so it has no "
            f"{'start value' if s.kind == 'start' else 'feed'}",
            item.name_column,
            item.name,
            f"give its constant concentration once: excess {item.name} = {item.value.text}",
        )
        return False
    key = (s.kind, item.name)
    if key in seen:
        found.error(
            s.line,
            f"{s.kind.replace('_', ' ')} of {item.name} is given twice (first on line {seen[key]})",
            item.name_column,
            item.name,
            "give each value once",
        )
        return False
    seen[key] = s.line.number
    return True


def _resolve_item(
    s: ListStatement, item: Item, context: ValueContext, out: ListedValues, found: Diagnostics
) -> None:
    """One item of a list that names a species, checked and scaled into ``out``."""
    if s.kind == "formula":
        out.formulas[item.name] = (item, s.line)
        return
    v = item.value
    assert v is not None  # every item but a formula has a value
    if s.kind == "molar_mass":
        grams = _molar_mass(s, item.name, v, found)
        if grams is not None:
            out.molar_masses[item.name] = grams
        return
    example = "mol/L" if s.kind != "feed" else "mol/L/min"
    spec = unit_of(s.line, v, f"{s.kind} {item.name}", example)
    if not isinstance(spec, UnitSpec):
        found.add(spec)
        return
    if s.kind == "start" and activity_basis(spec) is not None:
        _activity(s, item, spec, context.unit, out, found)
        return
    kind = kind_of(v.unit, per_time=s.kind == "feed")
    if kind is None or kind.basis != context.unit.family.basis:
        found.add(family_error(s, item, spec, kind, context.unit))
        return
    si = scaled(v.number, spec.factor)
    if kind.substance == "mass":  # an amount once the molar masses are known
        out.pending.append((s, item, si))
        out.si[s.kind][item.name] = None
        return
    value = _in_unit(s, item, si, context.unit, found)
    if value is not None:
        out.values[s.kind][item.name] = value
        out.si[s.kind][item.name] = si


#: The basis of an activity: the dimension besides 1/time -> the basis' name.
_ACTIVITY_BASES = {(): "absolute", (("[length]", 3),): "volume", (("[mass]", 1),): "soil"}


def activity_basis(spec: UnitSpec) -> str | None:
    """The basis of an activity unit, or None for any other unit.

    ``"absolute"`` for an activity (Bq), ``"volume"`` per volume (Bq/L), ``"soil"`` per
    mass (Bq/kg).

    Examples
    --------
    >>> from kinetics.units import parse_unit
    >>> activity_basis(parse_unit("GBq")), activity_basis(parse_unit("MBq/L"))
    ('absolute', 'volume')
    >>> activity_basis(parse_unit("mol/L")) is None
    True
    """
    dims = spec.dims
    if spec.offset or dims.get("[time]") != -1:
        return None
    rest = tuple(sorted((k, -int(v)) for k, v in dims.items() if k != "[time]" and v))
    return _ACTIVITY_BASES.get(rest)


def _activity(
    s: ListStatement,
    item: Item,
    spec: UnitSpec,
    unit: ConcentrationUnit,
    out: ListedValues,
    found: Diagnostics,
) -> None:
    """A start value written as an activity, kept for the decay constants.

    It is refused when the file's values are of another basis.
    """
    v = item.value
    assert v is not None
    family = unit.family
    if activity_basis(spec) != family.basis or family.substance == "number":
        per = {"absolute": "", "volume": " per volume", "soil": " per mass"}
        origin = f" ({unit.origin})" if unit.origin else ""
        found.error(
            s.line,
            f"start {item.name} = {v.text} is an activity{per[activity_basis(spec) or '']}, "
            f"but this file gives {family.plural}{origin}",
            v.unit_column,
            v.unit,
            "an activity sets a number of atoms: give activities with amounts (GBq with "
            "mol), activities per volume with concentrations (MBq/L with mol/L)",
        )
        return
    out.activities[item.name] = (scaled(v.number, spec.factor), item, s.line)


def _molar_mass(s: ListStatement, name: str, v: Value, found: Diagnostics) -> float | None:
    """The molar mass ``v`` of ``name`` [g/mol], or None with the reason in ``found``."""
    spec = unit_of(s.line, v, f"the molar mass of {name}", "g/mol")
    if not isinstance(spec, UnitSpec):
        found.add(spec)
        return None
    if spec.dims != _MOLAR_MASS:
        found.error(
            s.line,
            f"the molar mass of {name} is {v.text}, "
            f"which is {describe_dimension(spec.dims)}, not a molar mass",
            v.unit_column if v.unit else v.column,
            v.unit or v.number,
            "write a molar mass such as 180.2 g/mol",
        )
        return None
    grams = exact(scaled(v.number, spec.factor * 1000))
    if grams is None or grams == 0:
        found.error(
            s.line,
            f"the molar mass of {name} is {v.text}, which is "
            + ("zero" if grams == 0 else "too large"),
            v.column,
            v.text,
            "write a molar mass such as 180.2 g/mol",
        )
        return None
    return grams


def _in_unit(
    s: ListStatement, item: Item, si: Fraction, unit: ConcentrationUnit, found: Diagnostics
) -> float | None:
    """The SI value ``si`` in the file's unit, or None when a double cannot hold it."""
    value = exact(si / unit.factor)
    if not value and si:
        assert item.value is not None
        size = "too large" if value is None else "too small"
        found.error(
            s.line,
            f"{s.kind} {item.name} = {item.value.text} is {size} in {unit.unit}"
            + ("" if value is None else " (it would become 0)"),
            item.value.column,
            item.value.text,
            "check the value and its unit",
        )
        return None
    return value


def convert_masses(
    values: ListedValues, species: Iterable[Species], unit: ConcentrationUnit, found: Diagnostics
) -> None:
    r"""Turn the values written as masses into amounts: n = m / M (M in g/mol).

    Parameters
    ----------
    values : ListedValues
        The resolved values; the pending masses are converted in place.
    species : iterable of Species
        Every species with its molar mass (None when it has none).
    unit : ConcentrationUnit
        The concentration unit of the file.
    found : Diagnostics
        Where errors go (a mass of a species without a molar mass).

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.language.concentrations import choose_unit
    >>> from kinetics.language.names import species_order
    >>> parsed = read_statements("A -> B  k1 = 1 1/s\nstart A = 18 mg/L", "t")
    >>> chosen = choose_unit(parsed.lists)
    >>> context = ValueContext(species_order(parsed.reactions), frozenset(), frozenset(), chosen)
    >>> listed = resolve_values(parsed.lists, context, Diagnostics("t"))
    >>> convert_masses(listed, [Species("A", molar_mass=180.0)], chosen, Diagnostics("t"))
    >>> chosen.unit, listed.values["start"]
    ('mmol/L', {'A': 0.1})
    """
    masses = {sp.name: sp.molar_mass for sp in species}
    what = {"start": "start value", "excess": "excess value", "feed": "feed"}
    for s, item, si in values.pending:
        v = item.value
        assert v is not None
        grams = masses.get(item.name)
        if grams is None:
            found.error(
                s.line,
                f"the {what[s.kind]} of {item.name} is a mass ({v.text}); the scheme "
                f"counts molecules, and {item.name} has no molar mass to convert it",
                item.name_column,
                item.name,
                f"give its formula (formula {item.name} = ...) or its molar mass "
                f"(molar_mass {item.name} = ... g/mol), or write the value as an amount "
                f"({unit.unit})",
            )
            continue
        amount = si * 1000 / Fraction(grams)  # kg / (kg/mol) -> mol, per basis
        value = _in_unit(s, item, amount, unit, found)
        if value is not None:
            values.values[s.kind][item.name] = value
            values.si[s.kind][item.name] = amount
