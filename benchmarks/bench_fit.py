"""Benchmark: a two-constant fit of a 5-species scheme to 200 measured values.

Compares the exact Jacobian (Fréchet derivative of the matrix exponential, block
form) with finite-difference Jacobians (scipy's 2-point and 3-point schemes) on
the same data, same start, same tolerances, and prints

* wall time of each fit (single start, no profile intervals), and of the full
  default fit (multi-start, profile intervals), best of three runs;
* model evaluations (one evaluation = the concentrations of every run at every
  measured time for one parameter vector) and the ratio finite-difference / exact;
* the agreement of the estimates.

Run: ``python benchmarks/bench_fit.py``.  Prints ratios; never fails.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

import kinetics
from kinetics.fit import fit

TRUTH = """title: invented five-species test scheme
A -> B    k1 = 0.08 1/min
B -> C    k2 = 0.03 1/min
C -> D    k3 = 0.01 1/min
A -> E    k4 = 0.02 1/min
start A = 1.0 mol/L
"""
START = TRUTH.replace("k1 = 0.08", "k1 = 0.2").replace("k2 = 0.03", "k2 = 0.005")


def data() -> pd.DataFrame:
    scheme = kinetics.parse(TRUTH)
    times = np.linspace(0.0, 240.0, 51)[1:] * 60.0  # 50 times x 4 species = 200 values
    frame = kinetics.solve(scheme, times).to_frame("min")
    rng = np.random.default_rng(2024)
    for name in ("B", "C", "D", "E"):
        column = f"{name} [mol/L]"
        frame[column] = frame[column] + rng.normal(0.0, 0.005, len(frame))
    return frame[["time [min]", "B [mol/L]", "C [mol/L]", "D [mol/L]", "E [mol/L]"]]


def run(scheme, table, jacobian: str, repeats: int = 3, **options):
    """The fit and its best wall time of ``repeats`` runs (the machine may be shared)."""
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = fit(scheme, table, "k1,k2", jacobian=jacobian, **options)
        best = min(best, time.perf_counter() - t0)
    return result, best


def main() -> None:
    scheme = kinetics.parse(START)
    table = data()
    run(scheme, table, "exact", repeats=1, starts=1, profile=False)  # warm-up (imports)
    rows = []
    for jac in ("exact", "2-point", "3-point"):
        result, seconds = run(scheme, table, jac, starts=1, profile=False)
        st = result.statistics
        rows.append((jac, result, seconds, st["model_evaluations_search"]))
    exact = rows[0]
    print("two-constant fit, 5 species, 200 values, one start, no profile intervals")
    print(
        f"{'Jacobian':10s} {'time [s]':>9s} {'model evals':>12s} {'exact Jac.':>11s} k1, k2 [1/min]"
    )
    for jac, result, seconds, evals in rows:
        st = result.statistics
        jac_count = st["jacobian_evaluations"] - 1 if jac != "exact" else st["jacobian_evaluations"]
        print(
            f"{jac:10s} {seconds:9.3f} {evals:12d} {jac_count:11d} "
            f"{result.value('k1'):.10g}, {result.value('k2'):.10g}"
        )
    for jac, result, seconds, evals in rows[1:]:
        agree = max(abs(result.value(n) / exact[1].value(n) - 1.0) for n in ("k1", "k2"))
        print(
            f"ratio of model evaluations {jac} / exact: {evals / exact[3]:.1f}  "
            f"(time ratio {seconds / exact[2]:.1f}; estimates agree to {agree:.1e} relative)"
        )
    entry, entry_seconds = run(scheme, table, "exact", starts=1, profile=False, engine="entrywise")
    agree = max(abs(entry.value(n) / exact[1].value(n) - 1.0) for n in ("k1", "k2"))
    print(
        f"same fit with the entrywise engine (kinetics.propagate.sensitivities): "
        f"{entry_seconds:.3f} s, {entry_seconds / exact[2]:.1f} x the block-form time "
        f"(estimates agree to {agree:.1e})"
    )
    full, seconds = run(scheme, table, "exact")
    st = full.statistics
    print(
        f"default fit (exact Jacobian, {st['starts']} starts, profile intervals): {seconds:.3f} s, "
        f"{st['model_evaluations']} model evaluations, {st['jacobian_evaluations']} exact Jacobians"
    )
    print(f"converged in under 1 s: single start {exact[2] < 1.0}, default {seconds < 1.0}")


if __name__ == "__main__":
    main()
