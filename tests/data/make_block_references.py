"""Write the ball-arithmetic references of tests/test_blocks.py (block_references.json).

Two invented networks of 300 and 420 species: species i forms one or two of the
next six species (constants 10^U(-1, 2) 1/s), about one in twelve of those steps
is reversible (back constant 10^U(-1, 1) 1/s) and a few steps close a loop of three.
All start in species 0 (1 mol/L) and, in the second network, also in species 7
(0.25 mol/L).

For each time the reference is ``exp(t K) c0`` by python-flint's ``arb_mat.exp``
(ball arithmetic, 1400 bits), with the rate matrix built exactly from the
constants: every constant is the double written here, and each diagonal entry is
minus the exact sum of the outflow constants of that species.  Stored per entry:
the midpoint (25 significant digits) and the radius of the ball.

Run (a few minutes; about 3 CPU minutes on the machine that wrote it)::

    python tests/data/make_block_references.py
"""

from __future__ import annotations

import json
import pathlib
import time

import flint
import numpy as np

HERE = pathlib.Path(__file__).parent
TIMES = ["0.001", "0.25"]  # times [s] (the doubles nearest to these)


def network(n: int, seed: int) -> list[tuple[int, int, float]]:
    """Steps (reactant, product, k [1/s]) of an invented forward-connected network."""
    rng = np.random.default_rng(seed)
    steps = []
    for i in range(n - 1):
        targets = rng.choice(
            np.arange(i + 1, min(n, i + 7)),
            size=min(n - 1 - i, 1 + int(rng.integers(0, 2))),
            replace=False,
        )
        for j in sorted(targets.tolist()):
            steps.append((i, j, float(10.0 ** rng.uniform(-1, 2))))
            if rng.random() < 1 / 12:
                steps.append((j, i, float(10.0 ** rng.uniform(-1, 1))))
    for i in range(5, n - 3, 97):
        steps.append((i + 2, i, float(10.0 ** rng.uniform(-1, 0))))
    return steps


def reference(n: int, steps, c0: dict[int, str], t: str, prec: int = 1400):
    flint.ctx.prec = prec
    K = flint.arb_mat(n, n)
    for src, dst, k in steps:
        kk = flint.arb(k)  # exact: the double itself
        K[dst, src] += kk
        K[src, src] -= kk
    x = flint.arb_mat(n, 1)
    for i, v in c0.items():
        x[i, 0] = flint.arb(v)
    E = (K * flint.arb(float(t))).exp() * x  # the time as the double the test passes
    return [
        (E[i, 0].mid().str(25, radius=False), E[i, 0].rad().str(3, radius=False)) for i in range(n)
    ]


def main() -> None:
    cases = []
    for n, seed, c0 in ((300, 11, {0: "1"}), (420, 12, {0: "1", 7: "0.25"})):
        steps = network(n, seed)
        refs = {}
        for t in TIMES:
            t0 = time.perf_counter()
            refs[t] = reference(n, steps, c0, t)
            print(f"n = {n}, t = {t} s: {time.perf_counter() - t0:.1f} s", flush=True)
        cases.append(
            {"n": n, "steps": [[a, b, repr(k)] for a, b, k in steps], "c0": c0, "references": refs}
        )
    (HERE / "block_references.json").write_text(json.dumps({"cases": cases}, indent=0))


if __name__ == "__main__":
    main()
