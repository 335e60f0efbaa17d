r"""Activities of decaying species: :math:`A = \lambda N`, in one home.

A species' activity is its number of decays per unit time,

.. math:: A_i = \lambda_i N_i = \lambda_i \, n_i \, N_A,

with :math:`\lambda_i` the sum of the first-order constants of the steps that consume it
(the negative diagonal entry :math:`-K_{ii}` of the rate matrix: every branch of its
decay, tracked or not), :math:`n_i` its amount and :math:`N_A` the Avogadro constant
(exact in the 2019 SI).  A species that no step consumes is stable: its activity is 0.

The scheme reader converts start values written as activities (``start P = 10 GBq``)
with :func:`amount_from_activity`; outputs convert amounts to activities with
:func:`activities` (and back with :func:`amounts_from_activities`).  Schemes kept in
absolute amounts (``mol``) give activities (``Bq``); schemes kept per volume or per mass
give activity concentrations (``Bq/L``, ``Bq/kg``).

References
----------
BIPM, The International System of Units (SI), 9th edition (2019), table 4 (becquerel).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from .errors import ActivityError, shorten
from .expressions import dims_of
from .units import AVOGADRO_EXACT, describe_dimension, parse_unit

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "SECULAR_SHARE",
    "Equilibrium",
    "activities",
    "activity_factors",
    "activity_factors_for",
    "amount_from_activity",
    "amounts_from_activities",
    "decay_constants",
    "decay_rates",
    "equilibria",
    "start_amount_slopes",
    "start_amounts",
    "start_amounts_for_rates",
]


def decay_constants(scheme: Scheme) -> dict[str, Fraction]:
    r""":math:`\lambda_i` of every matrix species [1/s]: the sum of the effective constants
    of the steps that consume it, at the scheme's values.

    Each sum is formed exactly from the exact constants of the steps
    (:meth:`kinetics.scheme.Scheme.exact_constants`); a step with partners in excess
    contributes its double-double effective rate (:attr:`kinetics.scheme.Scheme.rate_pairs`,
    exact to about :math:`2^{-106}`).

    Parameters
    ----------
    scheme : Scheme

    Returns
    -------
    dict of str to Fraction
        One entry per matrix species, 0 for a stable one.

    Examples
    --------
    A half-life of 1 h: :math:`\lambda = \ln 2 / 3600` 1/s (textbook definition):

    >>> import math
    >>> from kinetics import parse
    >>> lam = decay_constants(parse("P -> D  half_life = 1 h\nstart P = 1 mol"))
    >>> float(lam["P"]) == math.log(2) / 3600, lam["D"]
    (True, Fraction(0, 1))
    """
    out = {name: Fraction(0) for name in scheme.species_names}
    for step, rate in zip(scheme.steps, _exact_step_rates(scheme), strict=True):
        out[step.reactant] += rate
    return out


def _exact_step_rates(scheme: Scheme) -> list[Fraction]:
    """The effective rate of every step [1/s], exact (double-double with excess partners)."""
    exact = scheme.exact_constants()
    hi, lo = scheme.rate_pairs
    return [
        Fraction(h) + Fraction(low) if step.co_reactants else exact[step.constant]
        for step, h, low in zip(scheme.steps, hi.tolist(), lo.tolist(), strict=True)
    ]


def amount_from_activity(activity: Fraction, decay_constant: Fraction) -> Fraction:
    r"""The amount whose activity is ``activity``: :math:`n = A / (\lambda N_A)`.

    Parameters
    ----------
    activity : Fraction
        [Bq] (or Bq per unit of the basis, e.g. Bq/L).
    decay_constant : Fraction
        :math:`\lambda` [1/s], above 0.

    Returns
    -------
    Fraction
        [mol] (or mol per unit of the basis), exact.

    Raises
    ------
    ActivityError
        When ``decay_constant`` is not above 0 (a stable species has no activity).

    Examples
    --------
    1 Bq of a species with :math:`\lambda` = 1/s is one atom, :math:`1/N_A` mol:

    >>> amount_from_activity(Fraction(1), Fraction(1)) * 602214076 * 10**15
    Fraction(1, 1)
    """
    if not decay_constant > 0:
        raise ActivityError(
            "a species that does not decay has no activity",
            "give its start value as an amount",
        )
    return Fraction(activity) / (Fraction(decay_constant) * AVOGADRO_EXACT)


def start_amounts(scheme: Scheme, values: dict[str, Fraction]) -> dict[str, float]:
    """Start values [scheme's concentration unit] of the activities ``values``.

    Parameters
    ----------
    scheme : Scheme
        Its decay constants (:func:`decay_constants`) and concentration unit.
    values : dict of str to Fraction
        Activities [Bq, or Bq per unit of the scheme's basis] by species.

    Returns
    -------
    dict of str to float
        Each amount rounded once (:func:`amount_from_activity`).

    Raises
    ------
    ActivityError
        For a species that does not decay.
    """
    lam = decay_constants(scheme)
    per_unit = parse_unit(scheme.concentration_unit).factor
    out = {}
    for name, value in values.items():
        try:
            amount = amount_from_activity(value, lam[name])
        except ActivityError:
            raise ActivityError(
                f"{name} has a start activity but does not decay in this scheme",
                "give its start value as an amount",
            ) from None
        exact = amount / per_unit
        out[name] = exact.numerator / exact.denominator
    return out


def decay_rates(scheme: Scheme, rates) -> np.ndarray:
    r""":math:`\lambda_i = \sum_{s:\ i \to \dots} k_s` of every matrix species for step
    rates given per set (linear in the rates: the derivatives of :math:`\lambda` follow
    from those of the rates the same way).

    Parameters
    ----------
    scheme : Scheme
    rates : array_like, shape (..., n_steps)
        Effective step rates [1/s] in the order of the scheme's steps.

    Returns
    -------
    numpy.ndarray, shape (..., n_species)
        [1/s], species in matrix order.

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("P -> D  k1 = 1 1/s\nP -> E  k2 = 2 1/s\nstart P = 1 umol")
    >>> decay_rates(scheme, [[1.0, 2.0]]).tolist()
    [[3.0, 0.0, 0.0]]
    """
    rates = np.asarray(rates, dtype=float)
    consumed = np.zeros((len(scheme.steps), len(scheme.species)))
    for s, step in enumerate(scheme.steps):
        consumed[s, scheme.index[step.reactant]] = 1.0
    return rates @ consumed


def start_amounts_for_rates(scheme: Scheme, rates) -> dict[str, np.ndarray]:
    r"""The start values of the scheme's start activities for other step rates.

    .. math:: n_i = \frac{A_i}{\lambda_i N_A u_c}

    with :math:`\lambda_i` from :func:`decay_rates` and :math:`u_c` the SI value of the
    scheme's concentration unit: the conversion of :func:`start_amounts` for a stack of
    parameter sets (sweeps, fits), in floating point (a few roundings).

    Parameters
    ----------
    scheme : Scheme
        Its start activities (:attr:`kinetics.scheme.Scheme.start_activities`).
    rates : array_like, shape (b, n_steps)
        Effective step rates [1/s] of each set, in the order of the scheme's steps.

    Returns
    -------
    dict of str to numpy.ndarray
        Species -> start values (b,) [scheme's concentration unit].

    Raises
    ------
    ActivityError
        For a set in which a species with a start activity does not decay.
    """
    lam = decay_rates(scheme, np.atleast_2d(rates))
    per_unit = parse_unit(scheme.concentration_unit).factor
    out = {}
    for name, value in scheme.start_activities.items():
        own = lam[:, scheme.index[name]]
        if not np.all(own > 0):
            raise ActivityError(
                f"{name} has a start activity but does not decay in a set of values",
                "keep its decay constants above 0, or give its start value as an amount",
            )
        out[name] = float(value / (AVOGADRO_EXACT * per_unit)) / own
    return out


def start_amount_slopes(amount, decay, decay_slopes) -> np.ndarray:
    r"""How the amount of a start activity moves with its decay constant:
    :math:`n_0 = A/(\lambda N_A)` gives :math:`\partial n_0/\partial p =
    -(n_0/\lambda)\,\partial\lambda/\partial p`.

    Parameters
    ----------
    amount : float
        :math:`n_0` [scheme's concentration unit].
    decay : float
        :math:`\lambda` [1/s], above 0.
    decay_slopes : array_like
        :math:`\partial\lambda/\partial p` for each parameter [1/s per unit of p].

    Returns
    -------
    numpy.ndarray
        :math:`\partial n_0/\partial p` [concentration unit per unit of p].

    Examples
    --------
    >>> start_amount_slopes(2.0, 0.5, [0.25]).tolist()  # twice as fast, half the atoms
    [-1.0]
    """
    return -amount / decay * np.asarray(decay_slopes, dtype=float)


def activity_factors(scheme: Scheme, unit: str = "Bq") -> np.ndarray:
    r"""Activity per amount of every matrix species, in ``unit`` per concentration unit.

    .. math:: f_i = \lambda_i N_A \, u_c / u_A

    with :math:`u_c` the SI value of the scheme's concentration unit and :math:`u_A` that
    of ``unit``.

    Parameters
    ----------
    scheme : Scheme
    unit : str, optional
        An activity unit (``Bq``, ``kBq``, ``MBq``, ``GBq``, ``Ci``, ``mCi``, ``uCi``)
        for a scheme in amounts; per volume or per mass (``MBq/L``) for a scheme per
        volume or per mass.

    Returns
    -------
    numpy.ndarray
        One factor per matrix species (0 for a stable species), in matrix order.

    Raises
    ------
    ActivityError
        When ``unit`` is unknown or does not fit the scheme's concentration unit.

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("P -> D  k1 = 1 1/s\nstart P = 1 umol")
    >>> float(activity_factors(scheme, "MBq")[0])  # 1 umol decaying at 1/s
    602214076000.0
    """
    factor = _unit_ratio(scheme, unit)
    lam = decay_constants(scheme)
    return np.array(
        [float(lam[name] * AVOGADRO_EXACT * factor) for name in scheme.species_names], dtype=float
    )


def activity_factors_for(scheme: Scheme, decay, unit: str = "Bq") -> np.ndarray:
    r"""Activity per amount for decay constants given per set (a sweep):
    :math:`f_i = \lambda_i N_A u_c / u_A`, as :func:`activity_factors` for the scheme's own.

    Parameters
    ----------
    scheme : Scheme
        Its concentration unit.
    decay : array_like, shape (..., n_species)
        :math:`\lambda` [1/s] of each set (:func:`decay_rates`, or :math:`-K_{ii}`).
    unit : str, optional
        See :func:`activity_factors`.

    Returns
    -------
    numpy.ndarray
        The same shape [``unit`` per concentration unit].

    Raises
    ------
    ActivityError
        When ``unit`` is unknown or does not fit the scheme's concentration unit.
    """
    return np.asarray(decay, dtype=float) * float(AVOGADRO_EXACT * _unit_ratio(scheme, unit))


def _unit_ratio(scheme: Scheme, unit: str) -> Fraction:
    """The SI value of one concentration unit over that of one ``unit`` (dims checked)."""
    amount = parse_unit(scheme.concentration_unit)
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise ActivityError(
            f"unknown unit of activity {shorten(unit)!r}", "write e.g. MBq, kBq or mCi"
        ) from None
    wanted = dict(amount.dims)
    wanted["[substance]"] = wanted.get("[substance]", Fraction(0)) - 1
    wanted["[time]"] = wanted.get("[time]", Fraction(0)) - 1
    if spec.offset or spec.dimensions != dims_of(wanted):
        basis = dict(wanted)
        basis.pop("[time]", None)
        per = "" if not dims_of(basis) else f" per {_basis_name(basis)}"
        raise ActivityError(
            f"{shorten(unit)!r} is {describe_dimension(spec.dims)}, not an activity{per} "
            f"(the scheme is kept in {scheme.concentration_unit})",
            "write e.g. MBq for a scheme in amounts, MBq/L for one per volume",
        )
    return amount.factor / spec.factor


def _basis_name(basis: dict) -> str:
    names: dict[tuple[tuple[str, int], ...], str] = {
        (("[length]", 3),): "volume",
        (("[mass]", 1),): "mass",
    }
    key = tuple(sorted((k, -int(v)) for k, v in basis.items() if v))
    return names.get(key, describe_dimension(basis))


def activities(scheme: Scheme, amounts, unit: str = "Bq") -> np.ndarray:
    r"""Activities :math:`A_i = \lambda_i N_A n_i` of amounts in the scheme's unit.

    Parameters
    ----------
    scheme : Scheme
    amounts : array_like, shape (..., n_species)
        Amounts or concentrations [scheme's concentration unit], species in matrix order
        (the last axis), e.g. ``Solution.concentrations``.
    unit : str, optional
        See :func:`activity_factors`.

    Returns
    -------
    numpy.ndarray
        The same shape [``unit``].

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("P -> D  k1 = 1 1/s\nstart P = 1 umol")
    >>> activities(scheme, [[1.0, 0.0]], "MBq").tolist()
    [[602214076000.0, 0.0]]
    """
    return np.asarray(amounts, dtype=float) * activity_factors(scheme, unit)


def amounts_from_activities(scheme: Scheme, values, unit: str = "Bq") -> np.ndarray:
    """Amounts [scheme's concentration unit] whose activities are ``values`` [``unit``].

    Raises
    ------
    ActivityError
        For a nonzero activity of a species that does not decay.

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("P -> D  k1 = 1 1/s\\nstart P = 1 umol")
    >>> amounts_from_activities(scheme, [602214076000.0, 0.0], "MBq").tolist()
    [1.0, 0.0]
    """
    values = np.asarray(values, dtype=float)
    factors = activity_factors(scheme, unit)
    stable = factors == 0
    if np.any(stable & np.any(values != 0, axis=tuple(range(values.ndim - 1)))):
        names = [n for n, s in zip(scheme.species_names, stable, strict=True) if s]
        raise ActivityError(
            "an activity is given for a species that does not decay (" + ", ".join(names) + ")",
            "a stable species has activity 0; give its amount instead",
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(stable, 0.0, values / np.where(stable, 1.0, factors))


# ---------------------------------------------------------------------------------------
# Equilibria of daughter and parent activities
# ---------------------------------------------------------------------------------------

#: An equilibrium is called secular when the slowest decay that feeds the parent is at
#: most this share of the daughter's decay constant (the ratio is then within about 1 %
#: of the value it has for a parent that does not decay).  Our convention: textbooks call
#: it secular when :math:`\lambda_P \ll \lambda_D`, without a number.
SECULAR_SHARE = Fraction(1, 100)


@dataclass(frozen=True)
class Equilibrium:
    r"""The long-time ratio of a daughter's activity to its parent's.

    Attributes
    ----------
    parent, daughter : str
        A decay step ``parent -> daughter`` of the scheme.
    kind : str
        ``"secular"``, ``"transient"`` or ``"none"`` (the daughter decays no faster than
        what feeds its parent: the ratio grows without bound).
    ratio : float or None
        :math:`\lim_{t	o\infty} A_D(t)/A_P(t)`; None for ``"none"``.
    parent_rate : float
        :math:`\mu` [1/s]: the slowest decay constant that feeds the parent (its own,
        or that of an ancestor with a slower decay).
    daughter_rate : float
        :math:`\lambda_D` [1/s].
    """

    parent: str
    daughter: str
    kind: str
    ratio: float | None
    parent_rate: float
    daughter_rate: float

    def to_dict(self) -> dict:
        """JSON-ready: ``parent``, ``daughter``, ``kind``, ``ratio``, ``parent_rate_per_s``,
        ``daughter_rate_per_s``."""
        return {
            "parent": self.parent,
            "daughter": self.daughter,
            "kind": self.kind,
            "ratio": self.ratio,
            "parent_rate_per_s": self.parent_rate,
            "daughter_rate_per_s": self.daughter_rate,
        }


def _decay_graph(scheme: Scheme):
    """Edges ``(parent, daughter) -> rate of formation per parent atom`` [1/s] and the
    species in an order in which every parent comes before its daughters (None when the
    steps form a cycle)."""
    edges: dict[tuple[str, str], Fraction] = {}
    for step, rate in zip(scheme.steps, _exact_step_rates(scheme), strict=True):
        for coefficient, product in step.products:
            if product in scheme.index and product != step.reactant:
                key = (step.reactant, product)
                edges[key] = edges.get(key, Fraction(0)) + Fraction(coefficient) * rate
    parents: dict[str, set[str]] = {n: set() for n in scheme.species_names}
    for p, d in edges:
        parents[d].add(p)
    order: list[str] = []
    waiting = {n: set(ps) for n, ps in parents.items()}
    ready = [n for n in scheme.species_names if not waiting[n]]
    while ready:
        n = ready.pop(0)
        order.append(n)
        for d in scheme.species_names:
            if n in waiting[d]:
                waiting[d].discard(n)
                if not waiting[d]:
                    ready.append(d)
    return edges, parents, (order if len(order) == len(scheme.species_names) else None)


def equilibria(scheme: Scheme) -> list[Equilibrium]:
    r"""The long-time activity ratio of every decaying daughter to its decaying parent.

    As :math:`t 	o \infty` every amount follows the slowest mode that reaches it.  With
    :math:`\mu` the smallest decay constant among the parent and its started ancestors
    (species :math:`X`), the amounts approach :math:`N \propto v\, e^{-\mu t}` with
    :math:`v` the eigenvector of the rate matrix for :math:`-\mu`,

    .. math:: v_X = 1, \qquad v_i = rac{\sum_j K_{ij} v_j}{\lambda_i - \mu},

    and the activity ratio to :math:`R = \lambda_D v_D / (\lambda_P v_P)`.  For a lone
    pair with branching fraction :math:`b` this is the textbook result
    :math:`R = b\,\lambda_D / (\lambda_D - \lambda_P)` (transient equilibrium),
    :math:`R 	o b` for :math:`\lambda_P \ll \lambda_D` (secular equilibrium); for
    :math:`\lambda_D \le \mu` there is none.

    Parameters
    ----------
    scheme : Scheme
        Its steps and start values (a mode counts when something upstream is started).

    Returns
    -------
    list of Equilibrium
        One per decay step between decaying matrix species whose parent is present;
        empty for schemes with a feed or with cycles of steps, and without the pairs
        whose decay constants coincide along the chain (the amounts then carry
        :math:`t\,e^{-\mu t}` terms).

    References
    ----------
    H. Bateman, Proc. Cambridge Philos. Soc. 15, 423-427 (1910) (the solution of decay
    chains); transient and secular equilibrium: textbook results (e.g. G. F. Knoll,
    "Radiation Detection and Measurement", 4th ed., Wiley (2010), ch. 1).

    Examples
    --------
    A parent of 50 h and a daughter of 5 h (invented): :math:`R = 10/9`:

    >>> from kinetics import parse
    >>> pair = parse("P -> D  half_life = 50 h\nD -> G  half_life = 5 h\nstart P = 1 mol")
    >>> e = equilibria(pair)[0]
    >>> e.kind, round(e.ratio, 12)
    ('transient', 1.111111111111)
    """
    if scheme.feed:
        return []
    edges, parents, order = _decay_graph(scheme)
    if order is None:
        return []
    lam = decay_constants(scheme)
    live = _downstream(scheme, edges, {n for n, v in scheme.initial.items() if v > 0})
    out = []
    for (p, d), _ in edges.items():
        if p not in live or not lam[p] > 0 or not lam[d] > 0:
            continue
        feeders = [x for x in _upstream(parents, p) if x in live]
        x = min(feeders, key=lambda n: lam[n])
        mu = lam[x]
        slowest_of_d = min(lam[n] for n in _upstream(parents, d) if n in live)
        if lam[d] <= mu or slowest_of_d < mu:
            out.append(Equilibrium(p, d, "none", None, float(mu), float(lam[d])))
            continue
        v = _mode(edges, parents, order, lam, x, mu)
        if v is None:
            continue
        ratio = lam[d] * v[d] / (lam[p] * v[p])
        kind = "secular" if mu <= SECULAR_SHARE * lam[d] else "transient"
        out.append(Equilibrium(p, d, kind, float(ratio), float(mu), float(lam[d])))
    return out


def _upstream(parents: dict[str, set[str]], name: str) -> set[str]:
    """``name`` and every species it is formed from, directly or not."""
    seen, todo = {name}, [name]
    while todo:
        for p in parents[todo.pop()]:
            if p not in seen:
                seen.add(p)
                todo.append(p)
    return seen


def _downstream(scheme: Scheme, edges, started: set[str]) -> set[str]:
    """The started species and everything formed from them."""
    seen, todo = set(started), list(started)
    while todo:
        n = todo.pop()
        for p, d in edges:
            if p == n and d not in seen:
                seen.add(d)
                todo.append(d)
    return seen


def _mode(edges, parents, order, lam, x: str, mu: Fraction) -> dict[str, Fraction] | None:
    """The eigenvector of the mode of ``x`` (exact); None when a species downstream of
    ``x`` has the same decay constant (a repeated eigenvalue)."""
    v = {n: Fraction(0) for n in order}
    v[x] = Fraction(1)
    for n in order[order.index(x) + 1 :]:
        feed = sum((edges[(p, n)] * v[p] for p in parents[n]), Fraction(0))
        if not feed:
            continue
        if lam[n] == mu:
            return None
        v[n] = feed / (lam[n] - mu)
    return v
