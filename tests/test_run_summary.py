"""The summary of a run with operations, on its exact piecewise solution.

Reference values are closed forms of first-order kinetics (any physical chemistry
textbook): c = c0 e^(-kt) for one decay step, the consecutive-step intermediate
B = A0 k1/(k2 - k1) (e^(-k1 t) - e^(-k2 t)) (Bateman form; H. Bateman, Proc. Cambridge
Philos. Soc. 15, 423-427 (1910)), areas (1 - e^(-kT))/k, and the conservation of mass in a
closed scheme (what is formed is what is there plus what was removed).
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kinetics
from kinetics.analysis.run_summary import summarise_run

HOUR = 3600.0


def summary(text, end_hours, points=3):
    sol = kinetics.solve(kinetics.parse(text), np.linspace(0.0, end_hours * HOUR, points))
    return summarise_run(sol)


def test_a_maximum_just_before_a_removal():
    per, _ = summary(
        "A -> B  k1 = 1 1/h\nB -> C  k2 = 0.01 1/h\nstart A = 1 M\nat 2 h: remove 100 % of B", 3
    )
    b = per["B"]
    exact = 1.0 / (0.01 - 1.0) * (math.exp(-1.0 * 2) - math.exp(-0.01 * 2))
    assert b["t_max"] == 2 * HOUR
    assert b["c_max"] == pytest.approx(exact, rel=1e-13)
    (top,) = [m for m in b["maxima"] if m["global"]]
    assert top["at_operation"] == "just before"
    # the decay of A is untouched: its half-life is ln 2 / k1
    assert per["A"]["half_life"] == pytest.approx(math.log(2) * HOUR, rel=1e-12)


def test_a_maximum_just_after_an_addition():
    per, _ = summary("A -> B  k1 = 1 1/h\nstart A = 0.1 M\nat 1 h: add A = 1 M", 2)
    a = per["A"]
    assert a["t_max"] == HOUR
    assert a["c_max"] == pytest.approx(1.0 + 0.1 * math.exp(-1.0), rel=1e-14)
    assert a["maxima"][0]["at_operation"] == "just after"


def test_a_removal_that_takes_the_species_below_the_level_is_the_crossing():
    per, _ = summary("A -> B  k = 0.01 1/h\nstart A = 1 M\nat 1 h: remove 60 % of A", 2)
    a = per["A"]
    assert a["half_life"] == HOUR
    assert a["time_to_90_percent_remaining"] == HOUR
    # 10 % left: 0.4 e^(-0.01) e^(-0.01 (t - 1 h)) = 0.1, found beyond the window
    tail = math.log(0.4 * math.exp(-0.01) / 0.1) / 0.01
    assert a["time_to_10_percent_remaining"] == pytest.approx((1 + tail) * HOUR, rel=1e-10)


def test_times_to_a_fraction_lose_their_meaning_when_material_is_added():
    per, _ = summary("A -> B  k1 = 1 1/h\nstart A = 1 M\nat 1 h: add A = 1 M", 2)
    a = per["A"]
    assert a["half_life"] is None
    assert a["time_to_10_percent_remaining"] is None
    assert a["half_life_note"] == (
        "material of A is added after time 0 (from 3600 s on), so a time to fall to a fraction "
        "of its start value loses its meaning"
    )
    assert a["half_life_note"] in a["notes"]
    assert a["yield_at_max"] is None
    assert a["mean_residence_time"] is None


def test_areas_add_up_stretch_by_stretch():
    per, _ = summary("A -> B  k = 0.5 1/h\nstart A = 1 M\nat 2 h: add A = 0.3 M", 5)
    a = per["A"]
    window = (1 - math.exp(-0.5 * 5)) / 0.5 + 0.3 * (1 - math.exp(-0.5 * 3)) / 0.5
    assert a["area_to_window_end"] == pytest.approx(window * HOUR, rel=1e-13)
    assert a["area_to_infinity"] == pytest.approx((1 / 0.5 + 0.3 / 0.5) * HOUR, rel=1e-13)


@pytest.mark.parametrize("end", [1, 2])
def test_the_limit_refers_to_the_conditions_after_the_last_operation(end):
    # the feed window has ended (also when it ends with the window): all fed A ends in B
    per, whole = summary(
        "A -> B  k = 1 1/h\nstart A = 1 M\nfrom 0 h to 1 h: feed A = 0.5 mol/L/h", end
    )
    assert per["B"]["limit"] == pytest.approx(1.5, rel=1e-14)
    assert per["A"]["limit"] == 0.0
    assert "refer to the conditions after the last operation" in whole["timeline_note"]


def test_amounts_formed_count_what_was_removed():
    _, whole = summary("A -> B  k = 1 1/h\nstart A = 1 M\nat 1 h: remove 50 % of B", 3)
    assert whole["end_products"] == ["B"]
    formed = whole["amount_formed_at_window_end"]["B"]
    assert formed == pytest.approx(1 - math.exp(-3.0), rel=1e-13)
    assert whole["amount_formed_in_limit"]["B"] == pytest.approx(1.0, rel=1e-13)
    assert whole["selectivity_at_window_end"] == {"B": 1.0}


def test_no_amounts_formed_in_a_run_with_volumes():
    _, whole = summary("A -> B  k = 1 1/h\nstart A = 1 mol/L\nvolume = 1 L\nat 1 h: add 1 L", 2)
    assert whole["amount_formed_at_window_end"] is None
    assert whole["selectivity_in_limit"] is None
    assert "amounts formed are not given in a run with volumes" in whole["timeline_note"]


def test_a_maximum_inside_a_ramp_is_found_on_its_sub_steps():
    # B of A -> B -> C during a heating ramp: the summary's maximum is at least as high as
    # every row of a fine table, and within the ramp estimate of the highest one
    text = (
        "A -> B  k1 = arrhenius(A = 1e9 1/s, Ea = 70 kJ/mol)\n"
        "B -> C  k2 = arrhenius(A = 1e12 1/s, Ea = 90 kJ/mol)\n"
        "temperature = 25 degC\nstart A = 1 M\nfrom 0 h to 4 h: temperature 25 degC -> 80 degC"
    )
    sol = kinetics.solve(kinetics.parse(text), np.linspace(0.0, 4 * HOUR, 2001))
    per, _ = summarise_run(sol)
    b = per["B"]
    grid = float(sol["B"].max())
    assert b["c_max"] >= grid * (1 - 1e-12)
    assert b["c_max"] == pytest.approx(grid, rel=1e-5)
    assert 0 < b["t_max"] < 4 * HOUR


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.analysis.run_summary as module

    assert doctest.testmod(module).failed == 0


# --------------------------------------------------------------------------
# requirements on a run with operations (closed forms per stretch, mpmath)
# --------------------------------------------------------------------------


def checked(text, end_hours, points=3):
    from kinetics.analysis.run_summary import run_requirements

    sol = kinetics.solve(kinetics.parse(text), np.linspace(0.0, end_hours * HOUR, points))
    return run_requirements(sol)


def test_a_requirement_after_an_addition_follows_the_closed_form_of_its_stretch():
    # A -> B, k = 0.1 1/h, a second portion of 0.5 M at 2 h; 50 % of the start is reached
    # on the second stretch: (e^{-2k} + 0.5) e^{-k (t - 2 h)} = 0.5 (closed form A = A0
    # e^{-kt} per stretch, any physical chemistry textbook); beyond the 4 h window
    out = checked("A -> B  k = 0.1 1/h\nstart A = 1 M\nrequire A >= 50 %\nat 2 h: add A = 0.5 M", 4)
    (t,) = out.times
    exact = 2 + math.log((math.exp(-0.2) + 0.5) / 0.5) / 0.1
    assert t.first_broken == pytest.approx(exact * HOUR, rel=1e-12)
    assert t.beyond_window is True
    assert t.by_operation is False
    assert out.all_hold_until == pytest.approx(exact * HOUR, rel=1e-12)


def test_a_removal_breaks_a_requirement_at_its_time():
    # 60 % of A removed at 1 h: 0.4 e^{-0.01} < 0.5 just after (closed form)
    out = checked(
        "A -> B  k = 0.01 1/h\nstart A = 1 M\nrequire A >= 50 %\nat 1 h: remove 60 % of A", 2
    )
    (t,) = out.times
    assert t.first_broken == HOUR
    assert t.by_operation is True
    assert t.holds_at_start is True
    assert t.holds_between == ((0.0, HOUR),)
    assert out.to_dict()["requirements"][0]["broken_by_operation"] is True


def test_a_removal_makes_a_requirement_hold_again():
    # B of A -> B (k = 1 1/h) rises as 1 - e^{-kt}: above 0.5 at ln 2 h; all of B removed
    # at 1 h, then it rises again from 0 as e^{-k} (1 - e^{-k (t - 1 h)}), which stays
    # below e^{-1} < 0.5 for ever (closed forms)
    out = checked(
        "A -> B  k = 1 1/h\nstart A = 1 M\nrequire B <= 0.5 M\nat 1 h: remove 100 % of B", 3
    )
    (t,) = out.times
    assert t.first_broken == pytest.approx(math.log(2) * HOUR, rel=1e-13)
    assert t.by_operation is False
    (a, b), (c, d) = t.holds_between
    assert (a, c, d) == (0.0, HOUR, math.inf)
    assert b == pytest.approx(math.log(2) * HOUR, rel=1e-13)
    assert out.windows[1] == (HOUR, math.inf)


def test_a_temperature_step_changes_the_rate_of_the_second_stretch():
    # A -> B with k = A exp(-Ea/RT) (Arrhenius; R = N_A k_B = 8.31446261815324 J/(mol K),
    # CODATA 2018, exact); 90 % of A left: k1 T + k2 (t - T) = ln(10/9) with the step at T = 2 d
    # (closed form per stretch)
    text = (
        "A -> B  k = arrhenius(A = 1.0e12 1/s, Ea = 110 kJ/mol)\ntemperature = 25 degC\n"
        "start A = 1 M\nrequire A >= 90 %\nat 2 d: temperature = 40 degC"
    )
    R = 8.31446261815324
    k1, k2 = (1e12 * math.exp(-110e3 / (R * T)) for T in (298.15, 313.15))
    step = 2 * 86400.0
    assert k1 * step < math.log(10 / 9)  # still above 90 % at the step
    out = checked(text, 10 * 24)
    exact = step + (math.log(10 / 9) - k1 * step) / k2
    assert out.times[0].first_broken == pytest.approx(exact, rel=1e-12)
    assert out.times[0].beyond_window is False


def test_requirements_against_mpmath_with_repeated_elutions():
    # intermediate B of A -> B -> C, 80 % of B removed every 3 h; require B <= 0.2 M
    # is broken and holds again several times.  Reference: the piecewise solution by
    # mpmath matrix exponentials at 40 digits and its roots by mpmath.findroot
    # (a general-purpose arbitrary-precision library)
    text = (
        "A -> B  k1 = 0.5 1/h\nB -> C  k2 = 0.1 1/h\nstart A = 1 M\nrequire B <= 0.2 M\n"
        "every 3 h: remove 80 % of B"
    )
    out = checked(text, 12)
    (t,) = out.times
    with mpmath.workdps(40):
        K = mpmath.matrix([[-0.5, 0, 0], [0.5, -0.1, 0], [0, 0.1, 0]]) / 3600
        x = mpmath.matrix([1, 0, 0])
        starts = []
        for k in range(5):  # stretches [3k, 3k + 3] h, the last one continued
            starts.append(x.copy())
            x = mpmath.expm(K * 3 * 3600) * x
            if k < 4:
                x[1] *= mpmath.mpf(1) / 5
        roots = []

        def level_gap(x0):
            return lambda h: (mpmath.expm(K * h) * x0)[1] - mpmath.mpf("0.2")

        for k, x0 in enumerate(starts):
            g = level_gap(x0)

            grid = np.linspace(0.0, 3 * 3600.0 if k < 4 else 200 * 3600.0, 400)
            vals = [g(mpmath.mpf(h)) for h in grid]
            for h0, h1, v0, v1 in zip(grid, grid[1:], vals, vals[1:], strict=False):
                if v0 * v1 < 0:
                    root = mpmath.findroot(g, (mpmath.mpf(h0), mpmath.mpf(h1)), solver="illinois")
                    roots.append(3 * 3600.0 * k + float(root))
    crossings = [e for span in t.holds_between for e in span if 0 < e < math.inf]
    jumps = [e for e in crossings if e % (3 * 3600.0) == 0.0]
    inside = [e for e in crossings if e % (3 * 3600.0) != 0.0]
    assert inside == pytest.approx(roots, rel=1e-12)
    assert jumps  # the removals bring B back under the ceiling at operation times
    assert t.first_broken == pytest.approx(roots[0], rel=1e-12)


@pytest.mark.parametrize("end_hours", [0, 1])
def test_an_addition_at_time_zero_breaks_a_requirement_from_the_start(end_hours):
    # B = 0.6 M added at 0 h, above the ceiling at once; B only rises after (A -> B)
    out = checked(
        "A -> B  k = 1 1/h\nstart A = 1 M\nrequire B <= 0.5 M\nat 0 h: add B = 0.6 M", end_hours
    )
    (t,) = out.times
    assert (t.first_broken, t.by_operation, t.holds_between) == (0.0, True, ())
    assert out.window is None


@settings(max_examples=15, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.integers(1, 40),  # time [0.1 h]
            st.sampled_from(["add", "remove"]),
            st.integers(5, 95),  # amount [0.01 M] or part removed [%]
        ),
        min_size=1,
        max_size=4,
        unique_by=lambda op: op[0],
    ),
    st.integers(20, 80),  # the level [% of the start]
)
def test_first_broken_of_a_decay_with_operations_matches_the_closed_form(ops, level):
    # A -> B, k = 0.3 1/h, start 1 M, require A >= level % of the start.  Per stretch
    # A = A(a+) e^{-k (t - a)} falls monotonically (closed form), so it is broken inside
    # the first stretch whose fall reaches the level, at a + ln(A(a+)/L)/k, or at the
    # first removal that takes it below L (additions only raise it)
    k, L = 0.3, level / 100
    ops = sorted(ops)
    lines = [f"A -> B  k = {k} 1/h", "start A = 1 M", f"require A >= {level} %"]
    for t, kind, x in ops:
        if kind == "add":
            lines.append(f"at {t / 10} h: add A = {x / 100} M")
        else:
            lines.append(f"at {t / 10} h: remove {x} % of A")
    out = checked("\n".join(lines), 5)
    a, value, expected, by_op = 0.0, 1.0, None, False
    for t, kind, x in [*ops, (math.inf, "end", 0)]:
        stop = t / 10
        if value >= L and a + math.log(value / L) / k < stop:
            expected = a + math.log(value / L) / k
            break
        if kind == "end":
            break
        before = value * math.exp(-k * (stop - a))
        value = before + x / 100 if kind == "add" else before * (1 - x / 100)
        a = stop
        if before >= L > value:
            expected, by_op = stop, True
            break
    (t,) = out.times
    assert t.first_broken == pytest.approx(expected * HOUR, rel=1e-12)
    assert t.by_operation is by_op
