"""The first pass: each line of a scheme read into a statement, or into its errors.

The result, a :class:`ParsedFile`, also records what the lines that failed to
read would have said (their words and their kinds of statement), so that the
second pass reports no follow-on errors about them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from ..errors import SchemeError
from ..suggest import close_matches
from .grammar import BAD_ARROW_RE, DIRECTIVE_LIKE, FIRST_WORD, NAME_RE
from .messages import STATEMENT_EXAMPLES, quoted, unknown_arrow
from .operations import OPERATION_KEYWORDS, OperationStatement, VolumeStatement
from .reactions import ReactionStatement, fast_reaction, read_terms
from .source import CONTROL_RE, MAX_LINE_LENGTH, Line, raw_lines, unreadable_line
from .statements import (
    BalanceStatement,
    ConstantStatement,
    KeptList,
    ListStatement,
    RequireStatement,
    TemperatureStatement,
    TitleStatement,
)

__all__ = ["STATEMENT_KINDS", "ParsedFile", "Statement", "read_statements", "unknown_statement"]

Statement = (
    TitleStatement
    | BalanceStatement
    | TemperatureStatement
    | ListStatement
    | RequireStatement
    | OperationStatement
    | VolumeStatement
    | ReactionStatement
    | ConstantStatement
)
#: Every kind of statement, in the order a line is offered to them.
STATEMENT_KINDS: tuple[type[Statement], ...] = (
    TitleStatement,
    BalanceStatement,
    TemperatureStatement,
    ListStatement,
    RequireStatement,
    OperationStatement,
    VolumeStatement,
    ReactionStatement,
    ConstantStatement,
)
#: A line whose first word is no keyword can only be a reaction or a constant
#: (the other statements start with their keyword): a speed-up for large files.
_KEYWORD_STARTS = frozenset(
    {"title", "balance", "temperature", "require", "volume", *OPERATION_KEYWORDS}
    | set(ListStatement.EXAMPLES)
)
_NAME_STARTS: tuple[type[Statement], ...] = (ReactionStatement, ConstantStatement)
#: The hint of a line that is no statement at all.
_WHAT_A_LINE_IS = (
    "a line is a reaction (A -> B  k1 = 0.1 1/s), a constant (k1 = 0.1 1/s) or one of "
    "title:, start, excess, feed, formula, molar_mass, temperature =, balance:, require"
)


@dataclass(frozen=True, slots=True)
class ParsedFile:
    """The statements of one scheme text, the errors of its lines, and what failed.

    Attributes
    ----------
    source, text : str
        The file name and the whole text.
    statements : tuple
        Every statement read, in the order of the lines.
    reactions, lists : tuple
        The :class:`ReactionStatement` and :class:`ListStatement` among them.
    errors : tuple of SchemeError
        The errors of the lines.
    failed_names : frozenset of str
        The words on the lines that failed to read.
    failed_kinds : frozenset of type
        The kinds of statement those lines were, when known.
    """

    source: str
    text: str
    statements: tuple[Statement, ...]
    reactions: tuple[ReactionStatement, ...]
    lists: tuple[ListStatement, ...]
    errors: tuple[SchemeError, ...]
    failed_names: frozenset[str]
    failed_kinds: frozenset[type]


def read_statements(text: str, source: str) -> ParsedFile:
    r"""Read every line of ``text`` into a statement or its errors (the first pass).

    Parameters
    ----------
    text : str
        The scheme.
    source : str
        Its name in messages.

    Returns
    -------
    ParsedFile

    Examples
    --------
    >>> parsed = read_statements("A -> B  k1 = 1 1/s\nstart A = 1 M\nA => C  k2", "t")
    >>> [type(s).__name__ for s in parsed.statements], sorted(parsed.failed_names)
    (['ReactionStatement', 'ListStatement'], ['A', 'C', 'k2'])
    >>> parsed.errors[0].headline()
    "t:3:3: unknown arrow '=>'; write -> (or →) for an irreversible step and <=> (or ⇌)
    for a reversible one"
    """
    statements: list[Statement] = []
    errors: list[SchemeError] = []
    failed_names: set[str] = set()
    failed_kinds: set[type] = set()
    for number, raw in raw_lines(text):
        if len(raw) > MAX_LINE_LENGTH or CONTROL_RE.search(raw):
            errors.append(unreadable_line(source, number, raw))
            failed_names.update(NAME_RE.findall(raw[:MAX_LINE_LENGTH]))
            continue
        code = raw.split("#", 1)[0].rstrip() if "#" in raw else raw.rstrip()
        if not code or code.isspace():
            continue
        line = Line(source, number, raw, code, raw.replace("\t", " ") if "\t" in raw else "")
        first = FIRST_WORD.match(code)
        offered = STATEMENT_KINDS
        if first is not None and first.group(1).lower() not in _KEYWORD_STARTS:
            fast = fast_reaction(line)  # most lines of a large file
            if fast is not None:
                statements.append(fast)
                continue
            offered = _NAME_STARTS
        for kind in offered:
            result = kind.from_line(line)
            if result is None:
                continue
            if isinstance(result, list):
                errors.extend(result)
                failed_names.update(NAME_RE.findall(code))
                failed_kinds.add(kind)
            elif isinstance(result, KeptList):  # a statement kept despite some errors
                statements.append(result.statement)
                errors.extend(result.errors)
            else:
                statements.append(result)
            break
        else:
            errors.append(unknown_statement(line))
            failed_names.update(NAME_RE.findall(code))
    return ParsedFile(
        source,
        text,
        tuple(statements),
        tuple(s for s in statements if isinstance(s, ReactionStatement)),
        tuple(s for s in statements if isinstance(s, ListStatement)),
        tuple(errors),
        frozenset(failed_names),
        frozenset(failed_kinds),
    )


def unknown_statement(line: Line) -> SchemeError:
    """The error of a line that no kind of statement reads.

    A line that reads as species followed by something arrow-like gets the
    unknown-arrow message; a misspelt keyword gets a "did you mean".

    Examples
    --------
    >>> code = "strat A = 1 M"
    >>> unknown_statement(Line("t", 4, code, code)).headline()
    "t:4:1: could not read this line (unknown statement 'strat'); did you mean 'start'? \
(start A = 0.5 mol/L)"
    """
    code = line.code
    lead = len(code) - len(code.lstrip())
    looks_like = _looks_like_reaction(line)
    if looks_like is not None:
        return looks_like
    word = re.match(r"[^\s:=]+|\S+", code[lead:])
    snippet = word.group(0) if word else code.strip()
    if snippet in STATEMENT_EXAMPLES:
        return line.error(
            f"could not read this '{snippet}' statement",
            lead + 1,
            snippet,
            f"write e.g. {STATEMENT_EXAMPLES[snippet]}",
        )
    hint = _WHAT_A_LINE_IS
    close = close_matches(snippet.lower(), STATEMENT_EXAMPLES, cutoff=0.7)
    if close:
        hint = f"did you mean '{close[0]}'? ({STATEMENT_EXAMPLES[close[0]]})"
    problem = f"could not read this line (unknown statement {quoted(snippet)})"
    return line.error(problem, lead + 1, snippet, hint)


def _looks_like_reaction(line: Line) -> SchemeError | None:
    """The error of species followed by a wrong arrow or no arrow, else None."""
    code = line.code
    terms = read_terms(line, code, 0, "left")
    if isinstance(terms, SchemeError):
        return None
    rest = terms[1]
    bad = BAD_ARROW_RE.match(rest.lstrip())
    column0 = len(code) - len(rest) + (len(rest) - len(rest.lstrip()))
    if bad:
        return unknown_arrow(line, bad.group(0), column0)
    if rest.strip() and not DIRECTIVE_LIKE.match(code):
        word = rest.split()[0]
        return line.error(
            f"could not read this line: expected an arrow before {quoted(word)}",
            column0 + 1,
            word,
            "a reaction reads A -> B + 2 C  k1 = 0.1 1/s (or <=> for a reversible step)",
        )
    return None
