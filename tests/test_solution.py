"""The model-level API: solve(scheme, times) -> Solution, to_frame, summary, time helpers."""

from __future__ import annotations

import math

import numpy as np
import pytest

import kinetics
from kinetics.errors import SettingError, SpeciesError, TimesError
from kinetics.solution import check_times, time_factor, time_grid

CHAIN = "A -> B  k1 = 0.3 1/s\nB -> C  k2 = 0.1 1/s\nstart A = 2 mol/L\n"


def test_first_order_decay_against_the_closed_form():
    scheme = kinetics.parse("A -> B  k = 0.25 1/s\nstart A = 1.5 mmol/L\n")
    t = np.array([0.0, 0.5, 1.0, 4.0, 20.0])
    result = kinetics.solve(scheme, t)
    # A(t) = A0 exp(-k t), B = A0 - A (first-order kinetics, any textbook)
    a = 1.5 * np.exp(-0.25 * t)
    np.testing.assert_allclose(result["A"], a, rtol=1e-14, atol=0)
    np.testing.assert_allclose(result["B"], 1.5 - a, rtol=1e-13, atol=1e-16)
    assert result.concentration_unit == "mmol/L"
    assert result.species == ["A", "B"]


def test_consecutive_chain_against_bateman():
    result = kinetics.solve(kinetics.parse(CHAIN), [0.0, 1.0, 5.0, 30.0])
    t = result.times
    k1, k2, a0 = 0.3, 0.1, 2.0
    # Bateman (1910) for A -> B -> C with k1 != k2
    b = a0 * k1 / (k2 - k1) * (np.exp(-k1 * t) - np.exp(-k2 * t))
    c = a0 - a0 * np.exp(-k1 * t) - b
    np.testing.assert_allclose(result["B"], b, rtol=1e-13, atol=0)
    np.testing.assert_allclose(result["C"], c, rtol=1e-13, atol=0)
    # time 0 returns the start values exactly (common practice, no source)
    assert result.concentrations[0].tolist() == [2.0, 0.0, 0.0]


def test_zero_order_feed_into_first_order_decay():
    scheme = kinetics.parse("A -> B  k = 0.5 1/h\nfeed A = 0.2 mol/L/h\nstart B = 0 mol/L\n")
    t_h = np.array([0.0, 1.0, 3.0, 10.0])
    result = kinetics.solve(scheme, t_h * 3600.0)
    # constant input f into a first-order sink: A(t) = f/k (1 - exp(-k t)) (textbook)
    expected = 0.2 / 0.5 * (1.0 - np.exp(-0.5 * t_h))
    np.testing.assert_allclose(result["A"], expected, rtol=1e-13, atol=0)


def test_to_frame_units_and_values():
    result = kinetics.solve(kinetics.parse(CHAIN), [0.0, 30.0, 90.0])
    frame = result.to_frame("min")
    assert frame.columns.tolist() == ["time [min]", "A [mol/L]", "B [mol/L]", "C [mol/L]"]
    assert frame["time [min]"].tolist() == [0.0, 0.5, 1.5]
    np.testing.assert_array_equal(frame.iloc[:, 1:].to_numpy(), result.concentrations)
    assert result.to_frame().columns[0] == "time [s]"


def test_summary_method_in_the_chosen_unit():
    result = kinetics.solve(kinetics.parse(CHAIN), np.linspace(0.0, 60.0, 61))
    summary = result.summary("min")
    # first-order half-life ln2/k1 (textbook), in minutes
    assert summary["A"]["half_life"] == pytest.approx(math.log(2) / 0.3 / 60, rel=1e-9, abs=0)
    # consecutive reactions: t_max = ln(k1/k2)/(k1-k2) (any physical chemistry textbook)
    assert summary["B"]["t_max"] == pytest.approx(math.log(3) / 0.2 / 60, rel=1e-9, abs=0)
    assert summary["C"]["limit"] == pytest.approx(2.0, rel=1e-12, abs=0)


def test_unknown_species_is_a_species_error():
    result = kinetics.solve(kinetics.parse(CHAIN), [0.0, 1.0])
    with pytest.raises(SpeciesError) as info:
        result["Q"]
    assert str(info.value) == "Q is not a species of this scheme; species are A, B, C"
    with pytest.raises(SpeciesError, match="not a species"):
        result.plot(species=["Q"], summary=None)


def test_plot_refuses_other_file_types(tmp_path):
    result = kinetics.solve(kinetics.parse(CHAIN), [0.0, 1.0])
    with pytest.raises(SettingError, match=r"use a \.png or \.svg file name"):
        result.plot(tmp_path / "x.pdf", summary=None)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(
    ("times", "message"),
    [
        ([], "the time list is empty"),
        ([0.0, -1.0], "a time is negative"),
        ([0.0, 2.0, 1.0], "not in increasing order"),
        ([0.0, float("nan")], "not a finite number"),
        ([0.0, float("inf")], "not a finite number"),
        (["zero", "one"], "the times are not numbers"),
    ],
)
def test_bad_times(times, message):
    with pytest.raises(TimesError, match=message):
        check_times(times)
    with pytest.raises(TimesError, match=message):
        kinetics.solve(kinetics.parse(CHAIN), times)


def test_time_grid():
    grid = time_grid(90.0, 4)
    assert grid.tolist() == [0.0, 30.0, 60.0, 90.0]
    with pytest.raises(TimesError) as info:
        time_grid(0.0)
    assert str(info.value) == (
        "the end time must be positive and finite, not 0 s; give the end of the window in "
        "seconds, e.g. 5400 for 90 min"
    )
    with pytest.raises(TimesError) as info:
        time_grid("soon")
    assert info.value.problem == "the end time 'soon' is not a number"
    with pytest.raises(TimesError) as info:
        time_grid(10.0, 1)
    assert str(info.value) == "a grid needs at least 2 points, not 1; e.g. points=201"


def test_time_factor():
    # SI definitions of minute, hour and day (common practice, no source)
    assert time_factor("s") == 1.0
    assert time_factor("min") == 60.0
    assert time_factor("h") == 3600.0
    assert time_factor("d") == 86400.0
    with pytest.raises(TimesError, match="'kg' is not a unit of time"):
        time_factor("kg")
    with pytest.raises(TimesError, match="unknown time unit 'bananas'"):
        time_factor("bananas")


def test_solution_carries_the_certified_error_bound():
    # first-order decay A -> B: A(t) = A0 exp(-k t) (closed form, any physical chemistry text)
    import math

    import kinetics

    scheme = kinetics.parse("A -> B  k1 = 0.3 1/s\nstart A = 2 mol/L")
    times = [0.0, 1.0, 5.0, 20.0]
    result = kinetics.solve(scheme, times)
    assert result.error_bound.shape == (4,)
    assert result.error_bound[0] == 0.0
    for j, t in enumerate(times):
        exact = 2.0 * math.exp(-0.3 * t)
        error = abs(result["A"][j] - exact) / exact
        # the bound certifies the exact exponential of the given doubles; the closed form
        # evaluated in double adds about one rounding of exp (a few 1e-16)
        assert error <= result.error_bound[j] + 4e-16


def test_a_scheme_solved_again_is_checked_against_each_new_end_time():
    """The working-range check is remembered per scheme only up to the latest end time
    that passed: a later end time is checked again (working range: README, "Limits of
    the method"; lifetimes sigma t at most 1e27)."""
    from kinetics.errors import WorkingRangeError

    scheme = kinetics.parse("A -> B  k1 = 1e6 1/s\nstart A = 1 mol/L\n")
    first = kinetics.solve(scheme, [0.0, 1e-6])
    again = kinetics.solve(scheme, [0.0, 1e-6])
    assert np.array_equal(first.concentrations, again.concentrations)
    with pytest.raises(WorkingRangeError, match="lifetimes"):
        kinetics.solve(scheme, [0.0, 1e22])
    # an earlier end time still passes after the refusal
    assert kinetics.solve(scheme, [0.0, 5e-7]).concentrations[1, 0] == pytest.approx(
        math.exp(-0.5), rel=1e-15
    )


def test_what_a_solve_keeps_per_scheme_is_not_shared_with_its_results():
    """Mutating one solution's species list or table leaves the next solve as it was."""
    scheme = kinetics.parse(CHAIN)
    first = kinetics.solve(scheme, [0.0, 1.0])
    first.species.append("X")
    first.concentrations[:] = -1.0
    again = kinetics.solve(scheme, [0.0, 1.0])
    assert again.species == ["A", "B", "C"]
    # A(t) = A0 exp(-k1 t) (first-order decay, closed form)
    assert again["A"][1] == pytest.approx(2.0 * math.exp(-0.3), rel=1e-15)
    assert again.concentrations[0].tolist() == [2.0, 0.0, 0.0]
