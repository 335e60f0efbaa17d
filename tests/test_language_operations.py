"""Operation lines of the scheme language, first pass: what each line says, and the
messages of lines that cannot be read (each pinned verbatim)."""

from __future__ import annotations

from fractions import Fraction

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import kinetics
from kinetics import KineticsError
from kinetics.language.operations import (
    AddAction,
    FeedAction,
    OperationStatement,
    RampAction,
    RemoveAction,
    StepAction,
    VolumeStatement,
)
from kinetics.language.reader import read_statements
from kinetics.language.source import Line

BASE = "A -> B  k1 = 0.1 1/h\nB -> C  k2 = 0.01 1/min\nstart A = 0.5 mol/L\n"


def statement(code):
    return OperationStatement.from_line(Line("t", 1, code, code))


def test_at_with_an_addition_of_several_species():
    s = statement("at 30 min: add A = 0.25 mol/L, B = 10 mmol/L  ")
    assert s.kind == "at"
    assert [q.text for q in s.times] == ["30 min"]
    assert isinstance(s.action, AddAction)
    assert [(i.name, i.amount.text) for i in s.action.items] == [
        ("A", "0.25 mol/L"),
        ("B", "10 mmol/L"),
    ]
    assert s.action.volume is None


def test_every_with_start_and_end():
    s = statement("every 24 h from 0 h until 10 d: remove 95 % of D, E")
    assert [q.text for q in s.times] == ["24 h", "0 h", "10 d"]
    assert isinstance(s.action, RemoveAction)
    assert s.action.share.value.number == "95"
    assert [name for name, _ in s.action.species] == ["D", "E"]


def test_every_alone_and_with_a_name():
    s = statement("every t_el until t_end: remove p_el of D")
    assert [q and q.name for q in s.times] == ["t_el", None, "t_end"]
    assert s.action.share.name == "p_el"
    assert s.names == ("t_el", "t_end", "p_el")


def test_temperature_step_feed_window_and_ramp():
    step = statement("at 2 h: temperature = 60 degC")
    assert isinstance(step.action, StepAction)
    assert step.action.value.text == "60 degC"
    feed = statement("from 1 h to 3 h: feed A = 0.01 mol/L/min")
    assert isinstance(feed.action, FeedAction)
    assert [q.text for q in feed.times] == ["1 h", "3 h"]
    ramp = statement("from 2 h to 2.5 h: temperature 25 degC -> 60 degC")
    assert isinstance(ramp.action, RampAction)
    assert (ramp.action.first.text, ramp.action.last.text) == ("25 degC", "60 degC")
    assert statement("from 2 h to 3 h: temperature 25 degC → 60 degC") is not None


def test_portions_and_solvent():
    s = statement("at 1 h: add 100 mL with B = 0.5 mol/L")
    assert s.action.volume.text == "100 mL"
    assert [(i.name, i.amount.text) for i in s.action.items] == [("B", "0.5 mol/L")]
    solvent = statement("at 1 h: add 200 mL")
    assert solvent.action.items == ()
    assert solvent.action.volume.text == "200 mL"
    named = statement("at 1 h: add v_p with B = c_B")
    assert named.names == ("c_B", "v_p")


def test_volume_statement():
    s = VolumeStatement.from_line(Line("t", 1, "volume = 1.5 L", "volume = 1.5 L"))
    assert s.value.text == "1.5 L"


def test_lines_that_are_not_operations():
    # a reaction of species called 'at' or 'from', a quantity called 'at'
    assert statement("at -> B  k1 = 1 1/s") is None
    assert statement("from + W -> B  k1 = 1 M-1 s-1") is None
    assert statement("at = 3 h") is None
    assert statement("atom -> B  k1 = 1 1/s") is None


def test_comments_and_the_reader():
    parsed = read_statements(BASE + "at 1 h: add A = 1 M  # a second portion\n", "t")
    assert [type(s).__name__ for s in parsed.statements][-1] == "OperationStatement"


@pytest.mark.parametrize(
    ("line", "message"),
    [
        (
            "at 1 h add A = 1 M",
            "t:4:1: an operation needs ':' after its time; write e.g. at 30 min: add A = 0.25 "
            "mol/L",
        ),
        (
            "at -1 h: add A = 1 M",
            "t:4:4: the time of an operation is negative (-1); this value cannot be negative; "
            "write e.g. 30 min",
        ),
        (
            "at inf h: add A = 1 M",
            "t:4:4: the time of an operation is inf, which is not a finite number; write a "
            "finite value, e.g. 30 min",
        ),
        (
            "at nan min: add A = 1 M",
            "t:4:4: the time of an operation is nan, which is not a finite number; write a "
            "finite value, e.g. 30 min",
        ),
        (
            "at: add A = 1 M",
            "t:4:3: the time of an operation is missing; write a number and a unit, e.g. 30 min",
        ),
        (
            "every: add A = 1 M",
            "t:4:6: the period of a repeated operation is missing; write a number and a unit, "
            "e.g. 30 min",
        ),
        (
            "from 1 h: feed A = 1 M/h",
            "t:4:1: a window reads 'from T0 to T1'; write e.g. from 1 h to 3 h: feed A = 0.01 "
            "mol/L/min",
        ),
        (
            "at 1 h: stir A",
            "t:4:9: unknown operation 'stir'; an operation is add, remove or temperature =, "
            "e.g. at 30 min: add A = 0.25 mol/L",
        ),
        (
            "from 1 h to 2 h: add A = 1 M",
            "t:4:18: a window 'from T0 to T1' holds a feed or a temperature ramp; write e.g. "
            "from 1 h to 3 h: feed A = 0.01 mol/L/min, or from 2 h to 3 h: temperature 25 degC "
            "-> 60 degC",
        ),
        (
            "at 1 h: feed A = 1 M/h",
            "t:4:9: 'feed A = 1 M/h' is not an operation at one time; a feed or a ramp runs in "
            "a window: from 1 h to 3 h: feed A = 0.01 mol/L/min; a step reads at 2 h: "
            "temperature = 60 degC",
        ),
        ("at 1 h: add", "t:4:12: an addition names nothing; write e.g. add A = 0.25 mol/L"),
        (
            "from 1 h to 2 h: feed",
            "t:4:22: a feed names nothing; write e.g. feed A = 0.01 mol/L/min",
        ),
        (
            "at 1 h: add A 1 M",
            "t:4:13: could not read 'A 1 M' in an addition; write SPECIES = AMOUNT, e.g. "
            "A = 0.25 mol/L",
        ),
        (
            "at 1 h: remove of B",
            "t:4:9: could not read this removal; write the part removed and the species, e.g. "
            "remove 100 % of D",
        ),
        (
            "at 1 h: remove 30 of B",
            "t:4:16: the part removed '30' is not a percentage; write it with %, e.g. remove "
            "30 % of D, or name a pure number (p_el = 95 %)",
        ),
        (
            "at 1 h: remove 30 % of B + C",
            "t:4:24: expected a species name, found 'B + C'; list the species removed from, "
            "e.g. remove 30 % of D, E",
        ),
        (
            "at 1 h: add A = -1 M",
            "t:4:17: the amount of A is negative (-1); this value cannot be negative; write "
            "e.g. A = 0.25 mol/L",
        ),
        (
            "at 1 h: temperature = hot",
            "t:4:23: could not read a number for the new temperature in 'hot'; write a number "
            "and a unit, e.g. 60 degC",
        ),
        (
            "from 1 h to 2 h: temperature 20 degC -> warm",
            "t:4:41: could not read a number for the ramp's last temperature in 'warm'; write a "
            "number and a unit, e.g. 60 degC",
        ),
        (
            "volume = big",
            "t:4:10: could not read a number for the volume in 'big'; write a number and a "
            "unit, e.g. 1.0 L",
        ),
    ],
)
def test_each_mistake_has_its_message(line, message):
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.parse(BASE + line, source="t")
    assert [e.headline() for e in info.value.errors] == [message]


def test_every_mistake_of_a_file_at_once():
    text = BASE + "at -1 h: add A = 1 M\nat 1 h: stir\nat 2 h: remove 150 % of Z\nA -> => B k9\n"
    with pytest.raises(kinetics.SchemeErrors) as info:
        kinetics.parse(text, source="t")
    assert [(e.line, e.column) for e in info.value.errors] == [
        (4, 4),
        (5, 9),
        (6, 9),
        (6, 9),
        (7, 6),
    ]


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.language.operations as module

    assert doctest.testmod(module).failed == 0


# ---------------------------------------------------------------------------------------
# properties: random operation lines round-trip; mutated ones raise only our errors

# exact unit factors (SI brochure, 9th ed.): 1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s
TIME_UNITS = {"s": 1, "min": 60, "h": 3600, "d": 86400}
AMOUNT_UNITS = {"mol/L": Fraction(1), "mmol/L": Fraction(1, 1000), "M": Fraction(1)}
numbers = st.sampled_from(["0", "1", "2.5", "30", "0.125", "1e1", "7"])
times = st.tuples(numbers, st.sampled_from(sorted(TIME_UNITS)))


@st.composite
def operation_lines(draw):
    """A random valid operation line and the core statement it must give."""
    (n, unit) = draw(times)
    t = float(Fraction(n) * TIME_UNITS[unit])
    kind = draw(st.sampled_from(["add", "remove", "every"]))
    if kind == "add":
        amount, a_unit = draw(numbers), draw(st.sampled_from(sorted(AMOUNT_UNITS)))
        species = draw(st.sampled_from(["A", "B", "C"]))
        line = f"at {n} {unit}: add {species} = {amount} {a_unit}"
        return line, ("at", t, species, float(Fraction(amount) * AMOUNT_UNITS[a_unit]))
    share = draw(st.sampled_from(["0", "12.5", "50", "100"]))
    species = draw(st.sampled_from(["A", "B", "C"]))
    if kind == "remove":
        return f"at {n} {unit}:remove {share} % of {species}", (
            "at", t, species, Fraction(share) / 100,
        )  # fmt: skip
    (p, p_unit) = draw(times.filter(lambda x: Fraction(x[0]) > 0))
    period = float(Fraction(p) * TIME_UNITS[p_unit])
    return f"every {p} {p_unit} from {n} {unit}: remove {share}% of {species}", (
        "every", period, species, Fraction(share) / 100, t,
    )  # fmt: skip


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(operation_lines(), min_size=1, max_size=5))
def test_random_operation_lines_round_trip(drawn):
    text = BASE + "\n".join(f"  {line}   # c" for line, _ in drawn)
    statements = kinetics.parse(text).timeline.statements
    assert len(statements) == len(drawn)
    for s, (_, want) in zip(statements, drawn, strict=True):
        if want[0] == "every":
            assert (s.period, s.start) == (want[1], want[4])
        else:
            assert s.time == want[1]
        if hasattr(s.action, "amounts"):
            assert s.action.amounts == ((want[2], want[3]),)
        else:
            assert (s.action.species, s.action.fraction) == ((want[2],), want[3])


OPERATION_ALPHABET = st.sampled_from(
    ["at", "every", "from", "to", "until", ":", " ", "add", "remove", "%", "of", "A", "=",
     "1", "-2", "h", "min", "mol/L", ",", "temperature", "degC", "->", "feed", "with", "mL",
     "t_q", "volume", "nan", "1e999"]
)  # fmt: skip


@settings(max_examples=150, deadline=None)
@given(st.lists(OPERATION_ALPHABET, min_size=1, max_size=14).map(" ".join))
def test_random_operation_soup_raises_only_our_errors(line):
    try:
        kinetics.parse(BASE + "t_q = 1 h\n" + line)
    except KineticsError:
        pass
