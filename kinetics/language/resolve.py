"""The second pass: the statements of a file resolved into a checked Scheme.

The order of the work: single statements (title, balance mode), names
(species, excess), temperature and constants, concentration unit and values,
steps and their orders, species and masses, atom balance, whole-file checks and
warnings.  Every error of the file (both passes) is raised together.
"""

from __future__ import annotations

from dataclasses import replace

from ..errors import SchemeError
from ..scheme import Scheme, Step
from .activities import start_from_activities
from .checks import check_rates, nothing_to_start, repeated_steps, unused_constants
from .concentrations import choose_unit
from .constants import resolve_definitions, resolve_temperature
from .messages import Diagnostics
from .names import ExcessDeclarations, single, species_order
from .reader import ParsedFile
from .requirements import resolve_requirements
from .schedule import Outline, operation_names, resolve_timeline
from .species import check_atom_balance, make_species
from .statements import BalanceStatement, TitleStatement
from .steps import StepBuilder
from .values import ValueContext, convert_masses, resolve_values

__all__ = ["resolve"]


def resolve(parsed: ParsedFile, strict_balance: bool = True) -> Scheme:
    r"""The checked scheme of a file read by :func:`~kinetics.language.reader.read_statements`.

    Parameters
    ----------
    parsed : ParsedFile
        The first pass.
    strict_balance : bool, optional
        When False, an atom imbalance is not an error (as with ``balance: lumped``).

    Returns
    -------
    Scheme

    Raises
    ------
    SchemeErrors
        With every error of both passes.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> scheme = resolve(read_statements("A -> B  k1 = 0.12 1/min\nstart A = 1 M", "t"))
    >>> scheme.species_names, scheme.concentration_unit
    (['A', 'B'], 'M')
    """
    found = Diagnostics(parsed.source, parsed.errors)
    title = single(parsed.statements, TitleStatement, "title", found)
    balance = single(parsed.statements, BalanceStatement, "balance mode", found)
    allow_imbalance = (balance is not None and balance.mode == "lumped") or not strict_balance
    if not parsed.reactions and not found.errors:
        _no_reactions(parsed, found)
    excess = ExcessDeclarations(parsed.lists)
    order = species_order(parsed.reactions)
    temperature = resolve_temperature(parsed, found)
    unit = choose_unit(parsed.lists)
    context = ValueContext(order, excess.names, parsed.failed_names, unit)
    values = resolve_values(parsed.lists, context, found)
    definitions = resolve_definitions(parsed, temperature, found, order)
    constants = definitions.constants
    builder = StepBuilder(found, excess.names, excess.dims, values.si["excess"], constants)
    reactions, steps = builder.build(parsed.reactions)
    for rest in definitions.untracked:  # the share of a parent's decays no branch takes
        if any(s.reaction == rest.reaction for s in steps):
            steps.append(Step(rest.parent, (), rest.name, (), rest.reaction))
    matrix, held = make_species(order, excess.names, values, found)
    convert_masses(values, matrix + held, unit, found)
    if not allow_imbalance:
        check_atom_balance(reactions, parsed.reactions, matrix + held, found)
    repeated_steps(steps, parsed.reactions, found)
    outline = Outline(
        [s.name for s in matrix],
        tuple(held),
        tuple(n for n, c in constants.items() if c.value_si is None),
        unit.unit,
    )
    molar = {s.name: s.molar_mass for s in matrix}
    timeline = resolve_timeline(
        parsed.statements, outline, unit, definitions.quantities, molar, found
    )
    found.raise_if_any()
    unused_constants(
        parsed.statements,
        parsed.reactions,
        found,
        definitions.used | operation_names(parsed.statements),
        definitions.quantities,
    )
    start, feed = values.values["start"], values.values["feed"]
    activities = {name: float(a > 0) for name, (a, _, _) in values.activities.items()}
    nothing_to_start({**start, **activities}, feed, parsed.lists, parsed.reactions, found)
    scheme = Scheme(
        species=tuple(matrix),
        excess_species=tuple(held),
        reactions=tuple(reactions),
        steps=tuple(steps),
        constants=constants,
        initial=start,
        excess=values.values["excess"],
        feed=feed,
        temperature=temperature.kelvin,
        concentration_unit=unit.unit,
        written_unit=unit.written,
        title=title.text if title is not None else "",
        source=parsed.source,
        text=parsed.text,
        allow_imbalance=allow_imbalance,
        warnings=tuple(found.warnings),
        quantities=definitions.quantities,
        dependencies=definitions.graph,
        timeline=timeline,
        _excess_si={k: v for k, v in values.si["excess"].items() if v is not None},
        _unit_factor=unit.factor,
    )
    check_rates(scheme, parsed.reactions, found)
    found.raise_if_any()
    scheme = start_from_activities(scheme, values.activities, found)
    requirements = resolve_requirements(parsed.statements, scheme, unit, found)
    found.raise_if_any()
    return replace(scheme, requirements=requirements) if requirements else scheme


def _no_reactions(parsed: ParsedFile, found: Diagnostics) -> None:
    """Raise the one error of a file without reactions (and without other errors)."""
    if not parsed.text.strip() or not parsed.statements:
        problem = "the scheme is empty"
    else:
        problem = "the scheme has no reactions"
    hint = "write at least one reaction, e.g. A -> B    k1 = 0.1 1/min"
    found.add(SchemeError(problem, parsed.source, 0, 0, "", "", hint))
    found.raise_if_any()
