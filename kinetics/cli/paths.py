"""Output files named on the command line, checked before anything is computed.

Each has a known format and an existing folder; none is an input file, none is named twice.
"""

from __future__ import annotations

from pathlib import Path

from kinetics.errors import UsageError

__all__ = ["OUTPUT_FORMATS", "check_output_path", "check_output_paths"]

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
