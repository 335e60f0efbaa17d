"""The ``kinetics`` command: argument parsing only; the work is done by the library.

``main(argv=None) -> int`` runs one command in-process and returns the exit
status: 0 on success, 2 for a user mistake (bad file, bad option), with one
clear message on stderr and no traceback (``--debug`` shows one).
"""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

import click

from . import __version__
from .errors import KineticsError, UsageError

CAUTION = (
    "Caution: a first-order, isothermal, ideally mixed model; not a hazard or safety assessment.\n"
    "Runaway, heat release, gas evolution and scale-up need a process-safety review: see SAFETY.md."
)

_DURATION = re.compile(
    r"^\s*(?P<number>[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*(?P<unit>.*)$"
)


def parse_duration(text: str, option: str = "--until") -> tuple[float, str]:
    """``"90 min"`` -> (5400.0, "min"): a duration in seconds and the unit as written."""
    from .solution import time_factor

    match = _DURATION.match(text)
    if not match or not match["unit"].strip():
        raise UsageError(
            f"{option} {text!r} is not a duration with a unit", f"write e.g. {option} '90 min'"
        )
    unit = match["unit"].strip()
    try:
        factor = time_factor(unit)
    except UsageError:
        raise UsageError(
            f"{option} {text!r}: {unit!r} is not a unit of time", "use s, min, h or d"
        ) from None
    value = float(match["number"])
    return value * factor, unit


def parse_time_list(text: str) -> tuple[list[float], str]:
    """``"0,5,10,30 min"`` -> ([0, 300, 600, 1800], "min")."""
    from .solution import time_factor

    match = re.match(r"^\s*(?P<numbers>[-+0-9.eE,\s]+?)\s*(?P<unit>[^\d\s,.+-][^,]*)?$", text)
    if not match or not match["unit"]:
        raise UsageError(
            f"--times {text!r} is not a list of times with one unit",
            "write e.g. --times '0,5,10,30 min'",
        )
    unit = match["unit"].strip()
    factor = time_factor(unit)
    try:
        values = [float(x) for x in match["numbers"].split(",") if x.strip()]
    except ValueError:
        raise UsageError(
            f"--times {text!r} contains something that is not a number",
            "write e.g. --times '0,5,10,30 min'",
        ) from None
    return [v * factor for v in values], unit


class _Group(click.Group):
    """Keeps commands in the order they are defined in ``--help``."""

    def list_commands(self, ctx):
        return list(self.commands)


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


def _caution(quiet: bool) -> None:
    if not quiet:
        click.echo(CAUTION, err=True)


@cli.command()
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@click.option(
    "--allow-imbalance",
    is_flag=True,
    help="Report an atom imbalance without failing (as 'balance: lumped' in the file).",
)
def check(scheme_file, as_json, allow_imbalance):
    """Check a scheme file and report species, steps, balance and structure.

    \b
    Example:
      kinetics check networks/reversible_isomerisation.scheme --json
    """
    from .overview import check_report
    from .parsing import load
    from .terminal import render_check

    scheme = load(scheme_file, strict_balance=not allow_imbalance)
    report = check_report(scheme)
    if as_json:
        click.echo(json.dumps(report, indent=2, allow_nan=False))
    else:
        render_check(scheme, report)


@cli.command()
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.option("--until", "until", help="End of the time window, e.g. '90 min', '2h'.")
@click.option("--points", type=int, default=201, show_default=True, help="Uniform grid points.")
@click.option("--times", "times_text", help="Explicit times with one unit: '0,5,10,30 min'.")
@click.option("--time-unit", help="Unit of the time column (default: the unit of --until).")
@click.option(
    "--out", "outputs", multiple=True, type=click.Path(path_type=Path), help="Output file (.csv)."
)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object.")
@click.option("--no-caution", is_flag=True, help="Do not print the two-line caution (scripts).")
def solve(scheme_file, until, points, times_text, time_unit, outputs, as_json, no_caution):
    """Solve a scheme exactly on a time grid and print or write the table.

    \b
    Examples:
      kinetics solve networks/consecutive_intermediate.scheme --until 3h
      kinetics solve networks/consecutive_intermediate.scheme --times '0,5,10,30 min' --out t.csv
    """
    from . import solution as sol
    from .export import check_output_path, write_csv
    from .overview import solution_json
    from .parsing import load
    from .terminal import render_solution

    if until is None and times_text is None:
        raise UsageError("solve needs --until or --times", "write e.g. --until '90 min'")
    if until is not None and times_text is not None:
        raise UsageError("give either --until or --times, not both", "e.g. --until '90 min'")
    if times_text is not None:
        times, unit = parse_time_list(times_text)
    else:
        end, unit = parse_duration(until)
        times = sol.time_grid(end, points)
    time_unit = time_unit or unit
    sol.time_factor(time_unit)
    paths = [check_output_path(p, [scheme_file]) for p in outputs]
    for p in paths:
        if p.suffix.lower() != ".csv":
            raise UsageError(
                f"unknown output format {p.suffix or '(none)'!r} for {str(p)!r}",
                "use a .csv file name",
            )
    scheme = load(scheme_file)
    result = sol.solve(scheme, times)
    _caution(no_caution or as_json)
    for p in paths:
        write_csv(result.to_frame(time_unit), p)
    if as_json:
        click.echo(json.dumps(solution_json(result, time_unit), indent=2, allow_nan=False))
    elif not paths:
        render_solution(result, time_unit)


def main(argv: list[str] | None = None) -> int:
    """Run the command line with ``argv`` (default: ``sys.argv[1:]``); return the exit status."""
    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    try:
        cli.main(args=args, prog_name="kinetics", standalone_mode=False)
    except click.exceptions.Exit as exc:
        return exc.exit_code
    except click.exceptions.Abort:
        click.echo("kinetics: interrupted", err=True)
        return 130
    except click.ClickException as exc:
        if debug:
            raise
        message = exc.format_message()
        click.echo(f"kinetics: {message}", err=True)
        return 2
    except KineticsError as exc:
        if debug:
            raise
        click.echo(f"kinetics: {exc}", err=True)
        return 2
    except KeyboardInterrupt:
        click.echo("kinetics: interrupted", err=True)
        return 130
    return 0


def run() -> None:  # pragma: no cover - console-script entry point
    """Console-script entry point."""
    sys.exit(main())
