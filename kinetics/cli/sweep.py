"""The ``kinetics sweep`` command: parameter grids and Monte Carlo uncertainty at scale.

Argument parsing, progress and terminal output live here; the computation is
:mod:`kinetics.sweep`, the chunk files and tables :mod:`kinetics.sweep.store` and the
plot :mod:`kinetics.output.sweep_plot`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import click

from kinetics.cli.common import caution, first_use_note, load_scheme, prepare
from kinetics.cli.paths import check_output_path, check_output_paths
from kinetics.errors import UsageError

__all__ = ["sweep"]

_PLOT_FORMATS = (".png", ".svg")
_TERMINAL_ROWS = 40


def _check_table_path(path: Path | None, inputs, option: str) -> Path | None:
    from kinetics.sweep.store import TABLE_FORMATS

    if path is None:
        return None
    if path.suffix.lower() not in TABLE_FORMATS:
        what = f"extension {path.suffix!r}" if path.suffix else "no extension"
        raise UsageError(
            f"{option} {str(path)!r} has {what}", "the formats are .csv, .parquet and .json"
        )
    return check_output_path(path, inputs)


def _requirement_column(spec: str, plan) -> tuple[str, str]:
    """``'first_broken:API >= 90 %'`` (or ``first_broken:1``) -> that requirement's column."""
    wanted = spec.split(":", 1)[1].strip() if ":" in spec else ""
    columns = [c for c in plan.columns if c.quantity == "first_broken"]
    for k, col in enumerate(columns, 1):
        if wanted in (col.species, str(k)):
            return col.header, "first_broken"
    listed = "; ".join(f"{k}: {c.species}" for k, c in enumerate(columns, 1))
    raise UsageError(
        f"--plot {spec!r} names no requirement of the scheme",
        f"write first_broken:TEXT or first_broken:N ({listed})"
        if columns
        else "the scheme has no require line",
    )


def _plot_target(spec: str, plan) -> tuple[str, str]:
    """The column of the sweep table a ``--plot`` quantity names.

    ``'t_max:B'`` -> the summary column of that quantity and species;
    ``'first_broken:API >= 90 %'`` -> the column of that requirement.
    """
    from kinetics.analysis import BATCH_QUANTITIES

    if spec.strip().startswith("first_broken"):
        return _requirement_column(spec, plan)
    m = re.match(r"^\s*(?P<q>\w+)\s*[:\s]\s*(?P<species>\S+)\s*$", spec)
    if not m or m["q"] not in BATCH_QUANTITIES:
        raise UsageError(
            f"--plot {spec!r} is not QUANTITY:SPECIES",
            "write e.g. --plot t_max:B (quantities: " + ", ".join(BATCH_QUANTITIES) + ")",
        )
    for col in plan.columns:
        if col.quantity == m["q"] and col.species == m["species"]:
            return col.header, m["q"]
    names = plan.scheme.species_names
    if m["species"] not in names:
        raise UsageError(
            f"--plot {spec!r}: {m['species']!r} is not a species of the scheme",
            "the species are " + ", ".join(names),
        )
    have = sorted({c.species for c in plan.columns if c.quantity == m["q"]})
    raise UsageError(
        f"--plot {spec!r}: {m['q']} does not apply to {m['species']}",
        (f"it applies to {', '.join(have)}" if have else f"no species has a {m['q']}"),
    )


def _sweep_to_files(plan, paths, curves_file, samples_path, **options):
    """Run the sweep into its chunk store and tables, with progress; the plot's data."""
    from kinetics.cli.terminal import progress
    from kinetics.sweep.store import run_sweep

    # one bar for both phases: computing the chunks, then writing the tables from them
    with progress(2 * plan.n_chunks, "sweeping") as bar:
        last = [0]

        def tick(done, total):
            for _ in range(done - last[0]):
                bar.step()
            last[0] = done

        def writing(done, total):
            if done == 1:
                bar.describe("writing tables")
            bar.step()

        report = run_sweep(
            plan,
            paths,
            curves_path=curves_file,
            samples_path=samples_path,
            on_progress=tick,
            on_writing=writing,
            **options,
        )
    if report.reused:
        click.echo(
            f"resumed: {report.reused} of {plan.n_chunks} chunks were already "
            f"done, computed {report.computed}",
            err=True,
        )
    for p in report.written:
        click.echo(f"wrote {p}", err=True)
    return report.plot_data


def _sweep_in_memory(plan, engine: str, scheduler: str | None):
    """Every set's summary row (Monte Carlo: the bands), with progress; nothing on disk."""
    import pandas as pd

    from kinetics.cli.terminal import progress
    from kinetics.sweep import percentile_bands, run_chunks, summary_frame

    results = {}
    with progress(plan.n_chunks, "sweeping") as bar:

        def finished(result):
            results[result.index] = result
            bar.step()

        run_chunks(plan, range(plan.n_chunks), finished, engine=engine, scheduler=scheduler)
    table = pd.concat([summary_frame(plan, results[k]) for k in range(plan.n_chunks)])
    return percentile_bands(plan, table) if plan.samples else table


def _print_table(frame) -> None:
    import math

    from rich.markup import escape
    from rich.table import Table

    from kinetics.cli.terminal import console

    out = console()
    table = Table(show_edge=False)
    for c in frame.columns:
        table.add_column(escape(str(c)), justify="right")
    for row in frame.head(_TERMINAL_ROWS).itertuples(index=False, name=None):
        table.add_row(
            *("" if isinstance(v, float) and not math.isfinite(v) else f"{v:.6g}" for v in row)
        )
    out.print(table)
    if len(frame) > _TERMINAL_ROWS:
        out.print(f"... {len(frame) - _TERMINAL_ROWS} more rows; write them all with --out")


_EPILOG = """\b
Parameters (NAME), as written in the scheme file:
  k2                 a rate constant given by value
  k3.A, k3.Ea        pre-exponential factor and activation energy of
                     k3 = arrhenius(A = ..., Ea = ...)
  temperature        the temperature (changes every Arrhenius constant)
  start:A, excess:W  a start concentration, an excess concentration
  t_p                a named quantity (t_p = 50 h); the constants defined
                     from it follow it exactly
\b
Values (--vary NAME=VALUES):
  LO:HI:N[:log][:UNIT]   N values from LO to HI, linear or log spacing
  V1,V2,V3[:UNIT]        an explicit list (or with the unit after a space)
  A value without a unit is in the unit the file wrote for that quantity
  (k2 = 0.045 min-1 -> min-1; the unit of A or Ea; the temperature line's
  unit; the scheme's concentration unit for start and excess values).
  Several --vary make a Cartesian grid; the first varies slowest.
\b
Monte Carlo (--samples N --spread NAME=SPREAD --seed S):
  rate constants, A, start and excess values are lognormal: k1=15% means
  ln k = ln k0 + ln(1.15) z, z standard normal (k0 is the median, the
  geometric standard deviation is 1.15); temperature and Ea are normal with
  an absolute standard deviation (temperature=2K, k3.Ea=2kJ/mol) or a
  percentage; a named quantity either way (t_p=10%, t_p=2h).  --out then
  holds the percentile bands 2.5/50/97.5 of every quantity per grid point,
  --samples-out every sample, --curves the bands of the concentration
  curves.
\b
Examples:
  kinetics sweep networks/consecutive_intermediate.scheme --until 3h \\
      --vary k2=0.01:1:25:log --vary k1=0.06,0.12,0.24 --out sweep.csv
  kinetics sweep networks/reversible_isomerisation.scheme --until 10h \\
      --vary temperature=20:80:13:degC --vary kf.Ea=80:100:5:kJ/mol \\
      --out sweep.parquet --plot half_life:CIS --plot-out sweep.png
  kinetics sweep networks/consecutive_intermediate.scheme --until 3h \\
      --samples 2000 --spread k1=15% --spread k2=10% --seed 1 --out bands.csv
"""


@click.command("sweep", epilog=_EPILOG)
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@click.option(
    "--vary",
    "vary",
    multiple=True,
    metavar="NAME=VALUES",
    help="A grid axis, e.g. k2=0.01:1:25:log or temperature=20:80:13:degC.",
)
@click.option(
    "--samples", type=int, default=0, show_default=True, help="Monte Carlo samples per grid point."
)
@click.option(
    "--spread",
    "spread",
    multiple=True,
    metavar="NAME=SPREAD",
    help="Monte Carlo spread, e.g. k1=15% (lognormal) or temperature=2K (normal).",
)
@click.option("--seed", type=int, default=0, show_default=True, help="Seed of the random numbers.")
@click.option("--until", "until", help="End of the time window with a unit: '90 min', '3h'.")
@click.option(
    "--points",
    type=click.IntRange(min=2),
    default=None,
    help="Points of the uniform grid of the curves (default 201).",
)
@click.option("--times", "times_text", help="Explicit times with one unit: '0,5,10,30 min'.")
@click.option("--time-unit", help="Unit of time in the tables (default: the unit of --until).")
@click.option(
    "--out",
    "outputs",
    multiple=True,
    type=click.Path(path_type=Path),
    help="Summary table: .csv, .parquet or .json (several allowed).",
)
@click.option(
    "--samples-out",
    type=click.Path(path_type=Path),
    help="Monte Carlo: every sample's row (.csv, .parquet, .json).",
)
@click.option(
    "--curves",
    "curves_path",
    type=click.Path(path_type=Path),
    help="Every concentration curve in long format (Monte Carlo: their bands).",
)
@click.option(
    "--plot",
    "plot_spec",
    metavar="QUANTITY:SPECIES",
    help="Plot one quantity against the grid axes, e.g. t_max:B, or when a requirement is "
    "first broken, e.g. 'first_broken:API >= 90 %'.",
)
@click.option("--plot-out", type=click.Path(path_type=Path), help="The plot file: .png or .svg.")
@click.option(
    "--engine",
    type=click.Choice(["local", "dask"]),
    default="local",
    show_default=True,
    help="Where the chunks run.",
)
@click.option(
    "--scheduler",
    metavar="ADDRESS",
    help="Dask scheduler address (default with --engine dask: a local cluster).",
)
@click.option(
    "--workers",
    type=click.IntRange(min=1),
    default=None,
    help="Worker processes of the local Dask cluster (default: CPUs).",
)
@click.option(
    "--chunk-size",
    type=click.IntRange(min=1),
    default=1000,
    show_default=True,
    help="Parameter sets per stacked batch (and per chunk file).",
)
@click.option(
    "--resume",
    is_flag=True,
    help="Continue an interrupted sweep with the same options: compute only the "
    "chunks missing in <out>.chunks/.",
)
@click.option(
    "--keep-chunks", is_flag=True, help="Keep <out>.chunks/ after the tables are written."
)
@click.option(
    "--precision",
    type=click.Choice(["double", "auto", "double-double"]),
    default="double",
    show_default=True,
    help="Precision of the propagation engine for --curves.",
)
@click.option("--no-caution", is_flag=True, help="Do not print the two-line caution on stderr.")
@click.option(
    "--activity",
    "activity_unit",
    help="Heights, limits and curves as activities A = λN in this unit (MBq, GBq, Ci ...), "
    "with each set's decay constants.",
)
def sweep(
    scheme_file,
    vary,
    samples,
    spread,
    seed,
    until,
    points,
    times_text,
    time_unit,
    outputs,
    samples_out,
    curves_path,
    plot_spec,
    plot_out,
    engine,
    scheduler,
    workers,
    chunk_size,
    resume,
    keep_chunks,
    precision,
    no_caution,
    activity_unit,
):
    """Sweep rate constants, Arrhenius parameters, temperature and start values.

    Every parameter set is solved exactly and summarised (half-lives, intermediate
    maxima, long-time limits); one row per set, first the varied parameters
    (k2 [min-1]) then t_max B [min], c_max B [mol/L], half_life A [min], limit C
    [mol/L]; empty cells where a quantity does not apply.  Sets are evaluated in
    stacked batches; with --out every finished chunk is kept in <out>.chunks/ so
    that an interrupted sweep continues with --resume.
    """
    from kinetics.sweep import make_plan

    times, time_unit, _ = prepare(until, points, times_text, time_unit)
    _check_options(engine, scheduler, workers, samples, samples_out, resume, outputs, curves_path)
    out = _Outputs.checked(scheme_file, outputs, samples_out, curves_path, plot_spec, plot_out)
    scheme = load_scheme(scheme_file)
    plan = make_plan(
        scheme,
        vary,
        times,
        samples=samples,
        spread=spread,
        seed=seed,
        time_unit=time_unit,
        chunk_size=chunk_size,
        precision=precision,
        activity_unit=activity_unit,
    )
    plot = _plot_choice(plot_spec, plan)
    caution(no_caution)
    first_use_note(sweeps=True)
    if out.tables:
        plot_data = _sweep_to_files(
            plan,
            out.paths,
            out.curves,
            out.samples,
            resume=resume,
            keep_chunks=keep_chunks,
            engine=engine,
            scheduler=scheduler,
            workers=workers,
            plot_columns=_plot_columns(plan, plot),
        )
    else:
        table = _sweep_in_memory(plan, engine, scheduler)
        _print_table(table)  # after the progress bar: stdout stays out of its way
        plot_data = table
    if plot is not None:
        from kinetics.output.plotting import save_figure
        from kinetics.output.sweep_plot import sweep_figure

        save_figure(sweep_figure(plan, plot_data, *plot), out.plot)
        click.echo(f"wrote {out.plot}", err=True)


def _check_options(engine, scheduler, workers, samples, samples_out, resume, outputs, curves):
    """Refuse options that do not go together, before any file is read."""
    if scheduler is not None and engine != "dask":
        raise UsageError("--scheduler needs --engine dask", "add --engine dask")
    if workers is not None and (engine != "dask" or scheduler is not None):
        raise UsageError(
            "--workers sets the size of a local Dask cluster",
            "use it with --engine dask and no --scheduler",
        )
    if samples_out is not None and not samples:
        raise UsageError("--samples-out needs --samples", "e.g. --samples 1000 --spread k1=15%")
    if resume and not (outputs or samples_out or curves):
        raise UsageError("--resume needs the --out of the interrupted sweep", "add --out")


@dataclass(frozen=True)
class _Outputs:
    """The checked output files of a sweep (None where not asked for)."""

    paths: list[Path]
    samples: Path | None
    curves: Path | None
    plot: Path | None

    @property
    def tables(self) -> bool:
        """True when a table goes to a file (the sweep then runs through its chunk store)."""
        return bool(self.paths or self.samples or self.curves)

    @classmethod
    def checked(cls, scheme_file, outputs, samples_out, curves_path, plot_spec, plot_out):
        if (plot_spec is None) != (plot_out is None):
            raise UsageError(
                "--plot and --plot-out go together",
                "write e.g. --plot t_max:B --plot-out sweep.png",
            )
        inputs = [scheme_file]
        formats = {".csv": "", ".parquet": "", ".json": ""}
        paths = check_output_paths(outputs, inputs, formats=formats)
        samples_path = _check_table_path(samples_out, inputs, "--samples-out")
        curves_file = _check_table_path(curves_path, inputs, "--curves")
        if plot_out is not None:
            if plot_out.suffix.lower() not in _PLOT_FORMATS:
                raise UsageError(
                    f"--plot-out {str(plot_out)!r} must end in .png or .svg",
                    "e.g. --plot-out sweep.png",
                )
            check_output_path(plot_out, inputs)
        every = [*paths, samples_path, curves_file, plot_out]
        named = [p.resolve() for p in every if p is not None]
        if len(set(named)) != len(named):
            raise UsageError("two outputs have the same file name", "give each output its own name")
        return cls(paths, samples_path, curves_file, plot_out)


def _plot_choice(plot_spec, plan) -> tuple[str, str] | None:
    """(summary column, quantity) of ``--plot``, checked against the plan; None without."""
    if plot_spec is None:
        return None
    plot = _plot_target(plot_spec, plan)
    if not plan.parameters and not plan.samples:
        raise UsageError("--plot needs at least one --vary", "e.g. --vary k2=0.01:1:25:log")
    if len(plan.parameters) > 2:
        raise UsageError(
            f"--plot draws against one or two varied parameters, not {len(plan.parameters)}",
            "sweep at most two parameters for a plot",
        )
    return plot


def _plot_columns(plan, plot) -> list[str]:
    """The columns the plot needs from the tables written (Monte Carlo: the bands)."""
    if plot is None:
        return []
    from kinetics.sweep import band_label

    columns = list(plan.grid_columns)
    if plan.samples:
        return columns + [band_label(plot[0], p) for p in (2.5, 50.0, 97.5)]
    return [*columns, plot[0]]
