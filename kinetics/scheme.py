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
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from fractions import Fraction
from functools import cached_property

import numpy as np

from . import activity
from .definitions import (
    Dependencies,
    NamedQuantity,
    constant_slopes,
    constant_values,
    follow,
)
from .errors import (
    ArgumentValueError,
    ConcentrationError,
    ConstantError,
    SpeciesError,
    TemperatureError,
    shown_value,
)
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

    def exact_constants(
        self,
        temperature: float | None = None,
        quantities: dict[str, float | Fraction] | None = None,
    ) -> dict[str, Fraction]:
        r"""The exact value of every rate constant, following the named quantities.

        Plain values as written, temperature laws at ``temperature`` (40 digits), derived
        constants from new values of what they follow (:mod:`kinetics.definitions`).

        Parameters
        ----------
        temperature : float, optional
            [K]; default the scheme's.
        quantities : dict of str to float or Fraction, optional
            New values of named quantities or constants [SI base units: s, K, J/mol,
            1/s], Fractions taken exactly.

        Returns
        -------
        dict of str to Fraction
            Every constant of :attr:`constants` [SI base units].

        Raises
        ------
        ConstantError
            For an unknown name or a value that is not finite.
        TemperatureError
            For a constant that needs a temperature when there is none.
        ExpressionError
            When a definition cannot be evaluated with the new values, or a constant
            becomes negative.

        Examples
        --------
        >>> from kinetics import parse
        >>> scheme = parse("t_p = 50 h\nP -> D  lam = ln(2) / t_p\nstart P = 1 mol")
        >>> lam = scheme.exact_constants(quantities={"t_p": Fraction(36000)})["lam"]
        >>> round(float(lam) * 36000, 12), scheme.driven_by("t_p")  # ln 2 for t_p = 10 h
        (0.69314718056, ('lam',))
        """
        values = {n: _named_value(self, n, v) for n, v in (quantities or {}).items()}
        t = self.temperature if temperature is None else temperature
        return constant_values(self.constants, self.dependencies, t, values)

    def constant_slopes(self, wrt, temperature=None, quantities=None) -> dict[str, dict]:
        """Exact derivatives of every rate constant by name (:func:`_constant_slopes`)."""
        return _constant_slopes(self, list(wrt), temperature, quantities or {})

    @property
    def temperature_constants(self) -> tuple[str, ...]:
        r"""The rate constants whose values follow the temperature.

        Arrhenius lines, Eyring and Q10 laws, and constants defined from them: the ones
        without a fixed value (``value_si`` None).

        >>> from kinetics import parse
        >>> parse("A -> B  k1 = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\n"
        ...       "temperature = 60 degC\nstart A = 1 M").temperature_constants
        ('k1',)
        """
        return tuple(name for name, c in self.constants.items() if c.value_si is None)

    def driven_by(self, name: str) -> tuple[str, ...]:
        """The rate constants whose values follow from the named quantity ``name``.

        See the example of :meth:`exact_constants`.
        """
        _named_value(self, name, 0)
        return tuple(n for n in self.dependencies.driven_by(name) if n in self.constants)

    def with_timeline(self, timeline: Timeline) -> Scheme:
        """A copy with the operations of ``timeline`` instead of its own, checked.

        Every mistake that does not depend on the window is reported at once (see
        :func:`kinetics.timeline.attach`, with an example).
        """
        from .timeline import attach

        return attach(self, timeline)

    def with_values(
        self,
        *,
        constants: dict[str, float] | None = None,
        temperature: float | None = None,
        initial: dict[str, float] | None = None,
        excess: dict[str, float] | None = None,
        quantities: dict[str, float | Fraction] | None = None,
    ) -> Scheme:
        """A copy with some values replaced.

        Parameters
        ----------
        constants : dict of str to float, optional
            New values of named rate constants in SI base units [1/s for first
            order]; an Arrhenius constant becomes a plain one.
        temperature : float, optional
            New temperature [K].
        initial : dict of str to float, optional
            New start concentrations [concentration_unit].
        excess : dict of str to float, optional
            New excess concentrations [concentration_unit].
        quantities : dict of str to float or Fraction, optional
            New values of named quantities [SI base units], Fractions taken exactly.

        Returns
        -------
        Scheme
            Derived constants, start activities, percentage thresholds and the numbers
            of the timeline written as names follow.

        Raises
        ------
        ConstantError
            For an unknown rate constant or named quantity, or a value of one that is
            negative or not finite.
        SpeciesError
            For an unknown species or excess species.
        ConcentrationError
            For a start value or an excess concentration that is negative or not finite.
        TemperatureError
            For a temperature that is not finite and above 0 K.
        ExpressionError
            When a definition cannot be evaluated with the new values.
        """
        return _with_values(
            self, constants or {}, temperature, initial or {}, excess or {}, quantities or {}
        )


def _with_values(
    scheme: Scheme,
    constants: dict[str, float],
    temperature: float | None,
    initial: dict[str, float],
    excess: dict[str, float],
    quantities: dict[str, float | Fraction],
) -> Scheme:
    """The body of :meth:`Scheme.with_values` (arguments as there, None as empty)."""
    fixed: dict[str, Fraction] = {}
    texts: dict[str, str] = {}
    for name, value in constants.items():
        if name not in scheme.constants:
            raise ConstantError(
                f"no rate constant named {name!r} in the scheme",
                "known constants: " + ", ".join(scheme.constants),
            )
        fixed[name] = _checked_fraction(value, f"rate constant {name}", ConstantError)
        texts[name] = f"{shown_value(value)} (SI)"
    for name, given in quantities.items():
        fixed[name] = _named_value(scheme, name, given)
        texts[name] = f"{shown_value(float(given))} (SI)"
    new_constants, new_quantities, graph = scheme.constants, scheme.quantities, scheme.dependencies
    if fixed:
        new_constants, new_quantities, graph = follow(
            scheme.constants, scheme.quantities, scheme.dependencies, fixed, texts
        )
    new_initial = dict(scheme.initial)
    for name, value in initial.items():
        if name not in scheme.index:
            raise SpeciesError(
                f"no species named {name!r} in the rate matrix of the scheme",
                "species: " + ", ".join(scheme.species_names),
            )
        _checked_fraction(value, f"start value of {name}", ConcentrationError)
        new_initial[name] = float(value)
    new_excess = dict(scheme.excess)
    new_excess_si = dict(scheme._excess_si)
    for name, value in excess.items():
        if name not in new_excess:
            raise SpeciesError(
                f"no excess species named {name!r} in the scheme",
                "excess species: " + (", ".join(new_excess) or "none"),
            )
        new_excess_si[name] = (
            _checked_fraction(value, f"excess concentration of {name}", ConcentrationError)
            * scheme._unit_factor
        )
        new_excess[name] = float(value)
    if temperature is not None and not (math.isfinite(temperature) and temperature > 0):
        raise TemperatureError(
            f"temperature {shown_value(temperature)} K must be finite and above 0 K"
        )
    timeline = scheme.timeline
    if quantities and timeline.names:
        known = {n: q.value_si for n, q in new_quantities.items() if q.value_si is not None}
        timeline = timeline.follow(known)
    new = replace(
        scheme,
        timeline=timeline,
        constants=new_constants,
        quantities=new_quantities,
        dependencies=graph,
        temperature=scheme.temperature if temperature is None else float(temperature),
        initial=new_initial,
        excess=new_excess,
        start_activities={k: v for k, v in scheme.start_activities.items() if k not in initial},
        _excess_si=new_excess_si,
    )
    return _follow_starts(new, changed=bool(initial))


def _constant_slopes(
    scheme: Scheme,
    wrt: list[str],
    temperature: float | None,
    quantities: dict[str, float | Fraction],
) -> dict[str, dict[str, Fraction]]:
    r"""The body of :meth:`Scheme.constant_slopes`.

    Parameters
    ----------
    scheme : Scheme
    wrt : list of str
        Named quantities, rate constants and ``"temperature"``.
    temperature, quantities
        As for :meth:`Scheme.exact_constants`.

    Returns
    -------
    dict of str to dict of str to Fraction
        Constant -> name -> :math:`\partial k/\partial p` [SI per SI unit of p]
        (:func:`kinetics.definitions.constant_slopes`; no finite differences).

    Examples
    --------
    >>> from kinetics import parse
    >>> scheme = parse("t_p = 50 h\nP -> D  lam = ln(2) / t_p\nstart P = 1 mol")
    >>> d = scheme.constant_slopes(["t_p"])["lam"]["t_p"]  # -ln 2 / t_p**2
    >>> round(float(d) * 180000**2, 12)
    -0.69314718056
    """
    for name in wrt:
        if name != "temperature":
            _named_value(scheme, name, 0)
    values = {n: _named_value(scheme, n, v) for n, v in quantities.items()}
    t = scheme.temperature if temperature is None else temperature
    return constant_slopes(scheme.constants, scheme.dependencies, t, wrt, values)


def _named_value(scheme: Scheme, name: str, value) -> Fraction:
    """A new value of a named quantity or constant, checked [SI base units], exact."""
    if name not in scheme.quantities and name not in scheme.constants:
        known = [*scheme.quantities, *scheme.dependencies.by_name]
        raise ConstantError(
            f"no named quantity {name!r} in the scheme",
            "named quantities: " + (", ".join(dict.fromkeys(known)) or "none"),
        )
    if isinstance(value, (Fraction, int)) and not isinstance(value, bool):
        exact = Fraction(value)  # taken exactly
    elif name in scheme.constants:
        return _checked_fraction(value, f"rate constant {name}", ConstantError)
    else:
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise ConstantError(f"{name} must be a number, not {shown_value(value)}") from None
        if not math.isfinite(number):
            raise ConstantError(f"{name} = {shown_value(value)} must be finite")
        exact = Fraction(number)
    if name in scheme.constants and exact < 0:
        raise ConstantError(f"rate constant {name} = {shown_value(value)} must be finite and >= 0")
    return exact


def _follow_starts(scheme: Scheme, changed: bool) -> Scheme:
    """Start values and thresholds that follow the start values.

    Start values written as activities from the scheme's decay constants; thresholds written
    as percentages of start values from the start values.
    """
    initial = scheme.initial
    if scheme.start_activities:
        initial = {**initial, **activity.start_amounts(scheme, scheme.start_activities)}
        changed = changed or initial != scheme.initial
    if not changed:
        return scheme
    return replace(
        scheme,
        initial=initial,
        requirements=tuple(r.for_start(initial) for r in scheme.requirements),
    )


def _checked_fraction(value: float, what: str, error: type[ArgumentValueError]) -> Fraction:
    """``value`` as an exact Fraction, or ``error`` when it is not a finite number >= 0."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise error(f"{what} must be a number, not {shown_value(value)}") from None
    if not (math.isfinite(number) and number >= 0):
        raise error(f"{what} = {shown_value(value)} must be finite and >= 0")
    return Fraction(number)
