r"""The rate matrix K, the feed vector and their sparse forms.

For a scheme of irreversible first-order steps :math:`X_r \to \sum_p \nu_p X_p`
with effective constants :math:`k_s` [1/s], the concentrations obey

.. math:: \frac{dc}{dt} = K c + f, \qquad
          K_{rr} \mathrel{-}= k_s, \quad K_{pr} \mathrel{+}= \nu_p k_s,

so column *j* of K describes what happens to species *j*: its diagonal entry is
minus its total outflow, its off-diagonal entries (all >= 0) are the rates at
which it forms the others.  K is *essentially nonnegative* (a Metzler matrix),
the property the propagation engine relies on.  Excess species are constant
and have no row or column.

The matrix is assembled from a fixed pattern (row, column, coefficient, step)
times the step rates, so a batch of parameter sets costs one multiply.

The engine receives K as a double-double pair :math:`K_{hi} + K_{lo}`: the step
rates are the exact values of the constants as written (exact unit conversion,
exact products with excess concentrations, Arrhenius constants to 40 digits)
rounded to double-double, and the entries, above all the diagonal
:math:`-\sum k`, are summed without rounding.  A diagonal rounded to double would
act like a small spurious leak (or source) that slow modes feel over long times.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse

from . import _doubledouble as dd
from .new_values import checked_constant, checked_excess
from .units import checked_kelvin

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "RatePattern",
    "dense_rate_matrix",
    "rate_matrix_pair",
    "rate_pattern",
    "sparse_rate_matrix",
    "step_rate_pairs",
    "step_rates",
]


@dataclass(frozen=True)
class RatePattern:
    r"""Sparse pattern of K: entry ``K[rows[e], cols[e]] += coefficients[e] * rates[steps[e]]``.

    Attributes
    ----------
    n : int
        Number of matrix species.
    rows, cols, steps : numpy.ndarray of int
    coefficients : numpy.ndarray of float

    Examples
    --------
    A <=> B: the forward step leaves A and forms B, the reverse step the other way round
    (closed form of :func:`rate_pattern`):

    >>> import kinetics
    >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
    >>> p = rate_pattern(s)
    >>> p.rows.tolist(), p.cols.tolist(), p.steps.tolist(), p.coefficients.tolist()
    ([0, 1, 1, 0], [0, 0, 1, 1], [0, 0, 1, 1], [-1.0, 1.0, -1.0, 1.0])
    """

    n: int
    rows: np.ndarray
    cols: np.ndarray
    steps: np.ndarray
    coefficients: np.ndarray

    def values(self, rates: np.ndarray) -> np.ndarray:
        r"""Entry values for step rates of shape ``(n_steps,)`` or ``(batch, n_steps)``.

        Examples
        --------
        Closed form :math:`c_e k_{s(e)}`: for A <=> B with rates 1 and 2 1/s:

        >>> import kinetics
        >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
        >>> rate_pattern(s).values([1.0, 2.0]).tolist()
        [-1.0, 1.0, -2.0, 2.0]
        """
        return self.coefficients * np.asarray(rates)[..., self.steps]

    def dense_pair(self, rates, rates_low=None) -> tuple[np.ndarray, np.ndarray]:
        r"""Dense K as a double-double pair ``(K_hi, K_lo)`` for step rates ``rates + rates_low``.

        Each entry :math:`\sum_e c_e k_{s(e)}` is formed with error-free products and
        double-double sums, so ``K_hi`` is the entry rounded once and ``K_lo`` the
        rest (a few units of :math:`2^{-106}` relative).

        Parameters
        ----------
        rates, rates_low : array_like, shape ``(n_steps,)`` or ``(batch, n_steps)``
            Step rates [1/s] and their low-order parts (zero when not given).

        Returns
        -------
        (ndarray, ndarray)
            Shape ``(n, n)`` or ``(batch, n, n)``.

        Examples
        --------
        0.12 1/min is exactly 1/500 1/s (1 min = 60 s), which no double is; the pair holds
        it to :math:`2^{-106}` relative (closed form above):

        >>> from fractions import Fraction
        >>> import kinetics
        >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
        >>> Kh, Kl = rate_pattern(s).dense_pair(*s.rate_pairs)
        >>> abs(Fraction(Kh[1, 0]) + Fraction(Kl[1, 0]) - Fraction(1, 500)) < Fraction(1, 10**34)
        True
        """
        hi, lo = self._entries(rates, rates_low)
        Kh, Kl = dd.accumulate(self.rows * self.n + self.cols, hi, lo, self.n * self.n)
        shape = (*hi.shape[:-1], self.n, self.n)
        return Kh.reshape(shape), Kl.reshape(shape)

    def dense(self, rates: np.ndarray) -> np.ndarray:
        r"""Dense K of shape ``(n, n)`` or ``(batch, n, n)`` for the given step rates [1/s].

        Examples
        --------
        A batch of two rate sets for A <=> B; each K is [[-kf, kr], [kf, -kr]] (closed form
        of :func:`rate_pattern`):

        >>> import kinetics
        >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
        >>> rate_pattern(s).dense([[1.0, 2.0], [3.0, 4.0]]).tolist()
        [[[-1.0, 2.0], [1.0, -2.0]], [[-3.0, 4.0], [3.0, -4.0]]]
        """
        return self.dense_pair(rates)[0]

    def sparse_pair(self, rates, rates_low=None):
        r"""K as a pair of CSR matrices with one pattern (see :meth:`dense_pair`).

        Examples
        --------
        Closed form of :func:`rate_pattern`, as for :meth:`dense`:

        >>> import kinetics
        >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
        >>> Kh, Kl = rate_pattern(s).sparse_pair([1.0, 2.0])
        >>> Kh.toarray().tolist(), Kl.nnz
        ([[-1.0, 2.0], [1.0, -2.0]], 4)
        """
        hi, lo = self._entries(rates, rates_low)
        linear = self.rows * self.n + self.cols
        where, inverse = np.unique(linear, return_inverse=True)
        Kh, Kl = dd.accumulate(inverse.reshape(-1), hi, lo, where.size)
        rows, cols = np.divmod(where, self.n)
        shape = (self.n, self.n)

        def csr(values):
            return scipy.sparse.csr_array(
                scipy.sparse.coo_array((values, (rows, cols)), shape=shape)
            )

        return csr(Kh), csr(Kl)

    def sparse(self, rates: np.ndarray) -> scipy.sparse.csr_array:
        r"""Sparse K (CSR, duplicates summed) for one set of step rates [1/s].

        Examples
        --------
        Two parallel steps A -> B add up in one entry (closed form
        :math:`K_{BA} = k_1 + k_2`):

        >>> import kinetics
        >>> s = kinetics.parse("A -> B  k1 = 1 1/s\nA -> B  k2 = 2 1/s\nstart A = 1 M")
        >>> rate_pattern(s).sparse([1.0, 2.0]).toarray().tolist()
        [[-3.0, 0.0], [3.0, 0.0]]
        """
        return self.sparse_pair(rates)[0]

    def _entries(self, rates, rates_low):
        rates = np.asarray(rates, dtype=float)
        low = np.zeros_like(rates) if rates_low is None else np.asarray(rates_low, dtype=float)
        c = self.coefficients
        return dd.product(
            np.broadcast_to(c, rates.shape[:-1] + c.shape),
            np.zeros(c.shape),
            rates[..., self.steps],
            low[..., self.steps],
        )


def rate_pattern(scheme: Scheme) -> RatePattern:
    r"""Build the sparse pattern of the rate matrix of ``scheme``.

    .. math:: K = \sum_e c_e \, k_{s(e)} \, \mathbf{e}_{r(e)} \mathbf{e}_{q(e)}^\mathsf{T}

    Diagonal entries (outflows, :math:`c_e = -1`) come first for each step, then
    the formation entries (:math:`c_e = \nu_p`); excess products are dropped
    (their concentration is held constant).

    Parameters
    ----------
    scheme : Scheme

    Returns
    -------
    RatePattern
        Rows, columns, coefficients and step index of every entry; multiply by
        step rates [1/s] with :meth:`RatePattern.dense` or :meth:`RatePattern.sparse`,
        also for a batch of rate sets at once.

    Examples
    --------
    A -> 2 B with k = 0.5 1/s: :math:`K_{AA} = -k` and :math:`K_{BA} = 2k` (closed form
    above):

    >>> import kinetics
    >>> rate_pattern(kinetics.parse("A -> 2 B  k1 = 0.5 1/s\nstart A = 1 M")).dense([0.5])
    array([[-0.5,  0. ],
           [ 1. ,  0. ]])
    """
    index = scheme.index
    rows: list[int] = []
    cols: list[int] = []
    steps: list[int] = []
    coefficients: list[float] = []
    for s, step in enumerate(scheme.steps):
        r = index[step.reactant]
        rows.append(r)
        cols.append(r)
        steps.append(s)
        coefficients.append(-1.0)
        for nu, product in step.products:
            p = index.get(product)
            if p is None:  # an excess species: buffered, not in the matrix
                continue
            rows.append(p)
            cols.append(r)
            steps.append(s)
            coefficients.append(float(nu))
    return RatePattern(
        n=len(scheme.species),
        rows=np.asarray(rows, dtype=np.int64),
        cols=np.asarray(cols, dtype=np.int64),
        steps=np.asarray(steps, dtype=np.int64),
        coefficients=np.asarray(coefficients, dtype=float),
    )


def step_rates(
    scheme: Scheme,
    constants: dict[str, float] | None = None,
    temperature: float | None = None,
    excess: dict[str, float] | None = None,
) -> np.ndarray:
    r"""Effective first-order rate constant of each step [1/s].

    .. math:: k_\mathrm{eff} = k \prod_j [W_j]^{\nu_j}

    The product is formed exactly (rational arithmetic) for constants given as
    numbers, so that a pseudo-first-order constant carries one rounding only.

    Parameters
    ----------
    scheme : Scheme
    constants : dict of str to float, optional
        Override values of named constants, in SI base units [1/s for first order].
    temperature : float, optional
        Override temperature [K] for Arrhenius constants.
    excess : dict of str to float, optional
        Override excess concentrations [scheme concentration unit].

    Returns
    -------
    numpy.ndarray
        Rates in the order of ``scheme.steps``; ``inf`` where a product overflows.

    Raises
    ------
    ConstantError
        For an unknown constant name, or a constant that is negative or not finite.
    SpeciesError
        For an unknown excess species.
    ConcentrationError
        For an excess concentration that is negative or not finite.
    TemperatureError
        For a temperature that is not finite and above 0 K, or none where a constant
        needs one.

    Notes
    -----
    Non-integer excess coefficients and Arrhenius constants are evaluated to 40
    decimal digits before the one rounding.

    Examples
    --------
    Hydrolysis in water held in excess, closed form :math:`k_\mathrm{eff} = k [W]`:
    1.5e-4 M⁻¹ s⁻¹ times 55 mol/L is 8.25e-3 1/s, and half of it at 27.5 mol/L:

    >>> import kinetics
    >>> s = kinetics.parse(
    ...     "E + W -> F  k4 = 1.5e-4 M-1 s-1\nexcess W = 55 mol/L\nstart E = 1 M"
    ... )
    >>> step_rates(s), step_rates(s, excess={"W": 27.5})
    (array([0.00825]), array([0.004125]))
    """
    return np.array(
        [_to_float(x) for x in _exact_rates(scheme, constants, temperature, excess)], dtype=float
    ).reshape(len(scheme.steps))


def step_rate_pairs(
    scheme: Scheme,
    constants: dict[str, float] | None = None,
    temperature: float | None = None,
    excess: dict[str, float] | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    r"""Effective rate constant of each step [1/s] as a double-double pair ``(hi, lo)``.

    The same values as :func:`step_rates` (which returns ``hi``), with the low-order
    parts that make ``hi + lo`` the exact value of the constants as written to about
    :math:`2^{-106}` relative (Arrhenius constants to 40 decimal digits).

    Parameters
    ----------
    scheme, constants, temperature, excess
        As in :func:`step_rates`.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        ``hi`` and ``lo``, one entry per step.

    Examples
    --------
    0.12 1/min is exactly 1/500 1/s (closed form; 1 min = 60 s, SI brochure, 9th edition,
    2019, table 8); the pair holds it to about :math:`2^{-106}` relative:

    >>> from fractions import Fraction
    >>> import kinetics
    >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
    >>> hi, lo = step_rate_pairs(s)
    >>> exact = Fraction(hi[0]) + Fraction(lo[0])
    >>> float(hi[0]), abs(exact - Fraction(1, 500)) < Fraction(1, 10**34)
    (0.002, True)
    """
    pairs = [dd.pair(x) for x in _exact_rates(scheme, constants, temperature, excess)]
    hi = np.array([p[0] for p in pairs], dtype=float).reshape(len(scheme.steps))
    lo = np.array([p[1] for p in pairs], dtype=float).reshape(len(scheme.steps))
    return hi, lo


def _exact_rates(scheme: Scheme, constants, temperature, excess) -> list:
    """The exact effective rate of every step (``Fraction``; ``inf`` on overflow)."""
    constants = constants or {}
    excess = excess or {}
    _check_overrides(scheme, constants, temperature, excess)
    # the one evaluation of the constants: plain, temperature laws, derived (exact)
    exact = scheme.exact_constants(temperature, constants)
    cache: dict[tuple, Fraction | float] = {}
    values: list = []
    for step in scheme.steps:
        if not step.co_reactants:
            values.append(exact[step.constant])
            continue
        key = (step.constant, step.co_reactants)
        if key not in cache:
            cache[key] = _effective(scheme, exact[step.constant], step.co_reactants, excess)
        values.append(cache[key])
    return values


def _effective(scheme: Scheme, k: Fraction, co_reactants, excess) -> Fraction | float:
    """K times the excess concentrations to their powers, exactly (``inf`` on overflow).

    Integer powers are exact rationals; other powers are evaluated to 40 decimal
    digits (:func:`kinetics._doubledouble.decimal_power`).
    """
    result: Fraction | float = k
    for nu, name in co_reactants:
        if name in excess:
            w = Fraction(excess[name]) * scheme.concentration_si
        else:
            w = scheme.excess_si[name]
        nu = Fraction(nu)
        if nu.denominator == 1 and nu <= 64:
            result = result * w ** int(nu)
        else:
            result = result * dd.decimal_power(w, nu)
        if result > _HUGE:
            return math.inf
    return result


#: beyond this an exact product is certainly outside the double range
_HUGE = Fraction(2) ** 1100


def _to_float(value) -> float:
    """Round once to the nearest double (int / int true division is correctly rounded)."""
    try:
        if type(value) is Fraction:
            return value.numerator / value.denominator
        return float(value)
    except OverflowError:
        return math.inf


def _check_overrides(scheme: Scheme, constants, temperature, excess) -> None:
    """Other constants, temperature and excess concentrations, checked as new values are."""
    for name, value in constants.items():
        checked_constant(scheme, name, value)
    for name, value in excess.items():
        checked_excess(scheme, name, value)
    if temperature is not None:
        checked_kelvin(temperature)


def dense_rate_matrix(scheme: Scheme, rates: np.ndarray | None = None) -> np.ndarray:
    r"""The dense rate matrix K [1/s] for step ``rates`` (default: the scheme's).

    .. math:: K_{rr} \mathrel{-}= k_s, \qquad K_{pr} \mathrel{+}= \nu_p k_s

    Parameters
    ----------
    scheme : Scheme
    rates : numpy.ndarray, optional
        Effective rate constant of each step [1/s], shape ``(n_steps,)``.

    Returns
    -------
    numpy.ndarray
        Shape ``(n, n)``, species in matrix order.

    Examples
    --------
    A <=> B: K = [[-kf, kr], [kf, -kr]] (closed form above) with kf = 0.12 1/min =
    0.002 1/s and kr = 0.03 1/min = 0.0005 1/s:

    >>> import kinetics
    >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
    >>> dense_rate_matrix(s).tolist()
    [[-0.002, 0.0005], [0.002, -0.0005]]
    """
    rates = scheme.rates if rates is None else rates
    return rate_pattern(scheme).dense(rates)


#: schemes with more species keep their rate matrix sparse
DENSE_STORAGE_MAX = 200


def rate_matrix_pair(scheme: Scheme):
    r"""The scheme's rate matrix as a double-double pair ``(K_hi, K_lo)`` [1/s].

    ``K_hi`` is every entry rounded once from the exact sum of the constants as
    written, ``K_lo`` the rest, so the diagonal :math:`-\sum k` reaches the engine
    unrounded.  Read-only dense arrays up to :data:`DENSE_STORAGE_MAX` species, CSR
    matrices above.

    Examples
    --------
    Two outflows of 0.1 and 0.2 1/s: the diagonal is exactly -0.3, which no double is.

    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/s\nA -> C  k2 = 0.2 1/s\nstart A = 1 M")
    >>> Kh, Kl = rate_matrix_pair(s)
    >>> from fractions import Fraction
    >>> Fraction(Kh[0, 0]) + Fraction(Kl[0, 0]) + Fraction(3, 10) < Fraction(1, 10**32)
    True
    """
    pattern = rate_pattern(scheme)
    if len(scheme.species) > DENSE_STORAGE_MAX:
        return pattern.sparse_pair(*scheme.rate_pairs)
    Kh, Kl = pattern.dense_pair(*scheme.rate_pairs)
    Kh.setflags(write=False)
    Kl.setflags(write=False)
    return Kh, Kl


def sparse_rate_matrix(scheme: Scheme, rates: np.ndarray | None = None) -> scipy.sparse.csr_array:
    r"""The rate matrix K [1/s] in CSR form for step ``rates`` (default: the scheme's).

    Parameters
    ----------
    scheme : Scheme
    rates : numpy.ndarray, optional
        Effective rate constant of each step [1/s], shape ``(n_steps,)``.

    Returns
    -------
    scipy.sparse.csr_array
        Shape ``(n, n)``; entries of the same place summed.

    Examples
    --------
    The same K as :func:`dense_rate_matrix` (closed form there), stored sparse:

    >>> import kinetics
    >>> s = kinetics.parse("A <=> B  kf = 0.12 1/min, kr = 0.03 1/min\nstart A = 1 M")
    >>> sparse_rate_matrix(s).toarray().tolist()
    [[-0.002, 0.0005], [0.002, -0.0005]]
    """
    rates = scheme.rates if rates is None else rates
    return rate_pattern(scheme).sparse(rates)
