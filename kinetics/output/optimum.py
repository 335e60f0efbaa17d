"""What ``kinetics optimise`` reports: the JSON object, the terminal lines and a figure.

The figure shows the target over the settings with the feasible region shaded.  Pure: no
printing, no files; matplotlib is imported lazily.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from kinetics._version import __version__
from kinetics.time_text import shown_time

if TYPE_CHECKING:
    from kinetics.optimise import Optimum
    from kinetics.scheme import Scheme

__all__ = ["optimum_figure", "optimum_json", "optimum_lines"]


def optimum_json(optimum: Optimum, scheme: Scheme) -> dict:
    """The ``optimise --json`` object.

    Keys: ``source``, ``title``, ``software``, then those of
    :meth:`kinetics.optimise.Optimum.to_dict`: ``best`` (setting -> ``value`` and
    ``unit``), ``objective`` (the target at the optimum) with ``objective_unit``,
    ``active_requirements`` (their texts), ``feasible``, ``requirements``,
    ``flat_within_1_percent``, ``bounds``, ``target``, ``evaluations``, ``notes``, and
    ``sensitivity`` when it was asked for.
    """
    return {
        "source": scheme.source,
        "title": scheme.title,
        "software": f"kinetics {__version__}",
        **optimum.to_dict(),
    }


def _target_words(optimum: Optimum) -> str:
    g = optimum.goal
    what = f"the yield of {g.species}" if g.yield_basis else g.species
    if g.activity:
        what = f"the activity of {g.species}"
    if g.best_time:
        time = next(s for s in optimum.settings if s.kind == "time")
        return f"{g.sense} {what} at its best time up to {time.high:.6g} {time.unit}"
    if any(s.kind == "time" for s in optimum.settings):
        return f"{g.sense} {what} at the end time"
    assert g.end is not None  # without a time setting the target is read at --until
    return f"{g.sense} {what} at the end time ({shown_time(g.end, g.time_unit)})"


def optimum_lines(optimum: Optimum) -> list[tuple[str, str]]:
    r"""The optimum as (label, text) pairs.

    The pairs are the target, each setting with its flat range, the target's value, each
    requirement, and the model evaluations.

    Examples
    --------
    >>> import kinetics
    >>> from kinetics.optimise import optimise
    >>> s = kinetics.parse("A -> B  k1 = 0.3 1/s\nB -> C  k2 = 0.1 1/s\nstart A = 1 mol/L")
    >>> for label, text in optimum_lines(optimise(s, "B", "time=0:30:s"))[:3]:
    ...     print(f"{label}: {text}")
    target: maximise B at the end time
    time [s]: 5.49306 (within 1 % of the best from 4.71813 to 6.35736)
    B at the optimum [mol/L]: 0.57735
    """
    lines = [("target", _target_words(optimum))]
    flat = optimum.to_dict()["flat_within_1_percent"]
    for s, v in zip(optimum.settings, optimum.x, strict=True):
        f = flat[s.name]
        text = f"{s.shown(v):.6g}"
        if optimum.feasible:
            text += f" (within 1 % of the best from {f['low']:.6g} to {f['high']:.6g})"
        lines.append((s.label, text))
    what = f"yield of {optimum.goal.species}" if optimum.goal.yield_basis else optimum.goal.species
    if optimum.goal.activity:
        what = f"activity of {optimum.goal.species}"
    lines.append((f"{what} at the optimum [{optimum.unit}]", f"{optimum.objective:.6g}"))
    for r in optimum.requirements:
        state = "active (at its limit)" if r["active"] else "holds"
        if r["margin"] < 0 and not r["active"]:
            state = "broken"
        lines.append(
            (f"require {r['text']}", f"{r['value']:.6g} (limit {r['threshold']:.6g}), {state}")
        )
    c = optimum.counts
    starts = c.get("starts", 0)
    lines.append(
        (
            "model evaluations",
            f"grid {c.get('grid', 0)}, local {c.get('local', 0)} ({c.get('with_gradient', 0)} "
            f"with exact derivatives, {starts} start{'' if starts == 1 else 's'}), flat "
            f"ranges {c.get('flatness', 0)}",
        )
    )
    lines.extend(("note", note) for note in optimum.notes)
    lines.extend(_hinges(optimum))
    return lines


def _hinges(optimum: Optimum, count: int = 5) -> list[tuple[str, str]]:
    """The parameters the target at the optimum hinges on most (d ln target / d ln p)."""
    if optimum.sensitivity is None:
        return []
    values = [(p, v) for p, v in optimum.sensitivity["objective"].items() if v is not None]
    values.sort(key=lambda pv: -abs(pv[1]))
    shown = ", ".join(f"{p} {v:+.3g}" for p, v in values[:count])
    return [("the optimum hinges on (d ln target / d ln p)", shown or "nothing computed")]


def optimum_figure(optimum: Optimum, axes, target, margin, title: str = ""):
    """The target over one or two settings (the others at the optimum), optimum marked.

    The region where a requirement is broken is shaded.

    Parameters
    ----------
    optimum : Optimum
    axes, target, margin
        From :func:`kinetics.optimise.landscape` (``margin`` < 0 where a requirement is
        broken).
    title : str

    Returns
    -------
    matplotlib.figure.Figure
    """
    from kinetics.output.plotting import new_figure

    fig = new_figure(6.4, 4.4)
    ax = fig.add_subplot()
    settings = optimum.settings
    best = optimum.best
    what = optimum.goal.species + (" (yield)" if optimum.goal.yield_basis else "")
    label = f"{what} [{optimum.unit}]"
    if len(axes) == 1:
        x = axes[0]
        ax.plot(x, target, "k-", lw=1.2)
        broken = np.asarray(margin) < 0
        if broken.any():
            ax.fill_between(
                x, 0, 1, where=broken, color="0.85", transform=ax.get_xaxis_transform(),
                label="a requirement is broken",
            )  # fmt: skip
            ax.legend(frameon=False, loc="best")
        ax.plot([best[settings[0].name]], [optimum.objective], "o", color="C3", ms=6)
        ax.set_xlabel(settings[0].label)
        ax.set_ylabel(label)
    else:
        x, y = axes
        mesh = ax.pcolormesh(y, x, target, cmap="cividis", shading="nearest")
        cbar = fig.colorbar(mesh, ax=ax)
        cbar.set_label(label)
        m = np.where(np.isfinite(margin), margin, 1.0)
        if (m < 0).any():
            low = float(m.min())
            ax.contourf(y, x, m, levels=[low - 1.0, 0.0], colors="none", hatches=["///"])
            ax.contour(y, x, m, levels=[0.0], colors="white", linewidths=1.0)
            ax.text(
                0.0, -0.16, "hatched: a requirement is broken", transform=ax.transAxes,
                fontsize=8, va="top",
            )  # fmt: skip
        ax.plot([best[settings[1].name]], [best[settings[0].name]], "o", color="C3", ms=7)
        ax.set_xlabel(settings[1].label)
        ax.set_ylabel(settings[0].label)
    ax.set_title(title, fontsize=10, parse_math=False)  # the user's text, drawn as written
    return fig
