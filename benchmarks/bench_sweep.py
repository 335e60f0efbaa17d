"""Speed of parameter sweeps, as a ratio against scipy's solve_ivp measured in the same run.

Usage::

    python benchmarks/bench_sweep.py                  # 10,000 sets (about half a minute)
    python benchmarks/bench_sweep.py --sets 2000      # quicker
    python benchmarks/bench_sweep.py --million        # + 1,000,000 sets streamed to disk

The scheme is an invented 10-species branched network with a reversible end pair.  The
sweep varies two rate constants on a log grid; every set is solved on 201 time points
and summarised (half-lives, intermediate maxima with their times, long-time limits).

The public call ``kinetics.sweep(..., curves=True)`` (summary table and the curves as a
labelled ``xarray.DataArray``) is timed against the engine call it wraps (the chunks with
summaries and curves kept in memory), measured in the same run: target at most 1.5 times.

Baseline: a Python loop over scipy.integrate.solve_ivp (LSODA, rtol 1e-10, atol 1e-12,
analytic Jacobian) on the same 201 points, timed on a subset of the sets and scaled per
set.  The baseline only integrates; it does not compute the summary quantities.
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

import kinetics
from kinetics.analysis import summarise
from kinetics.sweep import chunk_result, curves_long_frame, make_plan, run_chunks, set_matrices

SCHEME = """\
title: benchmark network, ten species, branched, reversible end pair (invented)
A -> B      k1 = 0.5 1/min
A -> C      k2 = 0.2 1/min
B -> D      k3 = 0.1 1/min
C -> D      k4 = 0.05 1/min
D -> E      k5 = 0.02 1/min
D -> F      k6 = 0.03 1/min
E -> G      k7 = 0.01 1/min
F -> G      k8 = 0.2 1/min
G -> H      k9 = 0.005 1/min
H -> I      k10 = 0.5 1/min
I <=> J     k11 = 0.001 1/min, k12 = 0.0005 1/min
start A = 1.0 mol/L
"""


def plan_for(sets: int, chunk: int):
    scheme = kinetics.parse(SCHEME)
    side = max(2, round(math.sqrt(sets)))
    vary = [f"k3=0.01:1:{side}:log", f"k6=0.003:0.3:{max(1, sets // side)}:log"]
    times = np.linspace(0.0, 8 * 3600.0, 201)
    return scheme, make_plan(scheme, vary, times, time_unit="min", chunk_size=chunk)


def run_sweep_in_memory(plan, curves: bool, threads: int) -> tuple[float, list]:
    """The local engine (chunks on a pool of ``threads``), results kept in memory."""
    out = {}
    t0 = time.perf_counter()
    run_chunks(
        plan,
        range(plan.n_chunks),
        lambda r: out.__setitem__(r.index, r),
        curves=curves,
        threads=threads,
    )
    return time.perf_counter() - t0, [out[k] for k in range(plan.n_chunks)]


def api_with_curves(scheme, plan):
    """The public ``kinetics.sweep(..., curves=True)`` on the same plan (the summary table
    and the labelled curves): its time and its curves."""
    t0 = time.perf_counter()
    _, curves = kinetics.sweep(scheme, plan, curves=True)
    return time.perf_counter() - t0, curves


def baseline(plan, count: int, repeat: int = 3) -> tuple[float, np.ndarray, np.ndarray]:
    """Seconds per set of solve_ivp (LSODA) on ``count`` sets spread over the grid.

    The best of ``repeat`` passes over the sets (the sweep is timed as the best of two
    runs, so both are taken at their minimum, as timeit recommends).
    """
    idx = np.linspace(0, plan.n_sets - 1, count).astype(int)
    K, _, c0, _ = set_matrices(plan, 0, plan.n_sets)
    K, c0 = K[idx], c0[idx]
    out = np.empty((count, plan.times.size, K.shape[1]))
    return min(_lsoda_pass(plan, K, c0, out) for _ in range(repeat)) / count, idx, out


def _lsoda_pass(plan, K, c0, out) -> float:
    count = K.shape[0]
    t0 = time.perf_counter()
    for i in range(count):
        M = K[i]
        sol = solve_ivp(
            lambda t, c, M=M: M @ c,
            (0.0, plan.times[-1]),
            c0[i],
            method="LSODA",
            t_eval=plan.times,
            rtol=1e-10,
            atol=1e-12,
            jac=lambda t, c, M=M: M,
        )
        out[i] = sol.y.T
    return time.perf_counter() - t0


def check(plan, parts, idx, ivp) -> tuple[float, float]:
    """Largest relative differences: summaries vs analysis.summarise, curves vs LSODA."""
    summary = np.concatenate([p.summary for p in parts])
    curves = np.concatenate([p.curves for p in parts])
    names = plan.scheme.species_names
    worst_summary = 0.0
    for i in idx[:10]:
        K, K_low, c0, feed = set_matrices(plan, i, i + 1)
        ref = summarise(
            K[0], c0[0], names, feed=feed, t_window=float(plan.times[-1]), K_low=K_low[0]
        )
        for j, col in enumerate(plan.columns):
            want = getattr(ref[col.species], col.quantity)
            got = summary[i, j]
            if want is None:
                worst_summary = max(worst_summary, 0.0 if math.isnan(got) else math.inf)
            elif col.quantity in ("half_life", "t_max"):
                want = want / 60.0  # the table is in minutes
                worst_summary = max(worst_summary, abs(got - want) / abs(want))
            elif want != 0:
                worst_summary = max(worst_summary, abs(got - want) / abs(want))
    big = ivp > 1e-6
    worst_curve = float(np.max(np.abs(curves[idx][big] - ivp[big]) / ivp[big]))
    return worst_summary, worst_curve


def million(chunk: int, threads: int) -> None:
    from kinetics.sweep.store import run_sweep

    scheme = kinetics.parse(SCHEME)
    times = np.linspace(0.0, 8 * 3600.0, 201)
    plan = make_plan(
        scheme,
        ["k3=0.01:1:1000:log", "k6=0.003:0.3:1000:log"],
        times,
        time_unit="min",
        chunk_size=chunk,
    )
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "million.parquet"
        t0 = time.perf_counter()
        report = run_sweep(plan, [out], threads=threads)
        dt = time.perf_counter() - t0
        size = out.stat().st_size
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        f"1,000,000 sets streamed to parquet: {dt:.1f} s, {report.rows} rows, "
        f"{size / 1e6:.0f} MB file, peak memory of this process {peak:.0f} MB"
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sets", type=int, default=10_000)
    ap.add_argument("--chunk", type=int, default=1000)
    ap.add_argument("--baseline", type=int, default=40, help="sets timed with solve_ivp")
    ap.add_argument("--threads", type=int, default=os.cpu_count() or 1, help="local engine threads")
    ap.add_argument("--million", action="store_true")
    args = ap.parse_args()
    scheme, plan = plan_for(args.sets, args.chunk)
    print(
        f"scheme: {len(scheme.species)} species, {len(scheme.steps)} steps; "
        f"{plan.n_sets} sets x {plan.times.size} points; chunks of {plan.chunk_size}; "
        f"{os.cpu_count()} CPUs; local engine with {args.threads} threads; "
        f"load average before the run {os.getloadavg()[0]:.2f} (other work on the machine "
        "slows the threaded sweep more than the single-threaded baseline)"
    )
    # warm up imports and caches on a small plan
    chunk_result(plan_for(16, 16)[1], 0, 16, curves=True)
    import xarray  # noqa: F401  (its import is paid once, not in the timed runs)

    # best of two runs each (the first run also pays for allocating the arrays)
    t_summary = min(run_sweep_in_memory(plan, False, args.threads)[0] for _ in range(2))
    # the engine and the public call alternate, best of four each (same load for both)
    t_full, t_api, parts, curves = math.inf, math.inf, None, None
    for _ in range(4):
        parts = curves = None  # the previous run's curves are freed before the next run
        t, parts = run_sweep_in_memory(plan, True, args.threads)
        t_full = min(t_full, t)
        t, curves = api_with_curves(scheme, plan)
        t_api = min(t_api, t)
    t0 = time.perf_counter()
    curves_long_frame(curves)
    t_long = time.perf_counter() - t0
    curves = None
    t_one = min(run_sweep_in_memory(plan, True, 1)[0] for _ in range(2))
    per_set = t_full / plan.n_sets
    t_ivp, idx, ivp = baseline(plan, args.baseline)
    worst_summary, worst_curve = check(plan, parts, idx, ivp)
    scale = 10_000 / plan.n_sets
    print(
        f"sweep, summaries only          : {t_summary:7.2f} s  "
        f"({1e6 * t_summary / plan.n_sets:7.1f} us per set)"
    )
    print(
        f"sweep, summaries + 201 points  : {t_full:7.2f} s  ({1e6 * per_set:7.1f} us per set)"
        f"  target < 10 s for 10,000 sets: {'met' if t_full * scale < 10 else 'NOT met'}"
    )
    print(
        f"  the same on one thread       : {t_one:7.2f} s  "
        f"({1e6 * t_one / plan.n_sets:7.1f} us per set)"
    )
    print(
        f"kinetics.sweep(..., curves=True): {t_api:7.2f} s = {t_api / t_full:.2f} x the engine "
        f"call above (summaries + curves in memory)  target <= 1.5: "
        f"{'met' if t_api / t_full <= 1.5 else 'NOT met'}; curves_long_frame of its curves "
        f"(the long table, {plan.n_sets * plan.times.size * len(scheme.species):,} rows): "
        f"{t_long:.2f} s more"
    )
    print(
        f"solve_ivp LSODA loop (rtol 1e-10, analytic Jacobian), {args.baseline} sets, "
        "best of 3 passes: "
        f"{1e3 * t_ivp:.2f} ms per set -> {t_ivp * plan.n_sets:.1f} s for all sets"
    )
    ratio = t_ivp / per_set
    print(
        f"speed ratio per set (solve_ivp / sweep): {ratio:.0f}x  target >= 100x: "
        f"{'met' if ratio >= 100 else 'NOT met'}  (one thread: "
        f"{t_ivp * plan.n_sets / t_one:.0f}x)"
    )
    print(
        f"largest relative difference: summaries vs analysis.summarise {worst_summary:.1e}; "
        f"curves vs LSODA (entries > 1e-6) {worst_curve:.1e}"
    )
    if args.million:
        million(args.chunk, args.threads)


if __name__ == "__main__":
    main()
