"""Messages of the scheme language: shared wordings and the collector of one file's problems.

The readers and the resolution pass report through a :class:`Diagnostics`
object, which keeps every error (raised together at the end as one
:class:`~kinetics.errors.SchemeErrors`) and every warning (probable mistakes
that do not stop the file, kept as ``Scheme.warnings``).
"""

from __future__ import annotations

from collections.abc import Iterable

from ..errors import SchemeError, SchemeErrors, shorten
from ..suggest import close_matches
from .source import Line

__all__ = [
    "MAX_SUGGESTIONS",
    "STATEMENT_EXAMPLES",
    "WHAT_LISTED",
    "Diagnostics",
    "keyword_error",
    "quoted",
    "unknown_arrow",
]

#: Misspelt names of one file that get a "did you mean" (each costs a scan of all names).
MAX_SUGGESTIONS = 50

#: An example of each statement that starts with a keyword (used in hints).
STATEMENT_EXAMPLES = {
    "title": "title: Hydrolysis of an ester",
    "balance": "balance: lumped",
    "start": "start A = 0.5 mol/L",
    "excess": "excess W = 55 mol/L",
    "feed": "feed A = 0.01 mol/L/min",
    "formula": "formula A = C6H12O6",
    "molar_mass": "molar_mass A = 180.2 g/mol",
    "temperature": "temperature = 60 degC",
    "require": "require API >= 90 %",
    "volume": "volume = 1.0 L",
    "at": "at 30 min: add A = 0.25 mol/L",
    "every": "every 24 h: remove 100 % of D",
}

#: What each list statement gives a species, as a message names it.
WHAT_LISTED = {
    "start": "a start value",
    "excess": "an excess concentration",
    "feed": "a feed",
    "formula": "a formula",
    "molar_mass": "a molar mass",
}


def quoted(text: str) -> str:
    """A user's text quoted in a message, cut when it is long.

    Examples
    --------
    >>> quoted("sec-1")
    "'sec-1'"
    >>> quoted("x" * 70)
    "'xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx… (70 characters)'"
    """
    return repr(shorten(text))


def keyword_error(line: Line, name: str, column0: int, what: str) -> SchemeError:
    """The one message for a keyword used as the name of a species or a constant.

    Parameters
    ----------
    line : Line
        The line of the mistake.
    name : str
        The keyword as written.
    column0 : int
        0-based column of the keyword.
    what : str
        ``"a species"`` or ``"a constant"``.

    Examples
    --------
    >>> line = Line("t", 1, "start -> B  k1 = 1 1/s", "start -> B  k1 = 1 1/s")
    >>> keyword_error(line, "start", 0, "a species").headline()
    "t:1:1: 'start' is a keyword of the scheme language and cannot name a species; \
choose another name"
    """
    return line.error(
        f"'{name}' is a keyword of the scheme language and cannot name {what}",
        column0 + 1,
        name,
        "choose another name, e.g. k1" if what == "a constant" else "choose another name",
    )


def unknown_arrow(line: Line, arrow: str, column0: int) -> SchemeError:
    """The one message for an arrow the language does not know (``=>``, ``<->``).

    Examples
    --------
    >>> line = Line("t", 2, "A => B  k1 = 1 1/s", "A => B  k1 = 1 1/s")
    >>> unknown_arrow(line, "=>", 2).headline()
    "t:2:3: unknown arrow '=>'; write -> (or →) for an irreversible step and <=> (or ⇌) \
for a reversible one"
    """
    return line.error(
        f"unknown arrow {quoted(arrow)}",
        column0 + 1,
        arrow,
        "write -> (or →) for an irreversible step and <=> (or ⇌) for a reversible one",
    )


class Diagnostics:
    """The errors and warnings of one scheme file, collected while it is read.

    Parameters
    ----------
    source : str
        The file name (warnings start with it).
    errors : iterable of SchemeError, optional
        Errors found before (by the first pass).
    suggestions : int, optional
        How many misspelt names get a "did you mean" proposal.

    Examples
    --------
    >>> found = Diagnostics("t.scheme")
    >>> found.warn(None, "the file has no start line")
    >>> found.warnings
    ['t.scheme: the file has no start line']
    >>> found.suggest("k_1", ["k1", "k2"])
    'did you mean k1?'
    """

    def __init__(
        self, source: str, errors: Iterable[SchemeError] = (), suggestions: int = MAX_SUGGESTIONS
    ) -> None:
        self.source = source
        self.errors: list[SchemeError] = list(errors)
        self.warnings: list[str] = []
        self.suggestions_left = suggestions

    def error(
        self, line: Line, problem: str, column: int = 0, snippet: str = "", hint: str = ""
    ) -> None:
        """Keep an error at ``column`` (1-based) of ``line``."""
        self.errors.append(line.error(problem, column, snippet, hint))

    def add(self, error: SchemeError) -> None:
        """Keep an error made elsewhere."""
        self.errors.append(error)

    def warn(self, line: Line | None, sentence: str) -> None:
        """Keep a probable mistake that does not stop the file (``Scheme.warnings``)."""
        where = f"{self.source}:{line.number}" if line is not None else self.source
        self.warnings.append(f"{where}: {sentence}")

    def suggest(self, name: str, candidates: Iterable[str]) -> str:
        """``"did you mean NAME?"`` for the first few misspelt names of a file, else ``""``."""
        if self.suggestions_left <= 0:
            return ""
        self.suggestions_left -= 1
        close = close_matches(name, candidates)
        return f"did you mean {close[0]}?" if close else ""

    def raise_if_any(self) -> None:
        """Raise every error kept so far as one :class:`~kinetics.errors.SchemeErrors`."""
        if self.errors:
            raise SchemeErrors(self.errors)
