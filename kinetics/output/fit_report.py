"""What a fit reports: the fit.json document, a summary of the estimates, and a plot.

The summary is plain text; the plot shows the data against the fitted curves.  These are
pure producers: no printing.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from kinetics._version import __version__
from kinetics.output.plotting import new_figure, save_figure, style_of
from kinetics.units import time_factor

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from kinetics.fit import FitResult

__all__ = ["fit_document", "fit_figure", "render_fit", "save_fit_plot"]


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
    followed = result.followed()
    if followed:
        lines.append("")
        lines.append("constants that follow the fitted values (delta method):")
        for name, f in followed.items():
            lines.append(
                f"  {name} = {_g(f['value'], 7)} {f['unit']}  "
                f"95 % (linear) {_g(f['ci95'][0])} … {_g(f['ci95'][1])}"
            )
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
    runs = result.data
    unit = time_unit or runs[0].time_unit
    factor = time_factor(unit)
    conc = result.scheme.concentration_unit
    fig = new_figure(5.2 * len(runs) + 0.8, 6.4)
    axes = fig.subplots(
        2, len(runs), squeeze=False, sharex="col", gridspec_kw={"height_ratios": [3, 1]}
    )
    species_order = result.scheme.species_names
    for r, m in enumerate(runs):
        top, bottom = axes[0, r], axes[1, r]
        t_end = float(np.max(m.times)) if m.times.size else 1.0
        grid = np.linspace(0.0, t_end if t_end > 0 else 1.0, 201)
        curves = result.predict(grid, run=r)
        for j, name in enumerate(m.species):
            i = species_order.index(name)
            style = style_of(i)
            line = {"color": style["color"], "linestyle": style["linestyle"]}
            top.plot(grid / factor, curves[name], label=f"{name} fit", **line)
            ok = ~np.isnan(m.values[:, j])
            top.plot(
                m.times[ok] / factor,
                m.values[ok, j],
                linestyle="none",
                marker=style["marker"],
                markerfacecolor="none",
                color=style["color"],
                label=f"{name} data",
            )
            res = result.residuals[r][:, j]
            bottom.plot(
                m.times[ok] / factor,
                res[ok],
                linestyle="none",
                marker=style["marker"],
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
    save_figure(fit_figure(result, time_unit), path)
