"""Start, excess and feed values (kinetics/language/values.py).

Conversions: 1 mmol/L = 1e-3 mol/L; n = m / M for a mass m of a species of molar mass M
(definition of the mole, SI brochure, 9th edition, 2019, section 2.3.1).
"""

from __future__ import annotations

from fractions import Fraction

from kinetics.language.concentrations import choose_unit
from kinetics.language.messages import Diagnostics
from kinetics.language.names import ExcessDeclarations, species_order
from kinetics.language.reader import read_statements
from kinetics.language.values import ValueContext, convert_masses, resolve_values
from kinetics.scheme import Species


def resolved(text: str):
    parsed = read_statements(text, "t")
    chosen = choose_unit(parsed.lists)
    excess = ExcessDeclarations(parsed.lists).names
    context = ValueContext(species_order(parsed.reactions), excess, parsed.failed_names, chosen)
    found = Diagnostics("t")
    return resolve_values(parsed.lists, context, found), found, chosen


def test_values_in_the_file_unit_and_exact_si():
    values, found, _ = resolved(
        "A + W -> B  k = 1 M-1 s-1\nstart A = 1 mol/L, B = 20 mmol/L\nexcess W = 55 M\n"
        "feed A = 0.6 mol/L/min\nmolar_mass B = 180 g/mol"
    )
    assert found.errors == []
    assert values.values["start"] == {"A": 1.0, "B": 0.02}
    assert values.si["start"]["B"] == Fraction(20)  # mol/m^3
    assert values.values["feed"] == {"A": 0.01}  # per second
    assert values.values["excess"] == {"W": 55.0}
    assert values.molar_masses == {"B": 180.0}


def test_placement_errors():
    _, found, _ = resolved(
        "A + W -> B  k = 1 M-1 s-1\nexcess W = 55 M\nstart W = 1 M, Q = 1 M, A = 1 M, A = 2 M"
    )
    assert [e.headline() for e in found.errors] == [
        "t:3:7: W is held in excess (constant), so it has no start value; give its constant "
        "concentration once: excess W = 1 M",
        "t:3:16: Q occurs in no reaction; a species must take part in a reaction before it "
        "can be given a start value",
        "t:3:34: start of A is given twice (first on line 3); give each value once",
    ]


def test_a_misspelt_species_gets_a_suggestion():
    _, found, _ = resolved("Ester -> Acid  k = 1 1/s\nstart Estr = 1 M")
    assert found.errors[0].hint == "did you mean Ester?"


def test_names_on_failed_lines_are_not_reported_again():
    _, found, _ = resolved("A -> B  k = 1 1/s\nC => D  k2\nstart C = 1 M")
    assert found.errors == []


def test_molar_mass_errors():
    _, found, _ = resolved("A -> B  k = 1 1/s\nmolar_mass A = 1 g, B = 0 g/mol")
    assert [e.problem for e in found.errors] == [
        "the molar mass of A is 1 g, which is a mass, not a molar mass",
        "the molar mass of B is 0 g/mol, which is zero",
    ]


def test_masses_wait_for_their_molar_mass():
    values, found, chosen = resolved("A -> B  k = 1 1/s\nstart A = 18 mg/L, B = 1 mg/L")
    assert values.si["start"] == {"A": None, "B": None}
    assert chosen.unit == "mmol/L"
    convert_masses(values, [Species("A", molar_mass=180.0), Species("B")], chosen, found)
    assert values.values["start"] == {"A": 0.1}
    assert values.si["start"]["A"] == Fraction(1, 10)  # 18e-3 g/L / 180 g/mol = 1e-4 mol/L
    assert [e.problem for e in found.errors] == [
        "the start value of B is a mass (1 mg/L); the scheme counts molecules, and B has no "
        "molar mass to convert it"
    ]


def test_a_value_too_small_for_the_unit():
    _, found, _ = resolved("A -> B  k = 1 1/s\nstart A = 1 mol/L, B = 1e-320 umol/L")
    assert [e.problem for e in found.errors] == [
        "start B = 1e-320 umol/L is too small in mol/L (it would become 0)"
    ]
