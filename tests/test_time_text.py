"""Times in words: the one formatter of a time in the reader's unit, and notes that keep
their times for it.

Unit factors: 1 min = 60 s, 1 h = 3600 s, 1 d = 86 400 s (SI brochure, 9th edition,
2019, table 8).
"""

from __future__ import annotations

import pickle

import pytest

from kinetics.errors import TimesError
from kinetics.time_text import TimedText, in_time_unit, joined, shown_time


@pytest.mark.parametrize(
    ("seconds", "unit", "text"),
    [(5400.0, "h", "1.5 h"), (1800.0, "s", "1800 s"), (90.0, "min", "1.5 min"),
     (1209600.0, "d", "14 d"), (1.0 / 3.0, "s", "0.333333 s")],
)  # fmt: skip
def test_shown_time(seconds, unit, text):
    assert shown_time(seconds, unit) == text


def test_shown_time_refuses_a_unit_that_is_no_time():
    with pytest.raises(TimesError) as info:
        shown_time(1.0, "kg")
    assert str(info.value).startswith("'kg' is not a unit of time")


def test_a_timed_text_is_a_string_in_seconds_and_keeps_its_times():
    note = TimedText("from ", 7200.0, " to ", 10800.0)
    assert note == "from 7200 s to 10800 s"
    assert in_time_unit(note, "h") == "from 2 h to 3 h"
    # concatenation on either side and joining keep the times
    longer = "a; " + note + "; b"
    assert isinstance(longer, TimedText)
    assert in_time_unit(longer, "min") == "a; from 120 min to 180 min; b"
    both = joined("; ", [note, "plain", TimedText("at ", 60.0)])
    assert in_time_unit(both, "min") == "from 120 min to 180 min; plain; at 1 min"
    assert joined("; ", ["x", "y"]) == "x; y"
    assert in_time_unit("no times", "h") == "no times"
    # a copy (pickled, as sweeps and caches do) keeps them too
    assert pickle.loads(pickle.dumps(longer)).in_unit("h") == "a; from 2 h to 3 h; b"
