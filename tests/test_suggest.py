"""The one "did you mean" rule (kinetics/suggest.py).

The similarity is difflib's Ratcliff/Obershelp ratio; the checks below compare with
:func:`difflib.get_close_matches` itself (the standard library is the reference) and
pin the case-folding preference (common practice, no source).
"""

from __future__ import annotations

import difflib
import string

from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics.suggest import SIMILARITY_CUTOFF, close_matches

names = st.text(string.ascii_letters + string.digits + "_", min_size=1, max_size=8)


def test_closest_name_is_proposed():
    assert close_matches("k_1", ["k2", "k1", "kf"]) == ["k1"]


def test_nothing_close_gives_an_empty_list():
    assert close_matches("temperature", ["A", "B"]) == []


def test_cutoff_is_difflibs_default():
    # difflib.get_close_matches(word, possibilities, n=3, cutoff=0.6)
    assert SIMILARITY_CUTOFF == 0.6


def test_a_higher_cutoff_refuses_a_weak_match():
    # ratio("strat", "start") = 0.8; ratio("bal", "balance") = 0.6
    assert close_matches("strat", ["start"], cutoff=0.7) == ["start"]
    assert close_matches("bal", ["balance"], cutoff=0.7) == []


def test_fold_case_prefers_the_same_name_in_another_case():
    # "w" and "W" have ratio 0, so only the case-folding rule proposes W
    assert close_matches("w", ["X", "W"], fold_case=True) == ["W"]
    assert close_matches("w", ["X", "W"]) == []


def test_fold_case_takes_the_first_of_several():
    assert close_matches("ab", ["AB", "Ab"], fold_case=True) == ["AB"]


def test_candidates_may_be_any_iterable():
    assert close_matches("k_1", (name for name in ["k1"])) == ["k1"]
    assert close_matches("k_1", {"k1": 1}) == ["k1"]


@settings(max_examples=200, deadline=None)
@given(names, st.lists(names, max_size=6))
def test_same_answer_as_difflib_without_folding(name, candidates):
    assert close_matches(name, candidates) == difflib.get_close_matches(name, candidates, n=1)


@settings(max_examples=200, deadline=None)
@given(names, st.lists(names, max_size=6))
def test_result_is_at_most_one_known_name(name, candidates):
    found = close_matches(name, candidates, fold_case=True)
    assert len(found) <= 1
    assert set(found) <= set(candidates)
