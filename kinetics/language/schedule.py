r"""Operation lines resolved (the second pass): times, amounts and volumes in core units.

Checked together with :func:`kinetics.timeline.check`.

Every number of an operation becomes the core's unit (seconds, kelvin, the scheme's
concentration unit, m^3), converted exactly and rounded once; a number written as the
name of a quantity (``at t_q: ...``, ``add A = dose``, ``remove p_el of D``) keeps a
:class:`~kinetics.timeline.Binding`, so that it follows new values of the name.

Amounts of an addition (see README, "Operations"):

* without ``volume``: a rise of the concentration, in a unit of the file's kind (a mass
  through the species' molar mass);
* with ``volume = V0``: an amount of substance or a mass (``add A = 0.05 mol``), spread
  over the volume of the moment, or a portion with its own volume
  (``add 100 mL with B = 0.5 mol/L``; amounts or concentrations inside it), which
  dilutes everything: :math:`c \mapsto (V c + n)/(V + v)`.

Co-reactants held in excess keep their concentration through every operation.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from fractions import Fraction

from ..amounts import kind_of
from ..definitions import NamedQuantity
from ..errors import KineticsError, UnknownUnitError
from ..scheme import Species
from ..timeline import (
    Addition,
    At,
    Binding,
    Every,
    FeedWindow,
    Place,
    Removal,
    TemperatureRamp,
    TemperatureStep,
    Timeline,
    check,
)
from ..units import UnitSpec, describe_dimension, parse_unit, time_factor
from .concentrations import ConcentrationUnit
from .messages import Diagnostics, quoted
from .operations import (
    AddAction,
    FeedAction,
    OperationStatement,
    Quantity,
    RampAction,
    RemoveAction,
    StepAction,
    VolumeStatement,
)
from .quantities import Value, exact_kelvin, fraction, scaled
from .source import Line

__all__ = ["Outline", "operation_names", "resolve_timeline"]

_TIME = {"[time]": Fraction(1)}
_VOLUME = {"[length]": Fraction(3)}
#: What a number of each dimension is called in messages.
_KINDS = {
    (("[time]", Fraction(1)),): "a duration",
    (("[length]", Fraction(3)),): "a volume",
    (): "a pure number",
}
_RUN_VOLUME_HINT = (
    "in a run with a volume, add an amount (add A = 0.05 mol) or a portion with its own "
    "volume (add 100 mL with A = 0.5 mol/L)"
)


@dataclass(frozen=True)
class Outline:
    """What :func:`kinetics.timeline.check` reads of a scheme, known before it is built.

    Attributes
    ----------
    species_names : list of str
        The matrix species.
    excess_species : tuple of Species
        The species held in excess.
    temperature_constants : tuple of str
        The rate constants that follow the temperature.
    concentration_unit : str
    """

    species_names: list[str]
    excess_species: tuple[Species, ...]
    temperature_constants: tuple[str, ...]
    concentration_unit: str


def operation_names(statements: Iterable[object]) -> set[str]:
    """The named quantities the operation lines of a file use.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> sorted(operation_names(read_statements("every t_el: remove p of D", "t").statements))
    ['p', 't_el']
    """
    return {n for s in statements if isinstance(s, OperationStatement) for n in s.names}


def resolve_timeline(
    statements: Iterable[object],
    outline: Outline,
    unit: ConcentrationUnit,
    quantities: Mapping[str, NamedQuantity],
    molar_masses: Mapping[str, float | None],
    found: Diagnostics,
) -> Timeline:
    r"""The timeline of a file's operation lines; every mistake goes to ``found``.

    Parameters
    ----------
    statements : iterable
        The statements of the first pass.
    outline : Outline
        The species and constants (for :func:`kinetics.timeline.check`).
    unit : ConcentrationUnit
        The file's concentration unit.
    quantities : Mapping of str to NamedQuantity
        The file's named quantities.
    molar_masses : Mapping of str to float or None
        [g/mol] per species (for amounts written as masses).
    found : Diagnostics
        Where errors and warnings go (operations without effect are warnings).

    Returns
    -------
    Timeline

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = 1 1/h\nstart A = 1 M\nt_q = 3 h\nat t_q: add A = 0.5 M")
    >>> s.timeline.statements[0].time, s.timeline.names
    (10800.0, ('t_q',))
    """
    ops = [s for s in statements if isinstance(s, OperationStatement)]
    volumes = [s for s in statements if isinstance(s, VolumeStatement)]
    if not ops and not volumes:
        return Timeline()
    reader = _Reader(unit, quantities, molar_masses, found, outline.species_names)
    start = reader.start_volume(volumes)
    reader.start = start
    built = [b for s in ops if (b := reader.statement(s)) is not None]
    timeline = Timeline(built, None if start is None else float(start))
    if reader.failed:
        return timeline
    notes: list[str] = []
    for error in check(outline, timeline, notes):  # type: ignore[arg-type]
        found.add(error)
    found.warnings.extend(notes)
    return timeline


class _Numbers:
    """Numbers of operation lines in core units: times, volumes, temperatures, names."""

    def __init__(
        self,
        unit: ConcentrationUnit,
        quantities: Mapping[str, NamedQuantity],
        molar_masses: Mapping[str, float | None],
        found: Diagnostics,
        species: Iterable[str] = (),
    ) -> None:
        self.species = set(species)
        self.unit: ConcentrationUnit = unit
        self.quantities: Mapping[str, NamedQuantity] = quantities
        self.molar = molar_masses
        self.found = found
        self.start: Fraction | None = None
        self.failed = False

    def error(self, line: Line, problem: str, column: int, snippet: str, hint: str) -> None:
        self.found.error(line, problem, column, snippet, hint)
        self.failed = True

    # -- the run's volume --------------------------------------------------------
    def start_volume(self, volumes: list[VolumeStatement]) -> Fraction | None:
        if not volumes:
            return None
        for extra in volumes[1:]:
            self.error(
                extra.line,
                f"the volume is set twice (first on line {volumes[0].line.number})",
                extra.value.column,
                extra.value.text,
                "keep one volume statement: the volume of the run at time 0",
            )
        v, line = volumes[0].value, volumes[0].line
        if self.unit.family.basis != "volume":
            self.error(
                line,
                f"a volume needs concentrations per volume, but this file gives "
                f"{self.unit.family.plural}",
                v.column,
                v.text,
                "leave out the volume line, or write the start values per volume (mol/L)",
            )
            return None
        q = Quantity(v, "", v.column, v.text)
        got = self.number(line, q, _VOLUME, "the volume of the run", "1.0 L")
        if got is None:
            return None
        if got[0] <= 0:
            self.error(
                line, f"the volume of the run must be above 0, not {v.text}", v.column, v.text,
                "e.g. volume = 1.0 L",
            )  # fmt: skip
            return None
        return Fraction(got[0])

    # -- numbers -------------------------------------------------------------------
    def number(
        self, line: Line, q: Quantity, dims: dict[str, Fraction], what: str, example: str
    ) -> tuple[Fraction, tuple[str, ...]] | None:
        """``(exact SI value, names)`` of a quantity of dimension ``dims``, or None."""
        names: tuple[str, ...] = ()
        if q.name:
            nq = self.named(line, q, what, example)
            if nq is None or nq.value_si is None:
                return None
            value, have, names = Fraction(nq.value_si), dict(nq.dims), (q.name,)
        else:
            assert q.value is not None  # a number when there is no name
            spec = self.unit_spec(line, q.value, what, example)
            if spec is None:
                return None
            value, have = scaled(q.value.number, spec.factor), dict(spec.dims)
        if {k: v for k, v in have.items() if v} != dims:
            self.error(
                line,
                f"{what} must be {_KINDS[tuple(sorted(dims.items()))]}, but {q.text} is "
                f"{describe_dimension(have)}",
                q.column,
                q.text,
                f"write e.g. {example}",
            )
            return None
        return value, names

    def named(self, line: Line, q: Quantity, what: str, example: str) -> NamedQuantity | None:
        nq = self.quantities.get(q.name)
        if nq is None:
            hint = self.found.suggest(q.name, self.quantities) or (
                f"define it on a line of its own, e.g. {q.name} = {example}"
            )
            self.error(
                line, f"{q.name} is used for {what} but is never defined", q.column, q.name, hint
            )
            return None
        if nq.value_si is None:
            self.error(
                line,
                f"{q.name} depends on the temperature and cannot give {what}",
                q.column,
                q.name,
                f"define {q.name} by a value, e.g. {q.name} = {example}",
            )
            return None
        return nq

    def unit_spec(self, line: Line, value: Value, what: str, example: str) -> UnitSpec | None:
        if not value.unit:
            self.error(
                line,
                f"{what} {value.number} has no unit",
                value.column,
                value.number,
                f"write its unit after the number, e.g. {example}",
            )
            return None
        try:
            return parse_unit(value.unit)
        except ValueError as exc:
            detail = "" if isinstance(exc, UnknownUnitError) else f" ({exc})"
            self.error(
                line,
                f"unknown unit {quoted(value.unit)} for {what}{detail}",
                value.unit_column,
                value.unit,
                f"write e.g. {example}",
            )
            return None

    def time(
        self, line: Line, q: Quantity | None, field: str, what: str, bound: list[Binding]
    ) -> float | None:
        """Seconds of a time (None when not written or wrong); its binding to ``bound``."""
        if q is None:
            return None
        got = self.number(line, q, _TIME, what, "30 min")
        if got is None:
            return None
        if got[1]:
            bound.append(Binding(field, got[1]))
        return float(got[0])

    def kelvin(self, line: Line, value: Value, what: str) -> float | None:
        if not value.unit:
            self.error(
                line, f"{what} {value.number} has no unit", value.column, value.number,
                f"write it in K or degC, e.g. {value.number} degC",
            )  # fmt: skip
            return None
        try:
            if parse_unit(value.unit).dims != {"[temperature]": 1}:
                raise ValueError(value.unit)
            return float(exact_kelvin(value.number, value.unit))
        except ValueError:
            self.error(
                line,
                f"{what} is given in {quoted(value.unit)}, which is not a temperature unit",
                value.unit_column,
                value.unit,
                "write the temperature in K or degC, e.g. 60 degC",
            )
            return None


class _Reader(_Numbers):
    """The core statement of each operation line, with its bindings."""

    def statement(self, s: OperationStatement) -> At | Every | FeedWindow | TemperatureRamp | None:
        """The core statement of one line (None after an error)."""
        line = s.line
        bound: list[Binding] = []
        shown = line.shown or line.text
        action = s.action
        unit = self.written_unit(s.times)
        if s.kind == "from":
            place = Place(line.source, line.number, s.column, shown, s.text, unit)
            t0 = self.time(line, s.times[0], "start", "the start of the window", bound)
            t1 = self.time(line, s.times[1], "end", "the end of the window", bound)
            if isinstance(action, FeedAction):
                rates = self.rates(line, action)
                ok = None not in (t0, t1) and rates is not None
                return FeedWindow(t0, t1, rates, place, bound) if ok else None
            assert isinstance(action, RampAction)
            first = self.kelvin(line, action.first, "the ramp's first temperature")
            last = self.kelvin(line, action.last, "the ramp's last temperature")
            if t0 is None or t1 is None or first is None or last is None:
                return None
            return TemperatureRamp(t0, t1, first, last, place, tuple(bound))
        place = Place(line.source, line.number, action.column, shown, action.text, unit)
        core = self.action(line, action, bound)
        if s.kind == "at":
            t = self.time(line, s.times[0], "time", "the time of an operation", bound)
            return None if t is None or core is None else At(t, core, place, tuple(bound))
        words = ("the period of", "the first time of", "the end of")
        times = [
            self.time(line, q, field, f"{w} a repeated operation", bound)
            for q, field, w in zip(s.times, ("period", "start", "until"), words, strict=True)
        ]
        if (
            core is None
            or times[0] is None
            or any(q is not None and t is None for q, t in zip(s.times, times, strict=True))
        ):
            return None
        return Every(times[0], core, times[1], times[2], place, tuple(bound))

    def written_unit(self, times: Iterable[Quantity | None]) -> str:
        """The unit of time of the first time of a line written with one.

        Messages about the line quote times in it; ``"s"`` when no time has a unit.
        """
        for q in times:
            if q is None:
                continue
            named = self.quantities.get(q.name) if q.name else None
            text = q.value.unit if q.value is not None else (named.unit if named else "")
            try:
                time_factor(text)
            except (KineticsError, ValueError):
                continue
            return text
        return "s"

    def action(
        self, line: Line, action: object, bound: list[Binding]
    ) -> Addition | Removal | TemperatureStep | None:
        if isinstance(action, StepAction):
            kelvin = self.kelvin(line, action.value, "the new temperature")
            return None if kelvin is None else TemperatureStep(kelvin)
        if isinstance(action, RemoveAction):
            return self.removal(line, action, bound)
        assert isinstance(action, AddAction)
        return self.addition(line, action, bound)

    def removal(self, line: Line, action: RemoveAction, bound: list[Binding]) -> Removal | None:
        species = [name for name, _ in action.species]
        q = action.share
        if not q.name:
            assert q.value is not None
            return Removal(species, fraction(q.value.number) / 100)
        got = self.number(line, q, {}, "the part removed", "95 %")
        if got is None:
            return None
        bound.append(Binding("fraction", got[1]))
        return Removal(species, got[0])

    def addition(self, line: Line, action: AddAction, bound: list[Binding]) -> Addition | None:
        portion = None
        if action.volume is not None and action.volume.name in self.species:
            name = action.volume.name
            self.error(
                line, f"the addition of {name} gives no amount", action.volume.column, name,
                f"write e.g. add {name} = 0.25 {self.unit.unit}",
            )  # fmt: skip
            return None
        if action.volume is not None:
            portion = self.number(line, action.volume, _VOLUME, "the volume added", "100 mL")
            if portion is None:
                return None
            if portion[1]:
                bound.append(Binding("volume", portion[1]))
            if self.start is None:  # the core check says what is missing
                return Addition({}, float(portion[0]))
        amounts: dict[str, float] = {}
        for item in action.items:
            factors = self.amount(line, item.name, item.amount, portion)
            if factors is None:
                continue
            value, scale, names = _product(factors)
            amounts[item.name] = float(value)
            if names:
                bound.append(Binding(f"amount:{item.name}", tuple(names), scale))
        if len(amounts) != len(action.items):
            return None
        return Addition(amounts, 0.0 if portion is None else float(portion[0]))

    def amount(
        self,
        line: Line,
        species: str,
        q: Quantity,
        portion: tuple[Fraction, tuple[str, ...]] | None,
    ) -> list[tuple[Fraction, str]] | None:
        """Factors ``(exact value, name or "")`` whose product is the core amount."""
        written = self.written_amount(line, species, q)
        if written is None:
            return None
        unit_text, si, name = written
        try:
            kind = kind_of(unit_text)
        except ValueError:
            kind = None
        family = self.unit.family
        if kind is None or kind.substance == "number":
            self.error(
                line,
                f"{q.text} for {species} is not an amount or a concentration",
                q.column,
                q.text,
                "write e.g. A = 0.25 mol/L",
            )
            return None
        factors: list[tuple[Fraction, str]] = [(si, name), (1 / self.unit.factor, "")]
        if kind.substance == "mass":
            molar = self.molar.get(species)
            if molar is None:
                self.error(
                    line,
                    f"{species} has no molar mass, so {q.text} cannot be turned into an amount",
                    q.column,
                    q.text,
                    f"give its formula or molar mass (molar_mass {species} = 180.2 g/mol), or "
                    "the amount in mol",
                )
                return None
            factors.append((1000 / Fraction(molar), ""))  # kg -> mol with M in g/mol
        if self.start is None:
            if kind.basis != family.basis:
                hint = (
                    "give the volume of the run (volume = 1.0 L) to add amounts, or write a "
                    f"{family.name} such as 0.25 {self.unit.unit}"
                )
                self.error(
                    line,
                    f"{q.text} for {species} is {kind.article} {kind.name}, but this file gives "
                    f"{family.plural}",
                    q.column,
                    q.text,
                    hint,
                )
                return None
            return factors
        if kind.basis == "absolute":
            return [*factors, (1 / self.start, "")]
        if portion is None or kind.basis != "volume":
            self.error(
                line,
                f"{q.text} for {species} is {kind.article} {kind.name}",
                q.column,
                q.text,
                _RUN_VOLUME_HINT,
            )
            return None
        volume, names = portion
        return [*factors, (volume, names[0] if names else ""), (1 / self.start, "")]

    def written_amount(
        self, line: Line, species: str, q: Quantity
    ) -> tuple[str, Fraction, str] | None:
        """The unit, exact SI value and name (or "") of an amount as written.

        A named quantity or a number with a unit; None after an error.
        """
        what = f"the amount of {species}"
        if q.name:
            nq = self.named(line, q, what, "0.25 mol/L")
            if nq is None or nq.value_si is None:
                return None
            return nq.unit, Fraction(nq.value_si), q.name
        assert q.value is not None  # a number when there is no name
        spec = self.unit_spec(line, q.value, what, "0.25 mol/L")
        if spec is None:
            return None
        return q.value.unit, scaled(q.value.number, spec.factor), ""

    def rates(self, line: Line, action: FeedAction) -> dict[str, float] | None:
        out: dict[str, float] = {}
        for item in action.items:
            q = item.amount
            what = f"the feed rate of {item.name}"
            if q.name:
                self.error(
                    line, f"{what} is written as a name", q.column, q.name,
                    "write the rate as a number with a unit, e.g. 0.01 mol/L/min",
                )  # fmt: skip
                continue
            assert q.value is not None  # a number when there is no name
            spec = self.unit_spec(line, q.value, what, "0.01 mol/L/min")
            if spec is None:
                continue
            try:
                kind = kind_of(q.value.unit, per_time=True)
            except ValueError:
                kind = None
            if kind is None or kind.basis != self.unit.family.basis or kind.substance == "mass":
                family = self.unit.family
                self.error(
                    line,
                    f"the feed rate {q.text} of {item.name} is not {family.article} {family.name} "
                    "per time",
                    q.column,
                    q.text,
                    f"write e.g. {item.name} = 0.01 {self.unit.unit}/min",
                )
                continue
            out[item.name] = float(scaled(q.value.number, spec.factor) / self.unit.factor)
        return out if len(out) == len(action.items) else None


def _product(factors: list[tuple[Fraction, str]]) -> tuple[Fraction, Fraction, list[str]]:
    """The exact product of the factors, the product of those without a name, and the names."""
    value, scale = Fraction(1), Fraction(1)
    names: list[str] = []
    for number, name in factors:
        value *= number
        if name:
            names.append(name)
        else:
            scale *= number
    return value, scale, names
