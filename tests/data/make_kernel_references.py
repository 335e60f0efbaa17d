"""Write ``kernel_references.npz``: fixed inputs of the compiled kernels and their outputs.

Run:  .venv/bin/python tests/data/make_kernel_references.py

The inputs are invented (seeded random rate matrices, hand-picked plans) except those of
the sweep kernel, which are recorded from :func:`kinetics.sweep_summary.summarise_batch`
on invented stacks.  The outputs are those of the kernels at the time of writing;
``tests/test_kernels.py`` checks that the kernels still return them bit for bit.
Regenerate only when a change of the arithmetic is intended (and say so).
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from test_kernels import REFERENCES, SWEEP_ARGUMENTS, engine_outputs  # noqa: E402

from kinetics import _sweep_kernels, sweep_summary  # noqa: E402
from kinetics._doubledouble import inverse_factorials  # noqa: E402


def _rates(rng, n, density, lo, hi):
    """Essentially nonnegative (n, n): off-diagonal rates 10^U(lo, hi), outflow diagonal."""
    K = np.where(rng.random((n, n)) < density, 10.0 ** rng.uniform(lo, hi, (n, n)), 0.0)
    np.fill_diagonal(K, 0.0)
    np.fill_diagonal(K, -K.sum(axis=0))
    return K.T.copy()  # K[i, j]: formation of i from j


def _exp_case(data, name, A, Al, t, dd, s, r):
    """Inputs of one exponential group: plan (j, s, r), degree m = s (r + 1) - 1."""
    t = np.asarray(t, dtype=float)
    beta = max(float(np.abs(A).sum(axis=1).max()), 1.0) * float(t.max())
    j = max(0, math.ceil(math.log2(2 * beta)))
    m = s * (r + 1) - 1
    ih, il = inverse_factorials(m)
    if not dd:
        il = np.zeros_like(ih)
    key = f"in/exp/{name}/"
    data.update({
        key + "A": np.ascontiguousarray(A), key + "Al": np.ascontiguousarray(Al), key + "t": t,
        key + "plan": np.array([j, s, r, m]), key + "dd": np.array(dd),
        key + "ih": np.array(ih, dtype=float), key + "il": np.array(il, dtype=float),
    })  # fmt: skip


def inputs() -> dict[str, np.ndarray]:
    rng = np.random.default_rng(20240611)
    data: dict[str, np.ndarray] = {"in/tiny": np.array(1e-290)}
    # the bundled example (three consecutive first-order steps, 1/s) and its 36 s grid step
    k = [0.12 / 60, 0.045 / 60, 2.0e-5]
    K4 = np.zeros((4, 4))
    for i, ki in enumerate(k):
        K4[i, i] -= ki
        K4[i + 1, i] += ki
    _exp_case(data, "example", K4[None], np.zeros((1, 4, 4)), [36.0], True, 4, 3)
    # a stiff scheme (constants over 10 decades) with double-double low parts on the diagonal
    A = np.stack([_rates(rng, 12, 0.4, -6, 4) for _ in range(2)])
    Al = np.zeros_like(A)
    for q in range(2):
        np.fill_diagonal(Al[q], np.diag(A[q]) * rng.uniform(-1, 1, 12) * 2.0**-54)
    _exp_case(data, "stiff", A, Al, [0.05, 0.3], True, 5, 4)
    # plain double, three members, and a 60-species one above the BLAS threshold
    A = np.stack([_rates(rng, 10, 0.3, -2, 1) for _ in range(3)])
    _exp_case(data, "double", A, np.zeros_like(A), [0.5, 1.0, 2.0], False, 4, 3)
    A = _rates(rng, 60, 0.1, -2, 0)[None]
    _exp_case(data, "blas", A, np.zeros_like(A), [1.0], False, 3, 2)
    # grids: start states, columns, skip, per-member route; residuals of a rounded grid
    for name, columns, skip in (("stiff", 15, 0), ("double", 12, 1)):
        b, N = data[f"in/exp/{name}/A"].shape[:2]
        x0 = 10.0 ** rng.uniform(-8, 0, (b, N))
        x0[:, 0] = 0.0
        key = f"in/grid/{name}/"
        data[key + "x0h"] = x0
        data[key + "x0l"] = x0 * rng.uniform(-1, 1, (b, N)) * 2.0**-54
        data[key + "shape"] = np.array([columns, skip, 2])  # columns, skip, row0
        data[key + "dd"] = np.arange(b) % 2 == 0
        data[key + "eps"] = 10.0 ** rng.uniform(-20, -14, b)
        data[key + "gamma"] = 10.0 ** rng.uniform(-30, -15, b)
        data[key + "start_bound"] = 10.0 ** rng.uniform(-20, -15, b)
        dt = 0.1 * (1 + rng.uniform(-1e-3, 1e-3))
        times = np.r_[0.0, 0.0, 0.3 + dt * np.arange(columns - skip)] * (1 + 1e-16 * rng.random())
        data[key + "times"] = times
        data[key + "dt"] = np.array(dt)
    # uniform-step checks
    data["in/uniform/regular"] = np.linspace(0.0, 7200.0, 201)
    data["in/uniform/irregular"] = np.r_[0.0, np.cumsum(10.0 ** rng.uniform(-1, 1, 40))]
    # the sweep kernel: arguments recorded from summarise_batch on invented stacks
    recorded = []
    kernel = _sweep_kernels.summarise_members

    def record(*args):
        recorded.append([np.array(a, copy=True) for a in args])
        return kernel(*args)

    _sweep_kernels.summarise_members = record
    try:
        b = 24
        base = np.array(k)
        Ks = np.zeros((b, 4, 4))
        for q in range(b):
            kq = base * 10.0 ** rng.uniform(-0.5, 0.5, 3)
            for i, ki in enumerate(kq):
                Ks[q, i, i] -= ki
                Ks[q, i + 1, i] += ki
        sweep_summary.summarise_batch(Ks, np.tile([0.8, 0.0, 0.0, 0.0], (b, 1)))
        # fed reversible pair (1/s), feed on the first species
        Kf = np.zeros((b, 4, 4))
        for q in range(b):
            ks, kxy, kyx, kp = (
                np.array([0.30, 0.9, 0.4, 0.05]) / 3600 * 10.0 ** rng.uniform(-0.3, 0.3, 4)
            )
            Kf[q] = [[-ks, 0, 0, 0], [ks, -kxy, kyx, 0], [0, kxy, -kyx - kp, 0], [0, 0, kp, 0]]
        sweep_summary.summarise_batch(
            Kf, np.tile([0.1, 0.0, 0.0, 0.0], (b, 1)), feed=np.array([0.02 / 3600, 0, 0, 0])
        )
        # a branched 8-species network with reverse steps
        pattern = _rates(rng, 8, 0.35, 0, 0) != 0
        Kb = np.stack([np.where(pattern, _rates(rng, 8, 1.0, -3, 0), 0.0) for _ in range(b)])
        for q in range(b):
            np.fill_diagonal(Kb[q], 0.0)
            np.fill_diagonal(Kb[q], -Kb[q].sum(axis=0))
        c0 = np.zeros((b, 8))
        c0[:, 0] = 1.0
        # low parts of the diagonal, as an exact sum of constants leaves them
        Kl = np.zeros_like(Kb)
        for q in range(b):
            np.fill_diagonal(Kl[q], np.diag(Kb[q]) * rng.uniform(-1, 1, 8) * 2.0**-54)
        sweep_summary.summarise_batch(Kb, c0, K_low=Kl)
    finally:
        _sweep_kernels.summarise_members = kernel
    for i, args in enumerate(recorded):
        args[-1][:] = 0  # the status array is allocated empty (every entry is written)
        for name, a in zip(SWEEP_ARGUMENTS, args, strict=True):
            data[f"in/sweep/{i}/{name}"] = a
    return data


def main() -> None:
    data = inputs()
    data.update(engine_outputs(data))
    np.savez_compressed(REFERENCES, **data)
    print(f"wrote {REFERENCES} ({len(data)} arrays)")


if __name__ == "__main__":
    main()
