"""The working range of the exact engine and of the scan, and its check.

README, "Limits of the method": beyond these limits a problem is refused before any
work is done, with a sentence saying which limit it passes.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from kinetics.errors import WorkingRangeError

__all__ = ["MAX_LIFETIMES", "MAX_RATE", "MAX_SCALE", "MAX_TIME", "check_working_range"]

#: Working range of the engine and of the scan (README, "Limits of the method"): the
#: fastest consumption rate sum k of a species [1/s], the latest time [s], and the
#: number of shortest lifetimes 1/sigma (sigma = the largest sum k) a time may span.
#: The entrywise error of the exponential grows about in proportion to sigma t
#: (measured: 4e-6 relative at sigma t = 5e26 in double-double).
MAX_RATE = 1e100
MAX_TIME = 1e100
MAX_LIFETIMES = 1e27
#: Largest concentration times the cube of the fastest consumption rate (the summary forms
#: third derivatives of the curves; the double range ends near 1.8e308).
MAX_SCALE = 1e300


def check_working_range(
    rates, t_end: float, names: Sequence[str] | None = None, amount: float = 0.0
) -> None:
    r"""Refuse a problem outside the engine's working range, before any work is done.

    Parameters
    ----------
    rates : array_like, shape (n,)
        Consumption rate :math:`\sum k` of each species [1/s] (:math:`-K_{ii}`).
    t_end : float
        The latest time asked for [s].
    names : sequence of str, optional
        Species names for the message.
    amount : float, optional
        The largest concentration the problem can reach by simple bounds [conc]: start
        values plus feed times the time span.

    Raises
    ------
    kinetics.errors.WorkingRangeError
        When a rate exceeds :data:`MAX_RATE`, ``t_end`` exceeds :data:`MAX_TIME`,
        :math:`\sigma t_{end}` (:math:`\sigma = \max \sum k`) exceeds :data:`MAX_LIFETIMES`,
        or :math:`\max(\sigma, 1)^3` ``amount`` exceeds :data:`MAX_SCALE` (the summary forms
        the third derivative of the curves).

    Examples
    --------
    >>> check_working_range([1e-8, 1e10], 1e9)
    >>> try:
    ...     check_working_range([1.0], 1e300)
    ... except WorkingRangeError as exc:
    ...     print(exc.problem)
    the times reach 1e+300 s, beyond the working range of 1e+100 s
    """
    r = np.asarray(rates, dtype=float).reshape(-1)
    if names is None:
        names = [f"species {i}" for i in range(r.size)]
    k = int(np.argmax(r)) if r.size else 0
    sigma = float(r[k]) if r.size else 0.0
    if not sigma <= MAX_RATE:  # also nan
        raise WorkingRangeError(
            f"{names[k]} is consumed at {sigma:.3g} 1/s (its sum of rate constants), beyond "
            f"the working range of {MAX_RATE:.0e} 1/s (the fastest chemical steps take about "
            "1e13 1/s)",
            "check the constants and their units",
        )
    if t_end > MAX_TIME:
        raise WorkingRangeError(
            f"the times reach {t_end:.6g} s, beyond the working range of {MAX_TIME:.0e} s",
            "give a shorter time span",
        )
    if sigma * t_end > MAX_LIFETIMES:
        raise WorkingRangeError(
            f"the times reach {t_end:.6g} s, {sigma * t_end:.3g} times the shortest lifetime "
            f"in the scheme ({names[k]}: 1/sum k = {1 / sigma:.3g} s); the exact engine spans "
            f"at most {MAX_LIFETIMES:.0e} lifetimes",
            "give a shorter time span",
        )
    if amount * max(sigma, 1.0) ** 3 > MAX_SCALE:
        raise WorkingRangeError(
            f"the concentrations (up to {amount:.3g} in the scheme's unit) are too large for "
            f"the rates of the scheme ({names[k]} is consumed at {sigma:.3g} 1/s): their rates "
            "of change leave the range of numbers",
            "give the start values and feeds in a larger unit",
        )
