"""The ``kinetics optimise`` command (kinetics/cli/optimise.py) and what it reports
(kinetics/output/optimum.py).  Reference: for A -> B -> C the best quench time is
ln(k1/k2)/(k1 - k2) (Atkins & de Paula, "Physical Chemistry", 10th ed., 2014)."""

from __future__ import annotations

import doctest
import json
import math
from pathlib import Path

import pytest

from kinetics.cli import main
from kinetics.output import optimum as module
from kinetics.output.overview import CAUTION

NETWORKS = Path(__file__).resolve().parent.parent / "networks"
QUENCH = str(NETWORKS / "quench_window.scheme")


@pytest.fixture
def chain(tmp_path):
    path = tmp_path / "chain.scheme"
    path.write_text(
        "title: chain\nA -> B  k1 = 0.3 1/min\nB -> C  k2 = 0.1 1/min\nstart A = 1 mol/L\n"
    )
    return path


def test_doctests_run():
    failed, _ = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert failed == 0


def test_json_carries_best_objective_and_active_requirements(capsys):
    argv = ["optimise", QUENCH, "--maximise", "P", "--over", "temperature=30:90:degC"]
    assert main([*argv, "--over", "time=0:8:h", "--json"]) == 0
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    assert set(doc["best"]) == {"temperature", "time"}
    assert doc["best"]["time"]["unit"] == "h"
    assert doc["best"]["temperature"]["unit"] == "degC"
    assert doc["objective_unit"] == "mol/L"
    assert doc["active_requirements"] == ["IMP <= 0.15 % of SM"]
    assert doc["feasible"] is True
    assert CAUTION in captured.err


def test_the_terminal_shows_the_optimum_and_the_flat_ranges(chain, capsys):
    assert main(["optimise", str(chain), "--maximise", "B", "--over", "time=0:30:min"]) == 0
    out = capsys.readouterr().out
    best = math.log(3) / 0.2
    assert "target: maximise B at the end time" in out
    assert f"time [min]: {best:.6g} (within 1 % of the best from" in out
    assert "B at the optimum [mol/L]: 0.57735" in out


def test_best_time_reports_the_time_in_the_unit_of_until(chain, capsys):
    argv = ["optimise", str(chain), "--maximise", "B", "--best-time", "--until", "1h"]
    assert main([*argv, "--over", "start:A=1:2", "--json", "--no-caution"]) == 0
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    assert doc["best"]["time"]["unit"] == "h"
    assert doc["best"]["time"]["value"] == pytest.approx(math.log(3) / 0.2 / 60, rel=1e-7)
    assert doc["best"]["start:A"]["value"] == pytest.approx(2.0)
    assert doc["target"]["at"] == "best time"
    assert captured.err == ""


def test_the_plot_and_the_json_file_are_written(chain, tmp_path, capsys):
    figure, document = tmp_path / "opt.png", tmp_path / "opt.json"
    argv = ["optimise", str(chain), "--maximise", "B", "--over", "time=0:30:min", "--no-caution"]
    assert main([*argv, "--plot-out", str(figure), "--out", str(document)]) == 0
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert json.loads(document.read_text())["target"]["species"] == "B"
    err = capsys.readouterr().err
    assert f"wrote {document}" in err
    assert f"wrote {figure}" in err


def test_a_two_setting_plot_with_a_broken_region(tmp_path, capsys):
    figure = tmp_path / "opt.svg"
    argv = ["optimise", QUENCH, "--minimise", "IMP", "--over", "temperature=30:90:degC"]
    assert main([*argv, "--until", "3h", "--plot-out", str(figure), "--no-caution"]) == 0
    assert figure.read_text().startswith("<?xml")


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (
            ["--maximise", "B", "--minimise", "C"],
            "kinetics: give one target: --maximise SPECIES or --minimise SPECIES; e.g. "
            "--maximise P",
        ),
        (
            ["--maximise", "B", "--plot-out", "x.pdf"],
            "kinetics: --plot-out 'x.pdf' must end in .png or .svg; e.g. --plot-out optimum.png",
        ),
        (
            ["--maximise", "B", "--until", "soon"],
            "kinetics: --until 'soon' is not a duration with a unit; write e.g. --until '90 min'",
        ),
    ],
)
def test_mistakes_are_one_line_with_status_2(chain, capsys, extra, message):
    argv = ["optimise", str(chain), "--over", "time=0:30:min", *extra]
    assert main(argv) == 2
    assert capsys.readouterr().err.strip() == message


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (
            ["--maximise", "Q", "--over", "time=0:30:min"],
            "'Q' is not a species of the scheme that changes; species: A, B, C",
        ),
        (
            ["--maximise", "B", "--over", "start:A=1:2"],
            "no time given: the end time is needed; add --until, e.g. --until 10h, or --over "
            "time=0:10:h",
        ),
        (
            ["--maximise", "B", "--best-time"],
            "no time given: the latest time to consider is needed; add --until, e.g. --until "
            "10h, or --over time=0:10:h",
        ),
        (
            ["--maximise", "B", "--best-time", "--until", "1h", "--over", "time=0:30:min"],
            "--best-time finds the best time itself, so --over time is not needed; give the "
            "latest time to consider with --until, or use --at-end with --over time",
        ),
        (
            ["--maximise", "B", "--over", "time=0:30:min", "--over", "time=0:20:min"],
            "--over names time twice; give each setting once",
        ),
        (
            ["--maximise", "B", "--until", "1h"],
            "nothing to optimise: no setting is given; give at least one, e.g. --over "
            "temperature=20:80:degC or --over time=0:10:h",
        ),
        (
            ["--maximise", "B", "--until", "1h", "--over", "temperature=20:80:degC"],
            "--over 'temperature=20:80:degC': no constant of the scheme follows the "
            "temperature, so it changes nothing; define a constant by a temperature law, e.g. "
            "k = arrhenius(A = ..., Ea = ...), to optimise the temperature",
        ),
        (
            ["--maximise", "B", "--over", "temperature"],
            "--over 'temperature' has no '='; write NAME=LO:HI:UNIT, e.g. "
            "temperature=20:80:degC, time=0:10:h, t_p=40:60:h, start:A=0.5:2:mol/L",
        ),
        (
            ["--maximise", "B", "--over", "time=0:5:K"],
            "--over 'time=0:5:K': 'K' is not a unit of time; write e.g. time=0:10:h",
        ),
        (
            ["--maximise", "B", "--over", "k9=1:2"],
            "--over 'k9=1:2': 'k9' is not a setting of the scheme; settings are time, "
            "temperature, k1, k2, start:<species>, excess:<species>",
        ),
        (
            ["--maximise", "B", "--over", "k1.A=1:2:1/s"],
            "--over 'k1.A=1:2:1/s': k1 is given as a number, not by the Arrhenius law, so it "
            "has no A; optimise k1 itself, e.g. write --over 'k1=0.5:2:1/min'",
        ),
    ],
)
def test_the_command_line_words_the_library_checks_with_its_options(chain, capsys, argv, message):
    assert main(["optimise", str(chain), *argv, "--no-caution"]) == 2
    assert capsys.readouterr().err.strip() == "kinetics: " + message


def test_a_yield_without_start_values_is_refused_on_the_command_line(tmp_path, capsys):
    path = tmp_path / "feed.scheme"
    path.write_text("A -> B  k1 = 0.3 1/s\nfeed A = 1 mol/L/s\n")
    argv = ["optimise", str(path), "--maximise", "B", "--over", "time=0:1:s", "--yield"]
    assert main([*argv, "--no-caution"]) == 2
    assert capsys.readouterr().err.strip() == (
        "kinetics: a yield needs start values; give the starting materials start values"
    )


def test_help_shows_a_worked_example_on_a_file_that_exists(capsys):
    assert main(["optimise", "--help"]) == 0
    out = capsys.readouterr().out
    line = next(x for x in out.splitlines() if "kinetics optimise networks/" in x)
    assert (NETWORKS.parent / line.split()[2]).is_file()


def test_sensitivity_adds_the_key_and_the_line_it_hinges_on(capsys):
    argv = ["optimise", QUENCH, "--maximise", "P", "--over", "temperature=30:90:degC"]
    argv += ["--over", "time=0:8:h", "--no-caution", "--sensitivity"]
    assert main([*argv, "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc["sensitivity"]) == {"objective", "best"}
    assert set(doc["sensitivity"]["objective"]) == {"k1", "k2", "k3"}
    assert set(doc["sensitivity"]["best"]) == {"temperature", "time"}
    assert main(argv) == 0
    assert "the optimum hinges on (d ln target / d ln p): k1 +0.157" in capsys.readouterr().out
    assert main([*argv[:-1], "--json"]) == 0
    assert "sensitivity" not in json.loads(capsys.readouterr().out)


def test_the_activity_of_a_daughter_at_its_best_time(tmp_path, capsys):
    path = tmp_path / "generator.scheme"
    path.write_text("P -> D  half_life = 66 h\nD -> X  half_life = 6 h\nstart P = 10 GBq\n")
    argv = ["optimise", str(path), "--maximise", "D", "--best-time", "--until", "400h"]
    assert main([*argv, "--activity", "GBq", "--json", "--no-caution"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["objective_unit"] == "GBq"
    assert doc["target"]["quantity"] == "activity"
    lam_p, lam_d = math.log(2) / 66, math.log(2) / 6  # per hour
    t_max = math.log(lam_d / lam_p) / (lam_d - lam_p)  # Bateman; textbook maximum
    assert doc["best"]["time"]["value"] == pytest.approx(t_max, rel=1e-9)
    assert main([*argv, "--activity", "GBq", "--yield", "--no-caution"]) == 2
    assert capsys.readouterr().err.strip() == (
        "kinetics: a yield and --activity ask for two targets; optimise the yield or the activity"
    )
