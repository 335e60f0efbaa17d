r"""Temperature laws of rate constants: Eyring and Q10 beside Arrhenius.

Also the table of the laws an expression may call.

Each law is an immutable record of its parameters in exact SI values with an
``exact(temperature)`` method (40 significant digits, exact CODATA constants) and an
``at(temperature)`` method (the double nearest to it).  The Arrhenius law is
:class:`kinetics.scheme.Arrhenius`; :data:`LAWS` gives all three to the scheme reader
and to :func:`kinetics.expressions.evaluate` under the names a file writes:
``arrhenius(A = ..., Ea = ...)``, ``eyring(dH = ..., dS = ...)`` and
``q10(k_ref, T_ref, Q10)``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

from . import _doubledouble as dd
from .errors import ExpressionError
from .expressions import LawSpec, Parameter, dims_of, shown
from .rate_constants import Arrhenius
from .units import BOLTZMANN_EXACT, GAS_CONSTANT_EXACT, PLANCK_EXACT

__all__ = ["LAWS", "Q10", "Eyring"]

_MOLAR_ENERGY = dims_of({"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1})
_MOLAR_ENTROPY = dims_of(
    {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1, "[temperature]": -1}
)
_TEMPERATURE = dims_of({"[temperature]": 1})


def _kelvin(temperature: float) -> Fraction:
    if not temperature > 0:
        raise ExpressionError(
            f"the temperature {shown(Fraction(temperature))} K is not above 0 K",
            "give a temperature above 0 K",
        )
    return Fraction(temperature)


@dataclass(frozen=True, slots=True)
class Eyring:
    r"""The transition-state (Eyring) equation of a first-order rate constant.

    .. math:: k(T) = \frac{k_B T}{h}
              \exp\left(\frac{\Delta S^\ddagger}{R}\right)
              \exp\left(-\frac{\Delta H^\ddagger}{R T}\right)

    with a transmission coefficient of 1.

    Attributes
    ----------
    enthalpy : Fraction
        :math:`\Delta H^\ddagger` [J/mol], exact.
    entropy : Fraction
        :math:`\Delta S^\ddagger` [J/(mol K)], exact.

    Notes
    -----
    :math:`k_B`, :math:`h` and :math:`R = N_A k_B` are exact in the 2019 SI
    (:data:`kinetics.units.BOLTZMANN_EXACT`, :data:`kinetics.units.PLANCK_EXACT`).  The
    result is in 1/s; a pseudo-first-order step divides it by a concentration in the
    expression (``eyring(...) / (1 M)``).

    References
    ----------
    H. Eyring, "The activated complex in chemical reactions", J. Chem. Phys. 3, 107-115
    (1935). doi:10.1063/1.1749604

    Examples
    --------
    At 298.15 K with :math:`\Delta H^\ddagger = 0` and :math:`\Delta S^\ddagger = 0` the
    constant is :math:`k_B T / h = 6.2124 \times 10^{12}` 1/s (hand value from the exact
    constants):

    >>> round(Eyring(Fraction(0), Fraction(0)).at(298.15) / 1e12, 4)
    6.2124
    """

    enthalpy: Fraction
    entropy: Fraction

    def exact(self, temperature: float) -> Fraction:
        r"""The constant [1/s] at ``temperature`` [K] (the double given) to 40 digits.

        Examples
        --------
        The closed form :math:`k_B T/h \cdot e^{\Delta S/R} e^{-\Delta H/RT}` in floats,
        with the exact 2019 SI values of k_B, h and R, for ΔH = 80 kJ/mol and
        ΔS = -20 J/(mol K) at 298.15 K:

        >>> import math
        >>> k = Eyring(Fraction(80000), Fraction(-20)).exact(298.15)
        >>> kB, h, R = 1.380649e-23, 6.62607015e-34, 8.31446261815324
        >>> by_hand = kB * 298.15 / h * math.exp(-20 / R) * math.exp(-80000 / (R * 298.15))
        >>> math.isclose(k, by_hand, rel_tol=1e-13)
        True
        """
        t = _kelvin(temperature)
        exponent = self.entropy / GAS_CONSTANT_EXACT - self.enthalpy / (GAS_CONSTANT_EXACT * t)
        return BOLTZMANN_EXACT * t / PLANCK_EXACT * dd.decimal_exp(exponent)

    def at(self, temperature: float) -> float:
        r"""The constant [1/s] at ``temperature`` [K], correctly rounded from :meth:`exact`.

        Examples
        --------
        The closed form :math:`k_B T/h \cdot e^{\Delta S/R} e^{-\Delta H/RT}` for
        ΔH = 80 kJ/mol and ΔS = -20 J/(mol K) at 298.15 K is about 5.41e-3 1/s:

        >>> f"{Eyring(Fraction(80000), Fraction(-20)).at(298.15):.4g}"
        '0.00541'
        """
        return dd.pair(self.exact(temperature))[0]


@dataclass(frozen=True, slots=True)
class Q10:
    r"""Scaling of a rate constant by a factor per 10 K.

    .. math:: k(T) = k_\mathrm{ref} \, Q_{10}^{(T - T_\mathrm{ref}) / 10\,\mathrm{K}}

    Attributes
    ----------
    reference : Fraction
        :math:`k_\mathrm{ref}` [SI base units, 1/s for first order], exact.
    reference_temperature : Fraction
        :math:`T_\mathrm{ref}` [K], exact.
    factor : Fraction
        :math:`Q_{10}`, above 0.

    Notes
    -----
    A rule of common practice (no source): the factor by which a rate grows for a rise
    of 10 K.  An integer number of 10 K steps gives an exact rational power; other
    temperatures a power to 40 digits.

    Examples
    --------
    Two steps of 10 K with Q10 = 2 multiply by 4 (closed form above):

    >>> Q10(Fraction(1, 100), Fraction(300), Fraction(2)).exact(320.0)
    Fraction(1, 25)
    """

    reference: Fraction
    reference_temperature: Fraction
    factor: Fraction

    def exact(self, temperature: float) -> Fraction:
        r"""The constant at ``temperature`` [K] (the double given), exact or to 40 digits.

        Examples
        --------
        Closed form :math:`k_\mathrm{ref} Q_{10}^{(T - T_\mathrm{ref})/10\,\mathrm{K}}`:
        two steps of 10 K with Q10 = 2 multiply by 4 exactly:

        >>> Q10(Fraction(1, 100), Fraction(300), Fraction(2)).exact(320.0)
        Fraction(1, 25)
        """
        t = _kelvin(temperature)
        if not self.factor > 0:
            raise ExpressionError(
                f"the factor Q10 is {shown(self.factor)}, not above 0",
                "write Q10 as a number above 0, e.g. 2.5",
            )
        if not self.reference_temperature > 0:
            raise ExpressionError(
                f"the reference temperature {shown(self.reference_temperature)} K is not above 0 K",
                "write T_ref above 0 K, e.g. 25 degC",
            )
        steps = (t - self.reference_temperature) / 10
        if abs(float(steps) * math.log(float(self.factor))) > 9000:
            raise ExpressionError(
                f"the Q10 factor {shown(self.factor)} over {shown(steps * 10)} K is beyond 1e±3900",
                "check the temperatures and the factor",
            )
        if steps.denominator == 1 and abs(steps) <= 1000:
            return self.reference * self.factor ** int(steps)
        return self.reference * dd.decimal_power(self.factor, steps)

    def at(self, temperature: float) -> float:
        r"""The constant at ``temperature`` [K], correctly rounded from :meth:`exact`.

        Examples
        --------
        Closed form :math:`k_\mathrm{ref} Q_{10}^{(T - T_\mathrm{ref})/10\,\mathrm{K}}`:
        half a step (5 K) with Q10 = 2 multiplies by :math:`\sqrt 2`:

        >>> import math
        >>> k = Q10(Fraction(1, 100), Fraction(300), Fraction(2)).at(305.0)
        >>> math.isclose(k, 0.01 * math.sqrt(2), rel_tol=1e-15)
        True
        """
        return dd.pair(self.exact(temperature))[0]


def _arrhenius(values: Mapping[str, Fraction], temperature: float) -> Fraction:
    # the one Arrhenius law, Ea as the double it is kept as (Arrhenius.activation_energy)
    return Arrhenius(values["A"], float(values["Ea"])).exact(temperature)


def _eyring(values: Mapping[str, Fraction], temperature: float) -> Fraction:
    return Eyring(values["dH"], values["dS"]).exact(temperature)


def _q10(values: Mapping[str, Fraction], temperature: float) -> Fraction:
    return Q10(values["k_ref"], values["T_ref"], values["Q10"]).exact(temperature)


# -- partial derivatives (differentiated by hand from the equations above) ----------------


def _arrhenius_slopes(values: Mapping[str, Fraction], temperature: float, k: Fraction) -> dict:
    # the one Arrhenius law's derivatives (Arrhenius.slopes), Ea as the double it is kept as
    return Arrhenius(values["A"], float(values["Ea"])).slopes(temperature)


def _eyring_slopes(values: Mapping[str, Fraction], temperature: float, k: Fraction) -> dict:
    r"""Partial derivatives of the Eyring constant.

    :math:`\partial k/\partial\Delta H = -k/RT`, :math:`\partial k/\partial\Delta S = k/R`,
    :math:`\partial k/\partial T = k\,(1/T + \Delta H/RT^2)`.
    """
    t = _kelvin(temperature)
    rt = GAS_CONSTANT_EXACT * t
    return {
        "dH": -k / rt,
        "dS": k / GAS_CONSTANT_EXACT,
        "temperature": k * (1 / t + values["dH"] / (rt * t)),
    }


def _q10_slopes(values: Mapping[str, Fraction], temperature: float, k: Fraction) -> dict:
    r"""Partial derivatives of the Q10 constant.

    :math:`\partial k/\partial k_\mathrm{ref} = Q_{10}^{(T -
    T_\mathrm{ref})/10\,\mathrm{K}}`, :math:`\partial k/\partial T = -\partial k/\partial
    T_\mathrm{ref} = k \ln Q_{10} / 10\,\mathrm{K}`, :math:`\partial k/\partial Q_{10} =
    k\,(T - T_\mathrm{ref}) / (10\,\mathrm{K}\, Q_{10})`.
    """
    t = _kelvin(temperature)
    law = Q10(Fraction(1), values["T_ref"], values["Q10"])
    growth = law.exact(temperature)  # checks Q10 > 0 and T_ref > 0 with their messages
    per_kelvin = k * (Fraction(0) if law.factor == 1 else dd.decimal_ln(law.factor)) / 10
    return {
        "k_ref": growth,
        "T_ref": -per_kelvin,
        "Q10": k * (t - law.reference_temperature) / (10 * law.factor),
        "temperature": per_kelvin,
    }


#: The temperature laws an expression may call, by the name a file writes.
LAWS: dict[str, LawSpec] = {
    "arrhenius": LawSpec(
        "arrhenius",
        "the Arrhenius law",
        "Arrhenius",
        (
            Parameter(
                "A",
                "the pre-exponential factor",
                "1.0e13 1/s",
                None,
                "a rate constant",
                "give A in the units of the rate constant, e.g. A = 1.0e13 1/s",
            ),
            Parameter(
                "Ea",
                "the activation energy",
                "95 kJ/mol",
                _MOLAR_ENERGY,
                "a molar energy",
                "write Ea in kJ/mol or J/mol, e.g. Ea = 95 kJ/mol",
            ),
        ),
        "arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)",
        False,
        "A",
        _arrhenius,
        _arrhenius_slopes,
    ),
    "eyring": LawSpec(
        "eyring",
        "the Eyring equation",
        "Eyring",
        (
            Parameter(
                "dH",
                "the activation enthalpy",
                "80 kJ/mol",
                _MOLAR_ENERGY,
                "a molar energy",
                "write dH in kJ/mol or J/mol, e.g. dH = 80 kJ/mol",
            ),
            Parameter(
                "dS",
                "the activation entropy",
                "-20 J/mol/K",
                _MOLAR_ENTROPY,
                "a molar entropy (energy per amount and kelvin)",
                "write dS in J/mol/K, e.g. dS = -20 J/mol/K",
            ),
        ),
        "eyring(dH = 80 kJ/mol, dS = -20 J/mol/K)",
        False,
        None,
        _eyring,
        _eyring_slopes,
    ),
    "q10": LawSpec(
        "q10",
        "a Q10 law",
        "Q10",
        (
            Parameter(
                "k_ref",
                "the reference rate constant",
                "0.05 1/d",
                None,
                "a rate constant",
                "give k_ref in the units of a rate constant, e.g. 0.05 1/d",
            ),
            Parameter(
                "T_ref",
                "the reference temperature",
                "25 degC",
                _TEMPERATURE,
                "a temperature",
                "write T_ref in K or degC, e.g. 25 degC",
            ),
            Parameter(
                "Q10",
                "the factor per 10 K",
                "2.5",
                (),
                "a pure number",
                "write Q10 as a pure number, e.g. 2.5",
            ),
        ),
        "q10(0.05 1/d, 25 degC, 2.5)",
        True,
        "k_ref",
        _q10,
        _q10_slopes,
    ),
}
