"""Measure the rates behind the route choice of ``kinetics._blocks.route_costs``.

Usage::

    python benchmarks/calibrate_routes.py

Prints the seconds per operation of the pieces the cost model counts (one thread,
as the routes run), then compares the model's prediction with the measured time of
both routes on a few invented schemes.  The constants in ``kinetics/_blocks.py``
(``RATES``) were written from the first part of its output; rerun it when either
engine changes and copy the new figures there.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.sparse
from threadpoolctl import threadpool_limits

from kinetics.engine import block_kernels as _block_kernels
from kinetics.engine import kernels as _kernels
from kinetics.engine.blocks import RATES, propagate_blocks, route_costs
from kinetics.propagate import propagate_batch


def best(fn, repeat=5):
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return min(out)


def rates():
    n = 200
    rng = np.random.default_rng(0)
    A, B = rng.random((n, n)), rng.random((n, n))
    Al, Bl = A * 1e-17, B * 1e-17
    C, Cl = np.empty_like(A), np.empty_like(A)
    flag = np.bool_(True)
    _kernels.product(A, Al, B, Bl, C, Cl, flag)
    dd = best(lambda: _kernels.product(A, Al, B, Bl, C, Cl, flag)) / n**3
    P, Q = rng.random((1000, 128)), rng.random((128, 128))
    blas = best(lambda: P @ Q) / (1000 * 128 * 128)
    x = rng.random(128)
    mv = best(lambda: [P @ x for _ in range(100)]) / (100 * 1000 * 128)
    # the column Taylor kernel on a banded random pattern (3 nonzeros per column)
    m, size = 40, 1000
    rows = np.r_[np.arange(size), *(np.minimum(np.arange(size) + d, size - 1) for d in (3, 17))]
    cols = np.r_[np.arange(size), np.arange(size), np.arange(size)]
    Y = scipy.sparse.csc_array((rng.random(rows.size), (rows, cols)), shape=(size, size))
    Y.sum_duplicates()
    out = np.empty((size, 128))
    V, W = np.zeros_like(out), np.zeros_like(out)
    alive = np.empty(size, dtype=np.bool_)
    args = (Y.indptr.astype(np.int64), Y.indices.astype(np.int64), Y.data, 0, m, 1.0, out, V, W,
            alive)  # fmt: skip
    _block_kernels.column_taylor(*args)
    scatter = best(lambda: _block_kernels.column_taylor(*args)) / (m * Y.nnz * 128)
    return {"dd": dd, "blas": blas, "gemv": mv, "scatter": scatter}


def strongly_connected(n, rng):
    """An invented strongly connected scheme: a ring plus about two random steps each."""
    K = np.zeros((n, n))
    K[(np.arange(n) + 1) % n, np.arange(n)] = 10.0 ** rng.uniform(-3, 1, n)
    mask = (rng.random((n, n)) < 2.0 / n) & ~np.eye(n, dtype=bool)
    K[mask] += 10.0 ** rng.uniform(-3, 1, mask.sum())
    K -= np.diag(K.sum(axis=0))
    return K


def random_sparse(n, p, rng):
    """An invented random scheme: each ordered pair linked with probability p."""
    K = np.zeros((n, n))
    mask = (rng.random((n, n)) < p) & ~np.eye(n, dtype=bool)
    K[mask] = 10.0 ** rng.uniform(-3, 1, mask.sum())
    return K - np.diag(K.sum(axis=0))


def forward(n, rng):
    """An invented forward network: each species forms one or two of the next eight."""
    K = np.zeros((n, n))
    for i in range(n - 1):
        for j in rng.choice(np.arange(i + 1, min(n, i + 9)), size=min(2, n - 1 - i)):
            K[j, i] += 10.0 ** rng.uniform(-3, 1)
    return K - np.diag(K.sum(axis=0))


def compare():
    rng = np.random.default_rng(3)
    cases = [
        ("strongly connected", n, strongly_connected(n, rng), 101) for n in (60, 150, 300, 400)
    ]
    cases += [("random sparse 3/n", n, random_sparse(n, 3.0 / n, rng), 201) for n in (100, 200)]
    cases += [("forward", n, forward(n, rng), 101) for n in (120, 300)]
    print("\nscheme                      points | dense: model  measured | blocks: model  measured"
          " | chosen  faster")  # fmt: skip
    for name, n, K, points in cases:
        t = np.linspace(0.0, 100.0, points)
        c0 = np.zeros(n)
        c0[0] = 1.0
        Ks = scipy.sparse.csr_array(K)
        cost = route_costs(Ks, t)
        propagate_batch(K[None], c0, t[:3], precision="double-double")
        td = best(
            lambda K=K, c0=c0, t=t: propagate_batch(K[None], c0, t, precision="double-double"), 3
        )
        tb = best(lambda Ks=Ks, c0=c0, t=t: propagate_blocks(Ks, c0, t, None), 3)
        chosen = "blocks" if cost["blocks"] < cost["dense"] else "dense"
        faster = "blocks" if tb < td else "dense"
        print(f"{name:18s} n = {n:4d} {points:4d} | {cost['dense']:7.3f} s {td:7.3f} s | "
              f"{cost['blocks']:7.3f} s {tb:7.3f} s | {chosen:6s}  {faster}")  # fmt: skip


def main():
    with threadpool_limits(limits=1, user_api="blas"):
        r = rates()
    import os

    print(f"load average: {os.getloadavg()}")
    print("seconds per operation (one thread):")
    for k, v in r.items():
        print(f"  {k:8s} {v:.3e}   (RATES now: {RATES.get(k, float('nan')):.3e})")
    compare()


if __name__ == "__main__":
    main()
