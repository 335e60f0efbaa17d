"""Writing output files safely.

Atomically, with one error that names the file, and with text cells that no spreadsheet program
reads as a formula.

Every file is written to a temporary file in the target folder and then renamed over the
target (:func:`atomic_path`), so an interrupted run never leaves a half-written table; a
write that fails (full disk, no permission) ends in one
:class:`~kinetics.errors.OutputFileError` naming the file (:func:`output_error`).  The
tables of solutions (:mod:`kinetics.output.export`) and of sweeps
(:mod:`kinetics.sweep.store`) are all written through here.
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import tempfile
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import KineticsError, OutputFileError

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "FORMULA_TRIGGERS",
    "atomic_path",
    "output_error",
    "spreadsheet_frame",
    "spreadsheet_text",
]


# ---------------------------------------------------------------------------------------
# Text cells that no spreadsheet program reads as a formula
# ---------------------------------------------------------------------------------------

#: First characters that make a spreadsheet program read a cell as a formula when it
#: opens a CSV file or when a user edits the cell: ``=``, ``+``, ``-``, ``@``, a tab and a
#: carriage return (OWASP, "CSV Injection"), and the full-width forms ``＝ ＋ － ＠``
#: (U+FF1D, U+FF0B, U+FF0D, U+FF20), which East Asian input methods type and which some
#: spreadsheet programs turn into their ASCII forms on entry (from memory, no source).
FORMULA_TRIGGERS = frozenset("=+-@\t\r\uff1d\uff0b\uff0d\uff20")


def spreadsheet_text(text: str) -> str:
    r"""Text for a CSV or spreadsheet cell that no spreadsheet program reads as a formula.

    A text whose first character, or whose first character after leading blanks (some
    programs trim them when they import a CSV file), is one of :data:`FORMULA_TRIGGERS`
    gets a leading apostrophe, the customary neutralisation of OWASP's "CSV Injection"
    guidance; every other text is returned unchanged.  The rule is idempotent (the
    apostrophe is not a trigger), and numbers are never passed through it: they stay
    numbers.

    Parameters
    ----------
    text : str

    Returns
    -------
    str

    Examples
    --------
    >>> spreadsheet_text('=HYPERLINK("http://example.invalid")')
    '\'=HYPERLINK("http://example.invalid")'
    >>> spreadsheet_text("B [mol/L]")
    'B [mol/L]'
    """
    if text and (text[0] in FORMULA_TRIGGERS or text.lstrip()[:1] in FORMULA_TRIGGERS):
        return "'" + text
    return text


def spreadsheet_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """``frame`` with every header and text cell passed through :func:`spreadsheet_text`.

    Numeric columns are not touched; the frame itself is returned when nothing changes.
    """
    from pandas.api.types import is_object_dtype, is_string_dtype

    headers = [spreadsheet_text(str(c)) for c in frame.columns]
    changed = {}
    for j, dtype in enumerate(frame.dtypes):
        if is_object_dtype(dtype) or is_string_dtype(dtype):
            column = frame.iloc[:, j]
            changed[j] = column.map(lambda v: spreadsheet_text(v) if isinstance(v, str) else v)
    if not changed and headers == list(frame.columns):
        return frame
    out = frame.copy()
    for j, column in changed.items():
        out[out.columns[j]] = column.astype(object)
    out.columns = headers
    return out


# ---------------------------------------------------------------------------------------
# Atomic writing and the errors of a failed write
# ---------------------------------------------------------------------------------------

_NO_SPACE = {errno.ENOSPC, errno.EDQUOT, errno.EFBIG}
_NOT_ALLOWED = {errno.EACCES, errno.EPERM, errno.EROFS}


def output_error(exc: OSError, path, left: str = "no partial file was left behind"):
    """The :class:`~kinetics.errors.OutputFileError` for a write of ``path`` that failed.

    The message names ``path`` (not the temporary file) and the reason in the operating
    system's words (``No space left on device``), with what to do and what is left.

    Parameters
    ----------
    exc : OSError
        The error of the write (pyarrow's carry the errno only in their text).
    path : path-like
        The file the user asked for.
    left : str
        What the failed write leaves on disk, said after the hint.

    Returns
    -------
    kinetics.errors.OutputFileError
    """
    number = exc.errno
    if number is None:
        found = re.search(r"errno (\d+)", str(exc), re.IGNORECASE)
        number = int(found[1]) if found else None
    reason = os.strerror(number) if number else (exc.strerror or str(exc) or type(exc).__name__)
    if number in _NO_SPACE:
        hint = "free some space or write to another disk"
    elif number in _NOT_ALLOWED:
        hint = "write to a folder you may write to"
    elif number in (errno.ENOENT, errno.ENOTDIR):
        hint = f"create the folder {str(Path(path).parent)!r} first or write elsewhere"
    elif number == errno.ENAMETOOLONG:
        hint = "use a shorter file name"
    else:
        hint = "check the disk and the folder, then run again"
    return OutputFileError(f"not written ({reason})", str(path), f"{hint}; {left}")


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    On any exception (including an interrupt) the temporary file is removed and ``path``
    is untouched; an operating-system error (full disk, no permission) comes out as
    :class:`~kinetics.errors.OutputFileError` naming ``path``.
    """
    named = Path(path)
    # a link to a file stays a link: the file it points to is replaced
    target = Path(os.path.realpath(named)) if named.is_symlink() else named
    folder = target.parent if str(target.parent) else Path(".")
    # the temporary name keeps the extension, for libraries that look at it, and stays
    # short enough for the file system however long the target's name is
    try:
        fd, tmp = tempfile.mkstemp(
            prefix=f".{target.name[:64]}.", suffix=f".part{target.suffix[:16]}", dir=folder
        )
    except OSError as exc:
        raise output_error(exc, named) from exc
    os.close(fd)
    try:
        yield Path(tmp)
        # mkstemp creates the file readable by its owner only; give the finished
        # file the permissions a plainly created one would have (0666 less umask)
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(exc, OSError) and not isinstance(exc, KineticsError):
            raise output_error(exc, named) from exc
        raise


def _umask() -> int:
    """The process umask (read by setting and restoring it)."""
    mask = os.umask(0)
    os.umask(mask)
    return mask
