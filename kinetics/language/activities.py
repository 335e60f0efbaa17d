r"""Start values written as activities (``start P = 10 GBq``), turned into amounts.

Once the steps of a file are known, each species' decay constant :math:`\lambda` (the sum of
the constants of the steps that consume it, :func:`kinetics.activity.decay_constants`)
turns its start activity into a number of atoms, :math:`N = A / \lambda`, and an amount
:math:`n = N / N_A` (:func:`kinetics.activity.amount_from_activity`).  A species that no
step consumes is stable: its activity is 0, and an activity given for it is an error.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from fractions import Fraction

from ..activity import amount_from_activity, decay_constants
from ..scheme import Scheme
from ..units import parse_unit
from .messages import Diagnostics
from .quantities import exact
from .source import Line
from .statements import Item

__all__ = ["start_from_activities"]


def start_from_activities(
    scheme: Scheme, activities: Mapping[str, tuple[Fraction, Item, Line]], found: Diagnostics
) -> Scheme:
    r"""The scheme with the start values written as activities set from its decay constants.

    Parameters
    ----------
    scheme : Scheme
        The checked scheme (its start values written as activities still missing).
    activities : Mapping of str to (Fraction, Item, Line)
        Species -> SI activity [Bq, or Bq per unit of the basis], its item and line.
    found : Diagnostics
        Where errors go (a stable species, an amount a double cannot hold).

    Returns
    -------
    Scheme
        ``initial`` holds the amounts, ``start_activities`` the activities.

    Examples
    --------
    10 GBq of a species with a half-life of 65.9 h (invented) is
    :math:`N = A t_{1/2} / \ln 2 = 3.4227 \times 10^{15}` atoms, 5.6834 nmol (hand value):

    >>> from kinetics import parse
    >>> scheme = parse("P -> D  half_life = 65.9 h\nstart P = 10 GBq")
    >>> round(scheme.initial["P"] * 1e9, 4), scheme.concentration_unit
    (5.6834, 'mol')
    """
    if not activities:
        return scheme
    lam = decay_constants(scheme)
    per_unit = parse_unit(scheme.concentration_unit).factor
    initial = dict(scheme.initial)
    kept: dict[str, Fraction] = {}
    for name, (activity, item, line) in activities.items():
        v = item.value
        assert v is not None  # an activity item has a value
        if not lam[name] > 0:
            found.error(
                line,
                f"start {name} = {v.text} is an activity, but {name} does not decay in this "
                "scheme (no step consumes it), so its activity is 0",
                item.name_column,
                name,
                f"give its start value as an amount (e.g. start {name} = 1 "
                f"{scheme.concentration_unit}), or leave it out",
            )
            continue
        amount = exact(amount_from_activity(activity, lam[name]) / per_unit)
        if not amount and activity:
            size = "too large" if amount is None else "too small (it would become 0)"
            found.error(
                line,
                f"start {name} = {v.text} gives an amount that is {size} in "
                f"{scheme.concentration_unit}",
                v.column,
                v.text,
                "check the value and its unit",
            )
            continue
        initial[name] = amount or 0.0
        kept[name] = activity
    return replace(scheme, initial=initial, start_activities=kept)
