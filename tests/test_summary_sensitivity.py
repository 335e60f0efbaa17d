"""Normalised sensitivities of the summary quantities (kinetics/analysis/summary_sensitivity.py).

References, each a closed form differentiated by mpmath (mpmath.diff, 50 digits):

* A -> B -> C (Atkins & de Paula, Physical Chemistry, 10th ed., consecutive reactions):
  t_max = ln(k2/k1)/(k2 - k1), c_max = A0 (k1/k2)^(k2/(k2 - k1));
* A <=> B (same textbook, reversible first-order reactions): A(t) = A0 (kr + kf
  e^(-(kf+kr) t))/(kf + kr), so t_1/2 = ln(2 kf/(kf - kr))/(kf + kr), with Arrhenius
  constants k = A exp(-Ea/(R T)) (R exact, 2019 SI);
* a parent-daughter decay pair written with half-lives (Bateman 1910): the daughter's
  maximum at t_m = ln(lD/lP)/(lD - lP), its activity there lD f lP N0 (e^(-lP t) -
  e^(-lD t))/(lD - lP) with N0 = A0/lP atoms (invented half-lives).
"""

from __future__ import annotations

import json

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kinetics
from kinetics.analysis.solution_summary import compute_summary
from kinetics.analysis.summary_sensitivity import (
    ranked,
    sensitivity_parameters,
    summary_sensitivities,
)
from kinetics.cli import main

mp.mp.dps = 50


def _sensitivities(text, until, activity=None):
    solution = kinetics.solve(kinetics.parse(text), [0.0, until])
    if activity:
        solution = solution.in_activity(activity)
    return summary_sensitivities(solution, compute_summary(solution))


def _log_derivative(f, at):
    """d ln f / d ln x at x = at (mpmath, 50 digits)."""
    return float(mp.diff(lambda u: mp.log(f(mp.e**u)), mp.log(at)))


def test_consecutive_steps_against_the_closed_forms():
    # the check: d ln t_max / d ln k1 and d ln c_max / d ln k2 to 1e-10
    sens = _sensitivities(
        "A -> B  k1 = 0.3 1/min\nB -> C  k2 = 0.07 1/min\nstart A = 1 mol/L", 3600.0
    )
    k1, k2 = mp.mpf("0.3") / 60, mp.mpf("0.07") / 60

    def t_max(a, b):
        return mp.log(b / a) / (b - a)

    def c_max(a, b):
        return (a / b) ** (b / (b - a))

    expected = {
        ("t_max", "k1"): _log_derivative(lambda x: t_max(x, k2), k1),
        ("t_max", "k2"): _log_derivative(lambda x: t_max(k1, x), k2),
        ("c_max", "k1"): _log_derivative(lambda x: c_max(x, k2), k1),
        ("c_max", "k2"): _log_derivative(lambda x: c_max(k1, x), k2),
    }
    for (quantity, name), value in expected.items():
        assert sens[quantity]["B"][name] == pytest.approx(value, rel=1e-10, abs=1e-12)
    # a single first-order decay: t_1/2 = ln 2 / k1 (textbook), lifetimes 1/k
    assert sens["half_life"]["A"] == pytest.approx({"k1": -1.0, "k2": 0.0}, abs=1e-13)
    assert sens["lifetime"]["B"] == {"k1": 0.0, "k2": -1.0}


def test_the_temperature_of_an_arrhenius_pair_against_the_closed_form():
    text = (
        "CIS <=> TRANS  kf, kr\nkf = arrhenius(A = 4.0e10 1/s, Ea = 88 kJ/mol)\n"
        "kr = arrhenius(A = 1.5e10 1/s, Ea = 92 kJ/mol)\ntemperature = 45 degC\n"
        "start CIS = 0.25 mol/L\n"
    )
    sens = _sensitivities(text, 2 * 86400.0)
    r = mp.mpf("8.31446261815324")
    t0 = mp.mpf(45.0 + 273.15)  # the double the scheme keeps

    def half_life(t):
        kf = mp.mpf("4.0e10") * mp.exp(-88000 / (r * t))
        kr = mp.mpf("1.5e10") * mp.exp(-92000 / (r * t))
        return mp.log(2 * kf / (kf - kr)) / (kf + kr)

    assert sens["half_life"]["CIS"]["temperature"] == pytest.approx(
        _log_derivative(half_life, t0), rel=1e-10
    )
    assert sensitivity_parameters(kinetics.parse(text))["temperature"] == float(t0)


GENERATOR = """\
t_parent = 40 h
t_daughter = 4.5 h
Parent -> Daughter  half_life = t_parent, fraction = 82 %
Daughter -> Ground  half_life = t_daughter
start Parent = 20 GBq
"""


def _pair(tp, td):
    """Daughter's time of maximum [s] and its activity there [Bq] (Bateman)."""
    lp, ld = mp.log(2) / (tp * 3600), mp.log(2) / (td * 3600)
    t = mp.log(ld / lp) / (ld - lp)
    n0 = mp.mpf("2e10") / lp
    return t, ld * mp.mpf("0.82") * lp * n0 * (mp.exp(-lp * t) - mp.exp(-ld * t)) / (ld - lp)


def test_named_half_lives_drive_the_constants_and_the_start_activity():
    sens = _sensitivities(GENERATOR, 5 * 86400.0, activity="MBq")
    tp, td = mp.mpf(40), mp.mpf(4.5)
    # the parent's half-life is t_parent itself
    assert sens["half_life"]["Parent"]["t_parent"] == pytest.approx(1.0, rel=1e-13)
    assert sens["half_life"]["Parent"]["t_daughter"] == 0.0
    t_max = sens["t_max"]["Daughter"]
    assert t_max["t_parent"] == pytest.approx(
        _log_derivative(lambda x: _pair(x, td)[0], tp), rel=1e-10
    )
    assert t_max["t_daughter"] == pytest.approx(
        _log_derivative(lambda x: _pair(tp, x)[0], td), rel=1e-10
    )
    # the height is an activity: it moves with lambda_D, and the start of 20 GBq holds
    # more atoms for a longer-lived parent
    height = sens["c_max"]["Daughter"]
    for name, at in (("t_parent", tp), ("t_daughter", td)):

        def activity(x, name=name):
            return _pair(x, td)[1] if name == "t_parent" else _pair(tp, x)[1]

        assert height[name] == pytest.approx(_log_derivative(activity, at), rel=1e-10)


@settings(max_examples=25, deadline=None)
@given(
    rates=st.lists(st.floats(0.01, 10.0), min_size=2, max_size=5),
    branch=st.floats(0.01, 5.0),
)
def test_times_scale_with_one_over_every_rate_and_heights_do_not(rates, branch):
    # multiplying every constant by a factor divides every time by it and leaves every
    # height (no feed): the sensitivities to all constants add up to -1 and 0
    lines = [f"S{i} -> S{i + 1}  k{i} = {r!r} 1/min" for i, r in enumerate(rates)]
    lines.append(f"S0 -> S{len(rates)}  kb = {branch!r} 1/min")
    lines.append("start S0 = 1 mol/L")
    sens = _sensitivities("\n".join(lines), 3600.0)
    for key, per in sens.items():
        for species, by in per.items():
            total = sum(v for v in by.values() if v is not None)
            expected = 0.0 if key == "c_max" else -1.0
            assert total == pytest.approx(expected, abs=1e-8), (key, species)


def test_ranked_answers_and_what_is_left_out():
    sens = _sensitivities(
        "A -> B  k1 = 0.3 1/min\nB -> C  k2 = 0.07 1/min\nstart A = 1 mol/L", 3600.0
    )
    rows = ranked(sens)
    assert [row[:2] for row in rows[:1]] == [("half_life", "A")]
    assert all(key not in ("lifetime", "first_order_half_life") for key, *_ in rows)
    t_max = next(found for key, species, found in rows if (key, species) == ("t_max", "B"))
    assert [name for name, _ in t_max] == ["k1", "k2"]


def test_large_schemes_are_left_out():
    lines = [f"S{i} -> S{i + 1}  k{i} = 1 1/s" for i in range(61)] + ["start S0 = 1 M"]
    solution = kinetics.solve(kinetics.parse("\n".join(lines)), [0.0, 1.0])
    assert summary_sensitivities(solution, {}) is None


def test_solve_sensitivity_json_and_table(tmp_path, capsys):
    path = tmp_path / "g.scheme"
    path.write_text(GENERATOR, encoding="utf-8")
    argv = ["solve", str(path), "--until", "5d", "--points", "3", "--sensitivity"]
    assert main([*argv, "--json", "--no-caution"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc["sensitivity"]["t_max"]["Daughter"]) == {
        "t_parent",
        "t_daughter",
        "lambda(Parent->Daughter)",
        "lambda(Daughter->Ground)",
        "lambda(Parent untracked)",
    }
    plain = ["solve", str(path), "--until", "5d", "--points", "3", "--json", "--no-caution"]
    assert main(plain) == 0
    assert "sensitivity" not in json.loads(capsys.readouterr().out)
    assert main([*argv, "--no-caution"]) == 0
    printed = capsys.readouterr().out
    assert "What this answer hinges on" in printed
    assert "1 % more t_parent: half_life Parent about 1 % higher" in printed


def test_the_report_ranks_what_the_answer_hinges_on(tmp_path):
    path = tmp_path / "g.scheme"
    path.write_text(GENERATOR, encoding="utf-8")
    out = tmp_path / "r.html"
    argv = ["report", str(path), "--until", "5d", "--points", "3", "--activity", "MBq"]
    assert main([*argv, "--out", str(out), "--no-caution"]) == 0
    page = out.read_text(encoding="utf-8")
    assert "<h3>What this answer hinges on</h3>" in page
    assert "<h3>Activity maxima and equilibria</h3>" in page
    assert np.char.count(page, "1 % more") >= 3
