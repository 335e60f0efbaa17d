"""The rate matrix K: dense and sparse forms, column sums, batch assembly, step rates.

For first-order steps X_r -> sum_p nu_p X_p with rate constants k_s,
dc/dt = K c with K[r, r] -= k_s and K[p, r] += nu_p k_s (common practice, no
source); with unit stoichiometry and no excess products every column sums to
zero (total amount conserved).  The dense matrix is checked against an explicit
scipy.integrate.solve_ivp integration of the same equations written term by term.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse
from scipy.integrate import solve_ivp

from kinetics import KineticsError, parse
from kinetics.errors import ConcentrationError, ConstantError, SpeciesError, TemperatureError
from kinetics.ratematrix import rate_pattern, step_rates

CHAIN = """\
A -> B          k1 = 0.12 1/min
B <=> C         kf = 2.0e-3 1/s, kr = 5.0e-4 1/s
C -> D          k1
A + W -> E      k2 = 1.5e-4 M-1 s-1
E -> 0.5 F + 0.5 G   k3 = 1 h-1
excess W = 55 mol/L
start A = 1 mol/L
"""


@pytest.fixture(scope="module")
def chain():
    return parse(CHAIN)


def test_matrix_entries_by_hand(chain):
    K = chain.rate_matrix()
    # species order: A B C D E F G; rates in 1/s: k1 = 0.002, kf = 2e-3, kr = 5e-4,
    # k2 [W] = 1.5e-4 * 55 = 8.25e-3, k3 = 1/3600 (1 min = 60 s, 1 h = 3600 s)
    k1, kf, kr, kw, k3 = 0.002, 2e-3, 5e-4, 8.25e-3, 1 / 3600
    expected = np.zeros((7, 7))
    expected[0, 0] = -(k1 + kw)
    expected[1, 0] = k1
    expected[4, 0] = kw
    expected[1, 1] = -kf
    expected[2, 1] = kf
    expected[2, 2] = -(kr + k1)
    expected[1, 2] = kr
    expected[3, 2] = k1
    expected[4, 4] = -k3
    expected[5, 4] = expected[6, 4] = 0.5 * k3
    np.testing.assert_allclose(K, expected, rtol=1e-15, atol=0)


def test_dense_equals_sparse(chain):
    dense = chain.rate_matrix()
    sparse = chain.rate_matrix_sparse()
    assert isinstance(sparse, scipy.sparse.csr_array)
    np.testing.assert_array_equal(sparse.toarray(), dense)


def test_metzler_structure(chain):
    K = chain.rate_matrix()
    off = K - np.diag(np.diag(K))
    assert (off >= 0).all()
    assert (np.diag(K) <= 0).all()


def test_columns_sum_to_zero_with_unit_stoichiometry():
    s = parse(
        "A -> B  k1 = 0.3 1/s\nB <=> C  kf = 1 1/min, kr = 2 h-1\nC -> A  k2 = 7 d-1\n"
        "B -> D  k1\nD -> E  k3 = 0.01 1/s"
    )
    np.testing.assert_allclose(s.rate_matrix().sum(axis=0), 0.0, rtol=0, atol=1e-18)
    np.testing.assert_allclose(
        np.asarray(s.rate_matrix_sparse().sum(axis=0)).ravel(), 0.0, rtol=0, atol=1e-18
    )


def test_matrix_agrees_with_a_term_by_term_ode_integration(chain):
    # the same equations written out by hand, integrated by scipy (DOP853)
    k1, kf, kr, kw, k3 = 0.002, 2e-3, 5e-4, 8.25e-3, 1 / 3600

    def rhs(_t, c):
        a, b, cc, _d, e, _f, _g = c
        return [
            -(k1 + kw) * a,
            k1 * a - kf * b + kr * cc,
            kf * b - (kr + k1) * cc,
            k1 * cc,
            kw * a - k3 * e,
            0.5 * k3 * e,
            0.5 * k3 * e,
        ]

    c0 = chain.initial_vector
    K = chain.rate_matrix()
    t_end = 2000.0
    reference = solve_ivp(rhs, (0, t_end), c0, method="DOP853", rtol=1e-12, atol=1e-14)
    with_matrix = solve_ivp(
        lambda _t, c: K @ c, (0, t_end), c0, method="DOP853", rtol=1e-12, atol=1e-14
    )
    np.testing.assert_allclose(with_matrix.y[:, -1], reference.y[:, -1], rtol=1e-9, atol=1e-13)


def test_excess_products_are_dropped_from_the_matrix():
    s = parse("A -> B + W  k = 1 1/s\nexcess W = 1 M")
    np.testing.assert_array_equal(s.rate_matrix(), [[-1.0, 0.0], [1.0, 0.0]])


def test_feed_vector(chain):
    s = parse("A -> B  k = 1 1/s\nfeed A = 0.6 mmol/L/min\nstart A = 1 mmol/L")
    np.testing.assert_array_equal(s.feed_vector, [0.01, 0.0])  # 0.6/60 per second


def test_pattern_batch_assembly_equals_per_set_assembly(chain):
    pattern = rate_pattern(chain)
    rng = np.random.default_rng(7)
    batch = rng.uniform(1e-4, 1e-1, size=(5, len(chain.steps)))
    dense_batch = pattern.dense(batch)
    assert dense_batch.shape == (5, 7, 7)
    for b in range(5):
        np.testing.assert_array_equal(dense_batch[b], pattern.dense(batch[b]))
        np.testing.assert_array_equal(pattern.sparse(batch[b]).toarray(), dense_batch[b])
    np.testing.assert_array_equal(pattern.dense(chain.rates), chain.rate_matrix())


def test_pattern_values_broadcast(chain):
    pattern = rate_pattern(chain)
    batch = np.tile(chain.rates, (3, 1))
    values = pattern.values(batch)
    assert values.shape == (3, len(pattern.rows))
    np.testing.assert_array_equal(values[1], pattern.values(chain.rates))


def test_step_rates_with_overrides(chain):
    rates = step_rates(chain, constants={"k1": 0.01}, excess={"W": 11.0})
    # k1 is shared by A -> B and C -> D; k2 [W] = 1.5e-4 * 11 (common practice)
    assert rates[0] == 0.01
    assert rates[3] == 0.01
    assert rates[4] == pytest.approx(1.5e-4 * 11, rel=1e-15)
    np.testing.assert_array_equal(chain.step_rates(), chain.rates)


def test_step_rates_arrhenius_temperature_override():
    s = parse("A -> B  k = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\ntemperature = 60 degC")
    hotter = step_rates(s, temperature=350.0)
    # k = A exp(-Ea/RT) at 350 K (Arrhenius 1889; R exact, CODATA 2018), mpmath 30 digits
    assert hotter[0] == pytest.approx(0.0664206482862126489, rel=1e-13)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"constants": {"nope": 1.0}}, "no rate constant named 'nope'"),
        ({"constants": {"k1": -1.0}}, "must be finite and >= 0"),
        ({"constants": {"k1": float("nan")}}, "must be finite and >= 0"),
        ({"excess": {"A": 1.0}}, "no excess species named 'A'"),
        ({"temperature": 0.0}, "above 0 K"),
    ],
)
def test_step_rates_bad_overrides_raise_our_error(chain, kwargs, message):
    with pytest.raises(KineticsError, match=message):
        step_rates(chain, **kwargs)


def test_with_values_replaces_and_checks(chain):
    faster = chain.with_values(constants={"k1": 0.02}, initial={"B": 0.5}, excess={"W": 1.0})
    assert faster.rates[0] == 0.02
    assert faster.rates[4] == pytest.approx(1.5e-4, rel=1e-15)
    assert faster.initial == {"A": 1.0, "B": 0.5}
    assert chain.rates[0] == 0.002  # the original is unchanged
    with pytest.raises(KineticsError, match="no species named 'W'"):
        chain.with_values(initial={"W": 1.0})
    with pytest.raises(KineticsError, match="must be finite"):
        chain.with_values(initial={"A": float("inf")})


def test_rates_are_read_only(chain):
    with pytest.raises(ValueError, match="read-only"):
        chain.rates[0] = 1.0


def test_species_by_name(chain):
    assert chain.species_by_name("W").excess
    with pytest.raises(KineticsError, match="no species named 'Q'"):
        chain.species_by_name("Q")


@pytest.mark.parametrize(
    ("overrides", "error", "message"),
    [
        (
            {"constants": {"k9": 1.0}},
            ConstantError,
            "no rate constant named 'k9' in the scheme; known constants: kw",
        ),
        (
            {"constants": {"kw": -2.0}},
            ConstantError,
            "rate constant kw = -2.0 must be finite and >= 0",
        ),
        (
            {"excess": {"X": 1.0}},
            SpeciesError,
            "no excess species named 'X' in the scheme; excess species: W",
        ),
        (
            {"excess": {"W": float("nan")}},
            ConcentrationError,
            "excess concentration of W = nan must be finite and >= 0",
        ),
        (
            {"temperature": -5.0},
            TemperatureError,
            "temperature -5.0 K must be finite and above 0 K",
        ),
    ],
)
def test_other_values_are_checked_as_new_values_are(overrides, error, message):
    """The rate matrix at other values words each mistake as Scheme.with_values does."""
    scheme = parse("A + W -> B  kw = 2 1/(M*s)\nexcess W = 55 M\nstart A = 1 M")
    with pytest.raises(error) as err:
        step_rates(scheme, **overrides)
    assert str(err.value) == message
