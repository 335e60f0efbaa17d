"""The ``kinetics`` command: argument parsing only; the work is done by the library.

``main(argv=None) -> int`` runs one command in-process and returns the exit
status: 0 on success, 2 for a user mistake (bad file, bad option), with one
clear message on stderr and no traceback (``--debug`` shows one).
"""

from __future__ import annotations

import contextlib
import json
import sys
from pathlib import Path

import click

from . import __version__
from .errors import KineticsError, UsageError
from .overview import CAUTION, CHECK_TABLE_ROWS  # CAUTION: the short form of SAFETY.md
from .units import parse_duration, parse_time_list

#: Commands defined in their own modules, imported only when named or listed by
#: ``--help`` (``solve`` and ``check`` start without them): name -> (module, object).
_LAZY_COMMANDS = {"fit": ("kinetics.fit_cli", "fit"), "sweep": ("kinetics.sweep_cli", "sweep")}


class PipeClosed(Exception):
    """stdout was closed by its reader before the output was complete (``| head``)."""


class _Group(click.Group):
    """Keeps commands in the order they are defined in ``--help``; loads some on demand."""

    def list_commands(self, ctx):
        return list(self.commands) + [n for n in _LAZY_COMMANDS if n not in self.commands]

    def get_command(self, ctx, cmd_name):
        if cmd_name in _LAZY_COMMANDS and cmd_name not in self.commands:
            import importlib

            module, name = _LAZY_COMMANDS[cmd_name]
            self.add_command(getattr(importlib.import_module(module), name), cmd_name)
        return super().get_command(ctx, cmd_name)

    def invoke(self, ctx):
        # click and rich would turn a closed pipe into exit status 1, the status of a bug
        try:
            return super().invoke(ctx)
        except BrokenPipeError as exc:
            raise PipeClosed() from exc
        except SystemExit as exc:
            if isinstance(exc.__context__, BrokenPipeError):  # rich's console
                raise PipeClosed() from exc
            raise


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", prog_name="kinetics")
@click.option("--debug", is_flag=True, help="Show the Python traceback of an error.")
@click.pass_context
def cli(ctx, debug):
    """Check, solve exactly, analyse and export first-order reaction schemes.

    \b
    Examples:
      kinetics check networks/consecutive_intermediate.scheme
      kinetics solve networks/consecutive_intermediate.scheme --until 3h --out table.csv
    """
    ctx.obj = {"debug": debug}


def load_scheme(path, **options):
    """Load a scheme file and print its warnings on stderr (``kinetics: warning: ...``).

    The command-line side of :attr:`kinetics.scheme.Scheme.warnings`: every command
    that reads a scheme calls this.
    """
    from .parsing import load

    scheme = load(path, **options)
    for warning in scheme.warnings:
        click.echo(f"kinetics: warning: {warning}", err=True)
    return scheme


def _caution(quiet: bool) -> None:
    if not quiet:
        click.echo(CAUTION, err=True)


FIRST_USE = (
    "kinetics: compiling the engine for its first use on this installation "
    "(once, about 10 s; later runs load it from disk)"
)


def first_use_note(sweeps: bool = False) -> None:
    """Say on stderr that the compiled kernels are built now, when they are not on disk."""
    from kinetics import _kernels

    kernels = [_kernels.exponentials]
    if sweeps:
        from kinetics import _sweep_kernels

        kernels.append(_sweep_kernels.summarise_members)
    if not all(_kernels.on_disk(k) for k in kernels):
        click.echo(FIRST_USE, err=True)


@cli.command()
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@click.option(
    "--allow-imbalance",
    is_flag=True,
    help="Report an atom imbalance without failing (as 'balance: lumped' in the file).",
)
@click.option(
    "--full-tables",
    is_flag=True,
    help="Print the species and steps tables however long (by default a scheme with more "
    f"than {CHECK_TABLE_ROWS} species or steps gets an overview).",
)
def check(scheme_file, as_json, allow_imbalance, full_tables):
    """Check a scheme file and report species, steps, balance and structure.

    \b
    Example:
      kinetics check networks/reversible_isomerisation.scheme --json
    """
    from .overview import check_report
    from .terminal import progress, render_check

    # a scheme of 100,000s of reactions takes a while: say which phase runs (stderr, terminal)
    with progress(2, f"reading {scheme_file.name}") as bar:
        scheme = load_scheme(scheme_file, strict_balance=not allow_imbalance)
        bar.step("checking the structure")
        report = check_report(scheme)
        bar.step()
    if as_json:
        click.echo(json.dumps(report, indent=2, allow_nan=False))
    else:
        render_check(scheme, report, full_tables=full_tables)


def _grid(until, points, times_text):
    """The time grid [s], the unit the user wrote and the settings as written."""
    from . import solution as sol

    if until is None and times_text is None:
        raise UsageError("this command needs --until or --times", "write e.g. --until '90 min'")
    if until is not None and times_text is not None:
        raise UsageError("give either --until or --times, not both", "e.g. --until '90 min'")
    if times_text is not None:
        if points is not None:
            raise UsageError(
                "--points sets a uniform grid and cannot be combined with --times",
                "leave out --points",
            )
        times, unit = parse_time_list(times_text)
        times = sol.check_times(times)
        if times[-1] <= 0:
            raise UsageError(
                f"--times {times_text!r} has no time after 0", "give at least one later time"
            )
        settings = {"times": times_text}
    else:
        end, unit = parse_duration(until)
        n = 201 if points is None else points
        times = sol.time_grid(end, n)
        settings = {"until": until, "points": n}
    return times, unit, settings


def _species_list(text: str | None, scheme, option: str = "--species") -> list[str] | None:
    """Names from ``--species A,B`` checked against the scheme's matrix species."""
    if text is None:
        return None
    import difflib

    names = [n.strip() for n in text.split(",") if n.strip()]
    if not names:
        raise UsageError(f"{option} lists no species", f"write e.g. {option} A,B")
    known = scheme.species_names
    for name in names:
        if name not in known:
            same_case = [k for k in known if k.lower() == name.lower()]
            close = same_case or difflib.get_close_matches(name, known, n=1)
            hint = f"did you mean {close[0]!r}? " if close else ""
            raise UsageError(
                f"{option} names {name!r}, which is not a species of the scheme",
                hint + "the species are " + ", ".join(known),
            )
    return list(dict.fromkeys(names))


def _plot_solution(result, scheme):
    """The solution on a grid fine enough to draw smooth curves (at least 201 points)."""
    import numpy as np

    from . import solution as sol

    if len(result.times) >= 201:
        return result
    fine = sol.solve(scheme, np.linspace(0.0, float(result.times[-1]), 401))
    return fine if result.unit_factors is None else fine.in_unit(result.concentration_unit)


_GRID_OPTIONS = [
    click.option("--until", "until", help="End of the time window with a unit: '90 min', '2h'."),
    click.option(
        "--points",
        type=click.IntRange(min=2),
        default=None,
        help="Points of the uniform grid from 0 to --until (default 201).",
    ),
    click.option(
        "--times", "times_text", help="Explicit times with one unit instead: '0,5,10,30 min'."
    ),
    click.option(
        "--time-unit", help="Unit of time in tables and plots (default: the unit of --until)."
    ),
    click.option(
        "--species",
        "species_text",
        help="Show and plot only these species: 'A,B' (files with tables keep them all).",
    ),
    click.option(
        "--no-caution",
        is_flag=True,
        help="Do not print the two-line caution on stderr (for scripts; see SAFETY.md).",
    ),
    click.option(
        "--concentration-unit",
        "conc_unit",
        help="Unit of concentrations in tables, plots and the summary: an amount unit "
        "(mmol/L), a mass unit converted per species with its molar mass (mg/L; mg/kg for "
        "a file per mass of soil) or '% of applied' (default: the unit of the first start "
        "value as written).",
    ),
]


def _grid_options(func):
    for option in reversed(_GRID_OPTIONS):
        func = option(func)
    return func


def _prepare(until, points, times_text, time_unit):
    """What can be checked before reading the scheme: the grid and the time unit."""
    from . import solution as sol

    times, unit, settings = _grid(until, points, times_text)
    time_unit = time_unit or unit
    sol.time_factor(time_unit)
    settings["time_unit"] = time_unit
    return times, time_unit, settings


def _solve_and_summarise(scheme, times, time_unit, bar, conc_unit=None):
    from . import solution as sol
    from .overview import compute_summary, summary_in_units

    bar.describe("solving")
    result = sol.solve(scheme, times)
    unit = conc_unit or scheme.written_unit
    if unit and unit != scheme.concentration_unit:
        result = result.in_unit(unit)
    bar.step("summary quantities")
    raw = compute_summary(result)
    summary = summary_in_units(raw, time_unit) if raw is not None else None
    bar.step()
    return result, summary


_OUT_HELP = "Output file, format from the extension: " + ", ".join(
    ("csv", "xlsx", "json", "parquet", "png", "svg")
)


@cli.command()
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@_grid_options
@click.option(
    "--out",
    "outputs",
    multiple=True,
    type=click.Path(path_type=Path),
    help=_OUT_HELP + " (several allowed).",
)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object on stdout.")
def solve(
    scheme_file,
    until,
    points,
    times_text,
    time_unit,
    species_text,
    no_caution,
    conc_unit,
    outputs,
    as_json,
):
    """Solve a scheme exactly on a time grid; print or write the table and the summary.

    The summary (half-lives, intermediate maxima, long-time limits...) is computed
    on the exact solution, not read off the grid.  Without --out the summary and
    the concentration table are printed; each --out writes one file, its format
    chosen by the extension.

    \b
    Examples:
      kinetics solve networks/consecutive_intermediate.scheme --until 2h
      kinetics solve networks/consecutive_intermediate.scheme --until '90 min' --points 91 \\
          --out table.csv --out table.xlsx --out curves.png
      kinetics solve networks/decay_pair_branching.scheme --times '0,6,12,24,48 h' --json
    """
    from .export import check_output_paths
    from .overview import solution_json
    from .terminal import progress, render_solution

    times, time_unit, settings = _prepare(until, points, times_text, time_unit)
    paths = check_output_paths(outputs, [scheme_file])
    scheme = load_scheme(scheme_file)
    species = _species_list(species_text, scheme)
    if species:
        settings["species"] = species
    _check_sheet_sizes(paths, len(times), scheme)
    _caution(no_caution)
    first_use_note()
    with progress(2, "solving") as bar:
        result, summary = _solve_and_summarise(scheme, times, time_unit, bar, conc_unit)
    needs_document = as_json or any(p.suffix.lower() in (".json", ".parquet") for p in paths)
    document = solution_json(result, time_unit, summary, settings) if needs_document else None
    # the result reaches stdout before any file is written: a full disk loses nothing
    if as_json:
        echo_long(json.dumps(document, indent=2, allow_nan=False, ensure_ascii=False))
    elif not paths:
        render_solution(result, time_unit, summary=summary, species=species)
    write_outputs(
        paths,
        lambda path: _write_output(path, result, scheme, time_unit, summary, document, species),
    )


def echo_long(text: str, piece: int = 1 << 16) -> None:
    """Print a long text on stdout in pieces (with a newline).

    One write of many megabytes into a pipe whose reader stops early (``| head``)
    ends without an error and the rest is dropped silently; written in pieces, the
    next piece meets the closed pipe and the run ends as :func:`main` says.
    """
    for start in range(0, len(text), piece):
        click.echo(text[start : start + piece], nl=False)
    click.echo()


def _check_sheet_sizes(paths, n_times: int, scheme) -> None:
    """Refuse, before solving, a concentration table larger than a spreadsheet holds."""
    from .export import check_xlsx_size

    for path in paths:
        if path.suffix.lower() == ".xlsx":
            check_xlsx_size(n_times + 1, len(scheme.species_names) + 1, path)


def write_outputs(paths, write_one) -> None:
    """Write each output file with ``write_one(path)`` and say ``wrote PATH`` as each is done.

    When one fails (full disk, interrupt), the error names it and carries a note naming
    the later files, which were not written either; those already written are complete
    and stay.
    """
    from .terminal import progress

    paths = list(paths)
    with progress(len(paths), "writing") as bar:
        for i, path in enumerate(paths):
            bar.describe(f"writing {path.name}")
            try:
                write_one(path)
            except BaseException as exc:
                if paths[i + 1 :]:
                    exc.add_note("also not written: " + ", ".join(map(str, paths[i + 1 :])))
                raise
            click.echo(f"wrote {path}", err=True)
            bar.step()


def _write_output(path, result, scheme, time_unit, summary, document, species) -> None:
    """Write one --out file; the format follows the extension (already checked)."""
    from . import export
    from .overview import certificate_rows, inputs_tables, scheme_rows, summary_rows

    suffix = path.suffix.lower()
    frame = result.to_frame(time_unit)
    if suffix == ".csv":
        export.write_csv(frame, path)
    elif suffix == ".json":
        export.write_json(document, path)
    elif suffix == ".parquet":
        meta = {
            "source": scheme.source,
            "title": scheme.title,
            "time_unit": time_unit,
            "concentration_unit": result.concentration_unit,
            "software": document["software"],
        }
        export.write_parquet(frame, path, meta)
    elif suffix == ".xlsx":
        rows = summary_rows(summary, time_unit, result.concentration_unit) if summary else []
        export.write_xlsx(
            frame,
            path,
            summary_rows=rows,
            inputs={**inputs_tables(scheme), "error bound": certificate_rows(result, time_unit)},
            scheme_text=scheme.text,
            scheme_rows=scheme_rows(summary, time_unit, result.concentration_unit),
        )
    elif suffix in (".png", ".svg"):
        from .plotting import save_plot

        save_plot(path, _plot_solution(result, scheme), time_unit, summary, species=species)
    else:  # pragma: no cover - check_output_paths refuses other extensions
        raise UsageError(f"unknown output format {suffix!r}")


@cli.command()
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@_grid_options
@click.option(
    "--out",
    "output",
    required=True,
    type=click.Path(path_type=Path),
    help="The report file (.html); one self-contained page, viewable offline.",
)
@click.option("--title", help="Title of the report (default: the title in the scheme file).")
def report(
    scheme_file,
    until,
    points,
    times_text,
    time_unit,
    species_text,
    no_caution,
    conc_unit,
    output,
    title,
):
    """Write a self-contained HTML report: scheme, graph, inputs, summary, plot, table.

    The page needs no network access: styles are inline and plots are embedded
    images.  It records the software version, the date and the SHA-256 of the
    scheme file, and carries the caution box of SAFETY.md.

    \b
    Example:
      kinetics report networks/consecutive_intermediate.scheme --until 2h --out report.html
    """
    import hashlib

    from .export import check_output_paths
    from .report import build_report, write_report
    from .terminal import progress

    times, time_unit, settings = _prepare(until, points, times_text, time_unit)
    (path,) = check_output_paths([output], [scheme_file], {".html": "HTML report"})
    scheme = load_scheme(scheme_file)
    species = _species_list(species_text, scheme)
    digest = hashlib.sha256(Path(scheme_file).read_bytes()).hexdigest()
    _caution(no_caution)
    first_use_note()
    with progress(4, "solving") as bar:
        result, summary = _solve_and_summarise(scheme, times, time_unit, bar, conc_unit)
        bar.describe("drawing")
        html = build_report(
            scheme,
            result,
            summary,
            time_unit,
            sha256=digest,
            settings=settings,
            species=species,
            title=title,
            plot_solution=_plot_solution(result, scheme),
        )
        bar.step(f"writing {path.name}")
        write_report(path, html)
        bar.step()
    click.echo(f"wrote {path}", err=True)


def _split_debug(args: list[str]) -> tuple[list[str], bool]:
    """Accept ``--debug`` anywhere before ``--`` (it is a global flag)."""
    if "--" in args:
        cut = args.index("--")
        head, tail = args[:cut], args[cut:]
    else:
        head, tail = args, []
    debug = "--debug" in head
    head = [a for a in head if a != "--debug"]
    return (["--debug", *head, *tail] if debug else head + tail), debug


@cli.command()
def safety():
    """Print SAFETY.md: the limits of the model and what a process-safety review must address.

    \b
    Example:
      kinetics safety | less
    """
    from importlib.resources import files

    click.echo(files("kinetics").joinpath("SAFETY.md").read_text(encoding="utf-8"), nl=False)


class Stopped(BaseException):
    """Raised in the main thread when the process gets SIGTERM or SIGHUP.

    A ``BaseException`` (like ``KeyboardInterrupt``), so that every cleanup that
    runs for an interrupt (temporary files, partial tables) runs for it too.
    """

    def __init__(self, name: str) -> None:
        super().__init__(name)
        self.name = name
        self.status, self.word = STOP_SIGNALS[name]


#: Signals turned into :class:`Stopped`, with the exit status (128 + the signal number,
#: as a shell reports a process killed by it) and the word said on stderr.
STOP_SIGNALS = {"SIGTERM": (143, "terminated"), "SIGHUP": (129, "hung up")}
#: Exit status when stdout is closed before the output is complete (``| head``):
#: 128 + SIGPIPE, what a shell reports for a program stopped by a closed pipe.
BROKEN_PIPE = 141


@contextlib.contextmanager
def _signals_stop_the_run():
    """While running, SIGTERM and SIGHUP raise :class:`Stopped` (signals the parent made
    the process ignore, as ``nohup`` does for SIGHUP, stay ignored)."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {}

    def stop(signum, frame):
        for number in previous:  # one stop is enough: later ones must not cut the cleanup
            signal.signal(number, signal.SIG_IGN)
        raise Stopped(signal.Signals(signum).name)

    for name in STOP_SIGNALS:
        number = getattr(signal, name, None)
        if number is not None and signal.getsignal(number) is not signal.SIG_IGN:
            previous[number] = signal.signal(number, stop)
    try:
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)


def _silence_stdout() -> None:
    """Point stdout at the null device, so that flushing it at exit cannot fail again."""
    import os

    try:
        fd = sys.stdout.fileno()
    except (AttributeError, OSError, ValueError):
        return
    null = os.open(os.devnull, os.O_WRONLY)
    os.dup2(null, fd)
    os.close(null)


def _say(exc: BaseException, message: str) -> None:
    """The error's one line on stderr, then its notes (files written or not)."""
    click.echo(f"kinetics: {message}", err=True)
    for note in getattr(exc, "__notes__", ()):
        click.echo(f"kinetics: {note}", err=True)


def main(argv: list[str] | None = None) -> int:
    """Run the command line with ``argv`` (default: ``sys.argv[1:]``); return the exit status.

    Exit status: 0 success, 2 a user mistake or a file that cannot be read or written
    (one sentence on stderr), 1 an internal error (a bug: one sentence, the traceback
    only with ``--debug``), 130 interrupted (Ctrl-C), 143 terminated (SIGTERM), 129 hung
    up (SIGHUP), 141 stdout closed early (``| head``, nothing said).  An interrupted or
    stopped run leaves no partial output file.
    """
    args, debug = _split_debug(list(sys.argv[1:] if argv is None else argv))
    try:
        with _signals_stop_the_run():
            result = cli.main(args=args, prog_name="kinetics", standalone_mode=False)
    except click.exceptions.Exit as exc:
        return exc.exit_code
    except Stopped as exc:
        _say(exc, exc.word)
        return exc.status
    except (click.exceptions.Abort, KeyboardInterrupt) as exc:
        _say(exc.__cause__ or exc, "interrupted")
        return 130
    except click.exceptions.NoArgsIsHelpError as exc:
        click.echo(exc.format_message(), err=True)
        return 2
    except PipeClosed:
        _silence_stdout()
        return BROKEN_PIPE
    except click.ClickException as exc:
        if debug:
            raise
        click.echo(f"kinetics: {exc.format_message()}", err=True)
        if isinstance(exc, click.UsageError) and exc.ctx is not None:
            click.echo(f"  (see: {exc.ctx.command_path} --help)", err=True)
        return 2
    except KineticsError as exc:
        if debug:
            raise
        _say(exc, str(exc))
        return 2
    except OSError as exc:
        if isinstance(exc, BrokenPipeError):
            _silence_stdout()
            return BROKEN_PIPE
        if debug:
            raise
        reason = exc.strerror or str(exc)
        if exc.filename:
            _say(exc, f"cannot access {exc.filename!r}: {reason}")
        else:
            _say(exc, f"a file operation failed ({reason}); --debug shows which one")
        return 2
    except Exception as exc:
        if debug:
            raise
        _say(
            exc,
            f"internal error ({type(exc).__name__}: {exc}); "
            "this is a bug, please report it with the output of --debug",
        )
        return 1
    return result if isinstance(result, int) else 0


def run() -> None:  # pragma: no cover - console-script entry point
    """Console-script entry point."""
    sys.exit(main())
