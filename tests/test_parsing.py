"""The scheme language (issue 2): every validation rule and the accepted syntax.

Each error test pins the exact one-line message (``headline()``: place, problem,
hint), the line and the column, so that a change of wording is a visible,
deliberate change of the contract.  The wording itself is ours ("common
practice, no source"); the numbers in the positive tests name their source.
"""

from __future__ import annotations

import math
import pickle
from fractions import Fraction

import numpy as np
import pytest

import kinetics
from kinetics import SchemeError, SchemeErrors, SchemeFileError, load, parse
from kinetics.errors import KineticsError

SRC = "t.scheme"


def errors_of(text: str, **kwargs) -> list[SchemeError]:
    with pytest.raises(SchemeErrors) as info:
        parse(text, SRC, **kwargs)
    return info.value.errors


def only_error(text: str, **kwargs) -> SchemeError:
    errors = errors_of(text, **kwargs)
    assert len(errors) == 1, [e.headline() for e in errors]
    return errors[0]


def check(error: SchemeError, headline: str, line: int, column: int, snippet: str) -> None:
    assert error.headline() == headline
    assert (error.line, error.column) == (line, column)
    assert error.snippet == snippet


# ---------------------------------------------------------------------------
# Validation: unparseable line, unknown directive


def test_unparseable_line_missing_arrow():
    e = only_error("A B C")
    check(
        e,
        "t.scheme:1:3: could not read this line: expected an arrow before 'B'; a reaction "
        "reads A -> B + 2 C  k1 = 0.1 1/s (or <=> for a reversible step)",
        1,
        3,
        "B",
    )


def test_unknown_directive():
    e = only_error("A -> B  k1 = 1 1/s\ninitial A = 1 M")
    check(
        e,
        "t.scheme:2:1: could not read this line (unknown statement 'initial'); a line is a "
        "reaction (A -> B  k1 = 0.1 1/s), a constant (k1 = 0.1 1/s) or one of title:, start, "
        "excess, feed, formula, molar_mass, temperature =, balance:, require",  # issue 15
        2,
        1,
        "initial",
    )


def test_misspelt_directive_gets_a_suggestion():
    e = only_error("A -> B  k1 = 1 1/s\nstrat A = 1 M")
    check(
        e,
        "t.scheme:2:1: could not read this line (unknown statement 'strat'); did you mean "
        "'start'? (start A = 0.5 mol/L)",
        2,
        1,
        "strat",
    )


def test_directive_without_its_equals_sign():
    e = only_error("A -> B  k1 = 1 1/s\ntemperature 60 degC")
    check(
        e,
        "t.scheme:2:1: could not read this 'temperature' statement; write e.g. "
        "temperature = 60 degC",
        2,
        1,
        "temperature",
    )


def test_error_string_shows_line_and_caret():
    e = only_error("A -> B  k1 = 1 1/s\nstrat A = 1 M")
    assert str(e).splitlines()[1:] == ["    strat A = 1 M", "    ^^^^^"]


# ---------------------------------------------------------------------------
# Validation: unknown arrow

ARROW_HINT = "write -> (or →) for an irreversible step and <=> (or ⇌) for a reversible one"


@pytest.mark.parametrize(
    ("line", "arrow", "column"),
    [
        ("A => B  k1 = 1 1/s", "=>", 3),
        ("A <-> B  k1 = 1 1/s", "<->", 3),
        ("A --> B  k1 = 1 1/s", "-->", 3),
        ("A <- B  k1 = 1 1/s", "<-", 3),
        ("A = B  k1 = 1 1/s", "=", 3),
        ("Ab ⇒ B  k1 = 1 1/s", "⇒", 4),
        ("A ↔ B  kf = 1 1/s, kr = 1 1/s", "↔", 3),
    ],
)
def test_unknown_arrow(line, arrow, column):
    e = only_error(line)
    check(e, f"t.scheme:1:{column}: unknown arrow {arrow!r}; {ARROW_HINT}", 1, column, arrow)


# ---------------------------------------------------------------------------
# Validation: units of a rate constant imply another order


def test_second_order_units_on_a_first_order_step_suggest_excess():
    e = only_error("A -> B  k1 = 0.1 M-1 s-1")
    check(
        e,
        "t.scheme:1:9: the units of k1 (M-1 s-1) imply a second-order step, but A reacts alone "
        "here (a first-order step needs 1/time); if a co-reactant is present in large excess, "
        "write it on the left (A + W -> ...) and declare it: excess W = 55 mol/L; otherwise "
        "give k1 in 1/s",
        1,
        9,
        "k1",
    )


def test_third_order_units_are_named():
    e = only_error("A -> B  k1 = 0.1 L2 mol-2 s-1")
    assert e.problem.startswith("the units of k1 (L2 mol-2 s-1) imply a third-order step")


def test_first_order_units_with_an_excess_co_reactant():
    e = only_error("A + W -> B  k1 = 0.1 1/s\nexcess W = 55 mol/L")
    check(
        e,
        "t.scheme:1:13: the units of k1 (1/s) imply a first-order step, but A reacts here with "
        "W held in excess (a pseudo-first-order step needs concentration^-1/time); give k1 in "
        "M-1 s-1: multiplied by the excess concentration it gives 1/s",
        1,
        13,
        "k1",
    )


def test_excess_in_amounts_with_a_concentration_constant():
    e = only_error("A + W -> B  k1 = 0.1 M-1 s-1\nexcess W = 5 mol")
    check(
        e,
        "t.scheme:1:13: k1 (M-1 s-1) times the excess concentration of W does not give 1/time "
        "but the dimension length^3 time^-1; use concentration units for both (e.g. M-1 s-1 "
        "with mol/L)",
        1,
        13,
        "k1",
    )


def test_rate_constant_of_no_rate_dimension():
    e = only_error("A -> B  k1 = 1 m")
    check(
        e,
        "t.scheme:1:16: rate constant k1 = 1 m is a length, not a rate constant; a first-order "
        "constant has the unit 1/time (e.g. 1/s, min-1); a pseudo-first-order one "
        "concentration^-1/time (e.g. M-1 s-1)",
        1,
        16,
        "m",
    )


def test_rate_constant_without_unit():
    e = only_error("A -> B  k1 = 0.1")
    check(
        e,
        "t.scheme:1:14: rate constant k1 has no unit; write its unit after the number, e.g. "
        "k1 = 0.1 1/s",
        1,
        14,
        "0.1",
    )


def test_unknown_unit():
    e = only_error("A -> B  k1 = 0.1 sek-1")
    check(
        e,
        "t.scheme:1:18: unknown unit 'sek-1' for rate constant k1; write a unit such as 1/s",
        1,
        18,
        "sek-1",
    )


# ---------------------------------------------------------------------------
# Validation: a second-order step with no excess declaration


def test_second_order_step_without_excess():
    e = only_error("A + B -> C  k1 = 0.1 M-1 s-1")
    check(
        e,
        "t.scheme:1:5: A and B react together on the left of this step: that is a second- or "
        "higher-order step, and this tool solves first-order schemes; if B is present in large "
        "excess, declare it: excess B = 1.0 mol/L (pseudo-first-order)",
        1,
        5,
        "B",
    )


def test_second_order_reverse_step_without_excess():
    e = only_error("A <=> B + C  kf = 1 1/s, kr = 1 M-1 s-1")
    assert e.problem.startswith("B and C react together on the right of this step")
    assert (e.line, e.column) == (1, 11)


def test_reactant_with_coefficient_two():
    e = only_error("2 A -> B  k1 = 1 1/s")
    check(
        e,
        "t.scheme:1:3: A has the coefficient 2 on the left of a first-order step; a "
        "first-order step consumes one molecule of its reactant; scale the products instead",
        1,
        3,
        "A",
    )


def test_step_that_changes_nothing():
    e = only_error("A -> A  k1 = 1 1/s")
    check(
        e,
        "t.scheme:1:1: this step turns A into A: it changes nothing; remove the line, or write "
        "the product the step forms",
        1,
        1,
        "A",
    )


def test_only_excess_species_on_the_left():
    e = only_error("W -> B  k1 = 1 1/s\nexcess W = 1 M")
    check(
        e,
        "t.scheme:1:1: every species on the left of this step is held in excess, so nothing "
        "is consumed; a first-order step needs one reacting species that is not declared "
        "'excess'",
        1,
        1,
        "W",
    )


# ---------------------------------------------------------------------------
# Validation: zero-dimension mistakes


def test_start_in_meters():
    e = only_error("A -> B  k1 = 1 1/s\nstart A = 1 meter")
    check(
        e,
        "t.scheme:2:13: start A = 1 meter is a length, not a concentration; write a "
        "concentration such as 0.5 mol/L (or an amount in mol)",
        2,
        13,
        "meter",
    )


def test_temperature_in_seconds():
    e = only_error("A -> B  k1 = 1 1/s\ntemperature = 300 s")
    check(
        e,
        "t.scheme:2:19: the temperature is given in 's', which is not a temperature unit; "
        "write the temperature in K or degC, e.g. temperature = 60 degC",
        2,
        19,
        "s",
    )


def test_temperature_without_unit():
    e = only_error("A -> B  k1 = 1 1/s\ntemperature = 300")
    check(
        e,
        "t.scheme:2:15: the temperature 300 has no unit; write it in K or degC, e.g. "
        "temperature = 300 K",
        2,
        15,
        "300",
    )


def test_molar_mass_in_grams():
    e = only_error("A -> B  k1 = 1 1/s\nmolar_mass A = 18 g")
    check(
        e,
        "t.scheme:2:19: the molar mass of A is 18 g, which is a mass, not a molar mass; write "
        "a molar mass such as 180.2 g/mol",
        2,
        19,
        "g",
    )


def test_feed_without_time():
    e = only_error("A -> B  k1 = 1 1/s\nfeed A = 1 mol/L")
    check(
        e,
        "t.scheme:2:12: the feed of A is 1 mol/L, which is a concentration (amount/volume), "
        "not a rate of input (concentration per time); write e.g. feed A = 0.01 mol/L/min",
        2,
        12,
        "mol/L",
    )


def test_activation_energy_in_kelvin():
    e = only_error(
        "A -> B  k1 = arrhenius(A = 1e13 1/s, Ea = 95 K)\ntemperature = 300 K",
    )
    check(
        e,
        "t.scheme:1:46: the activation energy of k1 is 95 K, which is a temperature, not a "
        "molar energy; write Ea in kJ/mol or J/mol, e.g. Ea = 95 kJ/mol",
        1,
        46,
        "K",
    )


# ---------------------------------------------------------------------------
# Validation: negative, NaN and infinite values


def test_negative_rate_constant():
    e = only_error("A -> B  k1 = -0.1 1/s")
    check(
        e,
        "t.scheme:1:14: rate constant k1 is negative (-0.1); this value cannot be negative; "
        "write e.g. 0.12 1/min",
        1,
        14,
        "-0.1",
    )


def test_negative_start_value():
    e = only_error("A -> B  k1 = 0.1 1/s\nstart A = -1 mol/L")
    check(
        e,
        "t.scheme:2:11: the start value of A is negative (-1); this value cannot be negative; "
        "write e.g. 0.5 mol/L",
        2,
        11,
        "-1",
    )


def test_nan_start_value():
    e = only_error("A -> B  k1 = 0.1 1/s\nstart A = nan mol/L")
    check(
        e,
        "t.scheme:2:11: the start value of A is nan, which is not a finite number; write a "
        "finite value, e.g. 0.5 mol/L",
        2,
        11,
        "nan",
    )


def test_infinite_excess_value():
    e = only_error("A + W -> B  k1 = 0.1 M-1 s-1\nexcess W = inf mol/L")
    check(
        e,
        "t.scheme:2:12: the excess concentration of W is inf, which is not a finite number; "
        "write a finite value, e.g. 55 mol/L",
        2,
        12,
        "inf",
    )


def test_number_beyond_double_range():
    e = only_error("A -> B  k1 = 1e999 1/s")
    check(
        e,
        "t.scheme:1:14: rate constant k1 is 1e999, which is too large for a floating-point "
        "number; write a finite value, e.g. 0.12 1/min",
        1,
        14,
        "1e999",
    )


def test_value_that_overflows_after_conversion():
    e = only_error("A -> B  k1 = 1e308 1/ns")
    check(
        e,
        "t.scheme:1:14: rate constant k1 = 1e308 1/ns is too large; check the value and its unit",
        1,
        14,
        "1e308 1/ns",
    )


def test_effective_rate_that_overflows():
    e = only_error("A + W -> B  k1 = 1e300 M-1 s-1\nexcess W = 1e300 M")
    check(
        e,
        "t.scheme:1:13: the effective rate constant of A + W -> B overflows (it is beyond "
        "1.8e+308 1/s); check the value and unit of the constant and of the excess "
        "concentrations",
        1,
        13,
        "k1",
    )


def test_temperature_below_absolute_zero():
    e = only_error("A -> B  k1 = 1 1/s\ntemperature = -300 degC")
    check(
        e,
        "t.scheme:2:15: the temperature -300 degC is at or below absolute zero; write a "
        "temperature above 0 K, e.g. temperature = 25 degC",
        2,
        15,
        "-300 degC",
    )


def test_temperature_below_zero_celsius_is_fine():
    scheme = parse("A -> B  k1 = 1 1/s\ntemperature = -10 degC")
    # 0 degC = 273.15 K exactly (SI definition of the Celsius scale)
    assert scheme.temperature == pytest.approx(263.15, rel=0, abs=1e-12)


# ---------------------------------------------------------------------------
# Validation: constants used but not defined, or defined twice


def test_constant_used_but_never_defined():
    e = only_error("A -> B  k2")
    check(
        e,
        "t.scheme:1:9: rate constant k2 is used but never defined; define it, e.g. "
        "k2 = 0.1 1/s on a line of its own or on the reaction line",
        1,
        9,
        "k2",
    )


def test_undefined_constant_close_to_a_defined_one():
    e = only_error("kA1 = 1 1/s\nA -> B  kA1\nB -> C  kA2")
    assert (
        e.headline()
        == "t.scheme:3:9: rate constant kA2 is used but never defined; did you mean kA1?"
    )


def test_constant_defined_twice_with_different_values():
    e = only_error("A -> B  k1 = 0.1 1/s\nB -> C  k1 = 0.2 1/s")
    check(
        e,
        "t.scheme:2:9: rate constant k1 is defined twice with different values (0.1 1/s on "
        "line 1, 0.2 1/s here); give each constant one value, or refer to it by name alone: k1",
        2,
        9,
        "k1",
    )


def test_constant_defined_twice_with_the_same_value_is_fine():
    # 0.1 1/s and 6 1/min are the same value (1 min = 60 s, SI)
    scheme = parse("A -> B  k1 = 0.1 1/s\nB -> C  k1 = 6 1/min\nk1 = 0.1 s-1")
    assert list(scheme.constants) == ["k1"]
    np.testing.assert_array_equal(scheme.rates, [0.1, 0.1])


def test_arrhenius_constant_without_temperature():
    e = only_error("A -> B  k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)")
    check(
        e,
        "t.scheme:1:9: k3 follows the Arrhenius law but the file sets no temperature; add a "
        "line such as temperature = 60 degC",
        1,
        9,
        "k3",
    )


def test_reversible_step_needs_two_constants():
    e = only_error("A <=> B  k1 = 1 1/s")
    check(
        e,
        "t.scheme:1:10: a reversible step needs two rate constants (forward, then reverse); "
        "found 1; write e.g. kf = 2.0e-3 1/s, kr = 5.0e-4 1/s",
        1,
        10,
        "k1 = 1 1/s",
    )


def test_reaction_without_constant():
    e = only_error("A -> B")
    check(
        e,
        "t.scheme:1:7: this reaction has no rate constant; write it after the products, e.g. "
        "k1 = 0.12 1/min",
        1,
        7,
        " ",
    )


# ---------------------------------------------------------------------------
# Validation: species in start / formula / excess that occur in no reaction


def test_start_species_in_no_reaction_did_you_mean():
    e = only_error("A -> B  k1 = 0.1 1/s\nstart Aa = 1 mol/L")
    check(e, "t.scheme:2:7: Aa occurs in no reaction; did you mean A?", 2, 7, "Aa")


def test_formula_species_in_no_reaction_did_you_mean():
    e = only_error("Water -> Steam  k1 = 0.1 1/s\nformula Watr = H2O")
    check(e, "t.scheme:2:9: Watr occurs in no reaction; did you mean Water?", 2, 9, "Watr")


def test_excess_species_in_no_reaction_without_close_name():
    e = only_error("A -> B  k1 = 0.1 1/s\nexcess Z = 1 mol/L")
    check(
        e,
        "t.scheme:2:8: Z occurs in no reaction; a species must take part in a reaction before "
        "it can be given an excess concentration",
        2,
        8,
        "Z",
    )


def test_start_value_for_an_excess_species():
    e = only_error("A + W -> B  k1 = 1 M-1 s-1\nexcess W = 2 M\nstart W = 1 M")
    check(
        e,
        "t.scheme:3:7: W is held in excess (constant), so it has no start value; give its "
        "constant concentration once: excess W = 1 M",
        3,
        7,
        "W",
    )


def test_start_value_given_twice():
    e = only_error("A -> B  k1 = 1 1/s\nstart A = 1 M\nstart A = 2 M")
    check(
        e,
        "t.scheme:3:7: start of A is given twice (first on line 2); give each value once",
        3,
        7,
        "A",
    )


# ---------------------------------------------------------------------------
# Validation: formulas and atom balance


def test_formula_that_does_not_parse():
    e = only_error("A -> B  k1 = 0.1 1/s\nformula A = C6H12O6, B = C6H12O6Q")
    check(
        e,
        "t.scheme:2:26: the formula 'C6H12O6Q' of B does not parse (unknown element Q); write "
        "element symbols with counts, e.g. C6H12O6 or Ca(OH)2",
        2,
        26,
        "C6H12O6Q",
    )


@pytest.mark.parametrize("formula", ["h2o", "H2O@1.0", "Ca(OH2", "(H2O)0", "H2O 2"])
def test_malformed_formulas(formula):
    e = only_error(f"A -> B  k1 = 0.1 1/s\nformula A = {formula}")
    assert e.problem.startswith(f"the formula {formula!r} of A does not parse (")
    assert (e.line, e.column, e.snippet) == (2, 13, formula)


IMBALANCED = "A -> 2 B  k1 = 0.1 1/s\nformula A = C6H12O6, B = C3H6O2"


def test_atom_imbalance_is_an_error_listing_both_sides():
    e = only_error(IMBALANCED)
    check(
        e,
        "t.scheme:1:3: atoms do not balance in A -> 2 B: left C6 H12 O6, right C6 H12 O4; "
        "correct the formulas or coefficients, or write 'balance: lumped' for a lumped scheme",
        1,
        3,
        "->",
    )


def test_atom_imbalance_opt_out_in_the_file():
    scheme = parse(IMBALANCED + "\nbalance: lumped")
    assert scheme.allow_imbalance


def test_atom_imbalance_opt_out_from_python():
    scheme = parse(IMBALANCED, strict_balance=False)
    assert scheme.allow_imbalance


def test_balanced_reaction_with_excess_water():
    # sucrose + water -> glucose + fructose (C12H22O11 + H2O -> 2 C6H12O6), common practice
    scheme = parse(
        "S + W -> G + F  k1 = 1e-4 M-1 s-1\nexcess W = 55 M\n"
        "formula S = C12H22O11, W = H2O, G = C6H12O6, F = C6H12O6"
    )
    assert not scheme.allow_imbalance


def test_opt_out_is_documented_in_the_module_docstring():
    import kinetics.parsing

    doc = kinetics.parsing.__doc__
    assert "balance: lumped" in doc
    assert "strict_balance=False" in doc


def test_unknown_balance_mode():
    e = only_error("A -> B  k1 = 1 1/s\nbalance: loose")
    check(
        e,
        "t.scheme:2:10: unknown balance mode 'loose'; write 'balance: lumped' to allow atom "
        "imbalance, or 'balance: strict'",
        2,
        10,
        "loose",
    )


# ---------------------------------------------------------------------------
# Validation: empty files, no reactions


def test_empty_text():
    e = only_error("")
    check(
        e,
        "t.scheme: the scheme is empty; write at least one reaction, e.g. A -> B    k1 = 0.1 1/min",
        0,
        0,
        "",
    )


def test_only_comments_and_blank_lines_is_empty():
    e = only_error("# nothing yet\n\n   \n")
    assert e.problem == "the scheme is empty"


def test_no_reactions():
    e = only_error("title: nothing reacts\nstart A = 1 mol/L")
    check(
        e,
        "t.scheme: the scheme has no reactions; write at least one reaction, e.g. "
        "A -> B    k1 = 0.1 1/min",
        0,
        0,
        "",
    )


# ---------------------------------------------------------------------------
# Validation: files


def test_file_not_utf8(tmp_path):
    path = tmp_path / "latin1.scheme"
    path.write_bytes("A -> B  k1 = 0.1 1/s\n# réaction\n".encode("latin-1"))
    with pytest.raises(SchemeFileError) as info:
        load(path)
    assert str(info.value) == (
        f"{path}: the file is not UTF-8 text (undecodable byte at line 2); save it as UTF-8 "
        "(plain text)"
    )


def test_missing_file(tmp_path):
    path = tmp_path / "nowhere.scheme"
    with pytest.raises(SchemeFileError) as info:
        load(path)
    assert str(info.value) == f"{path}: no such file; check the path (and the current folder)"


def test_directory(tmp_path):
    with pytest.raises(SchemeFileError) as info:
        load(tmp_path)
    assert str(info.value) == f"{tmp_path}: this is a folder, not a scheme file; name a file"


def test_file_errors_are_kinetics_errors_and_os_errors(tmp_path):
    with pytest.raises(KineticsError):
        load(tmp_path / "nowhere.scheme")
    with pytest.raises(OSError, match="no such file"):
        load(tmp_path / "nowhere.scheme")


def test_load_reads_utf8_with_bom_and_names_the_file_in_errors(tmp_path):
    path = tmp_path / "bom.scheme"
    path.write_bytes("\ufeffA → B  k1 = 0.1 s⁻¹\nstart A = 1 M\n".encode())
    assert load(path).species_names == ["A", "B"]
    path.write_text("A -> B  k1 = 0.1 1/s\nstart A = -1 M\n", encoding="utf-8")
    with pytest.raises(SchemeErrors) as info:
        load(path)
    assert info.value.errors[0].headline().startswith(f"{path}:2:11: ")


def test_parse_refuses_bytes():
    with pytest.raises(KineticsError, match="parse\\(\\) reads scheme text"):
        parse(b"A -> B  k1 = 1 1/s")


# ---------------------------------------------------------------------------
# Validation: several errors in one file are all reported

SEVERAL = """\
A -> B  k1 = 0.1 M-1 s-1
start A = -1 mol/L, C = 1 M
B -> C  k9
A => D  k1
formula B = Qq
"""


def test_several_errors_are_all_reported_in_line_order():
    errors = errors_of(SEVERAL)
    assert [(e.line, e.column) for e in errors] == [(1, 9), (2, 11), (3, 9), (4, 3), (5, 13)]
    assert [e.problem.split(" ")[0:3] for e in errors] == [
        ["the", "units", "of"],
        ["the", "start", "value"],
        ["rate", "constant", "k9"],
        ["unknown", "arrow", "'=>'"],
        ["the", "formula", "'Qq'"],
    ]


def test_several_errors_message_lists_them_all():
    with pytest.raises(SchemeErrors) as info:
        parse(SEVERAL, SRC)
    text = str(info.value)
    assert text.splitlines()[0] == "5 problems in t.scheme:"
    assert text.count("t.scheme:") == 6


# ---------------------------------------------------------------------------
# Accepted syntax


def test_both_arrows_and_their_unicode_synonyms():
    ascii_ = parse("A -> B  k1 = 0.1 1/s\nB <=> C  kf = 2e-3 1/s, kr = 5e-4 1/s")
    uni = parse("A → B  k1 = 0.1 1/s\nB ⇌ C  kf = 2e-3 1/s, kr = 5e-4 1/s")
    for s in (ascii_, uni):
        assert s.species_names == ["A", "B", "C"]
        assert [(st.reactant, st.direction) for st in s.steps] == [
            ("A", "forward"),
            ("B", "forward"),
            ("C", "reverse"),
        ]
        np.testing.assert_array_equal(s.rates, [0.1, 2e-3, 5e-4])
    np.testing.assert_array_equal(ascii_.rate_matrix(), uni.rate_matrix())


def test_arrows_without_spaces():
    s = parse("A->B k1=0.1 1/s\nB<=>C kf=1 1/s,kr=2 1/s")
    assert [st.equation for st in s.steps] == ["A -> B", "B -> C", "C -> B"]


def test_coefficients_integer_and_decimal():
    s = parse("A -> 0.5 B + 1.5 C + 2 D + .25 E  k1 = 1 1/s")
    assert s.steps[0].products == ((0.5, "B"), (1.5, "C"), (2.0, "D"), (0.25, "E"))
    # column of A: -k on the diagonal, nu*k below (common practice, no source)
    np.testing.assert_array_equal(s.rate_matrix()[:, 0], [-1.0, 0.5, 1.5, 2.0, 0.25])


def test_species_names_with_digits_underscores_and_primes():
    s = parse("A' -> B_2 + C3'  k1 = 1 1/s")
    assert s.species_names == ["A'", "B_2", "C3'"]


def test_comments_anywhere():
    s = parse(
        "# a header comment\n"
        "title: commented scheme   # not part of the title\n"
        "A -> B  k1 = 0.1 1/s   # first step\n"
        "   # an indented comment\n"
        "start A = 1 M # start\n"
        "k2 = 0.2 1/s#no space before the hash\n"
        "B -> C  k2\n"
    )
    assert s.title == "commented scheme"
    assert s.species_names == ["A", "B", "C"]
    assert s.initial == {"A": 1.0}
    np.testing.assert_array_equal(s.rates, [0.1, 0.2])


def test_constant_on_its_own_line_shared_by_name():
    s = parse("k1 = 0.3 1/s\nA -> B  k1\nC -> D  k1\nB -> C  k2 = 0.1 1/s\nD -> E  k2")
    assert [st.constant for st in s.steps] == ["k1", "k1", "k2", "k2"]
    np.testing.assert_array_equal(s.rates, [0.3, 0.3, 0.1, 0.1])
    assert s.constants["k1"].line == 1


def test_constant_defined_after_its_use():
    s = parse("A -> B  k1\nk1 = 0.3 1/s")
    np.testing.assert_array_equal(s.rates, [0.3])


def test_arrhenius_in_kelvin():
    s = parse("A -> B  k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)\ntemperature = 350 K")
    # k = A exp(-Ea/RT) (Arrhenius 1889) with R = N_A k = 8.31446261815324 J/(mol K)
    # (exact in the 2019 SI, CODATA 2018), evaluated with mpmath at 30 digits:
    # 0.0664206482862126489469654310037
    assert s.rates[0] == pytest.approx(0.06642064828621265, rel=1e-13, abs=0)
    assert s.temperature == 350.0


def test_arrhenius_in_degrees_celsius():
    s = parse("k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)\nA -> B  k3\ntemperature = 60 degC")
    # 60 degC = 333.15 K (SI); k = A exp(-Ea/RT) (Arrhenius 1889), R from CODATA 2018,
    # mpmath at 30 digits: 0.0127416637519006471869916357799
    assert s.temperature == 333.15
    assert s.rates[0] == pytest.approx(0.012741663751900647, rel=1e-13, abs=0)
    # by hand in floats, the same formula
    by_hand = 1.0e13 * math.exp(-95_000.0 / (8.31446261815324 * 333.15))
    assert s.rates[0] == pytest.approx(by_hand, rel=1e-14, abs=0)


def test_arrhenius_second_order_with_excess():
    s = parse(
        "A + W -> B  k = arrhenius(A = 2e9 L mol-1 s-1, Ea = 60 kJ/mol)\n"
        "excess W = 0.5 mol/L\ntemperature = 298.15 K"
    )
    # k_eff = A exp(-Ea/RT) [W] (Arrhenius 1889; pseudo-first-order, common practice);
    # mpmath at 30 digits: 0.0307931969971405058128525480732
    expected = 2e9 * math.exp(-60_000.0 / (8.31446261815324 * 298.15)) * 0.5
    assert s.rates[0] == pytest.approx(expected, rel=1e-13, abs=0)
    assert s.rates[0] == pytest.approx(0.030793196997140506, rel=1e-13, abs=0)


def test_all_directives():
    s = parse(
        "title: Hydrolysis of an invented ester\n"
        "E + W -> Acid + Alc  k1 = 1.5e-4 M-1 s-1\n"
        "Acid -> Deg  k2 = 0.01 1/h\n"
        "start E = 0.5 mol/L\n"
        "excess W = 55 mol/L\n"
        "feed E = 0.01 mol/L/min\n"
        "formula E = C4H8O2, W = H2O, Acid = C2H4O2, Alc = C2H6O\n"
        "molar_mass Deg = 44.0 g/mol\n"
        "balance: lumped\n"
    )
    assert s.title == "Hydrolysis of an invented ester"
    assert s.species_names == ["E", "Acid", "Alc", "Deg"]
    assert [x.name for x in s.excess_species] == ["W"]
    assert s.initial == {"E": 0.5}
    assert s.excess == {"W": 55.0}
    # 0.01 mol/L/min = 0.01/60 mol/L/s (1 min = 60 s, SI)
    assert s.feed == {"E": float(Fraction(1, 6000))}
    np.testing.assert_array_equal(s.feed_vector, [float(Fraction(1, 6000)), 0, 0, 0])
    # ethyl acetate C4H8O2: 88.106 g/mol (IUPAC standard atomic weights; from memory)
    assert s.molar_masses[0] == pytest.approx(88.106, rel=0, abs=2e-3)
    assert s.molar_masses[3] == 44.0
    assert s.species_by_name("Acid").formula == "C2H4O2"
    assert s.allow_imbalance


def test_pseudo_first_order_rate_is_k_times_excess():
    s = parse("A + W -> B  k1 = 1.5e-4 M-1 s-1\nexcess W = 55 mol/L\nstart A = 0.1 M")
    # k_eff = k [W] (pseudo-first-order approximation, common practice, no source),
    # exact product 1.5e-4 * 55 = 8.25e-3 rounded once
    assert s.rates[0] == float(Fraction("1.5e-4") * 55)
    assert s.rates[0] == 8.25e-3
    assert s.species_names == ["A", "B"]
    assert s.steps[0].co_reactants == ((1.0, "W"),)


def test_pseudo_first_order_in_millimolar():
    # k = 0.2 L mol-1 s-1 with [W] = 50 mmol/L: k_eff = 0.2 * 0.05 = 0.01 1/s (common practice)
    s = parse("A + W -> B  k1 = 0.2 L mol-1 s-1\nexcess W = 50 mmol/L\nstart A = 1 mmol/L")
    assert s.rates[0] == 0.01
    assert s.concentration_unit == "mmol/L"
    assert s.excess == {"W": 50.0}


def test_pseudo_first_order_two_excess_co_reactants_and_reverse():
    s = parse("A + W + 2 H <=> B  kf = 2 M-3 s-1, kr = 0.5 1/s\nexcess W = 10 M, H = 0.1 M\n")
    # k_eff = k [W] [H]^2 = 2 * 10 * 0.01 = 0.2 1/s (common practice, no source)
    np.testing.assert_allclose(s.rates, [0.2, 0.5], rtol=1e-15, atol=0)
    assert s.steps[1].equation == "B -> A + W + 2 H"


@pytest.mark.parametrize(
    ("unit", "per_second"),
    [
        # 1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s (SI accepted units); M = mol/L
        ("1/s", Fraction(1)),
        ("s-1", Fraction(1)),
        ("s⁻¹", Fraction(1)),
        ("s^-1", Fraction(1)),
        ("s**-1", Fraction(1)),
        ("/s", None),
        ("min-1", Fraction(1, 60)),
        ("1/min", Fraction(1, 60)),
        ("h-1", Fraction(1, 3600)),
        ("1/h", Fraction(1, 3600)),
        ("d-1", Fraction(1, 86400)),
        ("ms-1", Fraction(1000)),
        ("Hz", Fraction(1)),
    ],
)
def test_first_order_unit_notation(unit, per_second):
    text = f"A -> B  k1 = 3 {unit}"
    if per_second is None:
        with pytest.raises(SchemeErrors):
            parse(text)
        return
    assert parse(text).rates[0] == float(3 * per_second)


@pytest.mark.parametrize(
    "unit",
    ["M-1 s-1", "M⁻¹ s⁻¹", "L mol-1 s-1", "L/(mol s)", "1/(M*s)", "dm3 mol-1 s-1", "M-1s-1"],
)
def test_second_order_unit_notation(unit):
    # 1 M-1 s-1 = 1 L mol-1 s-1 = 1 dm3 mol-1 s-1 (1 L = 1 dm3, SI); [W] = 2 M
    s = parse(f"A + W -> B  k1 = 3 {unit}\nexcess W = 2 M")
    assert s.rates[0] == 6.0


def test_M_means_mol_per_litre():
    s = parse("A -> B  k1 = 1 1/s\nstart A = 0.25 M, B = 250 mM")
    assert s.concentration_unit == "M"
    assert s.initial == {"A": 0.25, "B": 0.25}


def test_mixed_units_of_one_dimension_are_converted():
    s = parse(
        "A -> B  k1 = 0.12 1/min\nB -> C  k2 = 7.2 h-1\nC -> D  k3 = 86.4 d-1\n"
        "start A = 0.50 mol/L, B = 10 mmol/L, C = 2500 umol/L, D = 1 µmol/L"
    )
    # 7.2/h = 0.002/s, 86.4/d = 0.001/s (SI); 10 mmol/L = 0.01 mol/L
    assert list(s.rates) == [0.002, 0.002, 0.001]
    assert s.initial == {"A": 0.5, "B": 0.01, "C": 0.0025, "D": 1e-6}


def test_users_concentration_unit_is_kept():
    s = parse("A -> B  k1 = 1 1/s\nstart A = 2 mmol/L, B = 0.001 mol/L")
    assert s.concentration_unit == "mmol/L"
    assert s.initial == {"A": 2.0, "B": 1.0}
    np.testing.assert_array_equal(s.initial_vector, [2.0, 1.0])


def test_concentration_unit_from_excess_then_feed_then_default():
    assert parse("A + W -> B  k = 1 M-1 s-1\nexcess W = 5 mmol/L").concentration_unit == "mmol/L"
    assert parse("A -> B  k = 1 1/s\nfeed A = 1 umol/L/min").concentration_unit == "umol/L"
    assert parse("A -> B  k = 1 1/s").concentration_unit == "mol/L"


def test_amounts_are_accepted_when_consistent():
    s = parse("A -> B  k1 = 1 1/s\nstart A = 2 mmol, B = 0.001 mol\nfeed A = 1 mmol/min")
    assert s.concentration_unit == "mmol"
    assert s.initial == {"A": 2.0, "B": 1.0}
    assert s.feed == {"A": float(Fraction(1, 60))}


def test_amounts_and_concentrations_may_not_be_mixed():
    e = only_error("A -> B  k1 = 0.1 1/s\nstart A = 1 mol, B = 2 mol/L")
    check(
        e,
        "t.scheme:2:24: start B = 2 mol/L is a concentration, but this file gives amounts "
        "(start A = 1 mol on line 2); amounts (mol) and concentrations (mol/L) may not be mixed "
        "in one file; write every value as an amount",
        2,
        24,
        "mol/L",
    )


def test_feed_in_amounts_with_concentrations_may_not_be_mixed():
    e = only_error("A -> B  k1 = 1 1/s\nstart A = 1 mol/L\nfeed A = 1 mol/min")
    check(
        e,
        "t.scheme:3:12: the feed of A is 1 mol/min, a feed of amounts, but this file gives "
        "concentrations (start A = 1 mol/L on line 2); amounts (mol) and concentrations "
        "(mol/L) may not be mixed in one file; write every value as a concentration",
        3,
        12,
        "mol/min",
    )


def test_conversion_to_per_second_without_needless_round_off():
    s = parse("A -> B  k1 = 0.12 1/min\nB -> C  k2 = 0.7 1/min\nC -> D  k3 = 2.3 d-1")
    # exact: 0.12/60 = 1/500, 0.7/60 = 7/600, 2.3/86400 = 23/864000 (1 min = 60 s, 1 d = 86400 s)
    assert s.rates[0] == 0.002  # the double nearest to 0.002
    assert s.rates[1] == float(Fraction(7, 600))
    assert s.rates[2] == float(Fraction(23, 864000))
    # the naive float chain rounds twice and misses the nearest double (common practice)
    assert 0.7 / 60 != float(Fraction(7, 600))
    assert 2.3 / 86400 != float(Fraction(23, 864000))
    assert s.constants["k2"].value_si == Fraction(7, 600)


def test_species_order_is_first_appearance_and_excess_is_left_out():
    s = parse("C -> A + W  k1 = 1 1/s\nB + W -> C  k2 = 1 M-1 s-1\nexcess W = 1 M")
    assert s.species_names == ["C", "A", "B"]
    assert s.index == {"C": 0, "A": 1, "B": 2}
    assert [x.name for x in s.excess_species] == ["W"]


def test_crlf_line_endings_and_odd_whitespace():
    s = parse("A -> B\tk1 = 0.1 1/s\r\n\r\n  start A = 1 M  \r\n")
    assert s.initial == {"A": 1.0}


def test_line_numbers_count_only_newlines():
    # a form feed or a vertical tab is not a line break for an editor
    e = only_error("A -> B  k1 = 1 1/s\x0c\nstart A = -1 M")
    assert e.line == 2


def test_scheme_errors_pickle():
    with pytest.raises(SchemeErrors) as info:
        parse(SEVERAL, SRC)
    copy = pickle.loads(pickle.dumps(info.value))
    assert str(copy) == str(info.value)


def test_public_api_is_reexported():
    assert kinetics.parse is parse
    assert kinetics.load is load


def test_caret_stays_aligned_under_a_line_with_tabs():
    e = only_error("A -> B\tk1 = -1 1/s")
    text, caret = str(e).splitlines()[1:]
    assert "\t" not in text
    start = caret.index("^")
    assert text[start : start + len(e.snippet)] == "-1"


def test_concentration_unit_is_always_pint_parsable():
    import pint

    ureg = pint.UnitRegistry()
    for written, kept in [("mmol/L", "mmol/L"), ("M", "M"), ("mmol L-1", "mmol*L**-1")]:
        s = parse(f"A -> B  k1 = 1 1/s\nstart A = 1 {written}")
        assert s.concentration_unit == kept
        # plain pint reads it as the same unit (1 mmol/L = 1 mol/m^3, SI)
        assert ureg.Quantity(1, s.concentration_unit).to("mol/m^3").magnitude == pytest.approx(
            {"mmol/L": 1, "M": 1000, "mmol L-1": 1}[written], rel=1e-15
        )


@pytest.mark.parametrize(
    ("text", "headline", "column"),
    [
        (
            "A -> 0 B  k1 = 1 1/s",
            "t.scheme:1:6: stoichiometric coefficient of B is 0; coefficients are positive "
            "numbers; leave out a species that does not take part",
            6,
        ),
        (
            "A -> start  k1 = 1 1/s",
            "t.scheme:1:6: 'start' is a keyword of the scheme language and cannot name a "
            "species; choose another name",
            6,
        ),
        (
            "A -> B -> C  k1 = 1 1/s",
            "t.scheme:1:8: a reaction line has one arrow; this one has several; write each "
            "step on a line of its own",
            8,
        ),
        (
            "A + -> B  k1 = 1 1/s",
            "t.scheme:1:5: expected a species name after '+' on the left of the arrow; write "
            "one species (plus co-reactants in excess), e.g. A -> B",
            5,
        ),
        (
            "A -> B  k1 = 1 1/s, k2 = 2 1/s",
            "t.scheme:1:9: an irreversible step has one rate constant; found 2 (did you mean "
            "the reversible arrow <=>?); write e.g. k1 = 0.12 1/min",
            9,
        ),
        (
            "A -> B  k1 = 1 1/s\nstart A = 1 M,",
            "t.scheme:2:15: an empty item in a 'start' statement (a comma too many?); write "
            "NAME = VALUE items separated by commas, e.g. start A = 0.5 mol/L",
            15,
        ),
    ],
)
def test_other_malformed_reaction_lines(text, headline, column):
    e = only_error(text)
    assert e.headline() == headline
    assert e.column == column


# ---------------------------------------------------------------------------
# Issue 15: named quantities and expressions, decay steps written with half-lives,
# start values as activities and requirements: every message, with its place


NOTATION_ERRORS = [
    (
        "A -> B  k = 1 1/s * 10 ** 3000 * 10 ** 3000\nstart A = 1 M",
        [
            "t.scheme:1:32: 1 1/s * 10 ** 3000 * 10 ** 3000 is too large (beyond 1e±4000); "
            "check the values and their units"
        ],
    ),
    (
        "A -> B  k = foo_bar(2) * 1 1/s\nstart A = 1 M",
        [
            "t.scheme:1:13: unknown function 'foo_bar' in rate constant k; the functions are "
            "ln, exp, log10, sqrt, arrhenius, eyring and q10"
        ],
    ),
    (
        "P -> D  half_life = 1e300 s\nstart P = 1e300 GBq",
        [
            "t.scheme:2:11: start P = 1e300 GBq gives an amount that is too large in mol; "
            "check the value and its unit"
        ],
    ),
    (
        "A -> B  k = 0.5 1/min +\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:23: expected a value after '+' in rate constant k; write "
                "numbers with units, names, + - * / ** and parentheses, e.g. 0.88 * "
                "ln(2) / t_p"
            ),
        ],
    ),
    (
        "A -> B  k = (2 * k1\nk1 = 1 1/s\nstart A = 1 M\n",
        [
            ("t.scheme:1:13: a parenthesis is not closed in rate constant k; close it with ')'"),
        ],
    ),
    (
        "A -> B  k = 2 * k1)\nk1 = 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:19: a closing parenthesis without an opening one in rate "
                "constant k; remove it, or open it earlier"
            ),
        ],
    ),
    (
        "A -> B  k = 2 k1 3\nk1 = 1 1/s\nstart A = 1 M\n",
        [
            ("t.scheme:1:15: unknown unit 'k1 3' for rate constant k; write a unit such as 1/s"),
        ],
    ),
    (
        "A -> B  k = log(2) / 1 s\nstart A = 1 M\n",
        [
            ("t.scheme:1:13: unknown function 'log' in rate constant k; did you mean log10?"),
        ],
    ),
    (
        "A -> B  k = ln / 1 s\nstart A = 1 M\n",
        [
            ("t.scheme:1:13: ln is a function and needs a value in parentheses; write e.g. ln(2)"),
        ],
    ),
    (
        "A -> B  k = ln(2, 3) / 1 s\nstart A = 1 M\n",
        [
            "t.scheme:1:13: ln takes one value; found 2; write e.g. ln(2)",
        ],
    ),
    (
        "A -> B  k = 2 * $ 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:17: could not read '$' in rate constant k; write numbers "
                "with units, names, + - * / ** and parentheses, e.g. 0.88 * ln(2) / t_p"
            ),
        ],
    ),
    (
        "A -> B  k = 1 / 5 sek\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:19: unknown unit 'sek' for rate constant k; write a unit "
                "such as 1/s, or * to multiply by a named quantity (2 * k1)"
            ),
        ],
    ),
    (
        "A -> B  k = 1e999 * 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:13: rate constant k is 1e999, which is too large for a "
                "floating-point number; write a finite value, e.g. 0.12 1/min"
            ),
        ],
    ),
    (
        (
            "A -> B  k = (((((((((((((((((((((((((((((((((((((((((((((1 "
            "1/s)))))))))))))))))))))))))))))))))))))))))))))\nstart A = 1 M\n"
        ),
        [
            (
                "t.scheme:1:53: the expression of rate constant k is nested more than "
                "40 levels deep; split it into named quantities on lines of their own"
            ),
        ],
    ),
    (
        "t_p =\nA -> B  k = 1 / t_p\nstart A = 1 M\n",
        [
            "t.scheme:1:6: t_p has no value; write e.g. t_p = 50 h",
        ],
    ),
    (
        (
            "A -> B  k = arrhenius(A = 1 1/s, Ea = Ea_f, T = 3 K)\nEa_f = 1 "
            "kJ/mol\ntemperature = 300 K\nstart A = 1 M\n"
        ),
        [
            (
                "t.scheme:1:45: could not read 'T = 3 K' in the Arrhenius parameters "
                "of k; write arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)"
            ),
        ],
    ),
    (
        "A -> B  k = eyring(dH = 80 kJ/mol)\ntemperature = 300 K\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:13: the Eyring parameters of k lack dS; write eyring(dH = "
                "80 kJ/mol, dS = -20 J/mol/K)"
            ),
        ],
    ),
    (
        (
            "A -> B  k = eyring(dH = 80 kJ/mol, dS = 1 J/mol, dH = 1 "
            "J/mol)\ntemperature = 300 K\nstart A = 1 M\n"
        ),
        [
            (
                "t.scheme:1:50: the Eyring parameters of k give dH twice; give dH and "
                "dS once each: eyring(dH = 80 kJ/mol, dS = -20 J/mol/K)"
            ),
        ],
    ),
    (
        ("A -> B  k = q10(1 1/d, 25 degC, 2, 4)\ntemperature = 300 K\nstart A = 1 M\n"),
        [
            (
                "t.scheme:1:36: could not read '4' in the Q10 parameters of k; write "
                "q10(0.05 1/d, 25 degC, 2.5)"
            ),
        ],
    ),
    (
        "A -> B  k = q10(1 1/d, 25 degC, 2)\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:9: k follows a Q10 law but the file sets no temperature; "
                "add a line such as temperature = 60 degC"
            ),
        ],
    ),
    (
        ("A -> B  k = eyring(dH = 80 kJ/mol, dS = 1 J/mol)\ntemperature = 300 K\nstart A = 1 M\n"),
        [
            (
                "t.scheme:1:41: the activation entropy of k is 1 J/mol, which is a "
                "molar energy, not a molar entropy (energy per amount and kelvin); "
                "write dS in J/mol/K, e.g. dS = -20 J/mol/K"
            ),
        ],
    ),
    (
        "A -> B  k = q10(1 mol, 25 degC, 2)\ntemperature = 300 K\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:17: the reference rate constant of k is 1 mol, which is an "
                "amount of substance, not a rate constant; give k_ref in the units of "
                "a rate constant, e.g. 0.05 1/d"
            ),
        ],
    ),
    (
        ("A -> B  k = q10(1 1/d, 25 degC + 1 K, 2)\ntemperature = 300 K\nstart A = 1 M\n"),
        [
            (
                "t.scheme:1:24: 25 degC is a temperature on a scale with an offset, "
                "which cannot take part in arithmetic; write it alone (T_ref = 25 "
                "degC) or in kelvin (298.15 K)"
            ),
        ],
    ),
    (
        "A -> B  k = 1 / t_q\nt_p = 5 h\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:17: t_q is used in the definition of k but is never "
                "defined; did you mean t_p?"
            ),
        ],
    ),
    (
        "A -> B  k = 1 / B\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:17: B is used in the definition of k but is a species, not "
                "a named quantity; expressions use named quantities; a species enters "
                "through its start value"
            ),
        ],
    ),
    (
        "A -> B  k = temperature / 1 K / 1 s\ntemperature = 300 K\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:13: temperature is used in the definition of k but is "
                "never defined; the temperature enters an expression through "
                "arrhenius(), eyring() or q10()"
            ),
        ],
    ),
    (
        "a = b * 2\nb = a / 2\nA -> B  k = 1 1/s\nstart A = 1 M\n",
        [
            ("t.scheme:2:5: a depends on itself: a -> b -> a; define one of them by a value"),
        ],
    ),
    (
        "a = a + 1\nA -> B  k = 1 1/s\nstart A = 1 M\n",
        [
            ("t.scheme:1:5: a depends on itself: a -> a; define one of them by a value"),
        ],
    ),
    (
        "A -> B  k = 2 k1\nk1 = 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:13: k1 is read as a unit in '2 k1', but it is also a named "
                "quantity of this file; write 2 * k1 to multiply by it"
            ),
        ],
    ),
    (
        "A -> B  k = 2 * t1 h\nt1 = 1\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:20: unexpected 'h' after '2 * t1' in rate constant k; join "
                "values with an operator (+ - * / **), e.g. 2 * k1"
            ),
        ],
    ),
    (
        "ln = 5 h\nA -> B  k = 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:1: 'ln' is a keyword of the scheme language and cannot "
                "name a constant; choose another name, e.g. k1"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h\nfraction = 2\nstart A = 1 M\n",
        [
            (
                "t.scheme:2:1: 'fraction' is a keyword of the scheme language and "
                "cannot name a constant; choose another name, e.g. k1"
            ),
        ],
    ),
    (
        "t = 5 h\nt = 6 h\nA -> B  k = 1 / t\nstart A = 1 M\n",
        [
            (
                "t.scheme:2:1: t is defined twice with different values (5 h on line "
                "1, 6 h here); give each constant one value, or refer to it by name "
                "alone: t"
            ),
        ],
    ),
    (
        "t = 5 h\nt = 2 * 3 h\nA -> B  k = 1 / t\nstart A = 1 M\n",
        [
            (
                "t.scheme:2:1: t is defined twice with different values (5 h on line "
                "1, 2 * 3 h here); give each constant one value, or refer to it by "
                "name alone: t"
            ),
        ],
    ),
    (
        "A -> B  k = 5 h * 2\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:17: rate constant k = 5 h * 2 is a time, not a rate "
                "constant; a first-order constant has the unit 1/time (e.g. 1/s, "
                "min-1); a pseudo-first-order one concentration^-1/time (e.g. M-1 s-1)"
            ),
        ],
    ),
    (
        "t = 5 h\nA -> B  k = 1 / t - 1 1/min\nstart A = 1 M\n",
        [
            (
                "t.scheme:2:19: rate constant k = 1 / t - 1 1/min is negative "
                "(-0.0166111 in SI units); a rate constant cannot be negative; check "
                "the signs in the expression"
            ),
        ],
    ),
    (
        "A -> B  k = 1e300 1/s * 1e300\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:23: rate constant k = 1e300 1/s * 1e300 is too large; "
                "check the values and their units"
            ),
        ],
    ),
    (
        "A -> B  k = 1e-300 1/s * 1e-300\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:24: rate constant k = 1e-300 1/s * 1e-300 is too small (0 "
                "in SI units); check the values and their units"
            ),
        ],
    ),
    (
        "A + W -> B  k = 2 1/s\nexcess W = 1 M\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:13: the units of k (1/s) imply a first-order step, but A "
                "reacts here with W held in excess (a pseudo-first-order step needs "
                "concentration^-1/time); give k in M-1 s-1: multiplied by the excess "
                "concentration it gives 1/s"
            ),
        ],
    ),
    (
        "A <=> B  half_life = 5 h\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:10: a decay step written with half_life is irreversible; "
                "write -> (or →), e.g. P -> D  half_life = 65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A + W -> B  half_life = 5 h\nexcess W = 1 M\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:5: a decay step written with half_life has one species on "
                "its left; this one has 2; write the decaying species alone, e.g. P -> "
                "D  half_life = 65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A -> B  fraction = 50 %\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:9: this decay step gives a fraction but no half-life; give "
                "the half-life of the decaying species, e.g. P -> D  half_life = 65.9 "
                "h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h, half_life = 6 h\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:26: half_life is given twice; write e.g. P -> D  half_life "
                "= 65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h, k1\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:26: a decay step is given by half_life and fraction only; "
                "found 'k1'; write e.g. P -> D  half_life = 65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 mol\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:21: the half-life of A -> B is 5 mol, which is an amount "
                "of substance, not a time; write a time above 0, e.g. P -> D  "
                "half_life = 65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A -> B  half_life = 0 h\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:21: the half-life of A -> B is 0 h, which is not above 0; "
                "write a time above 0, e.g. P -> D  half_life = 65.9 h, fraction = "
                "87.6 %"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h, fraction = 150 %\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:37: the fraction of A -> B is 150 %, outside 0 to 100 %; "
                "write a percentage or a number from 0 to 1, e.g. P -> D  half_life = "
                "65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h, fraction = 2 h\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:37: the fraction of A -> B is 2 h, which is a time, not a "
                "pure number; write a percentage or a number from 0 to 1, e.g. P -> D  "
                "half_life = 65.9 h, fraction = 87.6 %"
            ),
        ],
    ),
    (
        (
            "A -> B  half_life = 5 h, fraction = 60 %\nA -> C  half_life = 5 h, "
            "fraction = 60 %\nstart A = 1 M\n"
        ),
        [
            (
                "t.scheme:2:37: the branching fractions of A add up to 120 %, more "
                "than 100 %; the branches of one decaying species share its decays; "
                "check the fractions on lines 1, 2"
            ),
        ],
    ),
    (
        (
            "A -> B  half_life = 5 h, fraction = 60 %\nA -> C  half_life = 6 h, "
            "fraction = 30 %\nstart A = 1 M\n"
        ),
        [
            (
                "t.scheme:2:21: the half-life of A is 6 h here but 5 h on line 1 "
                "(21600 s and 18000 s); each branch gives the half-life of the "
                "decaying species (of all its decays): write the same one on every "
                "branch"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h\nA -> C  k1 = 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:1: A decays by half_life here and also reacts by the rate "
                "constant k1 on line 2; give all of A's steps by half_life and "
                "fraction, or all by rate constants"
            ),
        ],
    ),
    (
        "A -> B  half_life = 5 h\nA -> C  half_life = 5 h\nstart A = 1 M\n",
        [
            (
                "t.scheme:2:21: the branching fractions of A add up to 200 %, more "
                "than 100 %; the branches of one decaying species share its decays; "
                "check the fractions on lines 1, 2"
            ),
        ],
    ),
    (
        "half_life = 5 h\nA -> B  k = 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:1: 'half_life' is a keyword of the scheme language and "
                "cannot name a constant; choose another name, e.g. k1"
            ),
        ],
    ),
    (
        "P -> D  half_life = 5 h\nstart P = 1 GBq, D = 1 mol/L\n",
        [
            (
                "t.scheme:2:13: start P = 1 GBq is an activity, but this file gives "
                "concentrations (start D = 1 mol/L on line 2); an activity sets a "
                "number of atoms: give activities with amounts (GBq with mol), "
                "activities per volume with concentrations (MBq/L with mol/L)"
            ),
        ],
    ),
    (
        "P -> D  half_life = 5 h\nstart D = 1 GBq, P = 1 mol\n",
        [
            (
                "t.scheme:2:7: start D = 1 GBq is an activity, but D does not decay in "
                "this scheme (no step consumes it), so its activity is 0; give its "
                "start value as an amount (e.g. start D = 1 mol), or leave it out"
            ),
        ],
    ),
    (
        "P -> D  half_life = 5 h\nstart P = 1 MBq/L, D = 1 mol\n",
        [
            (
                "t.scheme:2:13: start P = 1 MBq/L is an activity per volume, but this "
                "file gives amounts (start D = 1 mol on line 2); an activity sets a "
                "number of atoms: give activities with amounts (GBq with mol), "
                "activities per volume with concentrations (MBq/L with mol/L)"
            ),
        ],
    ),
    (
        "P -> D  half_life = 5 h\nstart P = 1 GBq\nexcess W = 1 GBq\n",
        [
            (
                "t.scheme:3:8: W occurs in no reaction; a species must take part in a "
                "reaction before it can be given an excess concentration"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire\n",
        [
            ("t.scheme:3:1: 'require' states nothing; write e.g. require IMP <= 0.15 % of API"),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire 5 <= 3\n",
        [
            (
                "t.scheme:3:9: expected a species name after 'require', found '5 <= "
                "3'; write e.g. require IMP <= 0.15 % of API"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B\n",
        [
            (
                "t.scheme:3:10: a requirement needs a comparison; write <= (stays at "
                "or below) or >= (stays at or above), e.g. require IMP <= 0.15 % of API"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B < 1 M\n",
        [
            (
                "t.scheme:3:11: unknown comparison '<' in a requirement; write <= "
                "(stays at or below) or >= (stays at or above), e.g. require IMP <= "
                "0.15 % of API"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B == 1 M\n",
        [
            (
                "t.scheme:3:11: unknown comparison '==' in a requirement; write <= "
                "(stays at or below) or >= (stays at or above), e.g. require IMP <= "
                "0.15 % of API"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= fast\n",
        [
            (
                "t.scheme:3:14: could not read a number for the limit of B in 'fast'; "
                "write a number and a unit, e.g. 2 mmol/L"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= -1 M\n",
        [
            (
                "t.scheme:3:14: the limit of B is negative (-1); this value cannot be "
                "negative; write e.g. 2 mmol/L"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 1\n",
        [
            (
                "t.scheme:3:14: the limit of B is 1 with no unit; write it with a "
                "unit, e.g. require B <= 1 M, or as a percentage of a start value "
                "(require IMP <= 0.15 % of API)"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 1 mol\n",
        [
            (
                "t.scheme:3:16: the limit of B is 1 mol, which is an amount, but this "
                "file gives concentrations (start A = 1 M on line 2); write it in the "
                "file's kind of unit, e.g. require B <= 1 M"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 1 sek\n",
        [
            ("t.scheme:3:16: unknown unit 'sek' for the limit of B; write a unit such as mmol/L"),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 1 mg/L\n",
        [
            (
                "t.scheme:3:16: the limit of B is a mass (1 mg/L), and B has no molar "
                "mass to convert it; give its formula or molar mass, or write the "
                "limit as an amount (M)"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire C <= 1 M\n",
        [
            "t.scheme:3:9: C occurs in no reaction; name a species of a reaction",
        ],
    ),
    (
        ("A + W -> B  k1 = 1 M-1 s-1\nexcess W = 1 M\nstart A = 1 M\nrequire W <= 1 M\n"),
        [
            (
                "t.scheme:4:9: W is held in excess (constant); a species held in "
                "excess keeps its concentration; require something of a species that "
                "changes"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 5 % of C\n",
        [
            "t.scheme:3:14: C occurs in no reaction; name a species of a reaction",
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 5 % of B\n",
        [
            (
                "t.scheme:3:14: B has no start value, so a percentage of it is 0; give "
                "B a start value, or the limit as a concentration, e.g. require B <= 2 "
                "M"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 1e999 %\n",
        [
            (
                "t.scheme:3:14: the limit of B is 1e999, which is too large for a "
                "floating-point number; write a finite value, e.g. 90 %"
            ),
        ],
    ),
    (
        "require -> B  k1 = 1 1/s\nstart A = 1 M\n",
        [
            (
                "t.scheme:1:1: 'require' is a keyword of the scheme language and "
                "cannot name a species; choose another name"
            ),
            (
                "t.scheme:2:7: A occurs in no reaction; a species must take part in a "
                "reaction before it can be given a start value"
            ),
        ],
    ),
    (
        "A -> B  k1 = 1 1/s\nstart A = 1 M\nrequire B <= 5 M extra\n",
        [
            (
                "t.scheme:3:16: unknown unit 'M extra' for the limit of B; write a "
                "unit such as mmol/L"
            ),
        ],
    ),
]


@pytest.mark.parametrize(("text", "headlines"), NOTATION_ERRORS)
def test_notation_messages(text, headlines):
    with pytest.raises(SchemeErrors) as info:
        parse(text, SRC)
    assert [e.headline() for e in info.value.errors] == headlines


def test_expression_limits_are_located():
    deep = "A -> B  k = " + "(" * 45 + "1 1/s" + ")" * 45 + "\nstart A = 1 M\n"
    with pytest.raises(SchemeErrors) as info:
        parse(deep, SRC)
    assert [e.headline() for e in info.value.errors] == [
        "t.scheme:1:53: the expression of rate constant k is nested more than 40 levels deep; "
        "split it into named quantities on lines of their own"
    ]
    long = "A -> B  k = " + " + ".join(["1 1/s"] * 300) + "\nstart A = 1 M\n"
    with pytest.raises(SchemeErrors) as info:
        parse(long, SRC)
    assert [e.headline() for e in info.value.errors] == [
        "t.scheme:1:1037: the expression of rate constant k has more than 256 terms; split it "
        "into named quantities on lines of their own"
    ]


def test_a_branch_constant_equals_the_hand_value():
    # 0.88 ln 2 / 50 h: a branch of 88 % of a 50 h half-life (hand value with mpmath)
    import mpmath as mp

    mp.mp.dps = 50
    scheme = parse("A -> B  lam = 0.88 * ln(2) / (50 h)\nstart A = 1 M", SRC)
    lam = scheme.constants["lam"]
    hand = mp.mpf("0.88") * mp.log(2) / 180000
    assert abs(mp.mpf(lam.value_si.numerator) / lam.value_si.denominator - hand) < 1e-45
    assert float(scheme.rates[0]) == float(hand)
    assert (lam.unit, lam.order, lam.text) == ("1/s", 0, "0.88 * ln(2) / (50 h)")
    # without the parentheses the unit still binds to its number
    same = parse("A -> B  lam = 0.88 * ln(2) / 50 h\nstart A = 1 M", SRC)
    assert same.constants["lam"].value_si == lam.value_si


def test_mixed_units_convert_exactly():
    # 1 h + 30 min = 5400 s; 2 mmol/L per 1 umol/L = 2000 (SI brochure, 9th ed., table 8)
    text = (
        "t = 1 h + 30 min\nratio = 2 mmol/L / (1 umol/L)\nA -> B  k = ratio / t\n"
        "B -> C  k2 = 1.5e-4 M-1 s-1 * 55 mol/L\nstart A = 1 M"
    )
    scheme = parse(text, SRC)
    assert scheme.quantities["t"].value_si == 5400
    assert scheme.quantities["ratio"].value_si == 2000
    assert scheme.constants["k"].value_si == Fraction(2000, 5400)
    assert scheme.constants["k2"].value_si == Fraction(15, 10**5) * 55 / 1000 * 1000


def test_named_quantities_of_every_dimension():
    text = """\
t_p = 50 h
f = 87.6 %
T_ref = 25 degC
Ea_f = 95 kJ/mol
dS = -20 J/mol/K
P -> D  k = f * ln(2) / t_p
D -> E  kf = arrhenius(A = 4.0e10 1/s, Ea = Ea_f)
E -> F  ke = eyring(dH = Ea_f, dS = dS)
F -> G  kq = q10(k_ref = 0.05 1/d, T_ref = T_ref, Q10 = 2.5)
temperature = 40 degC
start P = 1 M
"""
    scheme = parse(text, SRC)
    q = scheme.quantities
    assert [(n, q[n].value_si, q[n].unit) for n in q] == [
        ("t_p", 180000, "h"),
        ("f", Fraction(876, 1000), "%"),
        ("T_ref", Fraction(29815, 100), "K"),
        ("Ea_f", 95000, "kJ/mol"),
        ("dS", -20, "J/mol/K"),
    ]
    assert scheme.driven_by("Ea_f") == ("kf", "ke")
    assert scheme.driven_by("T_ref") == ("kq",)
    assert scheme.constants["kf"].arrhenius.activation_energy == 95000.0
    hotter = scheme.with_values(temperature=330.0)
    assert all(hotter.rates[1:] > scheme.rates[1:])
    assert hotter.rates[0] == scheme.rates[0]


def test_decay_steps_written_with_half_lives():
    text = (
        "P -> D  half_life = 65.9 h, fraction = 87.6 %\nP -> E  half_life = 65.9 h, "
        "fraction = 12 %\nD -> F  half_life = 6 h\nstart P = 1 mol"
    )
    scheme = parse(text, SRC)
    assert [s.equation for s in scheme.steps] == ["P -> D", "P -> E", "D -> F", "P -> (untracked)"]
    assert scheme.warnings == (
        "t.scheme:1: the branching fractions of P add up to 99.6 %; the other 0.4 % of its "
        "decays go to no species of the scheme (untracked)",
    )
    # the parent still decays with its half-life: the three constants add up to ln 2 / t
    assert float(
        sum(scheme.exact_constants()[s.constant] for s in scheme.steps[:2])
        + scheme.exact_constants()["lambda(P untracked)"]
    ) == pytest.approx(math.log(2) / (65.9 * 3600), rel=1e-15)
    whole = parse(
        "P -> D  half_life = 5 h, fraction = 40 %\n"
        "P -> E  half_life = 5 h, fraction = 60 %\nstart P = 1 mol",
        SRC,
    )
    assert [s.equation for s in whole.steps] == ["P -> D", "P -> E"]
    assert whole.warnings == ()


def test_start_values_as_activities_and_requirements():
    scheme = parse("P -> D  half_life = 65.9 h\nstart P = 10 GBq\nrequire P >= 50 %", SRC)
    assert scheme.concentration_unit == "mol"
    assert scheme.start_activities == {"P": 10**10}
    # N = A t / ln 2 = 3.4227e15 atoms = 5.6834 nmol (hand value)
    assert scheme.initial["P"] == pytest.approx(5.6834e-9, rel=1e-4)
    (r,) = scheme.requirements
    assert (r.text, r.comparison, r.threshold) == ("P >= 50 %", ">=", scheme.initial["P"] / 2)
