"""The concentration unit of a scheme, and the message for a value that does not fit it.

The first start value decides the unit of the whole file (then the first excess
concentration, then the first feed); every other value must be of the same kind
(:class:`kinetics.amounts.Kind`): concentrations, amounts, masses per mass of
soil or pure numbers are not mixed in one file.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from fractions import Fraction

from ..amounts import Kind, amount_unit, kind_of
from ..errors import SchemeError
from ..units import UnitSpec, describe_dimension, parse_unit, pint_text
from .statements import Item, ListStatement

__all__ = [
    "DEFAULT_UNIT",
    "ConcentrationUnit",
    "choose_unit",
    "concentration_part",
    "family_error",
]

#: Unit of each kind when a feed is written in a form whose concentration part
#: cannot be cut out (``mol/(L*min)``), with its exact factor to SI.
_FAMILY_UNITS = {
    ("amount", "volume"): ("mol/L", Fraction(1000)),
    ("amount", "absolute"): ("mol", Fraction(1)),
    ("amount", "soil"): ("mol/kg", Fraction(1)),
    ("mass", "volume"): ("g/L", Fraction(1)),
    ("mass", "absolute"): ("g", Fraction(1, 1000)),
    ("mass", "soil"): ("g/kg", Fraction(1, 1000)),
    ("number", "ratio"): ("1", Fraction(1)),
}
#: Examples of a value of each kind of list (in hints).
_EXAMPLES = {"start": "0.5 mol/L", "excess": "55 mol/L", "feed": "0.01 mol/L/min"}


@dataclass(frozen=True, slots=True)
class ConcentrationUnit:
    """The unit every concentration of a scheme is kept in.

    Attributes
    ----------
    unit : str
        The unit (the amount twin of a mass unit: ``mg/L`` -> ``mmol/L``).
    factor : Fraction
        Its exact factor to SI.
    family : Kind
        The kind of the value that decided it.
    origin : str
        Where it came from (``"start A = 1 mg/L on line 3"``; empty for the default).
    written : str
        The unit as written (the default unit of outputs).
    """

    unit: str
    factor: Fraction
    family: Kind
    origin: str
    written: str


#: The unit of a file without concentrations.
DEFAULT_UNIT = ConcentrationUnit(
    "mol/L", Fraction(1000), Kind("amount", "volume", Fraction(1000)), "", "mol/L"
)


def choose_unit(lists: Iterable[ListStatement]) -> ConcentrationUnit:
    r"""The scheme's concentration unit: the unit of the first start value.

    Without start values, the first excess concentration, then the first feed
    (its concentration part) decides; a file whose start values are all activities
    is kept in amounts of their basis (``GBq`` -> ``mol``, ``MBq/L`` -> ``mol/L``);
    without any, ``mol/L``.  Values in mass
    units are kept as amounts: the scheme's unit is then the amount twin of the
    mass unit (``mg/L`` -> ``mmol/L``, :func:`kinetics.amounts.amount_unit`).

    Parameters
    ----------
    lists : iterable of ListStatement
        The list statements of the file.

    Returns
    -------
    ConcentrationUnit

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("feed A = 2 mg/L/h\nstart B = 1 mg/L", "t")
    >>> chosen = choose_unit(parsed.lists)
    >>> chosen.unit, chosen.written, chosen.origin
    ('mmol/L', 'mg/L', 'start B = 1 mg/L on line 2')
    """
    lists = tuple(lists)
    for kind in ("start", "excess", "feed"):
        for s in lists:
            if s.kind != kind:
                continue
            for item in s.items:
                chosen = _unit_of_item(item, s, kind)
                if chosen is not None:
                    return chosen
    for s in lists:  # only activities: amounts of their basis (GBq -> mol, MBq/L -> mol/L)
        for item in s.items if s.kind == "start" else ():
            chosen = _unit_of_activity(item, s)
            if chosen is not None:
                return chosen
    return DEFAULT_UNIT


def _unit_of_activity(item: Item, s: ListStatement) -> ConcentrationUnit | None:
    """The unit a start value written as an activity gives a file without amounts."""
    if item.value is None:
        return None
    try:
        dims = parse_unit(item.value.unit).dims
    except ValueError:
        return None
    if dims.get("[time]") != -1:
        return None
    dims.pop("[time]")
    unit = {(): "mol", (("[length]", -3),): "mol/L", (("[mass]", -1),): "mol/kg"}.get(
        tuple(sorted((k, int(v)) for k, v in dims.items() if v))
    )
    if unit is None:
        return None
    kind = kind_of(unit)
    assert kind is not None  # an amount unit
    origin = f"start {item.name} = {item.value.text} on line {s.line.number}"
    return ConcentrationUnit(unit, kind.factor, kind, origin, unit)


def _unit_of_item(item: Item, s: ListStatement, kind: str) -> ConcentrationUnit | None:
    """The unit ``item`` would give the file, or None when its unit says nothing."""
    if item.value is None:
        return None
    try:
        found = kind_of(item.value.unit, per_time=kind == "feed")
    except ValueError:
        return None  # reported when the item itself is checked
    if found is None:
        return None
    origin = f"{kind} {item.name} = {item.value.text} on line {s.line.number}"
    unit, factor = _written_unit(item.value.unit, kind, found)
    if found.substance == "mass":
        amount = kind_of(unit)
        assert amount is not None  # the unit of a mass kind is a mass unit
        return ConcentrationUnit(*amount_unit(amount), found, origin, unit)
    return ConcentrationUnit(unit, factor, found, origin, unit)


def _written_unit(text: str, kind: str, found: Kind) -> tuple[str, Fraction]:
    """The concentration unit a value was written in, and its SI factor.

    A feed in ``mol/L/min`` was written in ``mol/L``.
    """
    if kind != "feed":
        unit = pint_text(text) if text else "1"
        return unit, (found.factor if text else Fraction(1))
    unit = concentration_part(text)
    try:
        part = kind_of(unit) if unit else None
    except ValueError:
        part = None
    if part is None or (part.substance, part.basis) != (found.substance, found.basis):
        return _FAMILY_UNITS[(found.substance, found.basis)]
    return pint_text(unit), part.factor


def concentration_part(feed_unit: str) -> str:
    """``mol/L/min`` -> ``mol/L``: drop a trailing time division from a feed unit.

    Returns ``""`` when no time division can be cut off.

    Examples
    --------
    >>> concentration_part("mol/L/min"), concentration_part("mg/L d-1")
    ('mol/L', 'mg/L')
    >>> concentration_part("mol/(L*min)")
    ''
    """
    text = feed_unit.strip()
    m = re.match(
        r"^(?P<conc>.+?)\s*(?:/\s*(?:s|sec|min|h|hr|hour|d|day)|\s+(?:s|min|h|d)-1)$", text
    )
    return m.group("conc") if m else ""


def family_error(
    s: ListStatement, item: Item, spec: UnitSpec, kind: Kind | None, chosen: ConcentrationUnit
) -> SchemeError:
    """The error for a start, excess or feed value whose unit does not fit the file.

    Parameters
    ----------
    s : ListStatement
        The statement of the value.
    item : Item
        The value.
    spec : UnitSpec
        Its parsed unit.
    kind : Kind or None
        What the unit measures (None when it is no concentration at all).
    chosen : ConcentrationUnit
        The unit of the file.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.units import parse_unit
    >>> s = read_statements("start A = 1 mol, B = 2 mol/L", "t").lists[0]
    >>> chosen = choose_unit([s])
    >>> item = s.items[1]
    >>> spec = parse_unit(item.value.unit)
    >>> family_error(s, item, spec, kind_of(item.value.unit), chosen).problem
    'start B = 2 mol/L is a concentration, but this file gives amounts \
(start A = 1 mol on line 1)'
    """
    v = item.value
    assert v is not None  # start, excess and feed items have values
    col = v.unit_column if v.unit else v.column
    snippet = v.unit or v.number
    example = _EXAMPLES[s.kind]
    if kind is None:
        what = describe_dimension(spec.dims)
        if s.kind == "feed":
            return s.line.error(
                f"the feed of {item.name} is {v.text}, which is {what}, not a rate of input "
                "(concentration per time)",
                col,
                snippet,
                f"write e.g. feed {item.name} = {example}",
            )
        return s.line.error(
            f"{s.kind} {item.name} = {v.text} is {what}, not a concentration",
            col,
            snippet,
            f"write a concentration such as {example} (or an amount in mol)",
        )
    family = chosen.family
    origin = f" ({chosen.origin})" if chosen.origin else ""
    if s.kind == "feed":
        problem = (
            f"the feed of {item.name} is {v.text}, a feed of {kind.plural}, but "
            f"this file gives {family.plural}{origin}"
        )
    elif not v.unit:
        problem = (
            f"{s.kind} {item.name} = {v.number} has no unit, but this file gives "
            f"{family.plural}{origin}"
        )
    else:
        problem = (
            f"{s.kind} {item.name} = {v.text} is {kind.article} {kind.name}, but this "
            f"file gives {family.plural}{origin}"
        )
    return s.line.error(problem, col, snippet, _family_hint(kind, family, example))


def _family_hint(kind: Kind, family: Kind, example: str) -> str:
    if {kind.name, family.name} == {"amount", "concentration"}:
        return (
            "amounts (mol) and concentrations (mol/L) may not be mixed in one file; "
            f"write every value as {family.article} {family.name}"
        )
    if "number" not in (kind.substance, family.substance):
        return (
            "values per volume, per mass of soil and absolute amounts may not be "
            f"mixed in one file; write every value as {family.article} {family.name}"
            " (amounts and masses of one kind may be mixed)"
        )
    return f"write every value in one kind of unit, e.g. {example}"
