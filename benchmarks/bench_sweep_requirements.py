"""Sweeps with ``require`` lines against the same sweeps without them.

Run:  .venv/bin/python benchmarks/bench_sweep_requirements.py [--repeat 3] [--sets 2000]

For the two bundled examples with requirements (networks/tablet_shelf_life.scheme: a
decaying active and a degradant; networks/quench_window.scheme: an impurity that only
rises) a sweep over temperature and one Arrhenius prefactor is timed in process
(``kinetics.sweep``, no start-up), with the scheme's ``require`` lines and with them
removed; printed: both times and their ratio (the cost the requirement columns add).
Run it from two checkouts in one go to compare versions (the ratio is the steadier figure
on a shared machine).
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))

NETWORKS = Path(__file__).resolve().parent.parent / "networks"
CASES = {
    "tablet_shelf_life": ("temperature=5:45:{n}:degC", "k_ox.A=4e7:1.6e8:5", 1000 * 86400.0),
    "quench_window": ("temperature=40:90:{n}:degC", "k2.A=2e6:5e6:5", 8 * 3600.0),
}


def best_time(fn, repeat: int) -> float:
    """Best wall time [s] of ``fn()`` over ``repeat`` calls."""
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return min(out)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--sets", type=int, default=2000)
    args = parser.parse_args()

    import numpy as np

    import kinetics

    print(f"load: {os.getloadavg()[0]:.2f} (1 min average), {os.cpu_count()} CPUs")
    for name, (first, second, end) in CASES.items():
        text = (NETWORKS / f"{name}.scheme").read_text()
        plain = "\n".join(x for x in text.splitlines() if not x.startswith("require"))
        grid = [first.format(n=max(2, args.sets // 5)), second]
        times = np.linspace(0.0, end, 201)
        timed = {}
        for label, source in (("with require", text), ("without", plain)):
            scheme = kinetics.parse(source)
            kinetics.sweep(scheme, grid[:1], times[:3])  # compiles the kernels once
            run = lambda s=scheme, g=grid, t=times: kinetics.sweep(s, g, t)  # noqa: E731
            timed[label] = best_time(run, args.repeat)
        ratio = timed["with require"] / timed["without"]
        print(
            f"{name}: {args.sets} sets, without require {timed['without']:.3f} s, with "
            f"{timed['with require']:.3f} s: ratio {ratio:.1f}"
        )


if __name__ == "__main__":
    main()
