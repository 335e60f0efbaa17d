"""Named quantities of schemes with operations in the one parameter grammar, and the one
way a scheme takes new values of parameters (kinetics.parameters.scheme_with).

Reference values: exact unit factors (1 h = 3600 s, 1 L = 1e-3 m^3; SI brochure, 9th ed.).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

import kinetics
from kinetics import parameters
from kinetics.errors import ConstantError
from kinetics.parameters import FIT_WORDS, SweepWords

TEXT = """A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = Ea_1)
Ea_1 = 80 kJ/mol
temperature = 25 degC
start A = 1 mol/L
t_q = 3 h
dose = 250 mmol/L
at t_q: add A = dose
"""


def test_operation_quantities_and_other_named_quantities():
    scheme = kinetics.parse(TEXT)
    t = parameters.resolve(scheme, "t_q", SweepWords("--vary"))
    assert (t.kind, t.unit, t.nominal) == ("operation", "h", 10800.0)
    d = parameters.resolve(scheme, "dose", FIT_WORDS)
    assert (d.kind, d.unit, d.nominal) == ("operation", "mmol/L", 250.0)
    e = parameters.resolve(scheme, "Ea_1", SweepWords("--vary"))
    assert (e.kind, e.unit) == ("quantity", "kJ/mol")
    hi, lo = parameters.to_internal(t, [1.5], "h", ["1.5"])
    assert (hi[0], lo[0]) == (5400.0, 0.0)


def test_a_quantity_no_operation_and_no_constant_uses_changes_nothing():
    plain = kinetics.parse("A -> B  k1 = 1 1/h\nstart A = 1 M\nt_q = 3 h\n")
    with pytest.raises(ConstantError) as info:
        parameters.resolve(plain, "t_q", SweepWords("--vary 't_q=1:2:2'"))
    assert str(info.value) == (
        "--vary 't_q=1:2:2': no rate constant is defined from t_q, so it changes nothing; "
        "vary a quantity that a constant is defined from, e.g. k = ln(2) / t_q"
    )


def test_a_negative_operation_value_is_refused():
    scheme = kinetics.parse(TEXT)
    t = parameters.resolve(scheme, "t_q", SweepWords("--vary"))
    with pytest.raises(ConstantError) as info:
        parameters.check_values(t, np.array([-1.0]), "--vary 't_q=-1'", "e.g. t_q=1:5:9:h")
    assert str(info.value) == "--vary 't_q=-1': a value of t_q is negative; give values >= 0"


def test_scheme_with_moves_operations_and_keeps_arrhenius_laws():
    scheme = kinetics.parse(TEXT)
    targets = [
        parameters.resolve(scheme, "t_q", FIT_WORDS),
        parameters.resolve(scheme, "k1.A", FIT_WORDS),
        parameters.resolve(scheme, "start:A", FIT_WORDS),
    ]
    new = parameters.scheme_with(scheme, targets, [7200.0, 2e10, 0.5])
    assert new.timeline.statements[0].time == 7200.0
    assert new.constants["k1"].arrhenius.prefactor_si == Fraction(2e10)
    assert new.initial["A"] == 0.5
    # the law still follows the temperature
    k300 = new.with_values(temperature=300.0).constants["k1"].exact(300.0)
    assert k300 == new.constants["k1"].arrhenius.exact(300.0)
    quantity = parameters.resolve(scheme, "Ea_1", FIT_WORDS)
    hotter = parameters.scheme_with(scheme, [quantity], [90e3])
    assert hotter.constants["k1"].arrhenius.activation_energy == 90e3
