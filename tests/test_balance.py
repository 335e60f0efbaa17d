"""Atom balance, the numerical mass balance m·K = 0, and molar masses from formulas."""

from __future__ import annotations

import numpy as np
import pytest

from kinetics import parse
from kinetics.balance import atom_balance, element_counts, formula_mass, mass_balance, parse_formula
from kinetics.scheme import Reaction

# Molar masses from the IUPAC standard atomic weights (conventional values:
# H 1.008, C 12.011, N 14.007, O 15.999, Na 22.990, Cl 35.45, Ca 40.078); from memory.
HANDBOOK = {
    "C6H12O6": 180.156,  # glucose
    "H2O": 18.015,
    "CO2": 44.009,
    "NaCl": 58.44,
    "CH3COOH": 60.052,  # acetic acid
    "C2H6O": 46.069,  # ethanol
    "C12H22O11": 342.297,  # sucrose
    "Ca(OH)2": 74.092,
    "C4H8O2": 88.106,  # ethyl acetate
    "NH3": 17.031,
}


@pytest.mark.parametrize(("formula", "grams"), sorted(HANDBOOK.items()))
def test_molar_mass_from_formula_matches_handbook(formula, grams):
    # atol: the handbook values above are rounded to 0.001 g/mol (0.01 for NaCl)
    assert formula_mass(formula) == pytest.approx(grams, rel=0, abs=0.006)


def test_element_counts():
    assert element_counts("CH3COOH") == {"C": 2.0, "H": 4.0, "O": 2.0}
    assert element_counts("Ca(OH)2") == {"Ca": 1.0, "O": 2.0, "H": 2.0}


@pytest.mark.parametrize("bad", ["", "h2o", "Xy2", "H2O@1", "Ca(OH2", "(H2O)0", "H2O+"])
def test_bad_formulas_raise_value_error(bad):
    with pytest.raises(ValueError):  # noqa: PT011 - the parser turns it into a located error
        parse_formula(bad)


def test_atom_balance_lists_both_sides():
    reaction = Reaction(((1.0, "A"),), ((2.0, "B"),), False, ("k",))
    result = atom_balance(reaction, {"A": "C6H12O6", "B": "C3H6O2"})
    assert not result.ok
    assert result.left == {"C": 6.0, "H": 12.0, "O": 6.0}
    assert result.right == {"C": 6.0, "H": 12.0, "O": 4.0}
    assert (result.left_text, result.right_text) == ("C6 H12 O6", "C6 H12 O4")


def test_atom_balance_not_applicable_without_all_formulas():
    reaction = Reaction(((1.0, "A"),), ((1.0, "B"),), False, ("k",))
    assert atom_balance(reaction, {"A": "H2O", "B": None}) is None


def test_element_missing_on_one_side_is_an_imbalance():
    reaction = Reaction(((1.0, "A"),), ((1.0, "B"),), False, ("k",))
    assert not atom_balance(reaction, {"A": "NaCl", "B": "Na"}).ok


def test_balanced_scheme_has_zero_mass_residual():
    # glucose -> 2 lactic acid (C6H12O6 -> 2 C3H6O3), atoms balance (common practice)
    s = parse(
        "A -> 2 B  k1 = 0.3 1/s\nB -> C  k2 = 0.1 1/min\n"
        "formula A = C6H12O6, B = C3H6O3, C = C3H6O3"
    )
    balance = mass_balance(s)
    assert balance.ok
    assert balance.checked
    assert [r["atoms"] for r in balance.reactions] == ["balanced", "balanced"]
    # m^T K = 0 up to rounding of the molar masses (double precision)
    assert balance.max_relative_residual == pytest.approx(0.0, abs=1e-15)
    m = s.molar_masses
    np.testing.assert_allclose(m @ s.rate_matrix(), 0.0, rtol=0, atol=1e-12)
    assert balance.mass_changing_steps == []


def test_lumped_step_that_loses_mass_is_named():
    s = parse("A -> B  k1 = 1 1/s\nmolar_mass A = 100 g/mol, B = 80 g/mol")
    balance = mass_balance(s)
    assert not balance.ok
    # (m^T K)_A / (m_A k) = (80 - 100) / 100 (definition in kinetics.balance)
    assert balance.max_relative_residual == pytest.approx(0.2, rel=1e-15)
    assert balance.mass_changing_steps == [
        {"equation": "A -> B", "reason": "creates or destroys mass (100 g/mol in, 80 g/mol out)"}
    ]
    assert balance.reactions[0]["atoms"] == "not checked"
    assert balance.reactions[0]["reason"] == "no formula for A, B"


def test_excess_co_reactant_adds_tracked_mass_but_balances():
    # sucrose + water -> glucose + fructose: atoms balance; the tracked species gain the
    # mass of the water held in excess (18.015 / 342.297 = 0.0526, IUPAC weights, from memory)
    s = parse(
        "S + W -> G + F  k1 = 1e-4 M-1 s-1\nexcess W = 55 M\n"
        "formula S = C12H22O11, W = H2O, G = C6H12O6, F = C6H12O6"
    )
    balance = mass_balance(s)
    assert balance.ok
    assert balance.mass_changing_steps == [
        {"equation": "S + W -> G + F", "reason": "takes up mass from W (held in excess)"}
    ]
    assert balance.max_relative_residual == pytest.approx(18.015 / 342.297, rel=2e-4)


def test_step_releasing_an_excess_product_is_named():
    s = parse("A -> B + W  k1 = 1 1/s\nexcess W = 1 M\nformula A = H2O2, B = H2O, W = O")
    balance = mass_balance(s)
    assert balance.ok
    assert balance.mass_changing_steps == [
        {"equation": "A -> B + W", "reason": "releases mass as W (held in excess)"}
    ]


def test_residual_skips_columns_touching_unknown_masses():
    s = parse(
        "A -> B + C  k1 = 1 1/s\nB -> D  k2 = 2 1/s\n"
        "molar_mass A = 100 g/mol, B = 60 g/mol, D = 60 g/mol"
    )
    balance = mass_balance(s)
    # column A involves C (no molar mass): not checked; column B balances exactly
    assert balance.max_relative_residual == 0.0
    assert balance.ok


def test_nothing_to_check_without_masses():
    balance = mass_balance(parse("A -> B  k1 = 1 1/s"))
    assert not balance.checked
    assert balance.max_relative_residual is None
    assert balance.ok


def test_imbalanced_but_allowed_scheme_reports_the_imbalance():
    s = parse("A -> 2 B  k1 = 0.1 1/s\nformula A = C6H12O6, B = C3H6O2\nbalance: lumped")
    balance = mass_balance(s)
    assert not balance.ok
    assert balance.reactions[0]["atoms"] == "unbalanced"
    assert balance.reactions[0]["right"] == {"C": 6.0, "H": 12.0, "O": 4.0}
    assert balance.mass_changing_steps[0]["equation"] == "A -> 2 B"


def test_to_dict_keys():
    d = mass_balance(parse("A -> B  k1 = 1 1/s")).to_dict()
    assert set(d) == {"ok", "checked", "reactions", "max_relative_residual", "mass_changing_steps"}
