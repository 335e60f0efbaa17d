"""Sweeps with require lines: one column ``first_broken <text> [unit]`` per requirement and
its heat map (kinetics/sweep/plan.py, evaluation.py, cli/sweep.py,
analysis/requirements.first_broken_batch).  References: t90 = ln(10/9)/k (Connors, Amidon &
Stella, "Chemical Stability of Pharmaceuticals", 2nd ed., 1986) with k by the Arrhenius law
(Arrhenius 1889); B = A0 (1 - exp(-k t)) for A -> B."""

from __future__ import annotations

import math

import numpy as np
import pytest

import kinetics
from kinetics.analysis.requirements import first_broken_batch
from kinetics.cli import main
from kinetics.sweep import sweep
from kinetics.units import GAS_CONSTANT_EXACT

TEXT = (
    "title: store\nAPI -> DEG  k1 = arrhenius(A = 2.0e9 1/h, Ea = 85 kJ/mol)\n"
    "temperature = 25 degC\nstart API = 1 mmol/L\n"
    "require API >= 90 %\nrequire DEG <= 0.5 % of API\nrequire DEG <= 2 mmol/L\n"
)


def _k(celsius: float) -> float:
    return 2.0e9 * math.exp(-85e3 / (float(GAS_CONSTANT_EXACT) * (273.15 + celsius)))  # 1/h


def test_one_column_per_requirement_with_the_shelf_life_at_each_temperature():
    scheme = kinetics.parse(TEXT)
    table = sweep(scheme, ["temperature=20:40:3:degC"], [0.0, 3600.0], time_unit="h")
    first, second, third = (
        "first_broken API >= 90 % [h]",
        "first_broken DEG <= 0.5 % of API [h]",
        "first_broken DEG <= 2 mmol/L [h]",
    )
    assert list(table.columns)[-3:] == [first, second, third]
    for celsius, row in zip((20.0, 30.0, 40.0), table.itertuples(index=False), strict=True):
        values = dict(zip(table.columns, row, strict=True))
        assert values[first] == pytest.approx(math.log(10 / 9) / _k(celsius), rel=1e-11)
        assert values[second] == pytest.approx(-math.log1p(-0.005) / _k(celsius), rel=1e-11)
        assert math.isnan(values[third])  # DEG never exceeds the 1 mmol/L it could reach


def test_a_percentage_follows_each_sets_start_value():
    scheme = kinetics.parse("A -> B  k = 0.01 1/s\nstart A = 1 mol/L\nrequire B <= 0.5 % of A")
    K = np.stack([scheme.rate_matrix()] * 3)
    c0 = np.array([[1.0, 0.0], [2.0, 0.0], [5.0, 0.0]])
    out = first_broken_batch(K, c0, scheme.requirements, scheme.species_names)
    np.testing.assert_allclose(out[:, 0], -math.log1p(-0.005) / 0.01, rtol=1e-12)


def test_the_heat_map_of_a_requirement(tmp_path, capsys):
    path = tmp_path / "store.scheme"
    path.write_text(TEXT)
    figure = tmp_path / "map.png"
    argv = ["sweep", str(path), "--until", "1 h", "--vary", "temperature=20:40:3:degC"]
    argv += ["--vary", "start:API=1,2", "--no-caution", "--plot-out", str(figure)]
    assert main([*argv, "--plot", "first_broken:DEG <= 0.5 % of API"]) == 0
    assert figure.read_bytes()[:4] == b"\x89PNG"
    assert main([*argv, "--plot", "first_broken:1"]) == 0
    capsys.readouterr()
    assert main([*argv, "--plot", "first_broken:4"]) == 2
    assert capsys.readouterr().err.strip() == (
        "kinetics: --plot 'first_broken:4' names no requirement of the scheme; write "
        "first_broken:TEXT or first_broken:N (1: API >= 90 %; 2: DEG <= 0.5 % of API; "
        "3: DEG <= 2 mmol/L)"
    )
