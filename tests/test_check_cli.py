"""``kinetics check FILE [--json]`` in-process: the JSON contract and the exit status."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import kinetics
from kinetics.cli import main

NETWORKS = Path(__file__).resolve().parent.parent / "networks"

SCHEME = """\
title: Invented hydrolysis with a reversible intermediate
E + W -> A          k1 = 1.5e-4 M-1 s-1
A <=> B             kf = 0.12 1/min, kr = 5.0e-4 1/s
start E = 2 mmol/L, A = 0.5 mmol/L
excess W = 55 mol/L
formula E = C4H8O2, W = H2O, A = C4H10O3, B = C4H10O3
"""


def run_json(path, capsys) -> dict:
    status = main(["check", str(path), "--json"])
    out, err = capsys.readouterr()
    assert status == 0, err
    return json.loads(out)


def test_check_json_contract(tmp_path, capsys):
    path = tmp_path / "hydrolysis.scheme"
    path.write_text(SCHEME, encoding="utf-8")
    report = run_json(path, capsys)
    assert {"species", "rate_matrix", "initial", "concentration_unit", "reactions", "balance"} <= (
        set(report)
    )
    assert report["species"] == ["E", "A", "B"]
    assert report["concentration_unit"] == "mmol/L"
    assert report["initial"] == {"E": 2.0, "A": 0.5, "B": 0.0}
    # k_eff = k [W] = 1.5e-4 * 55 = 8.25e-3 1/s; 0.12 1/min = 0.002 1/s (1 min = 60 s)
    assert [(r["equation"], r["k_per_s"]) for r in report["reactions"]] == [
        ("E + W -> A", 8.25e-3),
        ("A -> B", 0.002),
        ("B -> A", 5.0e-4),
    ]
    assert report["rate_matrix"] == [
        [-8.25e-3, 0.0, 0.0],
        [8.25e-3, -0.002, 5.0e-4],
        [0.0, 0.002, -5.0e-4],
    ]
    assert report["balance"]["ok"] is True
    assert [r["atoms"] for r in report["balance"]["reactions"]] == ["balanced", "balanced"]


def test_check_json_of_every_bundled_example(capsys):
    paths = sorted(NETWORKS.glob("*.scheme"))
    if not paths:
        pytest.skip("no bundled examples yet")
    for path in paths:
        report = run_json(path, capsys)
        n = len(report["species"])
        assert len(report["rate_matrix"]) == n
        assert all(len(row) == n for row in report["rate_matrix"])
        assert set(report["initial"]) == set(report["species"])
        assert isinstance(report["balance"]["ok"], bool)


def test_check_text_summary_runs(tmp_path, capsys):
    path = tmp_path / "s.scheme"
    path.write_text(SCHEME, encoding="utf-8")
    assert main(["check", str(path)]) == 0
    out, _ = capsys.readouterr()
    assert "E + W -> A" in out


@pytest.mark.parametrize(
    ("content", "message"),
    [
        ("A -> B  k1 = 0.1 1/s\nstart A = 1 meter\n", "start A = 1 meter is a length"),
        ("A => B  k1 = 0.1 1/s\n", "unknown arrow '=>'"),
        ("", "the scheme is empty"),
        (b"A -> B  k1 = 0.1 1/s # \xe9\n", "the file is not UTF-8 text"),
    ],
)
def test_bad_file_exits_2_with_one_clear_message(tmp_path, capsys, content, message):
    path = tmp_path / "bad.scheme"
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8")
    assert main(["check", str(path), "--json"]) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert message in err
    assert err.startswith(f"kinetics: {path}")
    assert "Traceback" not in err


def test_missing_file_and_directory_exit_2(tmp_path, capsys):
    assert main(["check", str(tmp_path / "missing.scheme")]) == 2
    _, err = capsys.readouterr()
    assert "no such file" in err
    assert "Traceback" not in err
    assert main(["check", str(tmp_path)]) == 2
    _, err = capsys.readouterr()
    assert "this is a folder, not a scheme file" in err


def test_several_errors_are_reported_in_one_run(tmp_path, capsys):
    path = tmp_path / "many.scheme"
    path.write_text("A -> B  k1 = -1 1/s\nB -> C  k9\nstart Q = 1 M\n", encoding="utf-8")
    assert main(["check", str(path)]) == 2
    _, err = capsys.readouterr()
    assert err.splitlines()[0] == f"kinetics: 3 problems in {path}:"
    assert f"{path}:1:14:" in err
    assert f"{path}:2:9:" in err
    assert f"{path}:3:7:" in err


def test_allow_imbalance_flag(tmp_path, capsys):
    path = tmp_path / "lumped.scheme"
    path.write_text("A -> 2 B  k1 = 0.1 1/s\nformula A = C6H12O6, B = C3H6O2\n", encoding="utf-8")
    assert main(["check", str(path), "--json"]) == 2
    _, err = capsys.readouterr()
    assert "atoms do not balance in A -> 2 B" in err
    assert main(["check", str(path), "--json", "--allow-imbalance"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["balance"]["ok"] is False


def test_large_scheme_json_gives_sparse_entries_instead_of_dense_rows():
    # a 2,500-step chain: the dense matrix would be 2501 x 2501 (common practice, no source)
    from kinetics.output.overview import DENSE_JSON_MAX, check_report

    n = DENSE_JSON_MAX + 500
    text = "\n".join(f"S{i} -> S{i + 1}  k{i} = 0.5 1/s" for i in range(n))
    report = check_report(kinetics.parse(text))
    assert report["rate_matrix"] is None
    entries = {(i, j): v for i, j, v in report["rate_matrix_entries"]}
    assert len(entries) == 2 * n
    assert entries[(0, 0)] == -0.5
    assert entries[(1, 0)] == 0.5


def test_terminal_check_prints_the_rate_matrix_of_a_small_scheme(tmp_path, capsys):
    # A -> B with k = 0.12 1/min: K = [[-0.002, 0], [0.002, 0]] in 1/s (0.12/60; definition of K)
    path = tmp_path / "small.scheme"
    path.write_text("A -> B    k1 = 0.12 1/min\nstart A = 1 mol/L\n", encoding="utf-8")
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Rate matrix K [1/s]" in out
    assert "-0.002" in out


# -- large schemes: an overview instead of tables -----------------------------------------


def _chain(steps: int, formulas: bool = True) -> str:
    """A chain S0 -> S1 -> ... of isomers with one reversible step and one with water."""
    lines = ["title: invented chain", "excess W = 55 mol/L", "S0 <=> S1  kf = 1 1/s, kr = 0.5 1/s"]
    lines += [f"S{i} -> S{i + 1}  k{i} = {i + 1} 1/min" for i in range(1, steps - 1)]
    lines.append(f"S{steps - 1} + W -> P  kw = 2e-3 M-1 s-1")
    lines.append("start S0 = 1 mol/L")
    if formulas:
        names = ", ".join(f"S{i} = C4H8O2" for i in range(steps))
        lines.append(f"formula {names}, W = H2O, P = C4H10O3")
    return "\n".join(lines) + "\n"


def test_scheme_at_the_table_limit_gets_the_tables(tmp_path, capsys):
    from kinetics.output.overview import CHECK_TABLE_ROWS

    path = tmp_path / "limit.scheme"
    path.write_text(_chain(CHECK_TABLE_ROWS - 2), encoding="utf-8")  # 200 steps, 200 species
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Species (matrix order)" in out
    assert "Overview" not in out


def test_large_scheme_gets_the_overview(tmp_path, capsys):
    from kinetics.output.overview import CHECK_TABLE_ROWS

    path = tmp_path / "large.scheme"
    path.write_text(_chain(CHECK_TABLE_ROWS + 50), encoding="utf-8")
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    # counts of the chain as written: S0..S249 and P in the matrix, W held in excess;
    # residual of S249 + W -> P: (106.12 - 88.106) / 88.106 g/mol (periodictable's masses)
    assert out.splitlines() == [
        "invented chain",
        "Overview: 252 species and 251 steps; tables are printed for up to 200 rows "
        "(--full-tables prints them all, --json gives everything as one object)",
        "species: 249 intermediate, 1 starting material, 1 end product, 1 held in excess",
        "  1 with a start value, 252 with a formula, 252 with a molar mass",
        "steps: 251 from 250 reactions (1 reversible), 251 rate constants",
        "  k from 0.0333333 to 4.15 1/s",
        "rate matrix K: 251 x 251 (shown for up to 12 species; all entries are in check --json)",
        "mass balance: balanced",
        "  largest relative residual of m·K = 0: 0.204",
        "  1 step exchanges mass with species held in excess (listed by --full-tables and --json)",
        "reversible pairs: 1",
        "strongly connected components: 1, the largest with 2 species",
    ]


def test_overview_lists_every_problem(tmp_path, capsys):
    # two unbalanced reactions and one without formulas: each is listed, as in the tables
    from kinetics.output.overview import CHECK_TABLE_ROWS

    text = _chain(CHECK_TABLE_ROWS + 50)
    text = text.replace("S7 -> S8  k7", "S7 -> 2 S8  k7").replace("S9 -> S10  k9", "S9 -> Q  k9")
    text += "S20 -> S20b  k_odd = 1 1/s\n"  # S20b has no formula
    path = tmp_path / "problems.scheme"
    path.write_text(text.replace("S10 = C4H8O2", "S10 = C4H8O2, Q = C2H4O"), encoding="utf-8")
    assert main(["check", str(path), "--allow-imbalance"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert "mass balance: NOT balanced" in out
    assert "  line 10: S7 -> 2 S8: left C4 H8 O2, right C8 H16 O4" in out
    assert "  line 12: S9 -> Q: left C4 H8 O2, right C2 H4 O1" in out
    assert "  line 255: S20 -> S20b: no formula for S20b" in out
    assert "  S7 -> 2 S8: creates or destroys mass (88.106 g/mol in, 176.212 g/mol out)" in out
    assert "  S9 -> Q: creates or destroys mass (88.106 g/mol in, 44.053 g/mol out)" in out
    assert "disconnected sub-schemes: 2, the largest with 242 species" in out


def test_full_tables_option_prints_the_tables_of_a_large_scheme(tmp_path, capsys):
    from kinetics.output.overview import CHECK_TABLE_ROWS

    path = tmp_path / "large.scheme"
    path.write_text(_chain(CHECK_TABLE_ROWS + 50), encoding="utf-8")
    assert main(["check", str(path), "--full-tables"]) == 0
    out = capsys.readouterr().out
    assert "Species (matrix order)" in out
    assert "Overview" not in out
    assert "│ S249 " in out
    assert "reversible pairs: S0 <=> S1" in out


def test_json_of_a_large_scheme_is_unchanged_by_the_overview(tmp_path, capsys):
    from kinetics.output.overview import CHECK_TABLE_ROWS, check_report

    path = tmp_path / "large.scheme"
    path.write_text(_chain(CHECK_TABLE_ROWS + 50), encoding="utf-8")
    report = run_json(path, capsys)
    assert report == json.loads(json.dumps(check_report(kinetics.load(path))))
    assert len(report["reactions"]) == 251
