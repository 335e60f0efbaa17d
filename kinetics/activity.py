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

from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from .errors import ActivityError, shorten
from .expressions import dims_of
from .units import AVOGADRO_EXACT, describe_dimension, parse_unit

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "activities",
    "activity_factors",
    "amount_from_activity",
    "amounts_from_activities",
    "decay_constants",
    "decay_rates",
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
    exact = scheme.exact_constants()
    hi, lo = scheme.rate_pairs
    out = {name: Fraction(0) for name in scheme.species_names}
    for step, h, low in zip(scheme.steps, hi.tolist(), lo.tolist(), strict=True):
        if step.co_reactants:
            out[step.reactant] += Fraction(h) + Fraction(low)
        else:
            out[step.reactant] += exact[step.constant]
    return out


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
