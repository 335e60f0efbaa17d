"""Parse a generated scheme of 20,000 reactions and build its sparse rate matrix.

Run:  /work/venv/bin/python benchmarks/bench_parse.py [--reactions 20000] [--repeat 3]

Prints the time of ``kinetics.parse`` plus ``Scheme.rate_matrix_sparse()`` for
the target size (goal: under 2 s), and the times for 5k/10k/20k/40k reactions
with their ratios against the 5k run of the same process, per reaction and per
byte of input: a linear parser keeps the per-byte ratio near 1.

The one-off start-up cost (importing the package and building the unit
registry) is measured separately and not included in the parse times.
"""

from __future__ import annotations

import argparse
import os
import random
import sys
import time


def generate(n_reactions: int, seed: int = 1) -> str:
    """A scheme of ``n_reactions`` lines in the forms the language offers.

    A long chain of intermediates with side branches: irreversible steps with
    one to three products and decimal coefficients, reversible steps, steps
    sharing a named constant, pseudo-first-order steps with a co-reactant in
    excess, constants in several time units, comments, start values and feeds.
    """
    rng = random.Random(seed)
    units = ["1/s", "1/min", "min-1", "h-1", "s⁻¹", "d-1"]
    lines = ["title: generated benchmark scheme", "k_shared = 0.05 1/min", "excess W = 55 mol/L"]
    for i in range(n_reactions):
        a, b = f"S{i}", f"S{i + 1}"
        kind = i % 10
        if kind < 5:
            products = [b, f"{rng.choice(['0.5 ', '2 ', ''])}P{rng.randrange(200)}"]
            unit = units[i % len(units)]
            lines.append(
                f"{a} -> {' + '.join(products)}    k{i} = {rng.uniform(0.01, 5):.4g} {unit}"
            )
        elif kind < 7:
            lines.append(
                f"{a} <=> {b}    kf{i} = {rng.uniform(0.1, 2):.3g} 1/s, kr{i} = 1.5e-3 1/s"
            )
        elif kind < 8:
            lines.append(f"{a} -> {b}    k_shared   # shares one constant")
        else:
            lines.append(f"{a} + W -> {b}    kw{i} = {rng.uniform(1e-5, 1e-3):.3g} M-1 s-1")
    lines.append(f"start S0 = 1.0 mol/L, S{n_reactions // 2} = 10 mmol/L")
    lines.append("feed S0 = 0.01 mol/L/min")
    return "\n".join(lines) + "\n"


def measure(text: str, repeat: int) -> tuple[float, float, int, int]:
    """Best wall and CPU time of parse + sparse rate matrix over ``repeat`` runs [s].

    The CPU time (this process only) is the steadier number on a shared machine.
    """
    import kinetics

    best_wall = best_cpu = float("inf")
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        scheme = kinetics.parse(text)
        matrix = scheme.rate_matrix_sparse()
        best_wall = min(best_wall, time.perf_counter() - w0)
        best_cpu = min(best_cpu, time.process_time() - c0)
        del scheme
    return best_wall, best_cpu, matrix.shape[0], matrix.nnz


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reactions", type=int, default=20_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)

    t0 = time.perf_counter()
    import kinetics
    from kinetics.units import parse_unit

    t1 = time.perf_counter()
    parse_unit("1/s")  # builds the unit registry once per process
    t2 = time.perf_counter()
    print(
        f"start-up (not in the times below): import {t1 - t0:.2f} s, unit registry {t2 - t1:.2f} s"
    )
    kinetics.parse(generate(50))  # warm the unit cache as any first file would

    text = generate(args.reactions)
    wall, cpu, n, nnz = measure(text, args.repeat)
    verdict = "OK" if wall < 2.0 else "SLOWER THAN THE 2 s GOAL"
    print(
        f"{args.reactions} reactions ({len(text) / 1e6:.2f} MB): parse + sparse K in "
        f"{wall:.3f} s wall, {cpu:.3f} s CPU ({n} species, {nnz} nonzeros) -> {verdict}"
    )

    print("\nlinearity (baseline: the 5k run of this process; CPU times)")
    print(
        f"{'reactions':>10} {'bytes':>10} {'CPU [s]':>8} {'time ratio':>10} "
        f"{'size ratio':>10} {'per-byte ratio':>14}"
    )
    base = None
    for size in (5_000, 10_000, 20_000, 40_000):
        text = generate(size)
        _, cpu, _, _ = measure(text, args.repeat)
        if base is None:
            base = (cpu, len(text))
        time_ratio = cpu / base[0]
        size_ratio = len(text) / base[1]
        print(
            f"{size:>10} {len(text):>10} {cpu:>8.3f} {time_ratio:>10.2f} "
            f"{size_ratio:>10.2f} {time_ratio / size_ratio:>14.2f}"
        )
    if os.getloadavg()[0] > (os.cpu_count() or 1):
        print(f"\nnote: the machine is busy (load {os.getloadavg()[0]:.1f}); wall times vary")
    return 0


if __name__ == "__main__":
    sys.exit(main())
