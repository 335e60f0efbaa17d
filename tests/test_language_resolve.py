"""The second pass as a whole (kinetics/language/resolve.py) and the entry points
(kinetics/language/entry.py).  The detailed messages are pinned in tests/test_parsing.py.
"""

from __future__ import annotations

import doctest
import importlib
import inspect
import pkgutil

import pytest

import kinetics
import kinetics.language
from kinetics import ArgumentTypeError, SchemeErrors
from kinetics.language import load, parse
from kinetics.language.reader import read_statements
from kinetics.language.resolve import resolve


def test_resolve_builds_the_scheme():
    parsed = read_statements("title: t\nA -> B  k1 = 0.12 1/min\nstart A = 1 mol/L", "t")
    scheme = resolve(parsed)
    assert (scheme.title, scheme.species_names, scheme.source) == ("t", ["A", "B"], "t")
    assert float(scheme.rates[0]) == 0.002  # 0.12 / 60 s (SI brochure, 9th ed., table 8)


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("", "the scheme is empty"),
        ("# only a comment", "the scheme is empty"),
        ("start A = 1 M", "the scheme has no reactions"),
    ],
)
def test_no_reactions(text, problem):
    with pytest.raises(SchemeErrors) as info:
        resolve(read_statements(text, "t"))
    assert [e.headline() for e in info.value.errors] == [
        f"t: {problem}; write at least one reaction, e.g. A -> B    k1 = 0.1 1/min"
    ]


def test_errors_of_both_passes_are_raised_together():
    with pytest.raises(SchemeErrors) as info:
        resolve(read_statements("A => B  k1\nC -> D  k2\nstart Q = 1 M", "t"))
    assert [e.line for e in info.value.errors] == [1, 2, 3]


def test_balance_opt_outs():
    text = "A -> B  k1 = 1 1/s\nformula A = H2O, B = H2"
    with pytest.raises(SchemeErrors):
        resolve(read_statements(text, "t"))
    assert resolve(read_statements(text, "t"), strict_balance=False).allow_imbalance
    assert resolve(read_statements(text + "\nbalance: lumped", "t")).allow_imbalance


def test_parse_refuses_bytes():
    with pytest.raises(ArgumentTypeError) as info:
        parse(b"A -> B  k1 = 1 1/s")  # type: ignore[arg-type]
    assert str(info.value) == (
        "parse() reads scheme text (str), not bytes; decode bytes first, or use "
        "kinetics.load(path) for a file"
    )


def test_load_reads_a_file(tmp_path):
    path = tmp_path / "t.scheme"
    path.write_text("A -> B  k1 = 1 1/s\nstart A = 1 M\n", encoding="utf-8")
    assert load(path).source == str(path)


def test_the_package_entry_points_are_the_language_ones():
    assert kinetics.parse is parse
    assert kinetics.load is load
    assert importlib.import_module("kinetics.parsing").parse is parse


MODULES = ["kinetics.suggest", "kinetics.language"] + [
    f"kinetics.language.{m.name}" for m in pkgutil.iter_modules(kinetics.language.__path__)
]


@pytest.mark.parametrize("name", MODULES)
def test_doctests_run(name):
    module = importlib.import_module(name)
    # NORMALIZE_WHITESPACE as in the doctest run of pyproject.toml: a long expected line is
    # wrapped at a space
    flags = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE
    failed, _ = doctest.testmod(module, optionflags=flags)
    assert failed == 0


@pytest.mark.parametrize("name", MODULES)
def test_every_public_function_has_an_example(name):
    module = importlib.import_module(name)
    for attribute in getattr(module, "__all__", []):
        value = getattr(module, attribute)
        if inspect.isfunction(value) and value.__module__ == name:
            assert ">>>" in (value.__doc__ or ""), f"{name}.{attribute}"
