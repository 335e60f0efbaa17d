r"""The chain of a timeline: stretch after stretch, with the operations between them.

Each operation is a nonnegative map of the concentrations, written as a list of
*actions* (:mod:`kinetics.engine.chain_kernels`); the whole chain then runs in one
compiled call (schemes of up to ``DENSE_MAX`` species) or stretch by stretch through
:meth:`kinetics.engine.StretchPropagator.step` (larger ones), both applying the
actions by the same compiled function.

Roundings of the maps, added to the bound:

* an addition in a run with volumes multiplies every concentration by the double
  nearest to :math:`\kappa = V/(V + v)`: two roundings (the factor, the product);
* an addition rounds its sum once, and a second time when its amount is scaled by
  :math:`V_0/(V + v)` (the scaled amount is itself rounded once);
* a partial removal rounds each fraction (kept and taken part) once and each of their
  products once: two roundings for the state and two for the amount recorded; a complete
  removal is exact.
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING, Protocol

import numpy as np

from . import _doubledouble as dd
from .engine.chain_kernels import ADD, REMOVE, ROUND, SCALE, chain, operate
from .engine.plan import DENSE_MAX, U, compose
from .timeline import Addition, Operation, Plan, Removal

if TYPE_CHECKING:
    from .engine import StretchPropagator
    from .scheme import Scheme


class Conditions(Protocol):
    """What the chain needs of the conditions of its stretches (their propagators)."""

    def propagator(self, key: tuple) -> StretchPropagator:
        """The propagator of the stretches with conditions ``key``."""
        ...


__all__ = ["Chain", "Conditions"]

#: one action: (kind, species index or rounding count, first, second, flag, records)
_Row = tuple[int, int, float, float, bool, bool]
#: one recorded amount: (action, species, change, bound); None where the chain gives it
_Record = tuple[str, "str | None", "float | None", "float | None"]


def _encoded(op: Operation, index: dict[str, int]) -> tuple[list[_Row], list[_Record]]:
    """The actions of one operation and the amounts it records (see the module docstring)."""
    rows: list[_Row] = []
    records: list[_Record] = []
    action = op.action
    if isinstance(action, Addition):
        if op.kept != 1:
            rows += [
                (SCALE, 0, float(op.kept), 0.0, False, False),
                (ROUND, 2, 0.0, 0.0, False, False),
            ]
        for name, amount in action.amounts:
            added = float(amount) if op.share == 1 else float(Fraction(amount) * op.share)
            rows.append((ADD, index[name], added, 0.0, False, False))
            records.append(("add", name, added, 0.0 if op.share == 1 else U))
        if not action.amounts:  # solvent alone: a dilution
            records.append(("add", None, 0.0, 0.0))
        if any(amount for _, amount in action.amounts):
            rows.append((ROUND, 1 if op.share == 1 else 2, 0.0, 0.0, False, False))
        return rows, records
    assert isinstance(action, Removal)
    p = action.fraction
    for name in action.species:
        rows.append((REMOVE, index[name], float(p), float(1 - p), p == 1, True))
        records.append(("remove", name, None, None))
    if 0 < p < 1:
        rows.append((ROUND, 2, 0.0, 0.0, False, False))
    return rows, records


class _Actions:
    """The actions of every operation, grouped by boundary (stretch start)."""

    def __init__(self, plan: Plan, index: dict[str, int], boundaries: dict[float, int], P: int):
        ops = plan.operations
        at = [boundaries[op.time] for op in ops]
        known: dict[tuple, tuple[list[_Row], list[_Record]]] = {}
        encoded = []
        for op in ops:
            key = (id(op.action), id(op.kept), id(op.share))  # the plan keeps them alive
            found = known.get(key)
            if found is None:
                found = known[key] = _encoded(op, index)
            encoded.append(found)
        rows: list[_Row] = [row for new_rows, _ in encoded for row in new_rows]
        lengths = [len(new_rows) for new_rows, _ in encoded]
        counts = np.bincount(np.array(at, dtype=np.int64) + 1, lengths, minlength=P + 2)
        #: boundary -> time, for boundaries with operations
        self.times: dict[int, float] = dict(zip(at, (op.time for op in ops), strict=True))
        self.records: list[tuple[Operation, _Record]] = [
            (op, record)
            for op, (_, records) in zip(ops, encoded, strict=True)
            for record in records
        ]
        self.at = np.cumsum(counts).astype(np.int64)
        table = list(zip(*rows, strict=True)) if rows else [()] * 6
        record = np.cumsum([r[5] for r in rows], dtype=np.int64) - 1
        self.arrays = (
            np.array(table[0], dtype=np.int64),
            np.array(table[1], dtype=np.int64),
            np.array(table[2], dtype=float),
            np.array(table[3], dtype=float),
            np.array(table[4], dtype=np.bool_),
            record,
        )
        removals = int(record[-1]) + 1 if rows else 0
        self.moved = np.zeros(removals)
        self.moved_bound = np.zeros(removals)


class Chain:
    """One pass over the stretches: states at every stretch start and end, and events.

    Attributes
    ----------
    start, end : numpy.ndarray
        Shape (P, n): concentrations just after the operations at each stretch's start
        and just before those at its end.
    start_bound, end_bound : numpy.ndarray
        Shape (P,): their relative bounds.
    jumps : dict
        Time of each boundary with operations -> ``(before, bound, after, bound)``.
    moved : list of tuple
        ``(time, action, species, change, bound, statement, volume)`` per recorded amount.
    kinds, keys : numpy.ndarray, list
        Per stretch, the index of its conditions in ``keys``.
    """

    def __init__(self, scheme: Scheme, plan: Plan, conditions: Conditions, pieces) -> None:
        self.scheme = scheme
        self.plan = plan
        self.conditions = conditions
        self.pieces = pieces
        P = len(pieces)
        n = len(scheme.species)
        self.start = np.empty((P, n))
        self.start_bound = np.empty(P)
        self.end = np.empty((P, n))
        self.end_bound = np.empty(P)
        self.jumps: dict[float, tuple] = {}
        self.moved: list[tuple] = []
        codes: dict[tuple, int] = {}
        #: per stretch, the index of its conditions in ``keys``
        self.kinds = np.array([codes.setdefault(k, len(codes)) for _, _, k in pieces], dtype=int)
        self.keys = list(codes)

    def run(self) -> None:
        """Propagate stretch by stretch, applying the operations at their times."""
        P, n = len(self.pieces), self.start.shape[1]
        boundaries = {b: j + 1 for j, (_, b, _) in enumerate(self.pieces)}
        boundaries[0.0] = 0
        actions = _Actions(self.plan, self.scheme.index, boundaries, P)
        start = np.empty((P, n + 1))
        end = np.empty((P, n + 1))
        final = np.empty(n + 1)
        if n <= DENSE_MAX:
            self._compiled(actions, start, end, final)
        else:
            self._stepped(actions, start, end, final)
        self.start, self.start_bound = start[:, :n], start[:, n]
        self.end, self.end_bound = end[:, :n], end[:, n]
        self._record(actions, final)

    def _factors(self):
        """Per stretch: its exponential among the distinct (conditions, length) pairs."""
        h, low = dd.two_sum(
            np.array([b for _, b, _ in self.pieces]), -np.array([a for a, _, _ in self.pieces])
        )
        N = self.start.shape[1] + 1
        stacks, index, offset = [], np.empty(h.size, dtype=np.int64), 0
        for code, key in enumerate(self.keys):
            sel = self.kinds == code
            values, which = np.unique(h[sel], return_inverse=True)
            propagator = self.conditions.propagator(key)
            Fh, Fl, eps, is_dd = propagator.factors(values)
            A = propagator.augmented
            size = A.shape[-1]
            pad = np.zeros((values.size, 3, N, N))
            pad[:, :2, N - 1, N - 1] = [1.0, 0.0]
            pad[:, 0, :size, :size], pad[:, 1, :size, :size] = Fh, Fl
            pad[:, 2, :size, :size] = A[0]
            stacks.append((pad, eps, is_dd, np.full(values.size, (size + 2) * U)))
            index[sel] = offset + which.reshape(-1)
            offset += values.size
        F = np.concatenate([s[0] for s in stacks]) if stacks else np.zeros((0, 3, N, N))
        flat = [
            np.concatenate([s[i] for s in stacks]) if stacks else np.zeros(0) for i in (1, 2, 3)
        ]
        return F, flat[0], flat[1].astype(bool), flat[2], index, np.asarray(low, dtype=float)

    def _compiled(self, actions: _Actions, start, end, final) -> None:
        F, eps, is_dd, gamma, which, low = self._factors()
        n = self.start.shape[1]
        failed = chain(
            np.ascontiguousarray(F[:, 0]),
            np.ascontiguousarray(F[:, 1]),
            is_dd,
            eps,
            np.ascontiguousarray(F[:, 2]),
            gamma,
            which,
            low,
            np.asarray(self.scheme.initial_vector, dtype=float),
            n,
            actions.at,
            actions.arrays,
            start,
            end,
            final,
            actions.moved,
            actions.moved_bound,
        )
        if failed >= 0:  # growth: the checked route says so
            a, b, key = self.pieces[failed]
            self.conditions.propagator(key).advance(start[None, failed, :n], [b - a])

    def _stepped(self, actions: _Actions, start, end, final) -> None:
        n = self.start.shape[1]
        x = np.array(self.scheme.initial_vector, dtype=float)
        e = 0.0
        at = actions.at
        for j, (a, b, key) in enumerate(self.pieces):
            e = operate(
                x.reshape(-1, 1), n, e, at[j], at[j + 1], *actions.arrays, actions.moved,
                actions.moved_bound,
            )  # fmt: skip
            start[j, :n], start[j, n] = x, e
            h, low = dd.two_sum(b, -a)
            x, eps = self.conditions.propagator(key).step(x, float(h), float(low))
            x = np.array(x, dtype=float)
            e = compose(e, eps)
            end[j, :n], end[j, n] = x, e
        P = len(self.pieces)
        e = operate(
            x.reshape(-1, 1), n, e, at[P], at[P + 1], *actions.arrays, actions.moved,
            actions.moved_bound,
        )  # fmt: skip
        final[:n], final[n] = x, e

    def _record(self, actions: _Actions, final) -> None:
        """The jumps at boundaries with operations, and the recorded amounts."""
        P = len(self.pieces)
        initial = np.asarray(self.scheme.initial_vector, dtype=float)
        n = initial.size
        start_bound, end_bound = self.start_bound.tolist(), self.end_bound.tolist()
        for j, time in actions.times.items():
            before = (initial, 0.0) if j == 0 else (self.end[j - 1], end_bound[j - 1])
            after = (final[:n], float(final[n])) if j == P else (self.start[j], start_bound[j])
            self.jumps[time] = (*before, *after)
        removals = zip(actions.moved.tolist(), actions.moved_bound.tolist(), strict=True)
        append = self.moved.append
        for op, (action, species, change, bound) in actions.records:
            if change is None:
                change, bound = next(removals)
            append((op.time, action, species, change, bound, op.statement, op.volume))
