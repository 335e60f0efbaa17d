"""The command line, run in-process through ``main(argv)``: outputs, messages, exit codes."""

from __future__ import annotations

import itertools
import json
import math
from pathlib import Path

import pytest

from kinetics.cli import CAUTION, main
from kinetics.cli.entry import split_debug

from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]

# A -> B -> C with k1 = 0.1 1/min, k2 = 0.05 1/min, A0 = 1 mol/L (issue 4 check values).
CONSECUTIVE = """title: Test chain
A -> B    k1 = 0.1 1/min
B -> C    k2 = 0.05 1/min
start A = 1 mol/L
"""
K1, K2 = 0.1, 0.05  # [1/min]


@pytest.fixture
def chain(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "chain.scheme"
    path.write_text(CONSECUTIVE, encoding="utf-8")
    return path


# ---------------------------------------------------------------------------------------
# solve: JSON contract


def test_solve_json_contract(chain, capsys):
    status, out, err = run_cli(
        capsys, "solve", chain, "--until", "90 min", "--points", "31", "--json"
    )
    assert status == 0, err
    doc = json.loads(out)
    assert doc["time_unit"] == "min"
    assert doc["concentration_unit"] == "mol/L"
    assert doc["settings"] == {"until": "90 min", "points": 31, "time_unit": "min"}
    assert doc["species"] == ["A", "B", "C"]
    assert len(doc["times"]) == 31
    assert doc["times"][0] == 0.0
    assert doc["times"][-1] == pytest.approx(90.0, rel=0, abs=1e-12)
    summary = doc["summary"]
    for name in ("A", "B", "C"):
        for key in ("half_life", "t_max", "c_max", "limit"):
            assert key in summary[name]
    # first-order half-life ln2/k1 (any physical chemistry textbook)
    assert summary["A"]["half_life"] == pytest.approx(math.log(2) / K1, rel=1e-9, abs=0)
    # consecutive first-order reactions: t_max = ln(k1/k2)/(k1-k2) = 13.863 min and
    # B_max = A0 (k1/k2)^(k2/(k2-k1)) = 0.5 A0 (any physical chemistry textbook)
    assert summary["B"]["t_max"] == pytest.approx(math.log(K1 / K2) / (K1 - K2), rel=1e-9, abs=0)
    assert summary["B"]["c_max"] == pytest.approx(0.5, rel=1e-9, abs=0)
    assert summary["B"]["half_life"] is None  # starts at zero
    # all material ends in C (mass conservation, common practice, no source)
    assert summary["C"]["limit"] == pytest.approx(1.0, rel=1e-12, abs=0)
    assert summary["A"]["limit"] == pytest.approx(0.0, rel=0, abs=1e-15)
    assert CAUTION in err


def test_solve_json_times_list_and_time_unit(chain, capsys):
    status, out, err = run_cli(
        capsys, "solve", chain, "--times", "0, 0.25,0.5,1 h", "--time-unit", "min", "--json"
    )
    assert status == 0, err
    doc = json.loads(out)
    assert doc["settings"]["times"] == "0, 0.25,0.5,1 h"
    assert doc["time_unit"] == "min"
    assert doc["times"] == pytest.approx([0, 15, 30, 60], rel=1e-15, abs=0)
    # A(t) = A0 exp(-k1 t) (first-order decay, textbook)
    expected = [math.exp(-K1 * t) for t in (0, 15, 30, 60)]
    assert doc["concentrations"]["A"] == pytest.approx(expected, rel=1e-13, abs=0)
    assert doc["summary"]["B"]["t_max"] == pytest.approx(13.862943611198906, rel=1e-9, abs=0)


# ---------------------------------------------------------------------------------------
# solve: terminal output


def test_solve_prints_summary_and_table_with_units(chain, capsys):
    status, out, err = run_cli(capsys, "solve", chain, "--until", "2h", "--points", "5")
    assert status == 0, err
    assert "\x1b[" not in out  # no colour codes when not writing to a terminal
    for header in (
        "half-life [h]",
        "t_max [h]",
        "c_max [mol/L]",
        "limit [mol/L]",
        "time [h]",
        "A [mol/L]",
        "C [mol/L]",
    ):
        assert header in out
    assert out.index("Summary") < out.index("Concentrations")
    assert "…" not in out  # nothing truncated
    # t_max of B in hours, 6 significant digits: 13.8629 min = 0.231049 h (formula above)
    assert "0.231049" in out
    assert CAUTION in err


def test_wide_table_is_not_truncated_in_a_pipe(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    names = [f"Intermediate_species_with_a_long_name_{i}" for i in range(8)]
    lines = [
        f"{a} -> {b}   k{i} = 0.{i + 1} 1/min" for i, (a, b) in enumerate(itertools.pairwise(names))
    ]
    lines.append(f"start {names[0]} = 1 mol/L")
    path = tmp_path / "wide.scheme"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    status, out, err = run_cli(
        capsys, "solve", path, "--until", "1h", "--points", "3", "--no-caution"
    )
    assert status == 0, err
    for name in names:
        assert f"{name} [mol/L]" in out
    assert "…" not in out


def test_species_option_limits_the_table(chain, capsys, monkeypatch):
    from kinetics.engine import kernels as _kernels

    monkeypatch.setattr(_kernels, "on_disk", lambda kernel: True)  # compiled before
    status, out, err = run_cli(
        capsys, "solve", chain, "--until", "1h", "--points", "3", "--species", "B", "--no-caution"
    )
    assert status == 0, err
    assert "B [mol/L]" in out
    assert "A [mol/L]" not in out
    assert err == ""


def test_no_caution_flag_and_quiet_progress(chain, capsys, monkeypatch):
    from kinetics.engine import kernels as _kernels

    monkeypatch.setattr(_kernels, "on_disk", lambda kernel: True)  # compiled before
    status, _out, err = run_cli(
        capsys, "solve", chain, "--until", "1h", "--points", "3", "--no-caution"
    )
    assert status == 0
    assert err == ""  # no caution, no progress bar when stderr is not a terminal


def test_first_use_note_when_the_engine_is_not_compiled_yet(chain, capsys, monkeypatch):
    from kinetics.engine import kernels as _kernels

    monkeypatch.setattr(_kernels, "on_disk", lambda kernel: False)
    status, _out, err = run_cli(
        capsys, "solve", chain, "--until", "1h", "--points", "3", "--no-caution"
    )
    assert status == 0
    assert err == (
        "kinetics: compiling the engine for its first use on this installation "
        "(once, about 4 s; later runs load it from disk)\n"
    )
    status, _out, err = run_cli(
        capsys, "sweep", chain, "--until", "1h", "--vary", "k1=0.1,0.2", "--no-caution"
    )
    assert status == 0
    assert err.startswith(
        "kinetics: compiling the engine for its first use on this installation "
        "(once, about 8 s; later runs load it from disk)\n"
    )


def test_first_use_note_for_a_run_with_operations(tmp_path, capsys, monkeypatch):
    from kinetics.engine import kernels as _kernels

    monkeypatch.setattr(_kernels, "on_disk", lambda kernel: False)
    scheme = tmp_path / "eluted.scheme"
    scheme.write_text("P -> D  k1 = 0.01 1/h\nstart P = 1 mol/L\nevery 1 h: remove 50 % of D\n")
    status, _out, err = run_cli(
        capsys, "solve", str(scheme), "--until", "3h", "--points", "4", "--no-caution"
    )
    assert status == 0
    assert err == (
        "kinetics: compiling the engine for its first use on this installation "
        "(once, about 5 s; later runs load it from disk)\n"
    )


def test_kernels_are_found_on_disk_after_a_solve(chain, capsys):
    from kinetics.engine import kernels as _kernels

    assert run_cli(capsys, "solve", chain, "--until", "1h", "--points", "3")[0] == 0
    assert _kernels.on_disk(_kernels.exponentials)


def test_caution_is_the_short_form_of_safety_md():
    text = (ROOT / "SAFETY.md").read_text(encoding="utf-8")
    assert CAUTION in text
    assert "SAFETY.md" in CAUTION.splitlines()[1]
    assert len(CAUTION.splitlines()) == 2


# ---------------------------------------------------------------------------------------
# solve: several outputs at once


def test_several_outputs(chain, capsys, tmp_path):
    outs = [tmp_path / n for n in ("t.csv", "t.xlsx", "t.json", "t.parquet", "p.png", "p.svg")]
    argv = ["solve", chain, "--until", "60 min", "--points", "7", "--no-caution"]
    for o in outs:
        argv += ["--out", o]
    status, out, err = run_cli(capsys, *argv)
    assert status == 0, err
    assert out == ""  # with --out, the table is written, not printed
    for o in outs:
        assert o.is_file()
        assert o.stat().st_size > 0
        assert f"wrote {o}" in err
    assert outs[4].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in outs[5].read_bytes()[:2000]
    leftovers = [p for p in tmp_path.iterdir() if p.name.startswith(".")]
    assert leftovers == []


# ---------------------------------------------------------------------------------------
# user mistakes: one sentence, exit status 2, no traceback

ERRORS = [
    (["solve", "missing.scheme", "--until", "1h"], "missing.scheme: no such file"),
    (["solve", "{chain}"], "this command needs --until or --times"),
    (["solve", "{chain}", "--until", "1h", "--times", "0,1 h"], "either --until or --times"),
    (["solve", "{chain}", "--until", "90"], "--until '90' is not a duration with a unit"),
    (["solve", "{chain}", "--until", "90 parsecs"], "'parsecs' is not a unit of time"),
    (["solve", "{chain}", "--until", "-5 min"], "--until '-5 min' is not a positive duration"),
    (["solve", "{chain}", "--until", "1h", "--points", "1"], "'--points': 1 is not in the range"),
    (["solve", "{chain}", "--until", "1h", "--points", "many"], "'many' is not a valid integer"),
    (["solve", "{chain}", "--times", "0,5,10"], "does not end with a unit of time"),
    (["solve", "{chain}", "--times", "0,five,10 min"], "'five' is not a number"),
    (["solve", "{chain}", "--times", "0,10,5 min"], "the times are not in increasing order"),
    (["solve", "{chain}", "--times", "0 min"], "has no time after 0"),
    (["solve", "{chain}", "--times", "0,5 min", "--points", "3"], "cannot be combined"),
    (["solve", "{chain}", "--until", "1h", "--time-unit", "kg"], "'kg' is not a unit of time"),
    (
        ["solve", "{chain}", "--until", "1h", "--species", "A,Q"],
        "--species names 'Q', which is not a species of the scheme; the species are A, B, C",
    ),
    (["solve", "{chain}", "--until", "1h", "--species", "b"], "did you mean 'B'?"),
    (["solve", "{chain}", "--until", "1h", "--out", "t.txt"], "extension '.txt'"),
    (["solve", "{chain}", "--until", "1h", "--out", "table"], "has no extension"),
    (["solve", "{chain}", "--until", "1h", "--out", "nowhere/t.csv"], "does not exist"),
    (["solve", "{chain}", "--until", "1h", "--out", "{chain}"], "is an input file"),
    (["solve", "{chain}", "--until", "1h", "--out", "a.csv", "--out", "a.csv"], "given twice"),
    (["solve", "{chain}", "--until", "1h", "--colour"], "No such option '--colour'"),
    (["report", "{chain}", "--until", "1h"], "Missing option '--out'"),
    (["report", "{chain}", "--until", "1h", "--out", "r.pdf"], "extension '.pdf'"),
    (["frobnicate"], "No such command 'frobnicate'"),
]


@pytest.mark.parametrize(("argv", "message"), ERRORS)
def test_user_mistake_is_one_sentence_and_status_2(chain, capsys, argv, message):
    argv = [a.replace("{chain}", str(chain)) for a in argv]
    status, out, err = run_cli(capsys, *argv)
    assert status == 2
    assert message in err
    assert err.startswith("kinetics: ")
    assert "Traceback" not in err
    assert out == ""
    assert not any(Path(".").glob("*.csv"))


def test_exact_message_for_a_missing_output_folder(chain, capsys):
    status, _, err = run_cli(capsys, "solve", chain, "--until", "1h", "--out", "nowhere/t.csv")
    assert status == 2
    assert err == (
        "kinetics: the folder of the output file 'nowhere/t.csv' does not exist; "
        "create 'nowhere' first or write elsewhere\n"
    )


def test_exact_message_for_an_output_that_is_the_input(chain, capsys):
    status, _, err = run_cli(capsys, "solve", chain, "--until", "1h", "--out", chain)
    assert status == 2
    assert err == (
        f"kinetics: the output file {str(chain)!r} is an input file; "
        "choose another output name; inputs are never overwritten\n"
    )
    assert chain.read_text(encoding="utf-8") == CONSECUTIVE


def test_scheme_mistake_is_reported_with_its_line(tmp_path, capsys):
    bad = tmp_path / "bad.scheme"
    bad.write_text("A -> B  k1 = 0.1 furlongs-1\nstart A = 1 mol/L\n", encoding="utf-8")
    status, _out, err = run_cli(capsys, "solve", bad, "--until", "1h")
    assert status == 2
    assert f"{bad}:1:" in err
    assert "Traceback" not in err


def test_debug_shows_the_traceback(chain, capsys):
    from kinetics.errors import SchemeFileError

    with pytest.raises(SchemeFileError):
        main(["solve", "missing.scheme", "--until", "1h", "--debug"])
    with pytest.raises(SchemeFileError):
        main(["--debug", "solve", "missing.scheme", "--until", "1h"])


def test_internal_error_is_one_sentence_with_status_1(chain, capsys, monkeypatch):
    import kinetics.solution

    def broken(scheme, times):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(kinetics.solution, "solve", broken)
    status, _out, err = run_cli(capsys, "solve", chain, "--until", "1h", "--no-caution")
    assert status == 1
    assert "internal error (RuntimeError: simulated failure)" in err
    assert "Traceback" not in err


@pytest.mark.parametrize(
    "cls",
    [
        "RateMatrixError",
        "ConcentrationError",
        "TimesError",
        "SpeciesError",
        "SettingError",
        "WorkingRangeError",
        "TableSizeError",
        "GrowthError",
        "ArgumentTypeError",
    ],
)
def test_every_core_error_is_one_line_and_status_2(chain, capsys, monkeypatch, cls):
    import kinetics.errors
    import kinetics.solution

    def refused(scheme, times):
        raise getattr(kinetics.errors, cls)("the library refused this", "do that instead")

    monkeypatch.setattr(kinetics.solution, "solve", refused)
    status, out, err = run_cli(capsys, "solve", chain, "--until", "1h", "--no-caution")
    assert (status, out, err) == (2, "", "kinetics: the library refused this; do that instead\n")


def test_interrupted_run_leaves_no_file(chain, capsys, monkeypatch, tmp_path):
    import kinetics.files
    import kinetics.output.export

    original = kinetics.output.export.write_csv

    def interrupted(frame, path):
        with kinetics.files.atomic_path(path) as tmp:
            tmp.write_text("time [min],A [mol/L]\n0,", encoding="utf-8")
            raise KeyboardInterrupt

    monkeypatch.setattr(kinetics.output.export, "write_csv", interrupted)
    status, _, err = run_cli(
        capsys, "solve", chain, "--until", "1h", "--points", "3", "--out", "t.csv", "--no-caution"
    )
    assert status == 130
    assert "interrupted" in err
    assert list(tmp_path.iterdir()) == [chain]
    monkeypatch.setattr(kinetics.output.export, "write_csv", original)


# ---------------------------------------------------------------------------------------
# help and version


@pytest.mark.parametrize("command", ["solve", "report", "check"])
def test_help_shows_a_worked_example(capsys, command):
    status, out, _err = run_cli(capsys, command, "--help")
    assert status == 0
    assert "Example" in out
    assert f"kinetics {command} networks/" in out
    # the example names a file that exists
    example = next(line for line in out.splitlines() if f"kinetics {command} networks/" in line)
    name = example.split(f"kinetics {command} ")[1].split()[0]
    assert (ROOT / name).is_file()


def test_solve_help_documents_every_option(capsys):
    status, out, _ = run_cli(capsys, "solve", "--help")
    assert status == 0
    for option in ("--until", "--points", "--times", "--time-unit", "--out", "--json"):
        assert option in out
    assert "--no-caution" in out
    assert "SAFETY.md" in out
    for ext in ("csv", "xlsx", "json", "parquet", "png", "svg"):
        assert ext in out


def test_version(capsys):
    from kinetics import __version__

    status, out, _ = run_cli(capsys, "--version")
    assert status == 0
    assert __version__ in out


def test_no_arguments_shows_help_with_status_2(capsys):
    status, _out, err = run_cli(capsys)
    assert status == 2
    assert "Commands:" in err
    assert "solve" in err
    assert "report" in err


def test_debug_flag_anywhere_is_moved_to_the_front():
    assert split_debug(["solve", "x", "--debug"]) == (["--debug", "solve", "x"], True)
    assert split_debug(["solve", "--", "--debug"]) == (["solve", "--", "--debug"], False)


# ---------------------------------------------------------------------------------------
# report


def test_report_command_prints_the_caution_and_honours_options(chain, capsys, tmp_path):
    out = tmp_path / "r.html"
    status, stdout, err = run_cli(
        capsys,
        "report",
        chain,
        "--times",
        "0,10,20,40 min",
        "--species",
        "B",
        "--title",
        "Quench study <draft>",
        "--out",
        out,
    )
    assert status == 0, err
    assert stdout == ""
    assert CAUTION in err
    assert f"wrote {out}" in err
    text = out.read_text(encoding="utf-8")
    assert "<h1>Quench study &lt;draft&gt;</h1>" in text
    table = text.split("<h3>Table (4 points")[1]
    assert "B [mol/L]" in table
    assert "A [mol/L]" not in table
    assert "times = 0,10,20,40 min" in text


def test_check_tables_keep_the_units_in_their_headers(chain, capsys):
    status, out, err = run_cli(capsys, "check", chain)
    assert status == 0, err
    for header in ("molar mass [g/mol]", "start [mol/L]", "k [1/s]"):
        assert header in out  # brackets are not swallowed as rich markup


def test_safety_command_prints_the_whole_safety_file(capsys):
    # the packaged copy is the repository's SAFETY.md, byte for byte (common practice, no source)
    root = Path(__file__).resolve().parents[1]
    text = (root / "SAFETY.md").read_text(encoding="utf-8")
    assert (root / "kinetics" / "SAFETY.md").read_text(encoding="utf-8") == text
    assert main(["safety"]) == 0
    assert capsys.readouterr().out == text
    assert CAUTION in text
