r"""Atom and mass balance of a scheme.

Mass conservation is checked two ways:

1. **Atoms per reaction**, from the element formulas: for every reaction whose
   species all have formulas (excess co-reactants and products included), the
   element counts of both sides must agree.
2. **Numerically**, for the tracked species: with the molar-mass vector
   :math:`m` [g/mol], a closed scheme satisfies

   .. math:: m^\mathsf{T} K = 0,

   i.e. every step turns reactant mass into the same product mass.  The largest
   relative residual :math:`|(m^\mathsf{T} K)_j| / (m_j \sum_s k_s)` is reported,
   the sum running over the steps that consume species :math:`j`: it is the
   fraction of the reactant's mass gained or lost per unit of conversion (0.2 for
   a lumped step 100 g/mol -> 80 g/mol), over the columns whose species all have
   known molar masses.
   Steps whose tracked mass changes (lumped species, excess co-reactants that
   add mass, excess products that take it away) are named.

Element formulas are read with the ``periodictable`` package (its element table
and standard atomic weights), not a hand-written table.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from .scheme import Reaction, Scheme

__all__ = [
    "AtomBalance",
    "MassBalance",
    "atom_balance",
    "element_counts",
    "formula_mass",
    "mass_balance",
    "parse_formula",
]


#: Formulas are element symbols with counts and parentheses, nothing else (the
#: formula library also reads mixtures, densities and isotope labels, which a
#: reaction scheme does not need).
_FORMULA_CHARS = re.compile(r"[^A-Za-z0-9.()]")


@functools.lru_cache(maxsize=1024)
def parse_formula(text: str):
    """Parse an element formula with periodictable; raise ValueError if it does not parse.

    Parameters
    ----------
    text : str
        E.g. ``"C6H12O6"``, ``"CH3COOH"``, ``"Ca(OH)2"``.

    Returns
    -------
    periodictable.formulas.Formula

    Examples
    --------
    >>> str(parse_formula("CH3COOH").hill)
    'C2H4O2'
    """
    import periodictable

    if not text or (not text[0].isupper() and text[0] != "("):
        raise ValueError("a formula starts with an element symbol such as C or Na")
    bad = _FORMULA_CHARS.search(text)
    if bad:
        raise ValueError(f"unexpected {bad.group(0)!r} at character {bad.start() + 1}")
    if text.count("(") != text.count(")"):
        raise ValueError("unbalanced parentheses")
    try:
        formula = periodictable.formula(text)
    except Exception as exc:  # periodictable raises pyparsing and value errors
        message = str(exc).splitlines()[0] if str(exc) else ""
        raise ValueError(message or "not a formula") from None
    if not formula.atoms:
        raise ValueError("no elements found")
    if any(not count > 0 for count in formula.atoms.values()):
        raise ValueError("an element count is zero")
    return formula


def element_counts(text: str) -> dict[str, float]:
    """Element symbol -> count for a formula (``"H2O"`` -> ``{"H": 2, "O": 1}``).

    Parameters
    ----------
    text : str
        An element formula such as ``"Ca(OH)2"``.

    Returns
    -------
    dict of str to float
        Number of atoms of each element per formula unit.

    Raises
    ------
    ValueError
        When the formula does not parse (see :func:`parse_formula`).

    Examples
    --------
    >>> element_counts("Ca(OH)2")
    {'Ca': 1.0, 'O': 2.0, 'H': 2.0}
    """
    return dict(_counts(text))


@functools.lru_cache(maxsize=4096)
def _counts(text: str) -> tuple[tuple[str, float], ...]:
    """:func:`element_counts` as a tuple, kept per formula (schemes repeat formulas)."""
    return tuple((str(el), float(n)) for el, n in parse_formula(text).atoms.items())


def formula_mass(text: str) -> float:
    r"""Molar mass of a formula [g/mol] from standard atomic weights.

    .. math:: M = \sum_e n_e A_{r,e} \; \mathrm{g/mol}

    Parameters
    ----------
    text : str
        An element formula such as ``"C6H12O6"``.

    Returns
    -------
    float
        Molar mass [g/mol].

    Notes
    -----
    The atomic weights are those tabulated by the ``periodictable`` package
    (IUPAC standard atomic weights, in the revision that package ships);
    glucose gives 180.156 g/mol.

    References
    ----------
    IUPAC Commission on Isotopic Abundances and Atomic Weights, standard atomic
    weights, revised periodically; the 2021 revision: T. Prohaska et al.,
    "Standard atomic weights of the elements 2021 (IUPAC Technical Report)",
    Pure Appl. Chem. 94, 573-600 (2022).

    Examples
    --------
    Glucose with the conventional standard atomic weights C 12.011, H 1.008 and
    O 15.999 (the IUPAC table cited above): 6 · 12.011 + 12 · 1.008 + 6 · 15.999
    = 180.156 g/mol:

    >>> round(formula_mass("C6H12O6"), 6), round(formula_mass("H2O"), 6)
    (180.156, 18.015)
    """
    return float(parse_formula(text).mass)


@dataclass(frozen=True)
class AtomBalance:
    """Element counts of both sides of one reaction.

    Attributes
    ----------
    left, right : dict of str to float
    ok : bool
        True when every element count agrees (to 1e-9 relative).
    """

    left: dict[str, float]
    right: dict[str, float]
    ok: bool

    @staticmethod
    def _text(counts: dict[str, float]) -> str:
        return " ".join(f"{el}{n:g}" for el, n in sorted(counts.items()))

    @property
    def left_text(self) -> str:
        """Element counts of the left side, e.g. ``C6 H12 O6``."""
        return self._text(self.left)

    @property
    def right_text(self) -> str:
        """Element counts of the right side."""
        return self._text(self.right)


def atom_balance(reaction: Reaction, formulas: dict[str, str | None]) -> AtomBalance | None:
    r"""Compare element counts of both sides of ``reaction``.

    .. math:: \sum_{i \in \mathrm{left}} \nu_i n_{e,i} =
              \sum_{j \in \mathrm{right}} \nu_j n_{e,j} \quad \text{for every element } e

    Parameters
    ----------
    reaction : Reaction
        The reaction as written (excess co-reactants and products included).
    formulas : dict of str to str or None
        Element formula of each species name.

    Returns
    -------
    AtomBalance or None
        ``None`` when some species of the reaction has no formula (the check
        then does not apply).

    Examples
    --------
    Ethane splitting into two methyl radicals, C2H6 -> 2 CH3: 2 C and 6 H on each side
    (closed form above):

    >>> from kinetics import parse
    >>> s = parse("A -> 2 B  k1 = 0.1 1/s\nformula A = C2H6, B = CH3\nstart A = 1 M")
    >>> atom_balance(s.reactions[0], {"A": "C2H6", "B": "CH3"})
    AtomBalance(left={'C': 2.0, 'H': 6.0}, right={'C': 2.0, 'H': 6.0}, ok=True)
    """
    left = tuple((c, formulas.get(name)) for c, name in reaction.left)
    right = tuple((c, formulas.get(name)) for c, name in reaction.right)
    if any(formula is None for _, formula in left + right):
        return None
    left_counts, right_counts, ok = _balance_of_formulas(left, right)
    return AtomBalance(dict(left_counts), dict(right_counts), ok)


@functools.lru_cache(maxsize=65536)
def _balance_of_formulas(left, right) -> tuple[tuple, tuple, bool]:
    """Element counts of both sides given as (coefficient, formula) pairs, and the verdict.

    Kept per combination of formulas: large schemes repeat the same few (isomers).
    """

    def side(terms) -> dict[str, float]:
        total: dict[str, float] = {}
        for coefficient, formula in terms:
            for el, n in _counts(formula):
                total[el] = total.get(el, 0.0) + coefficient * n
        return total

    lhs, rhs = side(left), side(right)
    ok = set(lhs) == set(rhs) and all(
        abs(lhs[el] - rhs[el]) <= 1e-9 * max(abs(lhs[el]), 1.0) for el in lhs
    )
    return tuple(lhs.items()), tuple(rhs.items()), ok


@dataclass(frozen=True)
class MassBalance:
    r"""The mass-balance verdict of a scheme.

    Attributes
    ----------
    ok : bool
        True when every reaction with formulas balances and no tracked step
        creates or destroys mass.
    reactions : list of dict
        Per reaction: ``equation``, ``line``, ``atoms`` (``"balanced"``,
        ``"unbalanced"`` or ``"not checked"``), ``left``/``right`` element counts.
    checked : bool
        False when no species has a formula or molar mass (nothing could be checked).
    max_relative_residual : float or None
        Largest :math:`|(m^T K)_j| / (m_j \sum k)` over species with known
        molar mass; ``None`` when no molar masses are known.
    mass_changing_steps : list of dict
        Steps whose tracked mass changes: ``equation``, ``reason``.
    """

    ok: bool
    checked: bool
    reactions: list[dict]
    max_relative_residual: float | None
    mass_changing_steps: list[dict]

    def to_dict(self) -> dict:
        """JSON-ready form."""
        return {
            "ok": self.ok,
            "checked": self.checked,
            "reactions": self.reactions,
            "max_relative_residual": self.max_relative_residual,
            "mass_changing_steps": self.mass_changing_steps,
        }


def mass_balance(scheme: Scheme) -> MassBalance:
    r"""Check the atom balance of each reaction and the numerical mass balance m·K = 0.

    .. math:: r_j = \frac{|(m^\mathsf{T} K)_j|}{m_j \sum_{s:\,\mathrm{reactant}(s)=j} k_s}

    Parameters
    ----------
    scheme : Scheme
        A parsed scheme; molar masses [g/mol] come from its formulas or
        ``molar_mass`` lines, rate constants [1/s] from its rate matrix.

    Returns
    -------
    MassBalance
        Per-reaction atom counts, the largest residual :math:`r_j` over the
        columns whose species all have known masses, and the steps whose
        tracked mass changes (each with its reason).

    Notes
    -----
    A closed scheme of tracked species has :math:`r_j = 0` up to rounding.
    Co-reactants held in excess add mass to the tracked species and excess
    products take it away; such steps are named but do not fail the check.
    A step whose total mass (excess species included) changes fails it.

    Examples
    --------
    A lumped step from 100 g/mol to 80 g/mol loses a fifth of the mass it converts
    (closed form above: r = |80 k - 100 k| / (100 k) = 0.2):

    >>> from kinetics import parse
    >>> s = parse("A -> B  k1 = 0.1 1/s\nmolar_mass A = 100 g/mol, B = 80 g/mol\n"
    ...           "balance: lumped\nstart A = 1 M")
    >>> result = mass_balance(s)
    >>> round(result.max_relative_residual, 12), result.ok
    (0.2, False)
    """
    all_species = scheme.species + scheme.excess_species
    formulas = {s.name: s.formula for s in all_species}
    masses = {s.name: s.molar_mass for s in all_species}
    reactions, atoms_ok = _atoms_per_reaction(scheme, formulas)
    known = {name: m for name, m in masses.items() if m is not None}
    changing = _mass_changing_steps(scheme, known)
    ok = atoms_ok and not any("creates or destroys" in c["reason"] for c in changing)
    return MassBalance(ok, bool(known), reactions, _largest_residual(scheme), changing)


def _atoms_per_reaction(scheme: Scheme, formulas: dict[str, str | None]) -> tuple[list, bool]:
    """Each reaction's atom verdict as a JSON-ready entry, and whether all balance."""
    reactions = []
    atoms_ok = True
    for r in scheme.reactions:
        result = atom_balance(r, formulas)
        entry: dict[str, object] = {"equation": r.equation, "line": r.line}
        if result is None:
            entry["atoms"] = "not checked"
            missing = sorted({n for _, n in r.left + r.right if formulas.get(n) is None})
            entry["reason"] = "no formula for " + ", ".join(missing)
        else:
            entry["atoms"] = "balanced" if result.ok else "unbalanced"
            entry["left"] = result.left
            entry["right"] = result.right
            atoms_ok &= result.ok
        reactions.append(entry)
    return reactions, atoms_ok


def _largest_residual(scheme: Scheme) -> float | None:
    """The largest relative residual r_j of m^T K = 0 (None without known molar masses)."""
    m = scheme.molar_masses
    known = ~np.isnan(m)
    if not known.any():
        return None
    K = scheme.rate_matrix_sparse()
    mm = np.where(known, m, 0.0)
    r = K.T @ mm  # (m^T K)_j
    # scale: total first-order outflow of species j, sum of k_s over its steps
    outflow = np.zeros(len(m))
    rates = scheme.rates
    for s, step in enumerate(scheme.steps):
        outflow[scheme.index[step.reactant]] += rates[s]
    # only columns whose every entry belongs to a species of known mass
    touches_unknown = abs(K).T @ (~known).astype(float) > 0
    cols = known & (outflow > 0) & ~touches_unknown
    if not cols.any():
        return None
    return float((np.abs(r[cols]) / (mm[cols] * outflow[cols])).max())


def _mass_changing_steps(scheme: Scheme, masses: dict[str, float]) -> list[dict]:
    """The steps whose tracked mass changes, with the reason.

    Only steps whose species all have known molar masses [g/mol]; the others are reported
    per reaction.
    """
    changing = []
    for step in scheme.steps:
        left = [(1.0, step.reactant), *step.co_reactants]
        right = list(step.products)
        if any(n not in masses for _, n in left + right):
            continue
        tracked_in = masses[step.reactant]
        tracked_out = sum(c * masses[n] for c, n in step.products if n in scheme.index)
        if abs(tracked_out - tracked_in) <= 1e-9 * tracked_in:
            continue
        reasons = []
        if step.co_reactants:
            partners = ", ".join(n for _, n in step.co_reactants)
            reasons.append(f"takes up mass from {partners} (held in excess)")
        excess_products = [n for _, n in step.products if n not in scheme.index]
        if excess_products:
            reasons.append("releases mass as " + ", ".join(excess_products) + " (held in excess)")
        total_in = sum(c * masses[n] for c, n in left)
        total_out = sum(c * masses[n] for c, n in right)
        if abs(total_out - total_in) > 1e-9 * total_in:
            reasons.append(
                f"creates or destroys mass ({total_in:.6g} g/mol in, {total_out:.6g} g/mol out)"
            )
        changing.append({"equation": step.equation, "reason": "; ".join(reasons)})
    return changing
