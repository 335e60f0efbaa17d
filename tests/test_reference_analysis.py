"""Derived quantities checked against published closed forms and reference libraries.

Each check value names its source in a comment.  Rate matrices are built directly
(column j = outflow of species j, K[i, j] = k for a step j -> i).
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from kinetics import analysis as an

from conftest import chain_matrix

MIN = 60.0  # s
HOUR = 3600.0  # s


def start(n, **at):
    c0 = np.zeros(n)
    for i, v in at.items():
        c0[int(i[1:])] = v
    return c0


# ---------------------------------------------------------------------------------------
# Consecutive first-order reactions A -> B -> C
# ---------------------------------------------------------------------------------------


def test_consecutive_tmax_and_bmax_textbook_values():
    # Consecutive first-order reactions (Atkins & de Paula, Physical Chemistry; any
    # physical chemistry textbook): t_max = ln(k1/k2)/(k1-k2),
    # B_max = A0 (k1/k2)^(k2/(k2-k1)); k1 = 0.1, k2 = 0.05 1/min -> 13.863 min, 0.5 A0.
    k1, k2 = 0.1 / MIN, 0.05 / MIN
    A0 = 2.0
    K = chain_matrix([k1, k2])
    (m,) = an.intermediate_maxima(K, [A0, 0, 0], 1)
    assert m.is_global
    t_closed = math.log(k1 / k2) / (k1 - k2)
    b_closed = A0 * (k1 / k2) ** (k2 / (k2 - k1))
    np.testing.assert_allclose(m.time, t_closed, rtol=1e-12, atol=0)
    np.testing.assert_allclose(m.height, b_closed, rtol=1e-12, atol=0)
    # the textbook's rounded numbers: 13.863 min and 0.5 A0 (same source)
    np.testing.assert_allclose(m.time / MIN, 13.863, rtol=5e-5, atol=0)
    np.testing.assert_allclose(m.height / A0, 0.5, rtol=1e-12, atol=0)


def test_consecutive_equal_constants_defective_case():
    # Equal constants (limit of the consecutive-reaction formulas, textbook result):
    # B(t) = A0 k t e^(-k t), t_max = 1/k, B_max = A0/e.
    k = 0.37
    K = chain_matrix([k, k])
    (m,) = an.intermediate_maxima(K, [1.0, 0, 0], 1)
    np.testing.assert_allclose(m.time, 1 / k, rtol=1e-12, atol=0)
    np.testing.assert_allclose(m.height, 1 / math.e, rtol=1e-12, atol=0)
    rt = an.relaxation_times(K, names=["A", "B", "C"])
    assert rt.defective
    assert "t*exp(-0.37 t)" in rt.note


def test_consecutive_nearly_equal_constants():
    # Consecutive reactions with k2 = k1 (1 + 1e-9): the closed form (Atkins & de Paula)
    # evaluated with mpmath at 50 digits, where its cancellation is harmless.
    mp.mp.dps = 50
    k1 = mp.mpf("0.2")
    k2 = k1 * (1 + mp.mpf("1e-9"))
    t_ref = mp.log(k1 / k2) / (k1 - k2)
    b_ref = (k1 / k2) ** (k2 / (k2 - k1))
    K = chain_matrix([float(k1), float(k2)])
    (m,) = an.intermediate_maxima(K, [1.0, 0, 0], 1)
    np.testing.assert_allclose(m.time, float(t_ref), rtol=1e-10, atol=0)
    np.testing.assert_allclose(m.height, float(b_ref), rtol=1e-12, atol=0)
    assert an.relaxation_times(K).nearly_defective


def test_maximum_between_points_of_a_coarse_grid():
    # A maximum between two points of an 11-point grid 0..100 min (grid points at 10 and
    # 20 min, the maximum at 13.8629 min) is found to 1e-9 relative; value from the
    # consecutive-reaction closed form (Atkins & de Paula).
    k1, k2 = 0.1 / MIN, 0.05 / MIN
    K = chain_matrix([k1, k2])
    grid = np.linspace(0, 100 * MIN, 11)
    t_closed = math.log(k1 / k2) / (k1 - k2)
    summary = an.summarise(K, [1.0, 0, 0], ["A", "B", "C"], t_window=grid[-1])
    np.testing.assert_allclose(summary["B"].t_max, t_closed, rtol=1e-9, atol=0)
    assert not summary["B"].t_max_beyond_window
    # reading the grid would give 10 min: the point of the check
    from kinetics.propagate import propagate

    on_grid = propagate(K, [1.0, 0, 0], grid)[:, 1]
    assert abs(grid[int(np.argmax(on_grid))] - t_closed) > 3 * MIN


# ---------------------------------------------------------------------------------------
# Reversible A <=> B
# ---------------------------------------------------------------------------------------


def test_reversible_relaxation_and_equilibrium():
    # Chemical relaxation (IUPAC Gold Book, "chemical relaxation"/"relaxation time"):
    # tau = 1/(kf + kr); equilibrium fraction of A = kr/(kf + kr).
    kf, kr = 3.0, 0.5
    K = np.array([[-kf, kr], [kf, -kr]])
    rt = an.relaxation_times(K)
    np.testing.assert_allclose(rt.times, [1 / (kf + kr)], rtol=1e-14, atol=0)
    assert rt.zero_modes == 1
    assert rt.periods.size == 0
    lim = an.long_time_limit(K, [1.0, 0.0])
    np.testing.assert_allclose(lim.values, [kr / (kf + kr), kf / (kf + kr)], rtol=1e-15, atol=0)
    assert lim.kind == ("equilibrium", "equilibrium")


def test_reversible_half_life_and_none_when_equilibrium_above_half():
    # Integrated rate law of opposing first-order reactions (Atkins & de Paula):
    # A(t) = A0 (kr + kf e^(-(kf+kr) t))/(kf + kr), so A = A0/2 at
    # t = ln(2 kf/(kf - kr))/(kf + kr) when kf > kr, never when kf <= kr.
    kf, kr = 3.0, 0.5
    K = np.array([[-kf, kr], [kf, -kr]])
    t_closed = math.log(2 * kf / (kf - kr)) / (kf + kr)
    np.testing.assert_allclose(an.half_life(K, [1.0, 0.0], 0), t_closed, rtol=1e-10, atol=0)
    K2 = np.array([[-kr, kf], [kr, -kf]])  # equilibrium fraction of A = 6/7 > 1/2
    res = an.half_life_detail(K2, [1.0, 0.0], 0)
    assert res.time is None
    assert "85.7143 %" in res.reason
    assert "equilibrium" in res.reason


def test_reversible_time_to_limit_definition():
    # From the same integrated rate law (Atkins & de Paula) and the definition in the
    # module docstring: |A - A_inf| = A0 kf/(kf+kr) e^(-lambda t) <= 0.01 A_inf gives
    # t_A = ln(100 kf/kr)/lambda; B: t_B = ln(100)/lambda; the scheme: the larger.
    kf, kr = 3.0, 0.5
    lam = kf + kr
    K = np.array([[-kf, kr], [kf, -kr]])
    res = an.time_to_limit(K, [1.0, 0.0])
    np.testing.assert_allclose(
        res.per_species, [math.log(100 * kf / kr) / lam, math.log(100) / lam], rtol=1e-10, atol=0
    )
    np.testing.assert_allclose(res.time, math.log(100 * kf / kr) / lam, rtol=1e-10, atol=0)


def test_closed_reversible_network_conserved_projection_against_mpmath():
    # A <=> B <=> C, A <=> C (closed, not detailed-balanced): the limit is the null vector
    # of K scaled to the conserved total; reference: mpmath lu_solve at 50 digits of
    # [K with one row replaced by ones] x = [0, .., total] (a reference library).
    k = {"AB": 2.0, "BA": 0.3, "BC": 5.0, "CB": 0.7, "AC": 0.01, "CA": 4.0}
    K = np.zeros((3, 3))
    idx = {"A": 0, "B": 1, "C": 2}
    for key, v in k.items():
        j, i = idx[key[0]], idx[key[1]]
        K[j, j] -= v
        K[i, j] += v
    c0 = np.array([0.2, 1.1, 0.05])
    lim = an.long_time_limit(K, c0)
    mp.mp.dps = 50
    M = mp.matrix(K.tolist())
    for j in range(3):
        M[2, j] = 1
    x = mp.lu_solve(M, mp.matrix([0, 0, float(c0.sum())]))
    np.testing.assert_allclose(lim.values, [float(v) for v in x], rtol=1e-14, atol=0)


# ---------------------------------------------------------------------------------------
# Parallel reactions, shelf life, DT50/DT90
# ---------------------------------------------------------------------------------------


def test_parallel_ratio_at_every_time_and_half_life():
    # Parallel first-order reactions (Atkins & de Paula): [B]/[C] = k1/k2 at every time,
    # t_1/2(A) = ln 2/(k1 + k2).
    k1, k2 = 0.8, 0.05
    K = np.array([[-(k1 + k2), 0, 0], [k1, 0, 0], [k2, 0, 0]])
    c0 = [1.0, 0, 0]
    np.testing.assert_allclose(an.half_life(K, c0, 0), math.log(2) / (k1 + k2), rtol=1e-10, atol=0)
    for window in (1e-3, 0.7, 5.0, 300.0):
        ys = an.yields_and_selectivity(K, c0, t_window=window)
        assert ys.end_products == (1, 2)
        np.testing.assert_allclose(ys.ratio(1, 2, "window_end"), k1 / k2, rtol=1e-12, atol=0)
        np.testing.assert_allclose(ys.selectivity_at_window_end, [k1, k2] / np.float64(k1 + k2),
                                   rtol=1e-12, atol=0)  # fmt: skip
    np.testing.assert_allclose(ys.ratio(1, 2, "limit"), k1 / k2, rtol=1e-14, atol=0)


def test_shelf_life_t90_and_dt90():
    # Shelf life: time to 90 % remaining = ln(10/9)/k ~= 0.105/k (pharmaceutics texts, e.g.
    # Connors, Amidon & Stella, Chemical Stability of Pharmaceuticals); DT90 (90 % gone)
    # = ln(10)/k (FOCUS 2006 degradation kinetics guidance).
    k = 2.5e-7  # 1/s
    K = np.array([[-k, 0], [k, 0]])
    t90 = an.time_to_fraction(K, [1.0, 0.0], 0, 0.9)
    np.testing.assert_allclose(t90, math.log(10 / 9) / k, rtol=1e-10, atol=0)
    np.testing.assert_allclose(t90 * k, 0.105, rtol=4e-3, atol=0)  # the quoted 0.105/k
    dt90 = an.time_to_fraction(K, [1.0, 0.0], 0, 0.1)
    np.testing.assert_allclose(dt90, math.log(10) / k, rtol=1e-10, atol=0)
    s = an.summarise(K, [1.0, 0.0], ["drug", "degradant"])["drug"]
    np.testing.assert_allclose(s.time_to_90_percent_remaining, math.log(10 / 9) / k, rtol=1e-10)
    np.testing.assert_allclose(s.time_to_10_percent_remaining, math.log(10) / k, rtol=1e-10)
    # first-order lifetime 1/k and half-life ln2/k (any textbook)
    np.testing.assert_allclose(s.lifetime, 1 / k, rtol=1e-15, atol=0)
    np.testing.assert_allclose(s.half_life, math.log(2) / k, rtol=1e-10, atol=0)


# ---------------------------------------------------------------------------------------
# Radioactive parent-daughter, oral one-compartment model (Bateman function)
# ---------------------------------------------------------------------------------------


def test_parent_daughter_with_branching():
    # Parent-daughter decay: t_max = ln(ld/lp)/(ld - lp) (Bateman 1910).  Half-lives
    # 65.98 h (parent) and 6.007 h (daughter) from evaluated nuclear data tables give about
    # 22.85 h ("about 23 h" is common practice).  Branching ratio 0.876 to the daughter
    # (from memory; t_max does not depend on it).
    lp, ld = math.log(2) / (65.98 * HOUR), math.log(2) / (6.007 * HOUR)
    b = 0.876
    K = np.array([[-lp, 0, 0, 0], [b * lp, -ld, 0, 0], [(1 - b) * lp, 0, 0, 0], [0, ld, 0, 0]])
    (m,) = an.intermediate_maxima(K, [1.0, 0, 0, 0], 1)
    np.testing.assert_allclose(m.time, math.log(ld / lp) / (ld - lp), rtol=1e-12, atol=0)
    np.testing.assert_allclose(m.time / HOUR, 22.85, rtol=3e-4, atol=0)


def test_oral_one_compartment_bateman_function():
    # Oral one-compartment model (Bateman function; Gibaldi & Perrier, Pharmacokinetics):
    # t_max = ln(ka/ke)/(ka - ke); ka = 1, ke = 0.1 1/h -> 2.558 h and a maximum of 0.7743
    # of the dose; AUC to infinity of the central compartment = dose/ke.
    ka, ke = 1.0 / HOUR, 0.1 / HOUR
    K = np.array([[-ka, 0, 0], [ka, -ke, 0], [0, ke, 0]])
    dose = 1.0
    s = an.summarise(K, [dose, 0, 0], ["gut", "body", "out"], t_window=24 * HOUR)
    body = s["body"]
    np.testing.assert_allclose(body.t_max, math.log(ka / ke) / (ka - ke), rtol=1e-12, atol=0)
    np.testing.assert_allclose(body.t_max / HOUR, 2.558, rtol=2e-4, atol=0)
    np.testing.assert_allclose(body.c_max / dose, 0.7743, rtol=1e-4, atol=0)
    np.testing.assert_allclose(body.yield_at_max, (ka / ke) ** (ke / (ke - ka)), rtol=1e-12)
    np.testing.assert_allclose(body.area_to_infinity, dose / ke, rtol=1e-13, atol=0)
    # gut: AUC = dose/ka and mean residence time 1/ka (Yamaoka, Nakagawa & Uno 1978)
    np.testing.assert_allclose(s["gut"].area_to_infinity, dose / ka, rtol=1e-14, atol=0)
    np.testing.assert_allclose(s["gut"].mean_residence_time, 1 / ka, rtol=1e-14, atol=0)


# ---------------------------------------------------------------------------------------
# Areas, feeds, steady states
# ---------------------------------------------------------------------------------------


def test_areas_to_end_closed_form():
    # A -> B: int_0^T A = A0 (1 - e^(-kT))/k and int_0^T B = A0 T - int_0^T A (integral of
    # the first-order solution, any calculus text); AUC_inf(A) = A0/k; MRT(A) = 1/k
    # (Yamaoka, Nakagawa & Uno 1978).
    k, A0 = 0.02, 3.0
    K = np.array([[-k, 0], [k, 0]])
    T = np.array([0.0, 1.0, 50.0, 1e4])
    ar = an.areas(K, [A0, 0], T)
    a_ref = A0 * -np.expm1(-k * T) / k
    np.testing.assert_allclose(ar.to_end[:, 0], a_ref, rtol=1e-13, atol=0)
    np.testing.assert_allclose(ar.to_end[:, 1], A0 * T - a_ref, rtol=1e-12, atol=1e-300)
    np.testing.assert_allclose(ar.to_infinity, [A0 / k, np.inf], rtol=1e-15, atol=0)
    np.testing.assert_allclose(an.mean_residence_time(K, [A0, 0]), [1 / k, np.nan], rtol=1e-15)


def test_chain_area_to_infinity_is_a0_over_k_for_every_member():
    # A -> B -> C -> D: every intermediate carries the whole material once, so
    # AUC_inf(X) = A0/k_X (mass balance of the integrated chain; Bateman 1910 integrated).
    k = (0.3, 2.0, 0.07)
    K = chain_matrix(k)
    ar = an.areas(K, [1.0, 0, 0, 0], 1.0)
    np.testing.assert_allclose(ar.to_infinity[:3], [1 / x for x in k], rtol=1e-14, atol=0)
    assert np.isinf(ar.to_infinity[3])


def test_feed_steady_state_and_linear_growth():
    # Constant-rate input with first-order elimination (Gibaldi & Perrier,
    # Pharmacokinetics, infusion): A_ss = f/k, and the product without outlet grows at the
    # feed rate f; A(t) = (f/k)(1 - e^(-kt)), so A reaches half its steady state at ln2/k.
    k, f = 0.4, 1.5
    K = np.array([[-k, 0], [k, 0]])
    lim = an.long_time_limit(K, [0, 0], feed=[f, 0], names=["A", "B"])
    np.testing.assert_allclose(lim.values[0], f / k, rtol=1e-15, atol=0)
    assert lim.unbounded.tolist() == [False, True]
    assert lim.growth == (None, "linear")
    np.testing.assert_allclose(lim.growth_rate[1], f, rtol=1e-15, atol=0)
    assert "B grows without bound" in lim.notes[0]
    ar = an.areas(K, [0, 0], [10.0], feed=[f, 0])
    a_ref = f / k * (10.0 - -np.expm1(-k * 10.0) / k)
    np.testing.assert_allclose(ar.to_end[0, 0], a_ref, rtol=1e-13, atol=0)


# ---------------------------------------------------------------------------------------
# Several local maxima from a cycle with a leak, against mpmath
# ---------------------------------------------------------------------------------------


def _mp_maxima(K, c0, i, t_end=30.0, step=0.05):
    """All local maxima of c_i from the eigen-decomposition in mpmath at 40 digits
    (a reference library); scanned every `step` and refined with findroot."""
    mp.mp.dps = 40
    E, R = mp.eig(mp.matrix(K.tolist()))
    a = mp.inverse(R) * mp.matrix(list(c0))
    n = len(E)

    def c(t):
        return mp.re(sum(R[i, j] * a[j] * mp.exp(E[j] * t) for j in range(n)))

    def d(t):
        return mp.re(sum(R[i, j] * a[j] * E[j] * mp.exp(E[j] * t) for j in range(n)))

    ts = [mp.mpf(step) * q for q in range(1, int(t_end / step))]
    ds = [d(t) for t in ts]
    out = []
    for q in range(len(ts) - 1):
        if ds[q] > 0 >= ds[q + 1]:
            r = mp.findroot(d, (ts[q], ts[q + 1]), solver="anderson")
            out.append((float(r), float(c(r))))
    return out


def test_cycle_with_leak_lists_every_local_maximum():
    # A -> B -> C -> A (k = 1 1/s) with a leak C -> D (1e-6 1/s): the complex eigenvalues
    # -1.5 +- 0.866i give damped oscillations, so each cycle member has two local maxima
    # before the slow leak takes over.  Reference: mpmath eigen-decomposition at 40 digits.
    leak = 1e-6
    K = np.array([[-1, 0, 1, 0], [1, -1, 0, 0], [0, 1, -1 - leak, 0], [0, 0, leak, 0]])
    c0 = [1.0, 0, 0, 0]
    for i in range(3):
        ref = _mp_maxima(K, c0, i)
        got = an.intermediate_maxima(K, c0, i)
        assert len(ref) == 2
        assert len(got) == len(ref)
        np.testing.assert_allclose([m.time for m in got], [r[0] for r in ref], rtol=1e-9, atol=0)
        np.testing.assert_allclose([m.height for m in got], [r[1] for r in ref], rtol=1e-13, atol=0)
    rt = an.relaxation_times(K)
    np.testing.assert_allclose(rt.periods, [2 * math.pi / (math.sqrt(3) / 2)], rtol=1e-6)


@pytest.mark.parametrize("species", [1, 2])
def test_chain_with_mpmath_reference_for_maxima(species):
    # A 4-step chain with distinct constants; the maxima of B and C from the mpmath
    # eigen-decomposition at 40 digits (a reference library).
    K = chain_matrix([1.3, 0.21, 4.0, 0.05])
    c0 = [1.0, 0, 0, 0, 0]
    ref = _mp_maxima(K, c0, species, t_end=60.0, step=0.05)
    got = an.intermediate_maxima(K, c0, species)
    assert len(got) == len(ref) == 1
    np.testing.assert_allclose(got[0].time, ref[0][0], rtol=1e-12, atol=0)
    np.testing.assert_allclose(got[0].height, ref[0][1], rtol=1e-13, atol=0)
