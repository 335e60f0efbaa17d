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
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import UsageError

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["atomic_path", "check_output_path", "write_csv"]


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


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent or ".")
    os.close(fd)
    try:
        yield Path(tmp)
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


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
