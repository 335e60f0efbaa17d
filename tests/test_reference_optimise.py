"""The optimum against brute-force scans of closed-form solutions.

Closed forms: consecutive first-order steps A -> B -> C and a parallel side step A -> I
(Bateman 1910; Atkins & de Paula, "Physical Chemistry", 10th ed., 2014, consecutive and
parallel reactions), each constant by the Arrhenius law k = A exp(-Ea/RT) (Arrhenius 1889)
with R the exact CODATA 2018 value.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq

import kinetics
from kinetics.optimise import optimise
from kinetics.units import GAS_CONSTANT_EXACT

R = float(GAS_CONSTANT_EXACT)
NETWORKS = Path(__file__).resolve().parent.parent / "networks"


def _k(prefactor, energy, T):
    return prefactor * np.exp(-energy / (R * T))


def _chain(T, t, with_side=False):
    """A, B, I of A -> B -> C (and A -> I) from A0 = 1 [mol/L] at time t [s]."""
    k1, k2 = _k(1e10, 80e3, T), _k(1e13, 105e3, T)
    k3 = _k(1e14, 125e3, T) if with_side else 0.0 * T
    s = k1 + k3
    b = k1 / (k2 - s) * (np.exp(-s * t) - np.exp(-k2 * t))
    i = k3 / s * (1 - np.exp(-s * t))
    return np.exp(-s * t), b, i


CHAIN = (
    "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    "B -> C  k2 = arrhenius(A = 1e13 1/s, Ea = 105 kJ/mol)\n"
    "temperature = 50 degC\nstart A = 1 mol/L\n"
)
SIDE = "A -> I  k3 = arrhenius(A = 1e14 1/s, Ea = 125 kJ/mol)\n"
QUENCH = 3600.0


def test_the_best_temperature_at_a_fixed_quench_matches_a_brute_force_scan():
    best = optimise(kinetics.parse(CHAIN), "B", "temperature=20:100:degC", until=QUENCH)
    T = np.linspace(293.15, 373.15, 1_000_001)
    b = _chain(T, QUENCH)[1]
    k = int(np.argmax(b))
    assert best.objective == pytest.approx(float(b[k]), rel=1e-6)
    assert best.objective >= float(b[k]) * (1 - 1e-12)  # no worse than the scan
    assert best.best["temperature"] + 273.15 == pytest.approx(float(T[k]), abs=1e-3)
    assert best.active_requirements == []
    assert best.feasible


def test_an_active_impurity_requirement_matches_a_constrained_brute_force_scan():
    scheme = kinetics.parse(CHAIN + SIDE + "require I <= 0.02 % of A\n")
    best = optimise(scheme, "B", "temperature=20:100:degC", until=QUENCH)
    T = np.linspace(293.15, 373.15, 200_001)
    _, b, i = _chain(T, QUENCH, with_side=True)
    ok = i <= 0.0002
    k = int(np.argmax(np.where(ok, b, -np.inf)))
    scan = float(b[k])
    if k + 1 < T.size and not ok[k + 1]:  # the scan's best sits at the limit: refine it
        edge = brentq(lambda x: _chain(x, QUENCH, True)[2] - 0.0002, T[k], T[k + 1], xtol=1e-13)
        scan = max(scan, float(_chain(edge, QUENCH, True)[1]))
    assert best.objective == pytest.approx(scan, rel=1e-6)
    assert best.active_requirements == ["I <= 0.02 % of A"]
    (row,) = best.requirements
    assert row["value"] == pytest.approx(0.0002, rel=1e-9)


def test_the_best_time_of_a_to_b_to_c_is_the_textbook_maximum():
    # t_max = ln(k1/k2)/(k1 - k2), B_max = (k1/k2)^(k2/(k2 - k1)) (Atkins & de Paula)
    k1, k2 = 0.3, 0.1
    scheme = kinetics.parse(f"A -> B  k1 = {k1} 1/s\nB -> C  k2 = {k2} 1/s\nstart A = 1 mol/L")
    best = optimise(scheme, "B", [], best_time=True, until=60.0)
    assert best.best["time"] == pytest.approx(math.log(k1 / k2) / (k1 - k2), rel=1e-7)
    assert best.objective == pytest.approx((k1 / k2) ** (k2 / (k2 - k1)), rel=1e-12)


def test_the_quench_window_example_matches_a_two_setting_brute_force_scan():
    # the example's constants (networks/quench_window.scheme), per hour
    scheme = kinetics.load(NETWORKS / "quench_window.scheme")
    best = optimise(scheme, "P", ["temperature=30:90:degC", "time=0:8:h"])
    T = np.linspace(303.15, 363.15, 1201)[:, None]
    t = np.linspace(0.0, 8.0, 1601)[None, :]
    k1, k2, k3 = (_k(a, e, T) for a, e in ((5e12, 80e3), (3.5e6, 50e3), (1.5e16, 120e3)))
    s = k1 + k3
    p = 0.6 * k1 / (k2 - s) * (np.exp(-s * t) - np.exp(-k2 * t))
    imp = 0.6 * k3 / s * (1 - np.exp(-s * t))
    scan = float(np.max(np.where(imp <= 0.0009, p, -np.inf)))
    # the scan's best feasible cell lies up to one cell inside the limit: the optimum is
    # at least as good and better by at most the change over a cell (about 1e-4)
    assert scan <= best.objective <= scan * (1 + 2e-4)
    assert best.active_requirements == ["IMP <= 0.15 % of SM"]


def test_an_arrhenius_prefactor_as_a_setting_matches_a_constrained_brute_force_scan():
    # more k1 makes more B and, later, more C: the optimum sits on the requirement on C
    scheme = kinetics.parse(CHAIN + "require C <= 10 % of A\n")
    best = optimise(scheme, "B", "k1.A=1e8:1e12:1/s", until=QUENCH)
    T = 323.15

    def closed(prefactor):
        k1, k2 = prefactor * np.exp(-80e3 / (R * T)), _k(1e13, 105e3, T)
        a = np.exp(-k1 * QUENCH)
        b = k1 / (k2 - k1) * (a - np.exp(-k2 * QUENCH))
        return b, 1.0 - a - b

    grid = np.geomspace(1e8, 1e12, 200_001)
    b, c = closed(grid)
    ok = c <= 0.1
    k = int(np.argmax(np.where(ok, b, -np.inf)))
    scan = float(b[k])
    if k + 1 < grid.size and not ok[k + 1]:  # the scan's best sits at the limit: refine it
        edge = brentq(lambda x: closed(x)[1] - 0.1, grid[k], grid[k + 1], xtol=1e-3)
        scan = max(scan, float(closed(edge)[0]))
    assert best.objective == pytest.approx(scan, rel=1e-6)
    assert best.active_requirements == ["C <= 10 % of A"]
    assert best.best["k1.A"] == pytest.approx(float(grid[k]), rel=1e-4)


# a generator P -> D -> X with invented half-lives; daughter activity A_D = lambda_D N_D,
# N_D = N_P0 lambda_P/(lambda_D - lambda_P) (exp(-lambda_P t) - exp(-lambda_D t))
# (Bateman 1910), its maximum at t = ln(lambda_D/lambda_P)/(lambda_D - lambda_P)
GENERATOR = "t_d = 6 h\nP -> D  half_life = 66 h\nD -> X  lam = ln(2) / t_d\nstart P = 10 GBq\n"
LAMBDA_P = math.log(2) / (66 * 3600.0)


def _daughter(t, t_d):
    """Daughter activity [GBq] at t [s] for a daughter half-life t_d [s] (Bateman)."""
    lam_d = math.log(2) / t_d
    return 10.0 * lam_d / (lam_d - LAMBDA_P) * (np.exp(-LAMBDA_P * t) - np.exp(-lam_d * t))


def test_the_best_time_of_the_daughter_activity_is_the_textbook_maximum():
    scheme = kinetics.parse(GENERATOR)
    best = optimise(scheme, "D", [], best_time=True, until=400 * 3600.0, activity="GBq")
    lam_d = math.log(2) / (6 * 3600.0)
    t_max = math.log(lam_d / LAMBDA_P) / (lam_d - LAMBDA_P)
    assert best.best["time"] == pytest.approx(t_max, rel=1e-9)
    assert best.objective == pytest.approx(float(_daughter(t_max, 6 * 3600.0)), rel=1e-9)
    assert best.unit == "GBq"
    assert best.to_dict()["target"]["quantity"] == "activity"


def test_the_best_daughter_half_life_matches_a_brute_force_scan_of_the_activity():
    # the decay constant of the target moves with the setting: d(lambda N) by the product
    # rule with exact derivatives of lambda (the Newton steps use its second derivative)
    scheme = kinetics.parse(GENERATOR)
    best = optimise(scheme, "D", "t_d=1:20:h", until=24 * 3600.0, activity="GBq")
    t_d = np.linspace(3600.0, 20 * 3600.0, 1_000_001)
    scan = _daughter(24 * 3600.0, t_d)
    k = int(np.argmax(scan))
    assert best.objective == pytest.approx(float(scan[k]), rel=1e-6)
    assert best.objective >= float(scan[k]) * (1 - 1e-12)
    assert best.best["t_d"] * 3600.0 == pytest.approx(float(t_d[k]), rel=1e-4)
