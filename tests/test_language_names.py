"""Names across a file (kinetics/language/names.py)."""

from __future__ import annotations

from kinetics.language.messages import Diagnostics
from kinetics.language.names import ExcessDeclarations, single, species_order
from kinetics.language.reader import read_statements
from kinetics.language.statements import BalanceStatement, TitleStatement


def test_species_in_order_of_first_appearance():
    parsed = read_statements("C -> A + B  k1\nB <=> D  k2, k3\nE + A -> C  k4", "t")
    order = species_order(parsed.reactions)
    assert list(order) == ["C", "A", "B", "D", "E"]
    assert [order[n].number for n in ("C", "D", "E")] == [1, 2, 3]


def test_excess_names_include_those_with_a_bad_value():
    parsed = read_statements("excess W = 55 M, X = fast\nexcess Y = 2 mg/L\nstart A = 1 M", "t")
    excess = ExcessDeclarations(parsed.lists)
    assert excess.names == frozenset({"W", "X", "Y"})
    # dimension of the amount each value stands for (a mass concentration counts as amount)
    assert set(excess.dims) == {"Y"}  # the first line was kept without items (X is bad)
    assert excess.dims["Y"] == {"[length]": -3, "[substance]": 1}


def test_excess_dims_of_a_plain_value():
    excess = ExcessDeclarations(read_statements("excess W = 55 mol/L", "t").lists)
    assert excess.dims == {"W": {"[length]": -3, "[substance]": 1}}


def test_single_reports_every_further_statement():
    parsed = read_statements("title: a\nbalance: lumped\ntitle: b\n  title: c", "t")
    found = Diagnostics("t")
    assert single(parsed.statements, TitleStatement, "title", found).text == "a"
    assert [e.headline() for e in found.errors] == [
        "t:3:1: the title is given twice (first on line 1); keep one title line",
        "t:4:3: the title is given twice (first on line 1); keep one title line",
    ]
    assert single(parsed.statements, BalanceStatement, "balance mode", found).mode == "lumped"


def test_single_of_an_absent_kind_is_none():
    assert single((), TitleStatement, "title", Diagnostics("t")) is None
