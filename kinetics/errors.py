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

All errors pickle (parallel sweeps send them between processes).
"""

from __future__ import annotations

__all__ = [
    "ArgumentTypeError",
    "DataError",
    "GrowthError",
    "KineticsError",
    "SchemeError",
    "SchemeErrors",
    "SchemeFileError",
    "UsageError",
]


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
            out += "\n    " + self.text.rstrip("\n")
            if self.column > 0:
                width = max(1, len(self.snippet))
                out += "\n    " + " " * (self.column - 1) + "^" * width
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
        parts = [f"{len(self.errors)} problems in {self.errors[0].source}:"]
        parts.extend(str(e) for e in self.errors)
        return "\n".join(parts)


class SchemeFileError(KineticsError, OSError):
    """A scheme or data file that cannot be read at all (missing, a folder, not UTF-8)."""

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


class UsageError(_ProblemAndHint, ValueError):
    """A wrong argument to a command or to a library function (times, options, names)."""


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
