"""The ``kinetics fit`` command.

Registered on the command group in :mod:`kinetics.cli.entry`.  The fitting itself is
:func:`kinetics.fit.fit` and what it reports (the fit.json document, the plain-text
summary, the plot) :mod:`kinetics.output.fit_report`; this module reads the options,
the data files and the run conditions, and writes the outputs (atomically).
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from kinetics.cli.common import caution, echo_long, first_use_note, load_scheme, write_outputs
from kinetics.cli.paths import check_output_paths
from kinetics.errors import UsageError

__all__ = ["fit"]

FIT_OUTPUTS = {
    ".json": "fit results (estimates, intervals, statistics, warnings)",
    ".csv": "table of estimates",
}
PLOT_OUTPUTS = {".png": "plot (PNG image)", ".svg": "plot (SVG image)"}


class _FitCommand(click.Command):
    """Remembers the order of ``--data`` and ``--set`` (a --set belongs to the --data before it)."""

    def parse_args(self, ctx, args):
        ctx.meta["fit_order"] = _data_order(args)
        return super().parse_args(ctx, args)


def _data_order(args: list[str]) -> list[tuple[str, str]]:
    order: list[tuple[str, str]] = []
    i = 0
    while i < len(args):
        token = args[i]
        if token == "--":
            break
        for name in ("--data", "--set"):
            if token == name and i + 1 < len(args):
                order.append((name, args[i + 1]))
                i += 1
            elif token.startswith(name + "="):
                order.append((name, token[len(name) + 1 :]))
        i += 1
    return order


def _runs(positional, order) -> list[tuple[Path, list[str]]]:
    """(data file, its --set texts): sets before any --data apply to every file."""
    common: list[str] = []
    runs: list[tuple[Path, list[str]]] = []
    for kind, value in order:
        if kind == "--data":
            runs.append((Path(value), []))
        elif runs:
            runs[-1][1].append(value)
        else:
            common.append(value)
    out = [(Path(p), list(common)) for p in positional]
    out += [(p, common + own) for p, own in runs]
    return out


_HELP = """Fit rate constants (or Arrhenius parameters, start values) to measured data.

\b
DATA files are CSV tables with the header convention of our exports:
  time [min],A [mol/L],B [mmol/L]
Any subset of the species may be measured; a blank cell is a missing value;
units are converted.  Optional columns 'B sd [mmol/L]' give standard deviations
(for --weights column).

\b
Free parameters (--free, comma separated, repeatable):
  k1             a rate constant of the scheme
  k3.A,k3.Ea     the Arrhenius prefactor and activation energy of k3
  start:A        the start concentration of A (shared by all data files)
  t_p            a named quantity (t_p = 50 h): the constants defined from
                 it follow it, and are reported with their intervals
The scheme's values are the start of the search; everything not free is fixed.

\b
Several runs are fitted together with shared parameters: give each file with
--data and follow it with its conditions (--set applies to the --data before
it; a --set before every --data applies to all files):
  temperature=40degC   start:A=0.5mol/L   k2=0.01/min (held fixed in that run)

\b
Weights (--weights):
  equal     every value has the same standard deviation (default)
  relative  the SD is proportional to the value (constant coefficient of
            variation; floor 1e-3 of the column maximum)
  column    the SDs are read from the 'NAME sd [unit]' columns

\b
Examples:
  kinetics fit networks/consecutive_intermediate.scheme data.csv --free k1,k2
  kinetics fit decay.scheme --data run25.csv --set temperature=25degC \\
      --data run40.csv --set temperature=40degC --free k1.A,k1.Ea \\
      --out fit.json --plot fit.png
"""


@click.command("fit", cls=_FitCommand, help=_HELP, short_help="Fit constants to measured data.")
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.argument("data_files", nargs=-1, type=click.Path(dir_okay=True, path_type=Path))
@click.option("--data", "data_opts", multiple=True, help="A data file (repeatable).")
@click.option("--set", "set_opts", multiple=True, help="A run condition KEY=VALUE (repeatable).")
@click.option(
    "--free",
    "free",
    multiple=True,
    required=True,
    help="Free parameters, e.g. k1,k2 or k1.A,k1.Ea.",
)
@click.option(
    "--weights",
    type=click.Choice(["equal", "relative", "column"]),
    default="equal",
    show_default=True,
    help="Weighting of the residuals.",
)
@click.option(
    "--out",
    "outputs",
    multiple=True,
    type=click.Path(path_type=Path),
    help="Output file: .json (all results) or .csv (estimates); repeatable.",
)
@click.option("--plot", "plot", type=click.Path(path_type=Path), help="Plot file (.png or .svg).")
@click.option("--starts", default="auto", show_default=True, help="Number of starting points.")
@click.option("--seed", type=int, default=0, show_default=True, help="Seed of the start design.")
@click.option("--no-profile", is_flag=True, help="Skip the profile intervals (faster).")
@click.option("--time-unit", help="Time unit of the plot (default: that of the first data file).")
@click.option("--json", "as_json", is_flag=True, help="Print the fit.json document on stdout.")
@click.option("--no-caution", is_flag=True, help="Do not print the two-line caution on stderr.")
@click.pass_context
def fit(
    ctx,
    scheme_file,
    data_files,
    data_opts,
    set_opts,
    free,
    weights,
    outputs,
    plot,
    starts,
    seed,
    no_profile,
    time_unit,
    as_json,
    no_caution,
):
    """Run ``kinetics fit`` (the help text is :data:`_HELP`); exit status 2 on bad input."""
    from kinetics.fit import fit as run_fit
    from kinetics.measurements import parse_condition, read_measurements
    from kinetics.output import export
    from kinetics.output.fit_report import fit_document, render_fit, save_fit_plot
    from kinetics.units import time_factor

    order = ctx.meta.get("fit_order") or [("--data", d) for d in data_opts] + [
        ("--set", s) for s in set_opts
    ]
    runs = _runs(data_files, order)
    if not runs:
        raise UsageError(
            "fit needs at least one data file", "write e.g. kinetics fit FILE data.csv --free k1"
        )
    starts = _starts(starts)
    inputs = [scheme_file] + [p for p, _ in runs]
    paths = check_output_paths(outputs, inputs, FIT_OUTPUTS)
    plot_path = check_output_paths([plot], inputs, PLOT_OUTPUTS)[0] if plot else None
    if time_unit is not None:
        time_factor(time_unit)
    scheme = load_scheme(scheme_file)
    datasets = []
    for path, sets in runs:
        conditions = dict(parse_condition(text, scheme) for text in sets)
        datasets.append(read_measurements(path, scheme, conditions))
    first_use_note()
    result = run_fit(
        scheme,
        datasets,
        list(free),
        weights=weights,
        starts=starts,
        seed=seed,
        profile=not no_profile,
    )
    document = fit_document(result, scheme_file)
    caution(no_caution)
    # the estimates reach stdout before any file is written: a full disk loses nothing
    if as_json:
        echo_long(json.dumps(document, indent=2, allow_nan=False, ensure_ascii=False))
    else:
        click.echo(render_fit(result))

    def write_one(path: Path) -> None:
        if path == plot_path:
            save_fit_plot(result, path, time_unit)
        elif path.suffix.lower() == ".json":
            export.write_json(document, path)
        else:
            export.write_csv(result.to_frame(), path)

    write_outputs([*paths, *([plot_path] if plot_path is not None else [])], write_one)


def _starts(starts: str) -> str | int:
    """``--starts``: ``auto`` or a whole number >= 1."""
    if starts == "auto":
        return starts
    try:
        number = int(starts)
    except ValueError:
        raise UsageError(f"--starts {starts!r} is not a whole number", "e.g. --starts 20") from None
    if number < 1:
        raise UsageError("--starts must be at least 1", "e.g. --starts 20")
    return number
