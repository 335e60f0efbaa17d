"""What the commands share: reading a scheme, the time grid, notes and output files.

That is reading a scheme with its warnings, the time grid and its options, species lists,
the caution, the first-use note and writing output files.
"""

from __future__ import annotations

import click

from kinetics.errors import UsageError
from kinetics.output.overview import CAUTION  # the short form of SAFETY.md
from kinetics.units import parse_duration, parse_time_list

__all__ = [
    "FIRST_USE",
    "FIRST_USE_SWEEP",
    "caution",
    "echo_long",
    "first_use_note",
    "grid_options",
    "load_scheme",
    "prepare",
    "species_list",
    "time_grid",
    "write_outputs",
]


def load_scheme(path, **options):
    """Load a scheme file and print its warnings on stderr (``kinetics: warning: ...``).

    The command-line side of :attr:`kinetics.scheme.Scheme.warnings`: every command
    that reads a scheme calls this.
    """
    from kinetics.parsing import load

    scheme = load(path, **options)
    for warning in scheme.warnings:
        click.echo(f"kinetics: warning: {warning}", err=True)
    return scheme


def caution(quiet: bool) -> None:
    """Print the two-line caution on stderr unless ``quiet`` (``--no-caution``)."""
    if not quiet:
        click.echo(CAUTION, err=True)


FIRST_USE = (
    "kinetics: compiling the engine for its first use on this installation "
    "(once, about 4 s; later runs load it from disk)"
)
#: the same note when the sweep kernels are compiled too (measured with
#: benchmarks/bench_first_use.py: about 3.8 s CPU for solve, 4.7 s for a sweep of the
#: summaries; a sweep that also needs the curves compiles the engine's kernels too, 8 s)
FIRST_USE_SWEEP = FIRST_USE.replace("about 4 s", "about 8 s")
#: the same note for a run with operations: the timeline's chain and the exponential's
#: action compile about 1 s more (benchmarks/bench_first_use.py --commands timeline: 5 s)
FIRST_USE_OPERATIONS = FIRST_USE.replace("about 4 s", "about 5 s")


def first_use_note(sweeps: bool = False, operations: bool = False) -> None:
    """Say on stderr that the compiled kernels are built now, when they are not on disk."""
    from kinetics.engine import kernels

    entries = [kernels.exponentials]
    if sweeps:
        from kinetics import _sweep_kernels

        entries.append(_sweep_kernels.member_kernel)
    if operations:
        from kinetics.engine import action_kernels, chain_kernels

        entries += [chain_kernels.chain, action_kernels.taylor_actions]
    if not all(kernels.on_disk(k) for k in entries):
        note = FIRST_USE_SWEEP if sweeps else FIRST_USE_OPERATIONS if operations else FIRST_USE
        click.echo(note, err=True)


def time_grid(until, points, times_text):
    """The time grid [s], the unit the user wrote and the settings as written."""
    from kinetics import solution as sol

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
        written, unit = parse_time_list(times_text)
        times = sol.check_times(written)
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


def prepare(until, points, times_text, time_unit):
    """What can be checked before reading the scheme: the grid and the time unit.

    Returns
    -------
    (times [s], time unit of the tables, settings as written)
    """
    from kinetics.units import time_factor

    times, unit, settings = time_grid(until, points, times_text)
    time_unit = time_unit or unit
    time_factor(time_unit)
    settings["time_unit"] = time_unit
    return times, time_unit, settings


def species_list(text: str | None, scheme, option: str = "--species") -> list[str] | None:
    """Names from ``--species A,B`` checked against the scheme's matrix species."""
    if text is None:
        return None
    from kinetics.suggest import close_matches

    names = [n.strip() for n in text.split(",") if n.strip()]
    if not names:
        raise UsageError(f"{option} lists no species", f"write e.g. {option} A,B")
    known = scheme.species_names
    for name in names:
        if name not in known:
            close = close_matches(name, known, fold_case=True)
            hint = f"did you mean {close[0]!r}? " if close else ""
            raise UsageError(
                f"{option} names {name!r}, which is not a species of the scheme",
                hint + "the species are " + ", ".join(known),
            )
    return list(dict.fromkeys(names))


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


def grid_options(func):
    """The options of the time grid, species, caution and concentration unit."""
    for option in reversed(_GRID_OPTIONS):
        func = option(func)
    return func


def echo_long(text: str, piece: int = 1 << 16) -> None:
    """Print a long text on stdout in pieces (with a newline).

    One write of many megabytes into a pipe whose reader stops early (``| head``)
    ends without an error and the rest is dropped silently; written in pieces, the
    next piece meets the closed pipe and the run ends as :func:`kinetics.cli.main` says.
    """
    for start in range(0, len(text), piece):
        click.echo(text[start : start + piece], nl=False)
    click.echo()


def write_outputs(paths, write_one) -> None:
    """Write each output file with ``write_one(path)`` and say ``wrote PATH`` as each is done.

    When one fails (full disk, interrupt), the error names it and carries a note naming
    the later files, which were not written either; those already written are complete
    and stay.
    """
    from kinetics.cli.terminal import progress

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
