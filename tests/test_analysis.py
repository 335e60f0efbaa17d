"""Behaviour of kinetics.analysis: definitions, flags, reasons, errors, JSON, properties.

Closed-form checks are in test_reference_analysis.py; here each numeric expectation
still names where it comes from.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.sparse
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from kinetics import analysis as an
from kinetics.errors import (
    ArgumentValueError,
    ConcentrationError,
    KineticsError,
    RateMatrixError,
    SettingError,
    SpeciesError,
    TimesError,
    UsageError,
    WorkingRangeError,
)
from kinetics.propagate import propagate

from conftest import chain_matrix

CYCLE = np.array([[-1, 0, 1, 0], [1, -1, 0, 0], [0, 1, -1 - 1e-6, 0], [0, 0, 1e-6, 0]])


# ---------------------------------------------------------------------------------------
# Errors
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("K", "c0", "kind"),
    [
        (np.array([[-1.0, -0.1], [1.0, 0.0]]), [1, 0], RateMatrixError),  # negative off-diagonal
        (np.zeros((2, 3)), [1, 0], RateMatrixError),  # not square
        (np.array([[np.nan, 0], [0, 0]]), [1, 0], RateMatrixError),  # nan
        ("abc", [1, 0], RateMatrixError),  # not numeric
        (chain_matrix([1.0]), [1, 0, 0], ConcentrationError),  # wrong length
        (chain_matrix([1.0]), [1, -1], ConcentrationError),  # negative start
        (chain_matrix([1.0]), [1, np.inf], ConcentrationError),  # inf start
    ],
)
def test_bad_arrays_raise_typed_errors(K, c0, kind):
    with pytest.raises(kind) as err:
        an.long_time_limit(K, c0)
    # a value error of the core: KineticsError and ValueError, never the command line's
    # UsageError
    assert isinstance(err.value, KineticsError)
    assert isinstance(err.value, ArgumentValueError)
    assert not isinstance(err.value, UsageError)
    assert err.value.hint


@pytest.mark.parametrize(
    ("K", "c0", "feed"),
    [
        (np.array([[-1.0, -0.1], [1.0, 0.0]]), [1, 0], None),
        (scipy.sparse.csr_array(np.array([[-1.0, -0.1], [1.0, 0.0]])), [1, 0], None),
        (np.zeros((2, 3)), [1, 0], None),
        (np.array([[np.nan, 0], [0, 0]]), [1, 0], None),
        ("abc", [1, 0], None),
        (chain_matrix([1.0]), [1, 0, 0], None),
        (chain_matrix([1.0]), [1, -1], None),
        (chain_matrix([1.0]), [1, 0], [0, np.inf]),
    ],
)
def test_the_analysis_words_a_mistake_as_the_engine_does(K, c0, feed):
    # one home per check (kinetics.engine.checks): the same mistake, the same message
    # (the messages themselves are pinned in test_propagate)
    with pytest.raises(ArgumentValueError) as analysis:
        an.long_time_limit(K, c0, feed=feed)
    with pytest.raises(ArgumentValueError) as engine:
        propagate(K, c0, [1.0], feed)
    assert type(analysis.value) is type(engine.value)
    assert str(analysis.value) == str(engine.value)


def test_a_window_end_and_area_limits_are_worded_as_every_time():
    # one wording per mistake: the window end as kinetics.solution.time_grid's end, the
    # upper limits of areas as any time list (kinetics.engine.checks)
    with pytest.raises(TimesError) as err:
        an.intermediate_maxima(chain_matrix([1.0]), [1, 0], 1, t_window=-1.0)
    assert str(err.value) == (
        "t_window must be positive and finite, not -1 s; give the end of the window in "
        "seconds, e.g. 5400 for 90 min"
    )
    with pytest.raises(TimesError) as err:
        an.areas(chain_matrix([1.0]), [1, 0], [5.0, -1.0])
    assert str(err.value) == "a time is negative (-1 s); times start at 0 (the start values)"
    with pytest.raises(TimesError) as err:
        an.areas(chain_matrix([1.0]), [1, 0], [np.inf])
    assert str(err.value) == "a time is not a finite number; give finite times in seconds"
    # in any order
    assert an.areas(chain_matrix([1.0]), [1, 0], [2.0, 1.0]).to_end.shape == (2, 2)


def test_a_sparse_rate_matrix_with_stored_zeros_is_left_as_given():
    # the analysis drops stored zeros from its own copy, never from the caller's matrix
    data = np.array([-1.0, 0.0, 1.0, 0.0])
    K = scipy.sparse.csr_array((data, np.array([0, 1, 0, 1]), np.array([0, 2, 4])), shape=(2, 2))
    # A -> B at 1/s: everything ends in B (closed form of the long-time limit)
    np.testing.assert_allclose(an.long_time_limit(K, [1, 0]).values, [0.0, 1.0], atol=1e-15)
    assert K.nnz == 4
    assert K.data.tolist() == data.tolist()


def test_an_empty_rate_matrix_is_refused():
    with pytest.raises(RateMatrixError) as err:
        an.long_time_limit(np.zeros((0, 0)), [])
    assert str(err.value) == "the rate matrix K is empty; a scheme needs at least one species"


@pytest.mark.parametrize(
    ("call", "kind"),
    [
        (lambda: an.half_life(chain_matrix([1.0]), [1, 0], 2), SpeciesError),
        (lambda: an.half_life(chain_matrix([1.0]), [1, 0], True), SpeciesError),
        (lambda: an.half_life(chain_matrix([1.0]), [1, 0], 0.5), SpeciesError),
        (lambda: an.time_to_fraction(chain_matrix([1.0]), [1, 0], 0, 1.0), SettingError),
        (lambda: an.time_to_fraction(chain_matrix([1.0]), [1, 0], 0, 0.0), SettingError),
        (lambda: an.time_to_limit(chain_matrix([1.0]), [1, 0], tolerance=2.0), SettingError),
        (lambda: an.intermediate_maxima(chain_matrix([1.0]), [1, 0], 1, t_window=-1.0), TimesError),
        (lambda: an.areas(chain_matrix([1.0]), [1, 0], [-1.0]), TimesError),
        (lambda: an.long_time_limit(chain_matrix([1.0]), [1, 0], feed=[-1, 0]), ConcentrationError),
        (lambda: an.summarise(chain_matrix([1.0]), [1, 0], ["A", "A"]), SpeciesError),
        (lambda: an.summarise(chain_matrix([1.0]), [1, 0], ["A"]), SpeciesError),
        (lambda: an.yields_and_selectivity(chain_matrix([1.0]), [1, 0], basis=5), SpeciesError),
        (lambda: an.long_time_limit(chain_matrix([1e101]), [1, 0]), WorkingRangeError),
    ],
)
def test_bad_arguments_raise_typed_errors(call, kind):
    with pytest.raises(kind) as err:
        call()
    assert isinstance(err.value, ArgumentValueError)
    assert not isinstance(err.value, UsageError)


# ---------------------------------------------------------------------------------------
# Lifetimes, fractions and their reasons
# ---------------------------------------------------------------------------------------


def test_lifetimes_from_outflow():
    # tau = 1/sum k_out, ln2 tau (definition; Atkins & de Paula, first-order reactions)
    K = np.array([[-3.0, 0, 0], [1.0, -0.5, 0], [2.0, 0.5, 0]])
    tau, hl = an.lifetimes(K)
    np.testing.assert_allclose(tau, [1 / 3, 2.0, np.inf], rtol=1e-15, atol=0)
    np.testing.assert_allclose(hl, [math.log(2) / 3, 2 * math.log(2), np.inf], rtol=1e-15)


def test_fraction_reasons():
    K = np.array([[-1.0, 0, 0], [1.0, 0, 0], [0, 0, 0]])
    r = an.half_life_detail(K, [1.0, 1.0, 0.0], 1)
    assert r.time is None
    assert "not consumed" in r.reason
    r = an.half_life_detail(K, [1.0, 1.0, 0.0], 2)
    assert "starts at zero" in r.reason
    # equilibrium exactly at one half: approached only as t -> infinity
    r = an.half_life_detail(np.array([[-2.0, 2.0], [2.0, -2.0]]), [1.0, 0.0], 0)
    assert r.time is None
    assert "only as t -> infinity" in r.reason


def test_fraction_with_feed_and_growth():
    # A -> 2B, B -> A (stoichiometric factor 2): the class grows like e^((sqrt2-1) t)
    # (eigenvalue of [[-1, 1], [2, -1]], closed form); A first dips, then grows.
    K = np.array([[-1.0, 1.0], [2.0, -1.0]])
    r = an.half_life_detail(K, [1.0, 0.0], 0)
    assert r.time is None
    assert "grows without bound" in r.reason
    t90 = an.time_to_fraction(K, [1.0, 0.0], 0, 0.9)
    c = propagate(K, [1.0, 0.0], [t90])[0]
    np.testing.assert_allclose(c[0], 0.9, rtol=1e-10, atol=0)
    lim = an.long_time_limit(K, [1.0, 0.0], names=["A", "B"])
    assert lim.growth == ("exponential", "exponential")
    np.testing.assert_allclose(lim.growth_rate, math.sqrt(2) - 1, rtol=1e-12, atol=0)
    assert "exponentially" in lim.notes[0]
    assert an.time_to_limit(K, [1.0, 0.0]).time is None
    rt = an.relaxation_times(K)
    np.testing.assert_allclose(rt.growth_times, [1 / (math.sqrt(2) - 1)], rtol=1e-12, atol=0)


def test_time_to_fraction_solves_the_curve():
    # the returned time satisfies c_i(t) = phi c0_i on the exact solution
    K = chain_matrix([0.7, 0.2, 3.0])
    K[0, 2] += 0.4  # C -> A, a back step
    K[2, 2] -= 0.4
    for phi in (0.9, 0.5, 0.05):
        t = an.time_to_fraction(K, [2.0, 0, 0, 0], 0, phi)
        c = propagate(K, [2.0, 0, 0, 0], [t])[0]
        np.testing.assert_allclose(c[0], 2.0 * phi, rtol=1e-11, atol=0)


# ---------------------------------------------------------------------------------------
# Maxima flags
# ---------------------------------------------------------------------------------------


def test_beyond_window_flag():
    # A -> B -> C with t_max = ln(k1/k2)/(k1 - k2) = 13.86 s (textbook)
    K = chain_matrix([0.1, 0.05])
    (m,) = an.intermediate_maxima(K, [1.0, 0, 0], 1, t_window=10.0)
    assert m.beyond_window
    assert m.is_global
    s = an.summarise(K, [1.0, 0, 0], ["A", "B", "C"], t_window=10.0)
    assert s["B"].t_max_beyond_window
    assert any("beyond the chosen time window" in x for x in s["B"].notes)


def test_cycle_start_species_maxima_are_not_global():
    # A starts at its largest value; its later local maxima (the cycle bringing material
    # back) are local only.
    ms = an.intermediate_maxima(CYCLE, [1.0, 0, 0, 0], 0)
    assert len(ms) == 2
    assert not any(m.is_global for m in ms)
    ms = an.intermediate_maxima(CYCLE, [1.0, 0, 0, 0], 1)
    assert [m.is_global for m in ms] == [True, False]


def test_no_maxima_for_monotone_species():
    K = chain_matrix([1.0, 2.0])
    assert an.intermediate_maxima(K, [1.0, 0, 0], 0) == []
    assert an.intermediate_maxima(K, [1.0, 0, 0], 2) == []
    # a species that is never formed
    K = np.zeros((3, 3))
    K[0, 0], K[1, 0] = -1.0, 1.0
    assert an.intermediate_maxima(K, [1.0, 0, 0], 2) == []
    lim = an.long_time_limit(K, [1.0, 0, 0])
    assert lim.kind == ("transient", "end product", "not formed")


# ---------------------------------------------------------------------------------------
# Limits, relaxation, areas
# ---------------------------------------------------------------------------------------


def test_limit_kinds_and_transient_feed():
    # feed into A, A -> B <=> C: A steady state f/k, B and C grow linearly with the
    # equilibrium split kr/(kf+kr), kf/(kf+kr) of the feed rate (mass balance).
    k, kf, kr, f = 2.0, 0.3, 0.1, 0.5
    K = np.array([[-k, 0, 0], [k, -kf, kr], [0, kf, -kr]])
    lim = an.long_time_limit(K, [0, 0, 0], feed=[f, 0, 0])
    np.testing.assert_allclose(lim.values[0], f / k, rtol=1e-15, atol=0)
    np.testing.assert_allclose(
        lim.growth_rate[1:], [f * kr / (kf + kr), f * kf / (kf + kr)], rtol=1e-14, atol=0
    )
    assert lim.kind == ("steady state", "unbounded", "unbounded")
    # the same without feed from a start in A: everything ends in the B <=> C equilibrium
    lim = an.long_time_limit(K, [1.0, 0, 0])
    np.testing.assert_allclose(lim.values, [0, kr / (kf + kr), kf / (kf + kr)], rtol=1e-15)
    assert lim.kind == ("transient", "equilibrium", "equilibrium")


def test_time_to_limit_first_order_decay():
    # A -> B: |c - c_inf| = A0 e^(-kt) <= 0.01 A0 at t = ln(100)/k (definition in the
    # module docstring, zero limit measured against the largest limit A0)
    k = 0.25
    res = an.time_to_limit(chain_matrix([k]), [1.0, 0.0])
    np.testing.assert_allclose(res.per_species, [math.log(100) / k] * 2, rtol=1e-10, atol=0)
    res = an.time_to_limit(chain_matrix([k]), [1.0, 0.0], tolerance=1e-3)
    np.testing.assert_allclose(res.time, math.log(1000) / k, rtol=1e-10, atol=0)


def test_relaxation_defective_only_along_paths():
    # -k repeated on A and C, linked by A -> B -> C: defective (Rothblum 1975)
    K = chain_matrix([0.5, 1.0, 0.5])
    rt = an.relaxation_times(K)
    assert rt.defective
    np.testing.assert_allclose(rt.times, [2.0, 2.0, 1.0], rtol=1e-15, atol=0)
    # A -> C and B -> C with the same rate: repeated but not linked: diagonalisable
    K = np.array([[-0.5, 0, 0], [0, -0.5, 0], [0.5, 0.5, 0]])
    rt = an.relaxation_times(K)
    assert not rt.defective
    assert not rt.nearly_defective
    assert rt.note == ""
    assert rt.zero_modes == 1


def test_sparse_input_gives_the_same_results():
    K = chain_matrix([0.3, 1.7, 0.05])
    Ks = scipy.sparse.csr_matrix(K)
    c0 = [1.0, 0, 0, 0]
    a = an.intermediate_maxima(K, c0, 1)
    b = an.intermediate_maxima(Ks, c0, 1)
    np.testing.assert_allclose([m.time for m in a], [m.time for m in b], rtol=1e-13, atol=0)
    np.testing.assert_allclose(
        an.long_time_limit(Ks, c0).values, an.long_time_limit(K, c0).values, rtol=0, atol=0
    )
    np.testing.assert_allclose(
        an.areas(Ks, c0, [3.0]).to_end, an.areas(K, c0, [3.0]).to_end, rtol=1e-13, atol=0
    )


def test_areas_match_trapezoid_on_a_fine_grid():
    # independent check: trapezoid rule on 20001 points of the exact curve (error
    # h^2/12 max|c''| T, below 1e-7 here)
    K = chain_matrix([0.9, 0.3])
    K[0, 1] += 0.2  # B -> A
    K[1, 1] -= 0.2
    c0 = [1.0, 0.5, 0.0]
    T = 20.0
    ts = np.linspace(0, T, 20001)
    c = propagate(K, c0, ts)
    trap = ((c[1:] + c[:-1]) / 2 * np.diff(ts)[:, None]).sum(axis=0)
    np.testing.assert_allclose(an.areas(K, c0, T).to_end[0], trap, rtol=1e-7, atol=0)


# ---------------------------------------------------------------------------------------
# Summary and JSON
# ---------------------------------------------------------------------------------------


def test_summary_to_dict_is_json():
    K = chain_matrix([0.1, 0.05])
    s = an.summarise(K, [1.0, 0, 0], ["A", "B", "C"], t_window=60.0)
    d = {k: v.to_dict() for k, v in s.items()}
    text = json.dumps(d, allow_nan=False)
    back = json.loads(text)
    for name in "ABC":
        for key in ("half_life", "t_max", "c_max", "limit"):
            assert key in back[name]
    assert back["A"]["t_max"] is None
    assert back["B"]["half_life"] is None
    assert back["C"]["lifetime"] is None  # infinite: no outflow
    assert back["C"]["limit"] == pytest.approx(1.0, rel=1e-15)
    assert back["B"]["maxima"][0]["global"] is True


def test_summary_unbounded_species():
    K = np.array([[-0.5, 0], [0.5, 0.0]])
    s = an.summarise(K, [1.0, 0.0], ["A", "B"], feed=[0.1, 0.0])
    assert s["B"].unbounded
    assert s["B"].limit is None
    assert s["B"].time_to_limit is None
    assert any("B grows without bound" in x for x in s["B"].notes)
    np.testing.assert_allclose(s["A"].limit, 0.1 / 0.5, rtol=1e-15)  # f/k (infusion)
    assert s["A"].area_to_infinity is None


def test_yield_basis():
    # B_max = A0 (k1/k2)^(k2/(k2-k1)) (textbook); basis = A only, or all starting materials
    k1, k2 = 1.0, 0.5
    K = chain_matrix([k1, k2])
    K = np.pad(K, ((0, 1), (0, 1)))  # an inert fourth species that starts with material
    c0 = [2.0, 0, 0, 3.0]
    bmax = 2.0 * (k1 / k2) ** (k2 / (k2 - k1))
    ys = an.yields_and_selectivity(K, c0, basis=0)
    np.testing.assert_allclose(ys.yield_at_max[1], bmax / 2.0, rtol=1e-12)
    ys = an.yields_and_selectivity(K, c0)
    np.testing.assert_allclose(ys.yield_at_max[1], bmax / 5.0, rtol=1e-12)
    assert np.isnan(ys.yield_at_max[0])
    assert ys.end_products == (2,)


# ---------------------------------------------------------------------------------------
# Property: reported maxima are stationary points and maxima of the exact curve
# ---------------------------------------------------------------------------------------


@st.composite
def random_chains(draw):
    n = draw(st.integers(3, 6))
    logk = draw(st.lists(st.floats(-2, 2), min_size=n - 1, max_size=n - 1))
    K = chain_matrix(list(10.0**x for x in logk))
    # optional forward branches j -> i (i > j + 1), keeping the scheme triangular
    for j in range(n - 2):
        if draw(st.booleans()):
            i = draw(st.integers(j + 2, n - 1))
            k = 10.0 ** draw(st.floats(-2, 2))
            K[j, j] -= k
            K[i, j] += k
    return K


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(random_chains())
def test_reported_tmax_is_a_maximum_of_the_exact_curve(K):
    n = K.shape[0]
    c0 = np.zeros(n)
    c0[0] = 1.0
    names = [f"S{i}" for i in range(n)]
    summary = an.summarise(K, c0, names)
    for i in range(1, n):
        formed = (K[i, :i] > 0).any() or summary[names[i]].maxima
        consumed = K[i, i] < 0
        s = summary[names[i]]
        if not (consumed and formed):
            assert s.t_max is None
            continue
        # an intermediate of a chain started from the first species rises and falls
        assert s.t_max is not None
        t = s.t_max
        c = propagate(K, c0, [t * (1 - 1e-6), t, t * (1 + 1e-6)])
        d = K @ c[1]
        scale = np.abs(K[i]) @ c[1]
        assert abs(d[i]) <= 1e-9 * scale
        assert c[1, i] >= c[0, i] * (1 - 1e-15)
        assert c[1, i] >= c[2, i] * (1 - 1e-15)
        np.testing.assert_allclose(s.c_max, c[1, i], rtol=1e-12, atol=0)


def test_scheme_summary_json():
    # parallel A -> B (k1), A -> C (k2): fractional selectivity k1/(k1+k2), k2/(k1+k2)
    # (Atkins & de Paula, parallel reactions); relaxation time 1/(k1 + k2)
    k1, k2 = 0.8, 0.05
    K = np.array([[-(k1 + k2), 0, 0], [k1, 0, 0], [k2, 0, 0]])
    per, scheme = an.summarise_all(K, [1.0, 0, 0], ["A", "B", "C"], t_window=10.0)
    assert set(per) == {"A", "B", "C"}
    d = json.loads(json.dumps(scheme.to_dict(), allow_nan=False))
    assert d["end_products"] == ["B", "C"]
    assert d["selectivity_in_limit"]["B"] == pytest.approx(k1 / (k1 + k2), rel=1e-14)
    assert d["relaxation_times"] == pytest.approx([1 / (k1 + k2)], rel=1e-14)
    # A decays to zero and is measured against the largest limit, B_inf = k1/(k1+k2):
    # A0 e^(-(k1+k2) t) = 0.01 B_inf (definition in the module docstring)
    t_ref = math.log(100 * (k1 + k2) / k1) / (k1 + k2)
    np.testing.assert_allclose(d["time_to_limit"], t_ref, rtol=1e-10, atol=0)


def test_defective_note_names_upstream_species_first():
    rt = an.relaxation_times(chain_matrix([0.3, 0.3]), names=["A", "B", "C"])
    assert "for both A and B" in rt.note


def test_the_reason_a_species_did_not_fall_within_the_scan_quotes_the_time_in_the_reader_unit():
    """A -> B with k = ln 2 / h: A's limit is 0, below half its start, so when the scan
    ended before the fall the sentence names the scanned span, shown in any time unit."""
    from kinetics.analysis.crossings import _never_reason
    from kinetics.analysis.problem import Problem
    from kinetics.analysis.results import Limit
    from kinetics.time_text import in_time_unit

    k = np.log(2) / 3600
    problem = Problem(np.array([[-k, 0.0], [k, 0.0]]), np.array([1.0, 0.0]), names=["A", "B"])
    limit = Limit(np.zeros(2), np.zeros(2, bool), ("transient", "end product"), (None,) * 2,
                  np.full(2, np.nan))  # fmt: skip
    reason = _never_reason(problem, 0, 0.5, limit, 1800.0)
    assert reason == "A did not fall to 50 % of its start value within the scanned 1800 s"
    assert in_time_unit(reason, "h") == (
        "A did not fall to 50 % of its start value within the scanned 0.5 h"
    )
