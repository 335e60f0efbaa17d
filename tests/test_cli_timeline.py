"""Runs with operations on the command line: JSON events, the sibling events CSV, the Excel
events sheet, the report's timeline section, the terminal table, and --temperature-log.

Reference values: the ingrowth formula of a parent-daughter pair after a complete elution
(Bateman form; H. Bateman, Proc. Cambridge Philos. Soc. 15, 423-427 (1910)) and Haynes'
mean kinetic temperature by hand (J. D. Haynes, J. Pharm. Sci. 60, 927-929 (1971)).
"""

from __future__ import annotations

import csv
import json
import math

import pytest

from kinetics.cli import main

GENERATOR = """title: invented generator
P -> D   kP = 0.01 1/h
D -> X   kD = 0.1 1/h
start P = 1 mol/L
every 24 h: remove 100 % of D
"""
HOT = """A -> B  k = arrhenius(A = 1e12 1/s, Ea = 83.144 kJ/mol)
temperature = 25 degC
start A = 1 mol/L
"""


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "gen.scheme").write_text(GENERATOR, encoding="utf-8")
    (tmp_path / "hot.scheme").write_text(HOT, encoding="utf-8")
    return tmp_path


def run(capsys, *argv):
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return status, out, err


def ingrowth(t_hours: float, parent: float) -> float:
    """D after t hours from no daughter (Bateman form)."""
    kP, kD = 0.01, 0.1
    return parent * kP / (kD - kP) * (math.exp(-kP * t_hours) - math.exp(-kD * t_hours))


def test_json_events_in_the_output_units(files, capsys):
    status, out, err = run(
        capsys, "solve", "gen.scheme", "--until", "3d", "--points", "4", "--json"
    )
    assert status == 0, err
    doc = json.loads(out)
    assert doc["times"] == [0.0, 1.0, 1.0, 2.0, 2.0, 3.0, 3.0]
    assert doc["after"] == [False, False, True, False, True, False, True]
    events = doc["events"]
    assert [(e["time"], e["action"], e["species"]) for e in events] == [
        (1.0, "remove", "D"),
        (2.0, "remove", "D"),
        (3.0, "remove", "D"),
    ]
    parent = 1.0
    for k, e in enumerate(events):
        assert -e["change"] == pytest.approx(ingrowth(24.0, parent), rel=1e-13)
        assert e["error_bound"] < 1e-14
        assert e["volume_L"] is None
        parent *= math.exp(-0.01 * 24)
        assert doc["concentrations"]["D"][2 * k + 2] == 0.0  # just after: eluted completely
    assert doc["timeline_notes"] == []
    # the daughter's half-life loses no meaning (it starts at zero); the parent's is ln2/kP
    assert doc["summary"]["P"]["half_life"] == pytest.approx(math.log(2) / 0.01 / 24, rel=1e-9)


def test_json_without_operations_has_an_empty_event_list(files, capsys):
    status, out, _ = run(capsys, "solve", "hot.scheme", "--until", "1h", "--points", "3", "--json")
    doc = json.loads(out)
    assert status == 0
    assert doc["events"] == []
    assert "after" not in doc


def test_csv_gets_a_sibling_with_the_events_and_excel_a_sheet(files, capsys):
    status, _, err = run(
        capsys, "solve", "gen.scheme", "--until", "2d", "--out", "run.csv", "--out", "run.xlsx"
    )
    assert status == 0, err
    assert "wrote run_events.csv" in err
    with open(files / "run_events.csv", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert list(rows[0]) == [
        "time [d]",
        "action",
        "species",
        "change [mol/L]",
        "temperature [K]",
        "feed rate [mol/L/d]",
        "relative error bound",
    ]
    assert [(r["time [d]"], r["action"], r["species"]) for r in rows] == [
        ("1.0", "remove", "D"),
        ("2.0", "remove", "D"),
    ]
    assert -float(rows[0]["change [mol/L]"]) == pytest.approx(ingrowth(24.0, 1.0), rel=1e-13)
    from openpyxl import load_workbook

    book = load_workbook(files / "run.xlsx")
    assert book.sheetnames == ["concentrations", "summary", "inputs", "events"]
    sheet = book["events"]
    assert [c.value for c in sheet[1]][:3] == ["time [d]", "action", "species"]
    assert sheet.max_row == 3


def test_the_events_file_is_never_an_input(files, capsys):
    (files / "run_events.csv").write_text("time [h],temperature [degC]\n0,25\n", encoding="utf-8")
    status, _, err = run(
        capsys,
        "solve",
        "hot.scheme",
        "--until",
        "1h",
        "--temperature-log",
        "run_events.csv",
        "--out",
        "run.csv",
    )
    assert status == 2
    assert "the output file 'run_events.csv' is an input file" in err


def test_report_has_a_timeline_section(files, capsys):
    status, _, err = run(capsys, "report", "gen.scheme", "--until", "2d", "--out", "r.html")
    assert status == 0, err
    html = (files / "r.html").read_text(encoding="utf-8")
    assert "<h2>Timeline of operations</h2>" in html
    assert "every 24 h: remove 100 % of D" in html


def test_terminal_marks_the_rows_after_operations(files, capsys):
    status, out, err = run(capsys, "solve", "gen.scheme", "--until", "2d", "--points", "3")
    assert status == 0, err
    assert "1+" in out
    assert "t+ : just after the operations at time t" in out
    assert "Operations" in out


def test_plots_mark_the_operations(files, capsys):
    status, _, err = run(capsys, "solve", "gen.scheme", "--until", "3d", "--out", "c.svg")
    assert status == 0, err
    svg = (files / "c.svg").read_text(encoding="utf-8")
    assert "removal" in svg


def test_a_mistake_in_an_operation_exits_2(files, capsys):
    (files / "bad.scheme").write_text(GENERATOR + "at 1 h: remove 120 % of D\n", encoding="utf-8")
    status, out, err = run(capsys, "solve", "bad.scheme", "--until", "1d")
    assert status == 2
    assert out == ""
    assert "bad.scheme:6:9: cannot remove 120 %: the part removed must be from 0 to 100 %" in err
    assert "Traceback" not in err


def test_temperature_log_mean_kinetic_temperature_and_equivalent(files, capsys):
    (files / "log.csv").write_text("time [h],temperature [degC]\n0,25\n12,35\n", encoding="utf-8")
    status, out, err = run(
        capsys, "solve", "hot.scheme", "--until", "24h", "--temperature-log", "log.csv", "--json"
    )
    assert status == 0, err
    doc = json.loads(out)
    record = doc["scheme_summary"]["temperature_log"]
    # Haynes by hand, Delta H / R = 83144 / 8.314462618 K, half the time at each level
    ratio = 83144.0 / 8.314462618
    mkt = ratio / -math.log((math.exp(-ratio / 298.15) + math.exp(-ratio / 308.15)) / 2)
    assert record["mean_kinetic_temperature_K"] == pytest.approx(mkt, rel=1e-12)
    (equivalent,) = record["equivalent_temperatures"]
    assert equivalent["temperature_K"] == pytest.approx(mkt, rel=1e-12)  # same Ea
    assert equivalent["steps"] == ["A -> B"]
    assert doc["settings"]["temperature_log"] == "log.csv"
    # degradation under the record = isothermal at the equivalent temperature (exact identity)
    k = 1e12 * math.exp(-83144.0 / (8.314462618 * mkt))
    assert doc["concentrations"]["A"][-1] == pytest.approx(math.exp(-k * 86400), rel=1e-9)
    assert [e["action"] for e in doc["events"]] == ["temperature", "temperature"]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "time [h],temperature [degC]\n0,25\n12,35\n6,30\n",
            "kinetics: log.csv:4:1: the time 6 is not after the time 12 of line 3; sort "
            "the readings by time, each time once",
        ),
        (
            "time [h],temperature [degC]\n0,25\n12,warm\n",
            "kinetics: log.csv:3:4: the temperature 'warm' is not a number; write the "
            "temperature as a number such as 21.5",
        ),
        (
            "time,temperature [degC]\n0,25\n",
            "kinetics: log.csv:1:1: the column 'time' has no unit in square brackets; "
            "write the header as 'time [h],temperature [degC]'",
        ),
    ],
)
def test_temperature_log_mistakes(files, capsys, text, message):
    (files / "log.csv").write_text(text, encoding="utf-8")
    status, out, err = run(
        capsys, "solve", "hot.scheme", "--until", "1d", "--temperature-log", "log.csv"
    )
    assert status == 2
    assert out == ""
    assert err.strip().splitlines()[-1] == message


def test_an_operation_after_the_window_is_noted(files, capsys):
    (files / "late.scheme").write_text(HOT + "at 10 d: add A = 1 M\n", encoding="utf-8")
    status, out, err = run(capsys, "solve", "late.scheme", "--until", "1d", "--json")
    assert status == 0, err
    assert json.loads(out)["timeline_notes"] == [
        "late.scheme:4: 1 operation from 10 d on falls after the end of the window "
        "(1 d) and was not applied"
    ]
    status, out, _ = run(capsys, "solve", "late.scheme", "--until", "1d", "--points", "3")
    assert "note: late.scheme:4: 1 operation from 10 d on falls after" in out


def test_check_json_lists_the_operations(files, capsys):
    status, out, err = run(capsys, "check", "gen.scheme", "--json")
    assert status == 0, err
    assert json.loads(out)["operations"] == {
        "statements": [{"line": 5, "text": "every 24 h: remove 100 % of D"}],
        "volume_L": None,
    }


def test_sensitivities_are_refused_for_a_run_with_operations(files, capsys):
    status, out, err = run(capsys, "solve", "gen.scheme", "--until", "1d", "--sensitivity")
    assert status == 2
    assert out == ""
    assert err.strip().splitlines()[-1] == (
        "kinetics: --sensitivity is not available for a run with operations; leave it out, or "
        "sweep a parameter (kinetics sweep --vary) to see its effect"
    )


def test_requirements_of_a_run_with_operations(files, capsys):
    # D of the generator rises as the ingrowth (Bateman form) and each complete elution
    # takes it to 0: `require D <= 0.05 M` is broken at the root of the ingrowth (before the
    # first elution at 24 h) and holds again from the elution; a second portion of P at 36 h
    # (add P = 2 M) breaks `require P <= 1.5 M` at that time, by the operation
    text = GENERATOR + "require D <= 0.05 mol/L\nrequire P <= 1.5 mol/L\nat 36 h: add P = 2 M\n"
    (files / "req.scheme").write_text(text, encoding="utf-8")
    status, out, err = run(capsys, "solve", "req.scheme", "--until", "2d", "--json")
    assert status == 0, err
    doc = json.loads(out)
    d, p = doc["requirements"]
    lo, hi = 0.0, 24.0
    for _ in range(60):  # bisection of the closed form
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if ingrowth(mid, 1.0) < 0.05 else (lo, mid)
    assert d["first_broken"] == pytest.approx(lo / 24, rel=1e-12)
    assert d["holds_between"][1][0] == 1.0  # holds again from the elution at 24 h
    assert d["broken_by_operation"] is False
    assert p["first_broken"] == 1.5
    assert p["broken_by_operation"] is True
    assert doc["all_hold_until"] == pytest.approx(lo / 24, rel=1e-12)
    status, out, err = run(capsys, "solve", "req.scheme", "--until", "2d")
    assert (
        "  require P <= 1.5 mol/L: first broken at 1.5 d (by the operation at that time); "
        "holds again from 3.94552 d on\n"
    ) in out
    assert "not checked" not in out


def test_notes_quote_times_in_the_unit_of_the_command(files, capsys):
    # operations written in hours, the run solved to 10 h and shown in hours (or minutes)
    text = (
        "A -> B  k = 0.1 1/h\nstart A = 1 M\nevery 2 h from 5 h: add A = 1 M\n"
        "at 50 h: add A = 1 M\n"
    )
    (files / "notes.scheme").write_text(text, encoding="utf-8")
    status, out, err = run(capsys, "solve", "notes.scheme", "--until", "10h")
    assert status == 0, err
    skipped = (
        "notes.scheme:4: 1 operation from 50 h on falls after the end of the window (10 h) and "
        "was not applied"
    )
    assert f"\nnote: {skipped}\n" in out
    assert (
        "  note: A: material of A is added after time 0 (from 5 h on), so a time to fall to a "
        "fraction of its start value loses its meaning\n"
    ) in out
    assert (
        "  with operations: the long-time limit, the time to it, lifetimes and relaxation times "
        "refer to the conditions after the last operation (from 9 h on, continued without end); "
        f"{skipped}\n"
    ) in out
    status, out, err = run(
        capsys, "solve", "notes.scheme", "--until", "10h", "--time-unit", "min", "--json"
    )
    doc = json.loads(out)
    assert doc["timeline_notes"] == [
        "notes.scheme:4: 1 operation from 3000 min on falls after the end of the window "
        "(600 min) and was not applied"
    ]
    assert doc["summary"]["A"]["half_life_note"] == (
        "material of A is added after time 0 (from 300 min on), so a time to fall to a "
        "fraction of its start value loses its meaning"
    )
    assert "(from 540 min on, continued without end)" in doc["scheme_summary"]["timeline_note"]
