"""Temperature records: reading with every message pinned, mean kinetic temperature.

Check values: Haynes' formula computed by hand (J. D. Haynes, J. Pharm. Sci. 60, 927
(1971)); 83.144 kJ/mol as the default activation energy is common practice, no source.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import kinetics
from kinetics.errors import DataError, SettingError, TimesError
from kinetics.temperature_log import (
    DEFAULT_ACTIVATION_ENERGY,
    TemperatureLog,
    equivalent_temperatures,
    mean_kinetic_temperature,
    parse_temperature_log,
    read_temperature_log,
)
from kinetics.timeline import At, Place, TemperatureStep
from kinetics.units import GAS_CONSTANT

HEADER = "time [h],temperature [degC]\n"


def haynes(temperatures, activation_energy=DEFAULT_ACTIVATION_ENERGY):
    """Haynes' formula with equal weights, written out by hand."""
    h_over_r = activation_energy / GAS_CONSTANT
    mean = sum(math.exp(-h_over_r / T) for T in temperatures) / len(temperatures)
    return h_over_r / -math.log(mean)


def test_reads_a_logger_record_with_comments_and_blank_lines():
    log = parse_temperature_log(
        "# invented storage room, logger 2\n" + HEADER + "0, 25.0\n\n0.5,25.5\n# door open\n1,30\n",
        "store.csv",
    )
    assert log.times.tolist() == [0.0, 1800.0, 3600.0]
    assert log.temperatures.tolist() == [298.15, 298.65, 303.15]
    assert log.lines == (3, 5, 7)
    assert log.source == "store.csv"


def test_kelvin_and_minutes():
    log = parse_temperature_log("time [min],temperature [K]\n0,300\n90,310.5\n")
    assert log.times.tolist() == [0.0, 5400.0]
    assert log.temperatures.tolist() == [300.0, 310.5]


def test_read_from_a_file(tmp_path):
    path = tmp_path / "store.csv"
    path.write_text(HEADER + "0,25\n24,30\n", encoding="utf-8")
    assert read_temperature_log(path).temperatures.tolist() == [298.15, 303.15]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (HEADER + "0,25\n2,26\n1,27\n",
         "store.csv:4:1: the time 1 is not after the time 2 of line 3; sort the readings by "
         "time, each time once"),
        (HEADER + "0,25\n2,26\n2,27\n",
         "store.csv:4:1: the time 2 is not after the time 2 of line 3; sort the readings by "
         "time, each time once"),
        (HEADER + "0,25\n2,twenty\n",
         "store.csv:3:3: the temperature 'twenty' is not a number; write the temperature as a "
         "number such as 21.5"),
        (HEADER + "0,25\n2 h,26\n",
         "store.csv:3:1: the time '2 h' is not a number; write the time as a number such as 12 "
         "(its unit is in the header)"),
        (HEADER + "0,nan\n",
         "store.csv:2:3: the temperature 'nan' is not a number; write the temperature as a "
         "number such as 21.5"),
        (HEADER + "1_0,20\n",
         "store.csv:2:1: the time '1_0' is not a number; write the time as a number such as 12 "
         "(its unit is in the header)"),
        (HEADER + "0,\n",
         "store.csv:2:3: no temperature; write the temperature as a number such as 21.5"),
        ("time [h],temperature\n0,25\n",
         "store.csv:1:10: the column 'temperature' has no unit in square brackets; write the "
         "header as 'time [h],temperature [degC]'"),
        ("time,temperature [K]\n0,25\n",
         "store.csv:1:1: the column 'time' has no unit in square brackets; write the header as "
         "'time [h],temperature [degC]'"),
        ("time [h],humidity [degC]\n0,25\n",
         "store.csv:1:10: the column 'humidity [degC]' should be the temperature; write the "
         "header as 'time [h],temperature [degC]'"),
        ("time [h],temperature [degC],humidity [%]\n0,25,40\n",
         "store.csv:1:1: the header has 3 columns; a temperature record has two: time and "
         "temperature; write the header as 'time [h],temperature [degC]'"),
        ("time [h];temperature [degC]\n0;25\n",
         "store.csv:1:1: the header has 1 column; a temperature record has two: time and "
         "temperature; separate the columns with commas; write the header as "
         "'time [h],temperature [degC]'"),
        ("time [rain],temperature [degC]\n0,25\n",
         "store.csv:1:1: 'rain' is not a unit of time; use s, min, h, d, week, month (1/12 "
         "year), year (365.25 d; also yr or a), or prefixed seconds such as ms and us"),
        ("time [h],temperature [mol]\n0,25\n",
         "store.csv:1:10: 'mol' is not a unit of temperature; use degC or K"),
        (HEADER + "-1,25\n",
         "store.csv:2:1: the time -1 is negative; times count from the start of the run, 0 or "
         "later"),
        (HEADER + "0,-300\n",
         "store.csv:2:3: the temperature -300 degC is not above 0 K; check the unit in the "
         "header (degC or K)"),
        (HEADER + "0,25,3\n",
         "store.csv:2:6: this reading has 3 cells; a reading has a time and a temperature; "
         "write one reading per line, such as '12,21.5'"),
        (HEADER + "0\n",
         "store.csv:2:1: this reading has 1 cell; a reading has a time and a temperature; "
         "write one reading per line, such as '12,21.5'"),
        ("\n\n# nothing\n",
         "store.csv: the temperature record is empty; write the header as "
         "'time [h],temperature [degC]'"),
        (HEADER,
         "store.csv: the temperature record has a header but no readings; add one reading per "
         "line, such as '0,21.5'"),
    ],
)  # fmt: skip
def test_each_mistake_names_file_line_and_column(text, message):
    with pytest.raises(DataError) as info:
        parse_temperature_log(text, "store.csv")
    assert str(info.value) == message


def test_unreadable_files(tmp_path):
    with pytest.raises(DataError) as info:
        read_temperature_log(tmp_path / "missing.csv")
    assert (
        str(info.value)
        == f"{tmp_path / 'missing.csv'}: the temperature record does not exist; check the file name"
    )
    with pytest.raises(DataError) as info:
        read_temperature_log(tmp_path)
    assert str(info.value) == f"{tmp_path}: the path is a folder, not a file; give a CSV file"
    bad = tmp_path / "latin.csv"
    bad.write_bytes(HEADER.encode() + b"0,25\xb0\n")
    with pytest.raises(DataError) as info:
        read_temperature_log(bad)
    assert (
        str(info.value) == f"{bad}: the temperature record is not UTF-8 text; save it as UTF-8 CSV"
    )


def test_timeline_has_one_step_per_change_with_its_line():
    log = parse_temperature_log(HEADER + "0,25\n1,25\n2,30\n3,30\n4,25\n", "store.csv")
    steps = log.timeline().statements
    assert [(s.time / 3600, s.action.temperature) for s in steps] == [
        (0.0, 298.15),
        (2.0, 303.15),
        (4.0, 298.15),
    ]
    assert steps[1] == At(7200.0, TemperatureStep(303.15), Place("store.csv", 4))


def test_mean_kinetic_temperature_of_a_constant_record_is_that_temperature():
    log = parse_temperature_log(HEADER + "0,25\n5,25\n9,25\n")
    assert log.mean_kinetic_temperature() == pytest.approx(298.15, rel=1e-14)
    assert log.mean_kinetic_temperature(end=20 * 3600.0) == pytest.approx(298.15, rel=1e-14)


def test_mean_kinetic_temperature_of_a_two_level_record_is_haynes_by_hand():
    log = parse_temperature_log(HEADER + "0,25\n12,35\n")
    got = log.mean_kinetic_temperature(end=24 * 3600.0)
    assert got == pytest.approx(haynes([298.15, 308.15]), rel=1e-14)
    assert got == pytest.approx(304.37, abs=0.005)  # 10000 K / -ln(mean), by hand
    # a third of the time at 35 degC: the same formula with the reading held twice as long
    assert log.mean_kinetic_temperature(end=18 * 3600.0) == pytest.approx(
        haynes([298.15, 298.15, 308.15]), rel=1e-14
    )


def test_equally_spaced_readings_held_one_interval_give_haynes_equal_weights():
    temperatures = [20.0, 24.5, 31.0, 28.0, 22.0, 19.5]
    text = HEADER + "".join(f"{k},{T}\n" for k, T in enumerate(temperatures))
    log = parse_temperature_log(text)
    kelvin = [T + 273.15 for T in temperatures]
    assert log.mean_kinetic_temperature(60_000.0, end=6 * 3600.0) == pytest.approx(
        haynes(kelvin, 60_000.0), rel=1e-14
    )


def test_the_last_reading_holds_no_time_when_the_window_ends_there():
    log = parse_temperature_log(HEADER + "0,20\n1,40\n")
    assert log.mean_kinetic_temperature() == pytest.approx(293.15, rel=1e-14)


def test_a_hot_excursion_weighs_more_than_its_share_of_time():
    log = parse_temperature_log(HEADER + "0,5\n20,40\n24,5\n")
    mkt = log.mean_kinetic_temperature(end=48 * 3600.0)
    arithmetic = (20 * 278.15 + 4 * 313.15 + 24 * 278.15) / 48
    assert mkt > arithmetic


def test_equivalent_temperature_of_each_arrhenius_constant():
    scheme = kinetics.parse(
        "A -> B  k1 = arrhenius(A = 1e12 1/s, Ea = 60 kJ/mol)\n"
        "B -> C  k2 = arrhenius(A = 1e14 1/s, Ea = 120 kJ/mol)\nC -> D  k3 = 1e-6 1/s\n"
        "temperature = 25 degC\nstart A = 1 M"
    )
    log = parse_temperature_log(HEADER + "0,20\n10,35\n")
    eq = equivalent_temperatures(log, scheme, end=20 * 3600.0)
    assert set(eq) == {"k1", "k2"}
    assert eq["k1"] == pytest.approx(haynes([293.15, 308.15], 60_000.0), rel=1e-14)
    assert eq["k2"] == pytest.approx(haynes([293.15, 308.15], 120_000.0), rel=1e-14)
    assert eq["k1"] < eq["k2"]  # a higher activation energy weighs the warm half more


@pytest.mark.parametrize(
    ("args", "kind", "message"),
    [
        (([0.0], [300.0], DEFAULT_ACTIVATION_ENERGY, -1.0), TimesError,
         "the window of a mean kinetic temperature must start at the first reading; give an "
         "end at or after the first reading time"),
        (([], [], DEFAULT_ACTIVATION_ENERGY, None), TimesError,
         "the window of a mean kinetic temperature must start at the first reading; give an "
         "end at or after the first reading time"),
        (([0.0], [300.0], 0.0, None), SettingError,
         "the activation energy must be finite and above 0 J/mol, not 0.0"),
    ],
)  # fmt: skip
def test_mean_kinetic_temperature_refuses_bad_arguments(args, kind, message):
    with pytest.raises(kind) as info:
        mean_kinetic_temperature(*args)
    assert type(info.value) is kind
    assert str(info.value) == message


def test_a_window_of_no_length_gives_the_reading_in_force():
    log = TemperatureLog(np.array([0.0, 100.0]), np.array([300.0, 310.0]))
    assert log.mean_kinetic_temperature(end=0.0) == 300.0


def test_examples_in_the_docstrings():
    import doctest

    import kinetics.temperature_log as module

    assert doctest.testmod(module).failed == 0
