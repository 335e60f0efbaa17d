"""Timeline statements: checks with every message pinned, expansion into operations."""

from __future__ import annotations

import math
from fractions import Fraction

import pytest

import kinetics
from kinetics.errors import SchemeError, SchemeErrors
from kinetics.timeline import (
    MAX_OPERATIONS,
    Addition,
    At,
    Every,
    FeedWindow,
    Place,
    Removal,
    TemperatureRamp,
    TemperatureStep,
    Timeline,
    check,
    expand,
)

SCHEME = kinetics.parse(
    "A -> B  k1 = 0.1 1/s\nB + W -> C  k2 = 0.01 M-1 s-1\nexcess W = 2 M\nstart A = 1 M"
)
HEATED = kinetics.parse(
    "A -> B  k = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\ntemperature = 25 degC\nstart A = 1 M"
)


def problems(line: Timeline, end: float = 100.0, scheme=SCHEME) -> list[str]:
    with pytest.raises(SchemeErrors) as info:
        expand(scheme, line, end)
    return [e.headline() for e in info.value.errors]


@pytest.mark.parametrize(
    ("line", "message"),
    [
        (
            Timeline([At(-5.0, Addition({"A": 1}))]),
            "<timeline>: the time of an operation must be finite and >= 0 s, not -5.0 s; "
            "operations happen at or after time 0, when the start values apply",
        ),
        (
            Timeline([At(math.nan, Addition({"A": 1}))]),
            "<timeline>: the time of an operation must be finite and >= 0 s, not nan s; "
            "operations happen at or after time 0, when the start values apply",
        ),
        (
            Timeline([At(math.inf, Addition({"A": 1}))]),
            "<timeline>: the time of an operation must be finite and >= 0 s, not inf s; "
            "operations happen at or after time 0, when the start values apply",
        ),
        (
            Timeline([At("1 h", Addition({"A": 1}))]),
            "<timeline>: the time of an operation must be a number of seconds, not '1 h'",
        ),
        (
            Timeline([At(5.0, Removal.percent(120, "B"))]),
            "<timeline>: cannot remove 120 %: the part removed must be from 0 to 100 %; "
            "write 100 % for a complete removal",
        ),
        (
            Timeline([At(5.0, Removal("B", "half"))]),
            "<timeline>: cannot remove a non-number: the part removed must be from 0 to 100 %; "
            "write 100 % for a complete removal",
        ),
        (
            Timeline([At(5.0, Addition({"Q": 1}))]),
            "<timeline>: 'Q' is not a species of the scheme; species: A, B, C",
        ),
        (
            Timeline([At(5.0, Addition({"b": 1}))]),
            "<timeline>: 'b' is not a species of the scheme; did you mean 'B'? (species: A, B, C)",
        ),
        (
            Timeline([At(5.0, Removal.percent(10, "W"))]),
            "<timeline>: W is held in excess (constant) and cannot be changed by an operation; "
            "add or remove a species of the rate matrix",
        ),
        (
            Timeline([Every(0.0, Addition({"A": 1}))]),
            "<timeline>: the period of a repeated operation must be above 0 s, not 0 s; "
            "e.g. every 24 h",
        ),
        (
            Timeline([Every(10.0, Addition({"A": 1}), start=50.0, until=20.0)]),
            "<timeline>: the repetition ends (20.0 s) before it starts (50.0 s); "
            "give 'until' after 'from'",
        ),
        (
            Timeline([Every(1.0, TemperatureStep(300.0))]),
            "<timeline>: only an addition or a removal can be repeated; use 'at' for the rest",
        ),
        (
            Timeline([TemperatureRamp(20.0, 10.0, 300.0, 310.0)]),
            "<timeline>: the ramp ends (10.0 s) before it starts (20.0 s); "
            "write 'from T0 to T1' with T0 before T1",
        ),
        (
            Timeline(
                [
                    TemperatureRamp(10.0, 30.0, 300.0, 310.0),
                    TemperatureRamp(20.0, 40.0, 310.0, 320.0),
                ]
            ),
            "<timeline>: this ramp (20.0 s to 40.0 s) overlaps the ramp from 10.0 s to 30.0 s; "
            "let one ramp end before the next starts",
        ),
        (
            Timeline([TemperatureRamp(10.0, 30.0, 300.0, 310.0), At(20.0, TemperatureStep(305.0))]),
            "<timeline>: a temperature step at 20.0 s falls inside the ramp from 10.0 s to "
            "30.0 s; move the step to the end of the ramp or split the ramp",
        ),
        (
            Timeline([At(1.0, Addition({"A": -1}))]),
            "<timeline>: the amount of A added must be a finite number >= 0, not -1; "
            "give an amount in the scheme's concentration unit (M)",
        ),
        (
            Timeline([At(1.0, Addition({}))]),
            "<timeline>: an addition names no species; e.g. add A = 0.1",
        ),
        (
            Timeline([At(1.0, Removal((), 0.5))]),
            "<timeline>: a removal names no species; e.g. remove D",
        ),
        (
            Timeline([FeedWindow(5.0, 2.0, {"A": 1e-3})]),
            "<timeline>: the feed window ends (2.0 s) before it starts (5.0 s); "
            "write 'from T0 to T1' with T0 before T1",
        ),
        (
            Timeline([FeedWindow(1.0, 2.0, {"A": -1e-3})]),
            "<timeline>: the feed rate of A must be a finite number >= 0, not -0.001; "
            "give a rate in M per second",
        ),
        (
            Timeline([At(1.0, TemperatureStep(-3.0))]),
            "<timeline>: the new temperature must be finite and above 0 K, not -3.0 K; "
            "give a thermodynamic temperature in kelvin",
        ),
        (
            Timeline([TemperatureRamp(1.0, 2.0, 300.0, math.inf)]),
            "<timeline>: the ramp's last temperature must be finite and above 0 K, not inf K; "
            "give a thermodynamic temperature in kelvin",
        ),
        (
            Timeline(["at 5 s: add A = 1 M"]),
            "<timeline>: statement 1 (str) is not a timeline statement; "
            "use At, Every, FeedWindow or TemperatureRamp",
        ),
        (
            Timeline([At(1.0, "add A")]),
            "<timeline>: str is not an operation; use Addition, Removal or TemperatureStep",
        ),
    ],
)
def test_each_mistake_has_its_message(line, message):
    assert problems(line) == [message]


def test_too_many_operations_are_refused_with_the_count_and_a_hint():
    # every 1 s over a year: refused before anything is created
    year = 365.25 * 86400
    line = Timeline([Every(1.0, Addition({"A": 1e-3}))])
    assert problems(line, year) == [
        f"<timeline>: the timeline would create 31,557,600 operations up to {year} s, more "
        f"than {MAX_OPERATIONS:,}; repeat less often, end the repetition earlier with 'until', "
        "or solve a shorter window"
    ]


def test_every_mistake_is_reported_at_once_at_its_place():
    place = Place("run.scheme", 7, 4, "at -1 h: add A = 1 M", "-1 h")
    line = Timeline([At(-1.0, Addition({"A": 1}), place), At(1.0, Removal.percent(150, "Z"))])
    with pytest.raises(SchemeErrors) as info:
        expand(SCHEME, line, 100.0)
    assert str(info.value) == (
        "3 problems in <timeline>:\n"
        "<timeline>: 'Z' is not a species of the scheme; species: A, B, C\n"
        "<timeline>: cannot remove 150 %: the part removed must be from 0 to 100 %; "
        "write 100 % for a complete removal\n"
        "run.scheme:7:4: the time of an operation must be finite and >= 0 s, not -1.0 s; "
        "operations happen at or after time 0, when the start values apply\n"
        "    at -1 h: add A = 1 M\n"
        "       ^^^^"
    )
    assert isinstance(info.value.errors[0], SchemeError)
    assert isinstance(info.value, ValueError)


def test_notes_for_operations_without_effect_or_after_the_window():
    line = Timeline(
        [
            At(1.0, TemperatureStep(300.0), Place("run.scheme", 3)),
            At(500.0, Addition({"A": 1})),
            Every(30.0, Removal.percent(5, "B"), until=200.0),
        ]
    )
    plan = expand(SCHEME, line, 100.0)
    assert plan.notes == (
        "run.scheme:3: a temperature operation has no effect: no rate constant of the scheme "
        "follows the Arrhenius law",
        "1 operation from 500 s on falls after the end of the window (100 s) and was not applied",
        "3 operations from 120 s on fall after the end of the window (100 s) and were not applied",
    )
    assert [op.time for op in plan.operations] == [30.0, 60.0, 90.0]
    assert plan.skipped == ((1, 1, 500.0), (2, 3, 120.0))


def test_a_ramp_or_feed_that_starts_after_the_window_is_noted():
    ramp = TemperatureRamp(200.0, 300.0, 300.0, 310.0)
    line = Timeline([ramp, FeedWindow(150.0, 160.0, {"A": 1.0})])
    plan = expand(HEATED, line, 100.0)
    assert plan.ramps == ()
    assert plan.feeds == ()
    assert len(plan.notes) == 2


def test_operations_are_ordered_by_time_then_statement():
    line = Timeline(
        [
            Every(20.0, Addition({"A": 1}), start=0.0),
            At(40.0, Removal.percent(50, "A")),
            At(10.0, Addition({"B": 2})),
        ]
    )
    plan = expand(SCHEME, line, 40.0)
    assert [(op.time, op.statement) for op in plan.operations] == [
        (0.0, 0),
        (10.0, 2),
        (20.0, 0),
        (40.0, 0),
        (40.0, 1),
    ]
    assert plan.breakpoints() == [0.0, 10.0, 20.0, 40.0]


def test_repetition_times_are_exact_multiples_rounded_once():
    # 0.1 s is not a double: 0.1 + 0.1 + 0.1 drifts, T0 + k P rounded once does not
    line = Timeline([Every(0.1, Addition({"A": 1e-3}), start=0.0)])
    times = [op.time for op in expand(SCHEME, line, 1.0).operations]
    # ten times the double 0.1 is just above 1.0: the window holds 10 repetitions
    assert times == [float(Fraction(k) * Fraction(0.1)) for k in range(10)]
    drifting = [0.0]
    for _ in range(9):
        drifting.append(drifting[-1] + 0.1)
    assert times != drifting


def test_every_defaults_to_starting_one_period_in_and_stops_at_until():
    line = Timeline([Every(10.0, Addition({"A": 1}), until=35.0)])
    assert [op.time for op in expand(SCHEME, line, 100.0).operations] == [10.0, 20.0, 30.0]


def test_removal_percent_is_exact():
    assert Removal.percent(30, "D").fraction == Fraction(3, 10)
    assert Removal.percent("12.5", "D").fraction == Fraction(1, 8)
    assert Removal(["A", "B"], 1).species == ("A", "B")


def test_statements_are_hashable_values():
    a = At(1.0, Addition({"A": 1.0}))
    assert a == At(1.0, Addition([("A", 1.0)]))
    assert len({a, At(1.0, Addition({"A": 1.0}))}) == 1
    assert (Timeline([a]) + Timeline([a])).statements == (a, a)


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.timeline as module

    assert doctest.testmod(module).failed == 0


def test_check_without_a_window_for_the_language():
    # the scheme language reports every mistake of a file before the window is known
    line = Timeline(
        [
            Every(3600.0, Addition({"A": 1.0})),  # unbounded: nothing to count yet
            Every(1.0, Addition({"A": 1.0}), until=1e6),
            At(5.0, Removal.percent(120, "B")),
        ]
    )
    assert [e.headline() for e in check(SCHEME, line)] == [
        "<timeline>: the timeline would create 1,000,000 operations, more than 250,000; "
        "repeat less often, end the repetition earlier with 'until', or solve a shorter window",
        "<timeline>: cannot remove 120 %: the part removed must be from 0 to 100 %; "
        "write 100 % for a complete removal",
    ]
    assert check(SCHEME, Timeline([Every(3600.0, Addition({"A": 1.0}))])) == []
