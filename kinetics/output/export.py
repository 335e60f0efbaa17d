"""Writing tables to files: CSV, JSON, Parquet and Excel, each atomically.

Every file is written through :func:`kinetics.files.atomic_path`, so an interrupted
run never leaves a half-written table and a write that fails (full disk, no
permission) ends in one :class:`~kinetics.errors.OutputFileError` naming the file.

Numbers in CSV are written with Python's shortest round-trip representation
(``repr`` of a float), so that reading the table back gives the same doubles.
Text in CSV and Excel files never starts a formula (see
:func:`kinetics.files.spreadsheet_text`).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from kinetics import files
from kinetics.errors import TableSizeError
from kinetics.jsonready import finite_or_none

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "XLSX_MAX_COLUMNS",
    "XLSX_MAX_ROWS",
    "XLSX_MAX_TEXT",
    "check_xlsx_size",
    "write_csv",
    "write_json",
    "write_parquet",
    "write_xlsx",
]

# ---------------------------------------------------------------------------------------
# Writers
# ---------------------------------------------------------------------------------------


def write_csv(frame: pd.DataFrame, path) -> None:
    """Write a DataFrame as CSV with round-trip float precision, atomically.

    Parameters
    ----------
    frame : pandas.DataFrame
        Column names are written as they are (``time [min]``, ``B [mol/L]``); headers
        and text cells pass through :func:`kinetics.files.spreadsheet_text`.
    path : str or os.PathLike
    """
    frame = files.spreadsheet_frame(frame)
    with files.atomic_path(path) as tmp:
        # float_format=None with pandas uses repr (shortest round-trip) for floats
        frame.to_csv(tmp, index=False, float_format=None, lineterminator="\n")


def write_json(obj, path) -> None:
    """Write a JSON-ready object (no NaN or infinity allowed), atomically, UTF-8.

    Text is written as it is: JSON keeps text and numbers apart, and no program reads
    a JSON string as a formula.
    """
    import json

    text = json.dumps(obj, indent=2, allow_nan=False, ensure_ascii=False) + "\n"
    with files.atomic_path(path) as tmp:
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
    with files.atomic_path(path) as tmp:
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
    kinetics.errors.TableSizeError
    """
    if rows > XLSX_MAX_ROWS or columns > XLSX_MAX_COLUMNS:
        raise TableSizeError(
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
    return files.spreadsheet_text(text)


def _xlsx_value(value):
    """A cell value: numbers stay numbers, everything else becomes neutral text."""
    import numbers

    if value is None or isinstance(value, bool):
        return value
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        return finite_or_none(value)
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
    _header_and_rows(sheet, rows, bold, "(none)")


def _header_and_rows(sheet, rows: list[dict], bold, empty: str) -> bool:
    """Append a bold header row and the rows of a table; the note ``empty`` if it has none.

    Returns True when the table had rows.
    """
    if not rows:
        sheet.append([empty])
        return False
    header = list(rows[0])
    _append(sheet, header)
    for cell in sheet[sheet.max_row]:
        cell.font = bold
    for row in rows:
        _append(sheet, [row.get(h) for h in header])
    return True


def _fit_column_widths(sheets) -> None:
    """Widen each column to its longest cell (10 to 60 characters)."""
    for sh in sheets:
        for column in sh.columns:
            width = max((len(str(c.value)) for c in column if c.value is not None), default=8)
            sh.column_dimensions[column[0].column_letter].width = min(max(10, width + 2), 60)


def write_xlsx(
    frame: pd.DataFrame,
    path,
    *,
    summary_rows: list[dict] | None = None,
    inputs: dict[str, list[dict]] | None = None,
    scheme_text: str = "",
    scheme_rows: list[dict] | None = None,
    events: list[dict] | None = None,
) -> None:
    r"""Write an Excel workbook of the solution, its summary and its inputs.

    The sheets are ``concentrations``, ``summary`` and ``inputs`` (and ``events`` for a
    run with operations).

    Numbers are numeric cells that read back as the same doubles; every text (titles,
    file names, species names, notes, the scheme) is a text cell passed through
    :func:`kinetics.files.spreadsheet_text`, with control characters shown as ``\xNN``
    and texts longer than a cell holds (32,767 characters) cut with a note.

    Parameters
    ----------
    frame : pandas.DataFrame
        The concentration table (unit-labelled columns).
    summary_rows : list of dict, optional
        One row per species (keys are column headers with units).
    inputs : dict of str to list of dict, optional
        Named tables of the scheme as parsed (see :func:`kinetics.output.overview.inputs_tables`).
    scheme_text : str, optional
        The scheme as written, appended to the inputs sheet line by line.
    scheme_rows : list of dict, optional
        Whole-scheme quantities (see :func:`kinetics.output.summary_text.scheme_rows`),
        written below the species rows of the summary sheet.
    events : list of dict, optional
        The operations of the run (see :func:`kinetics.output.overview.event_table`):
        a sheet ``events`` when given.

    Raises
    ------
    kinetics.errors.TableSizeError
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
    _header_and_rows(summary_sheet, summary_rows or [], bold, "no summary quantities available")
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
    sheets = [sheet, summary_sheet, inputs_sheet]
    if events is not None:
        check_xlsx_size(len(events) + 1, XLSX_MAX_COLUMNS, path)
        events_sheet = book.create_sheet("events")
        if _header_and_rows(
            events_sheet, events, bold, "no operation was applied inside the window"
        ):
            events_sheet.freeze_panes = "A2"
        sheets.append(events_sheet)
    _fit_column_widths(sheets)
    # the workbook is assembled in memory, so that a failing disk shows up as one
    # error of an ordinary file write (the zip writer cannot leave a broken archive)
    data = io.BytesIO()
    book.save(data)
    with files.atomic_path(path) as tmp:
        tmp.write_bytes(data.getbuffer())
