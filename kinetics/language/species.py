"""Species of a scheme with their formulas and molar masses, and the atom balance.

When every species of a reaction has a formula, its element counts must agree
on both sides; an imbalance is an error unless the file says ``balance: lumped``
(or the caller passes ``strict_balance=False``).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from ..balance import atom_balance, formula_mass, parse_formula
from ..scheme import Reaction, Species
from .messages import Diagnostics, quoted
from .reactions import ReactionStatement
from .source import Line
from .values import ListedValues

__all__ = ["check_atom_balance", "make_species"]


def make_species(
    order: Mapping[str, Line],
    excess: frozenset[str],
    values: ListedValues,
    found: Diagnostics,
) -> tuple[list[Species], list[Species]]:
    r"""The species of the matrix and those held in excess, in order of appearance.

    A formula gives the molar mass (:func:`kinetics.balance.formula_mass`); a
    species may have a formula or a molar mass, not both.

    Parameters
    ----------
    order : Mapping of str to Line
        Every species with the line of its first appearance.
    excess : frozenset of str
        The species declared in excess.
    values : ListedValues
        The resolved list statements (formulas and molar masses).
    found : Diagnostics
        Where errors go.

    Returns
    -------
    (list of Species, list of Species)

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.language.names import species_order
    >>> from kinetics.language.values import ListedValues
    >>> parsed = read_statements("A + W -> B  k1 = 1 M-1 s-1\nformula A = H2O2", "t")
    >>> values = ListedValues()
    >>> values.formulas["A"] = (parsed.lists[0].items[0], parsed.lists[0].line)
    >>> matrix, held = make_species(
    ...     species_order(parsed.reactions), frozenset({"W"}), values, Diagnostics("t")
    ... )
    >>> [(s.name, s.formula, round(s.molar_mass, 3)) for s in matrix[:1]], held[0].name
    ([('A', 'H2O2', 34.014)], 'W')
    """
    formulas: dict[str, str] = {}
    masses = dict(values.molar_masses)
    for name, (item, line) in values.formulas.items():
        try:
            parse_formula(item.formula)
        except ValueError as exc:
            col = line.code.find(item.formula, item.name_column - 1) + 1
            found.error(
                line,
                f"the formula {quoted(item.formula)} of {name} does not parse ({exc})",
                col,
                item.formula,
                "write element symbols with counts, e.g. C6H12O6 or Ca(OH)2",
            )
            continue
        formulas[name] = item.formula
        if name in masses:
            found.error(
                line,
                f"{name} has both a formula and a molar mass",
                item.name_column,
                name,
                "give one of them; the molar mass follows from the formula",
            )
            continue
        masses[name] = formula_mass(item.formula)
    matrix: list[Species] = []
    held: list[Species] = []
    for name, line in order.items():
        in_excess = name in excess
        sp = Species(name, formulas.get(name), masses.get(name), in_excess, line.number)
        (held if in_excess else matrix).append(sp)
    return matrix, held


def check_atom_balance(
    reactions: Sequence[Reaction],
    statements: Sequence[ReactionStatement],
    species: Sequence[Species],
    found: Diagnostics,
) -> None:
    """Report every reaction whose element counts differ between its sides.

    Reactions with a species without formula are not checked
    (:func:`kinetics.balance.atom_balance`).  Call only when imbalance is an error.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.scheme import Reaction
    >>> parsed = read_statements("A -> B  k1 = 1 1/s", "t")
    >>> found = Diagnostics("t")
    >>> reaction = Reaction(((1.0, "A"),), ((1.0, "B"),), False, ("k1",), 1, "")
    >>> species = [Species("A", "H2O"), Species("B", "H2")]
    >>> check_atom_balance([reaction], parsed.reactions, species, found)
    >>> found.errors[0].problem
    'atoms do not balance in A -> B: left H2 O1, right H2'
    """
    formulas = {s.name: s.formula for s in species}
    if not any(formulas.values()):
        return  # no formulas, nothing to balance
    for reaction, statement in zip(reactions, statements, strict=True):
        result = atom_balance(reaction, formulas)
        if result is None or result.ok:
            continue
        found.error(
            statement.line,
            f"atoms do not balance in {reaction.equation}: left {result.left_text}, "
            f"right {result.right_text}",
            statement.arrow_column,
            "<=>" if reaction.reversible else "->",
            "correct the formulas or coefficients, or write 'balance: lumped' for a lumped scheme",
        )
