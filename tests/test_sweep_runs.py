"""Sweeps and Monte Carlo of schemes with operations: each set solved as its own run.

Reference values: the parent-daughter ingrowth D(t) = P0 kP/(kD - kP) (e^(-kP t) -
e^(-kD t)) with its maximum at t* = ln(kD/kP)/(kD - kP) (Bateman form; H. Bateman, Proc.
Cambridge Philos. Soc. 15, 423-427 (1910)); every set equals the same scheme solved alone.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

import kinetics
from kinetics.analysis.run_summary import summarise_run
from kinetics.errors import ConstantError

HOUR = 3600.0
GENERATOR = """P -> D   kP = 0.01 1/h
D -> X   kD = 0.1 1/h
start P = 1 mol/L
t_el = 24 h
p_el = 90 %
every t_el: remove p_el of D
"""
KP, KD = 0.01, 0.1


def bateman(t):
    return KP / (KD - KP) * (math.exp(-KP * t) - math.exp(-KD * t))


def test_sweeping_an_operation_time_moves_the_maximum():
    scheme = kinetics.parse(GENERATOR)
    table = kinetics.sweep(
        scheme, {"t_el": [12.0, 36.0]}, times=np.linspace(0, 3 * 86400, 7), time_unit="h"
    )
    assert list(table.columns[:1]) == ["t_el [h]"]
    t_star = math.log(KD / KP) / (KD - KP)  # 25.6 h
    # elution every 12 h: D rises into the first elution, its maximum is just before it
    assert table["t_max D [h]"][0] == pytest.approx(12.0, rel=1e-14)
    assert table["c_max D [mol/L]"][0] == pytest.approx(bateman(12.0), rel=1e-13)
    # every 36 h: the first maximum is the ingrowth maximum
    assert table["t_max D [h]"][1] == pytest.approx(t_star, rel=1e-10)
    assert table["c_max D [mol/L]"][1] == pytest.approx(bateman(t_star), rel=1e-13)
    assert np.allclose(table["half_life P [h]"], math.log(2) / KP, rtol=1e-12)


def test_every_set_is_the_scheme_solved_alone():
    scheme = kinetics.parse(GENERATOR)
    times = np.linspace(0, 2 * 86400, 5)
    table, curves = kinetics.sweep(scheme, {"p_el": [50.0, 100.0]}, times=times, curves=True)
    for i, share in enumerate((Fraction(1, 2), Fraction(1))):
        alone = kinetics.solve(scheme.with_values(quantities={"p_el": share}), times)
        per, _ = summarise_run(alone)
        assert table["limit X [mol/L]"][i] == per["X"]["limit"]
        rows = np.searchsorted(alone.times, times, side="right") - 1  # just after
        np.testing.assert_array_equal(curves.values[i], alone.concentrations[rows])


def test_rate_constants_and_arrhenius_parts_under_temperature_operations():
    text = (
        "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\ntemperature = 25 degC\n"
        "start A = 1 M\nat 1 h: temperature = 60 degC\n"
    )
    scheme = kinetics.parse(text)
    times = np.linspace(0, 2 * HOUR, 3)
    _table, curves = kinetics.sweep(scheme, {"k1.Ea": [80.0, 90.0]}, times=times, curves=True)
    for i, ea in enumerate((80e3, 90e3)):
        # A = exp(-k(25 degC) 1 h - k(60 degC) 1 h): the law follows the step (R = N_A k_B,
        # exact in the 2019 SI)
        k25 = 1e10 * math.exp(-ea / (8.31446261815324 * 298.15))
        k60 = 1e10 * math.exp(-ea / (8.31446261815324 * 333.15))
        assert curves.values[i, -1, 0] == pytest.approx(math.exp(-(k25 + k60) * HOUR), rel=1e-12)


def test_monte_carlo_spreads_an_operation_time():
    scheme = kinetics.parse(GENERATOR)
    table, bands = kinetics.monte_carlo(
        scheme, ["t_el=2h"], 20, times=np.linspace(0, 2 * 86400, 5), seed=3
    )
    assert len(bands) == 1
    assert table["t_el [h]"].std() > 0.5
    assert table["t_el [h]"].mean() == pytest.approx(24.0, abs=2.0)


def test_a_name_that_is_no_quantity_of_the_scheme():
    scheme = kinetics.parse(GENERATOR)
    with pytest.raises(ConstantError) as info:
        kinetics.sweep(scheme, {"t_x": [1.0]}, times=[0, HOUR])
    assert str(info.value) == (
        "grid['t_x']: 't_x' is not a rate constant or parameter of the scheme; parameters "
        "are kP, kD, t_el, p_el, temperature, start:<species>, excess:<species>"
    )


def test_a_requirement_column_for_runs_with_operations():
    # require D <= 0.05 M: the ingrowth of D (Bateman form) reaches 0.05 M before the
    # first elution at 36 h (its root found by bisection of the closed form); eluted
    # every 4 h, D never gets there
    scheme = kinetics.parse(GENERATOR + "require D <= 0.05 mol/L\n")
    table = kinetics.sweep(
        scheme, {"t_el": [4.0, 36.0]}, times=np.linspace(0, 3 * 86400, 7), time_unit="h"
    )
    column = "first_broken D <= 0.05 mol/L [h]"
    lo, hi = 0.0, 25.0  # D rises through 0.05 before its maximum at 25.6 h
    for _ in range(60):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if bateman(mid) < 0.05 else (lo, mid)
    # eluted every 4 h, D never reaches 0.05 (bateman(4 h) = 0.033): it holds (NaN)
    assert math.isnan(table[column][0])
    assert table[column][1] == pytest.approx(lo, rel=1e-12)
    alone = kinetics.parse(GENERATOR.replace("24 h", "36 h") + "require D <= 0.05 mol/L\n")
    alone = kinetics.solve(alone, np.linspace(0, 3 * 86400, 7))
    assert alone.summary("h").requirements["requirements"][0]["first_broken"] == pytest.approx(
        table[column][1], rel=1e-15
    )
