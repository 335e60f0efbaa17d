"""A fuzzer over the command line: whatever a user types, no traceback and no exit status 1.

Hypothesis draws argument lists for ``check``, ``solve``, ``report`` and ``sweep`` from
pools of valid, edge-case and hostile values (zero, negative, non-finite, huge, empty,
non-ASCII, unknown units and names, wrong output extensions).  Every run must end in exit
status 0 (done) or 2 (a clear refusal of the user's mistake), with no Python traceback
on stderr.  Outputs are written to a temporary folder.  A second check: the time of a run
grows linearly with the length of a ``--times`` list (CPU time of 8x the list at most 24x
that of one; a generous factor, no absolute timing).
"""

from __future__ import annotations

import time

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from kinetics.cli import main

SCHEME = """title: fuzz chain
A -> B   k1 = 0.12 1/min
B -> C   k2 = 0.045 1/min
C <=> D  kf = 2e-3 1/s, kr = 5e-4 1/s
start A = 0.5 mol/L
"""

DURATIONS = [
    "2h", "90 min", "1 s", "0 s", "-5 min", "1e300 s", "1e-300 s", "inf min", "nan h", "5y",
    "3 parsec", "", "  ", "h", "12", "1e400 s", "2 h h", "٣ h", "1,5 h", "0x10 s", "2hours",
]  # fmt: skip
POINTS = ["2", "3", "201", "1", "0", "-4", "100000000", "1e3", "x", "99999999999999999999"]
TIMES = [
    "0,5,10 min", "0 min", "5,0 min", "0,,1 h", "0,1,2", "1e400,2 s", "-1,2 s", "0,nan s",
    ",", "0, 1e-300, 1 s", "0;1 h",
]  # fmt: skip
UNITS = ["min", "s", "h", "d", "year", "mol/L", "", "parsec", "1/s", "°C", "mmol/L", "g/L"]
SPECIES = ["A", "A,B", "Z", "", "A,,B", "a", "A,A"]
OUTS = ["t.csv", "t.json", "t.xlsx", "t.parquet", "t.png", "t.svg", "t.txt", "t", "=t.csv"]
VARY = [
    "k2=0.01:1:5:log", "k2=0.01:1:5", "k2=1,2", "k2=", "k2=a", "k2=1e400", "k9=1,2",
    "temperature=20:30:3:degC", "start:A=0.1,0.2", "excess:W=1", "k2=0:1:3:log",
    "k2=1:2:0", "k2=-1,1", "k1=0.1:0.2:3:1/h", "k2=1:2:3:parsec",
]  # fmt: skip

option = st.sampled_from


@st.composite
def solve_args(draw, command: str) -> list[str]:
    args = [command, "s.scheme"]
    if draw(st.booleans()):
        args += ["--until", draw(option(DURATIONS))]
        if draw(st.booleans()):
            args += ["--points", draw(option(POINTS))]
    if draw(st.booleans()):
        args += ["--times", draw(option(TIMES))]
    if draw(st.booleans()):
        args += ["--time-unit", draw(option(UNITS))]
    if command == "solve" and draw(st.booleans()):
        args += ["--species", draw(option(SPECIES))]
    if command == "solve" and draw(st.booleans()):
        args += ["--concentration-unit", draw(option(UNITS))]
    if command == "solve":
        for _ in range(draw(st.integers(0, 2))):
            args += ["--out", draw(option(OUTS))]
        if draw(st.booleans()):
            args.append("--json")
    if command == "report":
        args += ["--out", draw(option(["r.html", "r.txt", "r"]))]
    return [*args, "--no-caution"]


@st.composite
def sweep_args(draw) -> list[str]:
    args = ["sweep", "s.scheme", "--until", draw(option([*DURATIONS[:3], "0 s", "x"]))]
    for _ in range(draw(st.integers(0, 2))):
        args += ["--vary", draw(option(VARY))]
    if draw(st.booleans()):
        args += ["--samples", draw(option(["3", "0", "-1", "x"]))]
        args += ["--spread", draw(option(["k1=15%", "k1=-5%", "k1=x", "temperature=2K"]))]
    if draw(st.booleans()):
        args += ["--out", draw(option(["w.csv", "w.json", "w.xlsx", "w.parquet"]))]
    return [*args, "--no-caution"]


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.scheme").write_text(SCHEME, encoding="utf-8")
    return tmp_path


def run(capsys, argv: list[str]) -> tuple[int, str]:
    status = main(argv)
    _, err = capsys.readouterr()
    return status, err


def assert_clean(status: int, err: str, argv: list[str]) -> None:
    assert status in (0, 2), (argv, status, err)
    assert "Traceback" not in err, (argv, err)
    assert "internal error" not in err, (argv, err)
    if status == 2:
        assert err.startswith("kinetics: ") or err.startswith("Usage:"), (argv, err)


FUZZ = settings(
    max_examples=60,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)


@FUZZ
@given(st.one_of(solve_args("solve"), solve_args("report"), st.just(["check", "s.scheme"])))
def test_solve_report_and_check_never_crash(folder, capsys, argv):
    status, err = run(capsys, argv)
    assert_clean(status, err, argv)


@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
@given(sweep_args())
def test_sweep_never_crashes(folder, capsys, argv):
    status, err = run(capsys, argv)
    assert_clean(status, err, argv)


def test_time_grows_linearly_with_a_times_list(folder, capsys):
    def cpu(count: int) -> float:
        times = ",".join(str(k) for k in range(count)) + " s"
        start = time.process_time()
        status, err = run(capsys, ["solve", "s.scheme", "--times", times, "--json", "--no-caution"])
        assert (status, err) == (0, "")
        return time.process_time() - start

    cpu(200)  # warm (compiled kernels, imports)
    one = min(cpu(2000) for _ in range(2))
    eight = min(cpu(16000) for _ in range(2))
    assert eight <= 24 * one
