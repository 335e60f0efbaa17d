r"""Temperature records of a data logger: reading, mean kinetic temperature, equivalents.

A record is a CSV table with a header ``time [unit], temperature [degC]`` (or ``[K]``)
and one reading per line, as a storage data logger writes it (blank lines and lines
starting with ``#`` are skipped).  **Each reading holds until the next one**: the
temperature is piecewise constant, so a scheme is solved exactly under the record
(:meth:`TemperatureLog.timeline` turns it into temperature steps; before the first
reading the scheme's own temperature applies, after the last one the last reading
holds).

The **mean kinetic temperature** of a record over a window :math:`[t_0, t_e]` is the one
temperature that gives the same degradation, for an activation energy :math:`\Delta H`,
as the record (Haynes 1971), here with each reading weighted by how long it holds:

.. math:: T_\mathrm{MK} = \frac{\Delta H / R}
          {-\ln\left(\dfrac{\sum_i d_i\, e^{-\Delta H / (R T_i)}}{\sum_i d_i}\right)}

With equally spaced readings each held one interval this is Haynes' formula with equal
weights.  For a rate constant that follows the Arrhenius law with activation energy
:math:`E_a`, the same formula with :math:`\Delta H = E_a` is its **equivalent isothermal
temperature**: :math:`k(T_\mathrm{eq})\,(t_e - t_0) = \int k(T(t))\,\mathrm{d}t`
exactly, so a single first-order step degrades under the record exactly as it would at
:math:`T_\mathrm{eq}`.

References
----------
J. D. Haynes, "Worldwide virtual temperatures for product stability testing",
J. Pharm. Sci. 60, 927-929 (1971). doi:10.1002/jps.2600600617
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .errors import DataError, SettingError, TimesError, shorten
from .timeline import At, Place, TemperatureStep, Timeline
from .units import GAS_CONSTANT, TIME_UNITS, temperature_to_kelvin, time_factor

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "DEFAULT_ACTIVATION_ENERGY",
    "HELD",
    "TemperatureLog",
    "equivalent_temperatures",
    "mean_kinetic_temperature",
    "parse_temperature_log",
    "read_temperature_log",
]

#: Activation energy customary for the mean kinetic temperature in stability work
#: [J/mol] (83.144 kJ/mol, i.e. :math:`\Delta H / R` = 10,000 K); common practice, no source.
DEFAULT_ACTIVATION_ENERGY = 83144.0

#: How a record is read, in one sentence (summaries and reports).
HELD = (
    "each reading holds until the next (piecewise constant); before the first reading the "
    "scheme's own temperature applies, after the last one the last reading holds"
)

_HEADER = re.compile(r"^\s*(?P<name>[^\[\]]*?)\s*\[(?P<unit>[^\[\]]*)\]\s*$")
_EXAMPLE = "write the header as 'time [h],temperature [degC]'"


@dataclass(frozen=True)
class TemperatureLog:
    """A checked temperature record, held piecewise constant between readings.

    Attributes
    ----------
    times : numpy.ndarray
        Reading times [s], >= 0, strictly increasing.
    temperatures : numpy.ndarray
        Readings [K], above 0.
    source : str
        File name, or ``"<text>"``.
    lines : tuple of int
        Line of each reading in the source (for messages).
    """

    times: np.ndarray
    temperatures: np.ndarray
    source: str = "<text>"
    lines: tuple[int, ...] = ()

    def timeline(self) -> Timeline:
        """The record as temperature steps.

        One at the first reading and one at each reading that differs from the previous
        one.
        """
        statements = []
        previous = math.nan
        lines = self.lines or (0,) * self.times.size
        for t, T, line in zip(self.times.tolist(), self.temperatures.tolist(), lines, strict=True):
            if T != previous:
                statements.append(At(t, TemperatureStep(T), Place(self.source, line)))
            previous = T
        return Timeline(statements)

    def apply(self, scheme: Scheme) -> Scheme:
        """The scheme under this record: its timeline gains the record's temperature steps.

        Raises
        ------
        kinetics.errors.SchemeErrors
            When the steps collide with the scheme's own ramps (see
            :func:`kinetics.timeline.check`).
        """
        return scheme.with_timeline(scheme.timeline + self.timeline())

    def summary(self, scheme: Scheme, end: float) -> dict:
        r"""The record in the summary of a run that ends at ``end`` [s] (JSON-ready).

        Keys: ``source``, ``readings``, ``held`` (how the record is read),
        ``mean_kinetic_temperature_K`` and ``_degC`` (Haynes, with
        ``activation_energy_J_per_mol`` 83,144: common practice, no source), and
        ``equivalent_temperatures``: per Arrhenius constant of ``scheme`` its steps, its
        ``Ea`` and the equivalent isothermal temperature (K and degC) over the same window.
        Temperatures are None when the window ends before the first reading.

        Examples
        --------
        >>> import kinetics
        >>> s = kinetics.parse(
        ...     "A -> B  k = arrhenius(A = 1e12 1/s, Ea = 83.144 kJ/mol)\n"
        ...     "temperature = 25 degC\nstart A = 1 M")
        >>> log = TemperatureLog(np.array([0.0, 43200.0]), np.array([298.15, 308.15]))
        >>> row = log.summary(s, 86400.0)
        >>> round(row["mean_kinetic_temperature_K"], 2), row["equivalent_temperatures"][0]["steps"]
        (304.37, ['A -> B'])
        """
        inside = end >= float(self.times[0])

        def both(kelvin):
            if kelvin is None:
                return {"K": None, "degC": None}
            return {"K": kelvin, "degC": kelvin - 273.15}

        mkt = self.mean_kinetic_temperature(end=end) if inside else None
        equivalents = []
        for name, c in scheme.constants.items():
            if c.arrhenius is None:
                continue
            kelvin = (
                self.mean_kinetic_temperature(c.arrhenius.activation_energy, end)
                if inside
                else None
            )
            t = both(kelvin)
            equivalents.append(
                {
                    "constant": name,
                    "steps": [s.equation for s in scheme.steps if s.constant == name],
                    "activation_energy_J_per_mol": c.arrhenius.activation_energy,
                    "temperature_K": t["K"],
                    "temperature_degC": t["degC"],
                }
            )
        t = both(mkt)
        return {
            "source": self.source,
            "readings": int(self.times.size),
            "held": HELD,
            "activation_energy_J_per_mol": DEFAULT_ACTIVATION_ENERGY,
            "mean_kinetic_temperature_K": t["K"],
            "mean_kinetic_temperature_degC": t["degC"],
            "equivalent_temperatures": equivalents,
        }

    def mean_kinetic_temperature(
        self, activation_energy: float = DEFAULT_ACTIVATION_ENERGY, end: float | None = None
    ) -> float:
        """Mean kinetic temperature [K] from the first reading to ``end`` [s].

        ``end`` defaults to the last reading; see :func:`mean_kinetic_temperature`.
        """
        return mean_kinetic_temperature(self.times, self.temperatures, activation_energy, end)


def mean_kinetic_temperature(
    times, temperatures, activation_energy: float = DEFAULT_ACTIVATION_ENERGY, end=None
) -> float:
    r"""Mean kinetic temperature of a record held piecewise constant [K].

    .. math:: T_\mathrm{MK} = \frac{\Delta H / R}
              {-\ln\left(\sum_i d_i e^{-\Delta H/(R T_i)} / \sum_i d_i\right)}

    Parameters
    ----------
    times : array_like
        Reading times [s], strictly increasing.
    temperatures : array_like
        Readings [K].
    activation_energy : float, optional
        :math:`\Delta H` [J/mol]; default 83.144 kJ/mol (common practice, no source).
    end : float, optional
        End of the window [s], at or after the first reading; default the last reading
        (which then holds for no time).  Reading ``i`` holds from ``times[i]`` to the
        next reading or ``end``.

    Returns
    -------
    float

    Raises
    ------
    kinetics.errors.TimesError
        When the window ends before the first reading (or there is none).
    kinetics.errors.SettingError
        For an activation energy that is not finite and above 0 J/mol.

    References
    ----------
    J. D. Haynes, J. Pharm. Sci. 60, 927-929 (1971).

    Examples
    --------
    Half of the time at 25 degC, half at 35 degC, 83.144 kJ/mol (Haynes' formula by hand,
    with :math:`\Delta H/R \approx` 10,000 K:
    10000 / -ln((exp(-10000/298.15) + exp(-10000/308.15)) / 2) = 304.37 K):

    >>> round(mean_kinetic_temperature([0.0, 43200.0], [298.15, 308.15], end=86400.0), 2)
    304.37
    """
    t = np.asarray(times, dtype=float).reshape(-1)
    T = np.asarray(temperatures, dtype=float).reshape(-1)
    stop = (float(t[-1]) if end is None else float(end)) if t.size else math.nan
    if t.size == 0 or not stop >= t[0]:
        raise TimesError(
            "the window of a mean kinetic temperature must start at the first reading",
            "give an end at or after the first reading time",
        )
    if not (math.isfinite(activation_energy) and activation_energy > 0):
        raise SettingError(
            f"the activation energy must be finite and above 0 J/mol, not {activation_energy}"
        )
    held = np.diff(np.minimum(np.append(t, max(stop, t[-1])), stop))
    if not held.sum() > 0:  # a window of no length: the reading in force
        return float(T[np.searchsorted(t, stop, side="right") - 1])
    use = held > 0
    x = -activation_energy / (GAS_CONSTANT * T[use])
    top = x.max()
    log_mean = top + math.log(float(held[use] @ np.exp(x - top)) / float(held[use].sum()))
    return float(-activation_energy / (GAS_CONSTANT * log_mean))


def equivalent_temperatures(
    log: TemperatureLog, scheme: Scheme, end: float | None = None
) -> dict[str, float]:
    r"""Equivalent isothermal temperature [K] of every Arrhenius constant of ``scheme``.

    The temperature at which the constant, held constant, gives the same integral
    :math:`\int k\,dt` over the record's window as the record (see the module
    docstring); a step shares its constant's value.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse(
    ...     "A -> B  k = arrhenius(A = 1e12 1/s, Ea = 83.144 kJ/mol)\n"
    ...     "temperature = 25 degC\nstart A = 1 M")
    >>> log = TemperatureLog(np.array([0.0, 43200.0]), np.array([298.15, 308.15]))
    >>> round(equivalent_temperatures(log, s, end=86400.0)["k"], 2)
    304.37
    """
    return {
        name: log.mean_kinetic_temperature(c.arrhenius.activation_energy, end)
        for name, c in scheme.constants.items()
        if c.arrhenius is not None
    }


# --------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------


def read_temperature_log(path) -> TemperatureLog:
    """Read and check a logger's CSV record (see the module docstring).

    Raises
    ------
    kinetics.errors.DataError
        For a missing or unreadable file, and for every mistake in it, with
        ``file:line:column``, the offending text and what to write instead.
    """
    p = Path(path)
    source = str(path)
    try:
        text = p.read_bytes().decode("utf-8-sig")
    except FileNotFoundError:
        raise DataError(
            "the temperature record does not exist", source, "check the file name"
        ) from None
    except IsADirectoryError:
        raise DataError("the path is a folder, not a file", source, "give a CSV file") from None
    except UnicodeDecodeError:
        raise DataError(
            "the temperature record is not UTF-8 text", source, "save it as UTF-8 CSV"
        ) from None
    except OSError as exc:
        raise DataError(f"the temperature record cannot be read ({exc.strerror})", source) from None
    return parse_temperature_log(text, source)


def _cells(line: str) -> list[tuple[str, int]]:
    """Comma-separated cells, stripped, with the 1-based column where each starts."""
    out, at = [], 0
    for raw in line.split(","):
        stripped = raw.strip().strip('"').strip()
        lead = len(raw) - len(raw.lstrip())
        out.append((stripped, at + lead + 1))
        at += len(raw) + 1
    return out


class _Reader:
    """One pass over the lines of a record, raising at the first mistake."""

    def __init__(self, source: str) -> None:
        self.source = source

    def fail(self, line: int, column: int, problem: str, hint: str) -> DataError:
        return DataError(problem, f"{self.source}:{line}:{column}", hint)

    def header(self, line: int, text: str) -> tuple[float, str]:
        """Seconds per time unit and the temperature unit, from the header line."""
        cells = _cells(text)
        if len(cells) != 2:
            hint = _EXAMPLE
            if ";" in text or "\t" in text:
                hint = "separate the columns with commas; " + hint
            raise self.fail(
                line,
                1,
                f"the header has {len(cells)} column{'s' if len(cells) != 1 else ''}; "
                "a temperature record has two: time and temperature",
                hint,
            )
        parsed = []
        for (cell, column), want in zip(cells, ("time", "temperature"), strict=True):
            match = _HEADER.match(cell)
            if not match:
                raise self.fail(
                    line,
                    column,
                    f"the column {shorten(cell)!r} has no unit in square brackets",
                    _EXAMPLE,
                )
            if match["name"].strip().lower() != want:
                raise self.fail(
                    line, column, f"the column {shorten(cell)!r} should be the {want}", _EXAMPLE
                )
            parsed.append((match["unit"].strip(), column))
        (time_unit, time_column), (temp_unit, temp_column) = parsed
        try:
            factor = time_factor(time_unit)
        except TimesError:
            raise self.fail(
                line,
                time_column,
                f"{shorten(time_unit)!r} is not a unit of time",
                f"use {TIME_UNITS}",
            ) from None
        try:
            temperature_to_kelvin(300.0, temp_unit)
        except ValueError:
            raise self.fail(
                line,
                temp_column,
                f"{shorten(temp_unit)!r} is not a unit of temperature",
                "use degC or K",
            ) from None
        return factor, temp_unit

    def number(self, line: int, cell: str, column: int, what: str) -> float:
        try:
            value = float(cell) if "_" not in cell else math.nan
        except ValueError:
            value = math.nan
        if not math.isfinite(value):
            problem = f"the {what} {shorten(cell)!r} is not a number" if cell else f"no {what}"
            example = "12 (its unit is in the header)" if what == "time" else "21.5"
            raise self.fail(
                line, column, problem, f"write the {what} as a number such as {example}"
            )
        return value


def parse_temperature_log(text: str, source: str = "<text>") -> TemperatureLog:
    r"""Check a record given as text (see :func:`read_temperature_log`).

    Examples
    --------
    >>> log = parse_temperature_log("time [h],temperature [degC]\n0,25\n12,35\n")
    >>> log.times.tolist(), log.temperatures.tolist()
    ([0.0, 43200.0], [298.15, 308.15])
    """
    reader = _Reader(source)
    rows = [
        (number, line)
        for number, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not rows:
        raise DataError("the temperature record is empty", source, _EXAMPLE)
    factor, unit = reader.header(*rows[0])
    times: list[float] = []
    temperatures: list[float] = []
    lines: list[int] = []
    previous = ""
    for number, line in rows[1:]:
        cells = _cells(line)
        if len(cells) != 2:
            raise reader.fail(
                number,
                cells[min(2, len(cells) - 1)][1],
                f"this reading has {len(cells)} cell{'s' if len(cells) != 1 else ''}; "
                "a reading has a time and a temperature",
                "write one reading per line, such as '12,21.5'",
            )
        (t_text, t_col), (T_text, T_col) = cells
        t = reader.number(number, t_text, t_col, "time") * factor
        kelvin = temperature_to_kelvin(reader.number(number, T_text, T_col, "temperature"), unit)
        if t < 0:
            raise reader.fail(
                number,
                t_col,
                f"the time {t_text} is negative",
                "times count from the start of the run, 0 or later",
            )
        if times and not t > times[-1]:
            raise reader.fail(
                number,
                t_col,
                f"the time {t_text} is not after the time {previous} of line {lines[-1]}",
                "sort the readings by time, each time once",
            )
        previous = t_text
        if not kelvin > 0:
            raise reader.fail(
                number,
                T_col,
                f"the temperature {T_text} {unit} is not above 0 K",
                "check the unit in the header (degC or K)",
            )
        times.append(t)
        temperatures.append(kelvin)
        lines.append(number)
    if not times:
        raise DataError(
            "the temperature record has a header but no readings",
            source,
            "add one reading per line, such as '0,21.5'",
        )
    return TemperatureLog(np.array(times), np.array(temperatures), source, tuple(lines))
