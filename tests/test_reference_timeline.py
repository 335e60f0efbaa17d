"""The timeline solver against independent references.

* mpmath matrix exponentials at 50 digits applied stretch by stretch (mpmath.expm, a
  general-purpose arbitrary-precision library), from the exact inputs: the double-double
  rate matrices of the scheme, the times, amounts and fractions as given;
* the parent-daughter ingrowth formula after a complete elution (Bateman form; H.
  Bateman, Proc. Cambridge Philos. Soc. 15, 423-427 (1910); any radiochemistry textbook);
* scipy's solve_ivp (Radau, rtol 1e-12) on the time-dependent system of a temperature
  ramp, restarted at each operation;
* closed forms for a single first-order step: :math:`c = c_0 e^{-\\int k\\,dt}`, the
  integral by mpmath.quad at 30 digits.

The cases are invented scenarios: a generator eluted every 24 h, a reagent added in two
portions, a temperature step between Arrhenius stretches, a dosing window, and three
applications 14 days apart.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

import kinetics
from kinetics.timeline import (
    Addition,
    At,
    Every,
    FeedWindow,
    Removal,
    TemperatureRamp,
    TemperatureStep,
    Timeline,
)
from kinetics.timeline_solve import solve_timeline

HOUR, DAY = 3600.0, 86400.0
DPS = 50

GENERATOR = "P -> D  kP = 0.0105 1/h\nD -> X  kD = 0.1155 1/h\nstart P = 1 mol/L"
PORTIONS = "A -> B  k1 = 0.02 1/min\nB -> C  k2 = 0.005 1/min\nstart A = 0.5 mol/L"
HEATED = """A -> B  k1 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)
B -> C  k2 = arrhenius(A = 2.0e9 1/s, Ea = 75 kJ/mol)
temperature = 25 degC
start A = 1 mol/L"""
DOSED = "A -> B  k1 = 0.8 1/h\nB -> C  k2 = 0.05 1/h\nB -> A  k3 = 0.01 1/h\nstart B = 0.01 mol/L"
SOIL = """P -> M1  k1 = 0.0693 1/d
P -> M2  k2 = 0.01 1/d
M1 -> M2  k3 = 0.0231 1/d
M2 -> CO2  k4 = 0.005 1/d
start P = 0 mmol/kg"""


# --------------------------------------------------------------------------
# the mpmath reference, stretch by stretch
# --------------------------------------------------------------------------


def mp(x) -> mpmath.mpf:
    """An exact double or Fraction as an mpmath number."""
    f = Fraction(x)
    return mpmath.mpf(f.numerator) / f.denominator


def augmented(scheme, temperature, feed):
    """[[K, f], [0, 0]] at 50 digits from the scheme's double-double rate matrix."""
    s = scheme if temperature is None else scheme.with_values(temperature=temperature)
    Kh, Kl = s.rate_matrix_pair()
    n = Kh.shape[0]
    A = mpmath.zeros(n + 1, n + 1)
    for i in range(n):
        for j in range(n):
            A[i, j] = mp(Kh[i, j]) + mp(Kl[i, j])
        A[i, n] = mp(feed[i])
    return A


def mp_timeline(scheme, times, ops, temperatures=(), feeds=()):
    """Rows (time, after, values) and moved amounts, stretch by stretch at 50 digits.

    ``ops``: (time, "add", {name: amount}) or (time, "remove", (fraction, names)), in the
    order applied; ``temperatures``: (time, kelvin); ``feeds``: (start, end, {name: rate}).
    """
    n = len(scheme.species)
    index = scheme.index
    with mpmath.workdps(DPS):

        def conditions(t):
            T = None
            for time, kelvin in temperatures:
                if time <= t:
                    T = kelvin
            f = list(scheme.feed_vector)
            for start, end, rates in feeds:
                if start <= t < end:
                    for name, rate in rates.items():
                        f[index[name]] = Fraction(f[index[name]]) + Fraction(rate)
            return T, tuple(f)

        cache = {}
        x = mpmath.matrix([mp(v) for v in scheme.initial_vector] + [1])
        now = Fraction(0)
        stops = sorted(
            {Fraction(t) for t in times}
            | {Fraction(o[0]) for o in ops}
            | {Fraction(t) for t, _ in temperatures}
            | {Fraction(s) for s, _, _ in feeds}
            | {Fraction(e) for _, e, _ in feeds}
        )
        rows, moved = [], []
        for stop in stops:
            if stop > Fraction(max(times)):
                break
            if stop > now:
                key = conditions(float(now))
                if key not in cache:
                    cache[key] = augmented(scheme, key[0], key[1])
                x = mpmath.expm(cache[key] * mp(stop - now)) * x
                now = stop
            here = [o for o in ops if Fraction(o[0]) == stop]
            before = [x[i] for i in range(n)]
            for _, kind, payload in here:
                if kind == "add":
                    for name, amount in payload.items():
                        x[index[name]] += mp(amount)
                        moved.append(("add", name, mp(amount)))
                else:
                    fraction, names = payload
                    for name in names:
                        taken = mp(fraction) * x[index[name]]
                        x[index[name]] -= taken
                        moved.append(("remove", name, -taken))
            if float(stop) in times:
                rows.append((float(stop), False, before))
                if here:
                    rows.append((float(stop), True, [x[i] for i in range(n)]))
        return rows, moved


def assert_matches(sol, rows, moved, rtol=1e-13):
    """Every entry and every moved amount within rtol of the reference and within the
    solution's own certified bound."""
    assert sol.times.tolist() == [r[0] for r in rows]
    assert sol.after.tolist() == [r[1] for r in rows]
    worst = 0.0
    with mpmath.workdps(DPS):
        for got, bound, (_, _, exact) in zip(
            sol.concentrations, sol.error_bound, rows, strict=True
        ):
            for g, e in zip(got.tolist(), exact, strict=True):
                if e > mpmath.mpf("1e-290"):
                    err = float(abs(mp(g) - e) / e)
                    worst = max(worst, err)
                    assert err <= bound, (err, bound)
                else:
                    assert g == 0.0 or g < 1e-289
        changes = [e for e in sol.events if e.action in ("add", "remove")]
        assert [(e.action, e.species) for e in changes] == [m[:2] for m in moved]
        for event, (_, _, exact) in zip(changes, moved, strict=True):
            if abs(exact) > mpmath.mpf("1e-290"):  # the floor of the engine's guarantee
                err = float(abs(mp(event.change) - exact) / abs(exact))
                worst = max(worst, err)
                assert err <= event.error_bound
    assert worst <= rtol
    assert float(sol.error_bound.max()) <= rtol


# --------------------------------------------------------------------------
# the five cases
# --------------------------------------------------------------------------


def test_generator_eluted_every_24_h():
    scheme = kinetics.parse(GENERATOR)
    times = np.arange(0.0, 4 * DAY + 1, 6 * HOUR)
    line = Timeline([Every(DAY, Removal.percent(100, "D"))])
    sol = solve_timeline(scheme, line, times)
    ops = [(k * DAY, "remove", (Fraction(1), ("D",))) for k in range(1, 5)]
    rows, moved = mp_timeline(scheme, times.tolist(), ops)
    assert_matches(sol, rows, moved)
    assert len(sol.removed("D")[1]) == 4


def test_generator_eluates_follow_the_ingrowth_formula():
    # D(tau) = P(t_last) kP/(kD - kP) (exp(-kP tau) - exp(-kD tau)) after each complete
    # elution, P(t) = P0 exp(-kP t) (Bateman 1910; textbook parent-daughter ingrowth)
    scheme = kinetics.parse(GENERATOR)
    line = Timeline([Every(DAY, Removal.percent(100, "D"), until=7 * DAY)])
    sol = solve_timeline(scheme, line, [0.0, 7 * DAY])
    when, eluted = sol.removed("D")
    assert when.tolist() == [k * DAY for k in range(1, 8)]
    with mpmath.workdps(DPS):
        kP, kD = (mp(scheme.constants[n].value_si) for n in ("kP", "kD"))
        tau = mp(DAY)
        for k, amount in enumerate(eluted.tolist()):
            parent = mpmath.exp(-kP * k * tau)
            exact = parent * kP / (kD - kP) * (mpmath.exp(-kP * tau) - mpmath.exp(-kD * tau))
            assert float(abs(mp(amount) - exact) / exact) <= 1e-13


def test_reagent_added_in_two_portions():
    scheme = kinetics.parse(PORTIONS)
    times = np.linspace(0.0, 3 * HOUR, 13)  # 30 min is on the grid: it appears twice
    line = Timeline([At(1800.0, Addition({"A": 0.5}))])
    sol = solve_timeline(scheme, line, times)
    rows, moved = mp_timeline(scheme, times.tolist(), [(1800.0, "add", {"A": 0.5})])
    assert_matches(sol, rows, moved)
    assert sol.times.tolist().count(1800.0) == 2


def test_temperature_step_between_arrhenius_stretches():
    scheme = kinetics.parse(HEATED)
    times = np.linspace(0.0, 4 * HOUR, 17)
    line = Timeline([At(2 * HOUR, TemperatureStep(333.15))])
    sol = solve_timeline(scheme, line, times)
    rows, moved = mp_timeline(scheme, times.tolist(), [], temperatures=[(2 * HOUR, 333.15)])
    assert_matches(sol, rows, moved)
    assert sol.temperatures[0] == pytest.approx(298.15)
    assert sol.temperatures[-1] == 333.15


def test_dosing_window():
    scheme = kinetics.parse(DOSED)
    times = np.linspace(0.0, 5 * HOUR, 21)
    rate = 0.1 / HOUR
    line = Timeline([FeedWindow(HOUR, 3 * HOUR, {"A": rate})])
    sol = solve_timeline(scheme, line, times)
    rows, moved = mp_timeline(scheme, times.tolist(), [], feeds=[(HOUR, 3 * HOUR, {"A": rate})])
    assert_matches(sol, rows, moved)
    assert [(e.time, e.action) for e in sol.events] == [(HOUR, "feed on"), (3 * HOUR, "feed off")]


def test_three_applications_14_days_apart():
    scheme = kinetics.parse(SOIL)
    times = np.arange(0.0, 60 * DAY + 1, 4 * DAY)
    line = Timeline([Every(14 * DAY, Addition({"P": 1.5}), start=0.0, until=28 * DAY)])
    sol = solve_timeline(scheme, line, times)
    ops = [(k * 14 * DAY, "add", {"P": 1.5}) for k in range(3)]
    rows, moved = mp_timeline(scheme, times.tolist(), ops)
    assert_matches(sol, rows, moved)


def test_removals_and_additions_at_one_time_in_statement_order():
    scheme = kinetics.parse(PORTIONS)
    times = [0.0, 600.0, 1200.0, 2400.0]
    line = Timeline(
        [
            At(1200.0, Removal.percent(25, "B", "A")),
            At(1200.0, Addition({"B": 0.125})),
            Every(600.0, Removal.percent(10, "C"), start=600.0, until=2400.0),
        ]
    )
    sol = solve_timeline(scheme, line, times)
    ops = [
        (600.0, "remove", (Fraction(1, 10), ("C",))),
        (1200.0, "remove", (Fraction(1, 4), ("B", "A"))),
        (1200.0, "add", {"B": 0.125}),
        (1200.0, "remove", (Fraction(1, 10), ("C",))),
        (1800.0, "remove", (Fraction(1, 10), ("C",))),
        (2400.0, "remove", (Fraction(1, 10), ("C",))),
    ]
    rows, moved = mp_timeline(scheme, times, ops)
    assert_matches(sol, rows, moved)


# --------------------------------------------------------------------------
# ramps
# --------------------------------------------------------------------------

RAMPED = """A -> B  k1 = arrhenius(A = 5.0e10 1/s, Ea = 85 kJ/mol)
B -> C  k2 = arrhenius(A = 3.0e6 1/s, Ea = 60 kJ/mol)
A -> C  k3 = 1.0e-5 1/s
temperature = 25 degC
start A = 1 mol/L"""


def ramp_system(scheme, ramp):
    """dc/dt = K(T(t)) c for the time-dependent system and its Jacobian K(T(t))."""
    laws = [scheme.constants[name].arrhenius for name in ("k1", "k2")]
    prefactors = [float(law.prefactor_si) for law in laws]
    energies = [law.activation_energy for law in laws]
    k3 = float(scheme.constants["k3"].value_si)
    R = 8.31446261815324  # CODATA 2018, exact

    def jac(t, c=None):
        s = min(max((t - ramp.start) / (ramp.end - ramp.start), 0.0), 1.0)
        T = ramp.initial + (ramp.final - ramp.initial) * s
        k1, k2 = (A * math.exp(-E / (R * T)) for A, E in zip(prefactors, energies, strict=True))
        return np.array([[-(k1 + k3), 0.0, 0.0], [k1, -k2, 0.0], [k3, k2, 0.0]])

    return (lambda t, c: jac(t) @ c), jac


def radau(scheme, ramp, times, edges, jumps=None):
    """solve_ivp (Radau, rtol 1e-12) restarted at each edge; rows at ``times``."""
    rhs, jac = ramp_system(scheme, ramp)
    y = np.array(scheme.initial_vector)
    rows = [y] if times[0] == 0.0 else []
    for a, b in itertools.pairwise(edges):
        inside = times[(times > a) & (times <= b)]
        r = solve_ivp(
            rhs, (a, b), y, method="Radau", rtol=1e-12, atol=1e-30, t_eval=inside, jac=jac
        )
        rows.extend(r.y.T)
        y = r.y[:, -1].copy()
        if jumps and b in jumps:
            y += jumps[b]
            rows.append(y.copy())
    return np.array(rows)


RAMP = TemperatureRamp(HOUR, 3 * HOUR, 298.15, 318.15)
RAMP_TIMES = np.linspace(0.0, 4 * HOUR, 17)


@pytest.fixture(scope="module")
def ramp_reference():
    return radau(kinetics.parse(RAMPED), RAMP, RAMP_TIMES, [0.0, HOUR, 3 * HOUR, 4 * HOUR])


@pytest.mark.parametrize("ramp_rtol", [1e-6, 1e-8])
def test_ramp_within_its_estimate_of_a_stiff_integrator(ramp_rtol, ramp_reference):
    # reference: solve_ivp (Radau, rtol 1e-12), restarted at the ramp's ends; its own
    # error is allowed for by 1e-10 on entries above 1e-8 (an allowance, from practice)
    scheme = kinetics.parse(RAMPED)
    times = RAMP_TIMES
    sol = solve_timeline(scheme, Timeline([RAMP]), times, ramp_rtol=ramp_rtol)
    ref = ramp_reference
    big = ref > 1e-8
    err = np.where(big, np.abs(sol.concentrations - ref) / np.where(big, ref, 1.0), 0.0)
    true = err.max(axis=1)
    assert np.all(true <= sol.ramp_estimate + 1e-10)
    assert sol.ramp_estimate.max() <= ramp_rtol
    assert sol.ramp_estimate[times <= HOUR].max() == 0.0
    # the estimate is informative, not a blanket: within a factor 1000 of the truth
    # during the ramp (after it, entries below the reference's reach dominate it)
    during = (times > 1.5 * HOUR) & (times <= 3 * HOUR)
    assert np.all(sol.ramp_estimate[during] <= 1000 * true[during])


def test_ramp_of_a_single_step_matches_the_closed_form():
    # one Arrhenius step: c = c0 exp(-int k dt), the integral by mpmath.quad (30 digits)
    scheme = kinetics.parse(
        "A -> B  k = arrhenius(A = 1.0e12 1/s, Ea = 90 kJ/mol)\ntemperature = 20 degC\n"
        "start A = 1 mol/L"
    )
    law = scheme.constants["k"].arrhenius
    ramp = TemperatureRamp(0.0, 5 * HOUR, 293.15, 333.15)
    sol = solve_timeline(scheme, Timeline([ramp]), [0.0, 2 * HOUR, 5 * HOUR])
    with mpmath.workdps(30):
        A, E, R = mp(law.prefactor_si), mp(law.activation_energy), mpmath.mpf("8.31446261815324")

        def k(t):
            return A * mpmath.exp(-E / (R * (mp(293.15) + mp(40) * t / mp(5 * HOUR))))

        for t, got in zip([2 * HOUR, 5 * HOUR], sol["A"][1:], strict=True):
            exact = mpmath.exp(-mpmath.quad(k, [0, mp(t)]))
            err = float(abs(mp(got) - exact) / exact)
            assert err <= 1e-12
            assert err <= sol.ramp_estimate[-1] + sol.error_bound[-1] + 1e-13


def test_ramp_with_an_addition_inside_it():
    scheme = kinetics.parse(RAMPED)
    ramp = RAMP
    line = Timeline([ramp, At(2 * HOUR, Addition({"A": 0.5}))])
    times = np.linspace(0.0, 4 * HOUR, 9)
    sol = solve_timeline(scheme, line, times, ramp_rtol=1e-8)
    edges = [0.0, HOUR, 2 * HOUR, 3 * HOUR, 4 * HOUR]
    ref = radau(scheme, ramp, times, edges, jumps={2 * HOUR: np.array([0.5, 0.0, 0.0])})
    err = np.abs(sol.concentrations - ref) / ref.clip(1e-8)
    assert np.all(err.max(axis=1) <= sol.ramp_estimate + 1e-10)


# --------------------------------------------------------------------------
# temperature records
# --------------------------------------------------------------------------


def test_degradation_under_a_record_equals_isothermal_at_the_equivalent_temperature():
    # single first-order step: c = c0 exp(-int k dt) = c0 exp(-k(T_eq) t), exact identity
    from kinetics.temperature_log import equivalent_temperatures, parse_temperature_log

    scheme = kinetics.parse(
        "A -> B  k = arrhenius(A = 2.0e10 1/s, Ea = 100 kJ/mol)\ntemperature = 25 degC\n"
        "start A = 1 mol/L"
    )
    log = parse_temperature_log(
        "time [d],temperature [degC]\n0,25\n3,25.5\n7,31\n7.5,40\n8,24\n20,26\n"
    )
    end = 30 * DAY
    under = solve_timeline(scheme, log.timeline(), [0.0, end])
    T_eq = equivalent_temperatures(log, scheme, end=end)["k"]
    flat = kinetics.solve(scheme.with_values(temperature=T_eq), [0.0, end])
    assert under["A"][-1] == pytest.approx(flat["A"][-1], rel=1e-13)
    assert under["A"][-1] < 0.9  # the record degrades noticeably


@settings(max_examples=8, deadline=None)
@given(
    ops=st.lists(
        st.tuples(
            st.integers(0, 3000).map(lambda k: k / 1000),
            st.sampled_from(["A", "B", "C"]),
            st.one_of(st.floats(0.0, 1.0), st.fractions(0, 1, max_denominator=100)),
            st.booleans(),
        ),
        max_size=4,
    ),
    window=st.tuples(st.floats(0.0, 2.0), st.floats(0.1, 2.0), st.floats(0.0, 1e-4)),
    step=st.tuples(st.floats(0.0, 3.0), st.floats(290.0, 320.0)),
)
@example(  # a removal of 23/42: the fraction's own rounding belongs in the eluate's bound
    ops=[(0.0, "A", 0.0, False), (0.111, "C", Fraction(23, 42), False)],
    window=(0.0, 1.0, 0.0),
    step=(1.0, 290.0),
)
def test_random_timelines_match_the_reference_within_their_bound(ops, window, step):
    # random additions, removals, a feed window and a temperature step, against mpmath;
    # operation times on a 3.6 s lattice: mpmath.expm truncates its Taylor sum normwise,
    # so an entry far below 1e-50 of the largest one (a stretch of 1e-100 s) is outside
    # the reference's reach (not the solver's)
    scheme = kinetics.parse(HEATED)
    start, length, rate = window
    line = Timeline(
        [
            At(t * HOUR, Addition({s: float(v)}) if add else Removal(s, min(v, 1)))
            for t, s, v, add in ops
        ]
        + [
            FeedWindow(start * HOUR, (start + length) * HOUR, {"B": rate}),
            At(step[0] * HOUR, TemperatureStep(step[1])),
        ]
    )
    times = np.linspace(0.0, 3 * HOUR, 4)
    sol = solve_timeline(scheme, line, times)
    reference_ops = sorted(
        (
            (t * HOUR, "add", {s: float(v)})
            if add
            else (t * HOUR, "remove", (Fraction(min(v, 1)), (s,)))
            for t, s, v, add in ops
        ),
        key=lambda o: o[0],
    )
    feeds = [(start * HOUR, (start + length) * HOUR, {"B": rate})]
    rows, moved = mp_timeline(
        scheme, times.tolist(), reference_ops, [(step[0] * HOUR, step[1])], feeds
    )
    assert_matches(sol, rows, moved)
