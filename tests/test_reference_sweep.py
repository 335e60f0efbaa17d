"""Sweep results against references outside the project.

Closed forms (Arrhenius equation, consecutive first-order steps, Bateman's chain solution,
parent-daughter decay), the analytic quantiles of a lognormal distribution for the Monte
Carlo bands, and scipy's Radau integrator for the curves.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.integrate
import scipy.stats

import kinetics
from kinetics.sweep import chunk_result, make_plan, monte_carlo, set_matrices, sweep

# Molar gas constant R = N_A k_B, exact in the 2019 SI from the defined Avogadro and
# Boltzmann constants (CODATA 2018: 8.314462618... J/(mol K))
R = 6.02214076e23 * 1.380649e-23


def _arrhenius_scheme(ea_kj: float) -> kinetics.Scheme:
    return kinetics.parse(
        f"A -> B    k = arrhenius(A = 1.0e12 1/s, Ea = {ea_kj} kJ/mol)\n"
        "temperature = 25 degC\nstart A = 1 mol/L\n"
    )


def test_temperature_sweep_reproduces_the_arrhenius_equation():
    s = _arrhenius_scheme(83.144)
    table = sweep(s, ["temperature=15:55:9:degC"], [0.0, 3600.0])
    T = table["temperature [degC]"].to_numpy() + 273.15
    # single first-order step: half-life = ln 2 / k (textbook closed form)
    k = math.log(2) / table["half_life A [s]"].to_numpy()
    # Arrhenius equation k = A exp(-Ea / (R T)) (Arrhenius, Z. Phys. Chem. 4, 226 (1889))
    np.testing.assert_allclose(k, 1.0e12 * np.exp(-83144.0 / (R * T)), rtol=1e-10)


def test_rate_ratio_between_25_and_35_degC():
    s = _arrhenius_scheme(83.144)
    table = sweep(s, ["temperature=25,35:degC"], [0.0, 3600.0])
    k25, k35 = math.log(2) / table["half_life A [s]"].to_numpy()
    # from the Arrhenius equation: k(T2)/k(T1) = exp(Ea/R (1/T1 - 1/T2))
    expected = math.exp(83144.0 / R * (1 / 298.15 - 1 / 308.15))
    assert k35 / k25 == pytest.approx(expected, rel=1e-10)
    # "about 2.97" for Ea = 83.144 kJ/mol (derived from the Arrhenius equation above)
    assert expected == pytest.approx(2.97, abs=0.005)


def test_activation_energy_sweep():
    s = _arrhenius_scheme(80.0)
    table = sweep(s, ["k.Ea=60:100:5:kJ/mol"], [0.0, 3600.0])
    ea = table["k.Ea [kJ/mol]"].to_numpy() * 1e3
    k = math.log(2) / table["half_life A [s]"].to_numpy()
    # Arrhenius equation at 25 degC = 298.15 K (Arrhenius 1889)
    np.testing.assert_allclose(k, 1.0e12 * np.exp(-ea / (R * 298.15)), rtol=1e-10)


CHAIN = """\
A -> B      k1 = 0.1 1/min
B -> C      k2 = 0.05 1/min
start A = 2.0 mol/L
"""


def test_consecutive_steps_t_max_and_c_max():
    s = kinetics.parse(CHAIN)
    table = sweep(s, ["k2=0.01:0.5:15:log", "k1=0.1,0.2"], [0.0, 3600.0], time_unit="min")
    k1 = table["k1 [1/min]"].to_numpy()
    k2 = table["k2 [1/min]"].to_numpy()
    # A -> B -> C: t_max = ln(k1/k2)/(k1-k2), B_max = A0 (k1/k2)^(k2/(k2-k1))
    # (consecutive first-order reactions, e.g. Atkins' Physical Chemistry, 10th ed.)
    np.testing.assert_allclose(table["t_max B [min]"], np.log(k1 / k2) / (k1 - k2), rtol=1e-9)
    np.testing.assert_allclose(
        table["c_max B [mol/L]"], 2.0 * (k1 / k2) ** (k2 / (k2 - k1)), rtol=1e-9
    )
    # half-life of A: ln 2 / k1 (textbook closed form)
    np.testing.assert_allclose(table["half_life A [min]"], math.log(2) / k1, rtol=1e-10)


def test_consecutive_steps_equal_constants():
    s = kinetics.parse(CHAIN)
    table = sweep(s, ["k2=0.1"], [0.0, 3600.0], time_unit="min")
    # equal constants: t_max = 1/k, B_max = A0/e (limit of the consecutive-step formula,
    # any physical chemistry textbook)
    assert table["t_max B [min]"].iloc[0] == pytest.approx(10.0, rel=1e-9)
    assert table["c_max B [mol/L]"].iloc[0] == pytest.approx(2.0 / math.e, rel=1e-9)


def test_parent_daughter_time_of_maximum_daughter_activity():
    # a generator pair with half-lives 65.98 h (parent) and 6.007 h (daughter)
    s = kinetics.parse(
        "P -> D    lp = 0.010505 h-1\nD -> G    ld = 0.11539 h-1\nstart P = 1 mol/L\n"
    )
    lam_p = math.log(2) / 65.98
    table = sweep(
        s,
        [f"ld={math.log(2) / 6.007!r},{math.log(2) / 3.0!r}", f"lp={lam_p!r}"],
        [0.0, 3600.0],
        time_unit="h",
    )
    lam_d = table["ld [h-1]"].to_numpy()
    # t_max = ln(ld/lp)/(ld - lp) (parent-daughter decay, Bateman 1910)
    np.testing.assert_allclose(
        table["t_max D [h]"], np.log(lam_d / lam_p) / (lam_d - lam_p), rtol=1e-9
    )
    # about 22.85 h for this pair (nuclear data tables; "about 23 h" is common practice)
    assert table["t_max D [h]"].iloc[0] == pytest.approx(22.85, abs=0.01)


def test_curves_follow_bateman():
    s = kinetics.parse(
        "A -> B  k1 = 1.0 1/s\nB -> C  k2 = 0.1 1/s\nC -> D  k3 = 0.01 1/s\nstart A = 1 M\n"
    )
    times = np.linspace(0.0, 300.0, 61)
    plan = make_plan(s, ["k2=0.05,0.1,0.2"], times)
    result = chunk_result(plan, 0, plan.n_sets, curves=True)
    for i, k2 in enumerate([0.05, 0.1, 0.2]):
        k = [1.0, k2, 0.01]
        # Bateman 1910: c_n(t) = A0 prod_{j<n} k_j sum_i exp(-k_i t) / prod_{j!=i} (k_j - k_i)
        c = np.zeros((times.size, 3))
        for n in range(3):
            pre = np.prod(k[:n])
            for ii in range(n + 1):
                den = np.prod([k[j] - k[ii] for j in range(n + 1) if j != ii])
                c[:, n] += pre * np.exp(-k[ii] * times) / den
        np.testing.assert_allclose(result.curves[i, :, :3], c, rtol=1e-10, atol=1e-14)


BRANCHED = """\
A <=> B     kf = 0.3 1/min, kr = 0.1 1/min
B -> C      k2 = 0.05 1/min
A -> D      k3 = 0.02 1/min
C <=> E     k4 = 0.2 1/min, k5 = 0.05 1/min
start A = 1.0 mol/L
"""


def test_curves_against_scipy_radau():
    s = kinetics.parse(BRANCHED)
    times = np.linspace(0.0, 3600.0, 21)
    plan = make_plan(s, ["k2=0.01,0.2", "kr=0.4"], times)
    result = chunk_result(plan, 0, plan.n_sets, curves=True)
    K, _, c0, _ = set_matrices(plan, 0, plan.n_sets)
    for i in range(plan.n_sets):
        sol = scipy.integrate.solve_ivp(
            lambda t, c, M=K[i]: M @ c,
            (0.0, times[-1]),
            c0[i],
            method="Radau",
            t_eval=times,
            rtol=1e-12,
            atol=1e-15,
            jac=lambda t, c, M=K[i]: M,
        )
        # scipy Radau at rtol 1e-12 (independent integrator): agreement to ~1e-9
        np.testing.assert_allclose(result.curves[i], sol.y.T, rtol=1e-8, atol=1e-12)


def test_monte_carlo_half_life_quantiles_are_lognormal():
    # A -> B with k lognormal: ln k = ln k0 + ln(1+s) z, so the half-life ln2/k is
    # lognormal too, with median ln2/k0 and sigma = ln(1+s): its quantiles are
    # (ln2/k0) exp(sigma Phi^-1(p)) (Aitchison & Brown, The Lognormal Distribution, 1957)
    s = kinetics.parse("A -> B  k = 0.1 1/min\nstart A = 1 mol/L\n")
    n = 20000
    samples, bands = monte_carlo(
        s, ["k=15%"], n, [0.0, 600.0], seed=11, time_unit="min", chunk_size=5000
    )
    sigma = math.log(1.15)
    for p in (2.5, 50.0, 97.5):
        z = scipy.stats.norm.ppf(p / 100)
        want = math.log(2) / 0.1 * math.exp(sigma * z)
        got = bands[f"half_life A p{p:g} [min]"].iloc[0]
        # standard error of a sample quantile: sqrt(p(1-p)/N) / f(x_p); in log space
        # f = phi(z)/sigma (asymptotic normality of sample quantiles, e.g. Cramer 1946);
        # allow five standard errors
        se = math.sqrt(p / 100 * (1 - p / 100) / n) * sigma / scipy.stats.norm.pdf(z)
        assert math.log(got / want) == pytest.approx(0.0, abs=5 * se)
    # every sample's half-life is ln 2 / k of its own k (single first-order step)
    np.testing.assert_allclose(
        samples["half_life A [min]"], math.log(2) / samples["k [1/min]"], rtol=1e-10
    )


def test_monte_carlo_temperature_is_normal():
    s = _arrhenius_scheme(83.144)
    samples, _ = monte_carlo(s, ["temperature=2K"], 4000, [0.0, 600.0], seed=5)
    t = samples["temperature [degC]"].to_numpy()
    n = t.size
    # normal distribution N(25 degC, (2 K)^2): mean within 5 standard errors 2/sqrt(n),
    # standard deviation within 5 standard errors 2/sqrt(2n) (normal sampling theory)
    assert t.mean() == pytest.approx(25.0, abs=5 * 2 / math.sqrt(n))
    assert t.std(ddof=1) == pytest.approx(2.0, abs=5 * 2 / math.sqrt(2 * n))
    # each sample follows the Arrhenius equation at its own temperature (Arrhenius 1889)
    k = math.log(2) / samples["half_life A [s]"].to_numpy()
    np.testing.assert_allclose(k, 1e12 * np.exp(-83144.0 / (R * (t + 273.15))), rtol=1e-9)


STIFF = """\
A -> B      k1 = 7.3e5 1/min
A -> C      k2 = 0.0013 1/h
B <=> D     kf = 3.3e4 1/s, kr = 1.7e-3 1/s
C -> E      k3 = 2.9e-6 1/s
start A = 0.5 mol/L
"""


@pytest.mark.parametrize("precision", ["double", "auto"])
def test_stiff_sweep_is_exact_for_the_constants_as_written(precision):
    """Curves of a sweep against Arb balls of the matrix built exactly from the decimal
    constants (issue 11: every route, sweeps included), and the certified bound column."""
    from fractions import Fraction

    flint = pytest.importorskip("flint")
    # the ball reference of the certificate tests (python-flint arb_mat.exp, exact diagonal)
    from test_reference_certificate import BITS, reference, true_error

    s = kinetics.parse(STIFF)
    times = [0.0, 1e-6, 0.5, 3600.0, 1e7]
    k2s, krs = ["0.0013", "0.0377"], ["1.7e-3", "2.3e-5"]
    plan = make_plan(s, [f"k2={','.join(k2s)}", f"kr={','.join(krs)}"], times, precision=precision)
    result = chunk_result(plan, 0, plan.n_sets, curves=True)
    idx = s.index
    saved, flint.ctx.prec = flint.ctx.prec, BITS
    try:
        for i in range(plan.n_sets):
            k2, kr = Fraction(k2s[i // 2]) / 3600, Fraction(krs[i % 2])
            steps = {
                ("B", "A"): Fraction("7.3e5") / 60,  # exact unit factors: 1 min = 60 s
                ("C", "A"): k2,
                ("D", "B"): Fraction("3.3e4"),
                ("B", "D"): kr,
                ("E", "C"): Fraction("2.9e-6"),
            }
            constants = {(idx[a], idx[b]): k for (a, b), k in steps.items()}
            worst = 0.0
            for k, t in enumerate(times[1:], start=1):
                exact = reference(len(idx), constants, s.initial_vector, Fraction(t))
                worst = max(worst, true_error(result.curves[i, k], exact))
            assert worst <= result.bound[i]  # the certificate never undercuts the truth
            assert worst <= (1e-9 if precision == "double" else 1e-13)
    finally:
        flint.ctx.prec = saved
