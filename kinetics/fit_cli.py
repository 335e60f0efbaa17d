"""The ``kinetics fit`` command, the fit plot and the fit.json document.

Registered on the command group in :mod:`kinetics.cli`.  The fitting itself is
:func:`kinetics.fit.fit`; this module reads the options, the data files and the
run conditions, and writes the outputs (atomically).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

import click
import numpy as np

from .errors import UsageError

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from .fit import FitResult

__all__ = ["fit", "fit_document", "fit_figure", "render_fit", "save_fit_plot"]

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
    from . import export
    from .cli import load_scheme as load  # prints the scheme's warnings
    from .fit import fit as run_fit
    from .measurements import parse_condition, read_measurements
    from .solution import time_factor

    order = ctx.meta.get("fit_order") or [("--data", d) for d in data_opts] + [
        ("--set", s) for s in set_opts
    ]
    runs = _runs(data_files, order)
    if not runs:
        raise UsageError(
            "fit needs at least one data file", "write e.g. kinetics fit FILE data.csv --free k1"
        )
    if starts != "auto":
        try:
            starts = int(starts)
        except ValueError:
            raise UsageError(
                f"--starts {starts!r} is not a whole number", "e.g. --starts 20"
            ) from None
        if starts < 1:
            raise UsageError("--starts must be at least 1", "e.g. --starts 20")
    inputs = [scheme_file] + [p for p, _ in runs]
    paths = export.check_output_paths(outputs, inputs, FIT_OUTPUTS)
    plot_path = export.check_output_paths([plot], inputs, PLOT_OUTPUTS)[0] if plot else None
    if time_unit is not None:
        time_factor(time_unit)
    scheme = load(scheme_file)
    datasets = []
    for path, sets in runs:
        conditions = dict(parse_condition(text, scheme) for text in sets)
        datasets.append(read_measurements(path, scheme, conditions))
    from .cli import echo_long, first_use_note, write_outputs

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
    if not no_caution:
        from .overview import CAUTION

        click.echo(CAUTION, err=True)
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


def fit_document(result: FitResult, scheme_file=None) -> dict:
    """The fit.json document: :meth:`FitResult.to_dict` plus ``scheme`` and ``software``.

    Parameters
    ----------
    result : FitResult
    scheme_file : str or os.PathLike, optional
        The scheme file as given on the command line.

    Returns
    -------
    dict
        JSON-ready (no NaN or infinity).
    """
    from . import __version__

    doc = result.to_dict()
    doc["scheme"] = str(scheme_file) if scheme_file is not None else result.scheme.source
    doc["software"] = f"kinetics {__version__}"
    return doc


def _g(x, digits: int = 5) -> str:
    if x is None or (isinstance(x, float) and not np.isfinite(x)):
        return "—"
    return f"{x:.{digits}g}"


def render_fit(result: FitResult) -> str:
    """A plain-text summary: estimates with intervals, statistics, correlation, warnings.

    Parameters
    ----------
    result : FitResult

    Returns
    -------
    str
        Lines without colour codes (safe for pipes and files).
    """
    rows = [("parameter", "value", "unit", "std. error", "95 % (linear)", "95 % (profile)", "p")]
    for e in result.estimates.values():
        lo, hi = e.ci95_profile
        rows.append(
            (
                e.name,
                _g(e.value, 7),
                e.unit,
                _g(e.std_error, 3),
                f"{_g(e.ci95[0])} … {_g(e.ci95[1])}",
                f"{_g(lo)} … {_g(hi)}",
                _g(e.p_value, 2),
            )
        )
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    lines = ["  ".join(cell.ljust(w) for cell, w in zip(r, widths, strict=True)) for r in rows]
    lines.insert(1, "  ".join("-" * w for w in widths))
    st = result.statistics
    lines.append("")
    lines.append(
        f"points {st['points']}, free parameters {st['parameters']}, "
        f"degrees of freedom {st['degrees_of_freedom']}, weights {result.weights}"
    )
    unit = "" if result.weights != "equal" else f" {result.scheme.concentration_unit}"
    lines.append(
        f"residual SD {_g(st['residual_sd'], 4)}{unit}, "
        f"sum of squares {_g(st['sum_of_squares'], 4)}, "
        f"chi-square error level {_g(st['chi2_error_level_percent'], 3)} %"
    )
    lines.append(
        f"model evaluations {st['model_evaluations']}, exact Jacobians "
        f"{st['jacobian_evaluations']}, starts {st['starts']}"
    )
    if len(result.parameters) > 1:
        lines.append("correlation:")
        names = result.names
        w = max(len(n) for n in names)
        lines.append(" " * (w + 2) + "  ".join(n.rjust(8) for n in names))
        for i, n in enumerate(names):
            cells = "  ".join(f"{result.correlation[i, j]:8.4f}" for j in range(len(names)))
            lines.append(f"  {n.ljust(w)}{cells}")
    if result.warnings:
        lines.append("")
        lines.append("Warnings:")
        lines.extend(f"  - {w}" for w in result.warnings)
    return "\n".join(lines)


def fit_figure(result: FitResult, time_unit: str | None = None) -> Figure:
    """Data points against fitted curves (top) and residuals (bottom), one column per run.

    Curves are computed with the entrywise engine on 201 points from 0 to the last
    measured time.  Each species has its own colour, marker and line style
    (readable in black and white).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from .plotting import LINE_STYLES, MARKERS
    from .solution import time_factor

    runs = result.data
    unit = time_unit or runs[0].time_unit
    factor = time_factor(unit)
    conc = result.scheme.concentration_unit
    fig = Figure(figsize=(5.2 * len(runs) + 0.8, 6.4), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(
        2, len(runs), squeeze=False, sharex="col", gridspec_kw={"height_ratios": [3, 1]}
    )
    from matplotlib import colormaps

    colours = colormaps["tab10"].colors
    species_order = result.scheme.species_names
    for r, m in enumerate(runs):
        top, bottom = axes[0, r], axes[1, r]
        t_end = float(np.max(m.times)) if m.times.size else 1.0
        grid = np.linspace(0.0, t_end if t_end > 0 else 1.0, 201)
        curves = result.predict(grid, run=r)
        for j, name in enumerate(m.species):
            i = species_order.index(name)
            style = {
                "color": colours[i % len(colours)],
                "linestyle": LINE_STYLES[i % len(LINE_STYLES)],
            }
            top.plot(grid / factor, curves[name], label=f"{name} fit", **style)
            ok = ~np.isnan(m.values[:, j])
            top.plot(
                m.times[ok] / factor,
                m.values[ok, j],
                linestyle="none",
                marker=MARKERS[i % len(MARKERS)],
                markerfacecolor="none",
                color=style["color"],
                label=f"{name} data",
            )
            res = result.residuals[r][:, j]
            bottom.plot(
                m.times[ok] / factor,
                res[ok],
                linestyle="none",
                marker=MARKERS[i % len(MARKERS)],
                color=style["color"],
            )
        bottom.axhline(0.0, color="black", linewidth=0.8)
        title = Path(m.source).name
        if m.conditions.get("temperature") is not None:
            t = m.conditions["temperature"]
            title += f"  ({t - 273.15:.4g} °C)"
        top.set_title(title, fontsize=10, parse_math=False)  # a file name, drawn as written
        top.set_ylabel(f"concentration [{conc}]")
        bottom.set_ylabel(f"data − fit [{conc}]")
        bottom.set_xlabel(f"time [{unit}]")
        top.legend(fontsize=8, frameon=False)
        top.set_ylim(bottom=min(0.0, top.get_ylim()[0]))
    return fig


def save_fit_plot(result: FitResult, path, time_unit: str | None = None) -> None:
    """Draw :func:`fit_figure` and write it to ``path`` (.png or .svg), atomically."""
    from .plotting import save_figure

    save_figure(fit_figure(result, time_unit), path)
