"""Every output format, read back and compared with the in-memory result.

The reference in each test is the in-memory :class:`~kinetics.solution.Solution`
(and its summary) computed by the library; the files must hold the same doubles.
"""

from __future__ import annotations

import csv
import json
import math

import numpy as np
import pandas as pd
import pytest

import kinetics
from kinetics import files
from kinetics.analysis.solution_summary import compute_summary, summary_in_units
from kinetics.cli import main
from kinetics.cli.paths import check_output_paths
from kinetics.errors import UsageError
from kinetics.output import export

SCHEME = """title: Export test
A -> B          k1 = 0.1 1/min
B <=> C         kf = 0.02 1/min, kr = 0.01 1/min
start A = 1 mol/L
formula A = C2H4O, B = C2H4O, C = C2H4O
"""


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    """Run solve once with every table format; return (folder, in-memory solution)."""
    folder = tmp_path_factory.mktemp("export")
    path = folder / "s.scheme"
    path.write_text(SCHEME, encoding="utf-8")
    argv = ["solve", str(path), "--until", "2 h", "--points", "41", "--time-unit", "min"]
    argv += ["--no-caution"]
    for name in ("t.csv", "t.xlsx", "t.json", "t.parquet"):
        argv += ["--out", str(folder / name)]
    assert main(argv) == 0
    scheme = kinetics.load(path)
    result = kinetics.solve(scheme, np.linspace(0.0, 7200.0, 41))
    return folder, result


def test_csv_header_and_exact_doubles(written):
    folder, result = written
    with open(folder / "t.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    assert rows[0] == ["time [min]", "A [mol/L]", "B [mol/L]", "C [mol/L]"]
    expected = result.to_frame("min").to_numpy()
    got = np.array([[float(x) for x in row] for row in rows[1:]])
    assert got.shape == expected.shape
    # bit for bit: the text reads back as the same double
    assert np.array_equal(got, expected)


def test_csv_round_trip_of_awkward_doubles(tmp_path):
    values = [
        0.1 + 0.2,
        1 / 3,
        5e-324,  # smallest subnormal
        2.2250738585072014e-308,  # smallest normal
        1.7976931348623157e308,  # largest double
        math.pi * 1e-200,
        0.0,
        123456789.12345679,
    ]
    frame = pd.DataFrame({"time [s]": np.arange(len(values), dtype=float), "X [mol/L]": values})
    path = tmp_path / "odd.csv"
    export.write_csv(frame, path)
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))[1:]
    assert [float(r[1]) for r in rows] == values
    back = pd.read_csv(path)
    assert back["X [mol/L]"].tolist() == values


def test_json_file_equals_the_in_memory_result(written):
    folder, result = written
    doc = json.loads((folder / "t.json").read_text(encoding="utf-8"))
    assert doc["time_unit"] == "min"
    assert doc["concentration_unit"] == "mol/L"
    assert doc["times"] == (result.times / 60.0).tolist()
    for i, name in enumerate(result.species):
        assert doc["concentrations"][name] == result.concentrations[:, i].tolist()
    summary = summary_in_units(compute_summary(result), "min")
    assert doc["summary"] == summary
    # first-order half-life ln2/k1 = 6.93147 min (textbook)
    assert doc["summary"]["A"]["half_life"] == pytest.approx(math.log(2) / 0.1, rel=1e-9, abs=0)


def test_parquet_file_equals_the_in_memory_result(written):
    import pyarrow.parquet as pq

    folder, result = written
    back = pd.read_parquet(folder / "t.parquet")
    pd.testing.assert_frame_equal(back, result.to_frame("min"), check_exact=True)
    meta = json.loads(pq.read_schema(folder / "t.parquet").metadata[b"kinetics"])
    assert meta["time_unit"] == "min"
    assert meta["concentration_unit"] == "mol/L"
    assert meta["title"] == "Export test"


def test_xlsx_sheets_equal_the_in_memory_result(written):
    from openpyxl import load_workbook

    folder, result = written
    book = load_workbook(folder / "t.xlsx", read_only=True)
    assert book.sheetnames == ["concentrations", "summary", "inputs"]
    rows = list(book["concentrations"].iter_rows(values_only=True))
    assert list(rows[0]) == ["time [min]", "A [mol/L]", "B [mol/L]", "C [mol/L]"]
    got = np.array(rows[1:], dtype=float)
    assert np.array_equal(got, result.to_frame("min").to_numpy())

    summary_rows = list(book["summary"].iter_rows(values_only=True))
    header = list(summary_rows[0])
    assert header[0] == "species"
    for column in ("half-life [min]", "t_max [min]", "c_max [mol/L]", "limit [mol/L]"):
        assert column in header
    by_species = {r[0]: dict(zip(header, r, strict=True)) for r in summary_rows[1:]}
    summary = summary_in_units(compute_summary(result), "min")
    assert by_species["A"]["half-life [min]"] == summary["A"]["half_life"]
    assert by_species["B"]["t_max [min]"] == summary["B"]["t_max"]
    assert by_species["B"]["c_max [mol/L]"] == summary["B"]["c_max"]
    # A -> B <=> C closed: the limit keeps B:C at kr:kf = 1:2 (chemical equilibrium,
    # IUPAC Gold Book "chemical relaxation"); total 1 mol/L
    assert by_species["C"]["limit [mol/L]"] == pytest.approx(2 / 3, rel=1e-12, abs=0)
    assert by_species["B"]["limit [mol/L]"] == pytest.approx(1 / 3, rel=1e-12, abs=0)

    inputs = [list(r) for r in book["inputs"].iter_rows(values_only=True)]
    flat = [c for r in inputs for c in r if c is not None]
    assert "constants" in flat
    assert "scheme as written" in flat
    k1_row = next(r for r in inputs if r and r[0] == "k1")
    assert k1_row[1] == "0.1 1/min"  # as given
    assert k1_row[3] == 0.1 / 60  # SI value [1/s], exact conversion (the double nearest)
    assert k1_row[4] == "1/s"
    assert any(r and r[1] == "A -> B          k1 = 0.1 1/min" for r in inputs)


def test_atomic_write_leaves_the_old_file_on_failure(tmp_path):
    target = tmp_path / "keep.csv"
    target.write_text("old content\n", encoding="utf-8")

    def interrupted_write():
        with files.atomic_path(target) as tmp:
            tmp.write_text("half a tab", encoding="utf-8")
            raise RuntimeError("disk went away")

    with pytest.raises(RuntimeError):
        interrupted_write()
    assert target.read_text(encoding="utf-8") == "old content\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.csv"]


def test_xlsx_round_trip_of_awkward_doubles(tmp_path):
    from openpyxl import load_workbook

    values = [0.1 + 0.2, 1 / 3, 5e-324, 1.7976931348623157e308, 2.512345678901234e-05]
    frame = pd.DataFrame({"time [s]": np.arange(len(values), dtype=float), "X [mol/L]": values})
    export.write_xlsx(frame, tmp_path / "odd.xlsx")
    rows = list(load_workbook(tmp_path / "odd.xlsx")["concentrations"].iter_rows(values_only=True))
    assert [r[1] for r in rows[1:]] == values
    # exact numbers without patching openpyxl's private cell writer
    from openpyxl.cell import _writer
    from openpyxl.compat import safe_string

    assert _writer.safe_string is safe_string


def test_atomic_write_replaces_on_success(tmp_path):
    target = tmp_path / "new.json"
    export.write_json({"a": [1.5, None]}, target)
    assert json.loads(target.read_text(encoding="utf-8")) == {"a": [1.5, None]}
    assert sorted(p.name for p in tmp_path.iterdir()) == ["new.json"]


def test_json_refuses_nan(tmp_path):
    with pytest.raises(ValueError, match="not JSON compliant"):
        export.write_json({"x": float("nan")}, tmp_path / "x.json")
    assert list(tmp_path.iterdir()) == []


def test_check_output_paths(tmp_path):
    scheme = tmp_path / "in.scheme"
    scheme.write_text("x", encoding="utf-8")
    ok = check_output_paths([tmp_path / "a.CSV", tmp_path / "b.png"], [scheme])
    assert [p.name for p in ok] == ["a.CSV", "b.png"]
    with pytest.raises(UsageError, match="is an input file"):
        check_output_paths([scheme], [scheme])
    with pytest.raises(UsageError, match="is a folder"):
        check_output_paths([tmp_path], [scheme])
    with pytest.raises(UsageError, match=r"extension '\.doc'"):
        check_output_paths([tmp_path / "a.doc"], [scheme])
    with pytest.raises(UsageError, match="given twice"):
        check_output_paths([tmp_path / "a.csv", tmp_path / "./a.csv"], [scheme])


def test_written_files_get_ordinary_permissions(tmp_path):
    # a finished file is readable like any other new file: 0666 less the umask
    # (POSIX file-creation semantics; common practice, no source)
    import os
    import stat

    from kinetics.files import atomic_path

    target = tmp_path / "table.csv"
    with atomic_path(target) as tmp:
        tmp.write_text("a\n")
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(target.stat().st_mode) == 0o666 & ~mask
