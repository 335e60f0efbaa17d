"""Requirements evaluated on the exact solution (kinetics/analysis/requirements.py).

Reference values are closed forms of first-order kinetics: the time to a fraction of a
single decay (Connors, Amidon & Stella, "Chemical Stability of Pharmaceuticals", 2nd ed.,
1986: t90 = ln(10/9)/k), the Arrhenius law (Arrhenius 1889) and the two-step chain A -> B
-> C (Bateman 1910; Atkins & de Paula, "Physical Chemistry", 10th ed., 2014).
"""

from __future__ import annotations

import doctest
import json
import math

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kinetics
from kinetics.analysis import requirements as module
from kinetics.analysis.requirements import requirement_times
from kinetics.cli import main
from kinetics.requirements import Requirement
from kinetics.units import GAS_CONSTANT_EXACT

DAY = 86400.0


def _times(scheme, t_window=None):
    K, K_low = scheme.rate_matrix_pair()
    feed = scheme.feed_vector if scheme.feed else None
    return requirement_times(
        K,
        scheme.initial_vector,
        scheme.requirements,
        scheme.species_names,
        feed=feed,
        t_window=t_window,
        K_low=K_low,
    )


def test_doctests_run():
    failed, _ = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert failed == 0


def test_shelf_life_of_one_first_order_degradation_is_ln_10_9_over_k():
    # t90 = ln(10/9)/k (Connors, Amidon & Stella 1986)
    scheme = kinetics.parse("API -> DEG  k1 = 0.004 1/d\nstart API = 5 mmol/L\nrequire API >= 90 %")
    out = _times(scheme, t_window=10 * DAY)
    (r,) = out.times
    expected = math.log(10 / 9) / (0.004 / DAY)
    assert r.first_broken == pytest.approx(expected, rel=1e-12)
    assert r.beyond_window  # 26.3 d after a 10 d window
    assert r.holds_at_start
    assert out.window == (0.0, pytest.approx(expected, rel=1e-12))
    assert out.all_hold_until == pytest.approx(expected, rel=1e-12)


def test_shelf_life_through_arrhenius_at_two_temperatures_matches_the_hand_calculation():
    # k(T) = A exp(-Ea / R T) (Arrhenius 1889), t90 = ln(10/9)/k; R exact (CODATA 2018)
    scheme = kinetics.parse(
        "API -> DEG  k1 = arrhenius(A = 2.0e9 1/h, Ea = 85 kJ/mol)\n"
        "temperature = 25 degC\nstart API = 1 mmol/L\nrequire API >= 90 %"
    )
    R = float(GAS_CONSTANT_EXACT)
    for celsius in (25.0, 40.0):
        T = 273.15 + celsius
        k = 2.0e9 / 3600 * math.exp(-85000 / (R * T))
        out = _times(scheme.with_values(temperature=T))
        assert out.times[0].first_broken == pytest.approx(math.log(10 / 9) / k, rel=1e-12)


def test_a_degradant_share_of_the_start_matches_the_closed_form_of_a_to_b():
    # B(t) = A0 (1 - exp(-k t)): B = 0.5 % of A0 at t = -ln(1 - 0.005)/k
    scheme = kinetics.parse(
        "API -> DEG  k1 = 0.002 1/d\nstart API = 3 mmol/L\nrequire DEG <= 0.5 % of API"
    )
    (r,) = _times(scheme).times
    assert r.requirement.threshold == pytest.approx(0.015)
    assert r.first_broken == pytest.approx(-math.log1p(-0.005) / (0.002 / DAY), rel=1e-12)
    assert r.holds_between == ((0.0, pytest.approx(r.first_broken, rel=1e-15)),)


def _chain_b(t, k1, k2, a0=1.0):
    # A -> B -> C from pure A (Bateman 1910)
    return a0 * k1 / (k2 - k1) * (mpmath.exp(-k1 * t) - mpmath.exp(-k2 * t))


def test_an_impurity_that_rises_and_falls_is_broken_and_holds_again_as_the_closed_form_says():
    k1, k2 = 0.3, 0.05
    scheme = kinetics.parse(
        f"A -> B  k1 = {k1} 1/s\nB -> C  k2 = {k2} 1/s\nstart A = 1 mol/L\nrequire B <= 20 % of A"
    )
    (r,) = _times(scheme, t_window=10.0).times
    mpmath.mp.dps = 40
    t_max = math.log(k1 / k2) / (k1 - k2)  # Atkins & de Paula, consecutive reactions
    up = mpmath.findroot(lambda t: _chain_b(t, k1, k2) - 0.2, (1e-6, t_max), solver="anderson")
    down = mpmath.findroot(lambda t: _chain_b(t, k1, k2) - 0.2, (t_max, 400), solver="anderson")
    assert r.first_broken == pytest.approx(float(up), rel=1e-12)
    assert not r.beyond_window
    (a, b), (c, d) = r.holds_between
    assert (a, d) == (0.0, math.inf)
    assert b == pytest.approx(float(up), rel=1e-12)
    assert c == pytest.approx(float(down), rel=1e-12)


def test_a_requirement_broken_at_the_start_and_a_window_of_all_together():
    # A <= 50 % holds from ln 2 / k1 on; C <= 60 % of A until C(t) = 0.6 (closed form)
    k1, k2 = 0.3, 0.05
    scheme = kinetics.parse(
        f"A -> B  k1 = {k1} 1/s\nB -> C  k2 = {k2} 1/s\nstart A = 1 mol/L\n"
        "require A <= 50 %\nrequire C <= 60 % of A"
    )
    out = _times(scheme)
    first, second = out.times
    assert not first.holds_at_start
    assert first.first_broken == 0.0
    assert first.holds_between == ((pytest.approx(math.log(2) / k1, rel=1e-12), math.inf),)
    mpmath.mp.dps = 40
    c_at = mpmath.findroot(lambda t: 1 - mpmath.exp(-k1 * t) - _chain_b(t, k1, k2) - 0.6, 20)
    assert second.first_broken == pytest.approx(float(c_at), rel=1e-12)
    assert out.window == (
        pytest.approx(math.log(2) / k1, rel=1e-12),
        pytest.approx(float(c_at), rel=1e-12),
    )


def test_never_together_and_for_ever():
    scheme = kinetics.parse(
        "A -> B  k1 = 0.1 1/s\nstart A = 1 mol/L\nrequire A >= 90 %\nrequire B >= 50 %  of A\n"
        "require B <= 100 % of A"
    )
    out = _times(scheme)
    first, second, third = out.times
    assert first.first_broken == pytest.approx(10 * math.log(10 / 9), rel=1e-12)
    assert second.first_broken == 0.0  # B starts at 0
    assert second.holds_between == ((pytest.approx(10 * math.log(2), rel=1e-12), math.inf),)
    # B tends to A0 as its limit: it reaches the level only as t -> infinity
    assert third.first_broken is None
    assert third.holds_between == ((0.0, math.inf),)
    assert out.window is None
    assert out.all_hold_until is None
    assert out.to_dict()["all_hold_from"] is None


def test_a_crossing_long_after_the_scan_is_found():
    # fed S -> P: P(t) = f t - f/k (1 - exp(-k t)) reaches 1e4 mol/L near t = 1e4/f
    f, k = 0.5, 1.0
    scheme = kinetics.parse(
        f"S -> P  k = {k} 1/s\nfeed S = {f} mol/L/s\nstart S = 1 mol/L\nrequire P <= 1e4 mol/L"
    )
    (r,) = _times(scheme, t_window=60.0).times
    mpmath.mp.dps = 40
    s0 = 1.0  # the start value of S ends up in P as well
    exact = mpmath.findroot(
        lambda t: f * t - f / k * (1 - mpmath.exp(-k * t)) + s0 * (1 - mpmath.exp(-k * t)) - 1e4,
        2e4,
    )
    assert r.first_broken == pytest.approx(float(exact), rel=1e-12)
    assert r.beyond_window


@settings(max_examples=25, deadline=None)
@given(
    k1=st.floats(1e-3, 10.0),
    ratio=st.floats(0.05, 20.0),
    share=st.floats(0.01, 0.9),
)
def test_the_curve_meets_the_level_at_each_change(k1, ratio, share):
    # invariant: at every end of an interval where it holds, c_i(t) equals the level
    k2 = k1 * ratio
    scheme = kinetics.parse(
        f"A -> B  k1 = {k1!r} 1/s\nB -> C  k2 = {k2!r} 1/s\nstart A = 1 mol/L\n"
        f"require B <= {100 * share!r} % of A\nrequire A >= {100 * share!r} %"
    )
    out = _times(scheme)
    for r in out.times:
        i = scheme.index[r.requirement.species]
        ends = [t for span in r.holds_between for t in span if 0 < t < math.inf]
        if ends:
            c = kinetics.solve(scheme, sorted(ends)).concentrations[:, i]
            np.testing.assert_allclose(c, r.requirement.threshold, rtol=1e-9)
        if r.first_broken not in (None, 0.0):
            before = kinetics.solve(scheme, [0.999 * r.first_broken]).concentrations[0, i]
            assert r.requirement.holds(before)


def test_an_unknown_species_is_refused():
    req = Requirement("X <= 1 mol/L", "X", "<=", 1.0)
    with pytest.raises(kinetics.errors.SpeciesError) as err:
        requirement_times([[-1.0]], [1.0], [req], ["A"])
    assert str(err.value) == (
        "the requirement names X, which is not a species of the problem; species are A"
    )


@pytest.fixture
def stability(tmp_path):
    path = tmp_path / "stab.scheme"
    path.write_text(
        "API -> DEG  k1 = 0.004 1/d\nstart API = 5 mmol/L\n"
        "require API >= 90 %\nrequire DEG <= 0.5 % of API\n"
    )
    return path


def test_solve_json_gives_each_requirement_and_the_window(stability, capsys):
    assert main(["solve", str(stability), "--until", "10 d", "--time-unit", "d", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    first, second = doc["requirements"]
    assert first["text"] == "API >= 90 %"
    assert first["first_broken"] == pytest.approx(math.log(10 / 9) / 0.004, rel=1e-12)
    assert first["beyond_window"] is True
    assert second["first_broken"] == pytest.approx(-math.log1p(-0.005) / 0.004, rel=1e-12)
    assert second["beyond_window"] is False
    assert doc["all_hold_until"] == pytest.approx(second["first_broken"], rel=1e-15)
    assert doc["all_hold_from"] == 0.0


def test_solve_prints_the_requirements(stability, capsys):
    assert main(["solve", str(stability), "--until", "10 d", "--time-unit", "d"]) == 0
    out = capsys.readouterr().out
    assert "require API >= 90 %: first broken at 26.3401 d (after the window)" in out
    assert "require DEG <= 0.5 % of API: first broken at 1.25314 d" in out
    assert "all requirements hold [d]: from 0 to 1.25314" in out


def test_the_spreadsheet_and_the_report_show_them(stability, tmp_path, capsys):
    import openpyxl

    book, page = tmp_path / "out.xlsx", tmp_path / "out.html"
    assert main(["solve", str(stability), "--until", "10 d", "--out", str(book)]) == 0
    cells = [c.value for row in openpyxl.load_workbook(book)["summary"].iter_rows() for c in row]
    assert "require API >= 90 %" in cells
    assert "all requirements hold [d]" in cells
    assert main(["report", str(stability), "--until", "10 d", "--out", str(page)]) == 0
    html = page.read_text()
    assert "<h3>Requirements</h3>" in html
    assert "require DEG &lt;= 0.5 % of API" in html
