"""The rate matrix K, the feed vector and their sparse forms.

For a scheme of irreversible first-order steps :math:`X_r \\to \\sum_p \\nu_p X_p`
with effective constants :math:`k_s` [1/s], the concentrations obey

.. math:: \\frac{dc}{dt} = K c + f, \\qquad
          K_{rr} \\mathrel{-}= k_s, \\quad K_{pr} \\mathrel{+}= \\nu_p k_s,

so column *j* of K describes what happens to species *j*: its diagonal entry is
minus its total outflow, its off-diagonal entries (all >= 0) are the rates at
which it forms the others.  K is *essentially nonnegative* (a Metzler matrix),
the property the propagation engine relies on.  Excess species are constant
and have no row or column.

The matrix is assembled from a fixed pattern (row, column, coefficient, step)
times the step rates, so a batch of parameter sets costs one multiply.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = ["RatePattern", "dense_rate_matrix", "rate_pattern", "sparse_rate_matrix", "step_rates"]


@dataclass(frozen=True)
class RatePattern:
    """Sparse pattern of K: entry ``K[rows[e], cols[e]] += coefficients[e] * rates[steps[e]]``.

    Attributes
    ----------
    n : int
        Number of matrix species.
    rows, cols, steps : numpy.ndarray of int
    coefficients : numpy.ndarray of float
    """

    n: int
    rows: np.ndarray
    cols: np.ndarray
    steps: np.ndarray
    coefficients: np.ndarray

    def values(self, rates: np.ndarray) -> np.ndarray:
        """Entry values for step rates of shape ``(n_steps,)`` or ``(batch, n_steps)``."""
        return self.coefficients * np.asarray(rates)[..., self.steps]

    def dense(self, rates: np.ndarray) -> np.ndarray:
        """Dense K of shape ``(n, n)`` or ``(batch, n, n)`` for the given step rates [1/s]."""
        rates = np.asarray(rates, dtype=float)
        values = self.values(rates)
        out = np.zeros((*rates.shape[:-1], self.n, self.n))
        flat = out.reshape(-1, self.n * self.n)
        linear = self.rows * self.n + self.cols
        for b, vals in enumerate(values.reshape(-1, values.shape[-1])):
            np.add.at(flat[b], linear, vals)
        return out

    def sparse(self, rates: np.ndarray) -> scipy.sparse.csr_array:
        """Sparse K (CSR, duplicates summed) for one set of step rates [1/s]."""
        values = self.values(np.asarray(rates, dtype=float))
        return scipy.sparse.csr_array(
            scipy.sparse.coo_array((values, (self.rows, self.cols)), shape=(self.n, self.n))
        )


def rate_pattern(scheme: Scheme) -> RatePattern:
    """Build the sparse pattern of the rate matrix of ``scheme``.

    Diagonal entries (outflows) come first for each step, then the formation
    entries; excess products are dropped (their concentration is held constant).
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
    """Effective first-order rate constant of each step [1/s].

    .. math:: k_\\mathrm{eff} = k \\prod_j [W_j]^{\\nu_j}

    The product is formed exactly (rational arithmetic) for constants given as
    numbers, so that a pseudo-first-order constant carries one rounding only.

    Parameters
    ----------
    scheme : Scheme
    constants : dict of str to float, optional
        Override values of named constants, in SI base units.
    temperature : float, optional
        Override temperature [K] for Arrhenius constants.
    excess : dict of str to float, optional
        Override excess concentrations [scheme concentration unit].

    Returns
    -------
    numpy.ndarray
        Rates in the order of ``scheme.steps``.
    """
    constants = constants or {}
    excess = excess or {}
    temperature = scheme.temperature if temperature is None else temperature
    rates = np.empty(len(scheme.steps))
    for s, step in enumerate(scheme.steps):
        definition = scheme.constants[step.constant]
        if step.constant in constants:
            k: Fraction | float = Fraction(constants[step.constant])
        elif definition.arrhenius is not None:
            k = Fraction(definition.si_value(temperature))
        else:
            k = definition.value_si
        for nu, name in step.co_reactants:
            if name in excess:
                w = Fraction(excess[name]) * scheme._unit_factor
            else:
                w = scheme._excess_si[name]
            nu = Fraction(nu)
            if nu.denominator == 1:
                k = k * w ** int(nu)
            else:
                k = Fraction(float(k) * float(w) ** float(nu))
        rates[s] = float(k)
    return rates


def dense_rate_matrix(scheme: Scheme, rates: np.ndarray | None = None) -> np.ndarray:
    """The dense rate matrix K [1/s] for step ``rates`` (default: the scheme's)."""
    rates = scheme.rates if rates is None else rates
    return rate_pattern(scheme).dense(rates)


def sparse_rate_matrix(scheme: Scheme, rates: np.ndarray | None = None) -> scipy.sparse.csr_array:
    """The rate matrix K [1/s] in CSR form for step ``rates`` (default: the scheme's)."""
    rates = scheme.rates if rates is None else rates
    return rate_pattern(scheme).sparse(rates)
