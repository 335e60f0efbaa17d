"""Resumable sweeps on disk: one file per finished chunk, streamed final tables.

A sweep that writes ``sweep.csv`` keeps its finished chunks in the folder
``sweep.csv.chunks/``:

* ``manifest.json`` -- the sweep definition (scheme hash, grid axes, spreads, samples, seed,
  times, chunk size, precision, columns) and its SHA-256 ``hash``;
* ``chunk_000000.npz``, ``chunk_000001.npz``, ... -- the parameter values, summary
  quantities (and curves, when asked for) of each chunk, each written to a temporary file
  and renamed when complete, so a chunk file is either whole or absent.

Every chunk file also carries the definition's hash, so a chunk of another sweep is
never taken for one of this sweep.  While a sweep runs it holds an advisory lock
(``flock``) on a hidden file beside each of its outputs (``.sweep.csv.lock``): a second
sweep that would write any of the same files stops at once with a clear message instead
of mixing its rows into the first one's.  The operating system drops the lock when the
process ends, however it ends, so a lock file left by a killed run is no obstacle.

``--resume`` reads the manifest, refuses a folder that belongs to another definition,
and evaluates only the chunks without a file.  When every chunk is there the final tables
are written chunk by chunk (memory stays bounded by one chunk plus, for Monte Carlo bands,
one grid point's samples), each atomically, and the folder is removed (``--keep-chunks``
keeps it).  Every set therefore appears exactly once in the final table, in set order.

This module does file I/O; the computation is in the other modules of :mod:`kinetics.sweep`.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import tempfile
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, TextIO

import numpy as np

from ..errors import KineticsError, SettingError, SweepStoreError
from ..files import atomic_path, output_error, spreadsheet_frame
from ..jsonready import finite_or_none
from .engines import run_chunks
from .evaluation import ChunkResult
from .plan import SweepPlan
from .tables import curve_bands, curves_frame, percentile_bands
from .tables import summary_frame as _summary_frame

if TYPE_CHECKING:
    import pandas as pd
    import pyarrow.parquet

__all__ = ["ChunkStore", "OutputLock", "SweepRun", "TableWriter", "run_sweep"]

_CHUNK_RE = re.compile(r"^chunk_(\d{6,})\.npz$")
#: Table formats of the sweep outputs, by extension.
TABLE_FORMATS = (".csv", ".parquet", ".json")
#: Rows per Parquet row group (frames are buffered up to this size).
_ROW_GROUP = 65536


# ---------------------------------------------------------------------------------------
# The chunk folder
# ---------------------------------------------------------------------------------------


class ChunkStore:
    """The folder of finished chunks of one sweep.

    Parameters
    ----------
    folder : path-like
        ``<out>.chunks``.
    plan : SweepPlan
    curves : bool
        Whether chunks carry their curves (part of the definition).
    resume : bool
        Keep the chunks of an earlier run of the same definition; without it an existing
        folder of this tool is emptied first.

    Raises
    ------
    kinetics.errors.SweepStoreError
        ``resume`` with a folder of another sweep definition, or a path that is not such a
        folder.
    """

    def __init__(self, folder, plan: SweepPlan, curves: bool, resume: bool) -> None:
        self.folder = Path(folder)
        self.plan = plan
        self.curves = curves
        self.hash = plan.definition_hash(curves)
        manifest = self.folder / "manifest.json"
        if self.folder.exists() and not self.folder.is_dir():
            raise SweepStoreError(
                f"{str(self.folder)!r} exists and is not a chunk folder",
                "remove it or choose another output name",
            )
        old = None
        if manifest.is_file():
            try:
                old = json.loads(manifest.read_text(encoding="utf-8"))
            except (OSError, ValueError):
                old = None
        elif self.folder.is_dir() and any(self.folder.iterdir()):
            raise SweepStoreError(
                f"{str(self.folder)!r} is a folder but not the chunk folder of a sweep",
                "remove it or choose another output name",
            )
        if resume and old is not None and old.get("hash") != self.hash:
            raise SweepStoreError(
                f"the chunks in {str(self.folder)!r} belong to a different sweep (other "
                "scheme, parameters, times, chunk size or options)",
                "run without --resume to start again, or repeat the original options",
            )
        if old is not None and not resume:
            self._clear()
        self.folder.mkdir(exist_ok=True)
        if old is None or not resume:
            document = {
                "hash": self.hash,
                "n_sets": plan.n_sets,
                "n_chunks": plan.n_chunks,
                "definition": plan.definition(curves),
            }
            text = json.dumps(document, indent=2, sort_keys=True) + "\n"
            with atomic_path(manifest) as tmp:
                tmp.write_text(text, encoding="utf-8")

    def _clear(self) -> None:
        for p in self.folder.iterdir():
            if _CHUNK_RE.match(p.name) or p.name == "manifest.json" or p.name.endswith(".part"):
                with contextlib.suppress(OSError):
                    p.unlink()

    def path(self, k: int) -> Path:
        """The file of chunk ``k``."""
        return self.folder / f"chunk_{k:06d}.npz"

    def done(self) -> set[int]:
        """Numbers of the chunks whose file is complete."""
        out = set()
        for p in self.folder.iterdir():
            m = _CHUNK_RE.match(p.name)
            if m and int(m[1]) < self.plan.n_chunks:
                out.add(int(m[1]))
        return out

    def missing(self) -> list[int]:
        """Numbers of the chunks still to evaluate, in order."""
        have = self.done()
        return [k for k in range(self.plan.n_chunks) if k not in have]

    def write(self, result: ChunkResult) -> None:
        """Store one finished chunk atomically (temporary file, then rename).

        Raises
        ------
        kinetics.errors.OutputFileError
            The chunk cannot be written (full disk); the chunks finished before stay.
        """
        target = self.path(result.index)
        try:
            self._write(target, result)
        except OSError as exc:
            raise output_error(exc, target) from exc

    def _write(self, target: Path, result: ChunkResult) -> None:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=self.folder)
        os.close(fd)
        try:
            with open(tmp, "wb") as fh:
                arrays = {
                    "definition": np.array(self.hash),
                    "index": np.array(result.index),
                    "start": np.array(result.start),
                    "stop": np.array(result.stop),
                    "parameters": result.parameters,
                    "summary": result.summary,
                }
                if result.curves is not None:
                    arrays["curves"] = result.curves
                if result.bound is not None:
                    arrays["bound"] = result.bound
                # numpy's stub reads **arrays as if it could hold the flag allow_pickle
                np.savez(fh, **arrays)  # type: ignore[arg-type]
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, target)
        except BaseException:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
            raise

    def read(self, k: int) -> ChunkResult:
        """Load chunk ``k`` (checked against the plan)."""
        start, stop = self.plan.chunk_bounds(k)
        try:
            with np.load(self.path(k)) as z:
                # chunks written before the hash was stored carry none: the manifest vouches
                owner = str(z["definition"]) if "definition" in z.files else self.hash
                result = ChunkResult(
                    int(z["index"]),
                    int(z["start"]),
                    int(z["stop"]),
                    z["parameters"],
                    z["summary"],
                    z["curves"] if "curves" in z.files else None,
                    z["bound"] if "bound" in z.files else None,
                )
        except (OSError, ValueError, KeyError) as exc:
            raise SweepStoreError(
                f"the chunk file {str(self.path(k))!r} cannot be read ({exc})",
                "delete it and run again with --resume",
            ) from None
        if owner != self.hash:
            raise SweepStoreError(
                f"the chunk file {str(self.path(k))!r} belongs to another sweep",
                "delete the folder and run again (another sweep wrote into it)",
            )
        if (result.start, result.stop) != (start, stop) or result.summary.shape != (
            stop - start,
            len(self.plan.columns),
        ):
            raise SweepStoreError(
                f"the chunk file {str(self.path(k))!r} does not match this sweep",
                "delete it and run again with --resume",
            )
        return result

    def remove(self) -> None:
        """Delete the folder with its chunks and manifest."""
        self._clear()
        with contextlib.suppress(OSError):
            self.folder.rmdir()
        if self.folder.exists():  # something else lives there: leave it
            return


# ---------------------------------------------------------------------------------------
# Streaming table writers
# ---------------------------------------------------------------------------------------


def _json_value(x):
    if isinstance(x, float | np.floating):
        return finite_or_none(x)
    if isinstance(x, np.integer):
        return int(x)
    return x


class TableWriter:
    """Write a table in pieces to ``path`` (csv, parquet or json by extension), atomically.

    The file appears only when :meth:`close` succeeds; an interrupted run leaves no partial
    file.  Floats are written so that they read back as the same doubles (CSV: shortest
    round-trip text; JSON: the same, with ``null`` for empty cells; Parquet: binary).
    """

    def __init__(self, path, metadata: dict[str, Any] | None = None) -> None:
        self.path = Path(path)
        self.kind = self.path.suffix.lower()
        if self.kind not in TABLE_FORMATS:
            raise SettingError(
                f"the table file {str(path)!r} has an unknown extension",
                "use .csv, .parquet or .json",
            )
        self.metadata = metadata or {}
        self._ctx = atomic_path(self.path)
        self._tmp = self._ctx.__enter__()
        self._fh: TextIO | None = None
        self._pq: pyarrow.parquet.ParquetWriter | None = None
        self._rows = 0
        self._buffer: list = []
        self._buffered = 0
        self._done = False

    def _flush_parquet(self) -> None:
        """Write the buffered frames as one row group."""
        if not self._buffer:
            return
        import pandas as pd
        import pyarrow as pa
        import pyarrow.parquet as pq

        frame = (
            pd.concat(self._buffer, ignore_index=True)
            if len(self._buffer) > 1
            else (self._buffer[0])
        )
        self._buffer, self._buffered = [], 0
        table = pa.Table.from_pandas(frame, preserve_index=False)
        if self._pq is None:
            meta = dict(table.schema.metadata or {})
            meta[b"kinetics"] = json.dumps(self.metadata, allow_nan=False).encode()
            self._pq = pq.ParquetWriter(self._tmp, table.schema.with_metadata(meta))
        self._pq.write_table(table.cast(self._pq.schema))

    def write(self, frame: pd.DataFrame) -> None:
        """Append the rows of ``frame`` (the first frame also gives the header).

        Raises
        ------
        kinetics.errors.OutputFileError
            The disk refuses the rows (full disk); nothing is left behind by :meth:`abort`.
        """
        try:
            self._write(frame)
        except OSError as exc:
            raise output_error(exc, self.path) from exc

    def _write(self, frame: pd.DataFrame) -> None:
        if self.kind == ".csv":
            header = self._fh is None
            if header:
                self._fh = open(self._tmp, "w", encoding="utf-8", newline="")
            frame = spreadsheet_frame(frame)
            frame.to_csv(self._fh, index=False, header=header, lineterminator="\n")
        elif self.kind == ".parquet":
            self._buffer.append(frame)
            self._buffered += len(frame)
            if self._buffered >= _ROW_GROUP:
                self._flush_parquet()
        else:
            if self._fh is None:
                self._fh = open(self._tmp, "w", encoding="utf-8")
                head = dict(self.metadata)
                head["columns"] = list(frame.columns)
                text = json.dumps(head, indent=1, allow_nan=False, ensure_ascii=False)
                self._fh.write(text[:-1].rstrip() + ',\n "rows": [\n')
            columns = list(frame.columns)
            for row in frame.itertuples(index=False, name=None):
                record = {c: _json_value(v) for c, v in zip(columns, row, strict=True)}
                sep = ",\n" if self._rows else ""
                self._fh.write(sep + "  " + json.dumps(record, allow_nan=False, ensure_ascii=False))
                self._rows += 1

    def close(self) -> None:
        """Finish the file and move it into place.

        Raises
        ------
        kinetics.errors.OutputFileError
            The file cannot be finished (full disk); its temporary file is removed.
        """
        self._done = True
        try:
            if self.kind == ".json":
                if self._fh is None:
                    self._fh = open(self._tmp, "w", encoding="utf-8")
                    head = dict(self.metadata)
                    text = json.dumps(head, indent=1, allow_nan=False, ensure_ascii=False)
                    self._fh.write(text[:-1].rstrip() + ',\n "rows": [\n')
                self._fh.write("\n ]\n}\n")
            if self.kind == ".parquet":
                self._flush_parquet()
            if self._fh is not None:
                self._fh.close()
            if self._pq is not None:
                self._pq.close()
        except BaseException as exc:
            self._close_handles()
            # removes the temporary file; an OSError comes back as OutputFileError
            self._ctx.__exit__(type(exc), exc, exc.__traceback__)
            raise
        self._ctx.__exit__(None, None, None)

    def _close_handles(self) -> None:
        """Close the open file handles, whatever state they are in (a full disk)."""
        for handle in (self._fh, self._pq):
            if handle is not None:
                with contextlib.suppress(Exception):
                    handle.close()

    def abort(self) -> None:
        """Drop the temporary file; the target is not touched."""
        if self._done:
            return
        self._done = True
        self._close_handles()
        err = RuntimeError("aborted")
        with contextlib.suppress(RuntimeError):
            self._ctx.__exit__(RuntimeError, err, None)


# ---------------------------------------------------------------------------------------
# Ownership of the output files
# ---------------------------------------------------------------------------------------


class OutputLock:
    """An advisory lock (``flock``) that says "this process is writing ``path``".

    The lock is held on the hidden file ``.<name>.lock`` beside ``path`` for the life of
    a run.  The operating system releases it when the process ends, however it ends, so
    a lock file left by a killed run is simply taken over.  On a file system without
    locks (some network shares) no lock is held; the chunk files, which carry their
    sweep's hash, still refuse to mix two sweeps.

    Parameters
    ----------
    path : path-like
        The output file to own.

    Raises
    ------
    kinetics.errors.SweepStoreError
        Another process holds the lock.
    """

    def __init__(self, path) -> None:
        self.path = Path(path)
        self.lock_path = self.path.parent / f".{self.path.name}.lock"
        self._fd: int | None = None
        self._acquire()

    def _acquire(self) -> None:
        try:
            import fcntl
        except ImportError:  # pragma: no cover - not a POSIX system
            return
        for _attempt in range(20):
            try:
                fd = os.open(self.lock_path, os.O_RDWR | os.O_CREAT, 0o666)
            except OSError as exc:
                raise output_error(exc, self.lock_path, "no sweep was started") from exc
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                holder = _read_small(fd)
                os.close(fd)
                who = f" (process {holder})" if holder.isdigit() else ""
                raise SweepStoreError(
                    f"another sweep{who} is writing {str(self.path)!r}",
                    "wait until it has finished, or give this sweep other output names",
                ) from None
            except OSError:  # no locks on this file system
                os.close(fd)
                return
            # a run that just finished removes its lock file: lock the file that is there now
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(self.lock_path))
            except OSError:
                same = False
            if same:
                os.ftruncate(fd, 0)
                os.write(fd, str(os.getpid()).encode())
                self._fd = fd
                return
            os.close(fd)
        raise SweepStoreError(  # pragma: no cover - twenty races lost in a row
            f"cannot take the lock {str(self.lock_path)!r}", "run again"
        )

    def release(self) -> None:
        """Remove the lock file and release the lock (idempotent)."""
        if self._fd is None:
            return
        with contextlib.suppress(OSError):
            os.unlink(self.lock_path)
        os.close(self._fd)
        self._fd = None


def _read_small(fd: int) -> str:
    with contextlib.suppress(OSError):
        return os.pread(fd, 32, 0).decode("ascii", "replace").strip()
    return ""


# ---------------------------------------------------------------------------------------
# A whole run
# ---------------------------------------------------------------------------------------


@dataclass
class SweepRun:
    """What :func:`run_sweep` did.

    Attributes
    ----------
    computed : int
        Chunks evaluated in this run.
    reused : int
        Chunks found complete from an earlier run (``--resume``).
    rows : int
        Rows of the summary table (sets; grid points for Monte Carlo bands).
    written : list of Path
    plot_data : pandas.DataFrame or None
        The columns needed for the plot (see ``plot_columns``).
    """

    computed: int = 0
    reused: int = 0
    rows: int = 0
    written: list[Path] = field(default_factory=list)
    plot_data: Any = None


def _metadata(plan: SweepPlan, what: str) -> dict[str, Any]:
    return {
        "table": what,
        "scheme": plan.scheme.source,
        "title": plan.scheme.title,
        "time_unit": plan.time_unit,
        "concentration_unit": plan.concentration_unit,
        "sets": plan.n_sets,
        "samples": plan.samples,
        "seed": plan.seed if plan.samples else None,
        "vary": [f"{p.name} [{p.unit}] {p.spacing}" for p in plan.parameters],
        "spread": [s.text for s in plan.spreads],
    }


def run_sweep(
    plan: SweepPlan,
    outputs: Sequence[Path],
    *,
    curves_path: Path | None = None,
    samples_path: Path | None = None,
    resume: bool = False,
    keep_chunks: bool = False,
    engine: str = "local",
    scheduler: str | None = None,
    workers: int | None = None,
    threads: int | None = None,
    plot_columns: Sequence[str] = (),
    on_progress: Callable[[int, int], None] | None = None,
    on_writing: Callable[[int, int], None] | None = None,
) -> SweepRun:
    """Evaluate a sweep chunk by chunk into a chunk folder, then write the final tables.

    Parameters
    ----------
    plan : SweepPlan
    outputs : sequence of Path
        Summary tables (csv, parquet, json).  For a Monte Carlo plan these hold the
        percentile bands, one row per grid point.
    curves_path : Path, optional
        Every curve in long format (grid sweeps) or the percentile bands of the curves
        (Monte Carlo).
    samples_path : Path, optional
        Monte Carlo only: one row per sample.
    resume : bool
        Reuse the finished chunks of an interrupted run of the same definition.
    keep_chunks : bool
        Keep the chunk folder after the tables are written.
    engine, scheduler, workers, threads
        See :func:`kinetics.sweep.run_chunks`.
    plot_columns : sequence of str
        Columns of the summary (or bands) table to collect in memory for a plot.
    on_progress : callable, optional
        Called with (chunks done, chunks in total) after every chunk.
    on_writing : callable, optional
        Called with (chunks written, chunks in total) while the final tables are written.

    Returns
    -------
    SweepRun

    Raises
    ------
    kinetics.errors.SweepStoreError
        Among others: another sweep is writing one of the same outputs.
    kinetics.errors.OutputFileError
        A chunk or a table cannot be written (full disk); the finished chunks are kept
        for ``resume``, and a note on the error says which tables were written.

    Notes
    -----
    Every output is locked (:class:`OutputLock`) from the start of the run until its
    tables are in place.
    """
    paths = [Path(p) for p in outputs]
    anchor = paths[0] if paths else (samples_path or curves_path)
    if anchor is None:
        raise SettingError("a sweep on disk needs an output file", "give --out sweep.csv")
    owned = [*paths, *(p for p in (samples_path, curves_path) if p is not None)]
    locks: list[OutputLock] = []
    try:
        for path in owned:
            locks.append(OutputLock(path))
        store = ChunkStore(Path(str(anchor) + ".chunks"), plan, curves_path is not None, resume)
        report = SweepRun(reused=plan.n_chunks - len(store.missing()))
        try:
            _compute(plan, store, report, engine, scheduler, workers, threads, on_progress)
            tables = _Tables(plan, paths, samples_path, curves_path)
            tables.write_all(store, report, plot_columns, on_writing)
        except BaseException as exc:
            # an interrupt, a full disk or a bug: the chunks are good for --resume (a
            # mistake such as a foreign chunk file is not mended by resuming)
            resumable = isinstance(exc, OSError) or not isinstance(exc, KineticsError)
            with contextlib.suppress(OSError):
                if resumable and store.done():
                    exc.add_note(
                        f"the finished chunks are kept in {str(store.folder)!r}: "
                        "the same command with --resume continues"
                    )
            raise
        report.written = owned
        if not keep_chunks:
            store.remove()
    finally:
        for lock in locks:
            lock.release()
    return report


def _compute(plan, store, report, engine, scheduler, workers, threads, on_progress) -> None:
    """Evaluate the chunks missing from ``store`` and store each as it finishes."""
    total = plan.n_chunks
    done = [report.reused]
    if on_progress:
        on_progress(done[0], total)

    def finished(result: ChunkResult) -> None:
        store.write(result)
        done[0] += 1
        report.computed += 1
        if on_progress:
            on_progress(done[0], total)

    run_chunks(
        plan,
        store.missing(),
        finished,
        curves=store.curves,
        engine=engine,
        scheduler=scheduler,
        workers=workers,
        threads=threads,
    )
    if store.missing():  # pragma: no cover - an engine that lost a chunk
        raise SweepStoreError("some chunks were not computed", "run again with --resume")


class _Tables:
    """The final tables of a run, written chunk by chunk from the store."""

    def __init__(self, plan: SweepPlan, paths, samples_path, curves_path) -> None:
        self.plan = plan
        mc = plan.samples > 0
        self._wanted = [(p, _SUMMARY[mc]) for p in paths]
        if samples_path is not None:
            self._wanted.append((samples_path, "samples"))
        if curves_path is not None:
            self._wanted.append((curves_path, _CURVES[mc]))
        self.summaries: list[TableWriter] = []
        self.samples: TableWriter | None = None
        self.curves: TableWriter | None = None
        self.all: list[TableWriter] = []

    def _open(self) -> None:
        for path, what in self._wanted:
            writer = TableWriter(path, _metadata(self.plan, what))
            self.all.append(writer)
            if what == "samples":
                self.samples = writer
            elif what in _CURVES.values():
                self.curves = writer
            else:
                self.summaries.append(writer)

    def write_all(self, store: ChunkStore, report: SweepRun, plot_columns, on_writing) -> None:
        """Write every table and move each into place; on failure remove what is unfinished."""
        import pandas as pd

        collected: list[pd.DataFrame] = []
        closed: list[Path] = []
        try:
            self._open()
            if self.plan.samples:
                self._bands(store, report, plot_columns, collected, on_writing)
            else:
                self._grid(store, report, plot_columns, collected, on_writing)
            for w in self.all:
                w.close()
                closed.append(w.path)
        except BaseException as exc:
            for w in self.all:
                w.abort()
            if closed:
                exc.add_note("written before the failure: " + ", ".join(map(str, closed)))
                rest = [str(p) for p, _ in self._wanted if p not in closed]
                exc.add_note("not written: " + ", ".join(rest))
            raise
        if plot_columns and collected:
            report.plot_data = pd.concat(collected, ignore_index=True)

    def _grid(self, store, report, plot_columns, collected, on_writing) -> None:
        plan = self.plan
        for k in range(plan.n_chunks):
            result = store.read(k)
            frame = _summary_frame(plan, result)
            for w in self.summaries:
                w.write(frame)
            report.rows += len(frame)
            if plot_columns:
                collected.append(frame[list(plot_columns)])
            if self.curves is not None:
                self.curves.write(curves_frame(plan, result))
            if on_writing:
                on_writing(k + 1, plan.n_chunks)

    def _bands(self, store, report, plot_columns, collected, on_writing) -> None:
        import pandas as pd

        plan = self.plan
        pending: list[pd.DataFrame] = []
        pending_curves: list[np.ndarray] = []
        for k in range(plan.n_chunks):
            result = store.read(k)
            frame = _summary_frame(plan, result)
            if self.samples is not None:
                self.samples.write(frame)
            pending.append(frame)
            if self.curves is not None:
                pending_curves.append(result.curves)
            if on_writing:
                on_writing(k + 1, plan.n_chunks)
            rows = sum(len(f) for f in pending)
            whole = rows // plan.samples * plan.samples
            if whole == 0:
                continue
            block = pd.concat(pending)
            head, tail = block.iloc[:whole], block.iloc[whole:]
            bands = percentile_bands(plan, head)
            for w in self.summaries:
                w.write(bands)
            report.rows += len(bands)
            if plot_columns:
                collected.append(bands[[c for c in plot_columns if c in bands.columns]])
            if self.curves is not None:
                cv = np.concatenate(pending_curves, axis=0)
                first = int(head.index[0]) // plan.samples
                for g in range(whole // plan.samples):
                    part = cv[g * plan.samples : (g + 1) * plan.samples]
                    self.curves.write(curve_bands(plan, part, first + g))
                pending_curves = [cv[whole:]]
            pending = [tail] if len(tail) else []


_SUMMARY = {False: "summary", True: "percentile bands"}
_CURVES = {False: "curves", True: "curve bands"}
