"""kinetics.engine.checks: the one home of the input checks of K, c0, feed and times.

Each mistake has one message, pinned here verbatim or in test_propagate (K, c0, feed)
and test_hostile_api (kinetics.solve's times); the wording is the project's own
(common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse

from kinetics.engine import checks
from kinetics.errors import ArgumentTypeError, ConcentrationError, RateMatrixError, TimesError


def test_the_engine_takes_one_number_or_no_times_that_solve_refuses():
    assert checks.times(5.0).tolist() == [5.0]
    assert checks.times([]).size == 0
    with pytest.raises(TimesError) as info:
        checks.time_list([])
    assert str(info.value) == "the time list is empty; give at least one time"
    with pytest.raises(TimesError) as info:
        checks.time_list(5.0)
    assert info.value.problem == "the times must be a flat list of times, not a single number"


@pytest.mark.parametrize("check", [checks.times, checks.time_list])
@pytest.mark.parametrize(
    ("times", "error", "message"),
    [
        (
            None,
            ArgumentTypeError,
            "the times must be a list of numbers in seconds, not None; e.g. [0, 600, 1200] or "
            "numpy.linspace(0, 3600, 201)",
        ),
        (
            [[0.0, 1.0], [2.0]],
            TimesError,
            "the times are not numbers; give times in seconds as a list of numbers",
        ),
        (
            [0.0, -3.0],
            TimesError,
            "a time is negative (-3 s); times start at 0 (the start values)",
        ),
        ([0.0, np.inf], TimesError, "a time is not a finite number; give finite times in seconds"),
        ([2.0, 1.0], TimesError, "the times are not in increasing order; sort the time list"),
    ],
)
def test_the_engine_and_solve_word_a_bad_time_list_alike(check, times, error, message):
    with pytest.raises(error) as info:
        check(times)
    assert str(info.value) == message


def test_low_parts_are_checked_as_the_input_they_belong_to():
    assert checks.low_parts(None, (2,), "feed_low", ConcentrationError).tolist() == [0.0, 0.0]
    sparse = scipy.sparse.eye_array(2, format="csr")
    kept = checks.low_parts(sparse, (2, 2), "K_low", RateMatrixError, keep_sparse=True)
    assert scipy.sparse.issparse(kept)
    assert isinstance(checks.low_parts(sparse, (2, 2), "K_low", RateMatrixError), np.ndarray)
    with pytest.raises(ConcentrationError) as info:
        checks.low_parts([np.nan, 0.0], (2,), "feed_low", ConcentrationError)
    assert str(info.value) == "feed_low contains inf or nan"
    with pytest.raises(TimesError) as info:
        checks.low_parts([0.0], (2,), "lengths_low", TimesError)
    assert str(info.value) == "lengths_low has shape (1,); it must have shape (2,)"


def test_a_flat_list_is_repeated_for_every_member_of_a_batch():
    v = checks.vector([1.0, 0.0], 2, "c0", checks.START_HINT, (3,))
    assert v.shape == (3, 2)
    # without a batch any array of n values is a flat list
    assert checks.vector([[1.0], [0.0]], 2, "c0", checks.START_HINT).tolist() == [1.0, 0.0]
