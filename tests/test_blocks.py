"""The block-triangular route for large sparse schemes (kinetics._blocks).

References: python-flint ball arithmetic (``arb_mat.exp`` with the rate matrix built
exactly from the constants, stored in tests/data/block_references.json by
tests/data/make_block_references.py), Bateman's closed form evaluated in mpmath,
the dense double-double engine (itself checked against mpmath in
test_reference_expm.py) and scipy's expm (Al-Mohy & Higham 2009).
"""

from __future__ import annotations

import itertools
import json
import math
import pathlib
from fractions import Fraction

import mpmath
import numpy as np
import pytest
import scipy.linalg
import scipy.sparse
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from kinetics.engine import block_kernels as _block_kernels
from kinetics.engine.block_exp import components
from kinetics.engine.blocks import block_order, propagate_blocks, route_costs
from kinetics.propagate import TINY, propagate_batch, propagate_certified

DATA = pathlib.Path(__file__).parent / "data" / "block_references.json"


def rate_matrix(n, steps):
    """K (CSR: every entry a sum of constants rounded once by math.fsum) and K_low (the
    exact sums minus K's entries), so that K + K_low is the matrix of the constants."""
    sums: dict[tuple[int, int], list[float]] = {}
    for src, dst, k in steps:
        sums.setdefault((dst, src), []).append(k)
        sums.setdefault((src, src), []).append(-k)
    rows, cols, vals, lows = [], [], [], []
    for (i, j), ks in sums.items():
        rounded = math.fsum(ks)
        rows.append(i)
        cols.append(j)
        vals.append(rounded)
        lows.append(float(sum(Fraction(k) for k in ks) - Fraction(rounded)))
    K = scipy.sparse.csr_array((vals, (rows, cols)), shape=(n, n))
    K_low = scipy.sparse.csr_array((lows, (rows, cols)), shape=(n, n))
    K_low.eliminate_zeros()
    return K, K_low


def _compose(a, b):
    return (1 + a) * (1 + b) - 1 + 2.0**-52  # the comparison itself (relative error of err)


def worst_relative(X, ref, floor=1e-300):
    big = ref > floor
    return float((np.abs(X[big] - ref[big]) / ref[big]).max(initial=0.0))


def bateman_mp(ks, t, upto, dps=700):
    """Bateman (1910): member n of a chain, N_n = prod_{i<n} k_i sum_i e^{-k_i t} /
    prod_{j != i} (k_j - k_i), in mpmath (the constants are close, so the sum
    cancels by hundreds of digits; 700 digits leave more than 250)."""
    with mpmath.workdps(dps):
        k = [mpmath.mpf(float(x)) for x in ks[:upto]]
        T = mpmath.mpf(float(t))
        e = [mpmath.exp(-x * T) for x in k]
        out, prod = [], mpmath.mpf(1)
        for m in range(1, upto + 1):
            s = mpmath.mpf(0)
            for i in range(m):
                den = mpmath.mpf(1)
                for j in range(m):
                    if j != i:
                        den *= k[j] - k[i]
                s += e[i] / den
            out.append(prod * s)
            prod *= k[m - 1]
        return out


# ---------------------------------------------------------------- ball arithmetic


@pytest.mark.parametrize(
    "case",
    [0, pytest.param(1, marks=pytest.mark.slow)],  # the larger one is slow
    ids=["300 species", "420 species"],
)
def test_trace_species_against_ball_arithmetic(case):
    data = json.loads(DATA.read_text())["cases"][case]
    n = data["n"]
    K, K_low = rate_matrix(n, [(a, b, float(k)) for a, b, k in data["steps"]])
    c0 = np.zeros(n)
    for i, v in data["c0"].items():
        c0[int(i)] = float(Fraction(v))
    times = list(data["references"])
    X, bound = propagate_blocks(K, c0, np.array([float(t) for t in times]), None, K_low=K_low)
    assert np.all(X >= 0)
    for k, t in enumerate(times):
        # reference: python-flint arb_mat.exp, 1400 bits, exact diagonal (ball midpoints)
        mids = [mpmath.mpf(mid) for mid, _ in data["references"][t]]
        rads = [mpmath.mpf(rad) for _, rad in data["references"][t]]
        trace = sum(1 for v in mids if mpmath.mpf("1e-300") < v < mpmath.mpf("1e-200"))
        assert trace > (30 if t == "0.001" else -1)  # trace species really are present
        worst = covered = 0.0
        for x, mid, rad in zip(X[k], mids, rads, strict=True):
            if mid > mpmath.mpf("1e-300"):
                assert rad <= mid * mpmath.mpf("1e-30")  # the reference is sharp
                err = float(abs(mpmath.mpf(float(x)) - mid) / mid)
                worst = max(worst, err)
                if mid > TINY:
                    covered = max(covered, err)
        assert worst <= 1e-12
        assert covered <= bound[k]


# ---------------------------------------------------------------- closed forms


@pytest.mark.slow  # 2,000 species, 700-digit references
def test_chain_of_2000_against_bateman():
    n = 2000
    ks = np.logspace(-4, 2, n)
    K = scipy.sparse.csr_array(
        (
            np.r_[-ks, ks[:-1]],
            (np.r_[np.arange(n), np.arange(1, n)], np.r_[np.arange(n), np.arange(n - 1)]),
        ),
        shape=(n, n),
    )
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0.0, 1000.0, 101)
    out = propagate_certified(K, c0, t)
    assert out.precision == "blocks"
    assert np.all(out.concentrations >= 0)
    for j in (1, 10, 100):
        x = out.concentrations[j]
        upto = int(np.flatnonzero(x > 1e-300).max()) + 3  # every member above 1e-300
        ref = np.array([float(v) for v in bateman_mp(ks, t[j], upto)])  # Bateman 1910
        assert ref[-1] < 1e-300
        err = np.abs(x[:upto] - ref) / np.where(ref > 0, ref, 1.0)
        assert err[ref > 1e-300].max() <= 1e-13
        assert err[ref > TINY].max() <= out.error_bound[j]


def test_outflow_low_parts_make_the_result_exact_for_the_constants():
    # A -> B (0.6 1/s) and A -> S (0.3 1/s): the double 0.6 + 0.3 misses the exact sum
    # by 5.6e-17 1/s, which over 760 s shifts A by 4e-14 relative
    n = 260
    ks = np.logspace(-3, 0, n - 2)
    steps = [(0, 1, 0.6), (0, n - 1, 0.3)] + [(i, i + 1, ks[i]) for i in range(1, n - 2)]
    K, K_low = rate_matrix(n, steps)
    assert K_low.nnz
    assert K_low[0, 0] != 0
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.array([300.0, 600.0, 760.0])
    exact_X, bound = propagate_blocks(K, c0, t, None, K_low=K_low)
    rounded_X, _ = propagate_blocks(K, c0, t, None)
    with mpmath.workdps(60):
        q = mpmath.mpf(0.6) + mpmath.mpf(0.3)  # exact outflow of A
        qb = mpmath.mpf(float(ks[1]))
        for k, tk in enumerate(t):
            # closed forms: A = exp(-q t); B = 0.6/(q_B - q)(exp(-q t) - exp(-q_B t))
            a = mpmath.exp(-q * tk)
            b = mpmath.mpf(0.6) / (qb - q) * (mpmath.exp(-q * tk) - mpmath.exp(-qb * tk))
            for got, ref in ((exact_X[k, 0], a), (exact_X[k, 1], b)):
                assert float(abs(mpmath.mpf(float(got)) - ref) / ref) <= 2e-15
            lost = float(abs(mpmath.mpf(float(rounded_X[k, 0])) - a) / a)
            assert lost >= 1e-14 * tk / 760  # without K_low the rounded sum shows
    assert np.all(bound[:2] <= 1e-9)


def decay_network(n, reach, seed):
    """Invented: each species decays to 1-3 of the next ``reach`` (10^U(-4, 2) 1/s)."""
    rng = np.random.default_rng(seed)
    steps = []
    for j in range(n - 1):
        ahead = np.arange(j + 1, min(n, j + reach + 1))
        for i in rng.choice(ahead, size=min(int(rng.integers(1, 4)), ahead.size), replace=False):
            steps.append((j, int(i), float(10.0 ** rng.uniform(-4, 2))))
    return steps


def test_decay_network_against_dense_engine():
    n = 240
    K, _ = rate_matrix(n, decay_network(n, 50, 3))
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0.0, 1000.0, 21)
    X, bound = propagate_blocks(K, c0, t, None)
    # reference: the dense double-double engine (checked against mpmath elsewhere)
    ref = propagate_batch(K.toarray()[None], c0, t, precision="double-double")[0]
    assert worst_relative(X, ref) <= 1e-13
    for k in range(1, t.size):
        assert worst_relative(X[k : k + 1], ref[k : k + 1], TINY) <= bound[k]
    assert np.array_equal(X > 0, ref > 0)


# ---------------------------------------------------------------- structure


def test_block_order_is_block_lower_triangular():
    rng = np.random.default_rng(4)
    n = 40
    K = np.zeros((n, n))
    for i in range(n - 1):
        K[i + 1, i] = 1.0
    K[10, 14] = K[25, 26] = K[30, 38] = 0.5  # loops 10..14, 25..26, 30..38
    perm = rng.permutation(n)
    Kp = K[perm][:, perm]
    order, blocks = block_order(scipy.sparse.csr_array(Kp))
    P = Kp[order][:, order]
    starts = np.cumsum([0] + [len(b) for b in blocks])
    for a, b in itertools.pairwise(starts):
        assert not P[a:b, b:].any()  # nothing flows upstream of a block
    assert sorted(len(b) for b in blocks)[-3:] == [2, 5, 9]


@settings(max_examples=40, deadline=None)
@given(st.integers(2, 40), st.integers(0, 2**32 - 1))
def test_components_come_upstream_first(n, seed):
    rng = np.random.default_rng(seed)
    src, dst = rng.integers(0, n, 2 * n), rng.integers(0, n, 2 * n)
    src, dst = src[src != dst], dst[src != dst]
    members, (a, b) = components(src, dst, n)
    rank = np.empty(n, dtype=int)
    for r, m in enumerate(members):
        rank[m] = r
    assert sorted(np.concatenate(members).tolist()) == list(range(n))
    assert np.all(rank[src] <= rank[dst])  # every step flows downstream or stays in a block
    assert np.all(a < b)
    assert np.all(np.diff(a) >= 0)


def test_unreachable_species_stay_exactly_zero_and_time_zero_is_c0():
    n = 300
    steps = [(i, i + 1, 0.5) for i in range(149)] + [(i, i + 1, 2.0) for i in range(150, n - 1)]
    K, _ = rate_matrix(n, steps)
    c0 = np.zeros(n)
    c0[0] = 0.75
    t = np.array([0.0, 0.0, 1.0, 2.5, 2.5, 40.0])
    X, bound = propagate_blocks(K, c0, t, None)
    assert np.all(X[:, 150:] == 0.0)
    assert np.array_equal(X[0], c0)
    assert np.array_equal(X[1], c0)
    assert np.array_equal(X[3], X[4])
    assert bound[0] == 0.0
    # mass stays in the first sub-chain (conservation, common practice, no source)
    np.testing.assert_allclose(X[:, :150].sum(axis=1), 0.75, rtol=1e-14)


def test_feed_and_irregular_grid_against_dense_engine():
    rng = np.random.default_rng(8)
    n = 220
    steps = decay_network(n, 8, 9)
    steps += [(i + 1, i, float(10.0 ** rng.uniform(-2, 0))) for i in range(0, n - 1, 17)]
    K, _ = rate_matrix(n, steps)
    c0 = np.zeros(n)
    c0[[0, 5]] = [1.0, 0.5]
    feed = np.zeros(n)
    feed[3] = 0.01
    t = np.array([0.0, 0.3, 1.0, 1.7, 10.0, 250.0])
    X, bound = propagate_blocks(K, c0, t, feed)
    ref = propagate_batch(K.toarray()[None], c0, t, feed[None], precision="double-double")[0]
    assert worst_relative(X, ref) <= 1e-13
    for k in range(1, t.size):
        assert worst_relative(X[k : k + 1], ref[k : k + 1], TINY) <= bound[k]


def test_column_taylor_matches_scipy_expm():
    rng = np.random.default_rng(2)
    n = 30
    Y = np.tril(rng.random((n, n)) * (rng.random((n, n)) < 0.2), -1) + np.diag(rng.random(n))
    Yc = scipy.sparse.csc_array(Y)
    out = np.empty((n, n))
    V, W = np.zeros_like(out), np.zeros_like(out)
    used = _block_kernels.column_taylor(
        Yc.indptr.astype(np.int64), Yc.indices.astype(np.int64), Yc.data, 0, 60, 1.0, out, V, W,
        np.empty(n, dtype=np.bool_),
    )  # fmt: skip
    assert used <= 60
    assert not V.any()
    assert not W.any()
    ref = scipy.linalg.expm(Y)  # Al-Mohy & Higham (2009), scipy
    big = ref > 1e-8
    np.testing.assert_allclose(out[big], ref[big], rtol=1e-13)
    assert np.all(out[~big] >= 0)


def test_route_follows_cost():
    t = np.linspace(0.0, 100.0, 101)
    small = scipy.sparse.csr_array(np.array([[-1.0, 0.0], [1.0, 0.0]]))
    assert route_costs(small, t)["dense"] < route_costs(small, t)["blocks"]
    n = 2000
    chain = scipy.sparse.diags_array([-np.ones(n), np.ones(n - 1)], offsets=[0, -1]).tocsr()
    cost = route_costs(chain, t)
    assert cost["blocks"] < cost["dense"] / 100
    # a dense strongly connected scheme: the dense engine (one block either way)
    rng = np.random.default_rng(0)
    full = rng.random((150, 150))
    np.fill_diagonal(full, 0.0)
    full -= np.diag(full.sum(axis=0))
    cost = route_costs(scipy.sparse.csr_array(full), t)
    assert cost["dense"] < cost["blocks"]


# ---------------------------------------------------------------- invariants


@st.composite
def forward_networks(draw):
    n = draw(st.integers(3, 40))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    steps = []
    for i in range(n - 1):
        for j in rng.choice(np.arange(i + 1, min(n, i + 5)), size=1 + int(rng.random() < 0.4)):
            steps.append((i, int(j), float(10.0 ** rng.uniform(-3, 3))))
        if rng.random() < 0.2:
            steps.append((i + 1, i, float(10.0 ** rng.uniform(-3, 3))))
    c0 = np.where(rng.random(n) < 0.3, rng.random(n), 0.0)
    c0[0] = 1.0
    t = np.sort(10.0 ** rng.uniform(-4, 3, 4))
    return n, steps, c0, t


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(forward_networks())
def test_block_route_agrees_with_dense_engine_and_bound_holds(net):
    n, steps, c0, t = net
    K, K_low = rate_matrix(n, steps)
    X, bound = propagate_blocks(K, c0, t, None)
    assert np.all(X >= 0)
    # reference: the dense double-double engine on the same double matrix, with its bound
    ref, ref_bound = propagate_batch(K.toarray()[None], c0, t, precision="double-double",
                                     return_bound=True)  # fmt: skip
    ref, ref_bound = ref[0], ref_bound[0]
    assert worst_relative(X, ref) <= 1e-13
    for k in range(t.size):
        err = worst_relative(X[k : k + 1], ref[k : k + 1], TINY)
        assert err <= _compose(bound[k], ref_bound[k])
    # closed scheme (nothing leaves): with the exact outflows (K + K_low) the mass is
    # conserved (common practice, no source); K alone leaks by about u q t
    exact, exact_bound = propagate_blocks(K, c0, t, None, K_low=K_low)
    total = exact.sum(axis=1)
    assert np.all(np.abs(total - c0.sum()) <= (exact_bound + 2e-16 * n) * c0.sum())


def test_rounded_grid_times_are_covered_by_the_bound():
    # linspace(0, 3, 31): most grid times are not exactly k * dt; with rates up to 1e4 1/s
    # the difference moves fast species by a few 1e-12 relative, and the bound must say so
    n = 250
    rng = np.random.default_rng(5)
    steps = [(i, i + 1, float(10.0 ** rng.uniform(-1, 4))) for i in range(n - 1)]
    steps += [(i, i + 3, float(10.0 ** rng.uniform(-1, 1))) for i in range(0, n - 3, 7)]
    K, _ = rate_matrix(n, steps)
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0.0, 3.0, 31)
    X, bound = propagate_blocks(K, c0, t, None)
    for k in (7, 13, 29):
        # reference: the block route with the exact time as a single step (no grid rounding)
        single, single_bound = propagate_blocks(K, c0, t[k : k + 1], None)
        err = worst_relative(X[k : k + 1], single, TINY)
        assert err <= _compose(bound[k], single_bound[0])


def test_feed_low_parts_are_honoured_and_bad_low_parts_refused():
    # two feeds of 0.1 and 0.2 mol/L/s into the first member: their exact sum is no
    # double; the low part carries the rest
    n = 230
    K, _ = rate_matrix(n, [(i, i + 1, 0.5) for i in range(n - 1)])
    feed = np.zeros(n)
    exact = Fraction(0.1) + Fraction(0.2)
    feed[0] = float(exact)
    feed_low = np.zeros(n)
    feed_low[0] = float(exact - Fraction(feed[0]))
    t = np.array([0.0, 2.0, 40.0])
    X, bound = propagate_blocks(K, np.zeros(n), t, feed, feed_low=feed_low)
    with mpmath.workdps(50):
        for k, tk in enumerate(t[1:], start=1):
            # closed form of a fed first member: A = f (1 - exp(-k t)) / k
            ref = mpmath.mpf(exact.numerator) / exact.denominator * -mpmath.expm1(-0.5 * tk) / 0.5
            assert float(abs(mpmath.mpf(float(X[k, 0])) - ref) / ref) <= max(bound[k], 2e-16)
    from kinetics.errors import ConcentrationError, RateMatrixError

    with pytest.raises(RateMatrixError) as info:
        propagate_blocks(K, np.ones(n), t, None, K_low=scipy.sparse.csr_array(np.eye(3)))
    assert str(info.value) == "K_low has shape (3, 3); it must have shape (230, 230)"
    with pytest.raises(RateMatrixError) as info:
        propagate_blocks(K, np.ones(n), t, None, K_low=scipy.sparse.diags_array(np.full(n, np.nan)))
    assert str(info.value) == "K_low contains inf or nan"
    with pytest.raises(RateMatrixError) as info:
        propagate_blocks(K, np.ones(n), t, None, K_low=[["x"]])
    assert str(info.value) == "K_low is not a numeric array"
    with pytest.raises(ConcentrationError) as info:
        propagate_blocks(K, np.ones(n), t, feed, feed_low=np.ones(2))
    assert str(info.value) == "feed_low has shape (2,); it must have shape (230,)"


def test_block_sizes_agree_for_dense_and_sparse_and_do_not_touch_the_input():
    """The strongly connected blocks of a chain with one reversible pair (closed form:
    one block of two species with four nonzeros); a sparse input with a duplicate entry
    is left as it was given."""
    import scipy.sparse

    from kinetics.engine.blocks import block_sizes

    K = np.array([[-1.0, 0, 0, 0], [1.0, -2.0, 3.0, 0], [0, 2.0, -3.0, 0], [0, 0, 0, 0]])
    b, z, nnz = block_sizes(K)
    assert (b.tolist(), z.tolist(), nnz) == ([2.0], [4.0], 6.0)
    # the same pattern as compressed rows with species 1's inflow from 0 stored twice
    data = np.array([-1.0, 0.5, 0.5, -2.0, 3.0, 2.0, -3.0])
    indices = np.array([0, 0, 0, 1, 2, 1, 2])
    indptr = np.array([0, 1, 5, 7, 7])
    S = scipy.sparse.csr_array((data, indices, indptr), shape=(4, 4))
    assert block_sizes(S)[0].tolist() == [2.0]
    assert S.indices.tolist() == indices.tolist()
    assert S.data.tolist() == data.tolist()
