"""The ``kinetics solve`` and ``kinetics report`` commands.

``solve`` solves a scheme on a time grid and prints or writes the table and the summary;
``report`` writes the HTML report.
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from kinetics.cli.common import (
    caution,
    echo_long,
    first_use_note,
    grid_options,
    load_scheme,
    prepare,
    species_list,
    write_outputs,
)
from kinetics.cli.paths import OUTPUT_FORMATS, check_output_paths
from kinetics.errors import UsageError

__all__ = ["report", "solve"]

_OUT_HELP = "Output file, format from the extension: " + ", ".join(
    suffix.lstrip(".") for suffix in OUTPUT_FORMATS
)


_ACTIVITY_OPTION = click.option(
    "--activity",
    "activity_unit",
    help="Report activities A = λN instead of concentrations, in this unit: Bq, kBq, MBq, "
    "GBq, Ci, mCi, uCi (per volume, e.g. MBq/L, for a scheme per volume).",
)


def _plot_solution(result, scheme):
    """The solution on a grid fine enough to draw smooth curves (at least 201 points).

    The grid holds the times of every operation, so that each is drawn as a jump.
    """
    import numpy as np

    from kinetics import solution as sol

    jumps = sorted({e.time for e in result.events if e.action in ("add", "remove")})
    missing = np.setdiff1d(jumps, result.times)
    if len(result.times) >= 201 and not missing.size:
        return result
    grid = result.times if len(result.times) >= 201 else np.linspace(0.0, result.times[-1], 401)
    fine = sol.solve(scheme, np.union1d(grid, jumps))
    if result.activity_unit is not None:
        return fine.in_activity(result.activity_unit)
    return fine if result.unit_factors is None else fine.in_unit(result.concentration_unit)


def events_path(path: Path) -> Path:
    """The sibling file of a CSV table that holds the operations.

    ``run.csv`` -> ``run_events.csv``.
    """
    return path.with_name(f"{path.stem}_events{path.suffix}")


def _with_log(scheme, log_path):
    """The scheme under the temperature record of ``--temperature-log`` (or as it is)."""
    if log_path is None:
        return scheme, None
    from kinetics.temperature_log import read_temperature_log

    log = read_temperature_log(log_path)
    return log.apply(scheme), log


_LOG_HELP = (
    "A data logger's temperature record (CSV with columns 'time [unit]' and 'temperature "
    "[degC or K]'); each reading holds until the next (piecewise constant) and the scheme's "
    "Arrhenius constants follow it. The summary adds its mean kinetic temperature."
)


def _check_activity(scheme, activity_unit, conc_unit) -> None:
    """Refuse, before solving, an ``--activity`` that cannot be shown.

    That is ``--activity`` with ``--concentration-unit``, or a unit that is no activity of the
    scheme's kind.
    """
    if activity_unit is None:
        return
    if conc_unit is not None:
        raise UsageError(
            "give either --activity or --concentration-unit, not both",
            "--activity MBq reports activities, --concentration-unit amounts or masses",
        )
    from kinetics.activity import activity_factors

    activity_factors(scheme, activity_unit)


def _solve_and_summarise(
    scheme, times, time_unit, bar, conc_unit=None, activity_unit=None, sensitivity=False, log=None
):
    """The solution, its summary in ``time_unit`` and (when asked) its sensitivities.

    The sensitivities are those of the summary quantities; a run with operations has none
    (they would be those of one stretch).
    """
    from kinetics import solution as sol
    from kinetics.analysis.solution_summary import compute_summary, summary_in_units
    from kinetics.analysis.summary_sensitivity import summary_sensitivities

    bar.describe("solving")
    result = sol.solve(scheme, times)
    unit = conc_unit or scheme.written_unit
    if activity_unit is not None:
        result = result.in_activity(activity_unit)
    elif unit and unit != scheme.concentration_unit:
        result = result.in_unit(unit)
    bar.step("summary quantities")
    raw = compute_summary(result)
    summary = summary_in_units(raw, time_unit) if raw is not None else None
    if summary is not None and log is not None:
        summary.scheme["temperature_log"] = log.summary(scheme, float(times[-1]))
    sensitivities = None
    if sensitivity and raw is not None and not scheme.timeline:
        bar.describe("sensitivities")
        sensitivities = summary_sensitivities(result, raw)
    bar.step()
    return result, summary, sensitivities


_SOLVE_HELP = """Solve a scheme exactly on a time grid; print or write the table and the summary.

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
  kinetics solve networks/generator_half_lives.scheme --until 5d --activity MBq
  kinetics solve networks/consecutive_intermediate.scheme --until 2h --sensitivity
  kinetics solve networks/generator_daily_elution.scheme --until 10d --out eluates.csv

A scheme with operations (at/every/from lines) is solved exactly stretch by stretch: a
time of an addition or removal appears twice in the table (just before and just
after), and a CSV table gets a sibling NAME_events.csv with what each operation moved.
"""


@click.command(help=_SOLVE_HELP)
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@grid_options
@click.option(
    "--out",
    "outputs",
    multiple=True,
    type=click.Path(path_type=Path),
    help=_OUT_HELP + " (several allowed).",
)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object on stdout.")
@click.option("--temperature-log", "log_path", type=click.Path(path_type=Path), help=_LOG_HELP)
@_ACTIVITY_OPTION
@click.option(
    "--sensitivity",
    is_flag=True,
    help="Also report the normalised sensitivities ∂ln Q/∂ln p of the summary quantities to "
    "every named quantity, rate constant and the temperature (exact; JSON key 'sensitivity').",
)
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
    log_path,
    activity_unit,
    sensitivity,
):
    """Run ``kinetics solve`` (the help text is :data:`_SOLVE_HELP`)."""
    from kinetics.cli.terminal import progress, render_solution
    from kinetics.output.overview import solution_json

    times, time_unit, settings = prepare(until, points, times_text, time_unit)
    inputs = [scheme_file] + ([log_path] if log_path is not None else [])
    paths = check_output_paths(outputs, inputs)
    scheme, log = _with_log(load_scheme(scheme_file), log_path)
    if log_path is not None:
        settings["temperature_log"] = str(log_path)
    siblings = _event_files(paths, scheme)
    if siblings:
        paths = check_output_paths([*paths, *siblings], inputs)
    species = species_list(species_text, scheme)
    if species:
        settings["species"] = species
    _check_activity(scheme, activity_unit, conc_unit)
    if sensitivity and scheme.timeline:
        raise UsageError(
            "--sensitivity is not available for a run with operations",
            "leave it out, or sweep a parameter (kinetics sweep --vary) to see its effect",
        )
    _check_sheet_sizes(paths, len(times), scheme)
    caution(no_caution)
    first_use_note(operations=bool(scheme.timeline))
    with progress(2, "solving") as bar:
        result, summary, sensitivities = _solve_and_summarise(
            scheme, times, time_unit, bar, conc_unit, activity_unit, sensitivity, log
        )
    needs_document = as_json or any(p.suffix.lower() in (".json", ".parquet") for p in paths)
    document = (
        solution_json(result, time_unit, summary, settings, sensitivities)
        if needs_document
        else None
    )
    # the result reaches stdout before any file is written: a full disk loses nothing
    if as_json:
        echo_long(json.dumps(document, indent=2, allow_nan=False, ensure_ascii=False))
    elif not paths:
        activity = document.get("activity") if document else None
        if activity is None and activity_unit is not None:
            from kinetics.analysis.solution_summary import activity_summary

            activity = activity_summary(result, summary)
        render_solution(
            result,
            time_unit,
            summary=summary,
            species=species,
            activity=activity,
            sensitivity=sensitivities,
        )
    write_outputs(
        paths,
        lambda path: _write_output(
            path, result, scheme, time_unit, summary, document, species, path in siblings
        ),
    )


def _event_files(paths, scheme) -> list[Path]:
    """The sibling ``*_events.csv`` of each CSV table, for a scheme with operations."""
    if not scheme.timeline:
        return []
    return [events_path(p) for p in paths if p.suffix.lower() == ".csv"]


def _check_sheet_sizes(paths, n_times: int, scheme) -> None:
    """Refuse, before solving, a concentration table larger than a spreadsheet holds."""
    from kinetics.output.export import check_xlsx_size

    for path in paths:
        if path.suffix.lower() == ".xlsx":
            check_xlsx_size(n_times + 1, len(scheme.species_names) + 1, path)


def _write_output(
    path, result, scheme, time_unit, summary, document, species, events_only=False
) -> None:
    """Write one --out file; the format follows the extension (already checked).

    With ``events_only``, write the sibling CSV of the operations (:func:`events_path`).
    """
    import pandas as pd

    from kinetics.output import export
    from kinetics.output.overview import certificate_rows, event_table, inputs_tables
    from kinetics.output.summary_text import scheme_rows, summary_rows

    suffix = path.suffix.lower()
    events = event_table(result, time_unit) if result.after is not None else None
    if events_only:
        columns = list(events[0]) if events else [f"time [{time_unit}]", "action", "species"]
        export.write_csv(pd.DataFrame(events, columns=columns), path)
        return
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
            events=events,
        )
    elif suffix in (".png", ".svg"):
        from kinetics.output.plotting import save_plot

        save_plot(path, _plot_solution(result, scheme), time_unit, summary, species=species)
    else:  # pragma: no cover - check_output_paths refuses other extensions
        raise UsageError(f"unknown output format {suffix!r}")


_REPORT_HELP = """Write a self-contained HTML report: scheme, graph, inputs, summary, plot, table.

The page needs no network access: styles are inline and plots are embedded
images.  It records the software version, the date and the SHA-256 of the
scheme file, and carries the caution box of SAFETY.md.

\b
Example:
  kinetics report networks/consecutive_intermediate.scheme --until 2h --out report.html
"""


@click.command(help=_REPORT_HELP)
@click.argument("scheme_file", type=click.Path(dir_okay=True, path_type=Path))
@grid_options
@click.option(
    "--out",
    "output",
    required=True,
    type=click.Path(path_type=Path),
    help="The report file (.html); one self-contained page, viewable offline.",
)
@click.option("--title", help="Title of the report (default: the title in the scheme file).")
@click.option("--temperature-log", "log_path", type=click.Path(path_type=Path), help=_LOG_HELP)
@_ACTIVITY_OPTION
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
    log_path,
    activity_unit,
):
    """Run ``kinetics report`` (the help text is :data:`_REPORT_HELP`)."""
    import hashlib

    from kinetics.cli.terminal import progress
    from kinetics.output.report import build_report, write_report

    times, time_unit, settings = prepare(until, points, times_text, time_unit)
    inputs = [scheme_file] + ([log_path] if log_path is not None else [])
    (path,) = check_output_paths([output], inputs, {".html": "HTML report"})
    scheme, log = _with_log(load_scheme(scheme_file), log_path)
    if log_path is not None:
        settings["temperature_log"] = str(log_path)
    species = species_list(species_text, scheme)
    digest = hashlib.sha256(Path(scheme_file).read_bytes()).hexdigest()
    _check_activity(scheme, activity_unit, conc_unit)
    caution(no_caution)
    first_use_note(operations=bool(scheme.timeline))
    with progress(4, "solving") as bar:
        result, summary, sensitivities = _solve_and_summarise(
            scheme, times, time_unit, bar, conc_unit, activity_unit, sensitivity=True, log=log
        )
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
            sensitivity=sensitivities,
        )
        bar.step(f"writing {path.name}")
        write_report(path, html)
        bar.step()
    click.echo(f"wrote {path}", err=True)
