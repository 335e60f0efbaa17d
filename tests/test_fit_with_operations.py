"""Fits of data from runs with operations, and of named operation times and amounts.

The data are the exact solutions of the same schemes with known values (synthetic,
noise-free); a fit must recover those values (to 1e-7 relative). Closed form used for a
check value: first-order decay c = c0 e^(-kt) (any physical chemistry textbook).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import kinetics
from kinetics.errors import ConstantError

HOUR = 3600.0
GENERATOR = """P -> D   kP = 0.01 1/h
D -> X   kD = 0.1 1/h
start P = 1 mol/L
t_el = 24 h
every t_el: remove 100 % of D
"""
SEMI = """A -> B   k1 = 0.03 1/min
B -> C   k2 = 0.01 1/min
start A = 0.4 mol/L
volume = 1.0 L
dose = 0.8 mol/L
at 30 min: add 250 mL with A = dose
"""


def data(scheme, times, species, unit):
    """The exact values at ``times`` (just after an operation at a sample time)."""
    sol = kinetics.solve(scheme, times)
    rows = np.searchsorted(sol.times, times, side="right") - 1
    frame = {"time [h]": times / HOUR}
    for name in species:
        frame[f"{name} [{unit}]"] = sol[name][rows]
    return pd.DataFrame(frame)


def test_a_rate_constant_from_a_run_with_operations():
    scheme = kinetics.parse(GENERATOR)
    truth = scheme.with_values(constants={"kD": 0.12 / HOUR})
    frame = data(truth, np.linspace(HOUR, 3 * 86400, 30), ["D"], "mol/L")
    result = kinetics.fit(scheme, frame, free=["kD"])
    assert result.to_frame()["value"][0] == pytest.approx(0.12, rel=1e-7)


def test_an_operation_time():
    # the start value (24 h) lies in the same interval between samples as the truth (22 h)
    scheme = kinetics.parse(GENERATOR)
    truth = scheme.with_values(quantities={"t_el": Fraction(22 * 3600)})
    frame = data(truth, np.linspace(HOUR, 4 * 86400, 40), ["D"], "mol/L")
    result = kinetics.fit(scheme, frame, free="t_el").to_frame()
    assert result["unit"][0] == "h"
    assert result["value"][0] == pytest.approx(22.0, rel=1e-7)


def test_an_amount_of_a_portion():
    scheme = kinetics.parse(SEMI)
    truth = scheme.with_values(quantities={"dose": 1000})  # 1 mol/L
    frame = data(truth, np.linspace(0.25 * HOUR, 3 * HOUR, 12), ["A", "B"], "mol/L")
    result = kinetics.fit(scheme, frame, free=["dose", "k1"]).to_frame()
    assert result["value"][0] == pytest.approx(1.0, rel=1e-7)
    assert result["value"][1] == pytest.approx(0.03, rel=1e-7)
    fitted = kinetics.fit(scheme, frame, free=["dose"]).fitted_scheme()
    assert fitted.timeline.statements[0].action.amounts[0][1] == pytest.approx(0.25, rel=1e-7)


def test_what_a_fit_cannot_free():
    scheme = kinetics.parse(GENERATOR.replace("100 %", "p_el") + "p_el = 90 %\n")
    with pytest.raises(ConstantError) as info:
        kinetics.fit(scheme, pd.DataFrame({"time [h]": [1.0], "D [mol/L]": [0.1]}), free="p_el")
    assert str(info.value) == (
        "free parameter 'p_el' is a part removed, which a fit cannot free; vary it in a sweep "
        "instead (kinetics sweep --vary)"
    )
    zero = kinetics.parse(GENERATOR + "t_0 = 0 h\nat t_0: add P = 0.1 M\n")
    with pytest.raises(ConstantError) as info:
        kinetics.fit(zero, pd.DataFrame({"time [h]": [1.0], "D [mol/L]": [0.1]}), free="t_0")
    assert str(info.value) == (
        "free parameter 't_0' is 0 in the file; a fit frees positive quantities only; give it "
        "a positive starting value in the file"
    )


@pytest.mark.parametrize("start", [2.9, 5.0])
def test_an_addition_time_from_closed_form_data(start):
    # invented: A -> B (k = 0.5 1/h) with a second portion of 0.6 M of A at 2.3 h; data
    # from the closed form A(t) = e^{-kt} + 0.6 e^{-k(t - 2.3 h)} for t >= 2.3 h (first-order
    # decay per stretch), every 0.5 h.  A start after the truth converges to it; a start
    # more than one sample interval before it can stop at a sample time, where the
    # objective jumps (a sample changes from before to after the addition)
    times = np.arange(0.5, 8.01, 0.5)
    A = np.exp(-0.5 * times) + np.where(times >= 2.3, 0.6 * np.exp(-0.5 * (times - 2.3)), 0.0)
    frame = pd.DataFrame({"time [h]": times, "A [mol/L]": A})
    scheme = kinetics.parse(
        f"A -> B  k = 0.5 1/h\nstart A = 1 mol/L\nt_q = {start} h\nat t_q: add A = 0.6 mol/L"
    )
    result = kinetics.fit(scheme, frame, free="t_q", profile=False).to_frame()
    assert result["value"][0] == pytest.approx(2.3, rel=1e-12)
