"""Speed and accuracy of the timeline solver, as ratios measured in one run.

Usage::

    python benchmarks/bench_timeline.py             # about a minute

Also timed: the same run through ``kinetics.solve`` with the operations written in the
scheme's text (the route of the commands, parsing included).

Case (invented): a 10-species scheme with a fast reversible pre-equilibrium and slow
degradation branches (rate constants from 2e-2 to 1e-7 1/s), 1,000 hourly additions of
its parent over six weeks, a grid of 2,000 output times.  A second, non-stiff chain
(constants within one decade) is measured as well and reported beside it.

Baseline (same run): scipy's solve_ivp restarted at each operation (LSODA, rtol 1e-10,
atol 1e-20, analytic Jacobian).  Reference for the accuracy: mpmath matrix exponentials
at 40 digits applied stretch by stretch (the one-hour propagator once, each sampled
grid offset separately), on every 10th output time.
"""

from __future__ import annotations

import itertools
import os
import time

import mpmath
import numpy as np
from scipy.integrate import solve_ivp

import kinetics
from kinetics.timeline import Addition, Every, Timeline
from kinetics.timeline_solve import solve_timeline

HOUR = 3600.0
WINDOW = 6 * 7 * 24 * HOUR
OPERATIONS = 1000
DOSE = 0.1

STIFF = """title: invented stiff 10-species degradation network
A <=> B     kf = 2e-2 1/s, kr = 5e-3 1/s
B -> C      k1 = 1e-4 1/s
C -> D      k2 = 1e-5 1/s
B -> E      k3 = 2e-5 1/s
E -> F      k4 = 1e-6 1/s
D -> G      k5 = 3e-6 1/s
F -> H      k6 = 1e-7 1/s
G -> I      k7 = 5e-7 1/s
C -> J      k8 = 2e-6 1/s
I <=> J     k9 = 1e-3 1/s, k10 = 1e-3 1/s
start A = 1 mol/L
"""

MILD = "\n".join(
    [f"S{i} -> S{i + 1}  k{i} = {0.1 * (i + 1):.1f} 1/h" for i in range(9)] + ["start S0 = 1 mol/L"]
)


def timeline() -> Timeline:
    return Timeline([Every(HOUR, Addition({"A": DOSE}), until=OPERATIONS * HOUR)])


def best_of(fn, repeat=3):
    """Shortest of ``repeat`` runs [s] (the machine is shared) and the last result."""
    times, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def ours(scheme, grid, parent):
    line = Timeline([Every(HOUR, Addition({parent: DOSE}), until=OPERATIONS * HOUR)])
    return solve_timeline(scheme, line, grid)


def public(scheme, grid, parent):
    """The route of the commands: the operations written in the scheme's text, solved by
    kinetics.solve (which builds the Solution with its events and stretches)."""
    text = f"{scheme.text}\nevery 1 h until {OPERATIONS} h: add {parent} = {DOSE} mol/L\n"
    return kinetics.solve(kinetics.parse(text), grid)


def lsoda_loop(K, c0, grid, index):
    """solve_ivp restarted at each addition; rows as ours (a jump time twice)."""
    ops = np.arange(1, OPERATIONS + 1) * HOUR
    edges = np.concatenate([[0.0], ops[ops <= grid[-1]], [grid[-1]]])
    x = c0.copy()
    rows = [c0.copy()]  # time 0
    for a, b in itertools.pairwise(edges):
        inside = grid[(grid > a) & (grid < b)] if b > a else grid[:0]
        t_eval = np.concatenate([inside, [b]]) if b > a else [b]
        if b > a:
            r = solve_ivp(
                lambda t, y: K @ y,
                (a, b),
                x,
                method="LSODA",
                t_eval=t_eval,
                rtol=1e-10,
                atol=1e-20,
                jac=lambda t, y: K,
            )
            y = r.y.T
        else:
            y = x[None]
        rows.extend(y[:-1] if b not in grid else y)
        x = y[-1].copy()
        if b in ops:
            x[index] += DOSE
            if b in grid:
                rows.append(x.copy())
    return np.array(rows)


def reference(K, c0, grid, index, every=10):
    """mpmath at 40 digits on every ``every``-th output time (rows before operations)."""
    with mpmath.workdps(40):
        Km = mpmath.matrix(K.tolist())
        F = mpmath.expm(Km * mpmath.mpf(HOUR))
        starts = [mpmath.matrix(c0.tolist())]
        for _ in range(OPERATIONS):
            v = F * starts[-1]
            v[index] += mpmath.mpf(DOSE)
            starts.append(v)
        out = {}
        for t in grid[::every].tolist():
            j = min(int(t // HOUR), OPERATIONS)
            if t == j * HOUR and j > 0:  # just before the addition at t
                j -= 1
            h = mpmath.mpf(t) - mpmath.mpf(j * HOUR)
            out[t] = np.array([float(x) for x in mpmath.expm(Km * h) * starts[j]])
        return out


def accuracy(times, conc, after, ref):
    worst = 0.0
    for t, exact in ref.items():
        rows = np.flatnonzero((times == t) & ~after)
        got = conc[rows[0]]
        mask = exact > 1e-290
        worst = max(worst, float(np.max(np.abs(got[mask] - exact[mask]) / exact[mask])))
    return worst


def run(name, text, parent):
    scheme = kinetics.parse(text)
    K = scheme.rate_matrix()
    c0 = scheme.initial_vector
    index = scheme.index[parent]
    grid = np.linspace(0.0, WINDOW, 2000)
    ours(scheme, grid[:50], parent)  # compile and warm up
    t_ours, sol = best_of(lambda: ours(scheme, grid, parent))
    t_public, via = best_of(lambda: public(scheme, grid, parent))
    t_base, base = best_of(lambda: lsoda_loop(K, c0, grid, index))
    ref = reference(K, c0, grid, index)
    acc_ours = accuracy(sol.times, sol.concentrations, sol.after, ref)
    acc_base = accuracy(sol.times, base, sol.after, ref)
    print(f"{name}: {OPERATIONS} additions, {grid.size} output times, {sol.times.size} rows")
    print(
        f"  timeline solver   {t_ours * 1e3:8.1f} ms   worst relative error {acc_ours:.1e}"
        f"   (certified bound at the end {sol.error_bound[-1]:.1e})"
    )
    acc_public = accuracy(via.times, via.concentrations, via.after, ref)
    print(
        f"  kinetics.solve    {t_public * 1e3:8.1f} ms   worst relative error {acc_public:.1e}"
        "   (parsing the operations included)"
    )
    print(f"  LSODA restarted   {t_base * 1e3:8.1f} ms   worst relative error {acc_base:.1e}")
    print(
        f"  speed ratio       {t_base / t_ours:8.1f} x  (kinetics.solve {t_base / t_public:.1f} x)"
    )
    return t_base / t_ours


def main():
    print(f"load average before: {os.getloadavg()[0]:.2f} (2 cores)")
    run("stiff 10-species network", STIFF, "A")
    run("mild 10-species chain", MILD, "S0")
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
