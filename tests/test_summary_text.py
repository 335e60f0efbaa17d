"""The summary in words (kinetics.output.summary_text): one wording wherever it is shown."""

from __future__ import annotations

from kinetics.analysis.solution_summary import CONCENTRATION_KEYS
from kinetics.output.summary_text import SUMMARY_COLUMNS, summary_header, summary_notes


def test_notes_list_every_maximum_then_the_notes_of_each_species_once():
    summary = {
        "B": {
            "maxima": [{"time": 1.5, "height": 0.25}, {"time": 40.0, "height": 0.125}],
            "notes": ["B grows without bound", "B grows without bound"],
        },
        "C": {"maxima": [{"time": 3.0, "height": 0.5}], "notes": []},
    }
    assert summary_notes(summary, "min", "mol/L") == [
        "B: local maxima 0.25 mol/L at 1.5 min, 0.125 mol/L at 40 min",
        "B: B grows without bound",
    ]


def test_headers_carry_their_units():
    by_key = {c[0]: c for c in SUMMARY_COLUMNS}
    assert summary_header(by_key["t_max"], "min", "mol/L") == "t_max [min]"
    assert summary_header(by_key["c_max"], "min", "mol/L") == "c_max [mol/L]"
    assert summary_header(by_key["area_to_infinity"], "h", "mM") == "area to infinity [mM·h]"
    assert summary_header(by_key["limit_kind"], "h", "mM") == "limit kind"


def test_the_concentration_columns_are_those_scaled_by_another_unit():
    # Solution.in_unit scales exactly the quantities the table labels with the
    # concentration unit
    assert {key for key, _, kind in SUMMARY_COLUMNS if kind == "conc"} == CONCENTRATION_KEYS
