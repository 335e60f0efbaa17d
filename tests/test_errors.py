"""Error types: message format, location, pickling (parallel sweeps send them across
processes).  The format is the project's own contract (common practice, no source)."""

from __future__ import annotations

import pickle

import pytest

from kinetics import parse
from kinetics.errors import (
    ArgumentValueError,
    ConcentrationError,
    ConditionError,
    ConstantError,
    DataError,
    KineticsError,
    OutputUnitError,
    ParameterSpecError,
    RateMatrixError,
    SchemeError,
    SchemeErrors,
    SchemeFileError,
    SettingError,
    SpeciesError,
    SweepStoreError,
    TableSizeError,
    TemperatureError,
    TimesError,
    UsageError,
    WorkingRangeError,
)

#: The typed errors of the library for a wrong value (issue 13: the core raises these,
#: UsageError stays with the command line).
CORE_VALUE_ERRORS = (
    RateMatrixError,
    ConcentrationError,
    TimesError,
    SpeciesError,
    SettingError,
    WorkingRangeError,
    TableSizeError,
    TemperatureError,
    ConstantError,
    ConditionError,
    OutputUnitError,
    ParameterSpecError,
    SweepStoreError,
)

FULL = SchemeError(
    "unknown unit 'sek-1' for k3",
    "cascade.scheme",
    12,
    18,
    "A -> B    k3 = 0.1 sek-1",
    "sek-1",
    "write a unit such as 1/s",
)


def test_message_format_place_problem_hint_then_line_and_caret():
    assert str(FULL).splitlines() == [
        "cascade.scheme:12:18: unknown unit 'sek-1' for k3; write a unit such as 1/s",
        "    A -> B    k3 = 0.1 sek-1",
        "                     ^^^^^",
    ]
    assert FULL.headline() == str(FULL).splitlines()[0]
    assert FULL.location == "cascade.scheme:12:18"


def test_caret_points_at_the_snippet_in_a_parsed_error():
    with pytest.raises(SchemeErrors) as info:
        parse("A -> B  k1 = 0.1 1/s\nstart A = 1 meter", "x.scheme")
    error = info.value.errors[0]
    text, caret = str(error).splitlines()[1:]
    start = caret.index("^")
    assert text[start : start + caret.count("^")] == "meter"


def test_location_without_column_or_line():
    assert SchemeError("p", "f.scheme", 3).location == "f.scheme:3"
    assert str(SchemeError("the scheme is empty", "f.scheme", hint="write a reaction")) == (
        "f.scheme: the scheme is empty; write a reaction"
    )
    assert str(SchemeError("p", "f.scheme", 3, 0, "A B")) == "f.scheme:3: p\n    A B"


def test_scheme_error_pickles_with_all_fields():
    copy = pickle.loads(pickle.dumps(FULL))
    assert type(copy) is SchemeError
    for name in ("problem", "source", "line", "column", "text", "snippet", "hint"):
        assert getattr(copy, name) == getattr(FULL, name)
    assert str(copy) == str(FULL)


def test_scheme_errors_pickle_and_sort_by_place():
    late = SchemeError("late", "f", 9, 1)
    early = SchemeError("early", "f", 2, 5)
    bundle = SchemeErrors([late, early])
    assert [e.problem for e in bundle.errors] == ["early", "late"]
    copy = pickle.loads(pickle.dumps(bundle))
    assert [e.headline() for e in copy.errors] == ["f:2:5: early", "f:9:1: late"]
    assert str(copy) == str(bundle)
    assert str(bundle).splitlines()[0] == "2 problems in f:"


def test_single_error_bundle_prints_like_the_error():
    assert str(SchemeErrors([FULL])) == str(FULL)


@pytest.mark.parametrize(
    "error",
    [
        SchemeFileError("no such file", "x.scheme", "check the path"),
        UsageError("--until is not a duration", "write e.g. --until '90 min'"),
        DataError("unknown column 'Q'", "data.csv", "name a species"),
    ],
)
def test_other_errors_pickle_with_all_fields(error):
    copy = pickle.loads(pickle.dumps(error))
    assert type(copy) is type(error)
    assert vars(copy) == vars(error)
    assert str(copy) == str(error)


def test_message_format_of_other_errors():
    assert str(SchemeFileError("no such file", "x.scheme", "check the path")) == (
        "x.scheme: no such file; check the path"
    )
    assert str(UsageError("bad", "do this")) == "bad; do this"
    assert str(DataError("bad cell", "d.csv")) == "d.csv: bad cell"


def test_hierarchy():
    for cls in (SchemeError, SchemeErrors, SchemeFileError, UsageError, DataError):
        assert issubclass(cls, KineticsError)
    assert issubclass(SchemeError, ValueError)
    assert issubclass(SchemeErrors, ValueError)
    assert issubclass(SchemeFileError, OSError)


@pytest.mark.parametrize("cls", CORE_VALUE_ERRORS)
def test_core_errors_share_a_base_with_usage_error_but_are_not_one(cls):
    # except ArgumentValueError (or ValueError, or KineticsError) catches a wrong value
    # wherever it was given; the command line's UsageError is a sibling, not a parent
    assert issubclass(cls, ArgumentValueError)
    assert issubclass(cls, ValueError)
    assert issubclass(cls, KineticsError)
    assert not issubclass(cls, UsageError)
    assert issubclass(UsageError, ArgumentValueError)


@pytest.mark.parametrize("cls", CORE_VALUE_ERRORS)
def test_core_errors_pickle_and_read_problem_then_hint(cls):
    error = cls("the times are not in increasing order", "sort the time list")
    assert str(error) == "the times are not in increasing order; sort the time list"
    copy = pickle.loads(pickle.dumps(error))
    assert type(copy) is cls
    assert vars(copy) == vars(error)
    assert str(copy) == str(error)


def test_unit_errors_are_value_errors_and_pickle():
    from kinetics.errors import UnitError, UnknownUnitError

    assert issubclass(UnitError, KineticsError)
    assert issubclass(UnitError, ValueError)
    assert issubclass(UnknownUnitError, UnitError)
    for error in (UnitError("the exponent 99 is too large"), UnknownUnitError("unknown unit 'x'")):
        copy = pickle.loads(pickle.dumps(error))
        assert type(copy) is type(error)
        assert str(copy) == str(error)


def test_expression_and_activity_errors_are_value_errors_and_pickle():
    from kinetics.errors import ActivityError, ExpressionError

    for error in (
        ExpressionError("ln of -2 is undefined", "check the sign", 7, "-2"),
        ActivityError("'mol' is not an activity", "write e.g. MBq"),
    ):
        assert isinstance(error, KineticsError)
        assert isinstance(error, ValueError)
        copy = pickle.loads(pickle.dumps(error))
        assert type(copy) is type(error)
        assert vars(copy) == vars(error)
        assert str(copy) == str(error)
    assert str(ExpressionError("a", "b", 3, "x")) == "a; b"


#: Library modules that still raise the command line's UsageError (issue 13 moves them to
#: the typed errors; this list only shrinks).  Everything else outside kinetics/cli/ must
#: not name UsageError at all.
STILL_RAISING_USAGE_ERROR: set[str] = set()


def test_usage_error_stays_with_the_command_line():
    import ast
    from pathlib import Path

    package = Path(__file__).resolve().parents[1] / "kinetics"
    naming = set()
    for path in package.rglob("*.py"):
        relative = path.relative_to(package).as_posix()
        if relative.startswith("cli/") or relative in ("errors.py", "__init__.py"):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        if any(isinstance(n, ast.Name) and n.id == "UsageError" for n in ast.walk(tree)):
            naming.add(relative)
    assert naming <= STILL_RAISING_USAGE_ERROR, sorted(naming - STILL_RAISING_USAGE_ERROR)
