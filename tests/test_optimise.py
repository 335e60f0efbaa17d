"""The optimisation (kinetics/optimise/api.py, search.py, result.py): flat ranges, starts,
infeasible problems, the JSON-ready result, the landscape of a figure and the messages.
Closed forms of A -> B -> C: Bateman 1910; Atkins & de Paula, "Physical Chemistry",
10th ed., 2014 (t_max = ln(k1/k2)/(k1 - k2))."""

from __future__ import annotations

import doctest
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kinetics
from kinetics.errors import (
    ActivityError,
    ConcentrationError,
    SettingError,
    SpeciesError,
    TimesError,
)
from kinetics.optimise import api, landscape, optimise, search

K1, K2 = 0.3, 0.1
CHAIN = kinetics.parse(f"A -> B  k1 = {K1} 1/s\nB -> C  k2 = {K2} 1/s\nstart A = 1 mol/L")


def _b(t):
    return K1 / (K2 - K1) * (math.exp(-K1 * t) - math.exp(-K2 * t))


@pytest.mark.parametrize("module", [api, search])
def test_doctests_run(module):
    failed, _ = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert failed == 0


def test_the_flat_range_ends_where_the_target_is_one_percent_below_the_best():
    best = optimise(CHAIN, "B", "time=0:30:s")
    ((low, high),) = best.flat
    assert _b(low) == pytest.approx(0.99 * best.objective, rel=1e-10)
    assert _b(high) == pytest.approx(0.99 * best.objective, rel=1e-10)
    assert low < best.x[0] < high
    assert set(best.counts) == {"grid", "local", "with_gradient", "starts", "flatness"}
    assert best.counts["starts"] == 1  # one distinct grid maximum: the others are its neighbours


def test_a_minimum_and_a_requirement_that_ends_the_flat_range():
    # minimise A with B at most 50 % of A's start: A falls, B rises to 0.5 at some time
    scheme = kinetics.parse(
        f"A -> B  k1 = {K1} 1/s\nB -> C  k2 = {K2} 1/s\nstart A = 1 mol/L\nrequire B <= 50 % of A"
    )
    best = optimise(scheme, "A", "time=0:8:s", sense="minimise")  # B > 0.5 from 3 to 8.6 s
    (row,) = best.requirements
    assert row["active"]
    assert _b(best.x[0]) == pytest.approx(0.5, rel=1e-9)
    assert best.flat[0][1] == pytest.approx(best.x[0], rel=1e-8)  # the requirement binds
    assert math.exp(-K1 * best.flat[0][0]) == pytest.approx(1.01 * best.objective, rel=1e-9)


def test_no_feasible_setting_is_said_and_the_closest_is_shown():
    scheme = kinetics.parse(
        f"A -> B  k1 = {K1} 1/s\nB -> C  k2 = {K2} 1/s\nstart A = 1 mol/L\nrequire B >= 90 % of A"
    )
    best = optimise(scheme, "C", "time=0:30:s")
    assert not best.feasible
    assert best.notes == (
        "no setting within the bounds meets every requirement; the settings shown come "
        "closest (the smallest shortfall)",
    )
    assert best.flat == ((best.x[0], best.x[0]),)
    # closest: near B's highest point (a search for the optimum, not for the least shortfall)
    assert best.x[0] == pytest.approx(math.log(3) / 0.2, rel=1e-3)


def test_a_named_quantity_and_a_start_value_as_settings():
    scheme = kinetics.parse(
        "t_p = 5 s\nA -> B  k1 = 0.3 1/s\nB -> C  k2 = ln(2) / t_p\nstart A = 1 mol/L"
    )
    best = optimise(scheme, "B", ["t_p=1:20:s", "start:A=0.5:2"], until=4.0)
    # B grows with the start value and with a slower decay: both at their upper bounds
    assert best.best == {"t_p": pytest.approx(20.0), "start:A": pytest.approx(2.0)}
    k2 = math.log(2) / 20
    expected = 2 * K1 / (k2 - K1) * (math.exp(-K1 * 4) - math.exp(-k2 * 4))
    assert best.objective == pytest.approx(expected, rel=1e-13)


def test_the_result_is_json_ready():
    best = optimise(CHAIN, "B", "time=0:30:s")
    doc = best.to_dict()
    json.dumps(doc, allow_nan=False)
    assert doc["best"] == {"time": {"value": pytest.approx(math.log(3) / 0.2), "unit": "s"}}
    assert doc["objective"] == pytest.approx((K1 / K2) ** (K2 / (K2 - K1)), rel=1e-12)
    assert doc["active_requirements"] == []
    assert doc["target"] == {
        "species": "B",
        "sense": "maximise",
        "at": "end",
        "quantity": "concentration",
    }


def test_the_landscape_holds_the_others_at_the_optimum():
    scheme = kinetics.parse(
        "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\nB -> C  k2 = 1e-3 1/s\n"
        "temperature = 50 degC\nstart A = 1 mol/L\nrequire C <= 30 % of A"
    )
    best = optimise(scheme, "B", ["temperature=20:80:degC", "time=0:2:h"])
    axes, target, margin = landscape(best, scheme, points=5)
    assert [a.shape for a in axes] == [(5,), (5,)]
    assert target.shape == margin.shape == (5, 5)
    np.testing.assert_allclose(axes[0], [20, 35, 50, 65, 80])
    assert (margin < 0).any()
    assert (margin > 0).any()
    one = optimise(CHAIN, "B", "time=0:30:s")
    axes, target, margin = landscape(one, CHAIN, points=4)
    assert target.shape == (4,)
    assert np.isinf(margin).all()  # no requirement
    np.testing.assert_allclose(target, [_b(t) for t in axes[0]], rtol=1e-13)


@pytest.mark.parametrize(
    ("kwargs", "error", "message"),
    [
        (
            {"over": "time=0:1:s", "sense": "max"},
            SettingError,
            "sense 'max' is not known; use 'maximise' or 'minimise'",
        ),
        (
            {"over": "time=0:1:s", "species": "Q"},
            SpeciesError,
            "species='Q' is not a species of the scheme that changes; species: A, B, C",
        ),
        (
            {"over": "start:A=1:2", "until": None},
            TimesError,
            "no time given: the end time is needed; give until [s], e.g. until=36000.0, or a "
            "time entry in over, e.g. 'time=0:10:h'",
        ),
        (
            {"over": [], "best_time": True},
            TimesError,
            "no time given: the latest time to consider is needed; give until [s], e.g. "
            "until=36000.0, or a time entry in over, e.g. 'time=0:10:h'",
        ),
        (
            {"over": "time=0:1:s", "best_time": True, "until": 5.0},
            SettingError,
            "best_time=True finds the best time itself, so a time entry in over is not needed; "
            "give the latest time to consider as until [s], or set best_time=False and keep "
            "the time entry",
        ),
        (
            {"over": ["time=0:1:s", "time=0:2:s"]},
            SettingError,
            "over names time twice; give each setting once",
        ),
        (
            {"over": [], "until": -1.0, "best_time": True},
            TimesError,
            "until must be positive, not -1 s; give a time in seconds, e.g. until=36000.0",
        ),
        (
            {"over": [], "until": "10h", "best_time": True},
            TimesError,
            "until must be a number of seconds, not '10h'; give a time in seconds, e.g. "
            "until=36000.0",
        ),
        (
            {"over": [], "until": 5.0},
            SettingError,
            "nothing to optimise: no setting is given; give at least one in over, e.g. "
            "'temperature=20:80:degC' or 'time=0:10:h'",
        ),
        (
            {"over": "temperature=20:80:degC", "until": 5.0},
            SettingError,
            "over entry 'temperature=20:80:degC': no constant of the scheme follows the "
            "temperature, so it changes nothing; define a constant by a temperature law, e.g. "
            "k = arrhenius(A = ..., Ea = ...), to optimise the temperature",
        ),
    ],
)
def test_mistakes_are_refused_in_one_sentence(kwargs, error, message):
    arguments = {"species": "B", **kwargs}
    with pytest.raises(error) as err:
        optimise(CHAIN, **arguments)
    assert type(err.value) is error
    assert str(err.value) == message


def test_an_activity_target_is_refused_with_a_yield_or_for_a_stable_species():
    scheme = kinetics.parse("P -> D  half_life = 66 h\nstart P = 10 GBq")
    with pytest.raises(SettingError) as err:
        optimise(scheme, "D", "time=0:1:h", yield_basis=True, activity="GBq")
    assert str(err.value) == (
        "yield_basis=True and activity ask for two targets; optimise the yield or the activity"
    )
    with pytest.raises(ActivityError) as err:
        optimise(scheme, "D", "time=0:1:h", activity="GBq")
    assert str(err.value) == (
        "D does not decay: its activity is 0 at every setting; optimise its amount instead, "
        "or the activity of a species that decays"
    )
    with pytest.raises(ActivityError):
        optimise(scheme, "P", "time=0:1:h", activity="mol")


def test_a_yield_needs_start_values():
    scheme = kinetics.parse("A -> B  k1 = 0.3 1/s\nfeed A = 1 mol/L/s")
    with pytest.raises(ConcentrationError) as err:
        optimise(scheme, "B", "time=0:1:s", yield_basis=True)
    assert str(err.value) == (
        "yield_basis=True needs start values; give the starting materials start values"
    )


@settings(max_examples=15, deadline=None)
@given(k1=st.floats(0.01, 10.0), ratio=st.floats(0.05, 0.9))
def test_the_best_quench_of_any_a_to_b_to_c_is_the_textbook_maximum(k1, ratio):
    # invariant: t_max = ln(k1/k2)/(k1 - k2), B_max = (k1/k2)^(k2/(k2 - k1)) (Atkins & de Paula)
    k2 = k1 * ratio
    scheme = kinetics.parse(f"A -> B  k1 = {k1!r} 1/s\nB -> C  k2 = {k2!r} 1/s\nstart A = 1 mol/L")
    t_max = math.log(k1 / k2) / (k1 - k2)
    best = optimise(scheme, "B", f"time=0:{3 * t_max!r}:s")
    assert best.objective == pytest.approx((k1 / k2) ** (k2 / (k2 - k1)), rel=1e-12)
    assert best.x[0] == pytest.approx(t_max, rel=1e-6)
