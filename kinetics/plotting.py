"""Plots of a solution and drawings of the species graph (matplotlib, imported lazily).

Figures are built with :class:`matplotlib.figure.Figure` and the Agg canvas
directly, never through ``pyplot``: no global state, no window, no display
needed, and importing :mod:`kinetics` does not import matplotlib.

Every curve has its own line style *and* marker shape as well as its own colour,
so that the plots stay readable when printed in black and white.
"""

from __future__ import annotations

import io
import math
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from .scheme import Scheme
    from .solution import Solution

__all__ = [
    "SPLIT_RATIO",
    "Label",
    "concentration_figure",
    "figure_bytes",
    "place_labels",
    "save_figure",
    "save_plot",
    "species_graph_figure",
    "split_by_height",
]

#: Line styles and markers, combined per curve (black-and-white readable).
LINE_STYLES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1, 1, 1)), (0, (8, 2)))
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<", ">", "h")
#: Columns of the species graph per band before the drawing turns back (long chains snake).
GRAPH_COLUMNS_PER_BAND = 6
#: Lower end of the log panel, relative to the largest concentration shown.
LOG_FLOOR = 1e-9


def _style(i: int) -> dict:
    from matplotlib import colormaps

    colours = colormaps["tab10"].colors
    return {
        "color": colours[i % len(colours)],
        "linestyle": LINE_STYLES[i % len(LINE_STYLES)],
        "marker": MARKERS[i % len(MARKERS)],
    }


def _new_figure(width: float, height: float, layout: str | None = "constrained") -> Figure:
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


#: A species whose peak is at least this many times the largest peak of all the others
#: is drawn against a right-hand axis of the linear panel (``linear="auto"``).
SPLIT_RATIO = 5.0
#: Labels: font size [pt], padding of their boxes [pt], gap to the point they mark [pt].
LABEL_SIZE = 8.0
_LABEL_PAD = 0.2 * LABEL_SIZE + 1.0
_LABEL_GAP = 8.0


def split_by_height(peaks: dict[str, float], ratio: float = SPLIT_RATIO) -> list[str]:
    """Species to draw on a right-hand axis: the few that stand above a gap of ``ratio`` or
    more between consecutive peak heights (largest first), when they are fewer than the
    species below the gap (which would otherwise be squashed); else none.

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
        ``{"time": ..., "height": ...}``, as :func:`kinetics.overview.summary_in_units`
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
        other and stay inside the linear panel (see :func:`place_labels`).
    """
    from .errors import UsageError
    from .solution import time_factor

    if linear not in ("auto", "shared"):
        raise UsageError(f"linear={linear!r} is not known", "use 'auto' or 'shared'")
    names = list(species) if species else list(solution.species)
    t = solution.times / time_factor(time_unit)
    t_end = float(t[-1]) if t.size else 0.0
    unit = solution.concentration_unit
    fig = _new_figure(11.0, 4.8)
    ax_lin, ax_log = fig.subplots(1, 2)
    peaks = {n: float(np.max(solution[n], initial=0.0)) for n in names}
    right = split_by_height(peaks) if linear == "auto" else []
    ax_right = ax_lin.twinx() if right else None
    n_points = t.size
    every = max(1, n_points // 9)
    notes: list[str] = []
    labels: list[Label] = []
    peak = 0.0
    positive_min = math.inf
    marked = {"maximum": False, "half-life": False}
    for i, name in enumerate(names):
        j = solution.species.index(name)
        c = solution.concentrations[:, j]
        style = _style(j)
        offset = (i * every) // max(1, len(names)) if every > 1 else 0
        kw = {
            "label": name + (" (right axis)" if name in right else ""),
            "linewidth": 1.8,
            "markersize": 5.5,
            "markevery": (offset, every),
            "markerfacecolor": "white" if i % 2 else style["color"],
            **style,
        }
        ax_this = ax_right if name in right else ax_lin
        ax_this.plot(t, c, **kw)
        positive = np.where(c > 0, c, np.nan)
        ax_log.plot(t, positive, **kw)
        if np.any(c > 0):
            peak = max(peak, float(np.nanmax(positive)))
            positive_min = min(positive_min, float(np.nanmin(positive)))
        half, maxima, species_notes = _marks(summary, name, t_end)
        notes.extend(species_notes)
        c0 = float(solution.concentrations[0, j])
        marked["maximum"] |= bool(maxima)
        marked["half-life"] |= half is not None and c0 > 0
        for ax in (ax_this, ax_log):
            if half is not None and c0 > 0:
                ax.plot([half], [c0 / 2], "o", ms=10, mfc="none", mec="black", mew=1.6, zorder=5)
                ax.axvline(half, color="0.45", linestyle=(0, (1, 2)), linewidth=0.9, zorder=1)
            for tm, cm in maxima:
                ax.plot([tm], [cm], "*", ms=13, color="black", mec="white", mew=0.6, zorder=6)
        if half is not None and c0 > 0:
            text = f"t½ {name} = {_fmt(half)} {time_unit}"
            labels.append(Label(text, ax_this, (half, c0 / 2), below=True))
        for tm, cm in maxima:
            text = f"max {name} = {_fmt(cm)} at {_fmt(tm)} {time_unit}"
            labels.append(Label(text, ax_this, (tm, cm), below=False))
    for ax in (ax_lin, ax_log):
        ax.set_xlabel(f"time [{time_unit}]")
        ax.set_ylabel(f"concentration [{unit}]")
        ax.grid(True, color="0.88", linewidth=0.7)
        ax.set_xlim(0, t_end if t_end > 0 else 1)
    ax_lin.set_ylim(bottom=0)
    if ax_right is not None:
        ax_right.set_ylim(bottom=0)
        ax_right.set_ylabel(f"{', '.join(right)} [{unit}] (right axis)")
        ax_lin.set_ylabel(f"other species [{unit}]")
    ax_lin.set_title("linear scale", fontsize=10)
    ax_log.set_yscale("log")
    if peak > 0:
        floor = max(positive_min, peak * LOG_FLOOR)
        ax_log.set_ylim(floor / 2, peak * 2)
    ax_log.set_title("logarithmic scale", fontsize=10)
    heading = title if title is not None else (solution.scheme.title or solution.scheme.source)
    if heading:  # the user's text, drawn as written ("$" starts no formula)
        fig.suptitle(heading, fontsize=12, parse_math=False)
    handles, legend = ax_lin.get_legend_handles_labels()
    if ax_right is not None:
        more = ax_right.get_legend_handles_labels()
        handles, legend = handles + more[0], legend + more[1]
        order = sorted(range(len(legend)), key=lambda k: names.index(legend[k].split(" (")[0]))
        handles, legend = [handles[k] for k in order], [legend[k] for k in order]
    from matplotlib.lines import Line2D

    if marked["maximum"]:
        handles.append(Line2D([], [], marker="*", ls="none", color="black", ms=11))
        legend.append("maximum")
    if marked["half-life"]:
        handles.append(Line2D([], [], marker="o", ls="none", mfc="none", mec="black", ms=9))
        legend.append("half-life")
    fig.legend(handles, legend, loc="outside lower center", ncol=min(len(legend), 8), fontsize=9)
    if notes:
        fig.text(0.01, 0.005, "; ".join(notes), fontsize=7, color="0.3", ha="left", va="bottom")
    place_labels(fig, ax_lin, labels)
    return fig


class Label:
    """A text to place near a point of an axes (data coordinates of that axes); ``below``
    prefers a place below the point (half-lives) to one above it (maxima)."""

    def __init__(self, text: str, ax, point: tuple[float, float], below: bool) -> None:
        self.text = text
        self.ax = ax
        self.point = point
        self.below = below


def _overlaps(a, b) -> bool:
    """Rectangles (x0, y0, x1, y1) share some area."""
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def place_labels(fig: Figure, ax, labels: list[Label]) -> list:
    """Place the labels so that no two overlap, none covers a marked point, and all stay
    inside the panel ``ax``; a label moved away from its point gets a leader line.

    The figure's layout is computed first and then frozen, so that the positions found in
    points (1/72 inch, independent of the resolution the figure is saved at) stay valid.
    Candidates per label, in order: beside the point (above or below, right or left), then
    stacked further up or down in steps of one label height, then the same in the other
    direction; the first free one is taken (labels are placed from left to right).

    Returns
    -------
    list of matplotlib.text.Annotation
    """
    if not labels:
        return []
    fig.draw_without_rendering()  # runs the layout engine once
    fig.set_layout_engine("none")
    renderer = fig.canvas.get_renderer()
    to_pt = 72.0 / fig.dpi
    box = ax.get_window_extent(renderer)
    frame = (box.x0 * to_pt, box.y0 * to_pt, box.x1 * to_pt, box.y1 * to_pt)
    # marked points (stars and circles) are obstacles of about their marker size
    taken = []
    for label in labels:
        x, y = label.ax.transData.transform(label.point) * to_pt
        taken.append((x - 6, y - 6, x + 6, y + 6))
    style = {"boxstyle": "round,pad=0.2", "fc": "white", "ec": "0.6", "alpha": 0.9}
    out = []
    order = sorted(labels, key=lambda lb: label_anchor(lb, to_pt)[0])
    for label in order:
        probe = fig.text(0, 0, label.text, fontsize=LABEL_SIZE)
        ext = probe.get_window_extent(renderer)
        probe.remove()
        w = ext.width * to_pt + 2 * _LABEL_PAD
        h = ext.height * to_pt + 2 * _LABEL_PAD
        x, y = label_anchor(label, to_pt)
        spot = _free_spot(x, y, w, h, label.below, frame, taken)
        dx, dy = spot[0] + _LABEL_PAD - x, spot[1] + _LABEL_PAD - y
        far = max(abs(dx + w / 2) - w / 2, abs(dy + h / 2) - h / 2) > 2 * _LABEL_GAP
        leader = {"arrowstyle": "-", "color": "0.45", "lw": 0.7, "shrinkB": 5}
        ann = label.ax.annotate(
            label.text,
            label.point,
            xytext=(dx, dy),
            textcoords="offset points",
            ha="left",
            va="bottom",
            fontsize=LABEL_SIZE,
            bbox=style,
            zorder=7,
            annotation_clip=False,
            arrowprops=leader if far else None,
        )
        ann.set_in_layout(False)
        taken.append((spot[0], spot[1], spot[0] + w, spot[1] + h))
        out.append(ann)
    return out


def label_anchor(label: Label, to_pt: float) -> tuple[float, float]:
    """The marked point of a label in figure points."""
    x, y = label.ax.transData.transform(label.point) * to_pt
    return float(x), float(y)


def _free_spot(x, y, w, h, below, frame, taken) -> tuple[float, float]:
    """Lower-left corner [pt] of the first free w x h box near (x, y) inside ``frame``."""
    g = _LABEL_GAP
    right, left = x + g, x - g - w
    up, down = y + g, y - g - h
    first = [(right, down), (left, down), (right, up), (left, up)]
    if not below:
        first = [(right, up), (left, up), (right, down), (left, down)]
    step = h + 2.0
    reach = int((frame[3] - frame[1]) / step) + 1
    stacks = [(xx, up + k * step) for k in range(1, reach) for xx in (right, left)]
    stacks += [(xx, down - k * step) for k in range(1, reach) for xx in (right, left)]
    # finally anywhere in the panel, scanning rows from the top
    cols = max(1, int((frame[2] - frame[0] - w) / 12.0))
    grid = [
        (frame[0] + 2 + c * 12.0, frame[3] - 2 - h - r * step)
        for r in range(reach)
        for c in range(cols + 1)
    ]
    for cx, cy in [*first, *stacks, *grid]:
        cx = min(max(cx, frame[0] + 2), frame[2] - 2 - w)
        rect = (cx, cy, cx + w, cy + h)
        inside = cy >= frame[1] + 2 and cy + h <= frame[3] - 2
        if inside and not any(_overlaps(rect, other) for other in taken):
            return cx, cy
    return min(max(right, frame[0] + 2), frame[2] - 2 - w), up  # no room: beside the point


def _layers(scheme: Scheme, graph) -> dict[str, int]:
    """Column of each species: shortest number of steps from where the material starts."""
    import networkx as nx

    nodes = list(graph.nodes)
    sources = [n for n in nodes if scheme.initial.get(n, 0) > 0 or n in scheme.feed]
    sources += [n for n in nodes if graph.in_degree(n) == 0 and n not in sources]
    layer: dict[str, int] = {}
    remaining = list(nodes)
    while remaining:
        start = [n for n in sources if n in remaining] or remaining[:1]
        dist = nx.multi_source_dijkstra_path_length(graph.subgraph(remaining), start, weight=None)
        for n, d in dist.items():
            layer[n] = int(d)
        remaining = [n for n in remaining if n not in layer]
        sources = [n for n in sources if n in remaining]
    return layer


def species_graph_figure(scheme: Scheme, *, max_species: int = 60) -> Figure | None:
    """A drawing of the species graph: one box per species, one arrow per step.

    Species are placed in columns by the smallest number of steps from a species
    with a start value or feed; arrows carry the constant names.  Species held in
    excess are drawn with dashed boxes.

    Parameters
    ----------
    scheme : Scheme
    max_species : int, optional
        Larger schemes are not drawn (``None`` is returned): the drawing would be unreadable.

    Returns
    -------
    matplotlib.figure.Figure or None
    """
    from matplotlib.patches import FancyArrowPatch

    from .network import species_graph

    graph = species_graph(scheme)
    matrix_edges = [(a, b, d) for a, b, d in graph.edges(data=True) if not d.get("co_reactant")]
    if graph.number_of_nodes() > max_species:
        return None
    import networkx as nx

    reaction_graph = nx.DiGraph()
    reaction_graph.add_nodes_from(graph.nodes)
    reaction_graph.add_edges_from((a, b) for a, b, _ in matrix_edges)
    layer = _layers(scheme, reaction_graph)
    columns: dict[int, list[str]] = {}
    for name in graph.nodes:
        columns.setdefault(layer[name], []).append(name)
    n_cols = max(columns) + 1
    # long schemes snake over several bands of PER_BAND columns (left to right, then back)
    per_band = min(n_cols, GRAPH_COLUMNS_PER_BAND)
    n_bands = -(-n_cols // per_band)
    rows_in_band = [
        max(len(columns.get(c, ())) for c in range(b * per_band, (b + 1) * per_band))
        for b in range(n_bands)
    ]
    centre = [0.0]
    for b in range(1, n_bands):  # each band below the previous one, 1.8 units apart at the rims
        centre.append(centre[-1] - 0.6 * (rows_in_band[b - 1] + rows_in_band[b]) - 1.2)
    pos = {}
    for col, members in columns.items():
        band, k = divmod(col, per_band)
        x = k if band % 2 == 0 else per_band - 1 - k
        for r, name in enumerate(members):
            pos[name] = (x * 2.4, 1.2 * ((len(members) - 1) / 2 - r) + centre[band])
    height = centre[0] - centre[-1] + 0.6 * (rows_in_band[0] + rows_in_band[-1]) + 1.4
    fig = _new_figure(2.4 * (per_band - 1) + 1.6, height, None)
    ax = fig.subplots()
    ax.set_axis_off()
    label_box = {"boxstyle": "round,pad=0.35", "fc": "white", "ec": "black", "lw": 1.3}
    texts = {}
    for name, (x, y) in pos.items():
        excess = graph.nodes[name]["excess"]
        box = dict(label_box, ls="--", fc="0.95") if excess else label_box
        texts[name] = ax.text(x, y, name, ha="center", va="center", fontsize=11, bbox=box, zorder=3)
    for a, b, data in graph.edges(data=True):
        co = bool(data.get("co_reactant"))
        if a == b:
            continue
        back = layer[b] <= layer[a] and not graph.has_edge(b, a)
        pair = graph.has_edge(b, a)
        rad = 0.0
        if pair:
            rad = 0.18
        elif back:
            rad = 0.45
        arrow = FancyArrowPatch(
            posA=pos[a],
            posB=pos[b],
            patchA=texts[a].get_bbox_patch(),
            patchB=texts[b].get_bbox_patch(),
            arrowstyle="-|>",
            mutation_scale=14,
            connectionstyle=f"arc3,rad={rad}",
            color="0.5" if co else "black",
            linestyle="--" if co else "-",
            linewidth=1.0 if co else 1.4,
            shrinkA=4,
            shrinkB=4,
            zorder=3.5,  # drawn after the boxes, whose outlines then clip the arrow
        )
        ax.add_patch(arrow)
        if data.get("constants"):
            (xa, ya), (xb, yb) = pos[a], pos[b]
            # midpoint of the quadratic Bezier curve drawn by arc3 (equal aspect: data = display)
            dx, dy = xb - xa, yb - ya
            mx = (xa + xb) / 2 + 0.5 * rad * dy
            my = (ya + yb) / 2 - 0.5 * rad * dx
            label = ", ".join(dict.fromkeys(data["constants"]))
            ax.text(
                mx,
                my,
                label,
                ha="center",
                va="center",
                fontsize=8.5,
                color="0.1",
                style="italic",
                bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none"},
                zorder=4,
            )
    xs = [p[0] for p in pos.values()]
    ys = [p[1] for p in pos.values()]
    for name in scheme.feed:
        x, y = pos[name]
        ax.annotate(
            "feed",
            xy=(x, y),
            xytext=(x - 0.7, y + 0.55),
            ha="center",
            fontsize=8.5,
            style="italic",
            arrowprops={
                "arrowstyle": "-|>",
                "color": "black",
                "lw": 1.2,
                "ls": ":",
                "patchB": texts[name].get_bbox_patch(),
                "shrinkB": 4,
            },
            zorder=3.5,
        )
    back_edges = [
        (a, b)
        for a, b, _ in matrix_edges
        if a != b and layer[b] <= layer[a] and not graph.has_edge(b, a)
    ]
    arcs = 0.6 if back_edges else 0.0
    ax.set_xlim(min(xs) - 0.8, max(xs) + 0.8)
    ax.set_ylim(min(ys) - 0.6 - arcs, max(ys) + 0.6 + arcs * 2)
    ax.set_aspect("equal")
    return fig


def _tight(fig: Figure) -> str | None:
    # constrained layout already fits a figure to its canvas; others are cropped to their content
    return None if fig.get_layout_engine() is not None else "tight"


def figure_bytes(fig: Figure, fmt: str = "png", dpi: int = 130) -> bytes:
    """The figure encoded as ``png`` or ``svg`` bytes."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=dpi, metadata=_metadata(fmt), bbox_inches=_tight(fig))
    return buffer.getvalue()


def _metadata(fmt: str) -> dict:
    from . import __version__

    if fmt == "png":
        return {"Software": f"kinetics {__version__}"}
    if fmt == "svg":
        return {"Creator": f"kinetics {__version__}", "Date": None}
    return {}


def save_figure(fig: Figure, path, dpi: int = 150) -> None:
    """Write a figure to ``path`` (format from its extension: .png or .svg), atomically."""
    from .export import atomic_path

    fmt = Path(path).suffix.lower().lstrip(".")
    with atomic_path(path) as tmp:
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
