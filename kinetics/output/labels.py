"""Labels of marked points that never overlap, always inside their panel.

Each label stands beside its point when there is room, else it is moved away with a
leader line.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["LABEL_SIZE", "Label", "label_anchor", "place_labels"]

#: Labels: font size [pt], padding of their boxes [pt], gap to the point they mark [pt].
LABEL_SIZE = 8.0
_LABEL_PAD = 0.2 * LABEL_SIZE + 1.0
_LABEL_GAP = 8.0


class Label:
    """A text to place near a point of an axes (data coordinates of that axes).

    ``below`` prefers a place below the point (half-lives) to one above it (maxima).
    """

    def __init__(self, text: str, ax, point: tuple[float, float], below: bool) -> None:
        self.text = text
        self.ax = ax
        self.point = point
        self.below = below


def _overlaps(a, b) -> bool:
    """Rectangles (x0, y0, x1, y1) share some area."""
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def place_labels(fig: Figure, ax, labels: list[Label]) -> list:
    """Place the labels inside the panel ``ax`` so that no two overlap nor cover a point.

    No label covers a marked point; a label moved away from its point gets a leader line.

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
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = fig.canvas
    assert isinstance(canvas, FigureCanvasAgg)  # every figure is made by new_figure
    renderer = canvas.get_renderer()
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
