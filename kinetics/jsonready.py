"""Numbers as JSON holds them: one home for the rule "a non-finite number is null".

JSON has no inf or nan; every JSON document of the package (solve and check
outputs, summaries, fit and sweep documents) writes them as ``null``.
"""

from __future__ import annotations

import math

__all__ = ["finite_or_none"]


def finite_or_none(x) -> float | None:
    """``x`` as a float, or None for None, nan and inf.

    Parameters
    ----------
    x : float, numpy scalar or None

    Returns
    -------
    float or None

    Examples
    --------
    >>> finite_or_none(2), finite_or_none(float("inf")), finite_or_none(None)
    (2.0, None, None)
    """
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None
