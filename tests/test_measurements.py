"""Reading measured-data tables (``DATA.csv``) for fitting.

References: unit factors are SI definitions (1 min = 60 s, 1 h = 3600 s,
1 mmol/L = 1e-3 mol/L; common practice, no source); the molar mass of glucose
C6H12O6 is 180.156 g/mol (IUPAC standard atomic weights).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import kinetics
from kinetics.cli import main
from kinetics.errors import DataError, KineticsError, UsageError
from kinetics.measurements import measurements_from_frame, parse_condition, read_measurements

SCHEME = """A -> B    k1 = 0.1 1/min
B -> C    k2 = 0.05 1/min
C + W -> D    k3 = 1e-3 L/mol/min
excess W = 55 mol/L
start A = 1 mol/L
formula A = C6H12O6, B = C6H12O6, C = C6H12O6
balance: lumped
"""


@pytest.fixture(scope="module")
def scheme():
    return kinetics.parse(SCHEME, strict_balance=False)


def write(tmp_path, text: str, name: str = "d.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_reads_units_blanks_and_subset(tmp_path, scheme):
    path = write(
        tmp_path,
        "time [h],B [mmol/L],C [mol/L]\n0.5,250,\n0,0,0\n1,300.5,0.25\n",
    )
    m = read_measurements(path, scheme)
    np.testing.assert_allclose(m.times, [0.0, 1800.0, 3600.0], rtol=1e-15, atol=0)  # SI
    assert m.species == ("B", "C")
    assert m.units == ("mmol/L", "mol/L")
    np.testing.assert_allclose(m.values[:, 0], [0.0, 0.25, 0.3005], rtol=1e-15, atol=0)
    assert np.isnan(m.values[1, 1])  # the blank cell, after sorting by time
    assert m.points == 5
    assert m.sd is None
    assert m.concentration_unit == "mol/L"


def test_export_round_trip(tmp_path, scheme):
    """A table written by `kinetics solve --out` reads back as the same doubles."""
    sol = kinetics.solve(scheme, np.linspace(0, 3600, 7))
    path = tmp_path / "t.csv"
    from kinetics.output.export import write_csv

    write_csv(sol.to_frame("min"), path)
    m = read_measurements(path, scheme)
    np.testing.assert_array_equal(m.values, sol.concentrations)
    np.testing.assert_allclose(m.times, sol.times, rtol=1e-15, atol=1e-12)


def test_frame_and_sd_columns(scheme):
    frame = pd.DataFrame(
        {
            "time [min]": [0.0, 10.0, 20.0],
            "B [mol/L]": [0.0, 0.5, np.nan],
            "B sd [mol/L]": [0.01, 0.02, np.nan],
        }
    )
    m = measurements_from_frame(frame, scheme)
    np.testing.assert_allclose(m.sd[:2, 0], [0.01, 0.02], rtol=0, atol=0)
    assert m.points == 2
    back = m.to_frame()
    assert list(back.columns) == ["time [min]", "B [mol/L]"]


def test_mass_concentration_through_molar_mass(tmp_path, scheme):
    # 180.156 g/L of glucose is 1 mol/L (IUPAC standard atomic weights)
    m = read_measurements(write(tmp_path, "time [s],B [g/L]\n0,180.156\n"), scheme)
    np.testing.assert_allclose(m.values[0, 0], 1.0, rtol=1e-4, atol=0)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "time [min],X [mol/L]\n0,1\n",
            "d.csv: column 'X [mol/L]' names 'X', which is not a species of the scheme; "
            "the species are A, B, C, D",
        ),
        (
            "time [min],b [mol/L]\n0,1\n",
            "d.csv: column 'b [mol/L]' names 'b', which is not a species of the scheme; "
            "did you mean 'B'? (the species are A, B, C, D)",
        ),
        (
            "time [min],B [m]\n0,1\n",
            "d.csv: column 'B [m]' has the unit 'm', which is a length; the scheme's "
            "concentrations are in mol/L (a concentration (amount/volume)); "
            "write a concentration unit such as mol/L",
        ),
        (
            "time [min],B [mol/L]\n0,abc\n",
            "d.csv: row 2, column 'B [mol/L]': 'abc' is not a number; write plain numbers "
            "(e.g. 0.25 or 2.5e-1); leave a cell blank when it is missing",
        ),
        (
            "time [min],B [mol/L]\n-1,0.1\n",
            "d.csv: row 2: the time -1 is negative; times start at 0, the moment the start "
            "values apply",
        ),
        (
            "time [mol/L],B [mol/L]\n0,0.1\n",
            "d.csv: the time column unit 'mol/L' is a concentration (amount/volume), not a "
            "time; use s, min, h, d, week, month (1/12 year), year (365.25 d; also yr or a), "
            "or prefixed seconds such as ms and us",
        ),
        (
            "B [mol/L],time [min]\n0,0.1\n",
            "d.csv: the first column must be the time, not 'B [mol/L]'; put a column such as "
            "'time [min]' first",
        ),
        (
            "time [min],B\n0,0.1\n",
            "d.csv: column 2 header 'B' has no unit in square brackets; write headers as "
            "'time [min]' and 'B [mol/L]'",
        ),
        (
            "time [min],W [mol/L]\n0,0.1\n",
            "d.csv: column 'W [mol/L]' is W, which is held in excess (constant) and cannot be "
            "fitted; remove the column",
        ),
        (
            "time [min],B [mol/L],B [mmol/L]\n0,0.1,1\n",
            "d.csv: column 'B [mmol/L]' repeats column 2; give each species once (replicates "
            "go in extra rows)",
        ),
        (
            "time [min],B [mol/L]\n0,inf\n",
            "d.csv: row 2, column 'B [mol/L]': 'inf' is not a finite number; leave a cell "
            "blank when the value is missing",
        ),
        ("time [min],B [mol/L]\n", "d.csv: the table has a header but no rows; add measured rows"),
        ("", "d.csv: the data file is empty; write a header such as 'time [min],B [mol/L]'"),
        (
            "time [min],B [mol/L]\n0,\n",
            "d.csv: the table has no measured values (all cells blank)",
        ),
        (
            "time [min],B [mol/L]\n,0.1\n",
            "d.csv: row 2 has no time; give a time in every row",
        ),
    ],
)
def test_bad_tables_are_clear_errors(tmp_path, scheme, text, message, monkeypatch):
    monkeypatch.chdir(tmp_path)
    write(tmp_path, text)
    with pytest.raises(DataError) as info:
        read_measurements("d.csv", scheme)
    assert str(info.value) == message
    assert isinstance(info.value, KineticsError)


def test_spreadsheet_quirks(tmp_path, scheme):
    m = read_measurements(write(tmp_path, "time [min],B [mol/L],\n0,0.1,\n5,0.2,\n"), scheme)
    assert m.species == ("B",)
    with pytest.raises(DataError) as info:
        read_measurements(write(tmp_path, "time [min];B [mol/L]\n0;0.1\n"), scheme)
    assert str(info.value).endswith(
        "the table needs a time column and at least one species column; separate the columns "
        "with commas: write a header such as 'time [min],B [mol/L]'"
    )


def test_missing_file_and_folder(tmp_path, scheme):
    with pytest.raises(DataError, match="does not exist"):
        read_measurements(tmp_path / "nope.csv", scheme)
    with pytest.raises(DataError, match="is a folder"):
        read_measurements(tmp_path, scheme)
    (tmp_path / "latin.csv").write_bytes("time [min],B [mol/L]\n0,\xb5\n".encode("latin-1"))
    with pytest.raises(DataError, match="not UTF-8"):
        read_measurements(tmp_path / "latin.csv", scheme)


def test_conditions(scheme):
    assert parse_condition("temperature=25degC", scheme) == ("temperature", 298.15)
    key, value = parse_condition("start:A=250 mmol/L", scheme)
    assert key == "start:A"
    assert value == pytest.approx(0.25, rel=1e-15)
    key, value = parse_condition("k1=6 1/min", scheme)
    assert (key, value) == ("k1", pytest.approx(0.1, rel=1e-15))  # 6/min = 0.1/s
    assert parse_condition("k1=6/min", scheme) == ("k1", pytest.approx(0.1, rel=1e-15))
    for text, message in [
        (
            "temperature",
            "--set 'temperature' is not KEY=VALUE; write e.g. --set temperature=40degC",
        ),
        (
            "speed=3 1/s",
            "--set 'speed=3 1/s': unknown key 'speed'; use temperature=..., "
            "start:SPECIES=... or the name of a rate constant",
        ),
        (
            "temperature=300 mol",
            "--set 'temperature=300 mol': 'mol' is not a temperature unit; use K or degC",
        ),
        (
            "k1=3 mol/L",
            "--set 'k1=3 mol/L': k1 needs a unit like 1/min; write e.g. --set k1=0.1 1/min",
        ),
    ]:
        with pytest.raises(UsageError) as info:
            parse_condition(text, scheme)
        assert str(info.value) == message


def test_cli_bad_data_exit_2(tmp_path, capsys):
    scheme = write(tmp_path, SCHEME, "s.scheme")
    cases = {
        "unknown.csv": ("time [min],Q [mol/L]\n0,1\n10,0.5\n", "which is not a species"),
        "dimension.csv": ("time [min],B [g]\n0,1\n10,0.5\n", "which is a mass"),
        "text.csv": ("time [min],B [mol/L]\n0,1\n10,n/a\n", "'n/a' is not a number"),
        "negative.csv": ("time [min],B [mol/L]\n-5,1\n10,0.5\n", "the time -5 is negative"),
        "few.csv": (
            "time [min],B [mol/L]\n10,0.5\n",
            "1 measured value cannot determine 2 free parameters",
        ),
    }
    for name, (text, fragment) in cases.items():
        data = write(tmp_path, text, name)
        status = main(["fit", str(scheme), str(data), "--free", "k1,k2"])
        err = capsys.readouterr().err
        assert status == 2, name
        assert fragment in err, (name, err)
        assert "Traceback" not in err
