"""How the messages of an optimisation name what was given: API arguments or options.

The checks live once, in :mod:`kinetics.optimise.settings` and :mod:`kinetics.optimise.api`;
a :class:`Words` only says how their messages name the inputs.  :data:`API_WORDS` (the
default of :func:`kinetics.optimise.optimise`) names the arguments of the Python function
(``over``, ``until``, ``best_time=True``); :data:`CLI_WORDS`, which ``kinetics optimise``
passes down, names its options (``--over``, ``--until``, ``--best-time``).
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["API_WORDS", "CLI_WORDS", "Words"]


@dataclass(frozen=True)
class Words:
    """The names a message uses for the inputs of an optimisation.

    Attributes
    ----------
    over : str
        The settings as a whole: ``--over`` or ``over``.
    entry : str
        One setting, before its quoted text: ``--over`` or ``over entry``.
    best_time : str
        Asking for the best time: ``--best-time`` or ``best_time=True``.
    time_entry : str
        A time setting: ``--over time`` or ``a time entry in over``.
    at_end_hint : str
        How to read the target at the end time over a time setting instead.
    until_hint : str
        How to give the end time: ``add --until, e.g. --until 10h, ...``.
    until_example : str
        A valid end time: ``e.g. --until 10h``.
    until : str
        The end time in a message about its value: ``the end time`` or ``until``.
    first_setting : str
        How to give a first setting.
    yield_basis : str
        Asking for a yield: ``a yield`` or ``yield_basis=True``.
    activity : str
        Asking for an activity: ``--activity`` or ``activity``.
    target : str
        Before the quoted target species: ``species=`` (nothing on the command line).

    Examples
    --------
    >>> API_WORDS.place("time=0:5")
    "over entry 'time=0:5'"
    >>> CLI_WORDS.place("time=0:5")
    "--over 'time=0:5'"
    """

    over: str
    entry: str
    best_time: str
    time_entry: str
    at_end_hint: str
    until_hint: str
    until_example: str
    until: str
    first_setting: str
    yield_basis: str
    activity: str
    target: str

    def place(self, spec: str) -> str:
        """The start of a message about one setting: the setting as it was given."""
        return f"{self.entry} {spec!r}"

    def give(self, spec: str) -> str:
        """How to give the setting ``spec`` instead."""
        if self.entry.startswith("--"):
            return f"write {self.entry} {spec!r}"
        return f"give {spec!r} in {self.over}"


CLI_WORDS = Words(
    over="--over",
    entry="--over",
    best_time="--best-time",
    time_entry="--over time",
    at_end_hint="give the latest time to consider with --until, or use --at-end with --over time",
    until_hint="add --until, e.g. --until 10h, or --over time=0:10:h",
    until_example="e.g. --until 10h",
    until="the end time",
    first_setting="give at least one, e.g. --over temperature=20:80:degC or --over time=0:10:h",
    yield_basis="a yield",
    activity="--activity",
    target="",
)
API_WORDS = Words(
    over="over",
    entry="over entry",
    best_time="best_time=True",
    time_entry="a time entry in over",
    at_end_hint=(
        "give the latest time to consider as until [s], or set best_time=False and keep the "
        "time entry"
    ),
    until_hint="give until [s], e.g. until=36000.0, or a time entry in over, e.g. 'time=0:10:h'",
    until_example="give a time in seconds, e.g. until=36000.0",
    until="until",
    first_setting="give at least one in over, e.g. 'temperature=20:80:degC' or 'time=0:10:h'",
    yield_basis="yield_basis=True",
    activity="activity",
    target="species=",
)
