"""Static checks that CI runs through the test command.

mypy on the package, ruff on the repository (both configured in pyproject.toml).

Run as tests (rather than as extra steps of ``.ci/run``) so that CI keeps running exactly
README's test command, and a contributor's ``python -m pytest`` sees what CI sees.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def run(*command: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", *command], cwd=ROOT, capture_output=True, text=True, check=False
    )


@pytest.mark.slow  # about 10 s without mypy's cache
def test_mypy_passes_on_the_package():
    done = run("mypy", "kinetics")
    assert done.returncode == 0, done.stdout + done.stderr


def test_ruff_passes_on_the_repository():
    done = run("ruff", "check", ".")
    assert done.returncode == 0, done.stdout + done.stderr
    done = run("ruff", "format", "--check", "kinetics", "tests")
    assert done.returncode == 0, done.stdout + done.stderr
