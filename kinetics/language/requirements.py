"""``require`` lines resolved: the species, and the threshold in the scheme's unit.

A threshold is a concentration or amount (converted exactly to the file's unit; a mass
with the species' molar mass), a percentage of the species' own start value (``require
API >= 90 %``) or of another species' start value (``require IMP <= 0.15 % of API``).
"""

from __future__ import annotations

from collections.abc import Iterable
from fractions import Fraction

from ..amounts import kind_of
from ..requirements import Requirement
from ..scheme import Scheme
from ..units import UnitSpec, describe_dimension
from .concentrations import ConcentrationUnit
from .messages import Diagnostics
from .quantities import exact, scaled, unit_of
from .statements import REQUIRE_EXAMPLE, RequireStatement

__all__ = ["resolve_requirements"]


def resolve_requirements(
    statements: Iterable[object], scheme: Scheme, unit: ConcentrationUnit, found: Diagnostics
) -> tuple[Requirement, ...]:
    r"""Every ``require`` line of the file as a :class:`~kinetics.requirements.Requirement`.

    Parameters
    ----------
    statements : iterable
        The statements of the file.
    scheme : Scheme
        The checked scheme (species, start values, molar masses).
    unit : ConcentrationUnit
        The file's concentration unit.
    found : Diagnostics
        Where errors go.

    Returns
    -------
    tuple of Requirement

    Examples
    --------
    >>> from kinetics import parse
    >>> text = "API -> IMP  k1 = 0.01 1/d\nstart API = 2 mmol/L\nrequire IMP <= 0.15 % of API"
    >>> [(r.species, r.comparison, r.threshold) for r in parse(text).requirements]
    [('IMP', '<=', 0.003)]
    """
    out = []
    for s in statements:
        if isinstance(s, RequireStatement):
            threshold = _threshold(s, scheme, unit, found)
            if threshold is not None:
                out.append(
                    Requirement(
                        s.text, s.species, s.comparison, threshold, s.share, s.of, s.line.number
                    )
                )
    return tuple(out)


def _threshold(
    s: RequireStatement, scheme: Scheme, unit: ConcentrationUnit, found: Diagnostics
) -> float | None:
    for name, column in ((s.species, s.species_column), (s.of, s.value_column)):
        if name is not None and not _a_matrix_species(s, name, column, scheme, found):
            return None
    if s.share is not None:
        assert s.of is not None  # a percentage refers to a start value
        start = scheme.initial.get(s.of, 0.0)
        if not start > 0:
            found.error(
                s.line,
                f"{s.of} has no start value, so a percentage of it is 0",
                s.value_column,
                s.text.split(s.comparison, 1)[1].strip(),
                f"give {s.of} a start value, or the limit as a concentration, e.g. "
                f"require {s.species} {s.comparison} 2 {unit.written}",
            )
            return None
        return float(s.share * Fraction(start))
    return _in_unit(s, scheme, unit, found)


def _a_matrix_species(
    s: RequireStatement, name: str, column: int, scheme: Scheme, found: Diagnostics
) -> bool:
    if name in scheme.index:
        return True
    held = name in scheme.excess
    hint = (
        "a species held in excess keeps its concentration; require something of a species "
        "that changes"
        if held
        else found.suggest(name, scheme.index) or "name a species of a reaction"
    )
    found.error(
        s.line,
        f"{name} is held in excess (constant)" if held else f"{name} occurs in no reaction",
        column if name == s.of else s.species_column,
        name,
        hint,
    )
    return False


def _in_unit(
    s: RequireStatement, scheme: Scheme, unit: ConcentrationUnit, found: Diagnostics
) -> float | None:
    v = s.value
    assert v is not None  # a requirement has a value or a share
    if not v.unit:
        found.error(
            s.line,
            f"the limit of {s.species} is {v.number} with no unit",
            v.column,
            v.number,
            f"write it with a unit, e.g. require {s.species} {s.comparison} {v.number} "
            f"{unit.written}, or as a percentage of a start value ({REQUIRE_EXAMPLE})",
        )
        return None
    spec = unit_of(s.line, v, f"the limit of {s.species}", "mmol/L")
    if not isinstance(spec, UnitSpec):
        found.add(spec)
        return None
    kind = kind_of(v.unit)
    family = unit.family
    if kind is None or kind.basis != family.basis or "number" in (kind.substance, family.substance):
        what = describe_dimension(spec.dims) if kind is None else f"{kind.article} {kind.name}"
        origin = f" ({unit.origin})" if unit.origin else ""
        found.error(
            s.line,
            f"the limit of {s.species} is {v.text}, which is {what}, but this file gives "
            f"{family.plural}{origin}",
            v.unit_column,
            v.unit,
            f"write it in the file's kind of unit, e.g. require {s.species} {s.comparison} "
            f"{v.number} {unit.written}",
        )
        return None
    si = scaled(v.number, spec.factor)
    if kind.substance == "mass":
        grams = scheme.species_by_name(s.species).molar_mass
        if grams is None:
            found.error(
                s.line,
                f"the limit of {s.species} is a mass ({v.text}), and {s.species} has no molar "
                "mass to convert it",
                v.unit_column,
                v.unit,
                f"give its formula or molar mass, or write the limit as an amount ({unit.unit})",
            )
            return None
        si = si * 1000 / Fraction(grams)
    value = exact(si / unit.factor)
    if value is None:
        found.error(
            s.line, f"the limit of {s.species} is too large", v.column, v.text, "check the value"
        )
    return value
