"""Rate constants in exact arithmetic: the Arrhenius law and a scheme's named constants.

An :class:`Arrhenius` law is evaluated exactly (40 digits, R exact) by :meth:`Arrhenius.exact`,
for arrays of temperatures and parameters by :func:`arrhenius_pairs` (double-double pairs,
each distinct evaluation once); a :class:`RateConstant` holds a constant as the file
defined it: a value, a law or an expression of named quantities.  Both are re-exported by
:mod:`kinetics.scheme`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from fractions import Fraction
from functools import lru_cache

import numpy as np

from .definitions import Dependencies, needs_temperature
from .units import GAS_CONSTANT_EXACT, checked_kelvin

__all__ = ["ARRHENIUS_CACHE", "Arrhenius", "RateConstant", "arrhenius_pairs"]


@dataclass(frozen=True, slots=True)
class Arrhenius:
    r"""Arrhenius parameters of a rate constant.

    .. math:: k(T) = A \exp\left(-\frac{E_a}{R T}\right)

    Attributes
    ----------
    prefactor_si : Fraction
        Pre-exponential factor A in SI base units (1/s for first order).
    activation_energy : float
        Ea [J/mol].
    prefactor_text, energy_text : str
        As written.

    References
    ----------
    S. Arrhenius, Z. Phys. Chem. 4, 226 (1889).
    """

    prefactor_si: Fraction
    activation_energy: float
    prefactor_text: str = ""
    energy_text: str = ""

    def at(self, temperature: float) -> float:
        r"""The constant in SI units at ``temperature`` [K] (``inf`` if it overflows).

        Parameters
        ----------
        temperature : float
            Thermodynamic temperature [K], above 0.

        Returns
        -------
        float
            :math:`A \exp(-E_a / R T)` in SI base units [1/s for first order],
            correctly rounded from :meth:`exact`.

        Examples
        --------
        Half-life of 1 h at 298.15 K for A = 1e13 1/s needs Ea near 101.7 kJ/mol
        (k = ln 2 / 3600 s; closed form Ea = R T ln(A/k), checked here by the round trip):

        >>> import math
        >>> from kinetics.units import GAS_CONSTANT
        >>> T = 298.15
        >>> Ea = GAS_CONSTANT * T * math.log(1e13 / (math.log(2) / 3600))
        >>> a = Arrhenius(Fraction(10**13), Ea)
        >>> round(math.log(2) / a.at(T), 6)
        3600.0
        """
        from . import _doubledouble as dd

        return dd.pair(self.exact(temperature))[0]

    def exact(self, temperature: float) -> Fraction:
        r""":math:`A \exp(-E_a/RT)` from the given A, Ea and T, to 40 decimal digits.

        The prefactor is the exact SI value of what the file wrote, ``Ea`` and the
        temperature are taken as the doubles given, and R is the exact CODATA 2018 value
        (:data:`kinetics.units.GAS_CONSTANT_EXACT`).

        Examples
        --------
        A = 1e13 1/s and Ea = 100 kJ/mol at 298.15 K, against the closed form in floats:

        >>> import math
        >>> k = Arrhenius(Fraction(10**13), 1e5).exact(298.15)
        >>> math.isclose(k, 1e13 * math.exp(-1e5 / (8.31446261815324 * 298.15)), rel_tol=1e-14)
        True
        """
        from . import _doubledouble as dd

        checked_kelvin(temperature)
        exponent = -Fraction(self.activation_energy) / (GAS_CONSTANT_EXACT * Fraction(temperature))
        return self.prefactor_si * dd.decimal_exp(exponent)

    def slopes(self, temperature: float) -> dict[str, Fraction]:
        r"""Partial derivatives of :meth:`exact` [SI], differentiated by hand.

        With respect to ``A``, ``Ea`` and the temperature:

        .. math:: \frac{\partial k}{\partial A} = e^{-E_a/RT}, \quad
                  \frac{\partial k}{\partial E_a} = -\frac{k}{RT}, \quad
                  \frac{\partial k}{\partial T} = \frac{k E_a}{R T^2}

        Without an activation energy, :math:`k = A` and :math:`\partial k/\partial E_a =
        -A/RT`:

        >>> d = Arrhenius(Fraction(2), 0.0).slopes(300.0)
        >>> d["A"], d["Ea"] == -2 / (GAS_CONSTANT_EXACT * 300), d["temperature"]
        (Fraction(1, 1), True, Fraction(0, 1))
        """
        k = Arrhenius(Fraction(1), self.activation_energy).exact(temperature)
        rt = GAS_CONSTANT_EXACT * Fraction(temperature)
        value = self.prefactor_si * k
        return {
            "A": k,
            "Ea": -value / rt,
            "temperature": value * Fraction(self.activation_energy) / (rt * Fraction(temperature)),
        }


#: distinct (Arrhenius, A, Ea, T) evaluations kept by :func:`arrhenius_pairs`
ARRHENIUS_CACHE = 4096


@lru_cache(maxsize=ARRHENIUS_CACHE)
def _exact_pair(arrhenius: Arrhenius, a_hi, a_lo, energy, temperature) -> tuple[float, float]:
    """One exact evaluation, rounded to a double-double pair (``None``: the law's own value)."""
    from . import _doubledouble as dd

    law = arrhenius
    if a_hi is not None or energy is not None:
        law = replace(
            arrhenius,
            prefactor_si=arrhenius.prefactor_si
            if a_hi is None
            else Fraction(a_hi) + Fraction(a_lo),
            activation_energy=arrhenius.activation_energy if energy is None else energy,
        )
    return dd.pair(law.exact(temperature))


def arrhenius_pairs(
    arrhenius: Arrhenius, temperature, prefactor=None, prefactor_low=None, energy=None
) -> tuple[np.ndarray, np.ndarray]:
    r"""Arrhenius constants for arrays of temperatures and parameters, as double-double pairs.

    .. math:: k(T) = A \exp\left(-\frac{E_a}{R T}\right)

    Every value goes through :meth:`Arrhenius.exact` (40 significant digits, exact R),
    once per distinct ``(A, Ea, T)``: a temperature grid costs one exact evaluation per
    temperature, and repeated values (the rows of a sweep grid, the evaluations of a
    fit) are taken from a cache of :data:`ARRHENIUS_CACHE` entries.

    Parameters
    ----------
    arrhenius : Arrhenius
        The law; its own ``A`` (exact) and ``Ea`` where ``prefactor``/``energy`` are None.
    temperature : float or array_like
        Thermodynamic temperatures [K], above 0.
    prefactor, prefactor_low : float or array_like, optional
        Pre-exponential factors as double-double pairs [SI base units, 1/s for first
        order] (``prefactor_low`` zero when not given).
    energy : float or array_like, optional
        Activation energies [J/mol] (the doubles given, as :meth:`Arrhenius.exact` takes
        them).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        ``hi`` and ``lo`` of the broadcast shape; ``hi + lo`` is the exact constant to
        about :math:`2^{-106}` relative (``(inf, 0)`` beyond the double range).

    Raises
    ------
    TemperatureError
        For a temperature that is not above 0 K.

    References
    ----------
    S. Arrhenius, Z. Phys. Chem. 4, 226 (1889).

    Examples
    --------
    The ratio of k at 35 and 25 degC for Ea = 83.144 kJ/mol is
    :math:`\exp(E_a/R\,(1/T_1 - 1/T_2)) \approx 2.97` (closed form of the Arrhenius
    equation):

    >>> law = Arrhenius(Fraction(10**12), 83144.0)
    >>> hi, lo = arrhenius_pairs(law, [298.15, 308.15])
    >>> round(float(hi[1] / hi[0]), 2)
    2.97
    """
    columns = [np.asarray(temperature, dtype=float)]
    if prefactor is not None:
        low = 0.0 if prefactor_low is None else prefactor_low
        columns += [np.asarray(prefactor, dtype=float), np.asarray(low, dtype=float)]
    if energy is not None:
        columns.append(np.asarray(energy, dtype=float))
    shape = np.broadcast_shapes(*(x.shape for x in columns))
    rows = np.stack([np.broadcast_to(x, shape).reshape(-1) for x in columns], axis=1)
    distinct, inverse = np.unique(rows, axis=0, return_inverse=True)
    values = np.empty((distinct.shape[0], 2))
    for i, row in enumerate(distinct.tolist()):
        ah, alo = (row[1], row[2]) if prefactor is not None else (None, None)
        e = row[-1] if energy is not None else None
        values[i] = _exact_pair(arrhenius, ah, alo, e, row[0])
    out = values[inverse.reshape(-1)]
    return out[:, 0].reshape(shape), out[:, 1].reshape(shape)


@dataclass(frozen=True, slots=True)
class RateConstant:
    """A named rate constant as defined in the file.

    Attributes
    ----------
    name : str
    text : str
        The definition as written (``0.12 1/min`` or ``arrhenius(...)``).
    value_si : Fraction or None
        Exact value in SI base units (``None`` for constants whose value depends on
        the temperature: Arrhenius constants and constants derived from a temperature
        law).  A constant derived from an expression holds the exact value of the
        expression (transcendental functions to 40 digits).
    unit : str
        Unit as written (for Arrhenius: the unit of A; for an expression: the SI unit
        of its dimension, :func:`kinetics.units.si_unit`).
    order : int
        Concentration order implied by the units: 0 for 1/time, 1 for
        1/(concentration time), ...
    arrhenius : Arrhenius or None
    line : int
    derived : Dependencies or None
        For a constant defined by an expression (``k2 = k1 / 3``): the scheme's graph of
        definitions it follows from (:mod:`kinetics.definitions`); None for a constant
        written as a value or as an Arrhenius law of plain values.
    """

    name: str
    text: str
    value_si: Fraction | None
    unit: str
    order: int
    arrhenius: Arrhenius | None = None
    line: int = 0
    derived: Dependencies | None = None

    def exact(self, temperature: float | None) -> Fraction:
        r"""The exact constant in SI base units (at ``temperature`` [K] when it depends on one).

        Raises
        ------
        TemperatureError
            When it depends on the temperature and ``temperature`` is None.

        Examples
        --------
        0.12 1/min is exactly 1/500 1/s (1 min = 60 s, SI brochure, 9th edition, 2019,
        table 8):

        >>> from kinetics import parse
        >>> parse("A -> B  k1 = 0.12 1/min\nstart A = 1 M").constants["k1"].exact(None)
        Fraction(1, 500)
        """
        if self.value_si is not None:
            return self.value_si
        if temperature is None:
            raise needs_temperature(self.name, self.arrhenius is not None)
        if self.arrhenius is not None:
            return self.arrhenius.exact(temperature)
        assert self.derived is not None  # a constant has a value, a law or an expression
        return self.derived.value(self.name, temperature)

    def si_value(self, temperature: float | None) -> float:
        r"""The constant in SI base units (at ``temperature`` [K] for Arrhenius ones).

        Examples
        --------
        The closed form :math:`A e^{-E_a/RT}` at 298.15 K, rounded once:

        >>> from kinetics import parse
        >>> s = parse("A -> B  k = arrhenius(A = 1e13 1/s, Ea = 100 kJ/mol)\ntemperature = 25 degC")
        >>> s.constants["k"].si_value(298.15)
        3.0252269963687423e-05
        """
        if self.arrhenius is not None:
            if temperature is None:
                raise needs_temperature(self.name, arrhenius=True)
            return self.arrhenius.at(temperature)
        if self.value_si is not None:
            return float(self.value_si)
        from . import _doubledouble as dd

        return dd.pair(self.exact(temperature))[0]
