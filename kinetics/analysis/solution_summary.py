"""The summary quantities of a solved scheme, as JSON-ready mappings in its units.

:func:`compute_summary` runs :func:`kinetics.analysis.summarise_all` on the scheme of a
:class:`~kinetics.solution.Solution` over its time window and reports concentrations in
the solution's unit; :func:`summary_in_units` converts every time from seconds to the
unit the user reads.  A scheme with ``require`` lines also gets when each is first broken
and when all hold together (:mod:`kinetics.analysis.requirements`).
``Solution.summary``, ``solve --json``, the spreadsheet, the plot and the report all show
these mappings.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from kinetics.analysis.requirements import requirement_times
from kinetics.analysis.summary import summarise_all
from kinetics.jsonready import finite_or_none
from kinetics.time_text import in_time_unit
from kinetics.units import time_factor

if TYPE_CHECKING:
    from kinetics.solution import Solution

__all__ = [
    "ACTIVITY_MAXIMUM_NOTE",
    "AREA_KEYS",
    "CONCENTRATION_KEYS",
    "SUMMARY_MAX",
    "SUMMARY_SKIPPED_NOTE",
    "TIME_KEYS",
    "Summary",
    "activity_summary",
    "compute_summary",
    "summary_in_units",
]

#: Largest scheme whose summary quantities are computed by ``solve`` and ``report``
#: (each quantity costs many exact exponentials; above this size they take minutes).
SUMMARY_MAX = 200
SUMMARY_SKIPPED_NOTE = (
    f"summary quantities are computed for schemes of up to {SUMMARY_MAX} species; "
    "call kinetics.analysis.summarise for larger ones"
)

#: Keys of a species summary that hold a time [s] (converted to the table's time unit).
TIME_KEYS = frozenset(
    {
        "relaxation_times",
        "oscillation_periods",
        "growth_times",
        "half_life",
        "time_to_90_percent_remaining",
        "time_to_10_percent_remaining",
        "lifetime",
        "first_order_half_life",
        "t_max",
        "time_to_limit",
        "mean_residence_time",
        "time",
        "first_broken",
        "holds_between",
        "all_hold_from",
        "all_hold_until",
    }
)
#: Keys that hold an area under a curve [concentration * s].
AREA_KEYS = frozenset({"area_to_window_end", "area_to_infinity"})
#: Keys of a species summary that hold a concentration (scaled by Solution.in_unit).
CONCENTRATION_KEYS = frozenset({"start", "c_max", "limit"})


class Summary(dict):
    """Species -> summary quantities (a plain dict), with the whole-scheme quantities.

    Attributes
    ----------
    scheme : dict
        Relaxation times, oscillation periods, the note on equal constants, the time for all
        species to come within 1 % of their limits, end products and their selectivity
        (see :class:`kinetics.analysis.SchemeSummary`); JSON key ``scheme_summary``.
    requirements : dict
        For a scheme with ``require`` lines: ``requirements`` (one object per line:
        ``text``, ``first_broken``, ``beyond_window``...), ``all_hold_from`` and
        ``all_hold_until`` (see
        :meth:`kinetics.analysis.requirements.RequirementTimes.to_dict`); empty otherwise.
    """

    def __init__(
        self, species=(), scheme: dict | None = None, requirements: dict | None = None
    ) -> None:
        super().__init__(species)
        self.scheme = dict(scheme or {})
        self.requirements = dict(requirements or {})


def compute_summary(solution: Solution) -> Summary | None:
    r"""Summary quantities of every species in SI time [s] and the concentration unit.

    Uses :func:`kinetics.analysis.summarise_all` on the scheme of ``solution`` with the
    solution's time window (a run with operations: :func:`kinetics.analysis.run_summary.
    summarise_run` on its exact piecewise solution); the whole-scheme quantities are in
    :attr:`Summary.scheme`.
    Returns ``None`` above :data:`SUMMARY_MAX` species.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/s\nstart A = 1 mol/L")
    >>> summary = compute_summary(kinetics.solve(s, [0, 60]))
    >>> round(summary["A"]["half_life"], 12)  # ln 2 / k (first-order decay, textbook)
    6.931471805599
    """
    scheme = solution.scheme
    if len(scheme.species) > SUMMARY_MAX:
        return None
    checked = {}
    if solution.after is not None:  # a run with operations: on its piecewise solution
        from kinetics.analysis.run_summary import Run, run_requirements, summarise_run

        own = solution.in_unit(scheme.concentration_unit)
        run = Run(own)
        out, scheme_wide = summarise_run(own, run=run)
        if scheme.requirements:
            checked = run_requirements(own, run=run).to_dict()
    else:
        feed = scheme.feed_vector if scheme.feed else None
        window = float(solution.times[-1])
        K, K_low = scheme.rate_matrix_pair()
        per, whole = summarise_all(
            K,
            scheme.initial_vector,
            scheme.species_names,
            feed=feed,
            t_window=window,
            K_low=K_low,
        )
        out = {name: s.to_dict() for name, s in per.items()}
        scheme_wide = whole.to_dict()
        if scheme.requirements:
            checked = requirement_times(
                K,
                scheme.initial_vector,
                scheme.requirements,
                scheme.species_names,
                feed=feed,
                t_window=window,
                K_low=K_low,
            ).to_dict()
    if solution.unit_factors is not None:  # reported in another unit (Solution.in_unit)
        factors = dict(zip(solution.species, solution.unit_factors, strict=True))
        for name, factor in factors.items():
            _scale_concentrations(out[name], float(factor))
        # amounts formed per end product in its reported unit (the ratios and shares stay
        # those of the amounts of substance)
        for key in ("amount_formed_at_window_end", "amount_formed_in_limit"):
            formed = scheme_wide.get(key)
            if formed and solution.activity_unit is not None:
                scheme_wide.pop(key)  # end products are stable: their activity is 0
            elif formed:
                scheme_wide[key] = {
                    p: None if v is None else v * float(factors[p]) for p, v in formed.items()
                }
    return Summary(out, scheme_wide, checked)


def _scale_concentrations(entry: dict, factor: float) -> None:
    for key in CONCENTRATION_KEYS | AREA_KEYS:
        if isinstance(entry.get(key), int | float):
            entry[key] = entry[key] * factor
    for maximum in entry.get("maxima") or []:
        if isinstance(maximum.get("height"), int | float):
            maximum["height"] = maximum["height"] * factor


def _convert_times(value, key: str, factor: float, unit: str = "s"):
    if isinstance(value, dict):
        return {k: _convert_times(v, k, factor, unit) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_convert_times(v, key, factor, unit) for v in value]
    if isinstance(value, str):
        return in_time_unit(value, unit)  # a note that quotes times
    if isinstance(value, int | float) and not isinstance(value, bool):
        if key in TIME_KEYS or key in AREA_KEYS:
            return finite_or_none(value / factor)
    if isinstance(value, float):
        return finite_or_none(value)
    return value


def summary_in_units(summary: dict[str, dict], time_unit: str) -> Summary:
    """Convert every time-valued entry of a summary from seconds to ``time_unit``.

    Times [s] become [time_unit], areas [conc*s] become [conc*time_unit], and so do the
    times quoted by notes (:class:`kinetics.time_text.TimedText`); non-finite numbers
    become ``None`` (JSON null); concentrations are unchanged.  The whole-scheme
    quantities (:attr:`Summary.scheme`) are converted too.
    """
    factor = time_factor(time_unit)
    scheme = _convert_times(getattr(summary, "scheme", {}), "", factor, time_unit)
    checked = _convert_times(getattr(summary, "requirements", {}), "", factor, time_unit)
    return Summary(
        {name: _convert_times(d, "", factor, time_unit) for name, d in summary.items()},
        scheme,
        checked,
    )


#: Why an activity peaks when its amount does (the note of :func:`activity_summary`).
ACTIVITY_MAXIMUM_NOTE = (
    "the activity of a species is its decay constant times its number of atoms; the "
    "decay constants are constant in time here, so each activity maximum falls at the "
    "time of the amount maximum (it would not if a decay constant changed with time)"
)


def activity_summary(solution: Solution, summary: dict | None) -> dict | None:
    r"""What a solution in activity units adds to its summary (JSON key ``activity``).

    Parameters
    ----------
    solution : Solution
        In activity units (:meth:`kinetics.solution.Solution.in_activity`).
    summary : dict or None
        Its summary, already in the unit of time of the report
        (:func:`summary_in_units`).

    Returns
    -------
    dict or None
        ``unit``; ``decay_constants_per_s`` (species -> :math:`\lambda` [1/s]);
        ``maxima`` (species -> ``time`` and ``activity`` of the interior maximum of each
        decaying species that is formed, in the report's units); ``maximum_note``
        (:data:`ACTIVITY_MAXIMUM_NOTE`); ``equilibria`` (the long-time ratio of each
        daughter's activity to its parent's, :func:`kinetics.activity.equilibria`).
        None for a solution in concentrations.
    """
    from kinetics import activity

    if solution.activity_unit is None:
        return None
    scheme = solution.scheme
    lam = activity.decay_constants(scheme)
    maxima = {}
    for name, entry in (summary or {}).items():
        if entry.get("t_max") is not None and lam[name] > 0:
            maxima[name] = {"time": entry["t_max"], "activity": entry.get("c_max")}
    return {
        "unit": solution.activity_unit,
        "decay_constants_per_s": {name: float(value) for name, value in lam.items()},
        "maxima": maxima,
        "maximum_note": ACTIVITY_MAXIMUM_NOTE,
        "equilibria": [e.to_dict() for e in activity.equilibria(scheme)],
    }
