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


# -- the same checks through the outputs (solve --activity; issue 15, section 2) ----------


def test_solution_in_activity_units_follows_bateman(scheme):
    hours = [0.0, 6.0, 22.9, 48.0, 200.0]
    solution = kinetics.solve(scheme, np.array(hours) * HOUR).in_activity("MBq")
    frame = solution.to_frame("h")
    assert list(frame.columns) == ["time [h]", "Mo99 [MBq]", "Tc99m [MBq]", "Tc99 [MBq]"]
    for row, h in enumerate(hours):
        parent, daughter, *_ = _bateman(h)
        np.testing.assert_allclose(frame["Mo99 [MBq]"][row], parent / 1e6, rtol=1e-12)
        np.testing.assert_allclose(frame["Tc99m [MBq]"][row], daughter / 1e6, rtol=1e-12, atol=1e-9)
        assert frame["Tc99 [MBq]"][row] == 0.0


def test_the_summary_gives_the_activity_maximum_at_the_textbook_time(scheme):
    from kinetics.analysis.solution_summary import activity_summary

    _, _, lp, ld, _ = _bateman(0)
    t_m = float(mp.log(ld / lp) / (ld - lp))
    solution = kinetics.solve(scheme, [0.0, 100 * HOUR]).in_activity("MBq")
    summary = solution.summary("s")
    extra = activity_summary(solution, summary)
    maximum = extra["maxima"]["Tc99m"]
    np.testing.assert_allclose(maximum["time"], t_m, rtol=1e-10)
    _, height, *_ = _bateman(mp.mpf(t_m) / HOUR)
    np.testing.assert_allclose(maximum["activity"], height / 1e6, rtol=1e-12)
    assert "constant in time" in extra["maximum_note"]
    assert set(extra["maxima"]) == {"Tc99m"}  # the only decaying species formed


def test_the_summary_gives_the_transient_equilibrium_ratio(scheme):
    from kinetics.activity import equilibria

    _, _, lp, ld, f = _bateman(0)
    (pair,) = [e for e in equilibria(scheme) if e.daughter == "Tc99m"]
    assert (pair.parent, pair.kind) == ("Mo99", "transient")
    np.testing.assert_allclose(pair.ratio, float(f * ld / (ld - lp)), rtol=1e-14)


def test_secular_and_no_equilibrium():
    # textbook limits: lambda_P << lambda_D gives A_D/A_P -> f (secular); a daughter that
    # decays more slowly than its parent has no equilibrium (invented half-lives)
    from kinetics.activity import equilibria

    secular = kinetics.parse("P -> D  half_life = 5000 h\nD -> G  half_life = 5 h\nstart P = 1 mol")
    (e,) = equilibria(secular)
    assert e.kind == "secular"
    np.testing.assert_allclose(e.ratio, 1 / (1 - 5 / 5000), rtol=1e-14)
    none = kinetics.parse("P -> D  half_life = 5 h\nD -> G  half_life = 50 h\nstart P = 1 mol")
    (e,) = equilibria(none)
    assert (e.kind, e.ratio) == ("none", None)


def test_solve_activity_on_the_command_line(tmp_path, capsys):
    import json

    from kinetics.cli import main

    path = tmp_path / "generator.scheme"
    path.write_text(TEXT, encoding="utf-8")
    argv = ["solve", str(path), "--until", "100h", "--points", "5", "--activity", "MBq"]
    assert main([*argv, "--json", "--no-caution"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["concentration_unit"] == "MBq"
    _, _, lp, ld, f = _bateman(0)
    np.testing.assert_allclose(
        doc["activity"]["maxima"]["Tc99m"]["time"],
        float(mp.log(ld / lp) / (ld - lp)) / HOUR,
        rtol=1e-10,
    )
    ratios = {e["daughter"]: e["ratio"] for e in doc["activity"]["equilibria"]}
    np.testing.assert_allclose(ratios["Tc99m"], float(f * ld / (ld - lp)), rtol=1e-14)
    parent, _, *_ = _bateman(100)
    np.testing.assert_allclose(doc["concentrations"]["Mo99"][-1], parent / 1e6, rtol=1e-12)
    out = tmp_path / "table.csv"
    assert main([*argv, "--out", str(out), "--no-caution"]) == 0
    assert out.read_text(encoding="utf-8").splitlines()[0] == (
        "time [h],Mo99 [MBq],Tc99m [MBq],Tc99 [MBq]"
    )
    assert main([*argv, "--no-caution"]) == 0
    printed = capsys.readouterr().out
    assert "Tc99m/Mo99 in the long run: transient equilibrium" in printed
    assert "Activities (exact)" in printed


def test_activity_option_messages(tmp_path, capsys):
    from kinetics.cli import main

    path = tmp_path / "generator.scheme"
    path.write_text(TEXT, encoding="utf-8")
    base = ["solve", str(path), "--until", "1h", "--no-caution"]
    assert main([*base, "--activity", "MBq", "--concentration-unit", "mmol"]) == 2
    assert capsys.readouterr().err.strip().splitlines()[-1] == (
        "kinetics: give either --activity or --concentration-unit, not both; --activity MBq "
        "reports activities, --concentration-unit amounts or masses"
    )
    assert main([*base, "--activity", "mol"]) == 2
    assert capsys.readouterr().err.strip().splitlines()[-1] == (
        "kinetics: 'mol' is an amount of substance, not an activity (the scheme is kept in "
        "mol); write e.g. MBq for a scheme in amounts, MBq/L for one per volume"
    )
