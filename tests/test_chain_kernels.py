"""The actions of a timeline's operations (kinetics.engine.chain_kernels.operate).

Reference: the maps written out by hand, in exact binary fractions (so each product is
exact or rounded once, as stated), and the bound's composition (1 + e)(1 + u) - 1.
"""

from __future__ import annotations

import numpy as np

from kinetics.engine.chain_kernels import ADD, REMOVE, ROUND, SCALE, operate

U = 2.0**-53


def run(rows, x, e=0.0, records=1):
    kind, species, first, second, flag, is_record = (np.array(c) for c in zip(*rows, strict=True))
    record = np.cumsum(is_record) - 1
    moved, bound = np.zeros(records), np.zeros(records)
    e = operate(
        x.reshape(-1, 1), 2, e, 0, len(rows), kind.astype(np.int64), species.astype(np.int64),
        first.astype(float), second.astype(float), flag.astype(bool), record.astype(np.int64),
        moved, bound,
    )  # fmt: skip
    return x, e, moved, bound


def test_dilution_then_addition():
    x = np.array([0.5, 0.25, 1.0])  # the third entry: the constant of an augmented state
    rows = [(SCALE, 0, 0.75, 0.0, False, False), (ROUND, 2, 0, 0, False, False),
            (ADD, 1, 0.125, 0.0, False, False), (ROUND, 1, 0, 0, False, False)]  # fmt: skip
    x, e, _, _ = run(rows, x)
    assert x.tolist() == [0.375, 0.3125, 1.0]  # species only; the constant untouched
    e2 = 2 * U + U * U
    assert e == e2 + U + e2 * U


def test_partial_and_complete_removals_record_what_they_take():
    x = np.array([0.5, 0.25, 1.0])
    rows = [(REMOVE, 0, 0.25, 0.75, False, True), (ROUND, 2, 0, 0, False, False),
            (REMOVE, 1, 1.0, 0.0, True, True)]  # fmt: skip
    x, e, moved, bound = run(rows, x, e=1e-15, records=2)
    assert x.tolist() == [0.375, 0.0, 1.0]
    assert moved.tolist() == [-0.125, -0.25]
    r = 1e-15 + U + 1e-15 * U  # a partial removal: the fraction's and the product's rounding
    assert bound[0] == r + U + r * U
    e2 = 1e-15
    for _ in range(2):
        e2 = e2 + U + e2 * U
    assert bound[1] == e2 == e  # a complete removal: exact, carries the bound so far
