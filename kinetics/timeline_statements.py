"""The statements of a timeline: what one line of the scheme language says, as data.

``At``, ``Every``, ``FeedWindow`` and ``TemperatureRamp`` with their actions
``Addition``, ``Removal`` and ``TemperatureStep``, gathered in a ``Timeline``; each may
carry a :class:`Place` (where it was written) and :class:`Binding` s (numbers that follow
named quantities of the scheme).  Units are the core's: seconds, kelvin, the scheme's
concentration unit, m^3.  Checking and expanding a timeline is :mod:`kinetics.timeline`,
which re-exports every name here.

Examples
--------
>>> line = Timeline([At(1800.0, Addition({"A": 0.25})), Every(86400.0, Removal.percent(100, "D"))])
>>> [type(s).__name__ for s in line.statements]
['At', 'Every']
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from fractions import Fraction

from .errors import SchemeError

__all__ = [
    "TIME_FIELDS",
    "Action",
    "Addition",
    "At",
    "Binding",
    "Every",
    "FeedWindow",
    "Place",
    "Removal",
    "Statement",
    "TemperatureRamp",
    "TemperatureStep",
    "Timeline",
]


@dataclass(frozen=True, slots=True)
class Place:
    """Where a statement was written, for messages (filled by the scheme language).

    Attributes
    ----------
    source : str
        File name, or ``"<timeline>"`` for a timeline built in Python.
    line, column : int
        1-based position (0 when unknown).
    text : str
        The whole source line.
    snippet : str
        The part of the line a message underlines.
    time_unit : str
        The unit of time the line's times are written in: messages quote its times in
        it (``"s"``, the default, quotes them in seconds as given).
    """

    source: str = "<timeline>"
    line: int = 0
    column: int = 0
    text: str = ""
    snippet: str = ""
    time_unit: str = "s"

    def error(self, problem: str, hint: str = "") -> SchemeError:
        """A :class:`~kinetics.errors.SchemeError` located here."""
        return SchemeError(
            problem, self.source, self.line, self.column, self.text, self.snippet, hint
        )


@dataclass(frozen=True, slots=True)
class Binding:
    """A number of a statement that follows named quantities of the scheme.

    The scheme language writes ``at t_q: add A = dose``; the statement then holds the
    values of ``t_q`` and ``dose`` and a binding for each, so that a scheme with new
    values of them (:meth:`kinetics.scheme.Scheme.with_values`, sweeps, fits) moves the
    operation (:meth:`Timeline.follow`).

    Attributes
    ----------
    field : str
        What follows: a time of the statement (one of :data:`TIME_FIELDS`), or a number
        of its action: ``"amount:S"`` (the amount of species S added), ``"volume"``
        (the volume added) or ``"fraction"`` (the part removed).
    names : tuple of str
        The named quantities whose product, times ``scale``, is the value.
    scale : Fraction
        Exact factor from the product of the quantities [SI] to the statement's unit.
    """

    field: str
    names: tuple[str, ...]
    scale: Fraction = Fraction(1)

    def value(self, values) -> Fraction:
        """The bound number for ``values`` (name -> exact SI value)."""
        out = Fraction(self.scale)
        for name in self.names:
            out *= Fraction(values[name])
        return out


#: The fields of statements that hold times [s] (the others a binding names are numbers
#: of the action).
TIME_FIELDS = ("time", "period", "start", "until", "end")


def _pairs(values) -> tuple[tuple[str, float], ...]:
    """``{name: value}`` or pairs as a tuple of pairs (hashable, in the order given)."""
    items = values.items() if hasattr(values, "items") else values
    return tuple((str(name), value) for name, value in items)


@dataclass(frozen=True, slots=True)
class Addition:
    r"""Instant rise of named species [the scheme's ``concentration_unit``].

    For a scheme written in mass units that unit is its amount twin, so masses are
    converted first.

    Without volumes (the default) each named species rises by its amount.  In a run
    with volumes (:attr:`Timeline.volume`, the volume :math:`V_0` at time 0), an
    addition may bring a volume :math:`v` of its own (a portion of solution, or solvent
    alone), which dilutes everything: with :math:`V` the volume just before,

    .. math:: c_i \mapsto rac{V c_i + V_0 a_i}{V + v}, \qquad V \mapsto V + v,

    so ``amounts`` are the amounts of substance added divided by the start volume
    :math:`V_0` (for a portion of concentration :math:`c_p`, :math:`a = c_p v / V_0`; see
    :meth:`portion`).  Without a volume of its own (``volume`` 0) this is
    :math:`c_i + a_i V_0 / V`: the same amount spread over the volume of the moment.

    Parameters
    ----------
    amounts : dict of str to float
        Species name -> amount added, >= 0 (see above).
    volume : float, optional
        Volume added [m^3], >= 0; needs :attr:`Timeline.volume`.

    Examples
    --------
    100 mL of a 0.5 mol/L solution of B into a run that started with 1 L:

    >>> Addition.portion(1e-4, {"B": 0.5}, start_volume=1e-3).amounts
    (('B', 0.05),)
    """

    amounts: tuple[tuple[str, float], ...]
    volume: float = 0.0

    def __init__(self, amounts, volume: float = 0.0) -> None:
        object.__setattr__(self, "amounts", _pairs(amounts))
        object.__setattr__(self, "volume", volume)

    @classmethod
    def portion(cls, volume: float, concentrations, start_volume: float) -> Addition:
        """A portion of ``volume`` [m^3] holding ``concentrations`` [concentration_unit].

        Added to a run that started with ``start_volume`` [m^3] (amounts exact, rounded
        once).
        """
        scale = Fraction(volume) / Fraction(start_volume)
        return cls({n: float(Fraction(c) * scale) for n, c in _pairs(concentrations)}, volume)


@dataclass(frozen=True, slots=True)
class Removal:
    """A fraction of each named species taken out at once; the amount is recorded.

    Parameters
    ----------
    species : tuple of str
        The species removed from.
    fraction : float, Fraction or str
        The part removed, from 0 to 1 (1 for a complete elution).  Kept exact: the
        part left, :math:`1 - p`, and :math:`p` are each rounded once.

    Examples
    --------
    >>> Removal.percent(30, "D").fraction
    Fraction(3, 10)
    """

    species: tuple[str, ...]
    fraction: Fraction

    def __init__(self, species, fraction) -> None:
        names = (species,) if isinstance(species, str) else tuple(species)
        object.__setattr__(self, "species", names)
        object.__setattr__(self, "fraction", _fraction(fraction))

    @classmethod
    def percent(cls, percent, *species: str) -> Removal:
        """The removal of ``percent`` % (exact: 30 % is 3/10) of ``species``."""
        value = _fraction(percent)
        return cls(species, value / 100 if value is not None else value)


def _fraction(value) -> Fraction | None:
    """``value`` as an exact Fraction (None when it is not a finite number)."""
    try:
        return Fraction(value)
    except (TypeError, ValueError, OverflowError):
        return None


@dataclass(frozen=True, slots=True)
class TemperatureStep:
    """From the operation on, every Arrhenius constant follows ``temperature`` [K]."""

    temperature: float


Action = Addition | Removal | TemperatureStep


@dataclass(frozen=True, slots=True)
class At:
    """One operation at ``time`` [s] (``at T: ...``)."""

    time: float
    action: Action
    place: Place = field(default_factory=Place)
    bound: tuple[Binding, ...] = ()


@dataclass(frozen=True, slots=True)
class Every:
    """An addition or removal repeated every ``period`` [s] (``every T from T0 until T1``).

    The operation acts at ``start``, ``start + period``, ... (``start`` defaults to
    ``period``) up to ``until`` [s] and the end of the solved window; the repetitions
    up to ``until`` that fall after the window are not applied, and the solution says so.
    """

    period: float
    action: Action
    start: float | None = None
    until: float | None = None
    place: Place = field(default_factory=Place)
    bound: tuple[Binding, ...] = ()


@dataclass(frozen=True, slots=True)
class FeedWindow:
    """A zero-order feed [concentration_unit/s] that runs only from ``start`` to ``end`` [s].

    The scheme's own ``feed`` stays on all the time; feeds of one species add up.
    """

    start: float
    end: float
    rates: tuple[tuple[str, float], ...]
    place: Place = field(default_factory=Place)
    bound: tuple[Binding, ...] = ()

    def __init__(self, start, end, rates, place: Place | None = None, bound=()) -> None:
        object.__setattr__(self, "start", start)
        object.__setattr__(self, "end", end)
        object.__setattr__(self, "rates", _pairs(rates))
        object.__setattr__(self, "place", place or Place())
        object.__setattr__(self, "bound", tuple(bound))


@dataclass(frozen=True, slots=True)
class TemperatureRamp:
    """A linear ramp from ``initial`` to ``final`` [K] between ``start`` and ``end`` [s].

    After the ramp the temperature stays at ``final`` until the next temperature step.
    """

    start: float
    end: float
    initial: float
    final: float
    place: Place = field(default_factory=Place)
    bound: tuple[Binding, ...] = ()


Statement = At | Every | FeedWindow | TemperatureRamp


@dataclass(frozen=True)
class Timeline:
    """The statements of a run, in the order written (ties at one time keep this order).

    Parameters
    ----------
    statements : sequence of At, Every, FeedWindow or TemperatureRamp
    volume : float, optional
        Volume of the run at time 0 [m^3], > 0: only a run with a volume can take
        additions that bring a volume of their own (see :class:`Addition`).  Feeds and
        removals do not change the volume; co-reactants held in excess keep their
        concentration.
    """

    statements: tuple = ()
    volume: float | None = None

    def __init__(self, statements=(), volume: float | None = None) -> None:
        object.__setattr__(self, "statements", tuple(statements))
        object.__setattr__(self, "volume", volume)

    def __add__(self, other: Timeline) -> Timeline:
        volume = self.volume if self.volume is not None else other.volume
        return Timeline(self.statements + tuple(other.statements), volume)

    def __bool__(self) -> bool:
        """True when the timeline has statements."""
        return bool(self.statements)

    @property
    def names(self) -> tuple[str, ...]:
        """The named quantities the statements follow (see :class:`Binding`), once each."""
        seen = (n for s in self.statements for b in getattr(s, "bound", ()) for n in b.names)
        return tuple(dict.fromkeys(seen))

    def follow(self, values) -> Timeline:
        """The timeline with every bound number evaluated from ``values``.

        Parameters
        ----------
        values : Mapping of str to Fraction
            Named quantities [SI base units]; a binding whose names are not all given
            keeps its number.

        Examples
        --------
        >>> line = Timeline([At(3600.0, Addition({"A": 1.0}), bound=(Binding("time", ("t_q",)),))])
        >>> line.follow({"t_q": Fraction(7200)}).statements[0].time
        7200.0
        """
        if not any(n in values for n in self.names):
            return self
        return Timeline([_follow(s, values) for s in self.statements], self.volume)


def _follow(statement, values):
    """One statement with its bound numbers from ``values``."""
    bound = [b for b in getattr(statement, "bound", ()) if all(n in values for n in b.names)]
    if not bound:
        return statement
    times = {b.field: float(b.value(values)) for b in bound if b.field in TIME_FIELDS}
    rest = [b for b in bound if b.field not in TIME_FIELDS]
    if rest and isinstance(statement, At | Every):
        times["action"] = _follow_action(statement.action, rest, values)
    return replace(statement, **times)


def _follow_action(action, bound, values):
    """An addition or removal with its bound amounts, volume or fraction."""
    new = {b.field: b.value(values) for b in bound}
    if isinstance(action, Addition):
        amounts = {
            name: float(new[f"amount:{name}"]) if f"amount:{name}" in new else value
            for name, value in action.amounts
        }
        volume = float(new["volume"]) if "volume" in new else action.volume
        return Addition(amounts, volume)
    if isinstance(action, Removal) and "fraction" in new:
        return Removal(action.species, new["fraction"])
    return action
