"""Propagation on time grids, feeds, batches and large schemes."""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg
import scipy.sparse
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from kinetics.errors import (
    ConcentrationError,
    GrowthError,
    RateMatrixError,
    SettingError,
    TimesError,
)
from kinetics.propagate import (
    expm_nonnegative,
    expm_nonnegative_certified,
    propagate,
    propagate_batch,
    propagate_certified,
)

from conftest import bateman_chain, chain_matrix

# ---------------------------------------------------------------- closed forms


def test_bateman_well_separated_chain():
    ks = [1.0, 0.3, 0.05, 0.01]
    K = chain_matrix(ks)
    t = np.linspace(0, 50, 11)
    c = propagate(K, [2.0, 0, 0, 0, 0], t)
    for j, tj in enumerate(t):
        # reference: Bateman 1910 closed form (well-separated constants, no cancellation)
        ref = bateman_chain(ks, 2.0, tj)
        np.testing.assert_allclose(c[j, :4], ref, rtol=1e-13, atol=0)
    # the stable end product takes the rest of the mass (conservation)
    np.testing.assert_allclose(c[:, :].sum(axis=1), 2.0, rtol=1e-14, atol=0)


@pytest.mark.parametrize("t", [0.01, 1.0, 10.0, 40.0])
def test_equal_constants_limit(t):
    k = 0.7
    K = chain_matrix([k] * 6)
    c = propagate(K, [1.5, 0, 0, 0, 0, 0, 0], [t])[0]
    for n in range(6):
        # reference: A0 (kt)^n e^{-kt} / n!, equal-constant chain (textbook result)
        ref = 1.5 * (k * t) ** n * math.exp(-k * t) / math.factorial(n)
        np.testing.assert_allclose(c[n], ref, rtol=1e-13, atol=0)


def test_feed_closed_form():
    # A fed at f [conc/s], A -> B with k: A(t) = c0 e^{-kt} + f/k (1 - e^{-kt});
    # B(t) = B0 + f t + c0 - A(t)  (closed form of dA/dt = f - kA, common practice, no source)
    k, f, c0 = 0.2, 0.05, 1.0
    K = chain_matrix([k])
    t = np.array([0.0, 0.1, 1.0, 7.5, 100.0])
    c = propagate(K, [c0, 0.0], t, feed=[f, 0.0])
    A = c0 * np.exp(-k * t) + f / k * -np.expm1(-k * t)
    np.testing.assert_allclose(c[:, 0], A, rtol=1e-14, atol=0)
    np.testing.assert_allclose(c[:, 1], f * t + c0 - A, rtol=1e-13, atol=1e-300)


def test_against_radau_reversible_branched():
    # A <-> B, A -> C, B -> D <-> E, C -> E
    K = np.zeros((5, 5))
    for src, dst, k in [(0, 1, 0.8), (1, 0, 0.3), (0, 2, 0.2), (1, 3, 0.5), (3, 4, 0.4),
                        (4, 3, 0.1), (2, 4, 0.05)]:  # fmt: skip
        K[dst, src] += k
        K[src, src] -= k
    c0 = np.array([1.0, 0.2, 0.0, 0.0, 0.0])
    t = np.linspace(0, 30, 61)
    c = propagate(K, c0, t)
    # reference: scipy solve_ivp, Radau, rtol 1e-12 (independent ODE integrator)
    sol = solve_ivp(lambda _t, y: K @ y, (0, 30), c0, method="Radau", t_eval=t,
                    rtol=1e-12, atol=1e-15, jac=lambda _t, _y: K)  # fmt: skip
    np.testing.assert_allclose(c, sol.y.T, rtol=1e-8, atol=1e-12)


def test_mass_conservation_balanced_scheme():
    rng = np.random.default_rng(7)
    n = 8
    # rates are powers of two between 2**-10 and 2**10 1/s, so that the diagonal
    # (minus the column sum) is exact and every column of K sums to exactly zero
    K = 2.0 ** rng.integers(-10, 11, (n, n)).astype(float) * (rng.random((n, n)) < 0.5)
    np.fill_diagonal(K, 0)
    K -= np.diag(K.sum(axis=0))  # closed, balanced scheme
    assert np.all(K.sum(axis=0) == 0)
    c0 = rng.uniform(0, 1, n)
    t = np.linspace(0, 1e3, 201)
    c = propagate(K, c0, t)
    # conservation of the total for column sums zero (common practice, no source)
    np.testing.assert_allclose(c.sum(axis=1), c0.sum(), rtol=1e-14, atol=0)


# ---------------------------------------------------------------- hypothesis


@st.composite
def ess_nonneg(draw):
    n = draw(st.integers(1, 7))
    logs = draw(st.lists(st.floats(-4, 4), min_size=n * n, max_size=n * n))
    mask = draw(st.lists(st.booleans(), min_size=n * n, max_size=n * n))
    K = (10.0 ** np.array(logs) * np.array(mask)).reshape(n, n)
    np.fill_diagonal(K, 0.0)
    diag = draw(st.lists(st.floats(-1.5, 1.0), min_size=n, max_size=n))
    K -= np.diag(K.sum(axis=0) * (1 + np.array(diag)) * (np.array(diag) > -1))
    t = draw(st.floats(0.0, 10.0))
    return K, t


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(ess_nonneg())
def test_hypothesis_agrees_with_scipy_in_norm(case):
    K, t = case
    # reference: scipy.linalg.expm (Al-Mohy & Higham 2009), accurate in norm
    with np.errstate(over="ignore", invalid="ignore"):
        S = scipy.linalg.expm(K * t)
    if not np.all(np.isfinite(S)) or np.abs(S).max() > 1e300:
        # near the top of the double range: a clear GrowthError, or (true values just below
        # 1e308, e.g. 1.28e304 by mpmath in one case found here) a finite result
        try:
            F = expm_nonnegative(K, t)
        except GrowthError:
            return
        assert np.all(np.isfinite(F))
        assert np.all(F >= 0)
        if not np.all(np.isfinite(S)):
            return
    else:
        F = expm_nonnegative(K, t)
    assert np.all(F >= 0)
    scale = max(np.abs(S).max(), 1e-300)
    # scipy is only normwise accurate: on K = [[-100, 10, .., 0], [100, -10, 0, 1000, ..], ..,
    # [.., 10000]] at t = 1 it is 5.7e-11 off in norm where this engine matches mpmath
    # exactly (measured); hence a normwise tolerance of 1e-9 (from measurement, no source)
    np.testing.assert_allclose(F, S, rtol=0, atol=1e-9 * scale)


# ---------------------------------------------------------------- grids


def test_time_zero_returns_c0_exactly():
    K = chain_matrix([0.3, 0.1])
    c0 = np.array([0.1, 0.7, 1e-300])
    c = propagate(K, c0, [0.0, 0.0, 1.0])
    assert c[0].tolist() == c0.tolist()
    assert c[1].tolist() == c0.tolist()


def test_uniform_and_irregular_grids_agree():
    K = chain_matrix([2.0, 0.5, 0.01])
    c0 = [1.0, 0.0, 0.0, 0.0]
    t = np.linspace(0.0, 20.0, 41)
    a = propagate(K, c0, t)  # uniform: powers of exp(K dt)
    t2 = t.copy()
    t2[7] += 1e-9  # no longer uniform: interval by interval
    b = propagate(K, c0, t2)
    keep = np.arange(t.size) != 7
    np.testing.assert_allclose(a[keep], b[keep], rtol=1e-13, atol=1e-300)


def test_single_times_match_grid():
    K = chain_matrix([2.0, 0.5, 0.01])
    c0 = [1.0, 0.0, 0.0, 0.0]
    t = np.linspace(0.0, 20.0, 41)
    a = propagate(K, c0, t)
    for j in (5, 23, 40):
        np.testing.assert_allclose(propagate(K, c0, [t[j]])[0], a[j], rtol=1e-13, atol=0)


def test_stiff_long_times_bounded_nonnegative():
    # t * max k up to 1e10, constants over 12 orders
    K = chain_matrix([1e4, 1e-8, 1e2, 1e-4])
    t = np.array([0.0, 1e-6, 1.0, 1e3, 1e6])
    c = propagate(K, [1.0, 0, 0, 0, 0], t)
    assert np.all(c >= 0)
    np.testing.assert_allclose(c.sum(axis=1), 1.0, rtol=1e-14, atol=0)
    # reference: Bateman 1910 for the first two members (well separated)
    np.testing.assert_allclose(c[1:, :2], [bateman_chain([1e4, 1e-8], 1.0, x) for x in t[1:]],
                               rtol=1e-12, atol=1e-300)  # fmt: skip


def test_double_route_is_bounded_and_close():
    K = chain_matrix([2.0, 0.5, 0.01])
    t = np.linspace(0, 10, 21)
    a = propagate_certified(K, [1, 0, 0, 0], t, precision="double")
    b = propagate_certified(K, [1, 0, 0, 0], t, precision="double-double")
    assert a.precision == "double"
    assert b.precision == "double-double"
    rel = np.abs(a.concentrations - b.concentrations) / np.maximum(b.concentrations, 1e-300)
    assert np.all(rel[1:] <= a.error_bound[1:, None])
    assert np.all(b.error_bound <= 2.3e-16)


# ---------------------------------------------------------------- batch


def test_batch_equals_single_bit_for_bit():
    rng = np.random.default_rng(3)
    b, n = 6, 5
    K = rng.uniform(0, 2, (b, n, n)) * 10.0 ** rng.uniform(-2, 2, (b, n, n))
    for i in range(b):
        np.fill_diagonal(K[i], 0)
        K[i] -= np.diag(K[i].sum(axis=0))
    c0 = rng.uniform(0, 1, (b, n))
    feed = rng.uniform(0, 0.1, (b, n))
    for t in (np.linspace(0, 5, 11), np.array([0.0, 0.3, 2.0, 2.5])):
        for prec in ("double", "double-double", "auto"):
            X = propagate_batch(K, c0, t, feed, precision=prec)
            assert X.shape == (b, t.size, n)
            for i in range(b):
                single = propagate(K[i], c0[i], t, feed[i], precision=prec)
                np.testing.assert_array_equal(X[i], single)


def test_batch_broadcasts_c0():
    K = np.stack([chain_matrix([1.0, 2.0]), chain_matrix([0.5, 0.1])])
    X = propagate_batch(K, [1.0, 0.0, 0.0], [0.0, 1.0])
    assert X.shape == (2, 2, 3)
    np.testing.assert_allclose(X[1, 1, 0], math.exp(-0.5), rtol=1e-15, atol=0)


# ---------------------------------------------------------------- large schemes


def sparse_chain(ks):
    n = len(ks)
    rows = np.r_[np.arange(n), np.arange(1, n)]
    cols = np.r_[np.arange(n), np.arange(n - 1)]
    vals = np.r_[-np.asarray(ks), np.asarray(ks[:-1])]
    return scipy.sparse.csr_array((vals, (rows, cols)), shape=(n, n))


def test_block_route_matches_dense_engine():
    # the block route itself (the public functions send large sparse schemes there by
    # predicted cost; see test_large_scheme_takes_the_block_route)
    from kinetics.engine.blocks import propagate_blocks

    n = 80
    ks = np.logspace(-3, 1, n)
    ks[40:44] = 0.05  # repeated constants
    K = sparse_chain(ks)
    c0 = np.zeros(n)
    c0[0], c0[50] = 1.0, 0.5
    t = np.linspace(0, 200, 21)
    c, _bound = propagate_blocks(K, c0, t, None)
    assert np.all(c >= 0)
    # reference: the dense double-double engine on the same matrix (checked
    # against mpmath in test_reference_expm.py)
    ref = propagate_batch(K.toarray()[None], c0, t)[0]
    big = ref > 1e-100
    np.testing.assert_allclose(c[big], ref[big], rtol=1e-10, atol=0)


def test_block_route_permuted_scheme_with_cycle_and_feed():
    from kinetics.engine.blocks import propagate_blocks

    rng = np.random.default_rng(11)
    n = 70
    K = np.zeros((n, n))
    for i in range(n - 1):
        K[i + 1, i] = 10.0 ** rng.uniform(-2, 1)
    K[30, 35] = 0.3  # a cycle 30 -> ... -> 35 -> 30
    K[60, 10] = 0.2  # a branch
    K -= np.diag(K.sum(axis=0))
    perm = rng.permutation(n)
    Kp = K[perm][:, perm]
    c0 = rng.uniform(0, 1, n)
    feed = np.zeros(n)
    feed[perm.tolist().index(0)] = 0.01
    t = np.array([0.0, 0.5, 3.0, 3.5, 40.0])
    c, _bound = propagate_blocks(scipy.sparse.csr_array(Kp), c0, t, feed)
    ref = propagate_batch(Kp[None], c0, t, feed[None])[0]
    big = ref > 1e-100
    np.testing.assert_allclose(c[big], ref[big], rtol=1e-10, atol=0)


def test_large_scheme_takes_the_block_route():
    n = 240  # a sparse chain this size: the block route is predicted cheaper
    ks = np.logspace(-3, 1, n)
    K = sparse_chain(ks)
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0, 100, 11)
    out = propagate_certified(K, c0, t)
    assert out.precision == "blocks"
    assert np.all(out.concentrations >= 0)
    # reference: the dense double-double engine on the same matrix (checked against
    # mpmath in test_reference_expm.py)
    ref = propagate_batch(K.toarray()[None], c0, t, precision="double-double")[0]
    big = ref > 1e-100
    np.testing.assert_allclose(out.concentrations[big], ref[big], rtol=1e-10, atol=0)


def test_small_sparse_input_equals_dense():
    K = chain_matrix([1.0, 0.1])
    t = [0.0, 1.0, 5.0]
    np.testing.assert_array_equal(
        propagate(scipy.sparse.csc_array(K), [1, 0, 0], t), propagate(K, [1, 0, 0], t)
    )


# ---------------------------------------------------------------- bad input


K_HINT = (
    "column j holds the outflow of species j: K[j, j] = -(sum of its rate constants), "
    "K[i, j] = nu*k for a step j -> i, all in 1/s"
)
START = "start concentrations, one per species, >= 0"
FEED = "zero-order feed rates [conc/s], >= 0"
TIMES_EXAMPLE = "e.g. [0, 600, 1200] or numpy.linspace(0, 3600, 201); for one time give [t]"


@pytest.mark.parametrize(
    ("K", "c0", "times", "feed", "error", "message"),
    [
        (
            chain_matrix([1.0]),
            [1, 0],
            [1.0, 0.5],
            None,
            TimesError,
            "the times are not in increasing order; sort the time list",
        ),
        (
            chain_matrix([1.0]),
            [1, 0],
            [-1.0],
            None,
            TimesError,
            "a time is negative (-1 s); times start at 0 (the start values)",
        ),
        (
            chain_matrix([1.0]),
            [1, 0],
            [np.nan],
            None,
            TimesError,
            "a time is not a finite number; give finite times in seconds",
        ),
        (
            chain_matrix([1.0]),
            [1, 0],
            [[0.0, 1.0]],
            None,
            TimesError,
            "the times must be a flat list of times, not an array of shape (1, 2); "
            + TIMES_EXAMPLE,
        ),
        (
            chain_matrix([1.0]),
            [1, 0],
            ["x"],
            None,
            TimesError,
            "the times are not numbers; give times in seconds as a list of numbers",
        ),
        (
            chain_matrix([1.0]),
            [1, 0, 0],
            [1.0],
            None,
            ConcentrationError,
            f"c0 has 3 entries but K has 2 species; {START}",
        ),
        (
            chain_matrix([1.0]),
            [-1, 0],
            [1.0],
            None,
            ConcentrationError,
            f"c0[0] = -1 is negative; {START}",
        ),
        (
            chain_matrix([1.0]),
            [1, np.inf],
            [1.0],
            None,
            ConcentrationError,
            f"c0 contains inf or nan; {START}",
        ),
        (
            chain_matrix([1.0]),
            ["a", 0],
            [1.0],
            None,
            ConcentrationError,
            f"c0 is not a numeric array; {START}",
        ),
        (
            chain_matrix([1.0]),
            [1, 0],
            [1.0],
            [0.0, -1.0],
            ConcentrationError,
            f"feed[1] = -1 is negative; {FEED}",
        ),
        (
            np.array([[-1.0, -0.5], [1.0, 0.0]]),
            [1, 0],
            [1.0],
            None,
            RateMatrixError,
            "K[0, 1] = -0.5 is negative; off-diagonal entries are rates of formation and "
            f"must be >= 0; {K_HINT}",
        ),
        (
            np.ones((2, 3)),
            [1, 0],
            [1.0],
            None,
            RateMatrixError,
            f"the rate matrix K has shape (2, 3); it must be square; {K_HINT}",
        ),
        (
            np.array([[np.inf, 0], [0, 0]]),
            [1, 0],
            [1.0],
            None,
            RateMatrixError,
            f"the rate matrix K contains inf or nan; {K_HINT}",
        ),
        (
            "abc",
            [1, 0],
            [1.0],
            None,
            RateMatrixError,
            f"the rate matrix K is not a numeric array; {K_HINT}",
        ),
    ],
)
def test_bad_input_raises_the_typed_error_of_the_mistake(K, c0, times, feed, error, message):
    # one wording per mistake: the engine's checks are those of the analysis and of solve
    with pytest.raises(error) as info:
        propagate(K, c0, times, feed)
    assert str(info.value) == message


def test_a_sparse_rate_matrix_is_checked_with_the_same_wording():
    K = scipy.sparse.csr_array(np.array([[-1.0, -0.5], [1.0, 0.0]]))
    with pytest.raises(RateMatrixError) as info:
        propagate(K, [1, 0], [1.0])
    assert info.value.problem == (
        "K[0, 1] = -0.5 is negative; off-diagonal entries are rates of formation and must be >= 0"
    )


def test_bad_precision_batch_shape_and_batch_entries():
    with pytest.raises(SettingError) as info:
        propagate(chain_matrix([1.0]), [1, 0], [1.0], precision="quad")
    assert str(info.value) == "unknown precision 'quad'; use 'auto', 'double' or 'double-double'"
    with pytest.raises(RateMatrixError) as info:
        propagate_batch(chain_matrix([1.0]), [1, 0], [1.0])
    assert str(info.value) == (
        f"a batch of rate matrices must have shape (b, n, n), got (2, 2); {K_HINT}"
    )
    with pytest.raises(RateMatrixError) as info:
        propagate_batch([[["x"]]], [1], [1.0])
    assert str(info.value) == f"the rate matrix K is not a numeric array; {K_HINT}"
    K = np.stack([chain_matrix([1.0]), np.array([[-1.0, 0.0], [-2.0, 0.0]])])
    with pytest.raises(RateMatrixError) as info:
        propagate_batch(K, [1, 0], [1.0])
    assert info.value.problem.startswith("K[1, 1, 0] = -2 is negative")
    with pytest.raises(ConcentrationError) as info:
        propagate_batch(K[:1], [[1, 0], [1, 0]], [1.0])
    assert str(info.value) == f"c0 has shape (2, 2); it must have shape (1, 2); {START}"
    with pytest.raises(ConcentrationError) as info:
        propagate_batch(K[:1], [[1, -3]], [1.0])
    assert str(info.value) == f"c0[0, 1] = -3 is negative; {START}"


def test_expm_refuses_a_bad_time():
    with pytest.raises(TimesError) as info:
        expm_nonnegative_certified(chain_matrix([1.0]), -1.0)
    assert str(info.value) == "time must be finite and >= 0"


def test_growth_beyond_double_range_is_a_clear_error():
    # A -> 2 A with k = 1000/s for 2 s grows like exp(2000), beyond 1e308
    # (common practice, no source)
    K = np.array([[1000.0]])
    with pytest.raises(GrowthError, match="beyond the range of double precision"):
        propagate(K, [1.0], [0.0, 2.0])
    np.testing.assert_allclose(propagate(K, [1.0], [0.001])[0], [np.exp(1.0)], rtol=1e-15)


@settings(max_examples=40, deadline=None)
@given(
    st.integers(2, 6),
    st.integers(2, 400),
    st.booleans(),
    st.floats(0.01, 100.0),
    st.integers(0, 2**32 - 1),
)
def test_auto_route_certifies_its_target_on_any_grid(n, points, uniform, until, seed):
    # precision="auto" may take plain double only where the whole grid stays within
    # AUTO_RTOL: the reported bound never exceeds it on a moderate scheme (issue 11)
    from kinetics.propagate import AUTO_RTOL

    rng = np.random.default_rng(seed)
    K = chain_matrix(list(10.0 ** rng.uniform(-2, 1, n - 1)))
    times = np.linspace(0.0, until, points) if uniform else np.sort(rng.uniform(0, until, points))
    result = propagate_certified(K, np.eye(n)[0], times)
    assert result.error_bound.max() <= AUTO_RTOL


def test_a_repeated_solve_reuses_its_exponential_and_equals_the_first(monkeypatch):
    # reference: the first call itself (a remembered exponential changes no bit), and
    # Bateman's closed form for a changed constant (the key holds the matrix's values)
    from kinetics.engine import dense

    calls = []
    compute = dense.expm_stack

    def counted(*args, **kwargs):
        calls.append(args[2])
        return compute(*args, **kwargs)

    monkeypatch.setattr(dense, "expm_stack", counted)
    t = np.linspace(0.0, 10.0, 41)
    K = chain_matrix([0.5, 0.2])
    first = propagate_certified(K, [1.0, 0.0, 0.0], t, K_low=np.diag([0.0, 1e-20, 0.0]))
    again = propagate_certified(K, [1.0, 0.0, 0.0], t, K_low=np.diag([0.0, 1e-20, 0.0]))
    assert len(calls) <= 1  # none when an earlier test solved the same scheme on this grid
    assert first.concentrations.tobytes() == again.concentrations.tobytes()
    assert first.error_bound.tobytes() == again.error_bound.tobytes()
    assert first.precision == again.precision
    other = propagate(chain_matrix([0.5, 0.3]), [1.0, 0.0, 0.0], t)
    ref = [bateman_chain([0.5, 0.3], 1.0, tk) for tk in t]
    np.testing.assert_allclose(other[:, :2], ref, rtol=1e-13, atol=0)
    assert len(calls) <= 2


def test_inputs_checked_once_give_the_same_numbers_on_every_grid():
    """check_inputs(...).propagate equals propagate_certified bit for bit (dense, feed, low
    parts, sparse); reference: the public function itself, and the Bateman closed form
    c_A = e^(-k1 t) for the first species."""
    from kinetics.engine import check_inputs
    from kinetics.engine.checks import times as checked_times

    K = chain_matrix([0.7, 0.2, 0.05])
    K_low = np.zeros_like(K)
    K_low[0, 0] = 1e-18
    c0 = np.array([1.0, 0.0, 0.0, 0.0])
    feed = np.array([0.0, 1e-3, 0.0, 0.0])
    inputs = check_inputs(K, c0, feed, K_low=K_low)
    for t in ([0.0, 1.0, 5.0], np.linspace(0.0, 30.0, 31), [2.5]):
        expected = propagate_certified(K, c0, t, feed, K_low=K_low)
        got = inputs.propagate(checked_times(t))
        assert np.array_equal(got.concentrations, expected.concentrations)
        assert np.array_equal(got.error_bound, expected.error_bound)
    sparse = check_inputs(scipy.sparse.csr_array(K), c0)
    got = sparse.propagate(checked_times([4.0])).concentrations[0, 0]
    assert abs(got - math.exp(-0.7 * 4.0)) <= 1e-15 * math.exp(-2.8)


def test_check_inputs_refuses_what_propagate_certified_refuses():
    from kinetics.engine import check_inputs

    with pytest.raises(RateMatrixError):
        check_inputs([[-1.0, -1.0], [1.0, 0.0]], [1.0, 0.0])
    with pytest.raises(ConcentrationError):
        check_inputs([[-1.0, 0.0], [1.0, 0.0]], [-1.0, 0.0])


def test_a_few_times_each_from_the_start_and_many_by_intervals_agree_with_bateman():
    """A few irregular times (each from the start, repeated and leading zero times) and
    many (a step per interval) against the Bateman (1910) closed form, with their bound."""
    ks = [1.0, 0.3, 0.05, 0.01]
    K = chain_matrix(ks)
    c0 = [2.0, 0, 0, 0, 0]
    # times where the closed form in double does not cancel (t >= 5 s here)
    few = np.array([0.0, 0.0, 5.5, 5.5, 7.25, 41.0])
    many = np.array([0.0, 5.5, 6.0, 6.5, 7.25, 9.5, 13.0, 41.0])
    for t in (few, many):
        result = propagate_certified(K, c0, t)
        assert result.precision == "double-double"
        assert result.error_bound.max() < 1e-15
        for j, tj in enumerate(t):
            ref = bateman_chain(ks, 2.0, tj) if tj > 0 else np.array([2.0, 0, 0, 0])
            np.testing.assert_allclose(result.concentrations[j, :4], ref, rtol=1e-13, atol=0)
    a = propagate_certified(K, c0, few).concentrations
    b = propagate_certified(K, c0, many).concentrations
    assert np.array_equal(a[2], a[3])  # a repeated time: the same state
    np.testing.assert_allclose(a[[2, 4, 5]], b[[1, 4, 7]], rtol=4e-16, atol=0)
