r"""The summary quantities of a run with operations, on its exact piecewise solution.

A run with additions, removals, temperature changes or feed windows is a chain of
stretches of constant conditions (:class:`kinetics.timeline_solve.Stretch`).  Its summary
keeps the keys of :func:`kinetics.analysis.summarise_all` and reads each quantity on the
whole run:

* **maxima** are searched inside every stretch (turning points of its exact curve) and at
  every operation: a species that rises into a removal has its maximum *just before* it,
  one that falls after an addition *just after* it (``maxima[*]["at_operation"]``);
* **times to a fraction of the start value** (half-life, 90 % and 10 % left) are the
  first crossings of the level over the run (an operation that takes the species below
  the level is the crossing); they lose their meaning for a species that material is
  added to after time 0, and are empty with a note;
* the **long-time limit**, its kind, the time to the limit, lifetimes and relaxation
  times refer to the conditions after the last operation (the last stretch, continued
  without end);
* areas add up stretch by stretch; the mean residence time and the yield at the maximum
  lose their meaning once operations move material, and are empty with a note;
* amounts formed of end products count what was removed and not what was added
  (:math:`\Delta c_P + \text{removed} - \text{added}`); in a run with volumes they are
  empty (dilution changes concentrations without forming anything).

Every stretch is surveyed like a run of its own (a few dozen exact exponentials); runs
of more than :data:`MAX_STRETCHES` stretches get the quantities of the last stretch, the
limits and the areas, with a note.

The ``require`` lines of the scheme (:func:`run_requirements`) are evaluated on the same
stretches: exact roots inside each, and a requirement broken *by* an operation at the
time of that operation; after the last operation the final conditions are continued
without end.  Runs of more than :data:`MAX_STRETCHES` stretches (and the sub-steps of a
ramp) search a stretch only where its ends lie on different sides of a level or its
slope changes sign, with a note.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from kinetics.analysis.areas import areas_to
from kinetics.analysis.crossings import fraction_times
from kinetics.analysis.problem import Problem
from kinetics.analysis.requirements import RequirementTimes, RunPieces, requirements_on_run
from kinetics.analysis.summary import summarise_all
from kinetics.analysis.survey import Survey
from kinetics.time_text import TimedText, joined

if TYPE_CHECKING:
    from kinetics.solution import Solution

__all__ = [
    "MAX_STRETCHES",
    "REQUIREMENTS_SCREENED_NOTE",
    "Run",
    "run_requirements",
    "summarise_run",
]

#: Most stretches whose maxima and crossings are searched one by one.
MAX_STRETCHES = 500
_FRACTIONS = {
    0.5: "half_life",
    0.9: "time_to_90_percent_remaining",
    0.1: "time_to_10_percent_remaining",
}


def summarise_run(
    solution: Solution, tolerance: float = 0.01, *, run: Run | None = None
) -> tuple[dict, dict]:
    r"""Per-species and whole-scheme summary of a run with operations.

    In seconds and the scheme's concentration unit, with the keys of
    :func:`kinetics.analysis.summarise_all`.

    Parameters
    ----------
    solution : Solution
        A solution of a scheme with operations (``solution.stretches`` set), in the
        scheme's unit.
    tolerance : float
        Of the time to the limit.
    run : Run, optional
        The surveys of the stretches, shared with :func:`run_requirements` (built here
        when not given).

    Returns
    -------
    (dict of str to dict, dict)

    Examples
    --------
    A second portion at 1 h of a species that only decays (k = 1 1/h): its half-life is
    empty, with a note; the maximum of the intermediate B sits just before a removal:

    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = 1 1/h\nB -> C  k2 = 0.01 1/h\nstart A = 1 M\n"
    ...                    "at 1 h: add A = 1 M\nat 2 h: remove 100 % of B")
    >>> per, whole = summarise_run(kinetics.solve(s, [0.0, 3 * 3600.0]))
    >>> per["A"]["half_life"] is None, per["B"]["maxima"][0]["at_operation"]
    (True, 'just before')
    """
    names = solution.species
    end = float(solution.times[-1])
    last = _final_state(solution, end)
    per, whole = summarise_all(
        last["K"],
        last["c"],
        names,
        feed=last["feed"],
        t_window=max(end - last["time"], 0.0) or None,
        tolerance=tolerance,
        K_low=last["K_low"],
    )
    out = {name: per[name].to_dict() for name in names}
    scheme_wide = whole.to_dict()
    moved = _moved(solution, names)
    run = Run(solution) if run is None else run
    searched = run.searched()
    areas = run.areas()
    before = len(areas) - (1 if areas and last["time"] < end else 0)
    c0 = solution.scheme.initial_vector
    for j, name in enumerate(names):
        entry = out[name]
        notes = [n for n in entry["notes"] if "beyond the chosen time window" not in n]
        entry["start"] = float(c0[j])
        if entry.get("time_to_limit") is not None:
            entry["time_to_limit"] += last["time"]
        if searched:
            _maxima(entry, run, j)
            _crossings(entry, run, j, moved, notes)
        else:
            for key in (*_FRACTIONS.values(), "t_max", "c_max"):
                entry[key] = None
            entry["maxima"] = []
            notes.append(
                f"maxima and times to a fraction of the start value are searched for runs of "
                f"up to {MAX_STRETCHES} stretches; this run has {len(solution.stretches):,}"
            )
        _areas(entry, areas, j, before)
        entry["mean_residence_time"] = None
        if moved["any"]:
            entry["yield_at_max"] = None
        entry["notes"] = notes
    _whole(scheme_wide, solution, moved, last)
    if solution.scheme.requirements and run.screened():
        scheme_wide["timeline_note"] += "; " + REQUIREMENTS_SCREENED_NOTE
    return out, scheme_wide


def _final_state(solution: Solution, end: float) -> dict:
    """The conditions after the last operation.

    Those of the last stretch, with the operations at the end of the window applied.
    """
    stretches = solution.stretches
    scheme = solution.scheme
    feed0 = scheme.feed_vector if scheme.feed else None
    if not stretches:
        Kh, Kl = scheme.rate_matrix_pair()
        c = solution.concentrations[-1]
        return {"time": 0.0, "c": c, "K": Kh, "K_low": Kl, "feed": feed0}
    s = stretches[-1]
    K, K_low, feed = s.K, s.K_low, s.feed
    c, time = s.start_values, s.start
    if any(e.time == end for e in solution.events):
        c, time = solution.concentrations[-1], end  # conditions change at the window's end
    steps = [e for e in solution.events if e.action == "temperature" and e.time == end]
    if steps and steps[-1].value is not None:
        K, K_low = scheme.with_values(temperature=steps[-1].value).rate_matrix_pair()
    ended = [e for e in solution.events if e.action == "feed off" and e.time == end]
    if ended and feed is not None:
        feed = feed.copy()
        for e in ended:
            if e.species is not None and e.value is not None:  # a feed names both
                i = scheme.index[e.species]
                feed[i] = max(feed[i] - e.value, 0.0)
        feed = feed if feed.any() else None
    return {"time": time, "c": c, "K": K, "K_low": K_low, "feed": feed}


def _moved(solution: Solution, names) -> dict:
    """Added and removed amounts per species, who gets material after time 0, volumes."""
    added = dict.fromkeys(names, 0.0)
    removed = dict.fromkeys(names, 0.0)
    first_in: dict[str, float] = {}
    volumes = False
    for e in solution.events:
        volumes |= e.volume is not None and e.action == "add"
        if e.species is None:
            continue
        if e.action == "add":
            added[e.species] += e.change
        elif e.action == "remove":
            removed[e.species] -= e.change
        if e.action == "feed on" or (e.action == "add" and e.change > 0):
            first_in.setdefault(e.species, e.time)
    moving = any(e.action in ("add", "remove") for e in solution.events)
    return {"added": added, "removed": removed, "in": first_in, "volumes": volumes, "any": moving}


class Run:
    """The stretches of a run, surveyed when a quantity needs it (each at most once).

    Parameters
    ----------
    solution : Solution
        A solution of a scheme with operations, in the scheme's unit.
    """

    def __init__(self, solution: Solution) -> None:
        self.stretches = solution.stretches
        self.names = solution.species
        self.end = float(solution.times[-1])
        self._surveys: dict[int, Survey | None] = {}

    def screened(self) -> bool:
        """Whether some stretches are searched for requirements only where they may cross.

        See :data:`REQUIREMENTS_SCREENED_NOTE`.
        """
        return any(s.ramp for s in self.stretches) or not self.searched()

    def searched(self) -> bool:
        """Whether every stretch is searched in full (few enough stretches).

        At most :data:`MAX_STRETCHES` stretches, the sub-steps of ramps not counted.
        """
        return sum(not s.ramp for s in self.stretches) <= MAX_STRETCHES

    def length(self, k: int) -> float:
        """[s] The length of stretch ``k`` (the last one: to the end of the window)."""
        s = self.stretches[k]
        return (self.end if k == len(self.stretches) - 1 else s.end) - s.start

    def problem(self, k: int, window: bool = True) -> Problem:
        """Stretch ``k`` as a problem of its own from its start (time 0 at its start)."""
        s = self.stretches[k]
        h = self.length(k) if window else None
        return Problem(s.K, s.start_values, s.feed, names=self.names, t_window=h, K_low=s.K_low)

    def survey(self, k: int) -> Survey | None:
        """The survey of stretch ``k`` (None for a stretch of no length)."""
        if k not in self._surveys:
            self._surveys[k] = Survey.of(self.problem(k)) if self.length(k) > 0 else None
        return self._surveys[k]

    def turns_inside(self, k: int, j: int) -> bool:
        """Whether stretch ``k`` may hold a maximum of species ``j``.

        Always outside ramps (surveyed); inside a ramp when the slope turns from rising to
        falling.
        """
        s = self.stretches[k]
        if not s.ramp:
            return True
        return _slope(s, s.start_values)[j] > 0 >= _slope(s, s.end_values)[j]

    def areas(self) -> list[np.ndarray]:
        """The area of every species over every stretch [conc*s]."""
        out = []
        for k in range(len(self.stretches)):
            h = self.length(k)
            if h > 0:
                out.append(areas_to(self.problem(k, window=False), np.array([h]))[0])
            else:
                out.append(np.zeros(len(self.names)))
        return out


#: The note of a run whose requirements were searched only where a stretch may cross.
REQUIREMENTS_SCREENED_NOTE = (
    "the requirements are searched inside a stretch only where its ends lie on different "
    f"sides of a level or its slope changes sign (in runs of more than {MAX_STRETCHES} "
    "stretches, and on the sub-steps of temperature ramps); an excursion beyond a level "
    "and back inside one such stretch is not seen"
)


def run_requirements(solution: Solution, *, run: Run | None = None) -> RequirementTimes:
    r"""The ``require`` lines of a run with operations, on its exact piecewise solution.

    When each requirement is first broken (at an operation when the operation breaks it)
    and the windows in which all hold together, as
    :func:`kinetics.analysis.requirements.requirements_on_run` finds them on the
    stretches of the run, followed by the conditions after the last operation.

    Parameters
    ----------
    solution : Solution
        A solution of a scheme with operations, in the scheme's unit.
    run : Run, optional
        The surveys of the stretches, shared with :func:`summarise_run`.

    Returns
    -------
    RequirementTimes
        Times [s].

    Examples
    --------
    A -> B (k = 1 1/h) with ``require B <= 0.5 M`` is broken at ln 2 h without
    operations (closed form B = 1 - e^{-kt}); an addition of 0.3 M of B at 0.5 h
    (B = 0.3935 + 0.3 > 0.5) breaks it at once:

    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = 1 1/h\nstart A = 1 M\nrequire B <= 0.5 M\n"
    ...                    "at 0.5 h: add B = 0.3 M")
    >>> (t,) = run_requirements(kinetics.solve(s, [0.0, 3600.0])).times
    >>> t.first_broken, t.by_operation
    (1800.0, True)
    """
    run = Run(solution) if run is None else run
    return requirements_on_run(
        _pieces(solution, run),
        solution.scheme.requirements,
        solution.species,
        t_window=run.end,
    )


def _pieces(solution: Solution, run: Run) -> RunPieces:
    """The stretches of the run as the pieces of :func:`requirements_on_run`.

    After operations at the window's end, the final conditions are one more piece,
    continued without end.
    """
    stretches = run.stretches
    c0 = solution.scheme.initial_vector
    last = _final_state(solution, run.end)
    final = None
    if not stretches or last["time"] >= run.end > stretches[-1].start:
        final = Problem(last["K"], last["c"], last["feed"], names=run.names, K_low=last["K_low"])
    starts = [s.start for s in stretches]
    after = [s.start_values for s in stretches]
    ends = [s.end_values for s in stretches]
    if final is not None:
        starts.append(last["time"])
        after.append(last["c"])
        ends.append(last["c"])
    before = ([c0] + [s.end_values for s in stretches])[: len(starts)]
    few = run.searched()
    surveyed: dict[int, Survey | None] = {}

    def survey(k: int) -> Survey | None:
        if k < len(stretches):
            return run.survey(k)
        if k not in surveyed and final is not None:
            surveyed[k] = Survey.of(final)
        return surveyed.get(k)

    def searched(k: int, j: int) -> bool:
        if k >= len(stretches) or (few and not stretches[k].ramp):
            return True
        s = stretches[k]
        return bool(np.sign(_slope(s, s.start_values)[j]) != np.sign(_slope(s, s.end_values)[j]))

    return RunPieces(
        np.array(starts, dtype=float),
        np.array(before),
        np.array(after),
        np.array(ends),
        survey,
        searched,
    )


def _slope(stretch, c) -> np.ndarray:
    """dc/dt = K c + f of a stretch at concentrations ``c`` [conc/s]."""
    d = stretch.K @ c + stretch.K_low @ c
    return d if stretch.feed is None else d + stretch.feed


def _maxima(entry: dict, run: Run, j: int) -> None:
    """Local maxima inside the stretches and at every operation.

    The highest is global when it reaches the start value and the limit.
    """
    found = []
    stretches = run.stretches
    for k, s in enumerate(stretches):
        last = k == len(stretches) - 1
        if not run.turns_inside(k, j) or (survey := run.survey(k)) is None:
            continue
        for m in survey.maxima(j):
            t = s.start + m.time
            if t <= s.end or last:
                found.append(_at(t, m.height, None, beyond=t > run.end))
    found += _jump_maxima(run, j)
    found.sort(key=lambda m: m["time"])
    ceiling = max(entry["start"], entry["limit"] if entry["limit"] is not None else 0.0)
    top = max(found, key=lambda m: m["height"], default=None)
    entry["t_max"] = entry["c_max"] = None
    entry["t_max_beyond_window"] = False
    if top is not None and top["height"] >= ceiling * (1 - 1e-12):
        top["global"] = True
        entry["t_max"], entry["c_max"] = top["time"], top["height"]
        entry["t_max_beyond_window"] = top["beyond_window"]
    entry["maxima"] = found


def _jump_maxima(run: Run, j: int) -> list[dict]:
    """Maxima at operations.

    Rising into a drop (just before), falling after a rise (just after).
    """
    out = []
    stretches = run.stretches
    for k in range(len(stretches) - 1):
        a, b = stretches[k], stretches[k + 1]
        before, after = a.end_values[j], b.start_values[j]
        if before > after and _slope(a, a.end_values)[j] > 0:
            out.append(_at(a.end, before, "just before"))
        elif after > before and _slope(b, b.start_values)[j] < 0:
            out.append(_at(a.end, after, "just after"))
    return out


def _at(time: float, height: float, where: str | None, beyond: bool = False) -> dict:
    return {
        "time": float(time),
        "height": float(height),
        "beyond_window": bool(beyond),
        "global": False,
        "at_operation": where,
    }


def _crossings(entry: dict, run: Run, j: int, moved: dict, notes: list) -> None:
    """First times the species falls to 50, 90 and 10 % of its start value over the run."""
    name = run.names[j]
    c0 = entry["start"]
    for key in _FRACTIONS.values():
        entry[key] = None
    if name in moved["in"]:
        entry["half_life_note"] = TimedText(
            f"material of {name} is added after time 0 (from ",
            moved["in"][name],
            " on), so a time to fall to a fraction of its start value loses its meaning",
        )
        notes.append(entry["half_life_note"])
        return
    if not c0 > 0:
        entry["half_life_note"] = f"{name} starts at zero, so a fraction of its start is undefined"
        return
    for phi, key in _FRACTIONS.items():
        entry[key] = _first_time_at(run, j, phi * c0)
    if entry["half_life"] is not None:
        entry["half_life_note"] = None


def _first_time_at(run: Run, j: int, level: float) -> float | None:
    """First time [s] species ``j`` falls to ``level`` over the run (None: it does not)."""
    stretches = run.stretches
    for k, s in enumerate(stretches):
        start = s.start_values[j]
        if start <= level:
            return s.start  # an operation took it below the level
        last = k == len(stretches) - 1
        if s.ramp and not last and s.end_values[j] > level:
            continue  # a short ramp sub-step that ends above the level
        survey = run.survey(k)
        if survey is None:
            continue
        (found,) = fraction_times(survey, [(j, level / start)])
        if found.time is not None and (s.start + found.time <= s.end or last):
            return s.start + found.time
    return None


def _areas(entry: dict, areas: list, j: int, before: int) -> None:
    """Area to the end of the window, and to infinity.

    To infinity: the area of the ``before`` stretches ahead of the final state plus its
    own area to infinity.
    """
    entry["area_to_window_end"] = float(sum(a[j] for a in areas))
    tail = entry.get("area_to_infinity")
    if tail is not None and math.isfinite(tail):
        entry["area_to_infinity"] = float(sum(a[j] for a in areas[:before])) + tail


def _whole(scheme_wide: dict, solution: Solution, moved: dict, last: dict) -> None:
    """Times from time 0, amounts formed over the run, and the note on the conditions."""
    if scheme_wide.get("time_to_limit") is not None:
        scheme_wide["time_to_limit"] += last["time"]
    after_last = TimedText(
        "the long-time limit, the time to it, lifetimes and relaxation "
        "times refer to the conditions after the last operation (from ",
        last["time"],
        " on, continued without end)",
    )
    note = joined("; ", [after_last, *solution.notes])
    names = solution.species
    c0 = dict(zip(names, solution.scheme.initial_vector.tolist(), strict=True))
    start = dict(zip(names, last["c"].tolist(), strict=True))
    final = dict(zip(names, solution.concentrations[-1].tolist(), strict=True))
    products = scheme_wide.get("end_products") or []

    def net(p: str) -> float:  # formed by the reactions before the final state
        return start[p] - c0[p] + moved["removed"][p] - moved["added"][p]

    limit = scheme_wide.get("amount_formed_in_limit") or {}
    formed = {
        "at_window_end": {p: final[p] - start[p] + net(p) for p in products} or None,
        "in_limit": {p: limit[p] + net(p) for p in products if limit.get(p) is not None} or None,
    }
    if moved["volumes"]:
        formed = {"at_window_end": None, "in_limit": None}
        note += (
            "; amounts formed are not given in a run with volumes (a dilution changes every "
            "concentration without forming anything)"
        )
    for where, amounts in formed.items():
        total = sum((amounts or {}).values())
        scheme_wide[f"amount_formed_{where}"] = amounts
        scheme_wide[f"selectivity_{where}"] = (
            {p: v / total for p, v in amounts.items()} if amounts and total > 0 else None
        )
        scheme_wide[f"selectivity_ratios_{where}"] = _ratios(amounts)
    scheme_wide["timeline_note"] = note


def _ratios(formed: dict | None) -> dict | None:
    if not formed:
        return None
    names = list(formed)
    return {
        f"{p}/{q}": formed[p] / formed[q] if formed[q] else None
        for k, p in enumerate(names)
        for q in names[k + 1 :]
    }
