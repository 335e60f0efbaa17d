"""The JSON-ready objects of kinetics.output.overview: the certificate of a solution where
users see it."""

from __future__ import annotations

import json

import numpy as np

import kinetics
from kinetics.output.overview import (
    CERTIFICATE_NOTE,
    certificate_rows,
    certificate_sentence,
    solution_json,
)

TEXT = "A -> B  k1 = 0.1 1/min\nB -> C  k2 = 0.05 1/min\nstart A = 1 mol/L\n"


def test_solve_json_has_a_bound_per_time_point():
    scheme = kinetics.parse(TEXT)
    result = kinetics.solve(scheme, np.linspace(0.0, 3600.0, 5))
    document = solution_json(result, "min")
    assert document["error_bound"] == result.error_bound.tolist()
    assert document["error_bound"][0] == 0.0  # time 0 returns the start values exactly
    assert all(0 < b < 1e-13 for b in document["error_bound"][1:])
    assert document["error_bound_note"] == CERTIFICATE_NOTE
    json.dumps(document, allow_nan=False)


def test_certificate_sentence_and_rows():
    scheme = kinetics.parse(TEXT)
    result = kinetics.solve(scheme, [0.0, 60.0, 120.0])
    worst = float(result.error_bound.max())
    assert certificate_sentence(result) == (
        f"Every concentration above 1e-290 is within {worst:.2g} (relative) of the exact "
        "solution for the constants as written, at every time of the table (rounding of "
        "every operation, truncation, the time grid and the final rounding included)."
    )
    rows = certificate_rows(result, "min")
    assert [r["time [min]"] for r in rows] == [0.0, 1.0, 2.0]
    assert [r["relative error bound"] for r in rows] == result.error_bound.tolist()


def test_a_unit_conversion_widens_the_bound_by_its_rounding():
    scheme = kinetics.parse(TEXT + "formula A = C2H4O2, B = C2H4O2, C = C2H4O2\n")
    result = kinetics.solve(scheme, [0.0, 60.0])
    in_grams = result.in_unit("g/L")
    assert np.all(in_grams.error_bound[1:] > result.error_bound[1:])
    assert np.all(in_grams.error_bound <= result.error_bound + 1e-15)
