"""The statements of a timeline: bindings to named quantities, portions, volumes."""

from __future__ import annotations

from fractions import Fraction

import pytest

import kinetics
from kinetics.errors import SchemeErrors
from kinetics.timeline import expand
from kinetics.timeline_statements import (
    Addition,
    At,
    Binding,
    Every,
    FeedWindow,
    Removal,
    TemperatureRamp,
    Timeline,
)

SCHEME = kinetics.parse("A -> B  k1 = 1 1/h\nB -> C  k2 = 0.1 1/h\nstart A = 1 mol/L")


def test_a_binding_is_the_product_of_its_names_times_its_scale():
    b = Binding("amount:A", ("v", "c"), Fraction(1, 3))
    assert b.value({"v": Fraction(2), "c": Fraction(9)}) == 6


def test_follow_moves_every_bound_number_and_keeps_the_rest():
    line = Timeline(
        [
            At(10.0, Addition({"A": 1.0, "B": 2.0}), bound=(Binding("amount:B", ("d",)),)),
            Every(5.0, Removal("B", 0.5), until=50.0, bound=(Binding("fraction", ("p",)),)),
            FeedWindow(1.0, 2.0, {"A": 0.1}, bound=(Binding("end", ("t1",)),)),
            TemperatureRamp(3.0, 4.0, 300.0, 310.0, bound=(Binding("start", ("t0",)),)),
        ],
        volume=1e-3,
    )
    assert line.names == ("d", "p", "t1", "t0")
    moved = line.follow({"d": Fraction(7), "p": Fraction(1, 4), "t1": 9, "t0": 2})
    at, every, feed, ramp = moved.statements
    assert at.action.amounts == (("A", 1.0), ("B", 7.0))
    assert every.action.fraction == Fraction(1, 4)
    assert every.until == 50.0
    assert (feed.start, feed.end) == (1.0, 9.0)
    assert (ramp.start, ramp.end) == (2.0, 4.0)
    assert moved.volume == 1e-3
    assert line.follow({"other": 1}) is line


def test_a_portion_and_its_dilution():
    # 250 mL of 0.8 mol/L into 1 L: kept 1/1.25, amount 0.2 mol over 1.25 L
    line = Timeline([At(60.0, Addition.portion(2.5e-4, {"A": 0.8}, 1e-3))], volume=1e-3)
    (op,) = expand(SCHEME, line, 100.0).operations
    assert op.action.amounts == (("A", 0.2),)
    assert op.kept == Fraction(1e-3) / (Fraction(1e-3) + Fraction(2.5e-4))
    assert op.volume == 1.25e-3


def test_volume_mistakes():
    def problems(line):
        try:
            SCHEME.with_timeline(line)
        except SchemeErrors as e:
            return [x.headline() for x in e.errors]
        return []

    assert problems(Timeline([At(1.0, Addition({}, 1e-4))])) == [
        "<timeline>: an addition with a volume of its own needs the volume of the run; give "
        "the start volume (in a scheme file, a line such as volume = 1.0 L)"
    ]
    assert problems(Timeline([At(1.0, Addition({"A": 1.0}, -1.0))], volume=1.0)) == [
        "<timeline>: the volume added must be a finite number >= 0, not -1.0; give a volume "
        "in m^3 (in a scheme file, e.g. add 100 mL with B = 0.5 M)"
    ]
    assert problems(Timeline([At(1.0, Addition({"A": 1.0}))], volume=0.0)) == [
        "<timeline>: the volume of the run must be a finite number above 0, not 0.0; give "
        "the start volume in m^3 (in a scheme file: volume = 1.0 L)"
    ]


def test_with_timeline_refuses_what_is_no_timeline():
    with pytest.raises(kinetics.ArgumentTypeError) as info:
        SCHEME.with_timeline([At(1.0, Addition({"A": 1.0}))])
    assert str(info.value) == (
        "with_timeline() needs a Timeline, not list; build one from kinetics.timeline: "
        "Timeline([At(1800.0, Addition({'A': 0.25}))])"
    )


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.timeline_statements as module

    assert doctest.testmod(module).failed == 0
