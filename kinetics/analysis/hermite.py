"""Hermite interpolation of a function from its values and derivatives at both ends.

Over an interval: the start of the root finder and the check for hidden turning points.

References
----------
Burden, R. L.; Faires, J. D. "Numerical Analysis", 9th ed., Brooks/Cole (2011), sec. 3.4
(Hermite interpolation; from memory).
"""

from __future__ import annotations

import numpy as np

__all__ = ["hermite_basis", "hermite_root", "quintic_basis"]


def hermite_basis(x):
    """Cubic Hermite basis h00, h10, h01, h11 on [0, 1]."""
    x2, x3 = x * x, x * x * x
    return 2 * x3 - 3 * x2 + 1, x3 - 2 * x2 + x, -2 * x3 + 3 * x2, x3 - x2


def quintic_basis(x):
    """Quintic Hermite basis on [0, 1]: value, slope, curvature at 0, then at 1."""
    x2, x3, x4, x5 = x * x, x**3, x**4, x**5
    return (
        1 - 10 * x3 + 15 * x4 - 6 * x5,
        x - 6 * x3 + 8 * x4 - 3 * x5,
        0.5 * x2 - 1.5 * x3 + 1.5 * x4 - 0.5 * x5,
        10 * x3 - 15 * x4 + 6 * x5,
        -4 * x3 + 7 * x4 - 3 * x5,
        0.5 * x3 - x4 + 0.5 * x5,
    )


def hermite_root(a, b, ga, gb, gpa, gpb, gppa, gppb) -> tuple[np.ndarray, np.ndarray]:
    """First root in (a, b) of the Hermite model of g from both ends (opposite signs).

    Quintic (values, slopes, curvatures; error O(h^6)) where the curvatures are known,
    cubic (error O(h^4)) where they are nan; the secant point as a last resort.

    Returns
    -------
    root : ndarray
        One per interval [s].
    curvature : ndarray
        :math:`|g''|` of the model near the root [per s^2], for Newton error estimates.

    Examples
    --------
    >>> # g(t) = t - 0.3 on [0, 1]: the cubic model is exact
    >>> nan = np.array([np.nan])
    >>> one = np.array([1.0])
    >>> root, _ = hermite_root(np.zeros(1), one, -0.3 * one, 0.7 * one, one, one, nan, nan)
    >>> round(float(root[0]), 12)
    0.3
    """
    h = b - a
    s = np.linspace(0.0, 1.0, 129)[None, :]
    h00, h10, h01, h11 = hermite_basis(s)
    P = h00 * ga[:, None] + h10 * (h * gpa)[:, None] + h01 * gb[:, None] + h11 * (h * gpb)[:, None]
    quint = np.isfinite(gppa) & np.isfinite(gppb)
    if quint.any():
        q0, q1, q2, q3, q4, q5 = quintic_basis(s)
        hh = h[quint]
        Q = (
            q0 * ga[quint, None]
            + q1 * (hh * gpa[quint])[:, None]
            + q2 * (hh * hh * gppa[quint])[:, None]
            + q3 * gb[quint, None]
            + q4 * (hh * gpb[quint])[:, None]
            + q5 * (hh * hh * gppb[quint])[:, None]
        )
        P[quint] = Q
    flip = np.sign(P) != np.sign(ga)[:, None]
    j = np.argmax(flip, axis=1)
    ok = flip[np.arange(j.size), j] & (j > 0)
    jj = np.maximum(j, 1)
    rows = np.arange(j.size)
    p0, p1 = P[rows, jj - 1], P[rows, jj]
    s0, s1 = s[0, jj - 1], s[0, jj]
    with np.errstate(divide="ignore", invalid="ignore"):
        # refine the bracketing pair by one secant step of the model itself
        sr = np.where(ok, s0 - p0 * (s1 - s0) / (p1 - p0), ga / (ga - gb))
    sr = np.where(np.isfinite(sr), sr, 0.5)
    sr = np.clip(sr, 1e-6, 1 - 1e-6)
    # the model's curvature near the root, |g''| [per s^2], for the Newton error estimate
    jc = np.clip(jj, 1, s.shape[1] - 2)
    ds = s[0, 1] - s[0, 0]
    curv = np.abs(P[rows, jc + 1] - 2 * P[rows, jc] + P[rows, jc - 1]) / (ds * h) ** 2
    return a + sr * h, curv
