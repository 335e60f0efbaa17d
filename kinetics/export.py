"""Writing tables to files, atomically.

Every file is written to a temporary file in the target folder and then
renamed over the target, so an interrupted run never leaves a half-written
table.  An output path that is one of the input files is refused.

Numbers in CSV are written with Python's shortest round-trip representation
(``repr`` of a float), so that reading the table back gives the same doubles.
Text in CSV and Excel files never starts a formula (see :func:`spreadsheet_text`); a
write that fails (full disk, no permission) ends in one
:class:`~kinetics.errors.OutputFileError` naming the file.
"""

from __future__ import annotations

import contextlib
import errno
import math
import os
import re
import tempfile
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import KineticsError, OutputFileError, UsageError

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "FORMULA_TRIGGERS",
    "OUTPUT_FORMATS",
    "atomic_path",
    "check_output_path",
    "check_output_paths",
    "check_xlsx_size",
    "output_error",
    "spreadsheet_frame",
    "spreadsheet_text",
    "write_csv",
    "write_json",
    "write_parquet",
    "write_xlsx",
]

#: Output formats chosen by the file extension of ``--out``.
OUTPUT_FORMATS = {
    ".csv": "concentration table (CSV)",
    ".xlsx": "spreadsheet with sheets concentrations, summary, inputs",
    ".json": "the JSON object of --json",
    ".parquet": "concentration table (Apache Parquet)",
    ".png": "plot (PNG image)",
    ".svg": "plot (SVG image)",
}


def check_output_path(path, inputs=()) -> Path:
    """Validate an output path: its folder exists and it is not one of ``inputs``."""
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise UsageError(
            f"the folder of the output file {str(path)!r} does not exist",
            f"create {str(folder)!r} first or write elsewhere",
        )
    if p.is_dir():
        raise UsageError(f"the output path {str(path)!r} is a folder", "give a file name")
    if p.exists() and not p.is_file():
        # a pipe or a device would be replaced by the finished file, not written to
        raise UsageError(
            f"the output path {str(path)!r} is not a regular file (a pipe or a device)",
            "give the name of a file",
        )
    for other in inputs:
        try:
            if p.exists() and Path(other).exists() and p.samefile(other):
                raise UsageError(
                    f"the output file {str(path)!r} is an input file",
                    "choose another output name; inputs are never overwritten",
                )
        except OSError:
            continue
        if p.resolve() == Path(other).resolve():
            raise UsageError(
                f"the output file {str(path)!r} is an input file",
                "choose another output name; inputs are never overwritten",
            )
    return p


def check_output_paths(paths, inputs=(), formats=None) -> list[Path]:
    """Validate several output paths: known extension, folder exists, not an input, no repeats.

    Parameters
    ----------
    paths : iterable of path-like
    inputs : iterable of path-like
        Files read by the command; never overwritten.
    formats : dict of str to str, optional
        Allowed extensions (lower case, with the dot) and their descriptions;
        default :data:`OUTPUT_FORMATS`.
    """
    formats = OUTPUT_FORMATS if formats is None else formats
    checked: list[Path] = []
    for raw in paths:
        p = check_output_path(raw, inputs)
        suffix = p.suffix.lower()
        if suffix not in formats:
            known = ", ".join(formats)
            what = f"extension {p.suffix!r}" if p.suffix else "no extension"
            raise UsageError(
                f"the output file {str(raw)!r} has {what}, which is not an output format",
                f"use one of {known}",
            )
        if any(p.resolve() == q.resolve() for q in checked):
            raise UsageError(f"the output file {str(raw)!r} is given twice", "name it once")
        checked.append(p)
    return checked


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
    """Text for a CSV or spreadsheet cell that no spreadsheet program reads as a formula.

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
    '\\'=HYPERLINK("http://example.invalid")'
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


# ---------------------------------------------------------------------------------------
# Writers
# ---------------------------------------------------------------------------------------


def write_csv(frame: pd.DataFrame, path) -> None:
    """Write a DataFrame as CSV with round-trip float precision, atomically.

    Parameters
    ----------
    frame : pandas.DataFrame
        Column names are written as they are (``time [min]``, ``B [mol/L]``); headers
        and text cells pass through :func:`spreadsheet_text`.
    path : str or os.PathLike
    """
    frame = spreadsheet_frame(frame)
    with atomic_path(path) as tmp:
        # float_format=None with pandas uses repr (shortest round-trip) for floats
        frame.to_csv(tmp, index=False, float_format=None, lineterminator="\n")


def write_json(obj, path) -> None:
    """Write a JSON-ready object (no NaN or infinity allowed), atomically, UTF-8.

    Text is written as it is: JSON keeps text and numbers apart, and no program reads
    a JSON string as a formula.
    """
    import json

    text = json.dumps(obj, indent=2, allow_nan=False, ensure_ascii=False) + "\n"
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")


def write_parquet(frame: pd.DataFrame, path, metadata: dict | None = None) -> None:
    """Write a DataFrame as Apache Parquet (pyarrow), atomically.

    Text is written as it is: Parquet columns are typed, and programs that import them
    keep text cells as text.

    Parameters
    ----------
    frame : pandas.DataFrame
        Column names carry their units (``time [min]``).
    metadata : dict, optional
        JSON-ready key-value pairs stored in the file's schema metadata under ``kinetics``.
    """
    import json

    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(frame, preserve_index=False)
    if metadata:
        meta = dict(table.schema.metadata or {})
        meta[b"kinetics"] = json.dumps(metadata, allow_nan=False).encode()
        table = table.replace_schema_metadata(meta)
    with atomic_path(path) as tmp:
        pq.write_table(table, tmp)


#: Size limits of one worksheet and one cell of the Excel format (Microsoft, "Excel
#: specifications and limits"; from memory).
XLSX_MAX_ROWS = 1_048_576
XLSX_MAX_COLUMNS = 16_384
XLSX_MAX_TEXT = 32_767


def check_xlsx_size(rows: int, columns: int, path) -> None:
    """Refuse a worksheet larger than the Excel format holds.

    Parameters
    ----------
    rows, columns : int
        Size of the sheet, header row included.
    path : path-like
        The workbook (named in the message).

    Raises
    ------
    kinetics.errors.UsageError
    """
    if rows > XLSX_MAX_ROWS or columns > XLSX_MAX_COLUMNS:
        raise UsageError(
            f"the output file {str(path)!r} would need {rows:,} rows and {columns:,} "
            f"columns, more than a spreadsheet holds ({XLSX_MAX_ROWS:,} rows, "
            f"{XLSX_MAX_COLUMNS:,} columns)",
            "write .csv or .parquet for a table this large, or use fewer points",
        )


def _xlsx_text(text: str) -> str:
    """A text cell: control characters shown as escapes, cut to the cell limit, no formula."""
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    text = ILLEGAL_CHARACTERS_RE.sub(lambda m: f"\\x{ord(m[0]):02x}", text)
    if len(text) > XLSX_MAX_TEXT:
        marker = f"… [cut: {len(text):,} characters in all]"
        text = text[: XLSX_MAX_TEXT - len(marker)] + marker
    return spreadsheet_text(text)


def _xlsx_value(value):
    """A cell value: numbers stay numbers, everything else becomes neutral text."""
    import numbers

    if value is None or isinstance(value, bool):
        return value
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        value = float(value)
        return value if math.isfinite(value) else None
    if isinstance(value, list | tuple | dict):
        import json

        value = json.dumps(value, allow_nan=False, default=str)
    return _xlsx_text(str(value))


def _append(sheet, values) -> None:
    """Append one row; floats are written in their shortest round-trip form.

    openpyxl writes numbers with ``"%.16g"``, one digit short of what a double needs;
    a numeric cell (``data_type`` ``"n"``) whose value is the ``repr`` text is written
    as that text, which reads back as the same double.
    """
    row = [_xlsx_value(v) for v in values]
    sheet.append(row)
    if any(isinstance(v, float) for v in row):
        for cell in sheet[sheet.max_row]:
            if isinstance(cell.value, float):
                cell.value = repr(cell.value)
                cell.data_type = "n"


def _xlsx_block(sheet, title: str, rows: list[dict], bold) -> None:
    """Append a heading, a header row and the rows of one small table to ``sheet``."""
    if sheet.max_row > 1 or sheet.cell(1, 1).value is not None:
        sheet.append([])
    _append(sheet, [title])
    sheet.cell(sheet.max_row, 1).font = bold
    if not rows:
        sheet.append(["(none)"])
        return
    header = list(rows[0])
    _append(sheet, header)
    for cell in sheet[sheet.max_row]:
        cell.font = bold
    for row in rows:
        _append(sheet, [row.get(h) for h in header])


def write_xlsx(
    frame: pd.DataFrame,
    path,
    *,
    summary_rows: list[dict] | None = None,
    inputs: dict[str, list[dict]] | None = None,
    scheme_text: str = "",
    scheme_rows: list[dict] | None = None,
) -> None:
    """Write an Excel workbook with sheets ``concentrations``, ``summary`` and ``inputs``.

    Numbers are numeric cells that read back as the same doubles; every text (titles,
    file names, species names, notes, the scheme) is a text cell passed through
    :func:`spreadsheet_text`, with control characters shown as ``\\xNN`` and texts
    longer than a cell holds (32,767 characters) cut with a note.

    Parameters
    ----------
    frame : pandas.DataFrame
        The concentration table (unit-labelled columns).
    summary_rows : list of dict, optional
        One row per species (keys are column headers with units).
    inputs : dict of str to list of dict, optional
        Named tables of the scheme as parsed (see :func:`kinetics.overview.inputs_tables`).
    scheme_text : str, optional
        The scheme as written, appended to the inputs sheet line by line.
    scheme_rows : list of dict, optional
        Whole-scheme quantities (see :func:`kinetics.overview.scheme_rows`), written below
        the species rows of the summary sheet.

    Raises
    ------
    kinetics.errors.UsageError
        A sheet larger than the Excel format holds (see :func:`check_xlsx_size`).
    kinetics.errors.OutputFileError
        The file cannot be written (full disk, no permission).
    """
    import io

    from openpyxl import Workbook
    from openpyxl.styles import Font

    lines = scheme_text.splitlines()
    tables = inputs or {}
    check_xlsx_size(len(frame) + 1, len(frame.columns), path)
    check_xlsx_size(
        sum(len(t) + 3 for t in tables.values()) + len(lines) + 3, XLSX_MAX_COLUMNS, path
    )
    bold = Font(bold=True)
    book = Workbook()
    sheet = book.active
    sheet.title = "concentrations"
    _append(sheet, [str(c) for c in frame.columns])
    for cell in sheet[1]:
        cell.font = bold
    for row in frame.itertuples(index=False):
        _append(sheet, [float(v) for v in row])
    sheet.freeze_panes = "A2"

    summary_sheet = book.create_sheet("summary")
    rows = summary_rows or []
    if rows:
        header = list(rows[0])
        _append(summary_sheet, header)
        for cell in summary_sheet[1]:
            cell.font = bold
        for row in rows:
            _append(summary_sheet, [row.get(h) for h in header])
    else:
        summary_sheet.append(["no summary quantities available"])
    if scheme_rows:
        _xlsx_block(summary_sheet, "whole scheme", scheme_rows, bold)

    inputs_sheet = book.create_sheet("inputs")
    for name, table in tables.items():
        _xlsx_block(inputs_sheet, name, table, bold)
    if lines:
        _xlsx_block(
            inputs_sheet,
            "scheme as written",
            [{"line": i, "text": t} for i, t in enumerate(lines, 1)],
            bold,
        )
    for sh in (sheet, summary_sheet, inputs_sheet):
        for column in sh.columns:
            width = max((len(str(c.value)) for c in column if c.value is not None), default=8)
            sh.column_dimensions[column[0].column_letter].width = min(max(10, width + 2), 60)
    # the workbook is assembled in memory, so that a failing disk shows up as one
    # error of an ordinary file write (the zip writer cannot leave a broken archive)
    data = io.BytesIO()
    book.save(data)
    with atomic_path(path) as tmp:
        tmp.write_bytes(data.getbuffer())
