"""Hostile, extreme and mistaken input to the scheme language (issue 12).

Every class of input the issue lists, each with its exact outcome: a refusal with the
message pinned verbatim (exit status 2 on the command line), a correct result, or a
warning text.  The wording is the project's own (common practice, no source).

Classes: work bounded per statement and per file (long lines, long units and numbers,
huge exponents, binary files, ``/dev/zero``, too many problems); silent acceptances
(repeated and parallel steps, numbers that a double rounds to 0, nothing to start from,
keywords as names); cascading errors (only the root cause is reported); mass units with
stoichiometry (converted with molar masses; output in mass units and "% of applied").
The hypothesis fuzzer at the end asserts that any text raises nothing but the project's
own errors and that parsing takes time in proportion to the size of the input.
"""

from __future__ import annotations

import os
import time
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import kinetics
from kinetics import KineticsError, SchemeErrors, SchemeFileError, UsageError, load, parse
from kinetics.cli import main
from kinetics.errors import TimesError

SRC = "t.scheme"
ROOT = Path(__file__).resolve().parents[1]


def headlines(text: str) -> list[str]:
    with pytest.raises(SchemeErrors) as info:
        parse(text, SRC)
    return [e.headline() for e in info.value.errors]


def run(capsys, *argv) -> tuple[int, str, str]:
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return status, out, err


# ---------------------------------------------------------------------------------------
# bounded work: lines, units, numbers, files


def test_a_line_over_the_limit_is_refused_before_it_is_parsed():
    # 40 kB after a constant's unit took 14.6 s before (pint's reading of the unit)
    text = "A -> B  k1 = 0.1 1/s " + "x" * 40_000 + "\nstart A = 1 M\n"
    assert headlines(text) == [
        "t.scheme:1:1: this line has 40,021 characters; a line may have at most 10,000; write "
        "one statement per line (is this a scheme file?)"
    ]
    with pytest.raises(SchemeErrors) as info:
        parse(text, SRC)
    shown = str(info.value).splitlines()[1]
    assert len(shown) < 130
    assert shown.endswith("…")


def test_text_run_on_after_a_unit_is_quoted_cut():
    assert headlines("A -> B  k1 = 0.1 1/s " + "x" * 5000 + "\nstart A = 1 M\n") == [
        "t.scheme:1:18: unknown unit '1/s " + "x" * 56 + "… (5,004 characters)' for rate "
        "constant k1 (a unit has at most 60 characters; this one has 5,004); write a unit such "
        "as 1/s"
    ]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "A -> B  k1 = 0." + "0" * 5000 + "1 1/s\nstart A = 1 M\n",
            "t.scheme:1:14: rate constant k1 is a number of 5,003 characters (at most 40); "
            "write it with an exponent, e.g. 0.12 1/min",
        ),
        (  # the exponent was once expanded into a power of ten: a hang
            "A -> B  k1 = 1e-999999999 1/s\nstart A = 1 M\n",
            "t.scheme:1:14: rate constant k1 is 1e-999999999, which is too small for a "
            "floating-point number (it would become 0; the smallest is about 5e-324); check "
            "the exponent, or write 0 if you mean zero",
        ),
        (
            "A -> B  k1 = arrhenius(A = 1e13 1/s, Ea = 90 kJ/mol)\nstart A = 1 M\n"
            "temperature = 1e-99999999 K\n",
            "t.scheme:3:15: the temperature is 1e-99999999, which is too small for a "
            "floating-point number (it would become 0; the smallest is about 5e-324); check "
            "the exponent, or write 0 if you mean zero",
        ),
        (
            "A -> B  k1 = 1 1/s\nstart A = 1 M\nmolar_mass A = 1e-99999999 g/mol\n",
            "t.scheme:3:16: the molar mass of A is 1e-99999999, which is too small for a "
            "floating-point number (it would become 0; the smallest is about 5e-324); check "
            "the exponent, or write 0 if you mean zero",
        ),
        (  # 1e400 molecules: once an infinite entry of the rate matrix
            "A -> " + "9" * 400 + " B  k1 = 1 1/s\nstart A = 1 M\n",
            "t.scheme:1:6: stoichiometric coefficient of B is '" + "9" * 60 + "… (400 "
            "characters)', which is too large to count molecules; write a coefficient such as 2 "
            "or 0.5",
        ),
        (
            "A -> B  k1 = 0.1 1/s\x00\nstart A = 1 M\n",
            "t.scheme:1:21: this line contains the control character U+0000, which a scheme "
            "file never holds; save the scheme as plain UTF-8 text (is this a scheme file?)",
        ),
    ],
)
def test_numbers_and_characters_that_cannot_be_read_in_bounded_time(text, message):
    assert headlines(text) == [message]


def test_a_zero_with_a_huge_exponent_is_zero():
    scheme = parse("A -> B  k1 = 0e999999999 1/s\nstart A = 1 M\n")
    assert scheme.rates.tolist() == [0.0]


def test_lone_carriage_returns_end_lines():
    scheme = parse("A -> B  k1 = 0.1 1/s\rstart A = 1 M\r")
    assert scheme.initial == {"A": 1.0}


def test_dev_zero_ends_at_once_with_a_message(capsys):
    if not os.path.exists("/dev/zero"):
        pytest.skip("no /dev/zero here")
    status, _, err = run(capsys, "check", "/dev/zero")
    assert status == 2
    assert err == (
        "kinetics: /dev/zero: the file is not text (it holds a NUL byte, first on line 1); a "
        "scheme is plain UTF-8 text; is this the right file?\n"
    )


def test_a_file_over_the_size_limit_is_refused_unread(tmp_path):
    path = tmp_path / "big.scheme"
    with path.open("wb") as handle:  # sparse: nothing is written but the size
        handle.truncate(32 * 1024 * 1024 + 1)
    with pytest.raises(SchemeFileError) as info:
        load(path)
    assert str(info.value) == (
        f"{path}: the file is larger than 32 MiB, the limit for a scheme; a scheme of 500,000 "
        "reactions takes about 25 MB; is this the right file? (split a larger scheme into "
        "independent parts)"
    )


def test_text_over_the_size_limit_is_refused():
    with pytest.raises(SchemeErrors) as info:
        parse("A" * (32 * 1024 * 1024 + 1), SRC)
    assert info.value.errors[0].headline() == (
        "t.scheme: the scheme text has 33,554,433 characters; the limit is 33,554,432; a "
        "scheme of 500,000 reactions takes about 25 MB; is this the right file? (split a "
        "larger scheme into independent parts)"
    )


def test_binary_file_without_nul_names_the_line_of_the_bad_byte(tmp_path):
    path = tmp_path / "b.scheme"
    path.write_bytes(b"A -> B  k1 = 1 1/s\n\xff\xfe\n")
    with pytest.raises(SchemeFileError) as info:
        load(path)
    assert str(info.value) == (
        f"{path}: the file is not UTF-8 text (undecodable byte at line 2); save it as UTF-8 "
        "(plain text)"
    )


def test_a_file_is_decoded_across_chunk_boundaries(tmp_path):
    # a two-byte character split by the 1 MiB chunks of the reader
    lines = ("#" * 99 + "\n") * ((1 << 20) // 100)  # 100 bytes each
    pad = "#" * ((1 << 20) - len(lines) - 1)  # "é" (2 bytes) starts at byte 2**20 - 1
    path = tmp_path / "c.scheme"
    path.write_text(lines + pad + "é\nA -> B  k1 = 1 1/s\nstart A = 1 M\n", encoding="utf-8")
    assert path.read_bytes()[(1 << 20) - 1 : (1 << 20) + 1] == "é".encode()
    assert load(path).initial == {"A": 1.0}


def test_at_most_fifty_problems_are_printed(capsys, tmp_path):
    path = tmp_path / "bad.scheme"
    path.write_text("A -> B  k1 = 1 1/s\nstart A = 1 M\n" + "this is not a line\n" * 100_000)
    status, _, err = run(capsys, "check", path)
    lines = err.splitlines()
    assert status == 2
    assert lines[0] == f"kinetics: 100,000 problems in {path} (the first 50 follow):"
    assert lines[-1] == "... and 99,950 more; correct these first"
    assert len(err) < 20_000


# ---------------------------------------------------------------------------------------
# silent acceptances


REPEATED = [
    ("A -> B  k1 = 0.1 1/s\nA -> B  k1 = 0.1 1/s", "A -> B with k1", "->"),
    ("A -> B  k1 = 0.1 1/s\nA -> B  k1", "A -> B with k1", "->"),
    ("A -> B + C  k1 = 0.1 1/s\nA -> C + B  k1", "A -> C + B with k1", "->"),
    ("A -> 2 B  k1 = 0.1 1/s\nA -> B + B  k1", "A -> B + B with k1", "->"),
    ("A <=> B  kf = 1 1/s, kr = 2 1/s\nA <=> B  kf, kr", "A -> B with kf", "<=>"),
]


@pytest.mark.parametrize(("lines", "step", "arrow"), REPEATED)
def test_a_step_written_twice_with_its_constant_is_refused(lines, step, arrow):
    assert headlines(lines + "\nstart A = 1 M\n") == [
        f"t.scheme:2:3: the step {step} is written twice (lines 1 and 2); its rate would count "
        "twice; remove one of the two lines"
    ]


@pytest.mark.parametrize(
    ("text", "warnings", "rates"),
    [
        (
            "A -> B  k1 = 0.1 1/s\nA -> B  k2 = 0.2 1/s\nstart A = 1 M\n",
            [
                "t.scheme:2: the step A -> B also occurs on line 1: parallel steps, their "
                "constants add up (k1 + k2)"
            ],
            [0.1, 0.2],
        ),
        (
            "A <=> B  kf = 1 1/s, kr = 2 1/s\nA -> B  k3 = 1 1/s\nstart A = 1 M\n",
            [
                "t.scheme:2: the step A -> B also occurs on line 1: parallel steps, their "
                "constants add up (kf + k3)"
            ],
            [1.0, 2.0, 1.0],
        ),
        (
            "A -> B  k1 = 0.1 1/s\nk9 = 0.5 1/s\nstart A = 1 M\n",
            ["t.scheme:2: rate constant k9 is defined but no reaction uses it (a misspelt name?)"],
            [0.1],
        ),
        (
            "A -> B  k1 = 0.1 1/s\n",
            [
                "t.scheme: the file has no start line, so every species starts at 0 and all "
                "concentrations stay 0; add e.g. start A = 1 mol/L"
            ],
            [0.1],
        ),
        (
            "A -> B  k1 = 0.1 1/s\nstart A = 0 M\n",
            ["t.scheme:2: every start value is 0 and nothing is fed: all concentrations stay 0"],
            [0.1],
        ),
        ("A -> B  k1 = 0.1 1/s\nfeed A = 1 M/s\n", [], [0.1]),
        ("A -> B  k1 = 0.1 1/s\nA -> C  k2 = 0.2 1/s\nstart A = 1 M\n", [], [0.1, 0.2]),
    ],
)
def test_probable_mistakes_are_warned_about(text, warnings, rates):
    scheme = parse(text, SRC)
    assert list(scheme.warnings) == warnings
    assert scheme.rates.tolist() == rates


def test_warnings_reach_stderr_and_the_json(capsys, tmp_path):
    path = tmp_path / "p.scheme"
    path.write_text("A -> B  k1 = 0.1 1/s\nA -> B  k2 = 0.2 1/s\nstart A = 1 M\n")
    status, out, err = run(capsys, "check", path, "--json")
    warning = (
        f"{path}:2: the step A -> B also occurs on line 1: parallel steps, their constants add "
        "up (k1 + k2)"
    )
    assert status == 0
    assert err == f"kinetics: warning: {warning}\n"
    assert '"warnings": [\n    "' + warning.replace("\\", "\\\\") + '"\n  ]' in out


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "A -> B  k1 = 1e-400 1/s\nstart A = 1 M\n",
            "t.scheme:1:14: rate constant k1 is 1e-400, which is too small for a floating-point "
            "number (it would become 0; the smallest is about 5e-324); check the exponent, or "
            "write 0 if you mean zero",
        ),
        (
            "A -> B  k1 = 1e-320 1/d\nstart A = 1 M\n",
            "t.scheme:1:14: rate constant k1 = 1e-320 1/d is too small (0 in SI units); check "
            "the value and its unit",
        ),
        (
            "A -> B  k1 = 1 1/s\nstart A = 1e-400 M\n",
            "t.scheme:2:11: the start value of A is 1e-400, which is too small for a "
            "floating-point number (it would become 0; the smallest is about 5e-324); check "
            "the exponent, or write 0 if you mean zero",
        ),
        (
            "A -> B  k1 = 1 1/s\nstart A = 1 mol/L, B = 1e-323 umol/L\n",
            "t.scheme:2:24: start B = 1e-323 umol/L is too small in mol/L (it would become 0); "
            "check the value and its unit",
        ),
        (
            "A -> B  k1 = arrhenius(A = 1 1/s, Ea = 1e6 kJ/mol)\ntemperature = 300 K\n"
            "start A = 1 M\n",
            "t.scheme:1:9: the effective rate constant of A -> B underflows to 0 (it is below "
            "5e-324 1/s); check the value and unit of the constant and of the excess "
            "concentrations",
        ),
        (
            "A + W -> B  k1 = 1e-300 M-1 s-1\nexcess W = 1e-30 M\nstart A = 1 M\n",
            "t.scheme:1:13: the effective rate constant of A + W -> B underflows to 0 (it is "
            "below 5e-324 1/s); check the value and unit of the constant and of the excess "
            "concentrations",
        ),
    ],
)
def test_numbers_that_a_double_rounds_to_zero_are_refused(text, message):
    assert headlines(text) == [message]


def test_subnormal_and_zero_constants_are_kept():
    assert parse("A -> B  k1 = 1e-310 1/s\nstart A = 1 M").rates.tolist() == [1e-310]
    assert parse("A -> B  k1 = 0 1/s\nstart A = 1 M").rates.tolist() == [0.0]


KEYWORDS = ["start", "excess", "feed", "formula", "molar_mass", "temperature", "title"]
KEYWORDS += ["balance", "arrhenius"]


@pytest.mark.parametrize("word", KEYWORDS)
@pytest.mark.parametrize("side", ["left", "right"])
def test_a_keyword_as_a_species_name_gets_one_message(word, side):
    if side == "left":
        text, column = f"{word} -> B  k1 = 0.1 1/s\nstart B = 1 M\n", 1
    else:
        text, column = f"A -> {word}  k1 = 0.1 1/s\nstart A = 1 M\n", 6
    assert headlines(text) == [
        f"t.scheme:1:{column}: '{word}' is a keyword of the scheme language and cannot name a "
        "species; choose another name"
    ]


@pytest.mark.parametrize(
    ("text", "column"),
    [
        ("A -> B  k1\nstart = 0.1 1/s\nk1 = 1 1/s\nstart A = 1 M\n", 1),
        ("A -> B  title = 0.1 1/s\nstart A = 1 M\n", 9),
    ],
)
def test_a_keyword_as_a_constant_name_gets_one_message(text, column):
    word = "start" if text.startswith("A -> B  k1") else "title"
    line = 2 if word == "start" else 1
    assert headlines(text) == [
        f"t.scheme:{line}:{column}: '{word}' is a keyword of the scheme language and cannot "
        "name a constant; choose another name, e.g. k1"
    ]


# ---------------------------------------------------------------------------------------
# cascading errors: only the root cause

ARRHENIUS = "A -> B  k1 = arrhenius(A = 1e13 1/s, Ea = 90 kJ/mol)\nstart A = 1 mol/L\n"
CASCADES = [
    (
        "A -> -> B  k1 = 0.1 1/s\nstart A = 1 M\n",
        "t.scheme:1:6: a reaction line has one arrow; this one has several; write each step on "
        "a line of its own",
    ),
    (
        "A + W => B  k1 = 1 M-1 s-1\nexcess W = 55 M\nstart A = 1 M\n",
        "t.scheme:1:7: unknown arrow '=>'; write -> (or →) for an irreversible step and <=> (or "
        "⇌) for a reversible one",
    ),
    (
        "A -> B  k1 = 0.1 1/s\nC ->  k2 = 1 1/s\nfeed C = 1 M/s\nstart A = 1 M\n",
        "t.scheme:2:10: could not read the rate constant '= 1 1/s'; name the constant and give "
        "its value, e.g. k1 = 0.12 1/min",
    ),
    (
        "A -> B  k1 = 0.1 1/s\nC => D  k2 = 1 1/s\nformula C = H2O\nstart A = 1 M\n",
        "t.scheme:2:3: unknown arrow '=>'; write -> (or →) for an irreversible step and <=> (or "
        "⇌) for a reversible one",
    ),
    (
        "A -> B  k1 = 0.1 1/s\nC -> 2.x D  k2 = 1 1/s\nmolar_mass D = 18 g/mol\nstart A = 1 M\n",
        "t.scheme:2:13: unexpected text after 'D': 'k2 = 1 1/s'; join products with '+' (A -> B "
        "+ C) and write the constant as NAME or NAME = VALUE UNIT",
    ),
    (
        "A <=> B  kf = 1 1/s\nstart A = 1 M, B = 1 M\n",
        "t.scheme:1:10: a reversible step needs two rate constants (forward, then reverse); "
        "found 1; write e.g. kf = 2.0e-3 1/s, kr = 5.0e-4 1/s",
    ),
    (
        ARRHENIUS + "temperature = hot\n",
        "t.scheme:3:15: could not read a number for the temperature in 'hot'; write a number "
        "and a unit, e.g. 60 degC",
    ),
    (
        ARRHENIUS + "temperature = 300 m\n",
        "t.scheme:3:19: the temperature is given in 'm', which is not a temperature unit; write "
        "the temperature in K or degC, e.g. temperature = 60 degC",
    ),
    (
        ARRHENIUS + "temperature = 300\n",
        "t.scheme:3:15: the temperature 300 has no unit; write it in K or degC, e.g. "
        "temperature = 300 K",
    ),
    (
        ARRHENIUS + "temperature = -300 degC\n",
        "t.scheme:3:15: the temperature -300 degC is at or below absolute zero; write a "
        "temperature above 0 K, e.g. temperature = 25 degC",
    ),
    (
        "A -> B  k1 = 0.1 1/s +\nB -> C  k1\nstart A = 1 M\n",
        "t.scheme:1:18: unknown unit '1/s +' for rate constant k1 (cannot read '+' in a unit); "
        "write a unit such as 1/s",
    ),
    (
        "A -> B  k1\nk1 = fast\nstart A = 1 M\n",
        "t.scheme:2:6: could not read a number for rate constant k1 in 'fast'; write a number "
        "and a unit, e.g. 0.12 1/min",
    ),
    (
        "A -> B  k1 = 0.1 1/s " + "x" * 10_000 + "\nstart A = 1 M\n",
        "t.scheme:1:1: this line has 10,021 characters; a line may have at most 10,000; write "
        "one statement per line (is this a scheme file?)",
    ),
]


@pytest.mark.parametrize(("text", "root"), CASCADES)
def test_only_the_root_cause_is_reported(text, root):
    assert headlines(text) == [root]


def test_a_broken_excess_line_still_declares_its_species():
    assert headlines("A + W -> B  k1 = 1 M-1 s-1\nexcess W 55 M\nstart A = 1 M\n") == [
        "t.scheme:2:8: could not read 'W 55 M' in an 'excess' statement; write NAME = VALUE, "
        "e.g. excess W = 55 mol/L"
    ]


# ---------------------------------------------------------------------------------------
# messages quote numbers as the user wrote them


def test_api_messages_show_plain_numbers():
    scheme = parse("A -> B  k1 = 1 1/s\nstart A = 1 M")
    with pytest.raises(TimesError) as info:
        kinetics.solve(scheme, np.array([0.0, -300.0]))
    assert str(info.value) == "a time is negative (-300 s); times start at 0 (the start values)"
    with pytest.raises(UsageError) as info:
        scheme.with_values(constants={"k1": np.float64(-1.0)})
    assert str(info.value) == "rate constant k1 = -1.0 must be finite and >= 0"


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--until", "inf min"], "--until 'inf min' is not a finite duration"),
        (["--times", "0,-5 min"], "--times '0,-5 min': -5 min is negative"),
        (["--times", "0,inf min"], "--times '0,inf min': inf min is not a finite time"),
        (["--until", "5y"], "--until '5y': unknown time unit 'y'; use s, min, h, d, week, month"),
    ],
)
def test_command_line_durations(capsys, tmp_path, argv, message):
    path = tmp_path / "a.scheme"
    path.write_text("A -> B  k1 = 1 1/s\nstart A = 1 M\n")
    status, _, err = run(capsys, "solve", path, "--no-caution", *argv)
    assert status == 2
    assert err.startswith(f"kinetics: {message}")
    assert "np." not in err
    assert "Traceback" not in err


# ---------------------------------------------------------------------------------------
# mass units with stoichiometry

# The example: the bundled water-sediment scheme with the parent in mg/L.
# 12.0 umol/L of C10H12O3 is 2.1624 mg/L with M = 180.2 g/mol.
MASS_SCHEME = (ROOT / "networks" / "parent_metabolites.scheme").read_text(encoding="utf-8")
MASS_SCHEME = MASS_SCHEME.replace("start P = 12.0 umol/L", "start P = 2.1624 mg/L")
# Molar masses from the IUPAC 2021 abridged standard atomic weights C 12.011, H 1.008,
# O 15.999 (Prohaska et al., Pure Appl. Chem. 94, 573 (2022)):
M_P = 10 * 12.011 + 12 * 1.008 + 3 * 15.999  # 180.203 g/mol
M_CO2 = 12.011 + 2 * 15.999  # 44.009 g/mol


def test_masses_are_converted_with_molar_masses_before_stoichiometry():
    scheme = parse(MASS_SCHEME, SRC)
    assert scheme.concentration_unit == "mmol/L"
    assert scheme.written_unit == "mg/L"
    assert scheme.initial["P"] == pytest.approx(2.1624 / M_P, rel=1e-5)
    result = kinetics.solve(scheme, [0.0, 3e8]).in_unit("mg/L")
    # every P ends as 10 CO2 (mass balance of the lumped steps, common practice, no source):
    # the CO2 limit is 10 M_CO2 / M_P times the applied mass, not 10 times it
    summary = result.summary("d")
    assert summary["CO2"]["limit"] == pytest.approx(10 * 2.1624 * M_CO2 / M_P, rel=1e-5)
    assert summary["P"]["start"] == pytest.approx(2.1624, rel=1e-12)
    assert result.concentrations[0, 0] == pytest.approx(2.1624, rel=1e-12)
    percent = kinetics.solve(scheme, [0.0, 3e8]).in_unit("% of applied")
    assert percent.concentration_unit == "% of applied"
    assert percent.summary("d")["CO2"]["limit"] == pytest.approx(1000.0, rel=1e-9)  # 10 per P


def test_solve_reports_in_the_written_mass_unit(capsys, tmp_path):
    path = tmp_path / "m.scheme"
    path.write_text(MASS_SCHEME)
    out_csv = tmp_path / "t.csv"
    status, _, err = run(capsys, "solve", path, "--until", "365d", "--out", out_csv, "--no-caution")
    assert status == 0, err
    header = out_csv.read_text().splitlines()[0]
    assert header == "time [d],P [mg/L],M1 [mg/L],M2 [mg/L],CO2 [mg/L]"
    status, _, err = run(
        capsys,
        "solve",
        path,
        "--until",
        "365d",
        "--concentration-unit",
        "% of applied",
        "--out",
        out_csv,
        "--no-caution",
    )
    assert status == 0, err
    assert out_csv.read_text().splitlines()[0].startswith("time [d],P [% of applied],")


SOIL = "P -> M1  k1 = 0.05 1/d\nM1 -> CO2  k2 = 0.01 1/d\nstart P = 1.5 mg/kg\nbalance: lumped\n"


def test_mass_per_mass_of_soil():
    scheme = parse(SOIL + "formula P = C10H12O3, M1 = C10H12O4, CO2 = CO2\n", SRC)
    assert scheme.concentration_unit == "mmol/kg"
    result = kinetics.solve(scheme, [0.0, 20.0 * 86400])
    in_mg = result.in_unit("mg/kg")
    assert in_mg.concentrations[0, 0] == pytest.approx(1.5, rel=1e-12)
    # first-order decay of the parent, exp(-k t) (closed form)
    assert in_mg.concentrations[1, 0] == pytest.approx(1.5 * np.exp(-0.05 * 20), rel=1e-12)
    percent = result.in_unit("%applied")
    assert percent.concentrations[1].sum() == pytest.approx(100.0, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "P -> M1  k1 = 0.05 1/d\nstart P = 1.5 mg/kg\n",
            "t.scheme:2:7: the start value of P is a mass (1.5 mg/kg); the scheme counts "
            "molecules, and P has no molar mass to convert it; give its formula (formula P = "
            "...) or its molar mass (molar_mass P = ... g/mol), or write the value as an amount "
            "(mmol/kg)",
        ),
        (
            "A + W -> B  k1 = 1 M-1 s-1\nexcess W = 1000 g/L\nstart A = 1 M\n",
            "t.scheme:2:8: the excess value of W is a mass (1000 g/L); the scheme counts "
            "molecules, and W has no molar mass to convert it; give its formula (formula W = "
            "...) or its molar mass (molar_mass W = ... g/mol), or write the value as an amount "
            "(M)",
        ),
        (
            "P -> M1  k1 = 0.05 1/d\nstart P = 1.5 mg/kg, M1 = 1 mg/L\nformula P = CH4, M1 = CH4\n",
            "t.scheme:2:29: start M1 = 1 mg/L is a mass concentration, but this file gives "
            "masses per mass of soil (start P = 1.5 mg/kg on line 2); values per volume, per "
            "mass of soil and absolute amounts may not be mixed in one file; write every value "
            "as a mass per mass of soil (amounts and masses of one kind may be mixed)",
        ),
        (
            "P -> M1  k1 = 0.05 1/d\nstart P = 1.5 mg/kg, M1 = 1 %\nformula P = CH4, M1 = CH4\n",
            "t.scheme:2:29: start M1 = 1 % is a pure number, but this file gives masses per mass "
            "of soil (start P = 1.5 mg/kg on line 2); write every value in one kind of unit, "
            "e.g. 0.5 mol/L",
        ),
    ],
)
def test_mass_values_that_cannot_be_converted_are_refused(text, message):
    assert headlines(text) == [message]


@pytest.mark.parametrize(
    ("text", "unit", "message"),
    [
        (
            SOIL + "formula P = C10H12O3, CO2 = CO2\n",
            "mg/kg",
            "M1 has no molar mass, so its mg/kg cannot be computed; give formula M1 = ... or "
            "molar_mass M1 = ... g/mol in the file, or report in an amount unit (mmol/kg) or in "
            "'% of applied'",
        ),
        (
            SOIL + "formula P = C10H12O3, M1 = C10H12O4, CO2 = CO2\n",
            "mg/L",
            "the output unit 'mg/L' is a mass concentration, but the scheme gives amounts per "
            "mass of soil (mmol/kg); report in an amount or a mass unit of the same kind (e.g. "
            "mmol/L or mg/L for a scheme per volume, mmol/kg or mg/kg per mass of soil) or in "
            "'% of applied'",
        ),
        (
            "A -> B  k1 = 1 1/s\nfeed A = 1 M/s\n",
            "% of applied",
            "'% of applied' is not defined for a scheme with a feed (the applied amount grows "
            "with time); choose a unit such as M",
        ),
    ],
)
def test_output_units_that_depend_on_what_is_missing_are_refused(text, unit, message):
    result = kinetics.solve(parse(text, SRC), [0.0, 1.0])
    with pytest.raises(UsageError) as info:
        result.in_unit(unit)
    assert str(info.value) == message


def test_a_species_that_is_never_present_needs_no_molar_mass():
    scheme = parse("A -> B  k1 = 1 1/s\nC -> D  k2 = 1 1/s\nstart A = 1 g/L\nformula A = H2O")
    with pytest.raises(UsageError, match=r"^B has no molar mass"):
        kinetics.solve(scheme, [0.0, 1.0]).in_unit("g/L")
    scheme = parse(
        "A -> B  k1 = 1 1/s\nC -> D  k2 = 1 1/s\nstart A = 1 g/L\nformula A = H2O, B = H2O"
    )
    masses = kinetics.solve(scheme, [0.0]).in_unit("g/L")
    assert masses.concentrations[0].tolist() == [1.0, 0.0, 0.0, 0.0]


# ---------------------------------------------------------------------------------------
# fuzzing: any text gives a result or the project's own error, in linear time

FUZZ = settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
EXAMPLES = sorted((ROOT / "networks").glob("*.scheme"))
TOKENS = ["A", "B", "k1", "W", "->", "<=>", "→", "⇌", "=>", "+", "=", ",", "(", ")", "#"]
TOKENS += ["0.1", "1e-400", "1e999", "-1", "nan", "2", "1/s", "M-1 s-1", "mg/L", "mg/kg"]
TOKENS += ["mol/L", "degC", "%", "start", "excess", "feed", "formula", "molar_mass"]
TOKENS += ["temperature", "title:", "balance:", "arrhenius(", "A = 1e13 1/s", "Ea = 9 kJ/mol"]
TOKENS += ["C6H12O6", "\t", " ", "\n", "\r", "\x00", "é", "⁻¹"]

statements = st.lists(st.sampled_from(TOKENS), max_size=14).map(" ".join)
documents = st.lists(statements, min_size=1, max_size=12).map("\n".join)


@st.composite
def mutated_examples(draw) -> str:
    text = draw(st.sampled_from(EXAMPLES)).read_text(encoding="utf-8")
    for _ in range(draw(st.integers(1, 6))):
        at = draw(st.integers(0, len(text)))
        how = draw(st.sampled_from(["delete", "insert", "repeat", "token"]))
        if how == "delete":
            text = text[:at] + text[at + draw(st.integers(1, 20)) :]
        elif how == "insert":
            text = text[:at] + draw(st.text(max_size=8)) + text[at:]
        elif how == "repeat":
            line_start = text.rfind("\n", 0, at) + 1
            line_end = text.find("\n", at) if "\n" in text[at:] else len(text)
            text = text[:line_end] + "\n" + text[line_start:line_end] + text[line_end:]
        else:
            text = text[:at] + draw(st.sampled_from(TOKENS)) + text[at:]
    return text


def outcome(text: str) -> str:
    try:
        parse(text, SRC)
    except KineticsError:
        return "refused"
    return "accepted"


def parse_time(text: str) -> float:
    best = float("inf")
    for _ in range(3):
        t0 = time.process_time()
        outcome(text)
        best = min(best, time.process_time() - t0)
    return best


def assert_linear(small: str, large: str) -> None:
    """Parsing ``large`` (8 times ``small``) takes at most 24 times as long: a linear
    parser takes about 8 times, one quadratic in the size 64 times.  CPU times, best of
    three; no absolute time is asserted."""
    small_time, large_time = parse_time(small), parse_time(large)
    assert large_time <= 24 * small_time, (len(small), small_time, large_time)


@FUZZ
@given(st.one_of(documents, mutated_examples()))
def test_fuzzed_text_raises_only_our_errors(text):
    assert outcome(text) in ("accepted", "refused")


@FUZZ
@given(st.binary(max_size=300))
def test_fuzzed_bytes_raise_only_our_errors(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("fuzz") / "f.scheme"
    path.write_bytes(data)
    try:
        load(path)
    except KineticsError:
        pass


@settings(max_examples=8, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.one_of(documents, mutated_examples()))
def test_parse_time_is_linear_in_the_number_of_lines(text):
    while len(text) < 4000:  # large enough that the work, not the fixed cost, is timed
        text = text + "\n" + text
    assert_linear(text, "\n".join([text] * 8))


@settings(max_examples=8, deadline=None, suppress_health_check=list(HealthCheck))
@given(statements.filter(lambda s: "\n" not in s and "\r" not in s and s.strip()))
def test_parse_time_is_linear_in_the_length_of_a_line(line):
    small = " ".join([line] * (1 + 1250 // (len(line) + 1)))[:1250]
    assert_linear(small, " ".join([small] * 8)[:10_000])  # the longest line parsed
