"""Behaviour of kinetics.fit: API, identifiability warnings, weights, errors, command line.

Reference values are noted beside each check; the consecutive-reaction closed
form is the textbook one (any physical chemistry textbook).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

import kinetics
from kinetics.cli import main
from kinetics.errors import (
    ArgumentTypeError,
    ConditionError,
    ConstantError,
    DataError,
    ParameterSpecError,
    SettingError,
    SpeciesError,
)
from kinetics.fit import fit, parse_free
from kinetics.fit.model import Model, build_runs
from kinetics.measurements import measurements_from_frame

ABC = "A -> B  k1 = 0.3 1/min\nB -> C  k2 = 0.01 1/min\nstart A = 1 mol/L\n"


def consecutive(t, k1, k2):
    # consecutive first-order reactions A -> B -> C, closed form (textbook)
    b = k1 / (k2 - k1) * (np.exp(-k1 * t) - np.exp(-k2 * t))
    c = 1.0 + (k1 * np.exp(-k2 * t) - k2 * np.exp(-k1 * t)) / (k2 - k1)
    return b, c


@pytest.fixture(scope="module")
def noisy():
    t = np.linspace(0.0, 60.0, 31)[1:]
    b, c = consecutive(t, 0.1, 0.05)
    rng = np.random.default_rng(11)
    return pd.DataFrame(
        {
            "time [min]": t,
            "B [mol/L]": b + rng.normal(0.0, 0.01, t.size),
            "C [mol/L]": c + rng.normal(0.0, 0.01, t.size),
        }
    )


@pytest.fixture(scope="module")
def abc():
    return kinetics.parse(ABC)


def test_swapped_constants_warn_and_measuring_b_removes_it(abc, noisy):
    only_c = fit(abc, noisy[["time [min]", "C [mol/L]"]], "k1,k2", profile=False)
    assert len(only_c.alternatives) == 1
    alt = only_c.alternatives[0]
    # the swap: the other optimum has k1 and k2 exchanged (symmetry of C(t) in k1, k2)
    assert alt["k1"] == pytest.approx(only_c.value("k2"), rel=1e-6, abs=0)
    assert alt["k2"] == pytest.approx(only_c.value("k1"), rel=1e-6, abs=0)
    assert alt["sum_of_squares"] == pytest.approx(
        only_c.statistics["sum_of_squares"], rel=1e-8, abs=0
    )
    [warning] = only_c.warnings
    assert warning.startswith("The data fit equally well with k1 = ")
    assert warning.endswith(
        "the measured species (C) cannot tell these values apart. Measure the "
        "intermediate B as well to decide which is which."
    )
    both = fit(abc, noisy, "k1,k2", profile=False)
    assert both.alternatives == []
    assert both.warnings == []
    assert both.value("k1") == pytest.approx(0.1, rel=0.05)  # the generating value
    assert both.value("k2") == pytest.approx(0.05, rel=0.05)


def test_result_views_and_json_contract(abc, noisy):
    result = fit(abc, noisy, ["k1", "k2"])
    doc = result.to_dict()
    text = json.dumps(doc, allow_nan=False)
    assert json.loads(text)["estimates"]["k1"]["unit"] == "1/min"
    for name in ("k1", "k2"):
        e = doc["estimates"][name]
        assert set(e) >= {"value", "unit", "std_error", "ci95", "ci95_profile"}
        assert e["ci95"][0] < e["value"] < e["ci95"][1]
        assert e["ci95_profile"][0] < e["value"] < e["ci95_profile"][1]
    assert isinstance(doc["warnings"], list)
    assert doc["correlation"]["names"] == ["k1", "k2"]
    corr = np.array(doc["correlation"]["matrix"])
    np.testing.assert_allclose(np.diag(corr), 1.0, rtol=1e-12, atol=0)
    stats = doc["statistics"]
    assert stats["points"] == 60
    assert stats["degrees_of_freedom"] == 58
    assert stats["residual_sd"] == pytest.approx(0.01, rel=0.3)  # the noise level
    assert stats["model_evaluations"] > 0
    assert stats["jacobian_evaluations"] > 0
    assert stats["engine_difference"] < 1e-12
    assert result.diagnostics["converged"] is True
    assert result.diagnostics["condition_number"] < 10
    frame = result.to_frame()
    assert list(frame["parameter"]) == ["k1", "k2"]
    assert {"value", "std_error", "ci95_low", "profile_high", "t_value", "p_value"} <= set(
        frame.columns
    )
    # t-test: one-sided, t = value / SE (common practice, no source)
    e = result.estimates["k1"]
    assert e.t_value == pytest.approx(e.value / e.std_error, rel=1e-12)
    assert e.p_value < 1e-10
    # residuals are data - fit in the concentration unit
    assert result.residuals[0].shape == (30, 2)
    pred = result.predict(noisy["time [min]"].to_numpy() * 60.0)
    np.testing.assert_allclose(
        noisy["B [mol/L]"].to_numpy() - pred["B"], result.residuals[0][:, 0], rtol=0, atol=1e-14
    )


def test_exact_jacobian_matches_central_differences(abc, noisy):
    """Check the Fréchet-derivative Jacobian against central differences (h = 1e-6)."""
    params = parse_free("k1,k2,start:A", abc)
    data = [measurements_from_frame(noisy, abc)]
    model = Model(abc, build_runs(abc, data, params, "equal"), params)
    theta = np.log([0.1 / 60, 0.05 / 60, 0.9])
    J = model.jacobian(theta)
    h = 1e-6
    for j in range(3):
        step = np.zeros(3)
        step[j] = h
        column = (model.residuals(theta + step) - model.residuals(theta - step)) / (2 * h)
        np.testing.assert_allclose(J[:, j], column, rtol=1e-6, atol=1e-9)


def test_block_and_entrywise_engines_agree(abc, noisy):
    a = fit(abc, noisy, "k1,k2", starts=1, profile=False)
    b = fit(abc, noisy, "k1,k2", starts=1, profile=False, engine="entrywise")
    for name in ("k1", "k2"):
        assert b.value(name) == pytest.approx(a.value(name), rel=1e-9, abs=0)
        assert b.estimates[name].std_error == pytest.approx(
            a.estimates[name].std_error, rel=1e-6, abs=0
        )


def test_finite_difference_option_counts_more_evaluations(abc, noisy):
    exact = fit(abc, noisy, "k1,k2", starts=1, profile=False)
    fd = fit(abc, noisy, "k1,k2", starts=1, profile=False, jacobian="3-point")
    assert fd.value("k1") == pytest.approx(exact.value("k1"), rel=1e-6)
    assert fd.statistics["model_evaluations_search"] > exact.statistics["model_evaluations_search"]


def test_parallel_steps_are_not_separable():
    scheme = kinetics.parse("A -> B  k1 = 0.1 1/min\nA -> B  k2 = 0.05 1/min\nstart A = 1 mol/L")
    t = np.linspace(0, 3600, 21)
    frame = kinetics.solve(scheme, t).to_frame("min")[["time [min]", "B [mol/L]"]]
    frame["B [mol/L]"] += np.random.default_rng(1).normal(0, 0.01, 21)
    result = fit(scheme, frame, "k1,k2", starts=4, profile=False)
    assert result.alternatives == []
    [warning] = result.warnings
    assert warning == (
        "The Jacobian is nearly singular (condition number infinite after scaling): the data "
        "determine only a combination of k1 and k2, not each one; fix one of them, or measure "
        "more species or a wider time range."
    )
    assert math.isnan(result.estimates["k1"].std_error)
    assert json.dumps(result.to_dict(), allow_nan=False)


def test_implausible_fast_step_is_flagged():
    truth = kinetics.parse("A -> B  k1 = 0.1 1/min\nB -> C  k2 = 1e6 1/min\nstart A = 1 mol/L")
    t = np.linspace(0, 3600, 21)
    frame = kinetics.solve(truth, t).to_frame("min")
    rng = np.random.default_rng(3)
    for col in ("B [mol/L]", "C [mol/L]"):
        frame[col] += rng.normal(0, 0.01, 21)
    result = fit(
        kinetics.parse(ABC), frame[["time [min]", "B [mol/L]", "C [mol/L]"]], "k1,k2", profile=False
    )
    text = " ".join(result.warnings)
    assert "k2 ran into the upper end of the search range" in text
    assert "k2 came out more than a million times larger than every other constant" in text
    assert "complete before the first measurement" in text
    assert "k1 came out" not in text
    assert result.value("k1") == pytest.approx(0.1, rel=0.05)


def test_exactly_determined_fit_warns(tmp_path):
    # a start value in mg/mL needs a molar mass (issue 12: the scheme counts molecules); an
    # invented one, on which neither k1 nor the warning depends
    scheme = kinetics.parse(
        "A -> P  k1 = 0.05 1/month\nstart A = 5.0 mg/mL\nmolar_mass A = 100 g/mol"
    )
    frame = pd.DataFrame({"time [month]": [0.0, 20.0], "A [mg/mL]": [5.0, 4.2]})
    result = fit(scheme, frame, "k1,start:A")
    assert result.value("start:A") == pytest.approx(5.0 / 100, rel=1e-10)  # mmol/mL
    # k = ln(5/4.2)/20 per month (first-order decay through two points; pharmaceutics texts)
    assert result.value("k1") == pytest.approx(math.log(5 / 4.2) / 20, rel=1e-9)
    assert result.warnings == [
        "There are as many free parameters as measured values: the fit passes through every "
        "point and no uncertainty can be estimated."
    ]
    assert result.to_dict()["estimates"]["k1"]["std_error"] is None


def test_relative_weights_and_conditions(abc):
    """Two runs with different start values, relative weights, noise-free: exact recovery."""
    truth = kinetics.parse(ABC.replace("0.3", "0.1").replace("0.01", "0.05"))
    t = np.linspace(0, 3600, 13)
    runs = []
    for a0 in (1.0, 0.25):
        sol = kinetics.solve(truth.with_values(initial={"A": a0}), t)
        runs.append((sol.to_frame("min")[["time [min]", "B [mol/L]"]], {"start:A": f"{a0} M"}))
    result = fit(abc, runs, "k1,k2", weights="relative", profile=False, starts=4)
    assert result.value("k1") == pytest.approx(0.1, rel=1e-8)  # generating values
    assert result.value("k2") == pytest.approx(0.05, rel=1e-8)
    assert result.data[1].conditions == {"start:A": 0.25}


@pytest.mark.parametrize(
    ("free", "error", "message"),
    [
        (
            "k9",
            ConstantError,
            "free parameter 'k9' is not a rate constant of the scheme; the constants are "
            "k1, k2; start values are written start:SPECIES",
        ),
        ("k1,k1", ParameterSpecError, "the free parameter 'k1' is listed twice; list it once"),
        (
            "start:Z",
            SpeciesError,
            "free parameter 'start:Z': 'Z' is not a species of the scheme; the species are A, B, C",
        ),
        (
            "k1.A",
            ConstantError,
            "free parameter 'k1.A': k1 is not an Arrhenius constant; free k1 itself, or "
            "define it as k1 = arrhenius(A = ..., Ea = ...)",
        ),
        ("", ParameterSpecError, "no free parameter given; name at least one, e.g. k1 or k1,k2"),
    ],
)
def test_bad_free_names(abc, free, error, message):
    with pytest.raises(error) as info:
        parse_free(free, abc)
    assert str(info.value) == message


def test_arrhenius_names():
    scheme = kinetics.parse(
        "k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\nA -> B  k1\ntemperature = 30 degC\n"
        "start A = 1 mol/L"
    )
    with pytest.raises(ConstantError) as info:
        parse_free("k1", scheme)
    assert str(info.value) == (
        "free parameter 'k1' follows the Arrhenius law; free its parameters instead: k1.A and k1.Ea"
    )
    a, ea = parse_free("k1.A,k1.Ea", scheme)
    assert (a.kind, a.unit, ea.kind, ea.unit) == ("prefactor", "1/s", "energy", "kJ/mol")
    assert ea.si_per_unit == 1000.0  # 1 kJ/mol = 1000 J/mol


def test_data_errors(abc, noisy):
    with pytest.raises(DataError) as info:
        fit(abc, noisy.iloc[:1][["time [min]", "B [mol/L]"]], "k1,k2")
    assert str(info.value) == (
        "<frame>: 1 measured value cannot determine 2 free parameters; measure more points "
        "or free fewer parameters"
    )
    with pytest.raises(DataError, match="weights 'column' need standard deviations"):
        fit(abc, noisy, "k1,k2", weights="column")
    with pytest.raises(ConditionError) as info:
        fit(abc, [(noisy, {"start:A": "1 M"})], "k1,start:A")
    assert (
        str(info.value) == "start:A is free but <frame> also sets it; free it or set it, not both"
    )
    with pytest.raises(SettingError) as info:
        fit(abc, noisy, "k1", weights="heavy")
    assert str(info.value) == (
        "unknown weighting 'heavy'; use equal, relative, column or a dict of SDs"
    )
    with pytest.raises(SettingError) as info:
        fit(abc, noisy, "k1", weights={"A": 1.0})
    assert (
        str(info.value) == "no standard deviation given for B; give one for every measured species"
    )
    with pytest.raises(SettingError) as info:
        fit(abc, noisy, "k1", weights={"B": 0.0, "C": 1.0})
    assert str(info.value) == "standard deviations must be positive"
    with pytest.raises(SettingError) as info:
        fit(abc, noisy, "k1", jacobian="4-point")
    assert str(info.value) == "unknown jacobian '4-point'; use exact, 2-point or 3-point"
    with pytest.raises(SettingError) as info:
        fit(abc, noisy, "k1", engine="fast")
    assert str(info.value) == "unknown engine 'fast'; use block or entrywise"
    with pytest.raises(ArgumentTypeError) as info:
        fit(abc, 5, "k1")
    assert str(info.value) == (
        "cannot use int as measured data; give a Measurements object, a DataFrame or a CSV path"
    )
    with pytest.raises(DataError) as info:
        fit(abc, [], "k1")
    assert str(info.value) == "no measured data given; give at least one data table"


def test_cli_fit_outputs(tmp_path, noisy, capsys):
    scheme = tmp_path / "abc.scheme"
    scheme.write_text(ABC, encoding="utf-8")
    data = tmp_path / "run.csv"
    noisy.to_csv(data, index=False)
    out, plot, table = tmp_path / "fit.json", tmp_path / "fit.png", tmp_path / "est.csv"
    argv = ["fit", str(scheme), str(data), "--free", "k1", "--free", "k2"]
    argv += ["--out", str(out), "--out", str(table), "--plot", str(plot)]
    assert main(argv) == 0
    printed = capsys.readouterr().out
    assert "k1" in printed
    assert "1/min" in printed
    assert "95 % (profile)" in printed
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert set(doc) >= {"estimates", "warnings", "statistics", "correlation", "software"}
    assert doc["estimates"]["k2"]["unit"] == "1/min"
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert pd.read_csv(table)["parameter"].tolist() == ["k1", "k2"]


def test_cli_global_fit_with_conditions(tmp_path, capsys):
    text = (
        "k1 = arrhenius(A = 1.0e8 1/s, Ea = 70 kJ/mol)\nA -> B  k1\n"
        "temperature = 25 degC\nstart A = 1 mol/L\n"
    )
    truth = kinetics.parse(text.replace("1.0e8", "3.0e9").replace("70 kJ", "80 kJ"))
    scheme = tmp_path / "arr.scheme"
    scheme.write_text(text, encoding="utf-8")
    argv = ["fit", str(scheme)]
    for celsius in (30, 45, 60):
        sol = kinetics.solve(
            truth.with_values(temperature=celsius + 273.15), np.linspace(0, 7200, 9)
        )
        path = tmp_path / f"run{celsius}.csv"
        sol.to_frame("min")[["time [min]", "A [mol/L]"]].to_csv(path, index=False)
        argv += ["--data", str(path), "--set", f"temperature={celsius}degC"]
    argv += ["--free", "k1.A,k1.Ea", "--json", "--no-profile", "--starts", "4"]
    assert main(argv) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["estimates"]["k1.A"]["value"] == pytest.approx(3.0e9, rel=1e-7)  # generating
    assert doc["estimates"]["k1.Ea"]["value"] == pytest.approx(80.0, rel=1e-7)
    assert [d["conditions"]["temperature [K]"] for d in doc["data"]] == pytest.approx(
        [303.15, 318.15, 333.15], rel=1e-12
    )


def test_cli_usage_errors(tmp_path, capsys):
    scheme = tmp_path / "abc.scheme"
    scheme.write_text(ABC, encoding="utf-8")
    data = tmp_path / "d.csv"
    data.write_text("time [min],B [mol/L]\n0,0\n10,0.5\n20,0.6\n", encoding="utf-8")
    cases = [
        (["fit", str(scheme), "--free", "k1"], "fit needs at least one data file"),
        (["fit", str(scheme), str(data), "--free", "kx"], "is not a rate constant"),
        (["fit", str(scheme), str(data), "--free", "k1", "--out", "x.txt"], "not an output"),
        (["fit", str(scheme), str(data), "--free", "k1", "--set", "pH=7"], "unknown key 'pH'"),
        (["fit", str(scheme), str(data), "--free", "k1", "--out", str(data)], "is an input"),
        (["fit", str(scheme), str(data), "--free", "k1", "--starts", "x"], "--starts 'x'"),
    ]
    for argv, fragment in cases:
        assert main(argv) == 2, argv
        err = capsys.readouterr().err
        assert fragment in err, (argv, err)
    assert main(["fit", "--help"]) == 0
    help_text = capsys.readouterr().out
    for fragment in ("k3.A,k3.Ea", "start:A", "--set", "relative", "column"):
        assert fragment in help_text


@pytest.mark.parametrize("seed", [2, 5, 7, 9])
def test_ambiguity_is_always_reported_when_only_c_is_measured(abc, seed):
    """Random k1, k2 (seeded), C only: either the two mirrored optima or, when they merge
    on the line k1 = k2, the near-singular warning; both name the intermediate B."""
    rng = np.random.default_rng(seed)
    k1, k2 = rng.uniform(0.02, 0.5, 2)
    t = np.linspace(0.0, 60.0, 31)[1:]
    _, c = consecutive(t, k1, k2)
    frame = pd.DataFrame({"time [min]": t, "C [mol/L]": c + rng.normal(0.0, 0.01, t.size)})
    result = fit(abc, frame, "k1,k2", profile=False)
    assert any("intermediate B" in w for w in result.warnings), result.warnings


def test_constants_defined_from_the_free_ones_follow_them(tmp_path):
    # k2 = k1 / 3: data made with k1 = 0.3 1/h (and so k2 = 0.1 1/h) give back k1 = 0.3
    # 1/h only if k2 follows k1 inside the fit (exact data from kinetics.solve)
    s = kinetics.parse("A -> B  k1 = 0.1 1/h\nB -> C  k2 = k1 / 3\nstart A = 1 mol/L\n")
    truth = s.with_values(constants={"k1": 0.3 / 3600})
    t = np.linspace(0.0, 20 * 3600.0, 9)
    frame = pd.DataFrame({"time [s]": t, "B [mol/L]": kinetics.solve(truth, t)["B"]})
    frame.to_csv(tmp_path / "d.csv", index=False)
    result = kinetics.fit(s, tmp_path / "d.csv", free=["k1"])
    assert result.value("k1") == pytest.approx(0.3, rel=1e-9)


# -- named quantities (issue 15) ----------------------------------------------------------

GENERATOR = """\
t_p = 50 h
f = 87.6 %
P -> D  lam_d = f * ln(2) / t_p
P -> S  lam_s = (1 - f) * ln(2) / t_p
D -> G  half_life = 5 h
start P = 1 GBq
"""


@pytest.fixture(scope="module")
def generator_data():
    """Exact daughter and parent amounts (kinetics.solve of the scheme with t_p = 42 h),
    the daughter with a relative error of at most 1 % (deterministic)."""
    s = kinetics.parse(GENERATOR)
    t = np.linspace(0.0, 200 * 3600.0, 15)
    sol = kinetics.solve(s.with_values(quantities={"t_p": 42 * 3600}), t)
    wobble = 1 + 0.01 * np.sin(np.arange(t.size))
    return s, t, sol, pd.DataFrame({"time [s]": t, "D [mol]": sol["D"] * wobble})


def test_a_named_quantity_is_fitted_and_the_constants_follow_it(generator_data):
    s, t, sol, _ = generator_data
    exact = pd.DataFrame({"time [s]": t, "D [mol]": sol["D"], "P [mol]": sol["P"]})
    result = fit(s, exact, "t_p", weights="relative")
    assert result.value("t_p") == pytest.approx(42.0, rel=1e-9, abs=0)
    assert result.estimates["t_p"].unit == "h"
    # the fitted scheme: lam_d = 0.876 ln 2 / 42 h and the start amount of 1 GBq with it
    fitted = result.fitted_scheme()
    assert float(fitted.exact_constants()["lam_d"]) == pytest.approx(
        0.876 * math.log(2) / (42 * 3600), rel=1e-12
    )
    assert fitted.initial["P"] == pytest.approx(sol["P"][0], rel=1e-12, abs=0)


def test_the_constants_that_follow_carry_the_interval_of_the_fitted_quantity(generator_data):
    s, _, _, noisy_d = generator_data
    result = fit(s, noisy_d, "t_p", weights="relative")
    e = result.estimates["t_p"]
    followed = result.followed()
    assert set(followed) == {"lam_d", "lam_s"}
    lam = followed["lam_d"]
    # lam_d = f ln 2 / t_p: its relative standard error is that of t_p (delta method)
    assert lam["value"] == pytest.approx(0.876 * math.log(2) / (e.value * 3600), rel=1e-12)
    assert lam["std_error"] / lam["value"] == pytest.approx(e.std_error / e.value, rel=1e-9, abs=0)
    doc = result.to_dict()
    assert doc["followed"]["lam_s"]["unit"] == "1/s"
    assert len(doc["followed"]["lam_s"]["ci95"]) == 2


def test_the_jacobian_of_a_named_quantity_matches_central_differences(generator_data):
    # t_p drives two constants and, through them, the start amount of 1 GBq (n = A/lambda)
    s, _, _, noisy_d = generator_data
    params = parse_free("t_p,f", s)
    model = Model(
        s, build_runs(s, [measurements_from_frame(noisy_d, s)], params, "relative"), params
    )
    theta = np.log([45 * 3600.0, 0.8])
    J = model.jacobian(theta)
    h = 1e-6
    for j in range(2):
        step = np.zeros(2)
        step[j] = h
        column = (model.residuals(theta + step) - model.residuals(theta - step)) / (2 * h)
        np.testing.assert_allclose(J[:, j], column, rtol=1e-6, atol=1e-9)


def test_two_named_quantities_and_the_domain_of_their_definitions(generator_data):
    # f above 1 would make lam_s negative: such starts are left out, the fit finds f
    s, _, _, noisy_d = generator_data
    result = fit(s, noisy_d, "t_p,f", weights="relative")
    assert result.value("t_p") == pytest.approx(42.0, rel=0.01, abs=0)
    assert result.value("f") == pytest.approx(87.6, rel=0.01, abs=0)


def test_a_quantity_below_zero_is_searched_on_a_linear_scale():
    s = kinetics.parse(
        "dS = -20 J/(mol K)\nA -> B  k = eyring(dH = 90 kJ/mol, dS = dS)\n"
        "temperature = 60 degC\nstart A = 1 mol/L\n"
    )
    t = np.linspace(0.0, 60.0, 12)
    data = kinetics.solve(s.with_values(quantities={"dS": -5}), t)
    result = fit(s, pd.DataFrame({"time [s]": t, "A [mol/L]": data["A"]}), "dS")
    assert result.value("dS") == pytest.approx(-5.0, abs=1e-9)


def test_cli_fit_of_a_named_quantity(tmp_path, generator_data, capsys):
    _, _, _, noisy_d = generator_data
    scheme = tmp_path / "g.scheme"
    scheme.write_text(GENERATOR, encoding="utf-8")
    data = tmp_path / "d.csv"
    noisy_d.to_csv(data, index=False)
    out = tmp_path / "fit.json"
    assert (
        main(
            [
                "fit",
                str(scheme),
                str(data),
                "--free",
                "t_p",
                "--weights",
                "relative",
                "--out",
                str(out),
            ]
        )
        == 0
    )
    printed = capsys.readouterr().out
    assert "constants that follow the fitted values (delta method):" in printed
    assert "lam_d = " in printed
    assert json.loads(out.read_text(encoding="utf-8"))["estimates"]["t_p"]["unit"] == "h"


@pytest.mark.parametrize(
    ("conditions", "message"),
    [
        (
            {"temperature": "hot"},
            "conditions entry 'temperature=hot': 'hot' is not a number with a unit; write e.g. "
            "conditions={'temperature': '40degC'}",
        ),
        (
            {"k1": "0.1 g"},
            "conditions entry 'k1=0.1 g': k1 needs a unit like 1/min; write e.g. "
            "conditions={'k1': '0.1 1/min'}",
        ),
        (
            {"temperature": None},
            "conditions entry 'temperature': None is not a number or a text with a unit; "
            "write e.g. conditions={'temperature': '40degC'}",
        ),
    ],
)
def test_conditions_of_the_api_are_worded_for_the_api(abc, noisy, conditions, message):
    from kinetics.errors import ConditionError

    with pytest.raises(ConditionError) as err:
        fit(abc, [(noisy[["time [min]", "B [mol/L]"]], conditions)], "k1,k2", profile=False)
    assert str(err.value) == message
