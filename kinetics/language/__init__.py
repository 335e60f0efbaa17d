"""Scheme text -> :class:`~kinetics.scheme.Scheme`, reporting every mistake at once.

The scheme language (one statement per line, ``#`` starts a comment)::

    title: Hydrolysis of an ester intermediate
    A -> B + 2 C        k1 = 0.12 1/min
    B <=> D             kf = 2.0e-3 1/s, kr = 5.0e-4 1/s
    C -> E              k1                  # shares k1 with the first step
    E + W -> F          k2 = 1.5e-4 M-1 s-1 # pseudo-first-order, W in excess
    k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)
    F -> G              k3
    temperature = 60 degC
    start A = 0.50 mol/L, B = 10 mmol/L
    excess W = 55 mol/L
    feed A = 0.01 mol/L/min
    formula A = C6H12O6
    molar_mass G = 180.2 g/mol
    balance: lumped                         # atom imbalance is a warning only

Atom balance and its opt-out
----------------------------
When every species of a reaction (excess co-reactants and products included)
has a ``formula``, the element counts of both sides must agree; an imbalance is
an **error** by default, and the message lists the counts of both sides.
Lumped schemes (a "degradation products" pseudo-species, a dimer written as
one species, an open system) opt out in one of two ways:

* the line ``balance: lumped`` in the file (``balance: strict`` restates the
  default), or
* ``parse(text, strict_balance=False)`` / ``load(path, strict_balance=False)``
  from Python (``kinetics check FILE --allow-imbalance`` on the command line).

The imbalance is then still reported by :func:`kinetics.balance.mass_balance`
(per reaction, and the mass-changing steps by name), but it no longer stops
the file from loading.

Parsing runs in two passes.  The first (:mod:`~kinetics.language.reader`)
reads each line into a small frozen statement object (each statement kind has a
``from_line`` constructor that answers "not mine" with ``None``, or returns a
statement or a list of errors).  Plain reaction lines, which make up large
files, first go through one compiled pattern
(:func:`~kinetics.language.reactions.fast_reaction`) that builds the very same
statement; anything it does not recognise, every error included, goes to the
general reader (``ReactionStatement.from_line_general``), which words the
messages.  The second pass (:func:`~kinetics.language.resolve.resolve`)
resolves names, units and orders across the whole file.  All errors of both
passes are collected and raised together as one
:class:`~kinetics.errors.SchemeErrors`.  The work is linear in the size of the
file (``benchmarks/bench_parse.py``): lines longer than :data:`MAX_LINE_LENGTH`,
units longer than ``units.MAX_UNIT_LENGTH`` and numbers longer than
:data:`MAX_NUMBER_LENGTH` are refused before they are read, and :func:`load`
reads a file in chunks up to :data:`MAX_SCHEME_BYTES`.  Errors that follow from
a line that failed to read (its species "occur in no reaction") are not
reported; probable mistakes that do not stop the file become
``Scheme.warnings``.

Modules (each imports only those above it)
------------------------------------------
=================  ==========================================================
``source``         bounded reading of files and lines; :class:`Line`
``grammar``        arrows, keywords, the patterns of names and numbers
``messages``       shared wordings; :class:`Diagnostics` (a file's problems)
``quantities``     numbers with units: reading, exact scaling, range checks
``statements``     title, balance, temperature, list and constant statements
``reactions``      reaction statements and the fast reader of plain lines
``reader``         first pass: text -> :class:`ParsedFile`
``names``          species in order, excess declarations, single statements
``constants``      temperature and rate constants
``concentrations`` the file's concentration unit; values that do not fit it
``values``         start, excess, feed, formula and molar-mass values
``steps``          reactions -> first-order steps; orders implied by units
``species``        species, formulas, molar masses; atom balance
``checks``         whole-file checks and warnings
``resolve``        second pass: :class:`ParsedFile` -> Scheme
``entry``          :func:`parse` and :func:`load`
=================  ==========================================================
"""

from __future__ import annotations

from .entry import load, parse
from .grammar import ARROWS, DIRECTIVES
from .quantities import MAX_NUMBER_LENGTH
from .source import MAX_LINE_LENGTH, MAX_SCHEME_BYTES

__all__ = [
    "ARROWS",
    "DIRECTIVES",
    "MAX_LINE_LENGTH",
    "MAX_NUMBER_LENGTH",
    "MAX_SCHEME_BYTES",
    "load",
    "parse",
]
