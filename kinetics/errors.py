"""Exception hierarchy of the package.

Every mistake a user can make in a scheme file, a data file or on the command
line ends in one of these classes.  They all derive from :class:`KineticsError`,
and each concrete class also derives from the builtin it resembles, so that
``except ValueError`` in a user's script keeps working.

A :class:`SchemeError` knows where it happened (source, line, column), quotes
the offending text and says what to write instead.  The message is built in
``__str__`` from those fields, e.g.::

    cascade.scheme:12:8: unknown unit 'sec-1' for k3; expected a frequency such as 1/s
        A -> B    k3 = 0.1 sec-1
                           ^^^^^

A wrong value given to a library function has a type per kind of mistake
(:class:`RateMatrixError`, :class:`TimesError`, :class:`SpeciesError`...), all
subclasses of :class:`ArgumentValueError`; :class:`UsageError`, the wrong argument on
the command line, is one of them too.  The command line turns every
:class:`KineticsError` into one line on stderr and exit status 2.

All errors pickle (parallel sweeps send them between processes).
"""

from __future__ import annotations

import numbers

__all__ = [
    "MAX_SHOWN_ERRORS",
    "ActivityError",
    "ArgumentTypeError",
    "ArgumentValueError",
    "ConcentrationError",
    "ConditionError",
    "ConstantError",
    "DataError",
    "ExpressionError",
    "GrowthError",
    "KineticsError",
    "OutputFileError",
    "OutputUnitError",
    "ParameterSpecError",
    "RateMatrixError",
    "SchemeError",
    "SchemeErrors",
    "SchemeFileError",
    "SettingError",
    "SpeciesError",
    "SweepStoreError",
    "TableSizeError",
    "TemperatureError",
    "TimesError",
    "UnitError",
    "UnknownUnitError",
    "UsageError",
    "WorkingRangeError",
    "shorten",
    "shown_value",
    "type_name",
]

#: Longest piece of a user's text quoted in a message [characters]; longer pieces are cut.
QUOTE_LIMIT = 60
#: Widest part of a source line shown under a message [characters].
LINE_WINDOW = 120
#: Most problems printed by ``str(SchemeErrors)``; the rest are counted.
MAX_SHOWN_ERRORS = 50


def shorten(text: str, limit: int = QUOTE_LIMIT) -> str:
    """``text`` itself, or its first ``limit`` characters, an ellipsis and the full length.

    Messages quote what a user wrote; a megabyte of it must not be echoed back.

    Parameters
    ----------
    text : str
        The quoted text.
    limit : int, optional
        Most characters kept [characters].

    Returns
    -------
    str

    Examples
    --------
    >>> shorten("1/s xxxxxxxxxx", 6)
    '1/s xx… (14 characters)'
    >>> shorten("1/s")
    '1/s'
    """
    if len(text) <= limit:
        return text
    return f"{text[:limit]}… ({len(text):,} characters)"


def shown_value(value) -> str:
    """A value as a message quotes it.

    A number in plain Python form (never ``np.float64(-300.0)``), anything else as its cut
    ``repr``.

    Examples
    --------
    >>> import numpy as np
    >>> shown_value(np.float64(-300.0)), shown_value("a")
    ('-300.0', "'a'")
    """
    if isinstance(value, numbers.Real) and not isinstance(value, bool):
        return repr(float(value)) if not isinstance(value, numbers.Integral) else str(int(value))
    return shorten(repr(value))


def type_name(value) -> str:
    """``None`` for None, else the name of the value's type (for messages about arguments)."""
    return "None" if value is None else type(value).__name__


def _window(text: str, column: int, width: int) -> tuple[str, int, int]:
    """The part of a long line shown under a message: (shown text, caret column, caret cap).

    The caret column is 1-based in the shown text; ``…`` marks cut ends.
    """
    if len(text) <= width:
        return text, column, width
    start = max(0, min(column - 1 - width // 3, len(text) - width)) if column > 0 else 0
    shown = text[start : start + width]
    lead = "…" if start > 0 else ""
    tail = "…" if start + width < len(text) else ""
    caret = column - start + len(lead) if column > 0 else 0
    return lead + shown + tail, caret, len(lead) + width - caret + 1


class KineticsError(Exception):
    """Root of every error raised for bad input."""


class SchemeError(KineticsError, ValueError):
    """One mistake in a scheme file, with its place and a suggested fix.

    Parameters
    ----------
    problem : str
        What is wrong, in a chemist's words.
    source : str
        File name (or ``"<text>"`` for a string).
    line, column : int
        1-based position of the offending text (column 0 when it is the whole file).
    text : str
        The whole source line, shown under the message with a caret.
    snippet : str
        The offending part of the line (the caret underlines it).
    hint : str
        What to write instead; may be empty.
    """

    def __init__(
        self,
        problem: str,
        source: str = "<text>",
        line: int = 0,
        column: int = 0,
        text: str = "",
        snippet: str = "",
        hint: str = "",
    ) -> None:
        super().__init__(problem)
        self.problem = problem
        self.source = source
        self.line = line
        self.column = column
        self.text = text
        self.snippet = snippet
        self.hint = hint

    def __reduce__(self):
        return (
            type(self),
            (self.problem, self.source, self.line, self.column, self.text, self.snippet, self.hint),
        )

    @property
    def location(self) -> str:
        """``source:line:column`` (or less, when line or column is unknown)."""
        if self.line <= 0:
            return self.source
        if self.column <= 0:
            return f"{self.source}:{self.line}"
        return f"{self.source}:{self.line}:{self.column}"

    def headline(self) -> str:
        """The one-line form: place, problem and hint."""
        head = f"{self.location}: {self.problem}"
        if self.hint:
            head += f"; {self.hint}"
        return head

    def __str__(self) -> str:
        out = self.headline()
        if self.text:
            shown, column, room = _window(self.text.rstrip("\n"), self.column, LINE_WINDOW)
            out += "\n    " + shown
            if column > 0:
                width = max(1, min(len(self.snippet), room))
                out += "\n    " + " " * (column - 1) + "^" * width
        return out


class SchemeErrors(KineticsError, ValueError):
    """All the mistakes found in one scheme file, reported together.

    Attributes
    ----------
    errors : list of SchemeError
        In the order of their lines.
    """

    def __init__(self, errors) -> None:
        errors = sorted(errors, key=lambda e: (e.line, e.column))
        super().__init__(errors)
        self.errors = list(errors)

    def __reduce__(self):
        return (type(self), (self.errors,))

    def __str__(self) -> str:
        if len(self.errors) == 1:
            return str(self.errors[0])
        count = len(self.errors)
        shown = self.errors[:MAX_SHOWN_ERRORS]
        head = f"{count:,} problems in {self.errors[0].source}"
        parts = [head + (f" (the first {len(shown)} follow):" if count > len(shown) else ":")]
        parts.extend(str(e) for e in shown)
        if count > len(shown):
            parts.append(f"... and {count - len(shown):,} more; correct these first")
        return "\n".join(parts)


class _FileProblem(KineticsError, OSError):
    """An error told as ``path: problem; hint`` about a whole file."""

    def __init__(self, problem: str, path: str = "", hint: str = "") -> None:
        super().__init__(problem)
        self.problem = problem
        self.path = path
        self.hint = hint

    def __reduce__(self):
        return (type(self), (self.problem, self.path, self.hint))

    def __str__(self) -> str:
        head = f"{self.path}: {self.problem}" if self.path else self.problem
        return f"{head}; {self.hint}" if self.hint else head


class SchemeFileError(_FileProblem):
    """A scheme or data file that cannot be read at all (missing, a folder, not UTF-8)."""


class OutputFileError(_FileProblem):
    """An output file that cannot be written (full disk, no permission, read-only folder).

    The message names the file the user asked for, never the hidden temporary file it
    is written through; nothing of it is left behind.
    """


class UnitError(KineticsError, ValueError):
    """A unit that cannot be read.

    A piece that is no unit, an exponent beyond the limit, a number where a unit belongs, or
    a unit longer than a chemist writes.

    Raised by :func:`kinetics.units.parse_unit` with a message that names the piece;
    the readers of files turn it into a :class:`SchemeError` with a place and a hint.

    Examples
    --------
    >>> isinstance(UnitError("the exponent 99 is too large"), ValueError)
    True
    """


class UnknownUnitError(UnitError):
    """A unit whose pieces read well but that no unit of the registry matches.

    For example ``sec-1`` or ``mol/Lt``.

    Examples
    --------
    >>> str(UnknownUnitError("unknown unit 'sec-1'"))
    "unknown unit 'sec-1'"
    """


class _ProblemAndHint(KineticsError):
    """An error told as ``problem; hint`` with no place in a file."""

    def __init__(self, problem: str, hint: str = "") -> None:
        super().__init__(problem)
        self.problem = problem
        self.hint = hint

    def __reduce__(self):
        return (type(self), (self.problem, self.hint))

    def __str__(self) -> str:
        return f"{self.problem}; {self.hint}" if self.hint else self.problem


class ArgumentValueError(_ProblemAndHint, ValueError):
    """A value given to a library function or a command that cannot be used.

    The common base of :class:`UsageError` (the command line) and of the typed errors of
    the numerical core (:class:`RateMatrixError`, :class:`ConcentrationError`,
    :class:`TimesError`, :class:`TemperatureError`, :class:`ConstantError`,
    :class:`ConditionError`, :class:`OutputUnitError`, :class:`SpeciesError`,
    :class:`SettingError`, :class:`WorkingRangeError`, :class:`TableSizeError`,
    :class:`ParameterSpecError`, :class:`SweepStoreError`):
    ``except ArgumentValueError``
    catches a wrong value wherever it was given.

    Examples
    --------
    >>> issubclass(TimesError, ArgumentValueError) and issubclass(UsageError, ArgumentValueError)
    True
    """


class UsageError(ArgumentValueError):
    """A wrong argument or option on the command line (the command ends with exit status 2).

    Library modules that have no typed error of their own for a mistake raise it too.
    """


class RateMatrixError(ArgumentValueError):
    """An array given as a rate matrix K [1/s] that is not one.

    Not numeric, not square, empty, with inf or nan, or with a negative off-diagonal entry
    (a rate of formation).

    Examples
    --------
    >>> str(RateMatrixError("the rate matrix K is empty", "a scheme needs at least one species"))
    'the rate matrix K is empty; a scheme needs at least one species'
    """


class ConcentrationError(ArgumentValueError):
    """Start concentrations or zero-order feed rates that cannot be used.

    A wrong length, not numeric, inf or nan, negative.
    """


class TimesError(ArgumentValueError):
    """Times [s] that cannot be used.

    Not numbers, not a flat increasing list, negative, an empty list, or a time window or
    grid end that is not a positive finite time; also a duration or time list written as
    text that cannot be read, and a unit of time that is unknown or not a time (``--until
    '5y'``, ``time_unit="kg"``).

    Examples
    --------
    >>> from kinetics.units import time_factor
    >>> try:
    ...     time_factor("kg")
    ... except TimesError as error:
    ...     print(error.problem)
    'kg' is not a unit of time
    """


class TemperatureError(ArgumentValueError):
    """A temperature [K] that cannot be used.

    Not finite or not above 0 K, or none given where a rate constant depends on the
    temperature (an Arrhenius or other temperature law).

    Examples
    --------
    >>> str(TemperatureError("temperature -3 K must be finite and above 0 K"))
    'temperature -3 K must be finite and above 0 K'
    """


class ConstantError(ArgumentValueError):
    """A rate constant or named quantity that the scheme does not have or cannot take.

    Given to a library function: an unknown name, or a value that is not a number, not
    finite, or a negative rate constant.

    Examples
    --------
    >>> isinstance(ConstantError("no rate constant named 'k9' in the scheme"), ValueError)
    True
    """


class ConditionError(ArgumentValueError):
    """A run condition ``KEY=VALUE`` of a measured data set that cannot be used.

    Not of that form, an unknown key, a unit of the wrong kind, or a value out of range (see
    :func:`kinetics.measurements.parse_condition`).
    """


class OutputUnitError(ArgumentValueError):
    """An output unit that does not fit the scheme.

    Another kind of concentration, a mass unit for a species without a molar mass, or "% of
    applied" for a scheme with a feed or with nothing applied (see
    :func:`kinetics.amounts.output_factors`).
    """


class SpeciesError(ArgumentValueError):
    """A species name or index that the scheme does not have.

    Or names that are not one per species and unique.
    """


class SettingError(ArgumentValueError):
    """A setting of a library function outside its allowed values.

    A fraction or a tolerance outside (0, 1), or a choice such as ``where=`` or ``linear=``
    that is not one of those listed.
    """


class ParameterSpecError(ArgumentValueError):
    """Parameters to vary, sample or fit, written in a form that cannot be used.

    A grid axis or a spread with no ``=``, a count that is no whole number, a field that
    is neither a number nor a unit, a spread that is too wide, a parameter named twice or
    none at all (see :mod:`kinetics.sweep.spec` and :func:`kinetics.fit.parse_free`).
    An unknown name is a :class:`ConstantError` (or :class:`SpeciesError`).

    Examples
    --------
    >>> str(ParameterSpecError("--vary 'k2' has no '='", "write NAME=LO:HI:N"))
    "--vary 'k2' has no '='; write NAME=LO:HI:N"
    """


class SweepStoreError(ArgumentValueError):
    """The chunk folder or an output of a sweep on disk that cannot be used.

    A path that is not a chunk folder, chunks of another sweep definition, a chunk file
    that cannot be read or does not match, or an output another sweep is writing (see
    :mod:`kinetics.sweep.store`).  Nothing was overwritten.

    Examples
    --------
    >>> isinstance(SweepStoreError("'s.csv.chunks' belongs to another sweep"), ValueError)
    True
    """


class TableSizeError(ArgumentValueError):
    """A table larger than the chosen output format holds; another format holds it.

    An Excel sheet holds at most 1,048,576 rows and 16,384 columns.
    """


class WorkingRangeError(ArgumentValueError):
    """A problem beyond the working range of the exact engine.

    A rate above 1e100 1/s, a time above 1e100 s, more than 1e27 shortest lifetimes, or
    concentrations too large for the rates (see
    :func:`kinetics.analysis.check_working_range`).
    """


class ArgumentTypeError(_ProblemAndHint, TypeError):
    """A library function called with an argument of the wrong type.

    For example a file name or ``None`` where a checked scheme is needed, or a
    single string where a list of names is needed.
    """


class DataError(KineticsError, ValueError):
    """A measured-data table that cannot be used (unknown column, wrong unit, bad cell)."""

    def __init__(self, problem: str, source: str = "", hint: str = "") -> None:
        super().__init__(problem)
        self.problem = problem
        self.source = source
        self.hint = hint

    def __reduce__(self):
        return (type(self), (self.problem, self.source, self.hint))

    def __str__(self) -> str:
        head = f"{self.source}: {self.problem}" if self.source else self.problem
        return f"{head}; {self.hint}" if self.hint else head


class GrowthError(_ProblemAndHint, OverflowError):
    """Concentrations that grow beyond the range of double precision (about 1e308).

    Only a scheme that makes more of a species than it consumes (``A -> 2 A``)
    or a feed over very long times can do this.
    """


class ExpressionError(_ProblemAndHint, ValueError):
    """An expression of named quantities that cannot be evaluated.

    A dimension that does not fit (``50 h + 2 mol``), a function outside its domain (``ln``
    of a negative number), a result beyond the range of a double, or a named quantity set to
    a value its dependants cannot take.

    Raised by :mod:`kinetics.expressions`; ``column`` and ``snippet`` say where in the
    defining line the problem is (1-based; 0 when unknown), and the scheme reader turns
    the error into a located :class:`SchemeError`.

    Examples
    --------
    >>> error = ExpressionError("ln of a negative number (-2)", "check the sign", 6, "ln(x)")
    >>> str(error), error.column
    ('ln of a negative number (-2); check the sign', 6)
    """

    def __init__(self, problem: str, hint: str = "", column: int = 0, snippet: str = "") -> None:
        super().__init__(problem, hint)
        self.column = column
        self.snippet = snippet

    def __reduce__(self):
        return (type(self), (self.problem, self.hint, self.column, self.snippet))


class ActivityError(_ProblemAndHint, ValueError):
    """Activities that cannot be formed or converted.

    An activity unit that does not fit the scheme's amounts, or an activity given for a
    species that does not decay.

    Examples
    --------
    >>> str(ActivityError("'mol' is not a unit of activity", "write e.g. MBq"))
    "'mol' is not a unit of activity; write e.g. MBq"
    """
