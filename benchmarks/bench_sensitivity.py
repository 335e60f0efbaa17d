"""Benchmark: sensitivities of all summary quantities against the summary itself.

``solve --sensitivity`` computes, after the summary, the exact normalised sensitivities
of every half-life, time to 90 % and 10 %, t_max, c_max and lifetime to every parameter
(kinetics.analysis.summary_sensitivity.summary_sensitivities).  The target of issue 15:
at most 5 times the cost of the summary (kinetics.analysis.solution_summary.compute_summary)
on the same solution.  Three invented schemes:

* a 10-species chain with a branch (11 rate constants, 9 maxima);
* the same written with named half-lives (11 named quantities driving the constants);
* the generator example of networks/ (named half-lives, a start activity, activities).

Each cost is the best of ``REPEATS`` runs (the machine may be shared); the ratio is
printed per scheme.  Run: ``python benchmarks/bench_sensitivity.py``.  Prints ratios;
never fails.
"""

from __future__ import annotations

import os
import time
from pathlib import Path

import numpy as np

import kinetics
from kinetics.analysis.solution_summary import compute_summary
from kinetics.analysis.summary_sensitivity import summary_sensitivities

REPEATS = 7
ROOT = Path(__file__).resolve().parents[1]


def chain(named: bool) -> str:
    lines = []
    for i in range(9):
        minutes = 5.0 * (1 + 0.37 * i)
        if named:
            lines.append(f"t{i} = {minutes:.4g} min")
            lines.append(f"S{i} -> S{i + 1}  k{i} = ln(2) / t{i}")
        else:
            lines.append(f"S{i} -> S{i + 1}  k{i} = {np.log(2) / minutes:.6g} 1/min")
    if named:
        lines += ["t_x = 20 min", "S3 -> S7  kx = ln(2) / t_x"]
    else:
        lines.append("S3 -> S7  kx = 0.0347 1/min")
    lines.append("start S0 = 1 mol/L")
    return "\n".join(lines)


def best(function, *args) -> float:
    out = float("inf")
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        function(*args)
        out = min(out, time.perf_counter() - t0)
    return out


def measure(label: str, solution) -> None:
    summary = compute_summary(solution)
    summary_sensitivities(solution, summary)  # warm-up
    t_summary = best(compute_summary, solution)
    t_sens = best(summary_sensitivities, solution, summary)
    sens = summary_sensitivities(solution, summary)
    values = sum(len(by) for per in sens.values() for by in per.values())
    print(
        f"{label:<44} summary {1e3 * t_summary:8.2f} ms   sensitivities "
        f"{1e3 * t_sens:8.2f} ms ({values} values)   ratio {t_sens / t_summary:5.2f}"
    )


def main() -> None:
    print(f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} CPUs; best of {REPEATS}")
    times = np.linspace(0.0, 5 * 3600.0, 201)
    for label, named in (
        ("10-species chain, 11 constants", False),
        ("same, 10 named half-lives drive them", True),
    ):
        measure(label, kinetics.solve(kinetics.parse(chain(named)), times))
    generator = kinetics.load(ROOT / "networks" / "generator_half_lives.scheme")
    solution = kinetics.solve(generator, np.linspace(0.0, 5 * 86400.0, 201)).in_activity("MBq")
    measure("generator example, activities in MBq", solution)


if __name__ == "__main__":
    main()
