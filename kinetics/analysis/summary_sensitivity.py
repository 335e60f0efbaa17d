r"""What an answer hinges on: normalised sensitivities of the summary quantities.

For a summary quantity :math:`Q` (a half-life, the time and height of a maximum, a
lifetime) and a parameter :math:`p` of the scheme (a named quantity, a rate constant, the
temperature) the normalised sensitivity is

.. math:: S_{Q,p} = \frac{\partial \ln Q}{\partial \ln p} = \frac{p}{Q}\frac{dQ}{dp}:

a rise of 1 % in :math:`p` changes :math:`Q` by about :math:`S` %.  Everything is exact:

* :math:`\partial c(t)/\partial p` from the Fréchet derivative of the matrix exponential
  (:func:`kinetics.engine.sensitivity.point_sensitivities`) along
  :math:`\partial K/\partial p = \sum_c (\partial k_c/\partial p)\,\partial K/\partial k_c`,
  with :math:`\partial k_c/\partial p` differentiated exactly through the file's
  definitions (:meth:`kinetics.scheme.Scheme.constant_slopes`); start values written as
  activities move with their decay constants, :math:`\partial n_0/\partial p =
  -(n_0/\lambda)\,\partial\lambda/\partial p`;
* a time :math:`\tau` at which a species crosses a share :math:`\phi` of its start value,
  :math:`c_i(\tau) = \phi c_{0,i}`, by implicit differentiation,
  :math:`d\tau/dp = -(\partial c_i/\partial p - \phi\,\partial c_{0,i}/\partial p) /
  \dot c_i(\tau)`;
* the time of a maximum, where :math:`g = (K c + f)_i = 0`:
  :math:`dt^*/dp = -(\partial K/\partial p\,c + K\,\partial c/\partial p)_i /
  (K(Kc + f))_i`, and its height :math:`dc^*/dp = \partial c_i(t^*)/\partial p` (the
  slope in time is zero there);
* a lifetime :math:`1/\lambda_i`: :math:`-(p/\lambda_i)\,\partial\lambda_i/\partial p`.

No finite differences anywhere.  In activity units the heights are activities
:math:`\lambda_i n_i`, whose sensitivities gain :math:`(p/\lambda_i)\,\partial\lambda_i/
\partial p`.

References
----------
Al-Mohy, A. H.; Higham, N. J. "Computing the Fréchet derivative of the matrix exponential,
with an application to condition number estimation." SIAM J. Matrix Anal. Appl. 30,
1639-1657 (2009).  Van Loan, C. F. IEEE Trans. Automat. Control 23, 395-404 (1978).
Saltelli, A. et al. "Sensitivity Analysis in Practice", Wiley (2004), ch. 1 (normalised
local sensitivities).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from kinetics.jsonready import finite_or_none

if TYPE_CHECKING:
    from kinetics.scheme import Scheme
    from kinetics.solution import Solution

__all__ = [
    "CROSSINGS",
    "SENSITIVITY_KEYS",
    "SENSITIVITY_MAX",
    "UNRANKED",
    "ranked",
    "sensitivity_parameters",
    "summary_sensitivities",
]

#: Crossing times of the summary and the share of the start value each crosses.
CROSSINGS = {
    "half_life": 0.5,
    "time_to_90_percent_remaining": 0.9,
    "time_to_10_percent_remaining": 0.1,
}
#: The summary quantities whose sensitivities are computed, in the order reported.
SENSITIVITY_KEYS = (*CROSSINGS, "t_max", "c_max", "lifetime", "first_order_half_life")
#: Largest scheme whose sensitivities ``solve --sensitivity`` computes (one block
#: exponential of size 2n per constant and event time).
SENSITIVITY_MAX = 60


def sensitivity_parameters(scheme: Scheme) -> dict[str, float]:
    r"""The parameters of a scheme and their values [SI; K for the temperature].

    Every named quantity that a rate constant is defined from (in file order), every rate
    constant, and ``temperature`` when a constant follows it.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("t_p = 2 h\nP -> D  lam = ln(2) / t_p\nstart P = 1 mol")
    >>> {k: round(v, 12) for k, v in sensitivity_parameters(s).items()}
    {'t_p': 7200.0, 'lam': 9.6270442e-05}
    """
    t = scheme.temperature
    out = {}
    for name, q in scheme.quantities.items():
        if scheme.driven_by(name):
            value = q.value_si if q.value_si is not None else scheme.dependencies.value(name, t)
            out[name] = float(value)
    for name, value in scheme.exact_constants().items():
        out[name] = float(value)
    if scheme.temperature_constants and t is not None:
        out["temperature"] = float(t)
    return out


class _Derivatives:
    """The scheme's rate matrix, start values and their derivatives by parameter."""

    def __init__(self, scheme: Scheme, params: dict[str, float]) -> None:
        from kinetics.activity import start_amount_slopes
        from kinetics.ratematrix import rate_pattern, step_rates

        names = list(params)
        # each parameter on its own: varying a named quantity moves the constants defined
        # from it; varying a constant sets its definition aside (as a sweep does)
        slopes: dict[str, dict] = {c: {} for c in scheme.constants}
        for p in names:
            for c, by in scheme.constant_slopes([p]).items():
                slopes[c].update(by)
        self.constants = [c for c in scheme.constants if any(slopes[c].values())]
        pattern = rate_pattern(scheme)
        phi = step_rates(scheme, constants=dict.fromkeys(scheme.constants, 1.0))
        D = np.zeros((len(self.constants), len(scheme.steps)))
        for s, step in enumerate(scheme.steps):
            if step.constant in self.constants:
                D[self.constants.index(step.constant), s] = phi[s]
        n = len(scheme.species)
        #: dK/dk_c (q, n, n) and dk_c/dp (P, q)
        self.E = pattern.dense(D) if self.constants else np.zeros((0, n, n))
        self.G = np.array(
            [[float(slopes[c].get(p, 0)) for c in self.constants] for p in names]
        ).reshape(len(names), len(self.constants))
        self.K = scheme.rate_matrix()
        self.c0 = scheme.initial_vector
        self.feed = scheme.feed_vector if scheme.feed else None
        self.lam = -np.diag(self.K)
        # d lambda_i / dp = -(dK/dp)_ii; start activities: n0 = A / (lambda N_A)
        self.dlam = -np.einsum("pc,cii->pi", self.G, self.E)
        self.dc0 = np.zeros((len(names), n))
        for name in scheme.start_activities:
            i = scheme.index[name]
            self.dc0[:, i] = start_amount_slopes(self.c0[i], self.lam[i], self.dlam[:, i])
        self.moving_starts = [j for j in range(len(names)) if np.any(self.dc0[j])]

    def dK(self, j: int) -> np.ndarray:
        r""":math:`\partial K/\partial p_j` [1/s per SI unit of p]."""
        return np.einsum("c,cij->ij", self.G[j], self.E)

    def at(self, times: np.ndarray):
        """C (m, n) and dc/dp (P, m, n) at ``times`` [s]."""
        from kinetics.engine import point_sensitivities

        V = self.dc0[self.moving_starts] if self.moving_starts else None
        E = self.E if self.constants else None
        c, S = point_sensitivities(self.K, self.c0, times, E, self.feed, V)
        q = len(self.constants)
        dc = np.einsum("pc,cmn->pmn", self.G, S[:q])
        for k, j in enumerate(self.moving_starts):
            dc[j] += S[q + k]
        return c, dc


def _events(summary: dict, names: list[str]) -> list[tuple[str, str, float]]:
    """(quantity, species, time [s]) of every crossing and maximum the summary found."""
    out = []
    for species, entry in summary.items():
        if species not in names:
            continue
        for key in (*CROSSINGS, "t_max"):
            t = entry.get(key)
            if isinstance(t, int | float) and np.isfinite(t) and t > 0:
                out.append((key, species, float(t)))
    return out


def summary_sensitivities(solution: Solution, summary: dict) -> dict | None:
    r"""Normalised sensitivities :math:`\partial\ln Q/\partial\ln p` of the summary.

    Parameters
    ----------
    solution : Solution
        Its scheme, and its unit (heights in activity units follow the decay constants).
    summary : dict
        Its summary with times in seconds
        (:func:`kinetics.analysis.solution_summary.compute_summary`).

    Returns
    -------
    dict or None
        Quantity (:data:`SENSITIVITY_KEYS`) -> species -> parameter
        (:func:`sensitivity_parameters`) -> value (None where :math:`Q` is 0); None for a
        scheme of more than :data:`SENSITIVITY_MAX` species.

    Examples
    --------
    One first-order decay: :math:`t_{1/2} = \ln 2/k`, so :math:`\partial\ln t_{1/2}/
    \partial\ln k = -1` (hand derivative):

    >>> import kinetics
    >>> from kinetics.analysis.solution_summary import compute_summary
    >>> sol = kinetics.solve(kinetics.parse("A -> B  k = 0.1 1/s\nstart A = 1 M"), [0, 60])
    >>> round(summary_sensitivities(sol, compute_summary(sol))["half_life"]["A"]["k"], 12)
    -1.0
    """
    scheme = solution.scheme
    if len(scheme.species) > SENSITIVITY_MAX:
        return None
    params = sensitivity_parameters(scheme)
    names, values = list(params), np.array(list(params.values()))
    d = _Derivatives(scheme, params)
    events = _events(summary, scheme.species_names)
    out: dict[str, dict[str, dict]] = {key: {} for key in SENSITIVITY_KEYS}
    if events:
        c, dc = d.at(np.array([t for *_, t in events]))
        for m, (key, species, t) in enumerate(events):
            i = scheme.index[species]
            derivative = _event_derivative(d, key, i, c[m], dc[:, m], t)
            for k, (qkey, q_value, dq) in enumerate(derivative):
                out[qkey][species] = _normalised(names, values, q_value, dq)
                if qkey == "c_max" and solution.activity_unit is not None and k == 1:
                    _add_decay(out[qkey][species], names, values, d, i)
    for species, entry in summary.items():
        j = scheme.index.get(species)
        if j is None or not d.lam[j] > 0:
            continue
        for key in ("lifetime", "first_order_half_life"):
            if entry.get(key) is not None:
                out[key][species] = _normalised(names, values, d.lam[j], d.dlam[:, j], -1.0)
    return {key: per for key, per in out.items() if per}


def _event_derivative(d: _Derivatives, key: str, i: int, c, dc, t: float):
    """[(quantity, value, d value/dp for every p)] of one crossing or maximum."""
    rate = d.K @ c + (0.0 if d.feed is None else d.feed)
    if key in CROSSINGS:
        share = CROSSINGS[key]
        return [(key, t, -(dc[:, i] - share * d.dc0[:, i]) / rate[i])]
    curvature = (d.K @ rate)[i]
    dg = np.array([(d.dK(j) @ c)[i] for j in range(dc.shape[0])]) + dc @ d.K[i]
    dt = -dg / curvature
    return [("t_max", t, dt), ("c_max", c[i], dc[:, i] + rate[i] * dt)]


def _normalised(names, values, q: float, dq, sign: float = 1.0) -> dict[str, float | None]:
    r""":math:`(p/Q)\,dQ/dp` for every parameter (``sign`` -1: of :math:`1/Q`)."""
    if not q:
        return dict.fromkeys(names)
    return {
        name: finite_or_none(sign * float(v * g / q))
        for name, v, g in zip(names, values, dq, strict=True)
    }


def _add_decay(entry: dict, names, values, d: _Derivatives, i: int) -> None:
    r"""An activity :math:`\lambda_i n_i`: add :math:`(p/\lambda_i)\,d\lambda_i/dp`."""
    for name, v, g in zip(names, values, d.dlam[:, i], strict=True):
        if entry.get(name) is not None:
            entry[name] = finite_or_none(entry[name] + float(v * g / d.lam[i]))


#: Quantities left out of the ranked table: their sensitivities are -1 to their own
#: decay constants and 0 to everything else (they stay in the JSON).
UNRANKED = ("lifetime", "first_order_half_life")


def ranked(sensitivity: dict | None, count: int = 15) -> list[tuple[str, str, list]]:
    """The answers that hinge most on a parameter first.

    Parameters
    ----------
    sensitivity : dict or None
        :func:`summary_sensitivities`.
    count : int
        At most this many answers.

    Returns
    -------
    list of (quantity, species, [(parameter, value), ...])
        Each answer's parameters by decreasing :math:`|S|` (zeros and undefined values
        left out), the answers by their largest :math:`|S|`; without :data:`UNRANKED`.

    Examples
    --------
    >>> ranked({"t_max": {"B": {"k1": -0.4, "k2": -0.6}}, "c_max": {"B": {"k1": 0.1}}})
    [('t_max', 'B', [('k2', -0.6), ('k1', -0.4)]), ('c_max', 'B', [('k1', 0.1)])]
    """
    rows = []
    for key, per in (sensitivity or {}).items():
        if key in UNRANKED:
            continue
        for species, by in per.items():
            found = sorted(((n, v) for n, v in by.items() if v), key=lambda nv: -abs(nv[1]))
            if found:
                rows.append((key, species, found))
    rows.sort(key=lambda row: -abs(row[2][0][1]))
    return rows[:count]
