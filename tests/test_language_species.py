"""Species, formulas and atom balance (kinetics/language/species.py).

Molar masses from standard atomic weights (IUPAC 2021 abridged values, through the
periodictable package): H2O2 = 2(1.008) + 2(15.999) = 34.014 g/mol.
"""

from __future__ import annotations

import pytest

from kinetics.language.messages import Diagnostics
from kinetics.language.names import species_order
from kinetics.language.reader import read_statements
from kinetics.language.species import check_atom_balance, make_species
from kinetics.language.values import ListedValues
from kinetics.scheme import Reaction, Species


def species_of(text: str, excess=frozenset()):
    parsed = read_statements(text, "t")
    values = ListedValues()
    for s in parsed.lists:
        for item in s.items:
            if s.kind == "formula":
                values.formulas[item.name] = (item, s.line)
            elif s.kind == "molar_mass":
                values.molar_masses[item.name] = float(item.value.number)
    found = Diagnostics("t")
    return make_species(species_order(parsed.reactions), frozenset(excess), values, found), found


def test_formulas_give_molar_masses_and_excess_species_are_apart():
    (matrix, held), found = species_of("A + W -> B  k\nformula A = H2O2, W = H2O", {"W"})
    assert found.errors == []
    assert [s.name for s in matrix] == ["A", "B"]
    assert [s.name for s in held] == ["W"]
    assert matrix[0].molar_mass == pytest.approx(34.014, abs=1e-3)
    assert held[0].excess
    assert held[0].formula == "H2O"


def test_formula_and_molar_mass_together_and_a_bad_formula():
    (matrix, _), found = species_of("A -> B  k\nformula A = H2O, B = Xq2\nmolar_mass A = 18 g/mol")
    assert [e.problem for e in found.errors] == [
        "A has both a formula and a molar mass",
        "the formula 'Xq2' of B does not parse (unknown element Xq)",
    ]
    assert matrix[1].formula is None


def test_atom_balance_is_reported_at_the_arrow():
    parsed = read_statements("A -> B + C  k", "t")
    reaction = Reaction(((1.0, "A"),), ((1.0, "B"), (1.0, "C")), False, ("k",), 1, "")
    found = Diagnostics("t")
    species = [Species("A", "H2O2"), Species("B", "H2O"), Species("C", "O2")]
    check_atom_balance([reaction], parsed.reactions, species, found)
    # 2 H2O2 -> 2 H2O + O2 balances; H2O2 -> H2O + O2 has one O too many on the right
    assert found.errors[0].headline() == (
        "t:1:3: atoms do not balance in A -> B + C: left H2 O2, right H2 O3; correct the "
        "formulas or coefficients, or write 'balance: lumped' for a lumped scheme"
    )


def test_no_formulas_nothing_to_balance():
    found = Diagnostics("t")
    check_atom_balance([], [], [Species("A")], found)
    assert found.errors == []
