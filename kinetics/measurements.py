"""Measured concentration tables: reading ``DATA.csv`` files into arrays for fitting.

A data table uses the header convention of our own exports, so an exported
table can be fitted back::

    time [min],A [mol/L],B [mmol/L],B sd [mmol/L]
    0,1.0,0,
    5,0.61,3.2e2,4.0
    10,,4.7e2,4.0

* The first column is the time, headed ``time [unit]`` (or ``t [unit]``); any time
  unit pint knows (``s``, ``min``, ``h``, ``d``, ``month``).
* Every other column is one measured species, ``NAME [unit]``; any subset of the
  scheme's species may be measured, in any concentration unit (converted to the
  scheme's unit; a mass concentration such as ``mg/mL`` is converted with the molar
  mass when the scheme is in amounts per volume and the species has one).
* Optional columns ``NAME sd [unit]`` give the standard deviation of each value
  (used by the ``column`` weighting of :func:`kinetics.fit.fit`).
* A blank cell is a missing value.  Every other cell must be a finite number.
* Times must be >= 0; they need not be sorted, and may repeat (replicates).

Every problem is a :class:`~kinetics.errors.DataError` that names the file, the
column or row, and what to write instead.
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .errors import ConditionError, DataError
from .suggest import close_matches
from .units import (
    TIME_UNITS,
    convert,
    describe_dimension,
    parse_unit,
    temperature_to_kelvin,
)

if TYPE_CHECKING:
    import pandas as pd

    from .scheme import Scheme

__all__ = [
    "Measurements",
    "measurements_from_frame",
    "parse_condition",
    "read_measurements",
]

_HEADER = re.compile(r"^\s*(?P<name>[^\[\]]*?)\s*\[(?P<unit>[^\[\]]*)\]\s*$")
_NUMBER_UNIT = re.compile(
    r"^\s*(?P<number>[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*(?P<unit>.*?)\s*$"
)
_TIME_NAMES = ("time", "t")
_SUBSTANCE_PER_VOLUME = {"[length]": -3, "[substance]": 1}
_MASS_PER_VOLUME = {"[length]": -3, "[mass]": 1}


@dataclass(frozen=True, eq=False)
class Measurements:
    """One measured run: concentrations of some species at some times.

    Attributes
    ----------
    times : numpy.ndarray
        [s], shape ``(m,)``, sorted, >= 0 (repeats allowed).
    species : tuple of str
        The measured species (columns of ``values``), in file order.
    values : numpy.ndarray
        [concentration_unit], shape ``(m, p)``; NaN where a value is missing.
    sd : numpy.ndarray or None
        Standard deviation of each value [concentration_unit], shape ``(m, p)``;
        NaN where not given; ``None`` when the table has no ``sd`` columns.
    concentration_unit : str
        The scheme's concentration unit (all values are converted to it).
    time_unit : str
        The unit of the time column as written (kept for output).
    units : tuple of str
        The unit of each species column as written.
    source : str
        File name, or ``"<frame>"``.
    conditions : dict
        Run conditions applied on top of the scheme: ``"temperature"`` [K],
        ``"start:X"`` [concentration_unit], a constant name [SI].
    """

    times: np.ndarray
    species: tuple[str, ...]
    values: np.ndarray
    concentration_unit: str
    time_unit: str
    units: tuple[str, ...]
    source: str = "<frame>"
    sd: np.ndarray | None = None
    conditions: dict = field(default_factory=dict)

    @property
    def points(self) -> int:
        r"""Number of measured (non-missing) values.

        Examples
        --------
        >>> import pandas as pd
        >>> from kinetics import parse
        >>> scheme = parse("A -> B  k1 = 0.1 1/min\n"
        ...                "molar_mass A = 180.16 g/mol, B = 90.08 g/mol\nstart A = 1 mmol/L")
        >>> frame = pd.DataFrame({"time [min]": [0, 30, 60], "B [mmol/L]": [0.0, 0.1, None]})
        >>> measurements_from_frame(frame, scheme).points
        2
        """
        return int(np.count_nonzero(~np.isnan(self.values)))

    def with_conditions(self, conditions: dict) -> Measurements:
        """A copy with ``conditions`` added (see :func:`parse_condition`)."""
        merged = dict(self.conditions)
        merged.update(conditions)
        return Measurements(
            self.times,
            self.species,
            self.values,
            self.concentration_unit,
            self.time_unit,
            self.units,
            self.source,
            self.sd,
            merged,
        )

    def to_frame(self) -> pd.DataFrame:
        r"""The table with unit-labelled columns (``time [<time_unit>]``, ``B [<unit>]``).

        Examples
        --------
        >>> import pandas as pd
        >>> from kinetics import parse
        >>> scheme = parse("A -> B  k1 = 0.1 1/min\n"
        ...                "molar_mass A = 180.16 g/mol, B = 90.08 g/mol\nstart A = 1 mmol/L")
        >>> frame = pd.DataFrame({"time [min]": [0, 30], "B [mg/L]": [0.0, 9.008]})
        >>> measurements_from_frame(frame, scheme).to_frame().columns.tolist()
        ['time [min]', 'B [mmol/L]']
        """
        import pandas as pd

        data = {f"time [{self.time_unit}]": self.times / convert(1.0, self.time_unit, "s")}
        for j, name in enumerate(self.species):
            data[f"{name} [{self.concentration_unit}]"] = self.values[:, j]
        return pd.DataFrame(data)


def read_measurements(path, scheme: Scheme, conditions: dict | None = None) -> Measurements:
    r"""Read a measured-data CSV file for ``scheme``.

    Parameters
    ----------
    path : str or os.PathLike
        The CSV file (UTF-8, comma separated, header ``time [unit]``, ``NAME [unit]``).
    scheme : Scheme
        The scheme the data belong to (species names and concentration unit).
    conditions : dict, optional
        Run conditions (see :func:`parse_condition`).

    Returns
    -------
    Measurements

    Raises
    ------
    DataError
        For a missing or unreadable file and for every problem of the table.

    Examples
    --------
    Times in hours become seconds and umol/L the scheme's mmol/L (closed forms:
    1 h = 3600 s, SI brochure, 9th edition, 2019, table 8; 1 umol = 10⁻³ mmol):

    >>> import tempfile
    >>> from kinetics import parse
    >>> scheme = parse("A -> B  k1 = 0.1 1/min\nmolar_mass A = 180.16 g/mol, B = 90.08 g/mol\n"
    ...                "start A = 1 mmol/L")
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     path = Path(folder) / "run1.csv"
    ...     _ = path.write_text("time [h],B [umol/L]\n0,0\n0.5,250\n", encoding="utf-8")
    ...     data = read_measurements(path, scheme)
    >>> data.times.tolist(), data.values.tolist()
    ([0.0, 1800.0], [[0.0], [0.25]])
    """
    p = Path(path)
    source = str(path)
    if not p.exists():
        raise DataError("the data file does not exist", source, "check the file name")
    if p.is_dir():
        raise DataError("the data path is a folder, not a file", source, "give a CSV file")
    try:
        text = p.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError:
        raise DataError(
            "the data file is not UTF-8 text", source, "save the table as UTF-8 CSV"
        ) from None
    except OSError as exc:
        raise DataError(f"the data file cannot be read ({exc.strerror})", source) from None
    rows = [row for row in csv.reader(io.StringIO(text)) if any(c.strip() for c in row)]
    if not rows:
        raise DataError(
            "the data file is empty", source, "write a header such as 'time [min],B [mol/L]'"
        )
    header, body = rows[0], rows[1:]
    return _build(header, body, scheme, source, conditions or {}, first_row=2)


def measurements_from_frame(
    frame: pd.DataFrame, scheme: Scheme, source: str = "<frame>", conditions: dict | None = None
) -> Measurements:
    r"""Turn a DataFrame with unit-labelled columns into :class:`Measurements`.

    Parameters
    ----------
    frame : pandas.DataFrame
        Columns ``time [unit]`` then ``NAME [unit]`` (as :meth:`Solution.to_frame` writes).
    scheme : Scheme
    source : str, optional
        Name used in error messages.
    conditions : dict, optional
        Run conditions (see :func:`parse_condition`).

    Returns
    -------
    Measurements

    Examples
    --------
    A mass concentration becomes an amount concentration through the molar mass (closed
    form c = ρ / M): 9.008 mg/L of B at 90.08 g/mol is 0.1 mmol/L:

    >>> import pandas as pd
    >>> from kinetics import parse
    >>> scheme = parse("A -> B  k1 = 0.1 1/min\nmolar_mass A = 180.16 g/mol, B = 90.08 g/mol\n"
    ...                "start A = 1 mmol/L")
    >>> frame = pd.DataFrame({"time [min]": [0, 30], "B [mg/L]": [0.0, 9.008]})
    >>> data = measurements_from_frame(frame, scheme)
    >>> data.times.tolist(), data.values[:, 0].round(12).tolist()
    ([0.0, 1800.0], [0.0, 0.1])
    """
    header = [str(c) for c in frame.columns]
    body = []
    for row in frame.itertuples(index=False, name=None):
        cells = []
        for value in row:
            if value is None or (isinstance(value, float) and math.isnan(value)):
                cells.append("")
            elif isinstance(value, float):
                cells.append(repr(value))
            else:
                cells.append(str(value))
        body.append(cells)
    return _build(header, body, scheme, source, conditions or {}, first_row=1)


def _build(header, body, scheme, source, conditions, first_row) -> Measurements:
    """The measurements of a table (header cells and rows of cells), checked."""
    header = list(header)
    while header and not header[-1].strip():  # trailing empty columns of spreadsheets
        header.pop()
    parsed = _parsed_header(header, source)
    time_unit = parsed[0][1]
    time_factor = _time_factor(time_unit, source)
    columns = _species_columns(header, parsed, scheme, source)
    if not body:
        raise DataError("the table has a header but no rows", source, "add measured rows")
    times, raw = _read_rows(header, body, columns, time_factor, first_row, source)
    order = np.argsort(times, kind="stable")
    times, raw = times[order], raw[order]
    value_idx = [j for j, c in enumerate(columns) if c[0] == "value"]
    species = tuple(columns[j][1] for j in value_idx)
    values = raw[:, value_idx]
    sd = _standard_deviations(header, columns, species, raw, source)
    if np.all(np.isnan(values)):
        raise DataError("the table has no measured values (all cells blank)", source)
    return Measurements(
        times=times,
        species=species,
        values=values,
        concentration_unit=scheme.concentration_unit,
        time_unit=time_unit,
        units=tuple(columns[j][3] for j in value_idx),
        source=source,
        sd=sd,
        conditions=dict(conditions),
    )


def _parsed_header(header: list[str], source: str) -> list[tuple[str, str]]:
    """(name, unit) of every column; the first is the time."""
    if len(header) < 2:
        hint = "write a header such as 'time [min],B [mol/L]'"
        if header and (";" in header[0] or "\t" in header[0]):
            hint = "separate the columns with commas: " + hint
        raise DataError(
            "the table needs a time column and at least one species column", source, hint
        )
    parsed = []
    for col, cell in enumerate(header):
        match = _HEADER.match(cell)
        if not match:
            raise DataError(
                f"column {col + 1} header {cell.strip()!r} has no unit in square brackets",
                source,
                "write headers as 'time [min]' and 'B [mol/L]'",
            )
        parsed.append((match["name"].strip(), match["unit"].strip()))
    if parsed[0][0].lower() not in _TIME_NAMES:
        raise DataError(
            f"the first column must be the time, not {header[0].strip()!r}",
            source,
            "put a column such as 'time [min]' first",
        )
    return parsed


def _species_columns(header, parsed, scheme, source) -> list[tuple]:
    """(kind, species, factor, unit, column) of every species column, checked.

    ``kind`` is ``"value"`` or ``"sd"`` (a column ``B sd``); ``factor`` converts a cell
    to the scheme's concentration unit.
    """
    names = scheme.species_names
    excess = [s.name for s in scheme.excess_species]
    seen: dict[str, int] = {}
    columns = []
    for col, (name, unit) in enumerate(parsed[1:], start=1):
        kind, species = "value", name
        if name.endswith(" sd") or name.endswith(" SD"):
            kind, species = "sd", name[:-3].strip()
        _check_species_column(header[col].strip(), species, names, excess, source)
        key = f"{kind}:{species}"
        if key in seen:
            raise DataError(
                f"column {header[col].strip()!r} repeats column {seen[key] + 1}",
                source,
                "give each species once (replicates go in extra rows)",
            )
        seen[key] = col
        factor = _concentration_factor(scheme, species, unit, header[col].strip(), source)
        columns.append((kind, species, factor, unit, col))
    if not any(c[0] == "value" for c in columns):
        raise DataError(
            "the table has no measured species column",
            source,
            "add a column such as 'B [mol/L]'",
        )
    for kind, species, _, _, col in columns:
        if kind == "sd" and f"value:{species}" not in seen:
            raise DataError(
                f"column {header[col].strip()!r} gives standard deviations of {species}, "
                "but the table has no column of its values",
                source,
                f"add a column '{species} [unit]'",
            )
    return columns


def _check_species_column(column: str, species: str, names, excess, source: str) -> None:
    """Refuse a column of a species held in excess or of no species of the scheme."""
    if species in excess:
        raise DataError(
            f"column {column!r} is {species}, which is held in excess "
            "(constant) and cannot be fitted",
            source,
            "remove the column",
        )
    if species not in names:
        raise DataError(
            f"column {column!r} names {species!r}, which is not a species of the scheme",
            source,
            _did_you_mean(species, names),
        )


def _read_rows(header, body, columns, time_factor, first_row, source):
    """Times [s] and the converted cells of every row (NaN where blank), in file order."""
    times = np.empty(len(body))
    raw = np.full((len(body), len(columns)), np.nan)
    for i, row in enumerate(body):
        line = i + first_row
        if len(row) > len(header) and any(c.strip() for c in row[len(header) :]):
            raise DataError(
                f"row {line} has more cells ({len(row)}) than the header ({len(header)})",
                source,
                "check for a stray comma",
            )
        cell = row[0].strip() if row else ""
        if not cell:
            raise DataError(f"row {line} has no time", source, "give a time in every row")
        times[i] = _number(cell, line, header[0].strip(), source) * time_factor
        if times[i] < 0:
            raise DataError(
                f"row {line}: the time {cell} is negative",
                source,
                "times start at 0, the moment the start values apply",
            )
        for j, (_, _, factor, _, col) in enumerate(columns):
            cell = row[col].strip() if col < len(row) else ""
            if cell:
                raw[i, j] = factor(_number(cell, line, header[col].strip(), source))
    return times, raw


def _standard_deviations(header, columns, species, raw, source) -> np.ndarray | None:
    """The standard deviations of the values (NaN where not given), or None without any."""
    if not any(c[0] == "sd" for c in columns):
        return None
    sd = np.full((raw.shape[0], len(species)), np.nan)
    for j, c in enumerate(columns):
        if c[0] != "sd":
            continue
        sd[:, species.index(c[1])] = raw[:, j]
        given = raw[:, j][~np.isnan(raw[:, j])]
        if np.any(given <= 0):
            raise DataError(
                f"column {header[c[4]].strip()!r} has a standard deviation <= 0",
                source,
                "standard deviations must be positive",
            )
    return sd


def _number(cell: str, line: int, column: str, source: str) -> float:
    try:
        value = float(cell)
    except ValueError:
        raise DataError(
            f"row {line}, column {column!r}: {cell!r} is not a number",
            source,
            "write plain numbers (e.g. 0.25 or 2.5e-1); leave a cell blank when it is missing",
        ) from None
    if not math.isfinite(value):
        raise DataError(
            f"row {line}, column {column!r}: {cell!r} is not a finite number",
            source,
            "leave a cell blank when the value is missing",
        )
    return value


def _time_factor(unit: str, source: str) -> float:
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise DataError(
            f"the time column has an unknown unit {unit!r}", source, f"use {TIME_UNITS}"
        ) from None
    if spec.offset or spec.dims != {"[time]": 1}:
        raise DataError(
            f"the time column unit {unit!r} is {describe_dimension(spec.dims)}, not a time",
            source,
            f"use {TIME_UNITS}",
        )
    return convert(1.0, unit, "s")


def _concentration_factor(scheme, species: str, unit: str, column: str, source: str):
    """A function converting a cell of ``unit`` to the scheme's concentration unit."""
    target = scheme.concentration_unit
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise DataError(
            f"column {column!r} has an unknown unit {unit!r}",
            source,
            f"write a concentration unit such as {target}",
        ) from None
    goal = parse_unit(target)
    if not spec.offset and spec.dimensions == goal.dimensions:
        factor = convert(1.0, unit, target)
        if factor == 1.0:
            return lambda v: v
        return lambda v: convert(v, unit, target)
    dims = {k: int(v) for k, v in spec.dims.items()}
    goal_dims = {k: int(v) for k, v in goal.dims.items()}
    molar_mass = scheme.species_by_name(species).molar_mass
    if molar_mass is not None and {
        frozenset(dims.items()),
        frozenset(goal_dims.items()),
    } == {frozenset(_MASS_PER_VOLUME.items()), frozenset(_SUBSTANCE_PER_VOLUME.items())}:
        # mass concentration <-> amount concentration through the molar mass [g/mol]
        if dims == _MASS_PER_VOLUME:
            grams = convert(1.0, unit, "g/L")
            per = convert(1.0, "mol/L", target)
            return lambda v: v * grams / molar_mass * per
        moles = convert(1.0, unit, "mol/L")
        per = convert(1.0, "g/L", target)
        return lambda v: v * moles * molar_mass * per
    hint = f"write a concentration unit such as {target}"
    if dims in (_MASS_PER_VOLUME, _SUBSTANCE_PER_VOLUME) and goal_dims in (
        _MASS_PER_VOLUME,
        _SUBSTANCE_PER_VOLUME,
    ):
        hint = f"declare 'molar_mass {species} = ... g/mol' in the scheme, or {hint}"
    raise DataError(
        f"column {column!r} has the unit {unit!r}, which is {describe_dimension(spec.dims)}; "
        f"the scheme's concentrations are in {target} ({describe_dimension(goal.dims)})",
        source,
        hint,
    )


def _did_you_mean(name: str, candidates) -> str:
    close = close_matches(name, candidates, fold_case=True)
    listing = "the species are " + ", ".join(candidates)
    if close:
        return f"did you mean {close[0]!r}? ({listing})"
    return listing


def parse_condition(text: str, scheme: Scheme, api: bool = False) -> tuple[str, float]:
    r"""Parse one run condition ``KEY=VALUE`` (the ``--set`` option of ``kinetics fit``).

    With ``api`` the messages name the ``conditions`` argument of :func:`kinetics.fit`
    instead of the command line's ``--set``.

    Keys:

    * ``temperature=40degC`` (K or degC) — the temperature of the run [K];
    * ``start:A=0.5 mol/L`` — a start concentration [scheme concentration unit];
    * ``k1=0.2 1/min`` — a constant held at this value in this run [SI].

    Parameters
    ----------
    text : str
    scheme : Scheme

    Returns
    -------
    tuple of (str, float)
        The key and the value in the core's canonical unit.

    Raises
    ------
    ConditionError
        For an unknown key, a missing or wrong-dimension unit.

    Examples
    --------
    Closed forms: T/K = t/°C + 273.15; 1 h = 3600 s (SI brochure, 9th edition, 2019,
    table 8), so 6 1/h is 1/600 1/s:

    >>> from kinetics import parse
    >>> scheme = parse("A -> B  k1 = 0.1 1/min\nstart A = 1 mmol/L")
    >>> parse_condition("temperature=25degC", scheme), parse_condition("k1=6 1/h", scheme)
    (('temperature', 298.15), ('k1', 0.0016666666666666666))
    >>> parse_condition("start:A=250 umol/L", scheme)
    ('start:A', 0.25)
    """
    key, sep, value = text.partition("=")
    key = key.strip()
    example = _condition_example(api)
    where = f"conditions entry {text!r}" if api else f"--set {text!r}"
    if not sep or not key or not value.strip():
        raise ConditionError(
            f"{where} is not KEY=VALUE", f"write e.g. {example('temperature', '40degC')}"
        )
    match = _NUMBER_UNIT.match(value)
    if not match:
        raise ConditionError(
            f"{where}: {value.strip()!r} is not a number with a unit",
            f"write e.g. {example('temperature', '40degC')}",
        )
    number = float(match["number"])
    unit = match["unit"].strip()
    if unit.startswith("/"):  # 0.01/min
        unit = "1" + unit
    if key == "temperature":
        return key, _temperature_condition(number, unit, where)
    if key.startswith("start:"):
        species = key[len("start:") :].strip()
        return f"start:{species}", _start_condition(number, unit, species, scheme, where)
    if key in scheme.constants:
        return key, _constant_condition(number, unit, key, scheme, where, example)
    raise ConditionError(
        f"{where}: unknown key {key!r}",
        "use temperature=..., start:SPECIES=... or the name of a rate constant",
    )


def _condition_example(api: bool):
    """How a condition is written: ``conditions={'k1': '0.1 1/s'}`` or ``--set k1=0.1 1/s``."""
    if api:
        return lambda key, value: f"conditions={{{key!r}: {value!r}}}"
    return lambda key, value: f"--set {key}={value}"


def _temperature_condition(number: float, unit: str, where: str) -> float:
    """A run temperature [K] from a number and its unit (K when none is written)."""
    try:
        kelvin = temperature_to_kelvin(number, unit or "K")
    except ValueError:
        raise ConditionError(
            f"{where}: {unit!r} is not a temperature unit", "use K or degC"
        ) from None
    if not kelvin > 0:
        raise ConditionError(f"{where}: the temperature is at or below absolute zero")
    return kelvin


def _start_condition(number: float, unit: str, species: str, scheme: Scheme, where: str) -> float:
    """A start value [scheme's concentration unit] of ``species``."""
    if species not in scheme.species_names:
        raise ConditionError(
            f"{where}: {species!r} is not a species of the scheme",
            _did_you_mean(species, scheme.species_names),
        )
    target = scheme.concentration_unit
    try:
        converted = convert(number, unit or target, target)
    except ValueError:
        raise ConditionError(
            f"{where}: {unit!r} is not a concentration unit like {target}"
        ) from None
    if converted < 0:
        raise ConditionError(f"{where}: a start concentration cannot be negative")
    return converted


def _constant_condition(
    number: float, unit: str, key: str, scheme: Scheme, where: str, example
) -> float:
    """A rate constant held in a run [SI base units], from a number with its unit."""
    si_unit = scheme.constants[key].unit
    try:
        spec = parse_unit(unit)
        goal = parse_unit(si_unit)
    except ValueError:
        raise ConditionError(f"{where}: unknown unit {unit!r}") from None
    if not unit or spec.dimensions != goal.dimensions:
        raise ConditionError(
            f"{where}: {key} needs a unit like {si_unit}",
            f"write e.g. {example(key, f'0.1 {si_unit}')}",
        )
    si = float(number * spec.factor)
    if not si > 0:
        raise ConditionError(f"{where}: a rate constant must be positive")
    return si
