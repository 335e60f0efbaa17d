"""Importing the package (and starting the command line) does not load the heavy extras."""

from __future__ import annotations

import json
import subprocess
import sys

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
