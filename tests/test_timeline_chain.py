"""The chain of a timeline (kinetics.timeline_chain): one compiled call, or stretch by stretch.

Reference: the two routes against each other (the compiled chain for schemes of up to
DENSE_MAX species, the stepped one beyond), and conservation of the amounts moved; the
timeline as a whole is checked against mpmath and Radau in tests/test_reference_timeline.py.
"""

from __future__ import annotations

import numpy as np
import pytest

import kinetics
from kinetics import timeline_chain
from kinetics.timeline_solve import solve_timeline

SEMI_BATCH = """title: invented semi-batch run (test only)
A -> B  k1 = 0.6 1/h
B -> C  k2 = 0.2 1/h
B -> D  k3 = 0.05 1/h
start A = 1 mol/L
volume = 1.0 L
feed D = 1e-3 mol/L/h
every 2 h until 9 h: add 200 mL with A = 0.5 mol/L
at 5 h: remove 40 % of C
every 3 h: remove 100 % of D
from 1 h to 4 h: feed B = 0.01 mol/L/h
"""


def solve(text, hours):
    scheme = kinetics.parse(text)
    line = scheme.timeline
    return solve_timeline(scheme, line, np.linspace(0.0, hours * 3600.0, 37))


def test_the_compiled_and_the_stepped_chain_agree(monkeypatch):
    compiled = solve(SEMI_BATCH, 12)
    monkeypatch.setattr(timeline_chain, "DENSE_MAX", 0)  # every scheme by the stepped route
    stepped = solve(SEMI_BATCH, 12)
    np.testing.assert_array_equal(compiled.times, stepped.times)
    bound = np.maximum(compiled.error_bound, stepped.error_bound)[:, None]
    diff = np.abs(compiled.concentrations - stepped.concentrations)
    assert np.all(diff <= 2 * bound * compiled.concentrations + 1e-300)
    np.testing.assert_allclose(compiled.error_bound, stepped.error_bound, rtol=1e-6)
    for a, b in zip(compiled.events, stepped.events, strict=True):
        assert (a.time, a.action, a.species, a.statement, a.volume) == (
            b.time, b.action, b.species, b.statement, b.volume
        )  # fmt: skip
        assert abs(a.change - b.change) <= 2 * max(a.error_bound, b.error_bound) * abs(a.change)


def test_a_complete_removal_records_exactly_what_was_there():
    sol = solve(SEMI_BATCH, 12)
    times, amounts = sol.removed("D")
    for t, amount in zip(times, amounts, strict=True):
        if t % 7200.0 == 0.0:  # an addition comes first at these times (it dilutes D)
            continue
        before = sol.concentrations[(sol.times == t) & ~sol.after][0]
        after = sol.concentrations[(sol.times == t) & sol.after][0]
        i = sol.species.index("D")
        assert amount == before[i]  # a complete removal is exact
        assert after[i] == 0.0


def test_jumps_hold_the_states_on_both_sides(monkeypatch):
    scheme = kinetics.parse(SEMI_BATCH)
    grid = np.array([0.0, 2 * 3600.0, 5 * 3600.0, 12 * 3600.0])
    sol = solve_timeline(scheme, scheme.timeline, grid)
    at_five = sol.concentrations[sol.times == 5 * 3600.0]
    i = sol.species.index("C")
    assert at_five.shape[0] == 2
    assert at_five[1, i] == pytest.approx(0.6 * at_five[0, i], rel=1e-15)
