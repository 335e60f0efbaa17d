"""The compiled kernels of the dense engine against exact rational arithmetic."""

from __future__ import annotations

import math
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics.engine import kernels as _kernels

# nonnegative doubles over a wide range of magnitudes, as in exponentials of stiff schemes
# (products stay clear of overflow and of the subnormal range, where no split is exact)
magnitudes = st.one_of(
    st.just(0.0),
    st.floats(min_value=1e-140, max_value=1e140, allow_nan=False, allow_infinity=False),
)


@settings(max_examples=300, deadline=None)
@given(magnitudes, magnitudes)
def test_two_prod_is_error_free(a, b):
    # Dekker 1971 (section from memory): p + e equals a * b exactly (checked in exact rationals)
    p, e = _kernels.two_prod(a, b)
    assert Fraction(p) + Fraction(e) == Fraction(a) * Fraction(b)
    assert p == a * b


@settings(max_examples=300, deadline=None)
@given(
    st.floats(min_value=-1e200, max_value=1e200, allow_nan=False),
    st.floats(min_value=-1e200, max_value=1e200, allow_nan=False),
)
def test_two_sum_is_error_free(a, b):
    # Knuth's TwoSum: s + e equals a + b exactly (checked in exact rationals)
    s, e = _kernels.two_sum(a, b)
    assert Fraction(s) + Fraction(e) == Fraction(a) + Fraction(b)


def _exact_product(Ah, Al, Bh, Bl):
    n, k = Ah.shape
    m = Bh.shape[1]
    a = [[Fraction(Ah[i, r]) + Fraction(Al[i, r]) for r in range(k)] for i in range(n)]
    b = [[Fraction(Bh[r, j]) + Fraction(Bl[r, j]) for j in range(m)] for r in range(k)]
    return [[sum(a[i][r] * b[r][j] for r in range(k)) for j in range(m)] for i in range(n)]


def _random_dd(rng, shape, zeros=0.3):
    """Nonnegative double-doubles spanning 1e-150..1, some exact zeros."""
    hi = 10.0 ** rng.uniform(-150, 0, shape)
    hi[rng.random(shape) < zeros] = 0.0
    lo = hi * rng.uniform(-1, 1, shape) * 2.0**-54
    return hi, lo


@pytest.mark.parametrize(("n", "k", "m"), [(1, 1, 1), (3, 5, 2), (10, 10, 10), (7, 12, 33)])
def test_double_double_product_is_accurate_entry_by_entry(n, k, m):
    # Ogita, Rump & Oishi 2005 (Prop. 5.5, from memory) for nonnegative data: each entry of
    # the product is accurate to about k^2 2^-106 relative, however small it is
    rng = np.random.default_rng(n * 100 + k * 10 + m)
    Ah, Al = _random_dd(rng, (n, k))
    Bh, Bl = _random_dd(rng, (k, m))
    Ch = np.empty((n, m))
    Cl = np.empty((n, m))
    _kernels.product(Ah, Al, Bh, Bl, Ch, Cl, True)
    exact = _exact_product(Ah, Al, Bh, Bl)
    for i in range(n):
        for j in range(m):
            got = Fraction(Ch[i, j]) + Fraction(Cl[i, j])
            if exact[i][j] == 0:
                assert got == 0
            else:
                assert abs(got - exact[i][j]) / exact[i][j] <= Fraction(k * k + 2, 2**104)
            # normalised: |lo| <= ulp(hi) / 2
            assert abs(Cl[i, j]) <= np.spacing(Ch[i, j]) / 2


def test_double_double_grid_states_are_correctly_rounded_entry_by_entry():
    # the grid kernel's repeated double-double products F^k x0 against exact rational
    # arithmetic: each state, accurate to about k N^2 2^-104 before its rounding to double
    # (Ogita, Rump & Oishi 2005, Prop. 5.5 with nonnegative data, from memory), is within
    # u + 2^-90 of the exact value, however small the entry
    rng = np.random.default_rng(11)
    N, columns = 7, 6
    Fh, Fl = _random_dd(rng, (1, N, N), zeros=0.2)
    x0h, x0l = _random_dd(rng, (1, N), zeros=0.0)
    X = np.zeros((1, columns, N))
    bound = np.zeros((1, columns))
    zero = np.zeros(1)
    _kernels.grid(Fh, Fl, x0h, x0l, columns, 0, np.array([True]), X, 0, zero, zero, zero, bound)
    F = [[Fraction(Fh[0, i, c]) + Fraction(Fl[0, i, c]) for c in range(N)] for i in range(N)]
    v = [Fraction(x0h[0, i]) + Fraction(x0l[0, i]) for i in range(N)]
    tol = Fraction(1, 2**53) + Fraction(1, 2**90)
    for k in range(columns):
        for i in range(N):
            if v[i] == 0:
                assert X[0, k, i] == 0.0
            else:
                assert abs(Fraction(X[0, k, i]) - v[i]) / v[i] <= tol, (k, i)
        v = [sum(F[i][c] * v[c] for c in range(N)) for i in range(N)]


def test_double_product_is_within_gamma_k():
    # plain double, nonnegative data: relative error at most k u / (1 - k u) per entry
    # (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., ch. 3; from memory)
    rng = np.random.default_rng(3)
    Ah, _ = _random_dd(rng, (6, 9))
    Bh, _ = _random_dd(rng, (9, 4))
    zero_a, zero_b = np.zeros_like(Ah), np.zeros_like(Bh)
    Ch = np.empty((6, 4))
    Cl = np.empty((6, 4))
    _kernels.product(Ah, zero_a, Bh, zero_b, Ch, Cl, False)
    exact = _exact_product(Ah, zero_a, Bh, zero_b)
    u = Fraction(1, 2**53)
    for i in range(6):
        for j in range(4):
            if exact[i][j]:
                assert abs(Fraction(Ch[i, j]) - exact[i][j]) / exact[i][j] <= 9 * u / (1 - 9 * u)
            assert Cl[i, j] == 0.0


def test_ln2_parts():
    # the three parts of ln 2 add up to ln 2 within 2^-160 (mpmath at 60 digits)
    import mpmath

    with mpmath.workdps(60):
        parts = sum(mpmath.mpf(x) for x in _kernels._LN2)
        assert abs(parts - mpmath.log(2)) < mpmath.mpf(2) ** -160


@pytest.mark.parametrize("seed", range(4))
def test_dd_exp_against_mpmath(seed):
    # reference: mpmath exp at 50 digits of the exact double-double argument; the factor
    # exp(-sigma t / 2^j) of the engine needs about 2^-104 relative
    import mpmath

    rng = np.random.default_rng(seed)
    xs = np.r_[-(10.0 ** rng.uniform(-20, 2.5, 200)), rng.uniform(-1, 1, 50), 0.0, -1e-300]
    with mpmath.workdps(50):
        for x in xs:
            xl = x * rng.uniform(-1, 1) * 2.0**-54
            h, lo = _kernels.dd_exp(x, xl)
            ref = mpmath.exp(mpmath.mpf(x) + mpmath.mpf(xl))
            err = abs(mpmath.mpf(h) + mpmath.mpf(lo) - ref) / ref
            assert err <= mpmath.mpf(2) ** -103, (x, float(err))


def test_on_disk_is_silent_when_the_cache_layout_is_unknown():
    # a future numba without these internals: the first-use note is simply not printed
    assert _kernels.on_disk(object()) is True


# --------------------------------------------------------------------------
# the engine's outputs on fixed inputs, bit for bit
# --------------------------------------------------------------------------

REFERENCES = Path(__file__).resolve().parent / "data" / "kernel_references.npz"
#: the arguments of _sweep_kernels.summarise_members, in order
SWEEP_ARGUMENTS = ("K", "q_low", "f", "has_feed", "c0", "scale", "t_hi", "mx", "hl", "n_seg",
                   "tmax", "cmax", "half", "status")  # fmt: skip


def _cases(data, prefix):
    return sorted({k.split("/")[2] for k in data if k.startswith(prefix)})


def _has_negative_offdiagonal(A) -> bool:
    """Whether the engine's check refuses the stack ``A`` for a negative off-diagonal entry
    (a compiled kernel until the check became a view of the off-diagonal entries)."""
    from kinetics.engine import checks
    from kinetics.errors import RateMatrixError

    try:
        checks.offdiagonal_nonnegative(A)
    except RateMatrixError:
        return True
    return False


def engine_outputs(data) -> dict[str, np.ndarray]:
    """Outputs of the kernels for the stored inputs ``data`` (keys ``in/...``).

    The same function writes the references (``tests/data/make_kernel_references.py``).
    """
    from kinetics import _sweep_kernels

    out: dict[str, np.ndarray] = {}
    tiny = float(data["in/tiny"])
    for name in _cases(data, "in/exp/"):
        key = f"in/exp/{name}/"
        A, Al, t = data[key + "A"], data[key + "Al"], data[key + "t"]
        j, s, r, m = (int(x) for x in data[key + "plan"])
        b, n, _ = A.shape
        sigma, sigma_lo, beta = np.empty(b), np.empty(b), np.empty(b)
        _kernels.shift_and_norm(A, Al, t, sigma, sigma_lo, beta)
        Fh, Fl, Y = np.empty_like(A), np.empty_like(A), np.empty_like(A)
        mats = np.empty((6, n, n))
        ratio = np.empty(b)
        _kernels.exponentials(
            A, Al, t, sigma, sigma_lo, j, s, r, data[key + "ih"], data[key + "il"],
            np.bool_(data[key + "dd"]), Fh, Fl, Y, np.empty((2, s + 1, n, n)), mats,
            m + 1, math.exp(-math.lgamma(m + 2)), tiny, ratio,
        )  # fmt: skip
        vh = np.ascontiguousarray(Fh[:, :, :1][:, ::-1])
        oh, ol = np.empty(vh.shape), np.empty(vh.shape)
        _kernels.apply(Fh, Fl, vh, vh * 2.0**-60, np.full(b, bool(data[key + "dd"])), oh, ol)
        results = {"sigma": sigma, "sigma_lo": sigma_lo, "beta": beta, "Fh": Fh, "Fl": Fl,
                   "Y": Y, "ratio": ratio, "oh": oh, "ol": ol}  # fmt: skip
        for label, x in results.items():
            out[f"out/exp/{name}/{label}"] = x
        out[f"out/exp/{name}/negative"] = np.array(_has_negative_offdiagonal(A))
        pairs = [(float(e), float(g)) for e, g in zip(beta, sigma, strict=True)]
        squared = [_kernels.squared_bound(e, g) for e, g in pairs]
        assert squared == [_kernels.squared_bound.py_func(e, g) for e, g in pairs]
        out[f"out/exp/{name}/squared"] = np.array(squared)
    for name in _cases(data, "in/grid/"):
        key = f"in/grid/{name}/"
        Fh, Fl = out[f"out/exp/{name}/Fh"], out[f"out/exp/{name}/Fl"]
        columns, skip, row0 = (int(x) for x in data[key + "shape"])
        times = data[key + "times"]
        b, N, _ = Fh.shape
        p = times.size
        X = np.zeros((b, p, N))
        bound = np.zeros((b, p))
        residual = np.zeros(p)
        x0h, x0l = data[key + "x0h"], data[key + "x0l"]
        _kernels.grid(
            Fh, Fl, x0h, x0l, columns, skip, data[key + "dd"], X, row0, data[key + "eps"],
            data[key + "gamma"], data[key + "start_bound"], bound,
        )  # fmt: skip
        _kernels.grid_residuals(times, row0, skip, times[row0], float(data[key + "dt"]), residual)
        A = data[f"in/exp/{name}/A"]
        _kernels.residual_corrections(A, X, residual, N - 1, 1e-15, tiny, bound)
        out[f"out/grid/{name}/X"] = X
        out[f"out/grid/{name}/bound"] = bound
        out[f"out/grid/{name}/residual"] = residual
    for name in ("regular", "irregular"):
        t = data[f"in/uniform/{name}"]
        out[f"out/uniform/{name}"] = np.array(_kernels.uniform_step(t, 4 * 2.0**-53 * t[-1]))
    for i in _cases(data, "in/sweep/"):
        args = [data[f"in/sweep/{i}/{name}"].copy() for name in SWEEP_ARGUMENTS]
        args[3], args[9] = bool(args[3]), int(args[9])
        _sweep_kernels.summarise_members(*args)
        for label, x in zip(("tmax", "cmax", "half", "status"), args[10:], strict=True):
            out[f"out/sweep/{i}/{label}"] = x
    return out


def test_engine_outputs_are_bit_identical_to_stored_values():
    # the kernels' own earlier outputs (tests/data/make_kernel_references.py): a change of
    # the compiled code (structure, inlining, signatures) must not change a single bit
    stored = np.load(REFERENCES)
    data = {k: stored[k] for k in stored.files}
    got = engine_outputs(data)
    expected = sorted(k for k in data if k.startswith("out/"))
    assert sorted(got) == expected
    for key in expected:
        a, b = np.asarray(got[key]), data[key]
        assert a.shape == b.shape, key
        assert a.dtype == b.dtype, key
        assert a.tobytes() == b.tobytes(), key
