"""The plot of a sweep: one summary quantity against the varied parameters.

Drawn with matplotlib, imported lazily; no pyplot.
"""

from __future__ import annotations

import numpy as np

from kinetics.output.plotting import new_figure

__all__ = ["sweep_figure"]


def sweep_figure(plan, data, column: str, quantity: str):
    """A matplotlib figure of one summary quantity against the varied parameters.

    One grid axis: a line (Monte Carlo: the median with the 2.5-97.5 % band shaded).  Two
    grid axes: a heat map (Monte Carlo: of the median).  No grid axis (Monte Carlo only):
    the median with its 2.5-97.5 % band as one error bar.  Log-spaced axes are drawn on a
    log scale.

    Parameters
    ----------
    plan : SweepPlan
    data : pandas.DataFrame
        Grid columns and the plotted column(s).
    column : str
        The summary column, e.g. ``t_max B [min]``.
    quantity : str

    Returns
    -------
    matplotlib.figure.Figure
    """
    from kinetics.sweep import band_label

    mc = plan.samples > 0
    fig = new_figure(6.4, 4.4)
    ax = fig.add_subplot()
    value = band_label(column, 50.0) if mc else column
    axes = plan.parameters
    title = plan.scheme.title or plan.scheme.source
    if len(axes) == 1:
        p = axes[0]
        order = np.argsort(data[p.column].to_numpy())
        x = data[p.column].to_numpy()[order]
        y = data[value].to_numpy()[order]
        if mc:
            lo = data[band_label(column, 2.5)].to_numpy()[order]
            hi = data[band_label(column, 97.5)].to_numpy()[order]
            ax.fill_between(x, lo, hi, color="0.8", label="2.5-97.5 %")
            ax.plot(x, y, "k-o", ms=3, label="median")
            ax.legend(frameon=False)
        else:
            ax.plot(x, y, "k-o", ms=3)
        ax.set_xlabel(p.column)
        ax.set_ylabel(value if not mc else column + " (median)")
        if p.spacing == "log":
            ax.set_xscale("log")
    elif len(axes) == 2:
        p, q = axes
        nx, ny = p.values.size, q.values.size
        z = data[value].to_numpy().reshape(nx, ny)
        finite = z[np.isfinite(z)]
        norm = None
        if finite.size and finite.min() > 0 and finite.max() > 100 * finite.min():
            from matplotlib.colors import LogNorm

            norm = LogNorm(finite.min(), finite.max())
        if finite.size < z.size:
            ax.text(
                0.0,
                -0.16,
                "white cells: the quantity does not apply there",
                transform=ax.transAxes,
                fontsize=8,
                va="top",
            )
        mesh = ax.pcolormesh(
            _edges(q.values, q.spacing),
            _edges(p.values, p.spacing),
            z,
            cmap="cividis",
            shading="flat",
            norm=norm,
        )
        cbar = fig.colorbar(mesh, ax=ax)
        cbar.set_label(value)
        ax.set_xlabel(q.column)
        ax.set_ylabel(p.column)
        if q.spacing == "log":
            ax.set_xscale("log")
        if p.spacing == "log":
            ax.set_yscale("log")
    else:
        y = float(data[value].iloc[0])
        lo = float(data[band_label(column, 2.5)].iloc[0])
        hi = float(data[band_label(column, 97.5)].iloc[0])
        ax.errorbar([0], [y], yerr=[[y - lo], [hi - y]], fmt="ko", capsize=6)
        ax.set_xticks([0], ["median, 2.5-97.5 %"])
        ax.set_ylabel(column)
    ax.set_title(title, fontsize=10, parse_math=False)  # the user's text, drawn as written
    return fig


def _edges(values, spacing: str):
    """Cell edges around grid values (geometric midpoints on a log axis)."""
    import numpy as np

    v = np.asarray(values, dtype=float)
    if v.size == 1:
        return np.array([v[0] * 0.9, v[0] * 1.1]) if v[0] else np.array([-0.5, 0.5])
    if spacing == "log" and np.all(v > 0):
        lv = np.log(v)
        mid = (lv[1:] + lv[:-1]) / 2
        return np.exp(np.concatenate([[2 * lv[0] - mid[0]], mid, [2 * lv[-1] - mid[-1]]]))
    mid = (v[1:] + v[:-1]) / 2
    return np.concatenate([[2 * v[0] - mid[0]], mid, [2 * v[-1] - mid[-1]]])
