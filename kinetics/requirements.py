"""Requirements on a species: ``require S <= value`` and ``require S >= value``, as data.

A requirement states a limit a species must keep: an impurity below a ceiling, an active
ingredient above a share of its start value.  The scheme reader turns each ``require``
line into a :class:`Requirement` with its threshold in the scheme's concentration unit;
a threshold written as a percentage of a start value follows that start value when it
changes (:meth:`Requirement.for_start`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from fractions import Fraction

import numpy as np

__all__ = ["COMPARISONS", "Requirement"]

#: The comparisons a requirement may state.
COMPARISONS = ("<=", ">=")


@dataclass(frozen=True, slots=True)
class Requirement:
    """One requirement of a scheme.

    Attributes
    ----------
    text : str
        The requirement as written after ``require`` (``API >= 90 %``).
    species : str
        The species it is about.
    comparison : str
        ``"<="`` (stay at or below) or ``">="`` (stay at or above).
    threshold : float
        [scheme's concentration unit].
    share : Fraction or None
        For a percentage of a start value: the share (0.9 for 90 %).
    of : str or None
        For a percentage: the species whose start value it refers to (``species``
        itself for ``API >= 90 %``).
    line : int

    Examples
    --------
    >>> r = Requirement("IMP <= 0.15 % of API", "IMP", "<=", 0.0015, Fraction(15, 10000), "API")
    >>> r.holds(0.001), r.for_start({"API": 2.0}).threshold
    (True, 0.003)
    """

    text: str
    species: str
    comparison: str
    threshold: float
    share: Fraction | None = None
    of: str | None = None
    line: int = 0

    def holds(self, value):
        """True where ``value`` [scheme's concentration unit] meets the requirement.

        Arrays give arrays.

        Examples
        --------
        >>> r = Requirement("B <= 2 mmol/L", "B", "<=", 2.0)
        >>> r.holds(1.5), r.holds([1.0, 2.0, 3.0]).tolist()
        (True, [True, True, False])
        """
        value = np.asarray(value, dtype=float)
        out = value <= self.threshold if self.comparison == "<=" else value >= self.threshold
        return bool(out) if out.ndim == 0 else out

    def for_start(self, initial: Mapping[str, float]) -> Requirement:
        """The requirement for new start values (a percentage follows its start value).

        Examples
        --------
        Closed form: the threshold is the share times the start value, 0.15 % of 4 mol/L:

        >>> r = Requirement("IMP <= 0.15 % of API", "IMP", "<=", 0.0015, Fraction(15, 10000), "API")
        >>> r.for_start({"API": 4.0}).threshold
        0.006
        """
        if self.share is None or self.of is None:
            return self
        start = Fraction(initial.get(self.of, 0.0))
        return replace(self, threshold=float(self.share * start))
