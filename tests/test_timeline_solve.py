"""Solving under a timeline: rows, events, notes, temperatures and invariants.

Reference values: exact identities of linear first-order kinetics (superposition of an
addition, conservation of mass in a closed scheme with the removed amounts counted,
complete removal leaves exactly zero) and closed forms named beside each check.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kinetics
from kinetics.errors import SchemeErrors, SettingError, shown_value
from kinetics.time_text import in_time_unit
from kinetics.timeline import (
    Addition,
    At,
    Every,
    FeedWindow,
    Removal,
    TemperatureRamp,
    TemperatureStep,
    Timeline,
)
from kinetics.timeline_solve import Event, solve_timeline

HOUR = 3600.0
CLOSED = kinetics.parse(
    "A -> B  k1 = 1.2 1/h\nB -> C  k2 = 0.3 1/h\nB -> A  k3 = 0.05 1/h\nstart A = 1 mol/L"
)
HEATED = kinetics.parse(
    "A -> B  k = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\nB -> C  k2 = 1e-4 1/s\n"
    "temperature = 25 degC\nstart A = 1 mol/L"
)


def zero_start(scheme):
    return scheme.with_values(initial=dict.fromkeys(scheme.species_names, 0.0))


def test_superposition_of_an_addition():
    # linear kinetics: with(addition at T) = without + response to the addition from T
    # (exact identity), also through a later removal and under a feed window
    base = [
        FeedWindow(0.5 * HOUR, 2 * HOUR, {"B": 0.2 / HOUR}),
        At(3 * HOUR, Removal.percent(40, "C", "B")),
    ]
    added = At(1.25 * HOUR, Addition({"A": 0.7, "C": 0.01}))
    times = np.linspace(0.0, 5 * HOUR, 23)  # no grid time at an operation
    total = solve_timeline(CLOSED, Timeline([*base, added]), times)
    without = solve_timeline(CLOSED, Timeline(base), times)
    response = solve_timeline(zero_start(CLOSED), Timeline([added, base[1]]), times)
    summed = without.concentrations + response.concentrations
    np.testing.assert_allclose(total.concentrations, summed, rtol=1e-14, atol=0)


def test_a_time_with_an_addition_or_removal_appears_twice():
    line = Timeline([At(HOUR, Addition({"A": 0.5})), At(2 * HOUR, TemperatureStep(300.0))])
    sol = solve_timeline(CLOSED, line, [0.0, HOUR, 2 * HOUR])
    assert sol.times.tolist() == [0.0, HOUR, HOUR, 2 * HOUR]  # a temperature moves nothing
    assert sol.after.tolist() == [False, False, True, False]
    assert sol["A"][2] == sol["A"][1] + 0.5


def test_operations_at_time_zero_and_at_the_end_of_the_window():
    line = Timeline([At(0.0, Addition({"B": 0.25})), At(HOUR, Removal.percent(100, "B"))])
    sol = solve_timeline(CLOSED, line, [0.0, HOUR])
    assert sol.times.tolist() == [0.0, 0.0, HOUR, HOUR]
    assert sol.concentrations[0].tolist() == [1.0, 0.0, 0.0]
    assert sol.concentrations[1].tolist() == [1.0, 0.25, 0.0]
    assert sol["B"][3] == 0.0  # complete removal: exactly zero
    assert sol.removed("B")[1][0] == sol["B"][2]


def test_include_operations_adds_rows_at_every_jump():
    line = Timeline([Every(0.7 * HOUR, Addition({"A": 0.1}), until=2 * HOUR)])
    sol = solve_timeline(CLOSED, line, [0.0, 3 * HOUR], include_operations=True)
    assert sol.times.tolist() == [0.0, 0.7 * HOUR, 0.7 * HOUR, 1.4 * HOUR, 1.4 * HOUR, 3 * HOUR]
    plain = solve_timeline(CLOSED, line, [0.0, 3 * HOUR])
    np.testing.assert_array_equal(plain.concentrations[-1], sol.concentrations[-1])


def test_events_in_time_order_with_signed_changes():
    line = Timeline(
        [
            Every(HOUR, Removal.percent(50, "C")),
            FeedWindow(0.5 * HOUR, 1.5 * HOUR, {"A": 1e-4, "B": 2e-5}),
            At(0.25 * HOUR, Addition({"A": 0.5})),
        ]
    )
    sol = solve_timeline(CLOSED, line, [0.0, 2 * HOUR])
    assert [(e.time / HOUR, e.action, e.species) for e in sol.events] == [
        (0.25, "add", "A"),
        (0.5, "feed on", "A"),
        (0.5, "feed on", "B"),
        (1.0, "remove", "C"),
        (1.5, "feed off", "A"),
        (1.5, "feed off", "B"),
        (2.0, "remove", "C"),
    ]
    add, on = sol.events[0], sol.events[1]
    assert (add.change, add.value, add.statement) == (0.5, None, 2)
    assert (on.change, on.value, on.statement) == (0.0, 1e-4, 1)
    removed = [e for e in sol.events if e.action == "remove"]
    assert all(e.change < 0 for e in removed)
    assert sol.removed("C")[1].tolist() == [-e.change for e in removed]
    assert all(isinstance(e, Event) and isinstance(e.change, float) for e in sol.events)
    # the removed amount is half of what was there just before
    assert -removed[1].change == pytest.approx(0.5 * sol["C"][-2], rel=1e-15)


def test_temperatures_follow_steps_and_ramps():
    line = Timeline(
        [At(HOUR, TemperatureStep(310.0)), TemperatureRamp(2 * HOUR, 4 * HOUR, 310.0, 330.0)]
    )
    sol = solve_timeline(HEATED, line, np.linspace(0.0, 5 * HOUR, 11), ramp_rtol=1e-6)
    assert sol.temperatures.tolist() == pytest.approx(
        [298.15, 298.15, 310.0, 310.0, 310.0, 315.0, 320.0, 325.0, 330.0, 330.0, 330.0]
    )
    kinds = [(e.time / HOUR, e.action, e.value) for e in sol.events]
    assert kinds == [
        (1.0, "temperature", 310.0),
        (2.0, "temperature", 310.0),
        (4.0, "temperature", 330.0),
    ]
    assert sol.ramp_substeps > 0


def test_no_temperature_column_without_temperatures():
    sol = solve_timeline(CLOSED, Timeline([]), [0.0, HOUR])
    assert sol.temperatures is None
    assert sol.events == ()
    assert sol.ramp_estimate.tolist() == [0.0, 0.0]
    assert sol.ramp_substeps == 0


def test_without_operations_it_is_the_plain_solve():
    times = np.linspace(0.0, 3 * HOUR, 7)
    plain = kinetics.solve(CLOSED, times)
    sol = solve_timeline(CLOSED, Timeline([]), times)
    np.testing.assert_allclose(sol.concentrations, plain.concentrations, rtol=2e-15, atol=0)
    assert sol.after.tolist() == [False] * 7


def test_notes_reach_the_solution():
    line = Timeline([At(5 * HOUR, Addition({"A": 1.0})), TemperatureRamp(0.0, HOUR, 300.0, 310.0)])
    sol = solve_timeline(CLOSED, line, [0.0, 2 * HOUR])
    assert sol.notes == (
        "a temperature operation has no effect: no rate constant of the scheme follows the "
        "Arrhenius law",
        "1 operation from 18000 s on falls after the end of the window (7200 s) and was "
        "not applied",
    )
    # the note keeps its times for the unit of a command
    assert in_time_unit(sol.notes[1], "h") == (
        "1 operation from 5 h on falls after the end of the window (2 h) and was not applied"
    )
    assert sol.ramp_substeps == 0


def test_feed_windows_add_to_the_always_on_feed():
    fed = kinetics.parse("A -> B  k1 = 1 1/h\nfeed A = 0.1 mol/L/h\nstart A = 0 mol/L")
    line = Timeline(
        [FeedWindow(0.0, HOUR, {"A": 0.2 / HOUR}), FeedWindow(0.0, HOUR, {"A": 0.1 / HOUR})]
    )
    sol = solve_timeline(fed, line, [0.0, HOUR])
    # a constant feed f into A -> B from zero: A(t) = f/k (1 - exp(-k t)) (closed form)
    f, k = 0.4 / HOUR, 1.0 / HOUR
    assert sol["A"][-1] == pytest.approx(f / k * (1 - math.exp(-1.0)), rel=1e-14)


def test_a_grid_that_starts_later_and_repeats_a_time():
    line = Timeline([At(HOUR, Addition({"A": 1.0}))])
    sol = solve_timeline(CLOSED, line, [0.5 * HOUR, 0.5 * HOUR, 2 * HOUR])
    assert sol.times.tolist() == [0.5 * HOUR, 0.5 * HOUR, 2 * HOUR]
    np.testing.assert_array_equal(sol.concentrations[0], sol.concentrations[1])


def test_plain_double_route_keeps_an_honest_larger_bound():
    line = Timeline([Every(HOUR, Addition({"A": 0.1}))])
    fine = solve_timeline(CLOSED, line, np.linspace(0, 6 * HOUR, 13))
    rough = solve_timeline(CLOSED, line, np.linspace(0, 6 * HOUR, 13), precision="double")
    gap = np.abs(rough.concentrations - fine.concentrations) / fine.concentrations.clip(1e-300)
    assert np.all(gap.max(axis=1) <= rough.error_bound + fine.error_bound)
    assert rough.error_bound.max() < 1e-12


@settings(max_examples=25, deadline=None)
@given(
    ops=st.lists(
        st.tuples(
            st.floats(0.0, 4.0),
            st.sampled_from(["A", "B", "C"]),
            st.one_of(st.floats(0.0, 2.0), st.fractions(0, 1)),
            st.booleans(),
        ),
        max_size=6,
    )
)
def test_mass_is_conserved_with_the_moved_amounts_counted(ops):
    # closed scheme (every step moves one molecule into one): total(t) - added + removed
    # is the start total (conservation; exact identity)
    line = Timeline(
        [
            At(t * HOUR, Addition({s: float(v)}) if add else Removal(s, min(v, 1)))
            for t, s, v, add in ops
        ]
    )
    sol = solve_timeline(CLOSED, line, np.linspace(0.0, 5 * HOUR, 6))
    moved = np.zeros(sol.times.size)
    for e in sol.events:
        moved += np.where((sol.times > e.time) | ((sol.times == e.time) & sol.after), e.change, 0.0)
    total = sol.concentrations.sum(axis=1) - moved
    assert np.all(sol.concentrations >= 0)
    np.testing.assert_allclose(total, 1.0, rtol=1e-13 * (1 + len(ops)))


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.timeline_solve as module

    assert doctest.testmod(module).failed == 0


@pytest.mark.parametrize("bad", [0.0, 1.5, float("nan"), "1e-9"])
def test_ramp_rtol_is_checked(bad):
    with pytest.raises(SettingError) as info:
        solve_timeline(CLOSED, Timeline([]), [0.0, 1.0], ramp_rtol=bad)
    assert type(info.value) is SettingError
    assert (
        info.value.problem == f"ramp_rtol must be a number between 0 and 1, not {shown_value(bad)}"
    )
    assert info.value.hint == "e.g. 1e-10 (relative accuracy of the ramp sub-steps)"


def test_include_operations_keeps_repeated_output_times():
    line = Timeline([At(0.5 * HOUR, Addition({"A": 0.1}))])
    sol = solve_timeline(CLOSED, line, [0.0, HOUR, HOUR], include_operations=True)
    assert sol.times.tolist() == [0.0, 0.5 * HOUR, 0.5 * HOUR, HOUR, HOUR]


def test_mistakes_in_the_timeline_come_out_together():
    line = Timeline([At(-1.0, Addition({"A": 1.0})), At(1.0, Addition({"Z": 1.0}))])
    with pytest.raises(SchemeErrors) as info:
        solve_timeline(CLOSED, line, [0.0, HOUR])
    assert len(info.value.errors) == 2


def test_a_step_at_the_end_of_a_ramp_takes_over_from_it():
    line = Timeline(
        [TemperatureRamp(HOUR, 2 * HOUR, 300.0, 320.0), At(2 * HOUR, TemperatureStep(290.0))]
    )
    sol = solve_timeline(HEATED, line, [0.0, 1.5 * HOUR, 2 * HOUR, 3 * HOUR], ramp_rtol=1e-6)
    assert sol.temperatures.tolist() == [298.15, 310.0, 290.0, 290.0]
    cooled = HEATED.with_values(temperature=290.0)
    at_two = solve_timeline(HEATED, line, [0.0, 2 * HOUR], ramp_rtol=1e-6).concentrations[-1]
    # after 2 h: the isothermal stretch at 290 K from the state the ramp left (exact)
    tail = kinetics.solve(
        cooled.with_values(initial=dict(zip(cooled.species_names, at_two, strict=True))),
        [0.0, HOUR],
    )
    np.testing.assert_allclose(sol.concentrations[-1], tail.concentrations[-1], rtol=1e-14)
