"""``kinetics optimise`` over two settings of a 10-species scheme: time, and model
evaluations against a derivative-free search from the same starts.

Run:  .venv/bin/python benchmarks/bench_optimise.py [--repeat 3]

Prints, for the best temperature and quench time of an intermediate of a generated
10-species Arrhenius scheme (goal: under 1 s):

* the wall and CPU time of :func:`kinetics.optimise.optimise` (grid, local searches and the
  flat ranges), and as a ratio against one ``kinetics.solve`` with its summary on 201
  points measured in the same run (the ratio is the steadier figure on a shared machine);
* the model evaluations of its local searches (Newton steps with exact gradients and
  Hessians, SLSQP where a requirement binds) against scipy's Nelder-Mead run from the same
  grid starts in the same scaled coordinates until it reaches the same optimum (within
  1e-6 and 1e-9 of the target) and until it stops by itself (xatol 1e-12, fatol 1e-15);
  goal: at least 10 times fewer.  A Nelder-Mead evaluation is a value only, ours carry
  derivatives: their times are printed too.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))

SCHEME = """title: benchmark: ten species, ten Arrhenius steps (generated)
A -> B   k1 = arrhenius(A = 1e10 1/h, Ea = 60 kJ/mol)
B -> C   k2 = arrhenius(A = 1e12 1/h, Ea = 75 kJ/mol)
B -> D   k3 = arrhenius(A = 1e16 1/h, Ea = 110 kJ/mol)
C -> E   k4 = arrhenius(A = 1e9 1/h, Ea = 62 kJ/mol)
D -> F   k5 = arrhenius(A = 1e11 1/h, Ea = 75 kJ/mol)
E -> G   k6 = arrhenius(A = 1e11 1/h, Ea = 80 kJ/mol)
F -> H   k7 = arrhenius(A = 1e8 1/h, Ea = 65 kJ/mol)
G -> I   k8 = arrhenius(A = 1e12 1/h, Ea = 90 kJ/mol)
H -> J   k9 = arrhenius(A = 1e9 1/h, Ea = 68 kJ/mol)
C -> J   k10 = arrhenius(A = 1e13 1/h, Ea = 100 kJ/mol)
temperature = 50 degC
start A = 1 mol/L
"""
OVER = ["temperature=20:100:degC", "time=0:10:h"]
TARGETS = ("C", "E", "G")


def timed(fn, repeat: int):
    """Best wall and CPU time [s] of ``fn()`` over ``repeat`` calls, and its last result."""
    wall, cpu, out = [], [], None
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        wall.append(time.perf_counter() - w0)
        cpu.append(time.process_time() - c0)
    return min(wall), min(cpu), out


def nelder_mead(model, starts, best: float):
    """Evaluations of Nelder-Mead from each start: to 1e-6, to 1e-9 of ``best``, to its
    own stop; its best value; its time."""
    from scipy.optimize import minimize

    from kinetics.optimise.local import scaled_problem

    reach6 = reach9 = total = 0
    found = -np.inf
    t0 = time.perf_counter()
    for start in starts:
        problem = scaled_problem(model, start)
        values: list[float] = []

        def f(u, problem=problem, values=values):
            v = model.point(problem.x_of(u)).objective
            values.append(v)
            return -v / problem.scale

        minimize(
            f,
            problem.u_of(start.x),
            method="Nelder-Mead",
            bounds=[(0.0, 1.0)] * start.x.size,
            options={"xatol": 1e-12, "fatol": 1e-15, "maxfev": 4000},
        )
        v = np.array(values)
        found = max(found, float(v.max()))
        total += v.size
        for tol, name in ((1e-6, 6), (1e-9, 9)):
            hit = np.flatnonzero(v >= best * (1 - tol))
            count = int(hit[0]) + 1 if hit.size else v.size
            if name == 6:
                reach6 += count
            else:
                reach9 += count
    return reach6, reach9, total, found, time.perf_counter() - t0


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    import kinetics
    from kinetics.optimise import Goal, Model, optimise, parse_over
    from kinetics.optimise.local import refine
    from kinetics.optimise.search import choose_starts, grid_candidates

    scheme = kinetics.parse(SCHEME)
    optimise(scheme, "C", OVER)  # compiles the kernels once
    grid = np.linspace(0.0, 36000.0, 201)
    base_wall, base_cpu, _ = timed(lambda: kinetics.solve(scheme, grid).summary(), args.repeat)
    print(f"load: {os.getloadavg()[0]:.2f} (1 min average), {os.cpu_count()} CPUs")
    print(
        f"baseline: solve + summary on 201 points  {base_wall * 1e3:7.1f} ms wall, "
        f"{base_cpu * 1e3:.1f} ms CPU"
    )
    for target in TARGETS:
        wall, cpu, best = timed(lambda t=target: optimise(scheme, t, OVER), args.repeat)
        c = best.counts
        print(
            f"\noptimise {target}: {wall:.3f} s wall, {cpu:.3f} s CPU "
            f"({wall / base_wall:.1f} x the baseline; goal under 1 s)"
        )
        print(
            f"  optimum: T = {best.best['temperature']:.6f} degC, t = {best.best['time']:.6f} h, "
            f"{target} = {best.objective:.15g} mol/L"
        )
        print(
            f"  evaluations: grid {c['grid']}, local {c['local']} from {c['starts']} starts, "
            f"flat ranges {c['flatness']}"
        )
        model = Model(scheme, [parse_over(scheme, s) for s in OVER], Goal(target))
        starts = choose_starts(model, grid_candidates(model), 3)
        model.evaluations = 0
        t0 = time.perf_counter()
        found: list = []
        for s in starts:
            found.append(refine(model, s, found))
        ours = max(f.objective for f in found)
        ours_time = time.perf_counter() - t0
        ours_count = model.evaluations
        model.evaluations = 0
        r6, r9, total, found, nm_time = nelder_mead(model, starts, ours)
        print(
            f"  local searches from the same {len(starts)} starts: ours {ours_count} "
            f"evaluations ({ours_time * 1e3:.0f} ms), Nelder-Mead {r6} to 1e-6, {r9} to "
            f"1e-9, {total} to its stop ({nm_time * 1e3:.0f} ms)"
        )
        print(
            f"  ratio Nelder-Mead / ours: {r6 / ours_count:.1f} (1e-6), "
            f"{r9 / ours_count:.1f} (1e-9), {total / ours_count:.1f} (stop); "
            f"time {nm_time / ours_time:.1f}; same optimum: "
            f"{abs(found / ours - 1):.1e} relative"
        )


if __name__ == "__main__":
    main()
