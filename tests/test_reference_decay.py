"""A two-member decay chain written with half-lives, against the Bateman formula.

The parent-daughter pair molybdenum-99 -> technetium-99m, with the half-lives and the
branching fraction as commonly tabulated (values from memory, as recalled from the
nuclear data tables of NNDC/ENSDF; rounded): Mo-99 65.94 h, 87.6 % of its decays feed
Tc-99m, Tc-99m 6.0067 h.  The scheme is solved by ``kinetics.solve`` (the exact engine);
the references are closed forms evaluated with mpmath at 50 digits:

* Bateman (1910) for a parent and daughter with branching fraction f:
  :math:`N_D(t) = f \\lambda_P N_{P,0} (e^{-\\lambda_P t} - e^{-\\lambda_D t})
  / (\\lambda_D - \\lambda_P)`,
  activities :math:`A = \\lambda N`;
* the time of the daughter's activity maximum
  :math:`t_m = \\ln(\\lambda_D/\\lambda_P) / (\\lambda_D - \\lambda_P)` (textbook result, e.g.
  Cherry, Sorenson & Phelps, Physics in Nuclear Medicine, ch. 5);
* transient equilibrium: :math:`A_D / A_P \\to f \\lambda_D / (\\lambda_D - \\lambda_P)` (same
  textbook).

H. Bateman, "Solution of a system of differential equations occurring in the theory of
radioactive transformations", Proc. Cambridge Philos. Soc. 15, 423-427 (1910).
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

import kinetics
from kinetics.activity import activities, decay_constants

HOUR = 3600
TEXT = """\
title: Generator pair (half-lives from memory, see the test module)
Mo99 -> Tc99m     half_life = t_mo, fraction = 87.6 %
Mo99 -> Tc99      half_life = t_mo, fraction = 12.4 %
Tc99m -> Tc99     half_life = 6.0067 h
t_mo = 65.94 h
start Mo99 = 10 GBq
"""


def _bateman(t_hours):
    """Activities [Bq] of Mo-99 and Tc-99m at ``t_hours`` (mpmath, 50 digits)."""
    mp.mp.dps = 50
    lp = mp.log(2) / (mp.mpf("65.94") * HOUR)
    ld = mp.log(2) / (mp.mpf("6.0067") * HOUR)
    f = mp.mpf("0.876")
    n0 = mp.mpf(10) ** 10 / lp  # atoms from A = lambda N
    t = mp.mpf(t_hours) * HOUR
    parent = lp * n0 * mp.exp(-lp * t)
    daughter = ld * f * lp * n0 * (mp.exp(-lp * t) - mp.exp(-ld * t)) / (ld - lp)
    return float(parent), float(daughter), lp, ld, f


@pytest.fixture(scope="module")
def scheme():
    return kinetics.parse(TEXT, "generator.scheme")


def test_start_activity_gives_the_atoms_of_a_equals_lambda_n(scheme):
    # N = A / lambda; amount = N / N_A with N_A = 6.02214076e23 /mol (2019 SI, exact)
    _, _, lp, _, _ = _bateman(0)
    atoms = mp.mpf(10) ** 10 / lp
    expected = float(atoms / mp.mpf("6.02214076e23"))
    np.testing.assert_allclose(scheme.initial["Mo99"], expected, rtol=1e-15, atol=0)
    assert scheme.concentration_unit == "mol"
    assert float(decay_constants(scheme)["Mo99"]) == pytest.approx(float(lp), rel=1e-15)


@pytest.mark.parametrize("hours", [0.0, 1.0, 6.0, 22.9, 48.0, 200.0, 600.0])
def test_daughter_activity_follows_bateman(scheme, hours):
    solution = kinetics.solve(scheme, [hours * HOUR])
    a = activities(scheme, solution.concentrations)[0]
    parent, daughter, *_ = _bateman(hours)
    index = scheme.index
    np.testing.assert_allclose(a[index["Mo99"]], parent, rtol=1e-12, atol=0)
    np.testing.assert_allclose(a[index["Tc99m"]], daughter, rtol=1e-12, atol=1e-3)
    assert a[index["Tc99"]] == 0.0  # stable: activity 0


def test_time_of_the_daughter_activity_maximum(scheme):
    _, _, lp, ld, _ = _bateman(0)
    t_max = float(mp.log(ld / lp) / (ld - lp))
    # the daughter's activity at t_max is above its neighbours a minute either side
    times = [t_max - 60, t_max, t_max + 60]
    a = activities(scheme, kinetics.solve(scheme, times).concentrations)[:, scheme.index["Tc99m"]]
    assert a[1] > a[0]
    assert a[1] > a[2]
    # hand value: ln(65.94 / 6.0067) / (ln 2 / 6.0067 h - ln 2 / 65.94 h) = 22.843 h
    np.testing.assert_allclose(t_max / HOUR, 22.843, rtol=1e-4, atol=0)


def test_transient_equilibrium_ratio(scheme):
    _, _, lp, ld, f = _bateman(0)
    ratio = float(f * ld / (ld - lp))
    a = activities(scheme, kinetics.solve(scheme, [400 * HOUR]).concentrations)[0]
    index = scheme.index
    np.testing.assert_allclose(a[index["Tc99m"]] / a[index["Mo99"]], ratio, rtol=1e-12, atol=0)


def test_the_half_life_is_a_named_quantity_that_drives_both_branches(scheme):
    assert scheme.driven_by("t_mo") == ("lambda(Mo99->Tc99m)", "lambda(Mo99->Tc99)")
    longer = scheme.with_values(quantities={"t_mo": 2 * 65.94 * HOUR})
    lam = decay_constants(longer)["Mo99"]
    np.testing.assert_allclose(float(lam), float(mp.log(2)) / (2 * 65.94 * HOUR), rtol=1e-15)
    # the start activity is kept: twice the half-life, twice the atoms
    np.testing.assert_allclose(longer.initial["Mo99"], 2 * scheme.initial["Mo99"], rtol=1e-15)
