"""Exact constants of the 2019 SI that the package computes with.

The gas constant of the Arrhenius law and of the mean kinetic temperature, the Boltzmann
and Planck constants of the Eyring law, the Avogadro constant of activities.  Each is
defined exactly (BIPM, SI brochure, 9th edition, 2019, table 1; CODATA 2018) and kept as a
:class:`fractions.Fraction`.
"""

from __future__ import annotations

from fractions import Fraction

__all__ = [
    "AVOGADRO_EXACT",
    "BOLTZMANN_EXACT",
    "GAS_CONSTANT",
    "GAS_CONSTANT_EXACT",
    "PLANCK_EXACT",
]

#: Molar gas constant R [J/(mol K)]: exactly N_A k = 6.02214076e23 * 1.380649e-23
#: = 8.31446261815324 in the 2019 SI (CODATA 2018; both factors are defined exactly).
GAS_CONSTANT_EXACT = Fraction("8.31446261815324")
GAS_CONSTANT = float(GAS_CONSTANT_EXACT)
#: Boltzmann constant k_B [J/K], exact in the 2019 SI (BIPM, SI brochure, 9th edition,
#: 2019, table 1; CODATA 2018).
BOLTZMANN_EXACT = Fraction("1.380649e-23")
#: Planck constant h [J s], exact in the 2019 SI (same source).
PLANCK_EXACT = Fraction("6.62607015e-34")
#: Avogadro constant N_A [1/mol], exact in the 2019 SI (same source).
AVOGADRO_EXACT = Fraction("6.02214076e23")
