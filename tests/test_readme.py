"""Every command and code example of README.md runs as written, in a temporary folder."""

from __future__ import annotations

import re
import shlex
import shutil
from pathlib import Path

import pytest

from kinetics.cli import main

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _commands() -> list[str]:
    """`kinetics ...` commands in backticks that name a bundled example file."""
    found = []
    for cmd in re.findall(r"`(kinetics [^`]+)`", README):
        if "networks/" in cmd and "FILE" not in cmd and "..." not in cmd:
            found.append(cmd)
    for block in re.findall(r"```sh\n(.*?)```", README, flags=re.S):
        for line in block.splitlines():
            line = line.strip()
            if line.startswith("kinetics ") and "networks/" in line:
                found.append(line)
    return sorted(set(found))


COMMANDS = _commands()


@pytest.fixture
def workdir(tmp_path, monkeypatch):
    shutil.copytree(ROOT / "networks", tmp_path / "networks")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_readme_lists_a_command_for_every_example():
    examples = sorted(p.name for p in (ROOT / "networks").glob("*.scheme"))
    assert examples, "networks/ has no example schemes"
    for name in examples:
        assert any(f"networks/{name}" in c for c in COMMANDS), f"README has no command for {name}"


@pytest.mark.parametrize("command", COMMANDS)
def test_readme_command_runs(command, workdir, capsys):
    argv = shlex.split(command)[1:]
    status = main(argv)
    captured = capsys.readouterr()
    assert status == 0, captured.err
    assert "Traceback" not in captured.err


def test_readme_python_example_runs(workdir):
    blocks = re.findall(r"```python\n(.*?)```", README, flags=re.S)
    assert blocks
    for block in blocks:
        exec(compile(block, "README.md", "exec"), {})
