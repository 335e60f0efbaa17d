"""Sweeps: --vary/--spread syntax, grid layout, batched evaluation, chunk store, CLI.

The numerical checks here compare every sweep row with an independent single-set
computation (:func:`kinetics.solve` and :func:`kinetics.analysis.summarise` on the
scheme with the row's parameters); closed forms and scipy's integrators are in
``test_reference_sweep.py``.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

import kinetics
from kinetics.analysis import summarise
from kinetics.cli import main
from kinetics.errors import (
    ConcentrationError,
    ConstantError,
    ExpressionError,
    ParameterSpecError,
    RateMatrixError,
    SettingError,
    SpeciesError,
    SweepStoreError,
    TemperatureError,
    TimesError,
)
from kinetics.ratematrix import dense_rate_matrix, step_rates
from kinetics.sweep import (
    chunk_result,
    curves_frame,
    curves_long_frame,
    make_plan,
    monte_carlo,
    parse_spread,
    parse_vary,
    set_inputs,
    set_matrices,
    sweep,
)
from kinetics.sweep.spec import SPREAD_HELP, VARY_HELP
from kinetics.sweep.store import ChunkStore, run_sweep

CONSECUTIVE = """\
title: test chain
A -> B      k1 = 0.12 1/min
B -> C      k2 = 0.045 min-1
C -> D      k3 = 2.0e-5 s-1
start A = 0.80 mol/L
"""

ARRHENIUS = """\
A -> B      k = arrhenius(A = 1.0e12 1/s, Ea = 83.144 kJ/mol)
temperature = 25 degC
start A = 1 mol/L
"""

PSEUDO = """\
P + W -> M1     k_hyd = 2.5e-4 M-1 d-1
P -> M2         k_ph = 0.021 d-1
M1 -> CO2       k_m1 = 0.008 d-1
M2 -> CO2       k_m2 = 0.0035 d-1
excess W = 55.5 mol/L
start P = 12.0 umol/L
"""

FED = """\
S -> X                ks = 0.30 h-1
X <=> Y               kxy = 0.9 h-1, kyx = 0.4 h-1
Y -> P                kp = 0.05 h-1
feed S = 0.02 mol/L/h
start S = 0.10 mol/L
"""

REVERSIBLE = """\
CIS <=> TRANS     kf, kr
kf = arrhenius(A = 4.0e10 1/s, Ea = 88 kJ/mol)
kr = arrhenius(A = 1.5e10 1/s, Ea = 92 kJ/mol)
temperature = 45 degC
start CIS = 250 mmol/L
"""

QUANTITIES = ("half_life", "t_max", "c_max", "limit")


@pytest.fixture
def chain():
    return kinetics.parse(CONSECUTIVE)


# ---------------------------------------------------------------------------------------
# --vary syntax
# ---------------------------------------------------------------------------------------


def test_log_range_in_the_files_unit(chain):
    p = parse_vary(chain, "k2=0.01:1:5:log")
    # log spacing: x_j = lo (hi/lo)^(j/(N-1)) (definition of log spacing, no source needed)
    np.testing.assert_allclose(p.values, [0.01, 10**-1.5, 0.1, 10**-0.5, 1.0], rtol=1e-15)
    assert p.unit == "min-1"  # the unit k2 is written in
    assert p.column == "k2 [min-1]"
    np.testing.assert_allclose(p.internal, p.values / 60.0, rtol=1e-15, atol=0)  # 1/min in 1/s


def test_linear_range_list_and_units(chain):
    p = parse_vary(chain, "k1=0.1:0.3:3")
    np.testing.assert_allclose(p.values, [0.1, 0.2, 0.3], rtol=1e-15)
    q = parse_vary(chain, "k1=0.1,0.2,0.5")
    np.testing.assert_array_equal(q.values, [0.1, 0.2, 0.5])
    assert q.spacing == "list"
    r = parse_vary(chain, "k1=2,4 1/h")
    assert r.column == "k1 [1/h]"
    np.testing.assert_allclose(r.internal, [2 / 3600, 4 / 3600], rtol=1e-15, atol=0)
    s = parse_vary(chain, "k1=0.002:1/s")
    np.testing.assert_allclose(s.internal, [0.002], rtol=1e-15, atol=0)
    t = parse_vary(chain, "start:A=100:500:3:mmol/L")
    assert t.column == "start A [mmol/L]"
    np.testing.assert_allclose(t.internal, [0.1, 0.3, 0.5], rtol=1e-15, atol=0)


def test_temperature_and_arrhenius_parameters():
    s = kinetics.parse(REVERSIBLE)
    t = parse_vary(s, "temperature=20:80:13:degC")
    assert t.unit == "degC"
    assert t.column == "temperature [degC]"
    # 0 degC = 273.15 K exactly (SI definition of the degree Celsius)
    np.testing.assert_allclose(t.internal, np.linspace(20, 80, 13) + 273.15, rtol=1e-15)
    t2 = parse_vary(s, "temperature=300,310")
    assert t2.unit == "degC"  # the unit of the file's temperature line
    e = parse_vary(s, "kf.Ea=80:100:5:kJ/mol")
    np.testing.assert_allclose(e.internal, [80e3, 85e3, 90e3, 95e3, 100e3], rtol=1e-15)
    e2 = parse_vary(s, "kf.Ea=80,90")
    assert e2.unit == "kJ/mol"
    a = parse_vary(s, "kr.A=1e9,1e10")
    assert a.column == "kr.A [1/s]"


@pytest.mark.parametrize(
    ("spec", "error", "problem", "hint"),
    [
        (
            "k9=0.1:1:3",
            ConstantError,
            ": 'k9' is not a rate constant or parameter of the scheme",
            "parameters are k1, k2, k3, temperature, start:<species>, excess:<species>",
        ),
        ("k1", ParameterSpecError, " has no '='", VARY_HELP),
        ("k1=", ParameterSpecError, " needs a name and values", VARY_HELP),
        ("k1=0.1:1:3:log:1/min:extra", ParameterSpecError, ": unexpected field 'extra'", VARY_HELP),
        ("k1=1:2:3:4:5", ParameterSpecError, ": unexpected field '5'", VARY_HELP),
        (
            "k1=0:1:3:log",
            ParameterSpecError,
            ": log spacing needs positive ends",
            "use linear spacing or LO > 0",
        ),
        (
            "k1=0.1:1:0",
            ParameterSpecError,
            ": the number of values must be a whole number >= 1, not '0'",
            VARY_HELP,
        ),
        (
            "k1=0.1:1:2.5",
            ParameterSpecError,
            ": the number of values '2.5' is not a whole number",
            VARY_HELP,
        ),
        (
            "k1=1:2:2000000",
            ParameterSpecError,
            ": 2,000,000 values on one axis are too many (at most 1,000,000)",
            "use fewer values",
        ),
        (
            "k1=0.1:1:1",
            ParameterSpecError,
            ": a range from 0.1 to 1 needs at least 2 values",
            VARY_HELP,
        ),
        ("k1=a,b", ParameterSpecError, ": 'a' is not a number", VARY_HELP),
        (
            "k1=1,2:1/s:1/min",
            ParameterSpecError,
            " is neither a range LO:HI:N nor a list",
            VARY_HELP,
        ),
        ("k1=1,2 1/s:1/min", ParameterSpecError, " gives two units", VARY_HELP),
        (
            "k1=0.1:1:3:meter",
            ConstantError,
            ": 'meter' does not have the dimension of '1/min', the unit of k1 in the file",
            "write the values in 1/min or leave out the unit",
        ),
        ("k1=0.1:1:3:bananas", ConstantError, ": 'bananas' is not a unit", VARY_HELP),
        (
            "k1=1e400,2",
            ConstantError,
            ": 1e400 is beyond the range of numbers (1.8e308)",
            "give finite values within the working range (README, Limits of the method)",
        ),
        ("k1=-1,2", ConstantError, ": a rate constant is negative", "give values >= 0"),
        (
            "start:A=-1,2",
            ConcentrationError,
            ": a start concentration is negative",
            "give values >= 0",
        ),
        (
            "temperature=20:80:3:degC",
            TemperatureError,
            ": the scheme has no Arrhenius constant, so the temperature changes nothing",
            "define a constant as k = arrhenius(A = ..., Ea = ...) to sweep temperatures",
        ),
        (
            "start:Z=1,2",
            SpeciesError,
            ": 'Z' is not a species of the scheme",
            "the species are A, B, C, D",
        ),
        (
            "excess:A=1,2",
            SpeciesError,
            ": 'A' is not a species held in excess",
            "the scheme declares no species in excess",
        ),
        (
            "k1.Ea=80,90",
            ConstantError,
            ": k1 is given as a number, not by the Arrhenius law, so it has no Ea",
            "vary k1 itself, e.g. k1=0.1:1:10:log",
        ),
    ],
)
def test_bad_vary_is_one_clear_sentence(chain, spec, error, problem, hint):
    # each message starts with the place of the mistake (the option and what was written)
    with pytest.raises(error) as info:
        parse_vary(chain, spec)
    place = f"--vary {spec!r}"
    assert str(info.value) == f"{place}{problem}; {hint}"
    assert "\n" not in str(info.value)


def test_bad_arrhenius_specs():
    s = kinetics.parse(REVERSIBLE)
    for spec, error, words in [
        ("kf=1,2", ConstantError, "follows the Arrhenius law"),
        ("temperature=-300:20:3:degC", TemperatureError, "absolute zero"),
        ("kf.Ea=80:90:2:K", ConstantError, "not a molar energy"),
        ("temperature=1,2:kJ/mol", TemperatureError, "not a temperature unit"),
    ]:
        with pytest.raises(error, match=words):
            parse_vary(s, spec)


@pytest.mark.parametrize(
    ("spec", "error", "words"),
    [
        (
            "k1=15",
            ParameterSpecError,
            ": the spread of k1 must be a percentage (lognormal); write e.g. k1=15%",
        ),
        (
            "k1=-5%",
            ParameterSpecError,
            f": the spread must be a positive percentage; {SPREAD_HELP}",
        ),
        ("k1", ParameterSpecError, f" has no '='; {SPREAD_HELP}"),
        ("k1=", ParameterSpecError, f" needs a name and a spread; {SPREAD_HELP}"),
        (
            "k7=5%",
            ConstantError,
            ": 'k7' is not a rate constant or parameter of the scheme; parameters are k1, k2, "
            "k3, temperature, start:<species>, excess:<species>",
        ),
    ],
)
def test_bad_spread(chain, spec, error, words):
    with pytest.raises(error) as info:
        parse_spread(chain, spec)
    assert str(info.value) == f"--spread {spec!r}{words}"


def test_spread_definitions():
    s = kinetics.parse(REVERSIBLE)
    sp = parse_spread(s, "kf.A=15%")
    assert sp.distribution == "lognormal"
    assert sp.sigma == pytest.approx(math.log(1.15), rel=1e-15)  # geometric SD 1.15
    st = parse_spread(s, "temperature=2K")
    assert (st.distribution, st.sigma, st.relative) == ("normal", 2.0, False)
    assert parse_spread(s, "temperature=1.5").sigma == 1.5  # degC difference = K
    se = parse_spread(s, "kf.Ea=2kJ/mol")
    assert se.sigma == pytest.approx(2000.0, rel=1e-15)
    with pytest.raises(ParameterSpecError) as info:
        parse_spread(s, "temperature=100K")
    assert str(info.value) == (
        "--spread 'temperature=100K': a standard deviation of 100 K is too wide; it would give "
        "temperatures near or below 0 K"
    )


@pytest.mark.parametrize(
    ("spec", "error", "message"),
    [
        ("temperature=30%", ParameterSpecError, ": a spread of 30 % is too wide; use below 25 %"),
        (
            "temperature=abc",
            ParameterSpecError,
            f": 'abc' is not a number with a unit; {SPREAD_HELP}",
        ),
        (
            "temperature=0K",
            ParameterSpecError,
            f": the standard deviation must be positive; {SPREAD_HELP}",
        ),
        ("temperature=2kg", TemperatureError, ": 'kg' is not a temperature unit; use K or degC"),
        ("kf.Ea=2K", ConstantError, ": 'K' is not a molar energy; write Ea in kJ/mol or J/mol"),
    ],
)
def test_bad_absolute_spread(spec, error, message):
    with pytest.raises(error) as info:
        parse_spread(kinetics.parse(REVERSIBLE), spec)
    assert str(info.value) == f"--spread {spec!r}{message}"


def test_plan_checks(chain):
    t = np.linspace(0, 3600, 5)
    with pytest.raises(ParameterSpecError) as info:
        make_plan(chain, ["k1=0.1,0.2", "k1=0.3,0.4"], t)
    assert (
        str(info.value)
        == "k1 is varied twice; give each parameter once, in either --vary or --spread"
    )
    with pytest.raises(SettingError) as info:
        make_plan(chain, [], t, spread=["k1=10%"])
    assert str(info.value) == "--spread needs --samples; e.g. --samples 1000 --spread k1=15%"
    with pytest.raises(SettingError) as info:
        make_plan(chain, [], t, samples=10)
    assert str(info.value) == (
        "--samples needs at least one --spread; e.g. --samples 1000 --spread k1=15%"
    )
    with pytest.raises(SettingError) as info:
        make_plan(chain, [], t, samples=10, spread=["k1=10%"], seed=-1)
    assert str(info.value) == "--seed must be a whole number >= 0, not -1; e.g. 1"
    with pytest.raises(SettingError) as info:
        make_plan(chain, [], t, chunk_size=0)
    assert str(info.value) == "the chunk size must be a whole number >= 1, not 0; e.g. 2000"
    with pytest.raises(SettingError) as info:
        make_plan(chain, [], t, precision="quad")
    assert str(info.value) == "unknown precision 'quad'; use 'auto', 'double' or 'double-double'"
    with pytest.raises(SettingError) as info:
        make_plan(chain, [], t, summary_method="guess")
    assert str(info.value) == "unknown summary method 'guess'; use batch or reference"
    with pytest.raises(TimesError) as info:
        make_plan(chain, [], [0.0])
    assert str(info.value) == "the time grid has no time after 0; give a positive end time"


# ---------------------------------------------------------------------------------------
# Grid layout and evaluation
# ---------------------------------------------------------------------------------------


def test_grid_is_cartesian_in_c_order(chain):
    plan = make_plan(chain, ["k1=0.1,0.2", "k2=0.01:0.03:3"], [0.0, 600.0], chunk_size=4)
    assert plan.n_sets == 6
    assert plan.n_chunks == 2
    assert plan.chunk_bounds(1) == (4, 6)
    display, _ = plan.set_values(0, 6)
    np.testing.assert_allclose(
        display,
        [[0.1, 0.01], [0.1, 0.02], [0.1, 0.03], [0.2, 0.01], [0.2, 0.02], [0.2, 0.03]],
        rtol=1e-15,
    )
    table = sweep(chain, ["k1=0.1,0.2", "k2=0.01:0.03:3"], [0.0, 600.0], time_unit="min")
    assert list(table.columns[:2]) == ["k1 [1/min]", "k2 [min-1]"]
    assert list(table.columns[2:]) == [
        "half_life A [min]",
        "t_max B [min]",
        "c_max B [mol/L]",
        "t_max C [min]",
        "c_max C [mol/L]",
        "limit A [mol/L]",
        "limit B [mol/L]",
        "limit C [mol/L]",
        "limit D [mol/L]",
    ]
    assert len(table) == 6


def _single(scheme, plan, i):
    """K, c0 and feed of set i computed the ordinary way (one set, rational rates)."""
    inp = set_inputs(plan, i)
    rates = step_rates(
        scheme, constants=inp["constants"], temperature=inp["temperature"], excess=inp["excess"]
    )
    K = dense_rate_matrix(scheme, rates)
    s2 = scheme.with_values(initial=inp["initial"])
    feed = s2.feed_vector if s2.feed else None
    return K, s2.initial_vector, feed, inp


def _assert_rows_match_single_sets(scheme, vary, until, rtol=1e-9):
    times = np.linspace(0.0, until, 21)
    plan = make_plan(scheme, vary, times, chunk_size=7)
    result = chunk_result(plan, 0, plan.n_sets, curves=True)
    names = scheme.species_names
    for i in range(plan.n_sets):
        K, c0, feed, inp = _single(scheme, plan, i)
        ref = summarise(K, c0, names, feed=feed, t_window=until)
        for j, col in enumerate(plan.columns):
            want = getattr(ref[col.species], col.quantity)
            got = result.summary[i, j]
            if want is None:
                assert math.isnan(got), (i, col.header, got)
            else:
                assert got == pytest.approx(want, rel=rtol, abs=1e-300), (i, col.header)
        if not inp["excess"]:
            single = kinetics.solve(
                scheme.with_values(
                    constants=inp["constants"],
                    temperature=inp["temperature"],
                    initial=inp["initial"],
                ),
                times,
            )
            np.testing.assert_allclose(
                result.curves[i], single.concentrations, rtol=1e-11, atol=1e-15 * c0.max()
            )
    return plan, result


def test_rows_equal_single_solves_chain(chain):
    _plan, result = _assert_rows_match_single_sets(
        chain, ["k2=0.01:1:6:log", "start:A=0.5,1.0"], 3 * 3600.0
    )
    assert not np.isnan(result.summary).all()


def test_rows_equal_single_solves_excess_and_pseudo_first_order():
    s = kinetics.parse(PSEUDO, strict_balance=False)
    _assert_rows_match_single_sets(s, ["excess:W=20,55.5", "k_ph=0.01:0.04:3"], 400 * 86400.0)


def test_rows_equal_single_solves_feed_and_reversible():
    s = kinetics.parse(FED)
    plan, result = _assert_rows_match_single_sets(s, ["ks=0.1:1:4:log", "kyx=0.2,0.8"], 48 * 3600)
    col = plan.summary_columns.index("limit P [mol/L]")
    assert np.isnan(result.summary[:, col]).all()  # fed product without outlet: unbounded


def test_rows_equal_single_solves_arrhenius():
    s = kinetics.parse(REVERSIBLE)
    _assert_rows_match_single_sets(
        s, ["temperature=20:80:4:degC", "kf.Ea=85:90:3:kJ/mol"], 20 * 3600.0
    )


def test_results_do_not_depend_on_chunking(chain):
    times = np.linspace(0, 7200, 11)
    a = make_plan(chain, ["k2=0.005:2:40:log", "k1=0.06,0.12"], times, chunk_size=1000)
    b = make_plan(chain, ["k2=0.005:2:40:log", "k1=0.06,0.12"], times, chunk_size=9)
    ra = chunk_result(a, 0, a.n_sets, curves=True)
    parts = [chunk_result(b, *b.chunk_bounds(k), curves=True) for k in range(b.n_chunks)]
    np.testing.assert_array_equal(ra.summary, np.concatenate([p.summary for p in parts]))
    np.testing.assert_array_equal(ra.curves, np.concatenate([p.curves for p in parts]))


def test_curves_labelled_array_and_long_format(chain):
    # issue 11 changed this contract: curves=True gives a labelled array (it was the long
    # table, which curves_long_frame now makes from it, with the same columns)
    table, curves = sweep(chain, ["k1=0.1,0.2"], [0.0, 60.0, 120.0], time_unit="min", curves=True)
    assert curves.dims == ("set", "time", "species")
    assert curves.shape == (2, 3, 4)
    assert curves.attrs["units"] == "mol/L"
    assert list(curves.coords["species"].values) == ["A", "B", "C", "D"]
    assert curves.coords["time"].attrs["units"] == "min"
    np.testing.assert_array_equal(curves.coords["time"].values, [0.0, 1.0, 2.0])
    np.testing.assert_array_equal(curves.coords["k1"].values, [0.1, 0.2])
    assert curves.coords["k1"].attrs["units"] == "1/min"
    np.testing.assert_array_equal(
        curves.coords["error_bound"].values, table["relative error bound"].to_numpy()
    )
    # first-order decay A0 exp(-k1 t) (textbook closed form), k1 = 0.2 1/min
    np.testing.assert_allclose(
        curves.sel(set=1, species="A").values,
        0.8 * np.exp(-0.2 * np.array([0.0, 1.0, 2.0])),
        rtol=1e-13,
    )
    long = curves_long_frame(curves)
    assert list(long.columns) == [
        "set",
        "k1 [1/min]",
        "time [min]",
        "species",
        "concentration [mol/L]",
    ]
    assert len(long) == 2 * 3 * 4
    first = long[(long["set"] == 1) & (long["species"] == "A")]
    np.testing.assert_array_equal(
        first["concentration [mol/L]"], curves.sel(set=1, species="A").values
    )
    # the same table the command writes chunk by chunk
    plan = make_plan(chain, ["k1=0.1,0.2"], [0.0, 60.0, 120.0], time_unit="min")
    part = chunk_result(plan, 0, 2, curves=True)
    pd.testing.assert_frame_equal(long, curves_frame(plan, part))


# ---------------------------------------------------------------------------------------
# Monte Carlo
# ---------------------------------------------------------------------------------------


def test_samples_do_not_depend_on_chunks_and_follow_the_seed(chain):
    t = np.linspace(0, 3600, 5)
    a = make_plan(chain, [], t, samples=50, spread=["k1=15%", "k2=5%"], seed=3, chunk_size=50)
    b = make_plan(chain, [], t, samples=50, spread=["k1=15%", "k2=5%"], seed=3, chunk_size=7)
    c = make_plan(chain, [], t, samples=50, spread=["k1=15%", "k2=5%"], seed=4, chunk_size=50)
    da, _ = a.set_values(0, 50)
    db = np.concatenate([b.set_values(*b.chunk_bounds(k))[0] for k in range(b.n_chunks)])
    np.testing.assert_array_equal(da, db)
    assert not np.array_equal(da, c.set_values(0, 50)[0])
    # the median of k1 is the file's value: 0.12 1/min (lognormal median = x0)
    assert np.median(da[:, 0]) == pytest.approx(0.12, rel=0.05)


def test_monte_carlo_bands_per_grid_point(chain):
    samples, bands = monte_carlo(
        chain, ["k1=10%"], 200, np.linspace(0, 3600, 5), seed=1, grid=["k2=0.02,0.04"]
    )
    assert len(samples) == 400
    assert len(bands) == 2
    assert list(bands.columns[:2]) == ["k2 [min-1]", "samples"]
    lo, mid, hi = (bands[f"half_life A p{p} [s]"] for p in ("2.5", "50", "97.5"))
    assert (lo < mid).all()
    assert (mid < hi).all()
    # common random numbers and a half-life that depends only on k1: equal bands
    assert lo.iloc[0] == lo.iloc[1]


# ---------------------------------------------------------------------------------------
# Chunk store, resume, output formats
# ---------------------------------------------------------------------------------------


def test_outputs_read_back_equal_the_api(chain, tmp_path):
    vary = ["k2=0.01:1:7:log", "start:A=0,0.8"]  # start 0: empty half-life cells
    times = np.linspace(0, 3 * 3600, 31)
    # with curves both tables end in the certified bound of each set's curves (issue 11)
    want, _ = sweep(chain, vary, times, time_unit="h", chunk_size=5, curves=True)
    want = want.reset_index(drop=True)
    assert list(want.columns)[-1] == "relative error bound"
    assert (want["relative error bound"] <= 1e-9).all()  # plain double, CURVE_RTOL
    plan = make_plan(chain, vary, times, time_unit="h", chunk_size=5)
    paths = [tmp_path / "s.csv", tmp_path / "s.parquet", tmp_path / "s.json"]
    report = run_sweep(plan, paths, curves_path=tmp_path / "c.parquet")
    assert report.computed == plan.n_chunks
    assert report.rows == 14
    assert not (tmp_path / "s.csv.chunks").exists()
    got_csv = pd.read_csv(paths[0])
    pd.testing.assert_frame_equal(got_csv, want, check_exact=True)
    assert got_csv["half_life A [h]"].isna().sum() == 7
    pd.testing.assert_frame_equal(pd.read_parquet(paths[1]), want, check_exact=True)
    doc = json.loads(paths[2].read_text())
    assert doc["columns"] == list(want.columns)
    assert doc["time_unit"] == "h"
    got_json = pd.DataFrame(doc["rows"], columns=doc["columns"]).astype(float)
    pd.testing.assert_frame_equal(got_json, want, check_exact=True)
    curves = pd.read_parquet(tmp_path / "c.parquet")
    assert len(curves) == 14 * 31 * 4


def test_resume_computes_only_missing_chunks(chain, tmp_path):
    vary = ["k2=0.01:1:30:log"]
    times = np.linspace(0, 3600, 11)
    plan = make_plan(chain, vary, times, chunk_size=4)
    out = tmp_path / "r.csv"
    calls = []

    from kinetics.sweep import store as store_mod

    real = store_mod.ChunkStore.write

    def failing_write(self, result):
        if len(calls) == 3:
            raise KeyboardInterrupt
        calls.append(result.index)
        real(self, result)

    store_mod.ChunkStore.write = failing_write
    try:
        with pytest.raises(KeyboardInterrupt):
            run_sweep(plan, [out])
    finally:
        store_mod.ChunkStore.write = real
    assert not out.exists()  # no partial table
    assert len(list((tmp_path / "r.csv.chunks").glob("chunk_*.npz"))) == 3
    report = run_sweep(plan, [out], resume=True)
    assert (report.reused, report.computed) == (3, plan.n_chunks - 3)
    fresh = tmp_path / "fresh.csv"
    run_sweep(plan, [fresh])
    assert out.read_text() == fresh.read_text()


def test_resume_refuses_another_definition(chain, tmp_path):
    times = np.linspace(0, 3600, 11)
    plan = make_plan(chain, ["k2=0.01:1:6:log"], times, chunk_size=2)
    store = ChunkStore(tmp_path / "x.csv.chunks", plan, curves=False, resume=False)
    store.write(chunk_result(plan, 0, 2, index=0))
    other = make_plan(chain, ["k2=0.01:1:7:log"], times, chunk_size=2)
    with pytest.raises(SweepStoreError) as info:
        ChunkStore(tmp_path / "x.csv.chunks", other, curves=False, resume=True)
    assert str(info.value) == (
        f"the chunks in {str(tmp_path / 'x.csv.chunks')!r} belong to a different sweep (other "
        "scheme, parameters, times, chunk size or options); run without --resume to start "
        "again, or repeat the original options"
    )
    # the same definition keeps its chunk
    again = ChunkStore(tmp_path / "x.csv.chunks", plan, curves=False, resume=True)
    assert again.done() == {0}


# ---------------------------------------------------------------------------------------
# Command line
# ---------------------------------------------------------------------------------------


@pytest.fixture
def chain_file(tmp_path):
    p = tmp_path / "chain.scheme"
    p.write_text(CONSECUTIVE, encoding="utf-8")
    return p


def test_cli_sweep_writes_table_and_plot(chain_file, tmp_path, capsys):
    out = tmp_path / "sweep.csv"
    png = tmp_path / "sweep.png"
    rc = main(
        [
            "sweep",
            str(chain_file),
            "--until",
            "3h",
            "--vary",
            "k2=0.01:1:5:log",
            "--vary",
            "k1=0.06,0.12",
            "--out",
            str(out),
            "--plot",
            "t_max:B",
            "--plot-out",
            str(png),
            "--no-caution",
        ]
    )
    assert rc == 0
    table = pd.read_csv(out)
    assert list(table.columns[:3]) == ["k2 [min-1]", "k1 [1/min]", "half_life A [h]"]
    assert len(table) == 10
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # consecutive first-order steps: t_max = ln(k1/k2)/(k1 - k2) (textbook closed form)
    k2, k1 = table["k2 [min-1]"], table["k1 [1/min]"]
    np.testing.assert_allclose(table["t_max B [h]"], np.log(k1 / k2) / (k1 - k2) / 60, rtol=1e-9)


def test_cli_prints_table_without_out(chain_file, capsys):
    rc = main(["sweep", str(chain_file), "--until", "1h", "--vary", "k1=0.1,0.2", "--no-caution"])
    assert rc == 0
    text = capsys.readouterr().out
    assert "k1 [1/min]" in text
    assert "t_max B [h]" in text


def test_cli_help_shows_syntax_and_example(capsys):
    assert main(["sweep", "--help"]) == 0
    text = capsys.readouterr().out
    assert "LO:HI:N[:log][:UNIT]" in text
    assert "kinetics sweep" in text
    assert "without a unit" in text
    assert "lognormal" in text


@pytest.mark.parametrize(
    "args",
    [
        ["--vary", "k9=1,2"],
        ["--vary", "k1=0.1:1:3:banana"],
        ["--vary", "k1=0.1,0.2", "--spread", "k2=15"],
        ["--vary", "k1=0.1,0.2", "--samples", "10"],
        ["--vary", "k1=0.1,0.2", "--plot", "t_max:B"],
        ["--vary", "k1=0.1,0.2", "--plot", "t_max:A", "--plot-out", "x.png"],
        ["--vary", "k1=0.1,0.2", "--out", "x.xlsx"],
        ["--vary", "k1=0.1,0.2", "--scheduler", "tcp://127.0.0.1:1"],
        ["--vary", "k1=0.1,0.2", "--resume"],
        ["--vary", "k1=0.1,0.2", "--engine", "gpu"],
    ],
)
def test_cli_user_mistakes_exit_2(chain_file, tmp_path, monkeypatch, capsys, args):
    monkeypatch.chdir(tmp_path)
    rc = main(["sweep", str(chain_file), "--until", "1h", "--no-caution", *args])
    assert rc == 2
    err = capsys.readouterr().err
    assert err.startswith("kinetics: ")
    assert "Traceback" not in err


@pytest.mark.slow
def test_killed_sweep_process_resumes_to_the_same_table(chain_file, tmp_path, capsys):
    import subprocess
    import sys
    import time

    out = tmp_path / "killed.csv"
    folder = tmp_path / "killed.csv.chunks"
    args = [
        "sweep",
        str(chain_file),
        "--until",
        "3h",
        "--vary",
        "k2=0.001:1:300:log",
        "--vary",
        "k1=0.06,0.12",
        "--chunk-size",
        "6",
        "--no-caution",
    ]
    n_chunks = 100
    proc = subprocess.Popen(
        [sys.executable, "-m", "kinetics", *args, "--out", str(out)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            if folder.is_dir() and len(list(folder.glob("chunk_*.npz"))) >= 3:
                break
            if proc.poll() is not None:
                break
            time.sleep(0.005)
    finally:
        proc.kill()
        proc.wait()
    before = {p.name: p.stat().st_mtime_ns for p in folder.glob("chunk_*.npz")}
    assert 3 <= len(before) < n_chunks, "the sweep was not interrupted halfway"
    assert not out.exists()
    capsys.readouterr()
    assert main([*args, "--out", str(out), "--resume", "--keep-chunks"]) == 0
    assert f"resumed: {len(before)} of {n_chunks} chunks" in capsys.readouterr().err
    for name, mtime in before.items():  # finished chunks were not computed again
        assert (folder / name).stat().st_mtime_ns == mtime
    fresh = tmp_path / "fresh.csv"
    assert main([*args, "--out", str(fresh)]) == 0
    assert out.read_text() == fresh.read_text()
    assert len(pd.read_csv(out)) == 600


def test_cli_monte_carlo_bands_samples_and_curve_bands(chain_file, tmp_path):
    bands, samples, curves, png = (tmp_path / n for n in ("b.csv", "s.parquet", "c.csv", "m.png"))
    rc = main(
        [
            "sweep", str(chain_file), "--until", "2h", "--points", "11",
            "--vary", "k2=0.02,0.04", "--samples", "150", "--spread", "k1=15%",
            "--seed", "9", "--chunk-size", "64", "--out", str(bands),
            "--samples-out", str(samples), "--curves", str(curves),
            "--plot", "t_max:B", "--plot-out", str(png), "--no-caution",
        ]
    )  # fmt: skip
    assert rc == 0
    b = pd.read_csv(bands)
    assert len(b) == 2
    assert list(b.columns[:5]) == [
        "k2 [min-1]", "samples", "half_life A p2.5 [h]", "half_life A p50 [h]",
        "half_life A p97.5 [h]",
    ]  # fmt: skip
    s = pd.read_parquet(samples)
    assert len(s) == 300
    assert list(s.columns[:2]) == ["k2 [min-1]", "k1 [1/min]"]
    # the bands are the sample percentiles of the sample rows (numpy's linear rule)
    first = s[s["k2 [min-1]"] == 0.02]["t_max B [h]"]
    assert b["t_max B p97.5 [h]"].iloc[0] == pytest.approx(np.percentile(first, 97.5), rel=1e-15)
    c = pd.read_csv(curves)
    assert len(c) == 2 * 11 * 4
    assert (c["concentration p2.5 [mol/L]"] <= c["concentration p97.5 [mol/L]"]).all()
    assert png.stat().st_size > 1000


def test_batched_summaries_equal_analysis_on_random_networks():
    """summarise_batch equals kinetics.analysis.summarise member by member (random
    branched networks with some reverse steps, a second start value, sometimes a feed)."""
    from kinetics.sweep_summary import summarise_batch

    rng = np.random.default_rng(20)
    checked = 0
    for _ in range(12):
        n = int(rng.integers(3, 8))
        b = 3
        K = np.zeros((b, n, n))
        for j in range(n):
            for i in range(n):
                if i != j and rng.random() < (0.45 if i > j else 0.1):
                    k = 10 ** rng.uniform(-3, 0, size=b)
                    K[:, i, j] += k
                    K[:, j, j] -= k
        c0 = np.zeros((b, n))
        c0[:, 0] = 1.0
        if rng.random() < 0.3:
            c0[:, int(rng.integers(1, n))] = rng.uniform(0.0, 0.5, size=b)
        feed = None
        if rng.random() < 0.2:
            feed = np.zeros(n)
            feed[0] = 0.01
        got = summarise_batch(K, c0, feed, t_window=1000.0)
        names = [f"s{i}" for i in range(n)]
        for m in range(b):
            ref = summarise(K[m], c0[m], names, feed=feed, t_window=1000.0)
            for i, name in enumerate(names):
                for q in QUANTITIES:
                    want = getattr(ref[name], q)
                    if want is None:
                        assert math.isnan(got[q][m, i]), (q, name)
                    else:
                        assert got[q][m, i] == pytest.approx(want, rel=1e-9, abs=1e-300)
                    checked += 1
    assert checked > 500


def test_batched_summaries_with_two_maxima_and_a_minimum(monkeypatch):
    """An intermediate fed twice, first fast and then late through a slow detour, has a
    maximum, a minimum and a second maximum; the compiled scan refines both maxima and
    keeps the higher one, as kinetics.analysis.summarise does, without the one-by-one
    route (the case is constructed here, the reference is analysis.summarise)."""
    import kinetics.sweep_summary as batch

    names = ["A", "B", "C", "D", "E"]
    # A -> B (kab), B -> C (0.5), D -> E (0.01), E -> B (0.01), 1/s; A and D start
    kab = np.array([1.0, 0.3, 2.0, 1.0])
    K = np.zeros((4, 5, 5))
    for m, k in enumerate(kab):
        for src, dst, rate in ((0, 1, k), (1, 2, 0.5), (3, 4, 0.01), (4, 1, 0.01)):
            K[m, dst, src] += rate
            K[m, src, src] -= rate
    c0 = np.zeros((4, 5))
    c0[:, 3] = 1.0
    c0[:, 0] = [1.0, 1.0, 1.0, 1e-3]  # the last member: the late maximum is the higher one
    used_general_route = []
    original = batch._reference
    monkeypatch.setattr(
        batch,
        "_reference",
        lambda *a: used_general_route.append(list(a[-1])) or original(*a),
    )
    got = batch.summarise_batch(K, c0, None, t_window=1000.0)
    assert used_general_route == []
    for m in range(4):
        ref = summarise(K[m], c0[m], names, t_window=1000.0)
        for i, name in enumerate(names):
            for q in QUANTITIES:
                want = getattr(ref[name], q)
                if want is None:
                    assert math.isnan(got[q][m, i]), (m, q, name)
                else:
                    assert got[q][m, i] == pytest.approx(want, rel=1e-9, abs=1e-300), (m, q, name)
    # B really has two maxima (analysis), and the global one is the early one, then the late
    from kinetics.analysis import intermediate_maxima

    assert len(intermediate_maxima(K[0], c0[0], 1)) == 2
    assert got["t_max"][0, 1] < 10.0
    assert got["t_max"][3, 1] > 50.0


# ---------------------------------------------------------------------------------------
# Exact inputs (issue 11): the rate matrices of the sets are those of the constants
# ---------------------------------------------------------------------------------------


def _same_pair(a, b):
    np.testing.assert_array_equal(a[0], b[0])
    np.testing.assert_array_equal(a[1], b[1])


def test_unvaried_steps_keep_the_schemes_exact_pairs(chain):
    plan = make_plan(chain, ["start:A=0.1,0.5,0.9"], [0.0, 600.0])
    K, K_low, _, _ = set_matrices(plan, 0, plan.n_sets)
    for i in range(plan.n_sets):
        _same_pair((K[i], K_low[i]), chain.rate_matrix_pair())


def test_the_files_own_values_reproduce_its_rate_matrix_bit_for_bit(chain):
    # a value given as text is the decimal written (0.045 min-1 = 0.00075 1/s exactly),
    # not the double nearest 0.045 divided by 60
    plan = make_plan(chain, ["k2=0.045", "k1=0.12:1/min"], [0.0, 600.0])
    K, K_low, _, _ = set_matrices(plan, 0, 1)
    _same_pair((K[0], K_low[0]), chain.rate_matrix_pair())
    s = kinetics.parse(REVERSIBLE)
    plan = make_plan(s, ["temperature=45", "kf.Ea=88:kJ/mol", "kr.A=1.5e10"], [0.0, 600.0])
    K, K_low, _, _ = set_matrices(plan, 0, 1)
    _same_pair((K[0], K_low[0]), s.rate_matrix_pair())


def test_varied_excess_concentrations_are_exact():
    from fractions import Fraction

    s = kinetics.parse(PSEUDO, strict_balance=False)
    plan = make_plan(s, ["excess:W=55.5,20.25:mol/L"], [0.0, 600.0])  # the file: umol/L
    rates = step_rates(s)  # order of the steps: hydrolysis first
    K, K_low, _, _ = set_matrices(plan, 0, 2)
    p = s.index["P"]
    for i, w in enumerate([Fraction("55.5"), Fraction("20.25")]):
        # k_hyd [W] in 1/s: 2.5e-4 M-1 d-1 / 86400 s/d * W mol/L (exact rational)
        exact = -(Fraction("2.5e-4") / 86400 * w + Fraction("0.021") / 86400)
        got = Fraction(K[i, p, p]) + Fraction(K_low[i, p, p])
        assert abs(got - exact) <= abs(exact) * Fraction(1, 2**100)
    assert rates[0] == K[0, s.index["M1"], p]


def test_batched_summaries_take_the_exact_pair():
    """With decimal constants (diagonals that no double holds) summarise_batch(K_low=...)
    equals kinetics.analysis.summarise of the same pair member by member."""
    from fractions import Fraction

    from kinetics._doubledouble import pair
    from kinetics.sweep_summary import summarise_batch

    rng = np.random.default_rng(5)
    for _ in range(6):
        n, b = int(rng.integers(3, 7)), 3
        K, Kl = np.zeros((b, n, n)), np.zeros((b, n, n))
        for m in range(b):
            diag = [Fraction(0)] * n
            for j in range(n):
                for i in range(n):
                    if i != j and rng.random() < (0.5 if i > j else 0.1):
                        k = Fraction(f"{rng.uniform(0.001, 1.0):.4f}")
                        K[m, i, j], Kl[m, i, j] = pair(k)
                        diag[j] -= k
            for j in range(n):
                K[m, j, j], Kl[m, j, j] = pair(diag[j])
        c0 = np.zeros((b, n))
        c0[:, 0] = 1.0
        got = summarise_batch(K, c0, t_window=1000.0, K_low=Kl)
        names = [f"s{i}" for i in range(n)]
        for m in range(b):
            ref = summarise(K[m], c0[m], names, t_window=1000.0, K_low=Kl[m])
            for i, name in enumerate(names):
                for q in QUANTITIES:
                    want = getattr(ref[name], q)
                    if want is None:
                        assert math.isnan(got[q][m, i]), (q, name)
                    else:
                        assert got[q][m, i] == pytest.approx(want, rel=1e-9, abs=1e-300)


def test_monte_carlo_bands_carry_the_worst_bound_of_their_samples(chain):
    from kinetics.sweep import percentile_bands, summary_frame

    t = np.linspace(0, 3600, 5)
    plan = make_plan(chain, ["k2=0.02,0.09"], t, samples=20, spread=["k1=15%"], chunk_size=40)
    result = chunk_result(plan, 0, plan.n_sets, curves=True)
    rows = summary_frame(plan, result)
    bands = percentile_bands(plan, rows)
    assert list(bands.columns)[-1] == "relative error bound"
    np.testing.assert_array_equal(
        bands["relative error bound"], result.bound.reshape(2, 20).max(axis=1)
    )
    assert "relative error bound" not in percentile_bands(plan, rows.iloc[:, :-1]).columns


def test_constants_defined_from_others_follow_the_varied_ones():
    # k2 = k1 / 3 follows k1 in every set: each row equals a solve of the scheme with
    # that k1 (Scheme.with_values, where the definitions are followed exactly)
    s = kinetics.parse("A -> B  k1 = 0.1 1/h\nB -> C  k2 = k1 / 3\nstart A = 1 mol/L\n")
    table = kinetics.sweep(s, {"k1": [0.5, 1.0]}, [0.0, 3600.0 * 20])
    for row, k1 in zip(table.itertuples(index=False), (0.5, 1.0), strict=True):
        one = kinetics.solve(s.with_values(constants={"k1": k1 / 3600}), [0.0, 72000.0])
        expected = one.summary("s")["B"]["t_max"]
        assert row[2] == pytest.approx(expected, rel=1e-12)


def test_temperature_laws_other_than_arrhenius_follow_the_temperature():
    # an eyring constant in a temperature sweep equals a solve at that temperature
    s = kinetics.parse(
        "API -> D  k1 = eyring(dH = 90 kJ/mol, dS = -20 J/(mol K))\n"
        "temperature = 25 degC\nstart API = 1 mol/L\n"
    )
    table = kinetics.sweep(s, {"temperature": [30.0, 40.0]}, [0.0, 3600.0])
    for row, celsius in zip(table.itertuples(index=False), (30.0, 40.0), strict=True):
        one = kinetics.solve(s.with_values(temperature=celsius + 273.15), [0.0, 3600.0])
        expected = one.summary("s")["API"]["half_life"]
        assert row[1] == pytest.approx(expected, rel=1e-12)


# -- named quantities (issue 15) ----------------------------------------------------------

GENERATOR = """\
t_p = 50 h
f = 87.6 %
P -> D  lam_d = f * ln(2) / t_p
P -> S  lam_s = (1 - f) * ln(2) / t_p
D -> G  half_life = 5 h
start P = 1 GBq
"""


def test_a_named_quantity_is_swept_and_what_follows_from_it_follows():
    # each row equals a solve of the scheme with that t_p (Scheme.with_values follows the
    # definitions and the start activity exactly): the constants and the start amount
    s = kinetics.parse(GENERATOR)
    times = [0.0, 200 * 3600.0]
    table = kinetics.sweep(s, ["t_p=40:60:5:h"], times)
    assert table.columns[0] == "t_p [h]"
    assert table["t_p [h]"].tolist() == [40.0, 45.0, 50.0, 55.0, 60.0]
    for row in table.itertuples(index=False):
        one = kinetics.solve(s.with_values(quantities={"t_p": row[0] * 3600}), times)
        summary = one.summary("s")
        assert row[2] == pytest.approx(summary["D"]["t_max"], rel=1e-12, abs=0)
        assert row[3] == pytest.approx(summary["D"]["c_max"], rel=1e-12, abs=0)
        # every atom of the start ends in S or G: the start amount followed t_p
        assert row[-2] + row[-1] == pytest.approx(one.concentrations[0, 0], rel=1e-12, abs=0)


def test_named_quantities_in_monte_carlo_either_way():
    s = kinetics.parse(GENERATOR)
    for spread in ("t_p=10%", "t_p=2h"):
        rows, _ = kinetics.monte_carlo(s, [spread], 8, [0.0, 3600.0 * 200])
        assert rows["t_p [h]"].std() > 0
        first = rows.iloc[0]
        one = kinetics.solve(
            s.with_values(quantities={"t_p": first["t_p [h]"] * 3600}), [0.0, 3600.0 * 200]
        )
        assert first["t_max D [s]"] == pytest.approx(
            one.summary("s")["D"]["t_max"], rel=1e-9, abs=0
        )


def test_a_set_outside_the_domain_of_a_definition_is_named():
    s = kinetics.parse(GENERATOR)
    with pytest.raises(ExpressionError) as info:
        kinetics.sweep(s, {"f": [50, 120]}, [0.0, 3600.0])
    assert str(info.value) == (
        "set 1 (f [%] = 120): rate constant lam_s = (1 - f) * ln(2) / t_p becomes negative "
        "(-7.70164e-07); give values that keep every rate constant at or above 0"
    )


def test_cli_sweep_of_a_named_quantity(tmp_path, capsys):
    path = tmp_path / "g.scheme"
    path.write_text(GENERATOR, encoding="utf-8")
    out = tmp_path / "s.csv"
    argv = ["sweep", str(path), "--vary", "t_p=40:60:5:h", "--until", "200h", "--out", str(out)]
    assert main([*argv, "--no-caution"]) == 0
    assert pd.read_csv(out)["t_p [h]"].tolist() == [40.0, 45.0, 50.0, 55.0, 60.0]


def test_a_sweep_in_activity_units_equals_solves_in_activity_units():
    # heights, limits and curves as activities with each set's decay constants: every row
    # equals Solution.in_activity of a solve with that t_p
    s = kinetics.parse(GENERATOR)
    times = [0.0, 100 * 3600.0]
    table, curves = kinetics.sweep(s, ["t_p=40,60"], times, curves=True, activity="MBq")
    assert "c_max D [MBq]" in table.columns
    assert curves.name == "activity"
    for k, row in enumerate(table.itertuples(index=False)):
        one = kinetics.solve(s.with_values(quantities={"t_p": row[0] * 3600}), times)
        active = one.in_activity("MBq")
        assert row[3] == pytest.approx(active.summary("s")["D"]["c_max"], rel=1e-12, abs=0)
        np.testing.assert_allclose(curves.values[k], active.concentrations, rtol=1e-12, atol=0)
    assert (table["limit G [MBq]"] == 0).all()
    assert np.signbit(table["limit G [MBq]"]).sum() == 0


def test_a_named_temperature_is_swept_in_degrees_celsius():
    # T_ref of a Q10 law: 20, 25, 30 degC = 293.15, 298.15, 303.15 K (SI brochure, 9th ed.,
    # 2.3.1); each row equals a solve with that T_ref, and the column keeps the degrees
    s = kinetics.parse(
        "T_ref = 25 degC\nA -> B  k = q10(0.1 1/h, T_ref, 2.5)\ntemperature = 30 degC\n"
        "start A = 1 mol/L\n"
    )
    table = kinetics.sweep(s, ["T_ref=20:30:3:degC"], [0.0, 36000.0])
    assert table["T_ref [degC]"].tolist() == [20.0, 25.0, 30.0]
    for celsius, half_life in zip((20, 25, 30), table["half_life A [s]"], strict=True):
        one = kinetics.solve(s.with_values(quantities={"T_ref": celsius + 273.15}), [0, 1.0])
        assert half_life == pytest.approx(one.summary("s")["A"]["half_life"], rel=1e-12, abs=0)


def test_library_settings_are_worded_for_the_python_api(chain, tmp_path):
    # the command line checks --engine and --scheduler itself (click choices, its own
    # messages); the library names its own arguments
    from kinetics.sweep import percentile_bands, run_chunks
    from kinetics.sweep.store import TableWriter
    from kinetics.sweep_summary import summarise_batch

    plan = make_plan(chain, ["k1=0.1,0.2"], [0.0, 60.0])
    cases = [
        (
            lambda: run_chunks(plan, [0], print, scheduler="tcp://127.0.0.1:9"),
            "a scheduler needs engine='dask'; pass engine='dask' or leave out scheduler",
        ),
        (
            lambda: run_chunks(plan, [0], print, engine="cloud"),
            "unknown engine 'cloud'; use engine='local' or engine='dask'",
        ),
        (
            lambda: run_chunks(plan, [0], print, threads=0),
            "the number of threads must be a whole number >= 1, not 0; e.g. 2",
        ),
        (
            lambda: percentile_bands(plan, sweep(chain, ["k1=0.1,0.2"], [0.0, 60.0])),
            "percentile bands need a Monte Carlo plan; make the plan with samples and a "
            "spread, e.g. monte_carlo(scheme, ['k1=15%'], 1000, times)",
        ),
        (
            lambda: curves_frame(plan, chunk_result(plan, 0, 1, index=0)),
            "this chunk was evaluated without curves; pass curves=True",
        ),
        (lambda: set_inputs(plan, 2), "set 2 does not exist; sets are 0 .. 1"),
        (lambda: plan.chunk_bounds(1), "chunk 1 does not exist; chunks are 0 .. 0"),
        (
            lambda: TableWriter(tmp_path / "t.txt"),
            f"the table file {str(tmp_path / 't.txt')!r} has an unknown extension; use .csv, "
            ".parquet or .json",
        ),
        (
            lambda: run_sweep(plan, []),
            "a sweep on disk needs an output file; give --out sweep.csv",
        ),
    ]
    for call, message in cases:
        with pytest.raises(SettingError) as info:
            call()
        assert str(info.value) == message
    with pytest.raises(RateMatrixError) as info:
        summarise_batch(np.zeros((2, 2)), np.zeros(2), None)
    assert str(info.value) == "summarise_batch needs K (b, n, n) and c0 (b, n); check the shapes"
    with pytest.raises(RateMatrixError) as info:
        summarise_batch(np.zeros((1, 2, 2)), np.zeros((1, 2)), None, K_low=np.zeros((2, 2)))
    assert str(info.value) == "summarise_batch needs K_low of the shape of K; check the shapes"


def test_a_path_that_is_no_chunk_folder_is_left_alone(chain, tmp_path):
    plan = make_plan(chain, ["k1=0.1,0.2"], [0.0, 60.0])
    afile = tmp_path / "x.chunks"
    afile.write_text("mine", encoding="utf-8")
    with pytest.raises(SweepStoreError) as info:
        ChunkStore(afile, plan, curves=False, resume=False)
    assert str(info.value) == (
        f"{str(afile)!r} exists and is not a chunk folder; remove it or choose another output name"
    )
    folder = tmp_path / "y.chunks"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(SweepStoreError) as info:
        ChunkStore(folder, plan, curves=False, resume=False)
    assert str(info.value) == (
        f"{str(folder)!r} is a folder but not the chunk folder of a sweep; remove it or choose "
        "another output name"
    )
    assert afile.read_text(encoding="utf-8") == "mine"
