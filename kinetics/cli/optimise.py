"""The ``kinetics optimise`` command: the best settings under the scheme's requirements.

Argument parsing and terminal output live here; the search is :mod:`kinetics.optimise`,
the words, the JSON object and the figure :mod:`kinetics.output.optimum`.
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from kinetics.cli.common import caution, echo_long, first_use_note, load_scheme
from kinetics.cli.paths import check_output_path, check_output_paths
from kinetics.errors import UsageError

__all__ = ["optimise"]

_PLOT_FORMATS = (".png", ".svg")
_HELP = """Find the settings that make a species highest (or lowest) while every require
line of the scheme holds.

Reports the best settings, the target there, which requirements are active (at
their limit) and how flat the optimum is.
"""
_EPILOG = """\b
Settings (--over NAME=LO:HI:UNIT, several allowed):
  time (the end time, with --at-end), temperature, a named quantity of the
  file (t_p=40:60:h), a rate constant written as a value (k2=0.01:1:1/min),
  a part of an Arrhenius constant (k1.A=1e9:1e11:1/s, k1.Ea=70:90:kJ/mol),
  start:A or excess:W.  Without a unit, the file's unit for that quantity.
\b
Every require line of the file must hold at the time the target is read
(the composition when the batch is stopped).  The search: a coarse grid,
then SLSQP with exact gradients (Frechet derivatives of the exponential)
from the best grid points.  The flat range of a setting is where the
target stays within 1 % of the best with the other settings held.
\b
Examples:
  kinetics optimise networks/quench_window.scheme --maximise P \\
      --over temperature=40:90:degC --over time=0:8:h
  kinetics optimise networks/quench_window.scheme --maximise P --best-time \\
      --until 8h --over temperature=40:90:degC --json
"""


def _target(maximise, minimise) -> tuple[str, str]:
    if (maximise is None) == (minimise is None):
        raise UsageError(
            "give one target: --maximise SPECIES or --minimise SPECIES",
            "e.g. --maximise P",
        )
    return (maximise, "maximise") if maximise is not None else (minimise, "minimise")


def _until(text) -> tuple[float | None, str]:
    from kinetics.units import parse_duration

    if text is None:
        return None, "s"
    return parse_duration(text)


def _outputs(scheme_file, outputs, plot_out) -> tuple[list[Path], Path | None]:
    paths = check_output_paths(outputs, [scheme_file], formats={".json": "JSON"})
    if plot_out is not None:
        if plot_out.suffix.lower() not in _PLOT_FORMATS:
            raise UsageError(
                f"--plot-out {str(plot_out)!r} must end in .png or .svg",
                "e.g. --plot-out optimum.png",
            )
        check_output_path(plot_out, [scheme_file])
        if any(p.resolve() == plot_out.resolve() for p in paths):
            raise UsageError("two outputs have the same file name", "give each its own name")
    return paths, plot_out


def _print(optimum) -> None:
    from kinetics.cli.terminal import console
    from kinetics.output.optimum import optimum_lines

    out = console()
    out.print("[bold]Optimum[/bold] (on the exact solution, exact gradients)", highlight=False)
    for label, text in optimum_lines(optimum):
        out.print(f"  {label}: {text}", markup=False, highlight=False)


@click.command("optimise", help=_HELP, epilog=_EPILOG)
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.option("--maximise", metavar="SPECIES", help="The species to make as high as possible.")
@click.option("--minimise", metavar="SPECIES", help="The species to make as low as possible.")
@click.option(
    "--at-end/--best-time",
    "at_end",
    default=True,
    help="Read the target at the end time (default) or at its best time up to --until.",
)
@click.option(
    "--over",
    "over",
    multiple=True,
    metavar="NAME=LO:HI:UNIT",
    help="A setting and its bounds, e.g. temperature=20:80:degC or time=0:10:h.",
)
@click.option(
    "--until",
    "until",
    help="The end time (without --over time), or the latest time with --best-time: '8h'.",
)
@click.option("--yield", "as_yield", is_flag=True, help="Optimise the yield c/Σc0 instead.")
@click.option(
    "--activity",
    "activity",
    metavar="UNIT",
    help="Optimise the activity of the species in this unit instead, e.g. MBq.",
)
@click.option(
    "--sensitivity",
    is_flag=True,
    help="Also the exact sensitivities of the optimum to the parameters of the scheme.",
)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object on stdout.")
@click.option(
    "--out", "outputs", multiple=True, type=click.Path(path_type=Path), help="A .json file."
)
@click.option(
    "--plot-out",
    type=click.Path(path_type=Path),
    help="The target over the settings, broken requirements shaded: .png or .svg.",
)
@click.option(
    "--no-caution",
    is_flag=True,
    help="Do not print the two-line caution on stderr (for scripts; see SAFETY.md).",
)
def optimise(
    scheme_file,
    maximise,
    minimise,
    at_end,
    over,
    until,
    as_yield,
    activity,
    sensitivity,
    as_json,
    outputs,
    plot_out,
    no_caution,
):
    """Run ``kinetics optimise`` (the help text is :data:`_HELP`); exit status 2 on bad input."""
    from kinetics.cli.terminal import progress
    from kinetics.optimise import optimise as search
    from kinetics.optimise.words import CLI_WORDS
    from kinetics.output.optimum import optimum_json

    species, sense = _target(maximise, minimise)
    end, time_unit = _until(until)
    paths, plot_path = _outputs(scheme_file, outputs, plot_out)
    scheme = load_scheme(scheme_file)
    caution(no_caution)
    first_use_note()
    with progress(1, "optimising") as bar:
        found = search(
            scheme,
            species,
            list(over),
            sense=sense,
            best_time=not at_end,
            until=end,
            yield_basis=as_yield,
            time_unit=time_unit,
            words=CLI_WORDS,
            sensitivity=sensitivity,
            activity=activity,
        )
        bar.step()
    document = optimum_json(found, scheme)
    if as_json:
        echo_long(json.dumps(document, indent=2, allow_nan=False, ensure_ascii=False))
    else:
        _print(found)
    _write(paths, plot_path, found, scheme, document)


def _write(paths, plot_path, found, scheme, document) -> None:
    from kinetics.cli.common import write_outputs

    def one(path):
        if path.suffix.lower() == ".json":
            from kinetics.output.export import write_json

            write_json(document, path)
            return
        from kinetics.optimise import landscape
        from kinetics.output.optimum import optimum_figure
        from kinetics.output.plotting import save_figure

        axes, target, margin = landscape(found, scheme)
        title = scheme.title or scheme.source
        save_figure(optimum_figure(found, axes, target, margin, title), path)

    write_outputs([*paths, *([plot_path] if plot_path is not None else [])], one)
