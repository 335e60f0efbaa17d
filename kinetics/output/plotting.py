"""Plots of a solution (matplotlib, imported lazily).

Figures are built with :class:`matplotlib.figure.Figure` and the Agg canvas
directly, never through ``pyplot``: no global state, no window, no display
needed, and importing :mod:`kinetics` does not import matplotlib.

Every curve has its own line style *and* marker shape as well as its own colour,
so that the plots stay readable when printed in black and white.  The drawing of the
species graph is :mod:`kinetics.output.graph_figure`; labels that never overlap are
placed by :mod:`kinetics.output.labels`.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Literal

import numpy as np

from kinetics import files
from kinetics._version import __version__
from kinetics.errors import SettingError
from kinetics.output.labels import Label, place_labels
from kinetics.units import time_factor

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from kinetics.solution import Solution

__all__ = [
    "LINE_STYLES",
    "LOG_FLOOR",
    "MARKERS",
    "OPERATION_MARKS",
    "SPLIT_RATIO",
    "concentration_figure",
    "figure_bytes",
    "new_figure",
    "save_figure",
    "save_plot",
    "split_by_height",
    "style_of",
]

#: Line styles and markers, combined per curve (black-and-white readable).
LINE_STYLES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1, 1, 1)), (0, (8, 2)))
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<", ">", "h")
#: Lower end of the log panel, relative to the largest concentration shown.
LOG_FLOOR = 1e-9
#: A species whose peak is at least this many times the largest peak of all the others
#: is drawn against a right-hand axis of the linear panel (``linear="auto"``).
SPLIT_RATIO = 5.0


def style_of(i: int) -> dict:
    """Colour, line style and marker of the curve of species number ``i`` (matrix order)."""
    from matplotlib import colormaps
    from matplotlib.colors import ListedColormap

    tab10 = colormaps["tab10"]
    assert isinstance(tab10, ListedColormap)  # ten colours, a tuple of RGB tuples
    colours = tab10.colors
    assert isinstance(colours, tuple)
    return {
        "color": colours[i % len(colours)],
        "linestyle": LINE_STYLES[i % len(LINE_STYLES)],
        "marker": MARKERS[i % len(MARKERS)],
    }


def new_figure(
    width: float,
    height: float,
    layout: Literal["constrained", "compressed", "tight"] | None = "constrained",
) -> Figure:
    """An empty figure [inches] on the Agg canvas (no pyplot)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), layout=layout)
    FigureCanvasAgg(fig)
    return fig


def _fmt(x: float) -> str:
    return f"{x:.4g}"


def _marks(summary: dict | None, name: str, t_end: float):
    """(half-life, maxima list, notes) of one species from a summary in the plot's units."""
    if not summary or name not in summary:
        return None, [], []
    entry = summary[name] or {}
    notes = []
    half = entry.get("half_life")
    if half is not None and not (0 <= half <= t_end):
        notes.append(f"t½ {name} = {_fmt(half)} (beyond the window)")
        half = None
    maxima = []
    listed = entry.get("maxima")
    if isinstance(listed, list) and listed:
        for m in listed:
            t = m.get("time")
            c = m.get("height")
            if t is not None and c is not None:
                maxima.append((t, c))
    elif entry.get("t_max") is not None and entry.get("c_max") is not None:
        maxima.append((entry["t_max"], entry["c_max"]))
    shown = []
    for t, c in maxima:
        if 0 <= t <= t_end:
            shown.append((t, c))
        else:
            notes.append(f"maximum of {name}: {_fmt(c)} at {_fmt(t)} (beyond the window)")
    return half, shown, notes


def split_by_height(peaks: dict[str, float], ratio: float = SPLIT_RATIO) -> list[str]:
    """Species to draw on a right-hand axis: the few far above the rest, else none.

    They are the species above a gap of ``ratio`` or more between consecutive peak heights
    (largest first), when they are fewer than the species below the gap (which would
    otherwise be squashed).

    >>> split_by_height({"P": 12.0, "M1": 3.1, "M2": 5.6, "CO2": 94.0})
    ['CO2']
    >>> split_by_height({"A": 1.0, "B": 0.5, "C": 0.9})
    []
    >>> split_by_height({"A": 0.8, "B": 0.6, "C": 0.7, "HV": 0.01})
    []
    """
    order = sorted((h, n) for n, h in peaks.items() if h > 0)[::-1]
    for k in range(len(order) - 1):
        if order[k][0] >= ratio * order[k + 1][0]:
            top = [n for _, n in order[: k + 1]]
            return top if len(top) < len(peaks) - len(top) else []
    return []


def concentration_figure(
    solution: Solution,
    time_unit: str = "s",
    summary: dict | None = None,
    *,
    species: list[str] | None = None,
    title: str | None = None,
    linear: str = "auto",
) -> Figure:
    """Concentration against time, on a linear and on a logarithmic scale.

    Parameters
    ----------
    solution : Solution
        Times [s] and concentrations [concentration_unit].
    time_unit : str, optional
        Unit of the time axis (``"min"``, ``"h"``...).
    summary : dict, optional
        Species -> quantities in ``time_unit`` and the concentration unit (keys
        ``half_life``, ``t_max``, ``c_max``, optionally ``maxima``: a list of
        ``{"time": ..., "height": ...}``, as
        :func:`kinetics.analysis.solution_summary.summary_in_units`
        gives them); half-lives
        (open circle at half the start value) and maxima (filled star) are marked.
    species : list of str, optional
        Species to draw (default: all).
    title : str, optional
        Figure title (default: the scheme's title).
    linear : {"auto", "shared"}, optional
        ``"auto"``: species that rise far above all others (a lumped end product with a
        large stoichiometric factor) get a right-hand axis of their own in the linear panel
        (see :func:`split_by_height`), so the others are not squashed; ``"shared"``: one
        axis for all.

    Returns
    -------
    matplotlib.figure.Figure
        Two panels: linear concentration axis (with a right-hand axis when split) and
        logarithmic concentration axis.  Labels of maxima and half-lives never overlap each
        other and stay inside the linear panel (see
        :func:`kinetics.output.labels.place_labels`).  The operations of a run
        (``solution.events``) are marked on the time axis of both panels, one marker
        shape per kind (see :data:`OPERATION_MARKS`); a time at which the solution has
        two rows (just before and just after an operation) is drawn as a vertical jump.
    """
    if linear not in ("auto", "shared"):
        raise SettingError(f"linear={linear!r} is not known", "use 'auto' or 'shared'")
    names = list(species) if species else list(solution.species)
    t = solution.times / time_factor(time_unit)
    fig = new_figure(11.0, 4.8)
    ax_lin, ax_log = fig.subplots(1, 2)
    peaks = {n: float(np.max(solution[n], initial=0.0)) for n in names}
    right = split_by_height(peaks) if linear == "auto" else []
    panels = _Panels(fig, ax_lin, ax_log, ax_lin.twinx() if right else None, right)
    drawn = _Drawn()
    for i, name in enumerate(names):
        _draw_species(panels, drawn, solution, t, i, name, len(names), summary, time_unit)
    _axes(
        panels,
        drawn,
        solution.concentration_unit,
        time_unit,
        float(t[-1]) if t.size else 0.0,
        solution.quantity,
    )
    _mark_operations(panels, drawn, solution, time_unit)
    heading = title if title is not None else (solution.scheme.title or solution.scheme.source)
    if heading:  # the user's text, drawn as written ("$" starts no formula)
        fig.suptitle(heading, fontsize=12, parse_math=False)
    _legend(panels, drawn, names)
    if drawn.notes:
        fig.text(
            0.01, 0.005, "; ".join(drawn.notes), fontsize=7, color="0.3", ha="left", va="bottom"
        )
    place_labels(fig, ax_lin, drawn.labels)
    return fig


@dataclass(frozen=True)
class _Panels:
    """The figure, its panels, the right-hand axis (or None) and its species.

    The panels are the linear and the log one; the species are those drawn against the
    right-hand axis.
    """

    fig: Figure
    lin: Axes
    log: Axes
    right_ax: Axes | None
    right: list[str]

    def axis_of(self, name: str) -> Axes:
        """The axis of the linear panel the curve of species ``name`` is drawn against."""
        if name in self.right and self.right_ax is not None:
            return self.right_ax
        return self.lin


@dataclass
class _Drawn:
    """What the curves drawn so far leave for the axes, the legend and the labels."""

    labels: list[Label] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    operations: list[str] = field(default_factory=list)
    peak: float = 0.0
    positive_min: float = math.inf
    maximum: bool = False
    half_life: bool = False


def _draw_species(p: _Panels, drawn: _Drawn, solution, t, i, name, count, summary, time_unit):
    """Draw the curve of one species in both panels, with its half-life and maxima."""
    j = solution.species.index(name)
    c = solution.concentrations[:, j]
    style = style_of(j)
    every = max(1, t.size // 9)
    offset = (i * every) // max(1, count) if every > 1 else 0
    kw = {
        "label": name + (" (right axis)" if name in p.right else ""),
        "linewidth": 1.8,
        "markersize": 5.5,
        "markevery": (offset, every),
        "markerfacecolor": "white" if i % 2 else style["color"],
        **style,
    }
    ax_this = p.axis_of(name)
    ax_this.plot(t, c, **kw)
    positive = np.where(c > 0, c, np.nan)
    p.log.plot(t, positive, **kw)
    if np.any(c > 0):
        drawn.peak = max(drawn.peak, float(np.nanmax(positive)))
        drawn.positive_min = min(drawn.positive_min, float(np.nanmin(positive)))
    half, maxima, species_notes = _marks(summary, name, float(t[-1]) if t.size else 0.0)
    drawn.notes.extend(species_notes)
    c0 = float(solution.concentrations[0, j])
    drawn.maximum |= bool(maxima)
    drawn.half_life |= half is not None and c0 > 0
    for ax in (ax_this, p.log):
        if half is not None and c0 > 0:
            ax.plot([half], [c0 / 2], "o", ms=10, mfc="none", mec="black", mew=1.6, zorder=5)
            ax.axvline(half, color="0.45", linestyle=(0, (1, 2)), linewidth=0.9, zorder=1)
        for tm, cm in maxima:
            ax.plot([tm], [cm], "*", ms=13, color="black", mec="white", mew=0.6, zorder=6)
    if half is not None and c0 > 0:
        text = f"t½ {name} = {_fmt(half)} {time_unit}"
        drawn.labels.append(Label(text, ax_this, (half, c0 / 2), below=True))
    for tm, cm in maxima:
        text = f"max {name} = {_fmt(cm)} at {_fmt(tm)} {time_unit}"
        drawn.labels.append(Label(text, ax_this, (tm, cm), below=False))


def _axes(
    p: _Panels,
    drawn: _Drawn,
    unit: str,
    time_unit: str,
    t_end: float,
    quantity: str = "concentration",
) -> None:
    """Labels, limits, scales and titles of both panels (``quantity``: the axis word)."""
    for ax in (p.lin, p.log):
        ax.set_xlabel(f"time [{time_unit}]")
        ax.set_ylabel(f"{quantity} [{unit}]")
        ax.grid(True, color="0.88", linewidth=0.7)
        ax.set_xlim(0, t_end if t_end > 0 else 1)
    p.lin.set_ylim(bottom=0)
    if p.right_ax is not None:
        p.right_ax.set_ylim(bottom=0)
        p.right_ax.set_ylabel(f"{', '.join(p.right)} [{unit}] (right axis)")
        p.lin.set_ylabel(f"other species [{unit}]")
    p.lin.set_title("linear scale", fontsize=10)
    p.log.set_yscale("log")
    if drawn.peak > 0:
        floor = max(drawn.positive_min, drawn.peak * LOG_FLOOR)
        p.log.set_ylim(floor / 2, drawn.peak * 2)
    p.log.set_title("logarithmic scale", fontsize=10)


def _legend(p: _Panels, drawn: _Drawn, names: list[str]) -> None:
    """One legend below both panels: the species in their order, then the marks."""
    from matplotlib.lines import Line2D

    handles, legend = p.lin.get_legend_handles_labels()
    if p.right_ax is not None:
        more = p.right_ax.get_legend_handles_labels()
        handles, legend = handles + more[0], legend + more[1]
        order = sorted(range(len(legend)), key=lambda k: names.index(legend[k].split(" (")[0]))
        handles, legend = [handles[k] for k in order], [legend[k] for k in order]
    if drawn.maximum:
        handles.append(Line2D([], [], marker="*", ls="none", color="black", ms=11))
        legend.append("maximum")
    if drawn.half_life:
        handles.append(Line2D([], [], marker="o", ls="none", mfc="none", mec="black", ms=9))
        legend.append("half-life")
    for action in drawn.operations:
        marker, words = OPERATION_MARKS[action]
        handles.append(Line2D([], [], marker=marker, ls="none", color="0.15", ms=8))
        legend.append(words)
    p.fig.legend(handles, legend, loc="outside lower center", ncol=min(len(legend), 8), fontsize=9)


#: Marker and legend words of each kind of operation on the time axis.
OPERATION_MARKS = {
    "add": ("^", "addition"),
    "remove": ("v", "removal"),
    "temperature": ("d", "temperature change"),
    "feed on": (">", "feed on"),
    "feed off": ("<", "feed off"),
}
#: Most operations that also get a faint vertical line across the panels.
OPERATION_LINES = 40


def _mark_operations(p: _Panels, drawn: _Drawn, solution, time_unit: str) -> None:
    """Markers on the time axis at every operation (one shape per kind)."""
    events = getattr(solution, "events", ())
    if not events:
        return
    factor = time_factor(time_unit)
    by_kind: dict[str, list[float]] = {}
    for e in events:
        by_kind.setdefault(e.action, []).append(e.time / factor)
    times = sorted({x for xs in by_kind.values() for x in xs})
    for ax in (p.lin, p.log):
        for action, xs in by_kind.items():
            ax.plot(
                xs,
                [0.0] * len(xs),
                marker=OPERATION_MARKS[action][0],
                ls="none",
                color="0.15",
                ms=7,
                clip_on=False,
                zorder=7,
                transform=ax.get_xaxis_transform(),
            )
        if len(times) <= OPERATION_LINES:
            for x in times:
                ax.axvline(x, color="0.6", linestyle=(0, (4, 3)), linewidth=0.6, zorder=0)
    drawn.operations = [a for a in OPERATION_MARKS if a in by_kind]


def _tight(fig: Figure) -> str | None:
    # constrained layout already fits a figure to its canvas; others are cropped to their content
    return None if fig.get_layout_engine() is not None else "tight"


def figure_bytes(fig: Figure, fmt: str = "png", dpi: int = 130) -> bytes:
    """The figure encoded as ``png`` or ``svg`` bytes."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=dpi, metadata=_metadata(fmt), bbox_inches=_tight(fig))
    return buffer.getvalue()


def _metadata(fmt: str) -> dict:
    if fmt == "png":
        return {"Software": f"kinetics {__version__}"}
    if fmt == "svg":
        return {"Creator": f"kinetics {__version__}", "Date": None}
    return {}


def save_figure(fig: Figure, path, dpi: int = 150) -> None:
    """Write a figure to ``path`` (format from its extension: .png or .svg), atomically."""
    fmt = Path(path).suffix.lower().lstrip(".")
    with files.atomic_path(path) as tmp:
        fig.savefig(tmp, format=fmt, dpi=dpi, metadata=_metadata(fmt), bbox_inches=_tight(fig))


def save_plot(
    path,
    solution: Solution,
    time_unit: str = "s",
    summary: dict | None = None,
    *,
    species: list[str] | None = None,
    linear: str = "auto",
) -> None:
    """Draw :func:`concentration_figure` and write it to ``path`` (.png or .svg), atomically."""
    fig = concentration_figure(solution, time_unit, summary, species=species, linear=linear)
    save_figure(fig, path)
