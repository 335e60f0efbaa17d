"""Importing the package (and starting the command line) does not load the heavy extras."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

HEAVY = [
    "matplotlib",
    "dask",
    "distributed",
    "openpyxl",
    "pyarrow",
    "jinja2",
    "playwright",
    "PIL",
    "numba",
]


def _loaded_after(code: str) -> list[str]:
    probe = (
        f"{code}\nimport json, sys\n"
        f"print(json.dumps(sorted(m for m in {HEAVY!r} if m in sys.modules)))"
    )
    done = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, timeout=120, check=False
    )
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


def test_import_kinetics_is_light():
    assert _loaded_after("import kinetics") == []


def test_command_line_help_is_light():
    # building the command tree and printing help must not import plotting or file formats
    code = "from kinetics.cli import main\nassert main(['solve', '--help']) == 0"
    assert _loaded_after(code) == []


def test_plotting_does_not_use_pyplot():
    code = (
        "import kinetics\n"
        "s = kinetics.parse('A -> B  k = 1 1/s\\nstart A = 1 mol/L')\n"
        "kinetics.solve(s, [0, 1, 2]).plot(summary=None)\n"
        "import sys\nassert 'matplotlib.pyplot' not in sys.modules"
    )
    assert "matplotlib" in _loaded_after(code)


def _modules_after(code: str, names: list[str]) -> list[str]:
    probe = (
        f"{code}\nimport json, sys\n"
        f"print(json.dumps(sorted(m for m in {names!r} if m in sys.modules)))"
    )
    done = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, timeout=120, check=False
    )
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


EXAMPLE = str(
    Path(__file__).resolve().parent.parent / "networks" / "consecutive_intermediate.scheme"
)
UNNEEDED = [
    "pint",
    "kinetics.fit",
    "kinetics.sweep",
    "kinetics.cli.fit",
    "kinetics.cli.sweep",
    "kinetics.optimise",
    "kinetics.cli.optimise",
]


def test_check_loads_neither_the_engine_nor_tables_nor_units_registry():
    code = f"from kinetics.cli import main\nassert main(['check', {EXAMPLE!r}]) == 0"
    assert _modules_after(code, [*HEAVY, *UNNEEDED, "pandas"]) == []


def test_solve_loads_only_what_it_needs():
    code = (
        "from kinetics.cli import main\n"
        f"assert main(['solve', {EXAMPLE!r}, '--until', '2h', '--no-caution']) == 0"
    )
    assert _modules_after(code, [*UNNEEDED, "matplotlib", "openpyxl", "pyarrow.parquet"]) == []


def test_solve_in_the_terminal_does_not_load_pandas():
    # pandas costs about a quarter of the start-up of `solve`; the command line and the
    # JSON document no longer need it (benchmarks/bench_startup.py measures the start-up)
    code = (
        "from kinetics.cli import main\n"
        f"assert main(['solve', {EXAMPLE!r}, '--until', '2h', '--no-caution']) == 0"
    )
    assert _modules_after(code, ["pandas"]) == []


def test_lazy_public_names_keep_their_meaning():
    code = (
        "import kinetics, kinetics.sweep, kinetics.fit\n"
        "import inspect\n"
        "assert inspect.isfunction(kinetics.sweep) and inspect.isfunction(kinetics.fit)\n"
        "from kinetics import fit, sweep, solve, Scheme, FitResult\n"
        "assert sweep is kinetics.sweep and fit is kinetics.fit\n"
        "assert all(hasattr(kinetics, name) for name in kinetics.__all__)\n"
        "assert kinetics.analysis.__name__ == 'kinetics.analysis'\n"
    )
    assert _modules_after(code, []) == []


def test_unknown_attribute_is_an_attribute_error():
    import kinetics

    with pytest.raises(AttributeError, match="module 'kinetics' has no attribute 'nothing'"):
        kinetics.nothing  # noqa: B018
