"""The two entry points of the language: :func:`parse` (text) and :func:`load` (a file)."""

from __future__ import annotations

import os

from ..collector import collector_paused
from ..errors import ArgumentTypeError
from ..scheme import Scheme
from .reader import read_statements
from .resolve import resolve
from .source import check_text_size, read_file

__all__ = ["load", "parse"]


def parse(text: str, source: str = "<text>", *, strict_balance: bool = True) -> Scheme:
    r"""Parse scheme text into a checked :class:`~kinetics.scheme.Scheme`.

    Parameters
    ----------
    text : str
        The scheme, in the language described in :mod:`kinetics.language`.
    source : str, optional
        Name used in error messages (a file name).
    strict_balance : bool, optional
        When False, an atom imbalance is not an error (as with ``balance: lumped``).

    Returns
    -------
    Scheme

    Raises
    ------
    SchemeErrors
        With every mistake found in the text, each with line, column and a hint.
    ArgumentTypeError
        When ``text`` is not a string.

    Examples
    --------
    A first-order constant of 0.12 1/min is 0.002 1/s (1 min = 60 s, SI brochure,
    9th edition, 2019, table 8):

    >>> s = parse("A -> B  k1 = 0.12 1/min\nstart A = 1 mol/L")
    >>> s.species_names, float(s.rates[0])
    (['A', 'B'], 0.002)
    """
    if not isinstance(text, str):
        raise ArgumentTypeError(
            f"parse() reads scheme text (str), not {type(text).__name__}",
            "decode bytes first, or use kinetics.load(path) for a file",
        )
    check_text_size(text, source)
    # a large file makes hundreds of thousands of small objects that all stay alive and
    # hold no reference cycles: nothing is lost by collecting after the parse
    with collector_paused():
        return resolve(read_statements(text, source), strict_balance)


def load(path: str | os.PathLike[str], *, strict_balance: bool = True) -> Scheme:
    r"""Read and check a scheme file.

    Parameters
    ----------
    path : str or os.PathLike
        The scheme file (UTF-8 text).
    strict_balance : bool, optional
        See :func:`parse`.

    Returns
    -------
    Scheme

    Raises
    ------
    SchemeFileError
        When the file is missing, a folder, unreadable or not UTF-8.
    SchemeErrors
        When the text has mistakes.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     path = Path(folder) / "decay.scheme"
    ...     _ = path.write_text("A -> B  k1 = 1 1/h\nstart A = 2 mmol/L\n")
    ...     scheme = load(path)
    >>> scheme.species_names, scheme.concentration_unit
    (['A', 'B'], 'mmol/L')
    """
    text = read_file(path)
    return parse(text, str(path), strict_balance=strict_balance)
