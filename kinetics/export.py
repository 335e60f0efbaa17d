"""Writing tables to files, atomically.

Every file is written to a temporary file in the target folder and then
renamed over the target, so an interrupted run never leaves a half-written
table.  An output path that is one of the input files is refused.

Numbers in CSV are written with Python's shortest round-trip representation
(``repr`` of a float), so that reading the table back gives the same doubles.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import threading
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import UsageError

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "OUTPUT_FORMATS",
    "atomic_path",
    "check_output_path",
    "check_output_paths",
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


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    target = Path(path)
    # the temporary name keeps the extension, for libraries that look at it
    fd, tmp = tempfile.mkstemp(
        prefix=f".{target.name}.", suffix=f".part{target.suffix}", dir=target.parent or "."
    )
    os.close(fd)
    try:
        yield Path(tmp)
        # mkstemp creates the file readable by its owner only; give the finished
        # file the permissions a plainly created one would have (0666 less umask)
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def _umask() -> int:
    """The process umask (read by setting and restoring it)."""
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_csv(frame: pd.DataFrame, path) -> None:
    """Write a DataFrame as CSV with round-trip float precision, atomically.

    Parameters
    ----------
    frame : pandas.DataFrame
        Column names are written as they are (``time [min]``, ``B [mol/L]``).
    path : str or os.PathLike
    """
    with atomic_path(path) as tmp:
        # float_format=None with pandas uses repr (shortest round-trip) for floats
        frame.to_csv(tmp, index=False, float_format=None, lineterminator="\n")


def write_json(obj, path) -> None:
    """Write a JSON-ready object (no NaN or infinity allowed), atomically, UTF-8."""
    import json

    text = json.dumps(obj, indent=2, allow_nan=False, ensure_ascii=False) + "\n"
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")


def write_parquet(frame: pd.DataFrame, path, metadata: dict | None = None) -> None:
    """Write a DataFrame as Apache Parquet (pyarrow), atomically.

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


_XLSX_LOCK = threading.Lock()


@contextlib.contextmanager
def _exact_xlsx_numbers():
    """While saving, let openpyxl write floats with ``repr`` (shortest round-trip form).

    openpyxl formats numbers with ``"%.16g"``, one digit short of what a double
    needs, so some values would read back one or two units in the last place off.
    The cell writer's formatter is swapped for the duration of one save (under a
    lock) and restored afterwards.
    """
    from openpyxl.cell import _writer

    original = _writer.safe_string

    def exact(value):
        if isinstance(value, float) and value == value and abs(value) != float("inf"):
            return repr(value)
        return original(value)

    with _XLSX_LOCK:
        _writer.safe_string = exact
        try:
            yield
        finally:
            _writer.safe_string = original


def _xlsx_value(value):
    if value is None:
        return None
    if isinstance(value, float) and value != value:
        return None
    if isinstance(value, list | tuple | dict):
        import json

        return json.dumps(value, allow_nan=False, default=str)
    return value


def _xlsx_block(sheet, title: str, rows: list[dict], bold) -> None:
    """Append a heading, a header row and the rows of one small table to ``sheet``."""
    if sheet.max_row > 1 or sheet.cell(1, 1).value is not None:
        sheet.append([])
    sheet.append([title])
    sheet.cell(sheet.max_row, 1).font = bold
    if not rows:
        sheet.append(["(none)"])
        return
    header = list(rows[0])
    sheet.append(header)
    for cell in sheet[sheet.max_row]:
        cell.font = bold
    for row in rows:
        sheet.append([_xlsx_value(row.get(h)) for h in header])


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
    """
    from openpyxl import Workbook
    from openpyxl.styles import Font

    bold = Font(bold=True)
    book = Workbook()
    sheet = book.active
    sheet.title = "concentrations"
    sheet.append([str(c) for c in frame.columns])
    for cell in sheet[1]:
        cell.font = bold
    for row in frame.itertuples(index=False):
        sheet.append([float(v) for v in row])
    sheet.freeze_panes = "A2"

    summary_sheet = book.create_sheet("summary")
    rows = summary_rows or []
    if rows:
        header = list(rows[0])
        summary_sheet.append(header)
        for cell in summary_sheet[1]:
            cell.font = bold
        for row in rows:
            summary_sheet.append([_xlsx_value(row.get(h)) for h in header])
    else:
        summary_sheet.append(["no summary quantities available"])
    if scheme_rows:
        _xlsx_block(summary_sheet, "whole scheme", scheme_rows, bold)

    inputs_sheet = book.create_sheet("inputs")
    for name, table in (inputs or {}).items():
        _xlsx_block(inputs_sheet, name, table, bold)
    if scheme_text:
        _xlsx_block(
            inputs_sheet,
            "scheme as written",
            [{"line": i, "text": t} for i, t in enumerate(scheme_text.splitlines(), 1)],
            bold,
        )
    for sh in (sheet, summary_sheet, inputs_sheet):
        for column in sh.columns:
            width = max((len(str(c.value)) for c in column if c.value is not None), default=8)
            sh.column_dimensions[column[0].column_letter].width = min(max(10, width + 2), 60)
    with atomic_path(path) as tmp, _exact_xlsx_numbers():
        book.save(tmp)
