"""A drawing of the species graph: one box per species, one arrow per step.

Drawn with matplotlib, imported lazily; no pyplot.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from kinetics.output.plotting import new_figure

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from kinetics.scheme import Scheme

__all__ = ["GRAPH_COLUMNS_PER_BAND", "species_graph_figure"]

#: Columns of the species graph per band before the drawing turns back (long chains snake).
GRAPH_COLUMNS_PER_BAND = 6


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


@dataclass(frozen=True)
class _Layout:
    """Place of each species [drawing units] and the size of the drawing."""

    pos: dict[str, tuple[float, float]]
    layer: dict[str, int]
    width: float
    height: float


def _layout(scheme: Scheme, graph, matrix_edges) -> _Layout:
    """Columns by the smallest number of steps from the start.

    Long schemes snake over several bands of :data:`GRAPH_COLUMNS_PER_BAND` columns (left
    to right, then back).
    """
    import networkx as nx

    reaction_graph = nx.DiGraph()
    reaction_graph.add_nodes_from(graph.nodes)
    reaction_graph.add_edges_from((a, b) for a, b, _ in matrix_edges)
    layer = _layers(scheme, reaction_graph)
    columns: dict[int, list[str]] = {}
    for name in graph.nodes:
        columns.setdefault(layer[name], []).append(name)
    n_cols = max(columns) + 1
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
    return _Layout(pos, layer, 2.4 * (per_band - 1) + 1.6, height)


def _boxes(ax, graph, pos) -> dict:
    """One text box per species (dashed for species held in excess)."""
    label_box = {"boxstyle": "round,pad=0.35", "fc": "white", "ec": "black", "lw": 1.3}
    texts = {}
    for name, (x, y) in pos.items():
        excess = graph.nodes[name]["excess"]
        box = dict(label_box, ls="--", fc="0.95") if excess else label_box
        texts[name] = ax.text(x, y, name, ha="center", va="center", fontsize=11, bbox=box, zorder=3)
    return texts


def _arrow(ax, graph, lay: _Layout, texts, a: str, b: str, data: dict) -> None:
    """The arrow of the steps from ``a`` to ``b``, labelled with their constants."""
    from matplotlib.patches import FancyArrowPatch

    pos, layer = lay.pos, lay.layer
    co = bool(data.get("co_reactant"))
    back = layer[b] <= layer[a] and not graph.has_edge(b, a)
    rad = 0.18 if graph.has_edge(b, a) else (0.45 if back else 0.0)
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


def _feeds(ax, scheme: Scheme, pos, texts) -> None:
    """A dotted arrow marked "feed" into each fed species."""
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
    from kinetics.network import species_graph

    graph = species_graph(scheme)
    matrix_edges = [(a, b, d) for a, b, d in graph.edges(data=True) if not d.get("co_reactant")]
    if graph.number_of_nodes() > max_species:
        return None
    lay = _layout(scheme, graph, matrix_edges)
    fig = new_figure(lay.width, lay.height, None)
    ax = fig.subplots()
    ax.set_axis_off()
    texts = _boxes(ax, graph, lay.pos)
    for a, b, data in graph.edges(data=True):
        if a != b:
            _arrow(ax, graph, lay, texts, a, b, data)
    _feeds(ax, scheme, lay.pos, texts)
    xs = [p[0] for p in lay.pos.values()]
    ys = [p[1] for p in lay.pos.values()]
    back_edges = [
        (a, b)
        for a, b, _ in matrix_edges
        if a != b and lay.layer[b] <= lay.layer[a] and not graph.has_edge(b, a)
    ]
    arcs = 0.6 if back_edges else 0.0
    ax.set_xlim(min(xs) - 0.8, max(xs) + 0.8)
    ax.set_ylim(min(ys) - 0.6 - arcs, max(ys) + 0.6 + arcs * 2)
    ax.set_aspect("equal")
    return fig
