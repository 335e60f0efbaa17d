"""The checked reaction scheme: species, rate constants, reactions and steps.

A :class:`Scheme` is what :func:`kinetics.load` and :func:`kinetics.parse`
return.  It is immutable; every number in it is already converted to the
canonical units of the core:

* time in seconds, first-order (effective) rate constants in 1/s;
* concentrations (start, excess, feed) in the scheme's own
  ``concentration_unit`` (the unit of the first start value, kept for output);
* feed rates in ``concentration_unit`` per second;
* temperature in kelvin.

Species held in excess are constant and are not part of the rate matrix; the
matrix species are the others, in order of first appearance in the reactions.

The exact arithmetic of rate constants (:class:`Arrhenius`, :func:`arrhenius_pairs`,
:class:`RateConstant`) lives in :mod:`kinetics.rate_constants` and is re-exported here;
the rate matrices in :mod:`kinetics.ratematrix`; the exact constants at new values and the
copy with new values (:meth:`Scheme.exact_constants`, :meth:`Scheme.with_values`) in
:mod:`kinetics.new_values`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property

import numpy as np

from . import new_values
from .definitions import Dependencies, NamedQuantity
from .errors import SpeciesError
from .rate_constants import ARRHENIUS_CACHE as ARRHENIUS_CACHE
from .rate_constants import Arrhenius, RateConstant, arrhenius_pairs
from .requirements import Requirement
from .timeline_statements import Timeline

__all__ = [
    "Arrhenius",
    "RateConstant",
    "Reaction",
    "Scheme",
    "Species",
    "Step",
    "arrhenius_pairs",
]


@dataclass(frozen=True, slots=True)
class Species:
    """A species of the scheme.

    Attributes
    ----------
    name : str
        As written in the file.
    formula : str or None
        Element formula (``C6H12O6``) when declared.
    molar_mass : float or None
        [g/mol], from the formula or a ``molar_mass`` declaration.
    excess : bool
        True for a co-reactant held at constant concentration.
    line : int
        Line of first appearance.
    """

    name: str
    formula: str | None = None
    molar_mass: float | None = None
    excess: bool = False
    line: int = 0


@dataclass(frozen=True, slots=True)
class Step:
    """One irreversible first-order step, the unit the rate matrix is built from.

    A reversible reaction contributes two steps (forward and reverse).

    Attributes
    ----------
    reactant : str
        The one species consumed.
    products : tuple of (float, str)
        Stoichiometric coefficient and name of each product (excess products included).
    constant : str
        Name of the rate constant.
    co_reactants : tuple of (float, str)
        Excess co-reactants on the reacting side: the constant is multiplied by
        their concentrations to the power of their coefficients.
    reaction : int
        Index of the reaction (line) this step comes from.
    direction : str
        ``"forward"`` or ``"reverse"``.
    """

    reactant: str
    products: tuple[tuple[float, str], ...]
    constant: str
    co_reactants: tuple[tuple[float, str], ...] = ()
    reaction: int = 0
    direction: str = "forward"

    @property
    def key(self) -> tuple:
        """What the step does, independent of how it is written and of its constant.

        Reactant, co-reactants and products with their coefficients, each sorted by
        name. Two steps with one key are parallel (their rates add up).
        """
        return (self.reactant, _merged(self.co_reactants), _merged(self.products))

    @property
    def equation(self) -> str:
        """The step written out, e.g. ``A + W -> B``.

        ``P -> (untracked)`` for the share of a decay that goes to no species of the
        scheme.
        """
        left = " + ".join([self.reactant] + [_term(c, n) for c, n in self.co_reactants])
        right = " + ".join(_term(c, n) for c, n in self.products) or "(untracked)"
        return f"{left} -> {right}"


def _merged(terms: tuple[tuple[float, str], ...]) -> tuple[tuple[str, float], ...]:
    """Terms with one entry per species (``B + B`` is ``2 B``), sorted by name."""
    total: dict[str, float] = {}
    for coefficient, name in terms:
        total[name] = total.get(name, 0.0) + coefficient
    return tuple(sorted(total.items()))


def _term(coefficient: float, name: str) -> str:
    if coefficient == 1:
        return name
    text = f"{coefficient:g}"
    return f"{text} {name}"


@dataclass(frozen=True, slots=True)
class Reaction:
    """A reaction line as written.

    Attributes
    ----------
    left, right : tuple of (float, str)
        Terms of each side.
    reversible : bool
    constants : tuple of str
        One name (irreversible) or forward and reverse names.
    line : int
    text : str
        The source line.
    """

    left: tuple[tuple[float, str], ...]
    right: tuple[tuple[float, str], ...]
    reversible: bool
    constants: tuple[str, ...]
    line: int = 0
    text: str = ""

    @property
    def equation(self) -> str:
        """The reaction written out in canonical form (``B <=> D``)."""
        arrow = "<=>" if self.reversible else "->"
        left = " + ".join(_term(c, n) for c, n in self.left)
        right = " + ".join(_term(c, n) for c, n in self.right)
        return f"{left} {arrow} {right}"


@dataclass(frozen=True, eq=False)
class Scheme:
    """A checked first-order reaction scheme.

    Build it with :func:`kinetics.parse` or :func:`kinetics.load`.

    Attributes
    ----------
    species : tuple of Species
        Matrix species in order of first appearance (excess species excluded).
    excess_species : tuple of Species
        Co-reactants held at constant concentration.
    reactions : tuple of Reaction
    steps : tuple of Step
    constants : dict of str to RateConstant
    initial : dict of str to float
        Start concentrations [concentration_unit]; species not listed start at 0.
    excess : dict of str to float
        Excess concentrations [concentration_unit].
    feed : dict of str to float
        Zero-order inputs [concentration_unit/s].
    temperature : float or None
        [K].
    concentration_unit : str
        A pint-parsable unit of amounts, as the user wrote it; for a file in mass units
        its amount twin (``mmol/L`` for ``mg/L``: masses are converted with molar masses).
    title : str
    source : str
        File name, or ``"<text>"``.
    text : str
        The scheme as written.
    allow_imbalance : bool
        True when the file opted out of the atom-balance error (lumped schemes).
    written_unit : str
        The unit of the first start value as written (``mg/L``): the unit outputs use
        unless told otherwise (see :meth:`kinetics.solution.Solution.in_unit`); equal to
        ``concentration_unit`` for files in amounts.
    warnings : tuple of str
        Sentences about probable mistakes that do not stop the file from loading
        (parallel steps, constants no step uses, nothing to start from), each led by
        ``file:line:``; the command line prints them on stderr.
    quantities : dict of str to NamedQuantity
        Named quantities that are not rate constants (``t_p = 50 h``), exact SI values.
    dependencies : Dependencies
        Which named quantity drives which constant (:meth:`driven_by`,
        :meth:`exact_constants`, :meth:`with_values`).
    requirements : tuple of Requirement
        The ``require`` lines, thresholds in ``concentration_unit``.
    start_activities : dict of str to Fraction
        Start values written as activities [Bq, or Bq per volume or mass], exact;
        ``initial`` holds their amounts, which follow the decay constants.
    timeline : Timeline
        The operations of the run (additions, removals, temperature steps and ramps,
        feed windows; :mod:`kinetics.timeline`), empty for a run of constant
        conditions; :func:`kinetics.solve` honours them.  Set it with
        :meth:`with_timeline`; its numbers written as names follow :meth:`with_values`.
    """

    species: tuple[Species, ...]
    excess_species: tuple[Species, ...]
    reactions: tuple[Reaction, ...]
    steps: tuple[Step, ...]
    constants: dict[str, RateConstant]
    initial: dict[str, float]
    excess: dict[str, float]
    feed: dict[str, float]
    temperature: float | None
    concentration_unit: str
    written_unit: str = ""
    title: str = ""
    source: str = "<text>"
    text: str = ""
    allow_imbalance: bool = False
    warnings: tuple[str, ...] = ()
    quantities: dict[str, NamedQuantity] = field(default_factory=dict)
    dependencies: Dependencies = field(default_factory=Dependencies)
    requirements: tuple[Requirement, ...] = ()
    start_activities: dict[str, Fraction] = field(default_factory=dict)
    timeline: Timeline = field(default_factory=Timeline)
    _excess_si: dict[str, Fraction] = field(default_factory=dict, repr=False)
    _unit_factor: Fraction = field(default=Fraction(1), repr=False)

    # -- exact values --------------------------------------------------------
    @property
    def excess_si(self) -> dict[str, Fraction]:
        """Excess concentrations as exact SI values [mol/m^3] (a copy)."""
        return dict(self._excess_si)

    @property
    def concentration_si(self) -> Fraction:
        r"""The SI value of one :attr:`concentration_unit` [mol/m^3], exact.

        Examples
        --------
        1 mmol/L = 10⁻³ mol / 10⁻³ m³ = 1 mol/m³ (closed form; SI brochure, 9th edition,
        2019, table 8 for the litre):

        >>> from kinetics import parse
        >>> parse("A -> B  k1 = 1 1/s\nstart A = 1 mmol/L").concentration_si
        Fraction(1, 1)
        """
        return self._unit_factor

    # -- names and vectors -------------------------------------------------
    @property
    def species_names(self) -> list[str]:
        """Names of the matrix species, in matrix order."""
        return [s.name for s in self.species]

    @cached_property
    def index(self) -> dict[str, int]:
        """Matrix index of each species name."""
        return {s.name: i for i, s in enumerate(self.species)}

    @cached_property
    def _by_name(self) -> dict[str, Species]:
        return {s.name: s for s in self.species + self.excess_species}

    def species_by_name(self, name: str) -> Species:
        """The :class:`Species` called ``name`` (matrix or excess).

        Raises
        ------
        SpeciesError
            When the scheme has no species of that name.
        """
        try:
            return self._by_name[name]
        except KeyError:
            raise SpeciesError(
                f"no species named {name!r} in the scheme",
                "species: " + ", ".join(self._by_name),
            ) from None

    @property
    def initial_vector(self) -> np.ndarray:
        """Start concentrations in matrix order [concentration_unit]."""
        c0 = np.zeros(len(self.species))
        for name, value in self.initial.items():
            c0[self.index[name]] = value
        return c0

    @property
    def feed_vector(self) -> np.ndarray:
        """Zero-order inputs in matrix order [concentration_unit/s]."""
        f = np.zeros(len(self.species))
        for name, value in self.feed.items():
            f[self.index[name]] = value
        return f

    @property
    def molar_masses(self) -> np.ndarray:
        """Molar masses in matrix order [g/mol]; NaN where unknown."""
        return np.array(
            [np.nan if s.molar_mass is None else s.molar_mass for s in self.species], dtype=float
        )

    # -- rate constants --------------------------------------------------------
    def step_rates(
        self, constants: dict[str, float] | None = None, temperature: float | None = None
    ) -> np.ndarray:
        r"""Effective first-order rate constant of every step [1/s].

        .. math:: k_\mathrm{eff} = k \prod_j [W_j]^{\nu_j}

        for excess co-reactants :math:`W_j` with coefficients :math:`\nu_j`.

        Parameters
        ----------
        constants : dict of str to float, optional
            Override values in SI base units (1/s for first-order constants).
        temperature : float, optional
            Override temperature [K] for Arrhenius constants.

        Returns
        -------
        numpy.ndarray
            One rate per step, in the order of :attr:`steps`.

        Examples
        --------
        From 25 to 35 degC an Arrhenius constant grows by the closed form
        :math:`\exp(E_a/R\,(1/T_1 - 1/T_2)) = 3.7028` for Ea = 100 kJ/mol:

        >>> from kinetics import parse
        >>> s = parse("A -> B  k = arrhenius(A = 1e13 1/s, Ea = 100 kJ/mol)\ntemperature = 25 degC")
        >>> round(float(s.step_rates(temperature=308.15)[0] / s.step_rates()[0]), 4)
        3.7028
        """
        from .ratematrix import step_rates

        return step_rates(self, constants=constants, temperature=temperature)

    @cached_property
    def rate_pairs(self) -> tuple[np.ndarray, np.ndarray]:
        """Effective rate constant of every step as a double-double pair ``(hi, lo)`` [1/s].

        ``hi + lo`` is the exact value of the constants as written to about
        :math:`2^{-106}` (see :func:`kinetics.ratematrix.step_rate_pairs`).
        """
        from .ratematrix import step_rate_pairs

        hi, lo = step_rate_pairs(self)
        hi.setflags(write=False)
        lo.setflags(write=False)
        return hi, lo

    @cached_property
    def rates(self) -> np.ndarray:
        r"""Effective rate constant of every step at the scheme's values [1/s].

        Examples
        --------
        0.12 1/min = 0.002 1/s and 0.3 1/h = 1/12000 1/s (SI brochure, 9th edition, 2019,
        table 8):

        >>> from kinetics import parse
        >>> parse("A -> B  k1 = 0.12 1/min\nB -> C  k2 = 0.3 1/h").rates.tolist()
        [0.002, 8.333333333333333e-05]
        """
        return self.rate_pairs[0]

    @cached_property
    def _rate_matrix_pair(self) -> tuple:
        from .ratematrix import rate_matrix_pair

        return rate_matrix_pair(self)

    def rate_matrix_pair(self):
        """The rate matrix as a double-double pair ``(K_hi, K_lo)`` [1/s], computed once.

        See :func:`kinetics.ratematrix.rate_matrix_pair`.
        """
        return self._rate_matrix_pair

    def rate_matrix(self) -> np.ndarray:
        r"""The rate matrix K [1/s], dense, species × species in matrix order.

        .. math:: \frac{dc}{dt} = K c + f

        Examples
        --------
        A chain A -> B -> C: K = [[-k1, 0, 0], [k1, -k2, 0], [0, k2, 0]] (closed form):

        >>> from kinetics import parse
        >>> parse("A -> B  k1 = 2 1/s\nB -> C  k2 = 1 1/s\nstart A = 1 M").rate_matrix().tolist()
        [[-2.0, 0.0, 0.0], [2.0, -1.0, 0.0], [0.0, 1.0, 0.0]]
        """
        from .ratematrix import dense_rate_matrix

        return dense_rate_matrix(self, self.rates)

    def rate_matrix_sparse(self):
        """The rate matrix K [1/s] as a ``scipy.sparse.csr_array``."""
        from .ratematrix import sparse_rate_matrix

        return sparse_rate_matrix(self, self.rates)

    def constant_per_second(self, name: str) -> float:
        r"""A first-order constant in 1/s, or a higher-order one in SI base units.

        Examples
        --------
        0.12 1/min is 0.002 1/s (1 min = 60 s, SI brochure, 9th edition, 2019, table 8):

        >>> from kinetics import parse
        >>> parse("A -> B  k1 = 0.12 1/min\nstart A = 1 M").constant_per_second("k1")
        0.002
        """
        return self.constants[name].si_value(self.temperature)

    # -- new values: functions of kinetics.new_values, with their documentation -----
    exact_constants = new_values.exact_constants
    constant_slopes = new_values.constant_slopes
    temperature_constants = property(new_values.temperature_constants)
    driven_by = new_values.driven_by
    with_values = new_values.with_values

    def with_timeline(self, timeline: Timeline) -> Scheme:
        """A copy with the operations of ``timeline`` instead of its own, checked.

        Every mistake that does not depend on the window is reported at once (see
        :func:`kinetics.timeline.attach`, with an example).
        """
        from .timeline import attach

        return attach(self, timeline)
