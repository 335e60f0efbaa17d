"""Operation lines resolved: core units, names that follow new values, volumes, and the
messages of the second pass (each pinned verbatim).

Reference values: exact unit factors (1 h = 3600 s, 1 L = 1e-3 m^3, 1 degC step = 1 K,
0 degC = 273.15 K; SI brochure, 9th ed.) and the dilution of a well-mixed volume,
:math:`c \\mapsto (V c + n)/(V + v)` (conservation of amount; common practice, no source).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

import kinetics
from kinetics.timeline import Addition, At, Binding, Every, FeedWindow, Removal, TemperatureRamp

BASE = "A -> B  k1 = 0.1 1/h\nB -> C  k2 = 0.01 1/min\nstart A = 0.5 mol/L\n"
HOT = (
    "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\nB -> C  k2 = 0.01 1/min\n"
    "temperature = 25 degC\nstart A = 0.5 mol/L\n"
)


def timeline(extra, base=BASE):
    return kinetics.parse(base + extra, source="t").timeline


def test_numbers_in_core_units():
    line = timeline(
        "at 30 min: add A = 250 mmol/L\nevery 24 h from 0 h until 10 d: remove 95 % of B\n"
        "from 1 h to 3 h: feed A = 0.6 mol/L/h\n"
    )
    at, every, feed = line.statements
    assert at == At(1800.0, Addition({"A": 0.25}), at.place)
    assert (every.period, every.start, every.until) == (86400.0, 0.0, 864000.0)
    assert every.action == Removal(["B"], Fraction(19, 20))
    assert isinstance(feed, FeedWindow)
    assert (feed.start, feed.end, feed.rates) == (3600.0, 10800.0, (("A", 0.6 / 3600),))
    assert line.volume is None


def test_temperatures_in_kelvin():
    line = timeline(
        "at 1 h: temperature = 60 degC\nfrom 2 h to 3 h: temperature 60 degC -> 350 K\n", HOT
    )
    step, ramp = line.statements
    assert step.action.temperature == 333.15
    assert ramp == TemperatureRamp(7200.0, 10800.0, 333.15, 350.0, ramp.place)


def test_a_place_for_every_statement():
    (at,) = timeline("at 30 min: remove 100 % of B  # elute\n").statements
    assert (at.place.source, at.place.line, at.place.column) == ("t", 4, 12)
    assert at.place.snippet == "remove 100 % of B"


def test_names_are_bound_and_follow_new_values():
    scheme = kinetics.parse(
        BASE + "t_q = 3 h\nt_2 = 2 * t_q\ndose = 0.25 mol/L\np_el = 80 %\n"
        "at t_q: add A = dose\nat t_2: remove p_el of B\n"
    )
    first, second = scheme.timeline.statements
    assert first.time == 10800.0
    assert first.action.amounts == (("A", 0.25),)
    assert first.bound == (
        Binding("amount:A", ("dose",), Fraction(1, 1000)),
        Binding("time", ("t_q",)),
    )
    assert second.time == 21600.0
    assert second.action.fraction == Fraction(4, 5)
    assert scheme.warnings == ()  # names used by operations are used
    moved = scheme.with_values(quantities={"t_q": 3600, "dose": 500, "p_el": Fraction(1, 2)})
    first, second = moved.timeline.statements
    assert (first.time, first.action.amounts) == (3600.0, (("A", 0.5),))
    assert (second.time, second.action.fraction) == (7200.0, Fraction(1, 2))  # t_2 follows
    assert scheme.timeline.statements[0].time == 10800.0  # the original is unchanged
    assert scheme.with_values(temperature=300.0).timeline is scheme.timeline


def test_masses_through_molar_masses():
    # 5 mg/L of water (18.015 g/mol, standard atomic weights) is 5/18.015 mmol/L
    line = timeline("formula A = H2O, B = H2O, C = H2O\nat 1 h: add A = 5 mg/L\n")
    (amount,) = line.statements[0].action.amounts
    assert amount[1] == pytest.approx(5e-3 / 18.015, rel=1e-12)


def test_a_run_with_a_volume():
    line = timeline(
        "volume = 1 L\nat 1 h: add A = 0.05 mol\nat 2 h: add 100 mL with B = 0.5 mol/L\n"
        "at 3 h: add 200 mL\nat 4 h: add 50 mL with B = 0.02 mol\n"
    )
    assert line.volume == 1e-3
    amounts = [s.action for s in line.statements]
    # amounts are the amount of substance over the start volume (mol/L per 1 L)
    assert amounts == [
        Addition({"A": 0.05}),
        Addition({"B": 0.05}, 1e-4),
        Addition({}, 2e-4),
        Addition({"B": 0.02}, 5e-5),
    ]


def test_dilution_through_kinetics_solve():
    # 1 L at 0.5 mol/L A, no reaction in 1 s worth speaking of: after 1 L of solvent
    # every concentration halves; a later 0.1 mol of B in 2 L gives 0.05 mol/L
    scheme = kinetics.parse(
        "A -> B  k1 = 1e-30 1/s\nstart A = 0.5 mol/L\nvolume = 1 L\n"
        "at 1 s: add 1 L\nat 2 s: add B = 0.1 mol\n"
    )
    sol = kinetics.solve(scheme, [0.0, 1.0, 2.0])
    assert sol.times.tolist() == [0.0, 1.0, 1.0, 2.0, 2.0]
    assert sol["A"][2] == pytest.approx(0.25, rel=1e-15)
    assert sol["B"][4] - sol["B"][3] == pytest.approx(0.05, rel=1e-14)
    assert [e.volume for e in sol.events] == [2e-3, 2e-3]
    assert [(e.action, e.species) for e in sol.events] == [("add", None), ("add", "B")]


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (
            "at 5: add A = 1 M",
            "t:4:4: the time of an operation 5 has no unit; write its unit after the number, "
            "e.g. 30 min",
        ),
        (
            "at 5 m: add A = 1 M",
            "t:4:4: the time of an operation must be a duration, but 5 m is a length; write "
            "e.g. 30 min",
        ),
        (
            "at 5 sek: add A = 1 M",
            "t:4:6: unknown unit 'sek' for the time of an operation; write e.g. 30 min",
        ),
        (
            "at t_x: add A = 1 M",
            "t:4:4: t_x is used for the time of an operation but is never defined; define it on "
            "a line of its own, e.g. t_x = 30 min",
        ),
        (
            "t_q = 1 h\nat t_x: add A = 1 M",
            "t:5:4: t_x is used for the time of an operation but is never defined; did you "
            "mean t_q?",
        ),
        (
            "t_x = 5 mol/L\nat t_x: add A = 1 M",
            "t:5:4: the time of an operation must be a duration, but t_x is a concentration "
            "(amount/volume); write e.g. 30 min",
        ),
        (
            "p = 2 h\nat 1 h: remove p of B",
            "t:5:16: the part removed must be a pure number, but p is a time; write e.g. 95 %",
        ),
        (
            "t_q = -3 h\nat t_q: add A = 1 M",
            "t:5:9: the time of an operation must be finite and >= 0 h, not -3 h; "
            "operations happen at or after time 0, when the start values apply",
        ),
        (
            "at 1 h: remove 120 % of B",
            "t:4:9: cannot remove 120 %: the part removed must be from 0 to 100 %; write 100 % "
            "for a complete removal",
        ),
        ("at 1 h: add Q = 1 M", "t:4:9: 'Q' is not a species of the scheme; species: A, B, C"),
        (
            "at 1 h: add a = 1 M",
            "t:4:9: 'a' is not a species of the scheme; did you mean 'A'? (species: A, B, C)",
        ),
        (
            "every 0 h: remove 10 % of B",
            "t:4:12: the period of a repeated operation must be above 0 h, not 0 h; e.g. every "
            "24 h",
        ),
        (
            "from 3 h to 1 h: feed A = 1 mol/L/h",
            "t:4:1: the feed window ends (1 h) before it starts (3 h); write 'from T0 "
            "to T1' with T0 before T1",
        ),
        (
            "every 1 s until 365 d: add A = 1 mmol/L",
            "t:4:24: the timeline would create 31,536,000 operations, more than 250,000; repeat "
            "less often, end the repetition earlier with 'until', or solve a shorter window",
        ),
        (
            "every 1 h: temperature = 60 degC",
            "t:4:12: only an addition or a removal can be repeated; use 'at' for the rest",
        ),
        (
            "at 1 h: add A = 0.05 mol",
            "t:4:17: 0.05 mol for A is an amount, but this file gives concentrations; give the "
            "volume of the run (volume = 1.0 L) to add amounts, or write a concentration such as "
            "0.25 mol/L",
        ),
        (
            "at 1 h: add A = 5 g",
            "t:4:17: A has no molar mass, so 5 g cannot be turned into an amount; give its "
            "formula or molar mass (molar_mass A = 180.2 g/mol), or the amount in mol",
        ),
        (
            "at 1 h: add A = 3 1/s",
            "t:4:17: 3 1/s for A is not an amount or a concentration; write e.g. A = 0.25 mol/L",
        ),
        (
            "volume = 1 L\nat 1 h: add A = 0.1 M",
            "t:5:17: 0.1 M for A is a concentration; in a run with a volume, add an amount (add "
            "A = 0.05 mol) or a portion with its own volume (add 100 mL with A = 0.5 mol/L)",
        ),
        (
            "at 1 h: add 100 mL with B = 0.5 mol/L",
            "t:4:9: an addition with a volume of its own needs the volume of the run; give the "
            "start volume (in a scheme file, a line such as volume = 1.0 L)",
        ),
        (
            "at 1 h: add A",
            "t:4:13: the addition of A gives no amount; write e.g. add A = 0.25 mol/L",
        ),
        (
            "volume = 1 L\nvolume = 2 L",
            "t:5:10: the volume is set twice (first on line 4); keep one volume statement: the "
            "volume of the run at time 0",
        ),
        (
            "volume = 1 kg",
            "t:4:10: the volume of the run must be a volume, but 1 kg is a mass; write e.g. 1.0 L",
        ),
        (
            "volume = 0 L",
            "t:4:10: the volume of the run must be above 0, not 0 L; e.g. volume = 1.0 L",
        ),
        (
            "at 1 h: temperature = 60",
            "t:4:23: the new temperature 60 has no unit; write it in K or degC, e.g. 60 degC",
        ),
        (
            "at 1 h: temperature = 60 min",
            "t:4:26: the new temperature is given in 'min', which is not a temperature unit; "
            "write the temperature in K or degC, e.g. 60 degC",
        ),
        (
            "from 1 h to 2 h: feed A = 1 mol/h",
            "t:4:27: the feed rate 1 mol/h of A is not a concentration per time; write e.g. "
            "A = 0.01 mol/L/min",
        ),
        (
            "from 1 h to 2 h: feed A = r",
            "t:4:27: the feed rate of A is written as a name; write the rate as a number with "
            "a unit, e.g. 0.01 mol/L/min",
        ),
    ],
)
def test_each_mistake_has_its_message(extra, message):
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.parse(BASE + extra, source="t")
    assert [e.headline() for e in info.value.errors] == [message]


def test_mistakes_of_a_file_per_volume_only():
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.parse("A -> B  k1 = 1 1/h\nstart A = 1 mol\nvolume = 1 L", source="t")
    assert [e.headline() for e in info.value.errors] == [
        "t:3:10: a volume needs concentrations per volume, but this file gives amounts; leave "
        "out the volume line, or write the start values per volume (mol/L)"
    ]


def test_ramps_that_overlap_and_a_step_inside_a_ramp():
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.parse(
            HOT + "from 1 h to 3 h: temperature 25 degC -> 60 degC\n"
            "from 2 h to 4 h: temperature 60 degC -> 70 degC\nat 2 h: temperature = 40 degC\n",
            source="t",
        )
    assert [e.headline() for e in info.value.errors] == [
        "t:6:1: this ramp (2 h to 4 h) overlaps the ramp from 1 h to 3 h; "
        "let one ramp end before the next starts",
        "t:7:9: a temperature step at 2 h falls inside the ramp from 1 h to 3 h; "
        "move the step to the end of the ramp or split the ramp",
        "t:7:9: a temperature step at 2 h falls inside the ramp from 2 h to 4 h; "
        "move the step to the end of the ramp or split the ramp",
    ]


def test_a_temperature_operation_without_arrhenius_constants_is_a_warning():
    scheme = kinetics.parse(BASE + "at 1 h: temperature = 60 degC", source="t")
    assert scheme.warnings == (
        "t:4: a temperature operation has no effect: no rate constant of the scheme follows "
        "the Arrhenius law",
    )


def test_a_repetition_until_the_window_end_is_counted_when_solved():
    scheme = kinetics.parse(BASE + "every 1 s: add A = 1 mmol/L", source="t")
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.solve(scheme, [0.0, 365 * 86400.0])
    assert info.value.errors[0].headline() == (
        "t:4:12: the timeline would create 31,536,000 operations up to 31536000.0 s, more than "
        "250,000; repeat less often, end the repetition earlier with 'until', or solve a "
        "shorter window"
    )


def test_every_statement_of_the_docstring_example():
    scheme = kinetics.parse(
        HOT + "volume = 1.0 L\nat 30 min: add 100 mL with B = 0.5 mol/L\n"
        "every 24 h from 0 h until 10 d: remove 95 % of C\nat 2 h: temperature = 60 degC\n"
        "from 1 h to 3 h: feed A = 0.01 mol/L/min\n"
        "from 3 h to 3.5 h: temperature 60 degC -> 80 degC\n"
    )
    kinds = [type(s).__name__ for s in scheme.timeline.statements]
    assert kinds == ["At", "Every", "At", "FeedWindow", "TemperatureRamp"]
    assert isinstance(scheme.timeline.statements[1], Every)


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.language.schedule as module

    assert doctest.testmod(module).failed == 0


def test_messages_quote_times_in_the_unit_of_their_line():
    # the unit of the first time written on the line (of a named one too); 1 year of
    # 365 d = 525 600 min (SI brochure, 9th edition, 2019, table 8)
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.parse(
            BASE + "t_q = 90 min\nevery 2 h from 5 h until 3 h: add A = 1 M\n"
            "every 15 min from t_q until 30 min: remove 10 % of B\n",
            source="t",
        )
    assert [e.headline() for e in info.value.errors] == [
        "t:5:31: the repetition ends (3 h) before it starts (5 h); give 'until' after 'from'",
        "t:6:37: the repetition ends (30 min) before it starts (90 min); give 'until' after 'from'",
    ]
    scheme = kinetics.parse(BASE + "every 0.5 min: add A = 1 mmol/L\n", source="t")
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.solve(scheme, [0.0, 365 * 86400.0])
    assert info.value.errors[0].headline() == (
        "t:4:16: the timeline would create 1,051,200 operations up to 525600 min, more than "
        "250,000; repeat less often, end the repetition earlier with 'until', or solve a "
        "shorter window"
    )
