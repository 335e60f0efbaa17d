"""How optimisation messages name their inputs (kinetics/optimise/words.py): the Python
arguments by default, the command-line options when the command passes them down."""

from __future__ import annotations

from kinetics.optimise.words import API_WORDS, CLI_WORDS


def test_a_setting_is_named_as_it_was_given():
    assert API_WORDS.place("time=0:5:h") == "over entry 'time=0:5:h'"
    assert CLI_WORDS.place("time=0:5:h") == "--over 'time=0:5:h'"


def test_the_way_to_give_a_setting_names_the_argument_or_the_option():
    assert API_WORDS.give("Ea1=70:90:kJ/mol") == "give 'Ea1=70:90:kJ/mol' in over"
    assert CLI_WORDS.give("Ea1=70:90:kJ/mol") == "write --over 'Ea1=70:90:kJ/mol'"


def test_the_api_words_name_no_option():
    for words in (API_WORDS,):
        assert not any("--" in str(value) for value in vars(words).values())
