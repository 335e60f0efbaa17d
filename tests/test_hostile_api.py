"""Hostile, extreme and mistaken inputs (issue 12): each class ends in one exact outcome.

Either a clean refusal (exit status 2 and the message, verbatim, on the command line; the
project's typed error, a subclass of the builtin it resembles, in the API) or a correct
result checked against a named closed form.

Closed forms used here:

* two-member Bateman solution (Bateman 1910; any physical-chemistry textbook, e.g. Atkins,
  "Physical Chemistry", consecutive first-order reactions): for P -> D -> E with constants
  k1, k2 and P(0) = P0,
  D(t) = P0 k1/(k2 - k1) (e^(-k1 t) - e^(-k2 t)), maximal at t = ln(k2/k1)/(k2 - k1) with
  D_max = P0 (k1/k2)^(k2/(k2 - k1));
* first-order half-life ln 2/k (same sources).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import kinetics
from kinetics.analysis import summarise_all
from kinetics.errors import (
    ArgumentTypeError,
    ConstantError,
    ParameterSpecError,
    SettingError,
    TableSizeError,
    TimesError,
    WorkingRangeError,
)
from kinetics.sweep import sweep

from conftest import run_cli

PAIR = "A -> B  k1 = 0.1 1/s\nB -> C  k2 = 0.05 1/s\nstart A = 1 mol/L\n"


@pytest.fixture
def pair(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "pair.scheme"
    path.write_text(PAIR, encoding="utf-8")
    return path


@pytest.fixture
def scheme():
    return kinetics.parse(PAIR)


def _stiff(ratio: float, k1: float = 1e-8) -> str:
    return f"P -> D  k1 = {k1!r} 1/s\nD -> E  k2 = {k1 * ratio!r} 1/s\nstart P = 1 mol/L\n"


def _bateman(k1: float, k2: float) -> tuple[float, float]:
    """t_max and D_max of the daughter of the two-member Bateman solution (P0 = 1)."""
    t_max = math.log(k2 / k1) / (k2 - k1)
    return t_max, (k1 / k2) ** (k2 / (k2 - k1))


# ---------------------------------------------------------------------------------------
# Very stiff schemes: every scheme the engine solves is summarised (ratios up to 1e25)


@pytest.mark.parametrize("ratio", [1e3, 1e8, 1e12, 1e15, 1e17, 1e21, 1e25])
def test_stiff_pair_summary_against_bateman(ratio):
    k1 = 1e-8
    k2 = k1 * ratio
    K = np.array([[-k1, 0, 0], [k1, -k2, 0], [0, k2, 0]])
    per, whole = summarise_all(K, [1.0, 0, 0], ["P", "D", "E"], t_window=5 / k1)
    t_max, c_max = _bateman(k1, k2)
    # the exponential itself loses about 1e-32 sigma t in double-double (README): the
    # parent's half-life and settling time are checked to that level, the daughter's
    # maximum (found in its own short time scale) to 1e-12.  Measured at ratio 1e25: P at
    # the settling time (sigma t = 4.6e25) is off by 1.0e-6 relative (certified bound
    # 3.2e-3), which moves the settling time by 1.05e-5 relative: hence 3e-30, not 1e-30
    level = max(1e-10, 3e-30 * ratio)
    assert per["D"].t_max == pytest.approx(t_max, rel=1e-12)
    assert per["D"].c_max == pytest.approx(c_max, rel=1e-12)
    assert per["P"].half_life == pytest.approx(math.log(2) / k1, rel=level)
    # 1 - E = P + D = 0.01 with e^(-k2 t) negligible: t = ln(100 k2/(k2 - k1))/k1
    settle = math.log(100 * k2 / (k2 - k1)) / k1
    assert per["E"].time_to_limit == pytest.approx(settle, rel=max(level, 1e-12))
    assert per["E"].limit == pytest.approx(1.0, rel=1e-14)
    # relaxation times 1/k1 and 1/k2 (eigenvalues of a triangular K: its diagonal)
    assert whole.relaxation_times == pytest.approx((1 / k1, 1 / k2), rel=1e-12)


def test_stiff_pair_on_the_command_line(tmp_path, capsys):
    path = tmp_path / "decay.scheme"
    path.write_text(_stiff(1e21), encoding="utf-8")
    status, out, err = run_cli(capsys, "solve", path, "--until", "1e9 s", "--json", "--no-caution")
    assert status == 0, err
    import json

    summary = json.loads(out)["summary"]
    t_max, c_max = _bateman(1e-8, 1e13)
    assert summary["D"]["t_max"] == pytest.approx(t_max, rel=1e-12)
    assert summary["D"]["c_max"] == pytest.approx(c_max, rel=1e-12)


@pytest.mark.parametrize("ratio", [1e4, 1e9, 1e17])
def test_stiff_sweep_members_against_bateman(ratio):
    k1 = 1e-8
    s = kinetics.parse(_stiff(10.0))
    table, curves = sweep(s, {"k2": [k1 * ratio]}, np.linspace(0, 5 / k1, 11), curves=True)
    t_max, c_max = _bateman(k1, k1 * ratio)
    row = table.iloc[0]
    assert row["t_max D [s]"] == pytest.approx(t_max, rel=1e-10)
    assert row["c_max D [mol/L]"] == pytest.approx(c_max, rel=1e-10)
    assert row["half_life P [s]"] == pytest.approx(math.log(2) / k1, rel=1e-10)
    d = curves.sel(set=0, species="D").values  # a labelled array since issue 11
    assert row["relative error bound"] <= 1e-9  # the certificate of the curves
    t = np.linspace(0, 5 / k1, 11)
    exact = k1 / (k1 * ratio - k1) * (np.exp(-k1 * t) - np.exp(-k1 * ratio * t))
    assert d[1:] == pytest.approx(exact[1:], rel=1e-12)


# ---------------------------------------------------------------------------------------
# Extreme legal numbers: refused up front with the working range


def _write(tmp_path, text):
    path = tmp_path / "x.scheme"
    path.write_text(text, encoding="utf-8")
    return path


RANGE_RATE = (
    "kinetics: A is consumed at 1e+308 1/s (its sum of rate constants), beyond the working "
    "range of 1e+100 1/s (the fastest chemical steps take about 1e13 1/s); check the "
    "constants and their units\n"
)
RANGE_TIME = (
    "kinetics: the times reach 1e+300 s, beyond the working range of 1e+100 s; give a "
    "shorter time span\n"
)


def test_huge_rate_constant_is_refused(tmp_path, capsys):
    path = _write(tmp_path, "A -> B  k1 = 1e308 1/s\nstart A = 1 mol/L\n")
    assert run_cli(capsys, "solve", path, "--until", "1 s", "--no-caution") == (2, "", RANGE_RATE)


def test_huge_end_time_is_refused(pair, capsys):
    assert run_cli(capsys, "solve", pair, "--until", "1e300 s", "--no-caution") == (
        2,
        "",
        RANGE_TIME,
    )


def test_too_many_lifetimes_are_refused(tmp_path, capsys):
    path = _write(tmp_path, "A -> B  k1 = 1e20 1/s\nstart A = 1 mol/L\n")
    assert run_cli(capsys, "solve", path, "--until", "1e9 s", "--no-caution") == (
        2,
        "",
        "kinetics: the times reach 1e+09 s, 1e+29 times the shortest lifetime in the scheme "
        "(A: 1/sum k = 1e-20 s); the exact engine spans at most 1e+27 lifetimes; give a "
        "shorter time span\n",
    )


def test_huge_concentration_with_a_fast_step_is_refused(tmp_path, capsys):
    path = _write(tmp_path, "A -> B  k1 = 1e10 1/s\nstart A = 1e300 mol/L\n")
    assert run_cli(capsys, "solve", path, "--until", "1 s", "--no-caution") == (
        2,
        "",
        "kinetics: the concentrations (up to 1e+300 in the scheme's unit) are too large for "
        "the rates of the scheme (A is consumed at 1e+10 1/s): their rates of change leave the "
        "range of numbers; give the start values and feeds in a larger unit\n",
    )


def test_huge_concentration_with_slow_steps_is_solved(scheme):
    # linear in the start values: two-member Bateman maximum (k1/k2)^(k2/(k2 - k1)) = 0.5
    # times 1e300, at ln(k1/k2)/(k1 - k2) = ln 2/0.05 s
    from kinetics.sweep import sweep

    table = sweep(scheme, {"start:A": [1e300]}, [0.0, 60.0])
    assert table["c_max B [mol/L]"].iloc[0] == pytest.approx(0.5e300, rel=1e-12)
    assert table["t_max B [s]"].iloc[0] == pytest.approx(math.log(2) / 0.05, rel=1e-12)


def test_too_many_points_are_refused_before_allocating(pair, capsys):
    assert run_cli(
        capsys, "solve", pair, "--until", "10 s", "--points", "100000000", "--no-caution"
    ) == (
        2,
        "",
        "kinetics: 100,000,000 times are too many: one run computes at most 10,000,000 values "
        "(times x species; about 80 MB per copy); use fewer times, e.g. 201 (the default), or "
        "solve the time span in parts\n",
    )


def test_table_size_counts_species(scheme):
    with pytest.raises(WorkingRangeError) as info:
        kinetics.solve(scheme, np.linspace(0.0, 1.0, 4_000_000))
    assert str(info.value) == (
        "4,000,000 times x 3 species = 12,000,000 values are too many: one run computes at "
        "most 10,000,000 values (times x species; about 80 MB per copy); use at most "
        "3,333,333 times, or solve the time span in parts"
    )


def test_sweep_value_beyond_double_range(pair, capsys):
    assert run_cli(
        capsys, "sweep", pair, "--until", "10 s", "--vary", "k2=1e400", "--no-caution"
    ) == (
        2,
        "",
        "kinetics: --vary 'k2=1e400': 1e400 is beyond the range of numbers (1.8e308); give "
        "finite values within the working range (README, Limits of the method)\n",
    )


def test_sweep_set_beyond_the_working_range(pair, capsys):
    status, out, err = run_cli(
        capsys, "sweep", pair, "--until", "10 s", "--vary", "k2=1,1e308", "--no-caution"
    )
    assert (status, out) == (2, "")
    assert err == (
        "kinetics: set 1 (k2 [1/s] = 1e+308): B is consumed at 1e+308 1/s (its sum of rate "
        "constants), beyond the working range of 1e+100 1/s (the fastest chemical steps take "
        "about 1e13 1/s); check the constants and their units\n"
    )


def test_sweep_axis_and_memory_limits(pair, scheme, capsys):
    assert run_cli(
        capsys, "sweep", pair, "--until", "10 s", "--vary", "k2=0.1:1:100000000", "--no-caution"
    ) == (
        2,
        "",
        "kinetics: --vary 'k2=0.1:1:100000000': 100,000,000 values on one axis are too many (at "
        "most 1,000,000); use fewer values\n",
    )
    with pytest.raises(TableSizeError) as info:
        sweep(scheme, {"k1": "0.1:1:10000", "k2": "0.1:1:2000"}, [0, 10])
    assert str(info.value) == (
        "the sweep would hold 160,000,000 values in memory (20,000,000 sets), more than "
        "100,000,000 (about 800 MB per copy); sweep fewer sets, or write the table to a file "
        "chunk by chunk (the command kinetics sweep does that with --out)"
    )


def test_api_huge_time(scheme):
    with pytest.raises(WorkingRangeError) as info:
        kinetics.solve(scheme, [0, 1e300])
    assert str(info.value) == RANGE_TIME[len("kinetics: ") : -1]


def test_api_sweep_huge_constant(scheme):
    with pytest.raises(WorkingRangeError) as info:
        sweep(scheme, {"k2": [1e308]}, [0, 10])
    assert str(info.value) == (
        "set 0 (k2 [1/s] = 1e+308): B is consumed at 1e+308 1/s (its sum of rate constants), "
        "beyond the working range of 1e+100 1/s (the fastest chemical steps take about 1e13 "
        "1/s); check the constants and their units"
    )


# ---------------------------------------------------------------------------------------
# API misuse: our typed errors, worded for the API


@pytest.mark.parametrize(
    ("call", "kind", "message"),
    [
        (
            lambda s: kinetics.solve("file.scheme", [0, 1]),
            ArgumentTypeError,
            "solve() needs a checked scheme, not the file name 'file.scheme'; read it first: "
            "kinetics.solve(kinetics.load('file.scheme'), ...)",
        ),
        (
            lambda s: kinetics.solve(Path("file.scheme"), [0, 1]),
            ArgumentTypeError,
            "solve() needs a checked scheme, not the file name 'file.scheme'; read it first: "
            "kinetics.solve(kinetics.load('file.scheme'), ...)",
        ),
        (
            lambda s: kinetics.solve(PAIR, [0, 1]),
            ArgumentTypeError,
            "solve() needs a checked scheme, not the text of one; parse it first: "
            "kinetics.solve(kinetics.parse(text), ...)",
        ),
        (
            lambda s: kinetics.solve(None, [0, 1]),
            ArgumentTypeError,
            "solve() needs a checked scheme, not None; get one from "
            "kinetics.load('file.scheme') or kinetics.parse(text)",
        ),
        (
            lambda s: kinetics.solve(s, None),
            ArgumentTypeError,
            "the times must be a list of numbers in seconds, not None; e.g. [0, 600, 1200] or "
            "numpy.linspace(0, 3600, 201)",
        ),
        (
            lambda s: kinetics.solve(s, np.array([[0.0, 1.0], [2.0, 3.0]])),
            TimesError,
            "the times must be a flat list of times, not an array of shape (2, 2); e.g. "
            "[0, 600, 1200] or numpy.linspace(0, 3600, 201); for one time give [t]",
        ),
        (
            lambda s: kinetics.solve(s, 5.0),
            TimesError,
            "the times must be a flat list of times, not a single number; e.g. [0, 600, 1200] "
            "or numpy.linspace(0, 3600, 201); for one time give [t]",
        ),
        (
            lambda s: kinetics.solve(s, np.array([0, 1j])),
            TimesError,
            "the times are complex numbers; give times in seconds as real numbers",
        ),
        (
            lambda s: kinetics.solve(s, [False, True]),
            TimesError,
            "the times are True/False values; give times in seconds as real numbers",
        ),
        (
            lambda s: kinetics.solve(s, [0, 1]).plot(summary=5),
            ArgumentTypeError,
            "summary must be 'auto', None or a dict, not int; leave it out to mark the maxima "
            "and half-lives",
        ),
        (
            lambda s: kinetics.monte_carlo(s, ["k1=10%"], 10**12, [0, 1]),
            SettingError,
            "1,000,000,000,000 parameter sets are too many (at most 100,000,000; about 50 us "
            "each); use fewer values or samples",
        ),
        (
            lambda s: sweep(s, {"k2": ["a"]}, [0, 10]),
            ParameterSpecError,
            "grid['k2']: 'a' is not a number; give each parameter a list of numbers in the unit "
            "the file uses for it, e.g. {'k2': [0.02, 0.045, 0.09]}, or a range as text, e.g. "
            "{'k2': '0.01:1:25:log'}",
        ),
        (
            lambda s: sweep(s, {"k2": "0.1,x"}, [0, 10]),
            ParameterSpecError,
            "grid['k2'] = '0.1,x': 'x' is not a number; give each parameter a list of numbers "
            "in the unit the file uses for it, e.g. {'k2': [0.02, 0.045, 0.09]}, or a range as "
            "text, e.g. {'k2': '0.01:1:25:log'}",
        ),
        (
            lambda s: sweep(s, {"k2": [float("nan")]}, [0, 10]),
            ConstantError,
            "grid['k2']: nan is not a number; give finite values within the working range "
            "(README, Limits of the method)",
        ),
        (
            lambda s: sweep(s, {"k2": [[1, 2], [3, 4]]}, [0, 10]),
            ParameterSpecError,
            "grid['k2'] must be a flat list of values, not an array of shape (2, 2); give each "
            "parameter a list of numbers in the unit the file uses for it, e.g. "
            "{'k2': [0.02, 0.045, 0.09]}, or a range as text, e.g. {'k2': '0.01:1:25:log'}",
        ),
        (
            lambda s: sweep(s, None, [0, 10]),
            ArgumentTypeError,
            "the grid must be a mapping or a list of texts, not None; give each parameter a "
            "list of numbers in the unit the file uses for it, e.g. {'k2': [0.02, 0.045, 0.09]}, "
            "or a range as text, e.g. {'k2': '0.01:1:25:log'}",
        ),
        (
            lambda s: sweep("file.scheme", {"k2": [1]}, [0, 10]),
            ArgumentTypeError,
            "sweep() needs a checked scheme, not the file name 'file.scheme'; read it first: "
            "kinetics.sweep(kinetics.load('file.scheme'), ...)",
        ),
        (
            lambda s: kinetics.monte_carlo(s, ["k1=10%"], 0, [0, 10]),
            SettingError,
            "a spread needs samples > 0; e.g. monte_carlo(scheme, ['k1=15%'], 1000, times)",
        ),
        (
            lambda s: kinetics.monte_carlo(s, ["k2=abc"], 10, [0, 10]),
            ParameterSpecError,
            "spread entry 'k2=abc': the spread of k2 must be a percentage (lognormal); "
            "write e.g. k2=15%",
        ),
        (
            lambda s: kinetics.solve(s, [0, 1]).summary(time_unit=None),
            ArgumentTypeError,
            "the time unit must be text such as 'min', not None; use s, min, h, d, week, month "
            "(1/12 year), year (365.25 d; also yr or a), or prefixed seconds such as ms and us",
        ),
        (
            lambda s: kinetics.solve(s, [0, 1]).plot(species="A"),
            ArgumentTypeError,
            "species must be a list of names, not the string 'A'; write species=['A']",
        ),
        (
            lambda s: kinetics.solve(s, [0, 1]).plot(123),
            ArgumentTypeError,
            "path must be a file name, not int; e.g. solution.plot('curves.png')",
        ),
    ],
)
def test_api_misuse(scheme, tmp_path, monkeypatch, call, kind, message):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(kind) as info:
        call(scheme)
    assert str(info.value) == message
    assert isinstance(info.value, TypeError if kind is ArgumentTypeError else ValueError)
    assert "--" not in message
    assert not list(tmp_path.iterdir())  # nothing written, no hidden temporary file


def test_times_from_a_generator_are_accepted(scheme):
    result = kinetics.solve(scheme, (t for t in (0.0, 10.0)))
    # first-order decay e^(-k1 t) (textbook)
    assert result["A"][1] == pytest.approx(math.exp(-1.0), rel=1e-14)


def test_api_fit_messages_name_no_option(scheme, tmp_path):
    from kinetics.fit import parse_free

    with pytest.raises(ParameterSpecError) as info:
        parse_free([], scheme)
    assert str(info.value) == "no free parameter given; name at least one, e.g. k1 or k1,k2"


# ---------------------------------------------------------------------------------------
# Promises the outputs keep: every quantity README lists is in the JSON and the report

BRANCH = "A -> P  k1 = 0.2 1/min\nA -> Q  k2 = 0.1 1/min\nstart A = 1 mol/L\n"
CYCLE = "A -> B  k1 = 1 1/s\nB -> C  k2 = 1 1/s\nC -> A  k3 = 1 1/s\nstart A = 1 mol/L\n"
EQUAL = "A -> B  k1 = 0.1 1/s\nB -> C  k2 = 0.1 1/s\nstart A = 1 mol/L\n"
FED = "S -> X  ks = 0.3 1/h\nX -> Y  kx = 0.1 1/h\nfeed S = 0.02 mol/L/h\nstart S = 0.1 mol/L\n"


def _json(tmp_path, capsys, text, *args):
    import json

    path = _write(tmp_path, text)
    status, out, err = run_cli(capsys, "solve", path, *args, "--json", "--no-caution")
    assert status == 0, err
    return json.loads(out)


def test_selectivity_of_parallel_branches(tmp_path, capsys):
    doc = _json(tmp_path, capsys, BRANCH, "--until", "30 min")
    whole = doc["scheme_summary"]
    # parallel first-order steps from one reactant: products in the ratio k1 : k2 at every
    # time, and one relaxation time 1/(k1 + k2) (Atkins, parallel reactions)
    assert whole["end_products"] == ["P", "Q"]
    assert whole["selectivity_ratios_in_limit"]["P/Q"] == pytest.approx(2.0, rel=1e-14)
    assert whole["selectivity_ratios_at_window_end"]["P/Q"] == pytest.approx(2.0, rel=1e-14)
    assert whole["selectivity_in_limit"] == pytest.approx({"P": 2 / 3, "Q": 1 / 3}, rel=1e-14)
    assert whole["amount_formed_in_limit"] == pytest.approx({"P": 2 / 3, "Q": 1 / 3}, rel=1e-14)
    assert whole["relaxation_times"] == pytest.approx([1 / 0.3], rel=1e-14)  # in min
    # P and Q come within 1 % of 2/3 and 1/3 at ln(100)/(k1 + k2); A (limit 0) is held to
    # 1 % of the largest limit, e^(-0.3 t) = 0.01 * 2/3, later: ln(150)/(k1 + k2)
    assert doc["summary"]["P"]["time_to_limit"] == pytest.approx(math.log(100) / 0.3, rel=1e-9)
    assert whole["time_to_limit"] == pytest.approx(math.log(150) / 0.3, rel=1e-9)


def test_oscillation_period_of_a_closed_cycle(tmp_path, capsys):
    # a closed cycle of three equal constants: K is circulant, eigenvalues
    # -k (1 - w) for the cube roots of unity w: -3k/2 +- i k sqrt(3)/2 (linear algebra,
    # common practice, no source): relaxation time 2/(3k), period 4 pi/(k sqrt 3)
    doc = _json(tmp_path, capsys, CYCLE, "--until", "10 s")
    whole = doc["scheme_summary"]
    assert whole["relaxation_times"] == pytest.approx([2 / 3], rel=1e-12)
    assert whole["oscillation_periods"] == pytest.approx([4 * math.pi / math.sqrt(3)], rel=1e-12)


def test_note_for_equal_constants(tmp_path, capsys):
    doc = _json(tmp_path, capsys, EQUAL, "--until", "60 s")
    whole = doc["scheme_summary"]
    assert whole["defective"] is True
    assert whole["relaxation_note"].startswith(
        "The rate 0.1 1/s occurs for both A and B, which are linked by a reaction path, so K "
        "is defective: the curves contain terms t*exp(-0.1 t)"
    )
    # the intermediate of A -> B -> C with k1 = k2 = k: B = k t e^(-kt), peak at 1/k with
    # height 1/e (the equal-constants limit of the Bateman solution)
    assert doc["summary"]["B"]["t_max"] == pytest.approx(10.0, rel=1e-10)
    assert doc["summary"]["B"]["c_max"] == pytest.approx(math.exp(-1), rel=1e-12)


def test_time_to_limit_per_species_when_one_grows_without_bound(tmp_path, capsys):
    doc = _json(tmp_path, capsys, FED, "--until", "48 h")
    s = doc["summary"]
    # S' = f - ks S from S0: |S - f/ks| = (S0 - f/ks) e^(-ks t) = 0.01 f/ks at
    # t = ln(100 (S0 ks/f - 1))/ks (first-order relaxation to a steady state)
    ks, kx, f, s0 = 0.3, 0.1, 0.02, 0.1
    assert s["S"]["time_to_limit"] == pytest.approx(math.log(100 * (s0 * ks / f - 1)) / ks, 1e-9)
    assert s["X"]["limit"] == pytest.approx(f / kx, rel=1e-14)
    assert s["X"]["time_to_limit"] is not None
    assert s["Y"]["time_to_limit"] is None
    assert s["Y"]["unbounded"] is True
    whole = doc["scheme_summary"]
    assert whole["time_to_limit"] is None
    assert whole["time_to_limit_note"] == "no finite limit: Y grows without bound"


def test_report_excel_and_api_carry_the_whole_scheme(tmp_path, capsys):
    from openpyxl import load_workbook

    path = _write(tmp_path, BRANCH)
    html = tmp_path / "r.html"
    xlsx = tmp_path / "r.xlsx"
    assert (
        run_cli(capsys, "report", path, "--until", "30 min", "--out", html, "--no-caution")[0] == 0
    )
    assert (
        run_cli(capsys, "solve", path, "--until", "30 min", "--out", xlsx, "--no-caution")[0] == 0
    )
    text = html.read_text(encoding="utf-8")
    for label in (
        "<h3>Whole scheme</h3>",
        "<td>relaxation times [min]</td><td>3.33333</td>",
        "<td>ratio of amounts formed in the limit</td><td>P/Q 2</td>",
        "<td>share of end products formed in the limit</td><td>P 0.666667, Q 0.333333</td>",
        "<dt>Relaxation times</dt>",
        "<dt>Oscillation periods</dt>",
        "<dt>Curve shape</dt>",
        "<dt>Selectivity between end products</dt>",
    ):
        assert label in text
    rows = [r[:2] for r in load_workbook(xlsx)["summary"].iter_rows(values_only=True)]
    assert ("whole scheme", None) in rows
    assert ("ratio of amounts formed in the limit", "P/Q 2") in rows
    summary = kinetics.solve(kinetics.parse(BRANCH), [0, 1800]).summary("min")
    assert summary.scheme["selectivity_ratios_in_limit"]["P/Q"] == pytest.approx(2.0, 1e-14)
    assert list(summary) == ["A", "P", "Q"]  # still species -> quantities


@pytest.mark.parametrize("name", ["missing/x.png", "missing/x.html"])
def test_writers_name_the_missing_folder_not_a_temporary_file(scheme, tmp_path, monkeypatch, name):
    from kinetics.errors import OutputFileError
    from kinetics.output import plotting, report

    monkeypatch.chdir(tmp_path)
    result = kinetics.solve(scheme, [0, 1, 2])
    if name.endswith(".png"):
        write = lambda: plotting.save_plot(name, result)  # noqa: E731
    else:
        write = lambda: report.write_report(name, "<html></html>")  # noqa: E731
    with pytest.raises(OutputFileError) as info:  # an OSError, as the builtin would be
        write()
    assert str(info.value) == (
        f"{name}: not written (No such file or directory); create the folder 'missing' first "
        "or write elsewhere; no partial file was left behind"
    )
    assert not list(tmp_path.iterdir())


def test_whole_scheme_amounts_follow_the_reported_unit():
    # parallel branches: P(inf) = k1/(k1 + k2) A0 (Atkins, parallel reactions); in mg/L with
    # M(C2H4O) = 44.053 g/mol (standard atomic weights, from memory): 29.3687 mg/L
    s = kinetics.parse(
        BRANCH.replace("mol/L", "mmol/L") + "formula A = C2H4O, P = C2H4O, Q = C2H4O"
    )
    summary = kinetics.solve(s, [0, 3600]).in_unit("mg/L").summary("min")
    formed = summary.scheme["amount_formed_in_limit"]
    assert formed["P"] == pytest.approx(summary["P"]["limit"], rel=1e-14)
    assert formed["P"] == pytest.approx(2 / 3 * 44.053, rel=1e-4)
    assert summary.scheme["selectivity_ratios_in_limit"]["P/Q"] == pytest.approx(2.0, rel=1e-14)
