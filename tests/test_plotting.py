"""Plots: two panels with units, black-and-white readable styles, maxima and half-lives marked."""

from __future__ import annotations

import math
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kinetics
from kinetics.analysis.solution_summary import compute_summary, summary_in_units
from kinetics.errors import SettingError
from kinetics.output import graph_figure, plotting
from kinetics.output.labels import Label, place_labels

# A -> B -> C, k1 = 0.1, k2 = 0.05 1/min, A0 = 1 mol/L.  Consecutive first-order reactions
# (any physical chemistry textbook): t_max = ln(k1/k2)/(k1 - k2) = 13.863 min, B_max = 0.5.
CHAIN = "title: Plot test\nA -> B  k1 = 0.1 1/min\nB -> C  k2 = 0.05 1/min\nstart A = 1 mol/L\n"
T_MAX = math.log(2) / 0.05  # ln(0.1/0.05)/(0.1-0.05) [min]
HALF_LIFE_A = math.log(2) / 0.1  # first-order half-life [min] (textbook)


@pytest.fixture(scope="module")
def solved():
    scheme = kinetics.parse(CHAIN)
    result = kinetics.solve(scheme, np.linspace(0.0, 3600.0, 121))
    summary = summary_in_units(compute_summary(result), "min")
    return scheme, result, summary


def _marker_points(ax, marker):
    points = []
    for line in ax.get_lines():
        if line.get_marker() == marker and line.get_linestyle() in ("None", "none", ""):
            x, y = line.get_data()
            points.extend(zip(np.atleast_1d(x), np.atleast_1d(y), strict=True))
    return points


def test_two_panels_with_units(solved):
    _, result, summary = solved
    fig = plotting.concentration_figure(result, "min", summary)
    ax_lin, ax_log = fig.axes
    for ax in (ax_lin, ax_log):
        assert ax.get_xlabel() == "time [min]"
        assert ax.get_ylabel() == "concentration [mol/L]"
    assert ax_lin.get_yscale() == "linear"
    assert ax_log.get_yscale() == "log"
    assert ax_lin.get_xlim() == pytest.approx((0.0, 60.0), rel=1e-12, abs=0)


def test_curves_differ_in_line_style_and_marker(solved):
    _, result, _ = solved
    fig = plotting.concentration_figure(result, "min")
    curves = [line for line in fig.axes[0].get_lines() if line.get_label() in result.species]
    assert [c.get_label() for c in curves] == ["A", "B", "C"]
    styles = {(str(c.get_linestyle()), c.get_marker()) for c in curves}
    assert len(styles) == 3  # each curve distinguishable without colour
    assert len({c.get_marker() for c in curves}) == 3
    assert len({str(c.get_linestyle()) for c in curves}) == 3


def test_maximum_and_half_life_are_marked_where_theory_puts_them(solved):
    _, result, summary = solved
    fig = plotting.concentration_figure(result, "min", summary)
    for ax in fig.axes:
        stars = _marker_points(ax, "*")
        assert len(stars) == 1
        t, c = stars[0]
        assert t == pytest.approx(T_MAX, rel=1e-9, abs=0)
        assert c == pytest.approx(0.5, rel=1e-9, abs=0)
        circles = _marker_points(ax, "o")
        assert len(circles) == 1
        t, c = circles[0]
        assert t == pytest.approx(HALF_LIFE_A, rel=1e-9, abs=0)
        assert c == pytest.approx(0.5, rel=0, abs=1e-15)
    labels = [t.get_text() for t in fig.axes[0].texts]
    assert any(s.startswith("max B = 0.5 at 13.86 min") for s in labels)
    assert any(s.startswith("t½ A = 6.931 min") for s in labels)
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend == ["A", "B", "C", "maximum", "half-life"]


def test_maximum_beyond_the_window_is_noted_not_drawn():
    scheme = kinetics.parse(CHAIN)
    result = kinetics.solve(scheme, np.linspace(0.0, 600.0, 21))  # 10 min < t_max
    summary = summary_in_units(compute_summary(result), "min")
    fig = plotting.concentration_figure(result, "min", summary)
    assert _marker_points(fig.axes[0], "*") == []
    notes = " ".join(t.get_text() for t in fig.texts)
    assert "maximum of B: 0.5 at 13.86 (beyond the window)" in notes


def test_species_selection(solved):
    _, result, summary = solved
    fig = plotting.concentration_figure(result, "h", summary, species=["B"])
    assert [
        line.get_label() for line in fig.axes[0].get_lines() if not line.get_label().startswith("_")
    ] == ["B"]
    assert fig.axes[0].get_xlabel() == "time [h]"


def test_png_and_svg_files(solved, tmp_path):
    from matplotlib.image import imread

    _, result, summary = solved
    png, svg = tmp_path / "c.png", tmp_path / "c.svg"
    plotting.save_plot(png, result, "min", summary)
    plotting.save_plot(svg, result, "min", summary)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    image = imread(png)
    assert image.shape[0] > 300
    assert image.shape[1] > 600
    root = ET.parse(svg).getroot()
    assert root.tag.endswith("svg")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.png", "c.svg"]


def test_species_graph_drawing():
    scheme = kinetics.parse(
        "A -> B  k1 = 1 1/s\nB <=> C  kf = 1 1/s, kr = 2 1/s\nC -> A  k3 = 0.5 1/s\n"
        "B + W -> D  k4 = 0.1 M-1 s-1\nexcess W = 2 mol/L\nstart A = 1 mol/L\n"
        "feed B = 0.1 mol/L/s\n"
    )
    fig = graph_figure.species_graph_figure(scheme)
    texts = [t.get_text() for t in fig.axes[0].texts]
    for name in ("A", "B", "C", "D", "W"):
        assert name in texts
    for constant in ("k1", "kf", "kr", "k3", "k4"):
        assert constant in texts
    assert "feed" in texts
    png = plotting.figure_bytes(fig, "png")
    assert png[:8] == b"\x89PNG\r\n\x1a\n"


def test_species_graph_too_large_is_not_drawn():
    lines = [f"S{i} -> S{i + 1}  k{i} = 1 1/s" for i in range(70)] + ["start S0 = 1 mol/L"]
    scheme = kinetics.parse("\n".join(lines))
    assert graph_figure.species_graph_figure(scheme, max_species=60) is None


def test_solution_plot_method(solved, tmp_path):
    _, result, summary = solved
    fig = result.plot(time_unit="min", summary=summary)
    assert len(fig.axes) == 2
    result.plot(tmp_path / "p.png", time_unit="min")
    assert (tmp_path / "p.png").read_bytes()[:4] == b"\x89PNG"


# ---------------------------------------------------------------------------------------
# Labels never overlap; a far larger species gets its own axis (issue 12)

CLOSE_MAXIMA = "\n".join(
    [f"A -> B{i}  ka{i} = 0.1 1/min" for i in range(1, 6)]
    + [f"B{i} -> C  kb{i} = {0.048 + 0.002 * i} 1/min" for i in range(1, 6)]
    + ["start A = 1 mol/L"]
)


def _figure(text_or_path, until_s, linear="auto"):
    from pathlib import Path

    if isinstance(text_or_path, Path):
        scheme = kinetics.load(text_or_path)
    else:
        scheme = kinetics.parse(text_or_path)
    result = kinetics.solve(scheme, np.linspace(0.0, until_s, 201))
    summary = summary_in_units(compute_summary(result), "min")
    return result, plotting.concentration_figure(result, "min", summary, linear=linear)


def _label_boxes(fig):
    """Window extents of the label boxes of the linear panel (and of its right axis)."""
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    boxes = []
    for ax in fig.axes:
        for text in ax.texts:
            boxes.append((text.get_text(), text.get_bbox_patch().get_window_extent(renderer)))
    return boxes


def _star_points(fig):
    pts = []
    for ax in fig.axes[:1] + fig.axes[2:]:
        for line in ax.get_lines():
            if line.get_marker() in ("*", "o") and line.get_linestyle() in ("None", "none"):
                xy = np.column_stack(line.get_data())
                pts.extend(ax.transData.transform(xy))
    return pts


@pytest.mark.parametrize("dpi", [100, 150])
@pytest.mark.parametrize("case", ["bundled water-sediment example", "five close maxima"])
def test_labels_never_overlap_and_stay_in_the_panel(case, dpi):
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    if case == "five close maxima":
        _, fig = _figure(CLOSE_MAXIMA, 5400.0)
    else:
        _, fig = _figure(root / "networks" / "parent_metabolites.scheme", 365 * 86400.0)
    fig.set_dpi(dpi)
    boxes = _label_boxes(fig)
    assert len(boxes) == (6 if case == "five close maxima" else 3)
    panel = fig.axes[0].get_window_extent(fig.canvas.get_renderer())
    for k, (name, a) in enumerate(boxes):
        assert panel.x0 <= a.x0, name
        assert a.x1 <= panel.x1, name
        assert panel.y0 <= a.y0, name
        assert a.y1 <= panel.y1, name
        for other, b in boxes[k + 1 :]:
            assert not a.overlaps(b), (name, other)
        for x, y in _star_points(fig):  # no label hides a marked point
            assert not a.contains(x, y), name


def test_lumped_end_product_gets_a_right_hand_axis():
    from pathlib import Path

    path = Path(__file__).resolve().parents[1] / "networks" / "parent_metabolites.scheme"
    _, fig = _figure(path, 365 * 86400.0)
    ax_lin, _, ax_right = fig.axes
    assert [ln.get_label() for ln in ax_right.get_lines() if ln.get_linestyle() != "None"] == [
        "CO2 (right axis)"
    ]
    left = {ln.get_label() for ln in ax_lin.get_lines()}
    assert {"P", "M1", "M2"} <= left
    assert "CO2" not in left
    assert ax_right.get_ylabel() == "CO2 [umol/L] (right axis)"
    assert ax_lin.get_ylabel() == "other species [umol/L]"
    # the metabolites fill the left axis instead of a tenth of it
    assert ax_lin.get_ylim()[1] < 15.0
    _, shared = _figure(path, 365 * 86400.0, linear="shared")
    assert len(shared.axes) == 2
    assert shared.axes[0].get_ylim()[1] > 90.0


def test_linear_option_is_checked(solved):
    _, result, _ = solved
    with pytest.raises(SettingError) as info:
        result.plot(linear="twin")
    assert str(info.value) == "linear='twin' is not known; use 'auto' or 'shared'"


@settings(max_examples=25, deadline=None)
@given(
    st.lists(
        st.tuples(st.floats(0.0, 1.0), st.floats(0.0, 1.0), st.booleans()),
        min_size=1,
        max_size=8,
    )
)
def test_label_layout_property(points):
    # any up to eight marked points in a panel: the labels never overlap and stay inside
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(11.0, 4.8), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.subplots()
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    labels = [
        Label(f"max S{k} = {y:.4g} at {x:.4g} min", ax, (x, y), below)
        for k, (x, y, below) in enumerate(points)
    ]
    place_labels(fig, ax, labels)
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    panel = ax.get_window_extent(renderer)
    boxes = [t.get_bbox_patch().get_window_extent(renderer) for t in ax.texts]
    for k, a in enumerate(boxes):
        assert panel.x0 <= a.x0
        assert a.x1 <= panel.x1
        assert panel.y0 <= a.y0
        assert a.y1 <= panel.y1
        for b in boxes[k + 1 :]:
            assert not a.overlaps(b)
