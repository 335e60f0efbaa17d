"""Time ``kinetics check`` on invented schemes of 5k, 10k and 20k reactions.

Run:  .venv/bin/python benchmarks/bench_check.py [--sizes 5000,10000,20000] [--repeat 3]

Each scheme has a quarter as many species as reactions (20,000 reactions on
5,000 species), all with formulas so that the balance is checked.  For each
size it prints

* ``parse``: ``kinetics.load`` alone, the baseline of the ratios;
* ``in-process``: load, ``check_report`` and the terminal output (to a buffer);
* ``command``: ``python -m kinetics check FILE`` in a fresh interpreter, start-up
  included (goal: under 6 s for 20,000 reactions);

with the ratios command / parse and in-process / parse.  Times are the best of
``--repeat`` runs (wall clock; the machine may be shared, see the load printed).
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import random
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def _new_pair(rng: random.Random, n: int, pairs: set, kind: str) -> tuple[int, int]:
    """A forward pair ``a < b < n`` not drawn before (a repeated step would be a parallel
    step, which ``check`` reports as a warning for every repeat)."""
    while True:
        a = rng.randrange(n - 1)
        b = rng.randrange(a + 1, n)
        if (kind, a, b) not in pairs:
            pairs.add((kind, a, b))
            return a, b


def generate(n_reactions: int, seed: int = 1) -> str:
    """An invented scheme of ``n_reactions`` reactions on ``n_reactions // 4`` species.

    Isomers S0, S1, ... (formula C6H12O6) react forward to higher numbers,
    irreversibly or reversibly, with constants in several time units; one in
    ten reactions adds water (held in excess) to give a hydrate P (C6H14O7), and
    the hydrates rearrange among themselves.
    """
    rng = random.Random(seed)
    n_species = max(8, n_reactions // 4)
    n_p = n_species // 5
    n_s = n_species - n_p
    units = ["1/s", "1/min", "min-1", "h-1", "s-1", "d-1"]
    lines = ["title: invented isomer network for timing check", "excess W = 55 mol/L"]
    used: set[str] = set()
    pairs: set[tuple[str, int, int]] = set()
    for i in range(n_reactions):
        kind = i % 10
        n = n_p if kind == 9 else n_s
        a, b = _new_pair(rng, n, pairs, "P" if kind == 9 else "S")
        if kind < 6:
            lines.append(f"S{a} -> S{b}    k{i} = {rng.uniform(0.01, 5):.4g} {units[i % 6]}")
            used.update((f"S{a}", f"S{b}"))
        elif kind < 8:
            kf = rng.uniform(0.1, 2)
            lines.append(f"S{a} <=> S{b}    kf{i} = {kf:.3g} 1/s, kr{i} = 1.5e-3 1/s")
            used.update((f"S{a}", f"S{b}"))
        elif kind < 9:
            b = rng.randrange(n_p)  # (S, P): a pair of its own kind, never repeated
            lines.append(f"S{a} + W -> P{b}    kw{i} = {rng.uniform(1e-5, 1e-3):.3g} M-1 s-1")
            used.update((f"S{a}", f"P{b}"))
        else:
            lines.append(f"P{a} -> P{b}    k{i} = {rng.uniform(0.01, 5):.4g} 1/s")
            used.update((f"P{a}", f"P{b}"))
    names = sorted(used, key=lambda name: (name[0], int(name[1:])))
    first = next(name for name in names if name.startswith("S"))
    lines.append(f"start {first} = 1.0 mol/L")
    formulas = [f"{name} = {'C6H12O6' if name[0] == 'S' else 'C6H14O7'}" for name in names]
    formulas.append("W = H2O")
    # a line may hold at most 10,000 characters: 100 formulas per line
    lines.extend(
        "formula " + ", ".join(formulas[i : i + 100]) for i in range(0, len(formulas), 100)
    )
    return "\n".join(lines) + "\n"


def best(action, repeat: int) -> float:
    """Best wall time of ``repeat`` calls of ``action()`` [s]."""
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return min(times)


def check_in_process(path: Path) -> None:
    """What ``kinetics check FILE`` does, without the interpreter start-up."""
    from kinetics.cli.terminal import render_check
    from kinetics.output.overview import check_report
    from kinetics.parsing import load

    scheme = load(path)
    report = check_report(scheme)
    with contextlib.redirect_stdout(io.StringIO()):
        render_check(scheme, report)


def check_command(path: Path) -> None:
    """``python -m kinetics check FILE`` in a fresh interpreter."""
    subprocess.run(
        [sys.executable, "-m", "kinetics", "check", str(path)],
        check=True,
        stdout=subprocess.DEVNULL,
    )


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="5000,10000,20000", help="reactions per scheme")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    sizes = [int(s) for s in args.sizes.split(",")]

    from kinetics.parsing import load

    check_in_process(Path(__file__).resolve().parent.parent / "networks" / "fed_isomer_feed.scheme")
    print(f"load average at start {os.getloadavg()[0]:.1f} (2 cores shared: wall times vary)")
    print(
        f"{'reactions':>9} {'species':>8} {'parse [s]':>9} {'in-process [s]':>14} "
        f"{'command [s]':>11} {'in-proc/parse':>13} {'command/parse':>13}"
    )
    with tempfile.TemporaryDirectory() as folder:
        for size in sizes:
            path = Path(folder) / f"network_{size}.scheme"
            path.write_text(generate(size), encoding="utf-8")
            species = len(load(path).species)
            parse = best(lambda p=path: load(p), args.repeat)
            inproc = best(lambda p=path: check_in_process(p), args.repeat)
            command = best(lambda p=path: check_command(p), args.repeat)
            print(
                f"{size:>9} {species:>8} {parse:9.3f} {inproc:14.3f} {command:11.3f} "
                f"{inproc / parse:13.2f} {command / parse:13.2f}"
            )
    if 20_000 in sizes:
        verdict = "OK" if command < 6.0 else "SLOWER THAN THE 6 s GOAL"
        print(f"20,000 reactions, command with start-up: {command:.2f} s -> {verdict}")
    print(f"load average at end {os.getloadavg()[0]:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
