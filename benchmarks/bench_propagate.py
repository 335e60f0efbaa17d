"""Speed and accuracy of the propagation engine, as ratios measured in one run.

Usage::

    python benchmarks/bench_propagate.py            # speed (a few minutes)
    python benchmarks/bench_propagate.py --accuracy 300   # + random stiff networks
    python benchmarks/bench_propagate.py --full-reference # + all 2,000 species of the
                                                          # decay network (minutes more)

Baselines (measured in the same run): scipy's solve_ivp (LSODA, rtol 1e-10,
analytic Jacobian), scipy.sparse.linalg.expm_multiply on the same grid, one
dense scipy.linalg.expm, dense scipy.linalg.expm with stepping (decay network)
and the dense double-double engine (strongly connected scheme).  Reference
values: mpmath at 50 digits, Bateman's closed form in mpmath, and the dense
double-double engine (itself checked against mpmath in tests/test_reference_expm.py).
"""

from __future__ import annotations

import argparse
import os
import time
import tracemalloc

import mpmath
import numpy as np
import scipy.linalg
import scipy.sparse
import scipy.sparse.linalg
from scipy.integrate import solve_ivp

from kinetics.engine.blocks import route_costs
from kinetics.propagate import (
    expm_nonnegative_certified,
    propagate,
    propagate_batch,
    propagate_certified,
)


def best_of(fn, repeat=5):
    times = []
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def branched_10():
    """An invented 10-species branched scheme with a reversible end pair."""
    K = np.zeros((10, 10))
    steps = [(0, 1, 0.5), (0, 2, 0.2), (1, 3, 0.1), (2, 3, 0.05), (3, 4, 0.02), (3, 5, 0.03),
             (4, 6, 0.01), (5, 6, 0.2), (6, 7, 0.005), (7, 8, 0.5), (8, 9, 0.001),
             (9, 8, 0.0005)]  # fmt: skip
    for src, dst, k in steps:
        K[dst, src] += k
        K[src, src] -= k
    return K


def mp_grid(K, c0, t):
    """Reference on a uniform grid: mpmath exp(K dt) at 50 digits, applied repeatedly."""
    with mpmath.workdps(50):
        dt = mpmath.mpf(t[1]) - mpmath.mpf(t[0])
        F = mpmath.expm(mpmath.matrix(K.tolist()) * dt)
        v = mpmath.matrix(c0.tolist())
        out = [v]
        for _ in range(len(t) - 1):
            v = F * v
            out.append(v)
        return out


def worst_rel(C, ref, floor=1e-300):
    worst = 0.0
    with mpmath.workdps(50):
        for k, v in enumerate(ref):
            for i in range(C.shape[1]):
                if v[i] > floor:
                    worst = max(worst, float(abs(mpmath.mpf(float(C[k, i])) - v[i]) / v[i]))
    return worst


def bench_small():
    print("== 10-species branched scheme, 201 points to 1000 s ==")
    K = branched_10()
    c0 = np.zeros(10)
    c0[0] = 1.0
    t = np.linspace(0.0, 1000.0, 201)

    def lsoda():
        s = solve_ivp(lambda _t, y: K @ y, (0, 1000), c0, method="LSODA", t_eval=t,
                      rtol=1e-10, atol=1e-20, jac=lambda _t, _y: K)  # fmt: skip
        return s.y.T

    # minimum of repeated runs for both (the usual estimate of a call's own cost, as timeit
    # recommends); more repeats for the cheaper call, so that both reach their minimum
    t_ls, y_ls = best_of(lsoda, repeat=10)
    ref = mp_grid(K, c0, t)
    print("worst relative error vs mpmath over entries > 1e-300 | over entries > 1e-10")
    print(f"LSODA rtol 1e-10: {t_ls * 1e3:8.2f} ms   {worst_rel(y_ls, ref):.2e} | "
          f"{worst_rel(y_ls, ref, 1e-10):.2e}")  # fmt: skip
    for prec in ("double", "double-double"):
        t_p, c = best_of(lambda prec=prec: propagate(K, c0, t, precision=prec), repeat=200)
        print(f"propagate {prec:13s}: {t_p * 1e3:6.2f} ms   {worst_rel(c, ref):.2e} | "
              f"{worst_rel(c, ref, 1e-10):.2e}   LSODA/propagate = {t_ls / t_p:6.1f}x")  # fmt: skip


BRANCHED_TEXT = """title: invented 10-species branched scheme (benchmark only)
A -> B  k1 = 0.5 1/s
A -> C  k2 = 0.2 1/s
B -> D  k3 = 0.1 1/s
C -> D  k4 = 0.05 1/s
D -> E  k5 = 0.02 1/s
D -> F  k6 = 0.03 1/s
E -> G  k7 = 0.01 1/s
F -> G  k8 = 0.2 1/s
G -> H  k9 = 0.005 1/s
H -> I  k10 = 0.5 1/s
I <=> J kf = 0.001 1/s, kr = 0.0005 1/s
start A = 1 mol/L
"""


def bench_api():
    """Public API against the engine call, and both against LSODA on a long and a short window."""
    import kinetics
    from kinetics.propagate import propagate_certified

    print("\n== public API: kinetics.solve vs the engine call, 10 species, 201 points ==")
    scheme = kinetics.parse(BRANCHED_TEXT)
    Kh, Kl = scheme.rate_matrix_pair()
    K = Kh + Kl
    c0 = scheme.initial_vector
    for until in (1000.0, 10.0):
        t = np.linspace(0.0, until, 201)

        def lsoda(t=t, until=until):
            return solve_ivp(lambda _t, y: K @ y, (0, until), c0, method="LSODA", t_eval=t,
                             rtol=1e-10, atol=1e-20, jac=lambda _t, _y: K).y.T  # fmt: skip

        t_ls, _ = best_of(lsoda, repeat=10)
        t_e, _ = best_of(lambda t=t: propagate_certified(Kh, c0, t, K_low=Kl), repeat=300)
        t_a, _ = best_of(lambda t=t: kinetics.solve(scheme, t), repeat=300)
        # a matrix not seen before on every call (constants moved in the last bits): the
        # engine plans and computes its exponential again (nothing remembered to reuse)
        fresh = iter([Kh * (1.0 + 2.0**-50 * i) for i in range(1, 301)])
        t_n, _ = best_of(lambda t=t, f=fresh: propagate_certified(next(f), c0, t, K_low=Kl), 300)
        print(f"window {until:6.0f} s: LSODA {t_ls * 1e3:6.2f} ms | engine {t_e * 1e3:6.3f} ms"
              f" | solve {t_a * 1e3:6.3f} ms | solve/engine {t_a / t_e:4.2f}"
              f" | LSODA/solve {t_ls / t_a:6.1f}x | engine, new matrix {t_n * 1e3:6.3f} ms"
              f" (LSODA/that {t_ls / t_n:5.1f}x)")  # fmt: skip


def random_ten_species_text(rng, reverse: bool) -> str:
    """An invented 10-species scheme: each species to 1-3 of the next three, k = 10^U(-3, 1)."""
    names = "ABCDEFGHIJ"
    lines = []
    for i in range(10):
        for j in range(i + 1, min(10, i + 4)):
            if j == i + 1 or rng.random() < 0.5:
                lines.append(
                    f"{names[i]} -> {names[j]}  k{i}{j} = {10 ** rng.uniform(-3, 1):.4g} 1/s"
                )
    if reverse:
        lines.append(f"J -> E  kback = {10 ** rng.uniform(-3, 0):.4g} 1/s")
    return "\n".join([*lines, "start A = 1 mol/L"])


def bench_api_random(cases=6):
    """kinetics.solve against LSODA on random 10-species schemes (not only the one above)."""
    import kinetics

    print("\n== public API on random 10-species schemes (constants over 4 decades), 201 points ==")
    rng = np.random.default_rng(7)
    ratios = {10.0: [], 100.0: []}
    first = []
    for case in range(cases):
        text = random_ten_species_text(rng, reverse=bool(case % 2))
        scheme = kinetics.parse(text)
        K, c0 = scheme.rate_matrix(), scheme.initial_vector
        for until in ratios:
            t = np.linspace(0.0, until, 201)

            def lsoda(t=t, until=until, K=K, c0=c0):
                return solve_ivp(lambda _t, y: K @ y, (0, until), c0, method="LSODA", t_eval=t,
                                 rtol=1e-10, atol=1e-20, jac=lambda _t, _y: K).y.T  # fmt: skip

            t_ls, _ = best_of(lsoda, repeat=10)
            t_a, _ = best_of(lambda t=t, s=scheme: kinetics.solve(s, t), repeat=300)
            ratios[until].append(t_ls / t_a)
            if until == 10.0:
                # a scheme not solved before on every call (nothing remembered): parsed anew
                fresh = iter([kinetics.parse(text) for _ in range(100)])
                t_f, _ = best_of(lambda t=t, f=fresh: kinetics.solve(next(f), t), repeat=100)
                first.append(t_ls / t_f)
    for until, r in ratios.items():
        print(f"window {until:5.0f} s: LSODA/solve {min(r):6.1f}x to {max(r):6.1f}x "
              f"(median {np.median(r):6.1f}x) over {cases} schemes")  # fmt: skip
    print(f"window    10 s, each scheme solved for the first time: LSODA/solve {min(first):5.1f}x "
          f"to {max(first):5.1f}x (median {np.median(first):5.1f}x)")  # fmt: skip


def chain_matrix(n):
    k = np.logspace(-4, 2, n)
    rows = np.r_[np.arange(n), np.arange(1, n)]
    cols = np.r_[np.arange(n), np.arange(n - 1)]
    return scipy.sparse.csr_array((np.r_[-k, k[:-1]], (rows, cols)), shape=(n, n)), k


def bateman_mp(k, t, upto, dps=400):
    """Bateman 1910 for the first members of the chain, in mpmath (the close constants
    make the sum cancel by hundreds of digits)."""
    with mpmath.workdps(dps):
        ks = [mpmath.mpf(float(x)) for x in k[:upto]]
        T = mpmath.mpf(float(t))
        out = []
        for n in range(1, upto + 1):
            s = mpmath.mpf(0)
            for i in range(n):
                den = mpmath.mpf(1)
                for j in range(n):
                    if j != i:
                        den *= ks[j] - ks[i]
                s += mpmath.exp(-ks[i] * T) / den
            prod = mpmath.mpf(1)
            for x in ks[: n - 1]:
                prod *= x
            out.append(prod * s)
        return out


def bench_chain():
    print("\n== 2000-species chain, k log-spaced 1e-4..1e2 1/s, 101 points to 1000 s ==")
    n = 2000
    K, k = chain_matrix(n)
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0.0, 1000.0, 101)
    t_p, c = best_of(lambda: propagate(K, c0, t), repeat=3)
    bound = propagate_certified(K, c0, t).error_bound
    tracemalloc.start()
    propagate(K, c0, t)
    peak = tracemalloc.get_traced_memory()[1] / 1e6
    tracemalloc.stop()
    t0 = time.perf_counter()
    em = scipy.sparse.linalg.expm_multiply(K.tocsc(), c0, start=0.0, stop=1000.0, num=101,
                                           endpoint=True)  # fmt: skip
    t_em = time.perf_counter() - t0
    Kd = K.toarray()
    t0 = time.perf_counter()
    scipy.linalg.expm(Kd * 10.0)
    t_ex = time.perf_counter() - t0
    print(f"propagate:        {t_p:7.3f} s  negatives {int((c < 0).sum())}  peak {peak:.0f} MB"
          f"  certified bound {bound.max():.1e}")  # fmt: skip
    print(f"expm_multiply:    {t_em:7.3f} s  negatives {int((em < 0).sum())}  "
          f"ratio {t_em / t_p:5.1f}x")  # fmt: skip
    print(f"one dense expm:   {t_ex:7.3f} s  ratio {t_ex / t_p:5.1f}x")
    worst = 0.0
    for j in (1, 10, 100):
        upto = int(np.flatnonzero(c[j] > 1e-300).max()) + 3  # every member above 1e-300
        ref = bateman_mp(k, t[j], upto, dps=700)
        with mpmath.workdps(50):
            for i in range(upto):
                if ref[i] > 1e-300:
                    worst = max(worst, float(abs(mpmath.mpf(float(c[j, i])) - ref[i]) / ref[i]))
    print(f"every member above 1e-300 at t = 10, 100, 1000 s vs Bateman (mpmath, 700 digits): "
          f"worst rel. error {worst:.2e}")  # fmt: skip
    mass = np.abs(c.sum(axis=1) + 0.0)
    print(f"total at 1000 s (leaky end): {mass[-1]:.16f}")


def decay_network(n=2000, reach=50, seed=3):
    """An invented decay network: each species decays to 1-3 of the next ``reach`` species,
    constants 10^U(-4, 2) 1/s (species in topological order)."""
    rng = np.random.default_rng(seed)
    rows, cols, vals = [], [], []
    for j in range(n - 1):
        ahead = np.arange(j + 1, min(n, j + reach + 1))
        for i in rng.choice(ahead, size=min(int(rng.integers(1, 4)), ahead.size), replace=False):
            rows.append(i)
            cols.append(j)
            vals.append(10.0 ** rng.uniform(-4, 2))
    K = scipy.sparse.csr_array((vals, (rows, cols)), shape=(n, n))
    out = np.asarray(K.sum(axis=0)).ravel()
    return scipy.sparse.csr_array(K - scipy.sparse.diags_array(out))


def bench_decay(full_reference):
    print("\n== 2000-species decay network (each to 1-3 of the next 50, k = 10^U(-4, 2) 1/s), "
          "101 points to 1000 s ==")  # fmt: skip
    n = 2000
    K = decay_network(n)
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0.0, 1000.0, 101)
    propagate(K, c0, t[:3])
    t_p, c = best_of(lambda: propagate(K, c0, t), repeat=3)
    bound = propagate_certified(K, c0, t).error_bound
    Kd = K.toarray()

    def expm_stepping():
        F = scipy.linalg.expm(Kd * 10.0)
        out = [c0]
        for _ in range(100):
            out.append(F @ out[-1])
        return np.array(out)

    t_s, s = best_of(expm_stepping, repeat=1)
    # species 0..m-1 form a closed sub-scheme (nothing flows upstream): the dense
    # double-double engine on that sub-matrix is an exact reference for them
    m = n if full_reference else 400
    ref = propagate_batch(Kd[None, :m, :m], c0[:m], t, precision="double-double")[0]
    big = ref > 1e-300

    def worst(x):
        return float((np.abs(x[:, :m][big] - ref[big]) / ref[big]).max())

    print(f"propagate:               {t_p:7.3f} s  worst rel. error {worst(c):.1e} "
          f"(first {m} species, entries > 1e-300)  negatives {int((c < 0).sum())}  "
          f"certified bound {bound.max():.1e}")  # fmt: skip
    print(f"scipy expm + stepping:   {t_s:7.3f} s  worst rel. error {worst(s):.1e}  "
          f"negatives {int((s < 0).sum())}  ratio {t_s / t_p:5.1f}x")  # fmt: skip


def strongly_connected(n, rng):
    """An invented strongly connected scheme: a ring plus about two random steps each."""
    K = np.zeros((n, n))
    K[(np.arange(n) + 1) % n, np.arange(n)] = 10.0 ** rng.uniform(-3, 1, n)
    mask = (rng.random((n, n)) < 2.0 / n) & ~np.eye(n, dtype=bool)
    K[mask] += 10.0 ** rng.uniform(-3, 1, mask.sum())
    K -= np.diag(K.sum(axis=0))
    return K


def bench_scc():
    print("\n== 400-species strongly connected scheme, 101 points to 100 s: dense double-double "
          "engine vs block route ==")  # fmt: skip
    from kinetics.engine.blocks import propagate_blocks

    rng = np.random.default_rng(3)
    n = 400
    K = strongly_connected(n, rng)
    Ks = scipy.sparse.csr_array(K)
    c0 = np.zeros(n)
    c0[0] = 1.0
    t = np.linspace(0.0, 100.0, 101)
    propagate_batch(K[None], c0, t[:3], precision="double-double")
    t_d, ref = best_of(lambda: propagate_batch(K[None], c0, t, precision="double-double")[0], 2)
    t_b, (c, bound) = best_of(lambda: propagate_blocks(Ks, c0, t, None), 2)
    t_a, _ = best_of(lambda: propagate(Ks, c0, t), 2)
    big = ref > 1e-300
    err = float((np.abs(c[big] - ref[big]) / ref[big]).max())
    cost = route_costs(Ks, t)
    route = "blocks" if cost["blocks"] < cost["dense"] else "dense"
    print(f"dense double-double: {t_d:7.3f} s | block route: {t_b:7.3f} s (dense/blocks = "
          f"{t_d / t_b:4.1f}x, blocks vs dense {err:.1e}, bound {bound.max():.1e})")  # fmt: skip
    print(f"cost model: dense {cost['dense']:.3f} s, blocks {cost['blocks']:.3f} s -> {route}; "
          f"propagate() took {t_a:7.3f} s")  # fmt: skip


def random_sparse_scheme(n, p, rng):
    """An invented random scheme: each ordered pair linked with probability p."""
    K = np.zeros((n, n))
    mask = (rng.random((n, n)) < p) & ~np.eye(n, dtype=bool)
    K[mask] = 10.0 ** rng.uniform(-3, 1, mask.sum())
    K -= np.diag(K.sum(axis=0))
    return K


def bench_mid():
    print("\n== random sparse schemes of 100 and 200 species, 201 points to 100 s ==")
    rng = np.random.default_rng(0)
    for n, p in ((100, 0.05), (200, 0.03)):
        K = random_sparse_scheme(n, p, rng)
        c0 = np.zeros(n)
        c0[0] = 1.0
        t = np.linspace(0.0, 100.0, 201)

        def lsoda(K=K, c0=c0, t=t):
            return solve_ivp(lambda _t, y: K @ y, (0, 100), c0, method="LSODA", t_eval=t,
                             rtol=1e-10, atol=1e-20, jac=lambda _t, _y: K).y.T  # fmt: skip

        t_ls, _ = best_of(lsoda, repeat=3)
        line = f"n = {n}: LSODA {t_ls * 1e3:7.1f} ms"
        for prec in ("double", "double-double"):
            t_p, _ = best_of(
                lambda K=K, c0=c0, t=t, prec=prec: propagate(K, c0, t, precision=prec), repeat=5
            )
            line += f" | {prec} {t_p * 1e3:6.1f} ms ({t_ls / t_p:5.1f}x)"
        # the certified default (precision="auto") takes one of the two routes timed here
        print(line + f" | default takes {propagate_certified(K, c0, t).precision}")


def bench_batch():
    print("\n== batch: 10,000 parameter sets of the 10-species scheme, 201 points ==")
    rng = np.random.default_rng(5)
    base = branched_10()
    off = base.copy()
    np.fill_diagonal(off, 0.0)
    b = 10000
    Ks = off[None] * 10.0 ** rng.uniform(-0.5, 0.5, (b, 10, 10))
    for i in range(b):
        Ks[i] -= np.diag(Ks[i].sum(axis=0))
    c0 = np.zeros(10)
    c0[0] = 1.0
    t = np.linspace(0.0, 1000.0, 201)
    for prec in ("double", "double-double"):
        nb = b if prec == "double" else 1000
        t0 = time.perf_counter()
        X = propagate_batch(Ks[:nb], c0, t, precision=prec)
        dt = time.perf_counter() - t0
        one = propagate(Ks[0], c0, t, precision=prec)
        same = np.array_equal(X[0], one)
        print(f"{prec:13s}: {nb} sets in {dt:6.2f} s ({dt / nb * 1e3:.2f} ms per set), "
              f"member 0 bit-identical to propagate(): {same}")  # fmt: skip


def random_stiff_network(rng):
    n = int(rng.integers(5, 15))
    K = np.zeros((n, n))
    for i in range(n):
        for j in range(n):
            if i != j and rng.random() < 0.4:
                K[i, j] = 10.0 ** rng.uniform(-8, 8)
    K -= np.diag(K.sum(axis=0))
    return K, 10.0 ** rng.uniform(-6, 3)


def accuracy(cases):
    print(f"\n== {cases} random stiff networks vs mpmath.expm (50 digits) ==")
    rng = np.random.default_rng(1)
    ours, theirs, neg = [], [], 0
    for _ in range(cases):
        K, t = random_stiff_network(rng)
        F, _ = expm_nonnegative_certified(K, t)
        S = scipy.linalg.expm(K * t)
        neg += int((S < 0).any())
        with mpmath.workdps(50):
            E = mpmath.expm(mpmath.matrix(K.tolist()) * mpmath.mpf(t))
            wo = ws = 0.0
            for i in range(K.shape[0]):
                for j in range(K.shape[0]):
                    e = E[i, j]
                    if e > 1e-300:
                        wo = max(wo, float(abs(mpmath.mpf(float(F[i, j])) - e) / e))
                        ws = max(ws, float(abs(mpmath.mpf(float(S[i, j])) - e) / e))
        ours.append(wo)
        theirs.append(ws)
        assert F.min() >= 0
    for name, e in (("propagate engine", ours), ("scipy.linalg.expm", theirs)):
        e = np.array(e)
        print(f"{name:18s}: median {np.median(e):.1e}  90% {np.quantile(e, 0.9):.1e}  "
              f"worst {e.max():.1e}")  # fmt: skip
    print(f"scipy.linalg.expm returned negative entries in {neg} of {cases} cases; engine: 0")


def main():
    from threadpoolctl import threadpool_limits

    # one BLAS thread for every timing, baselines included: on two cores threaded BLAS
    # on these sizes is several times slower, and it would flatter the ratios
    threadpool_limits(limits=1, user_api="blas")
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--accuracy", type=int, default=0, help="number of random networks")
    ap.add_argument("--skip-chain", action="store_true")
    ap.add_argument("--full-reference", action="store_true",
                    help="decay network: reference for all 2,000 species (minutes)")  # fmt: skip
    args = ap.parse_args()
    print(f"load average (1, 5, 15 min): {os.getloadavg()}")
    bench_small()
    bench_api()
    bench_api_random()
    if not args.skip_chain:
        bench_chain()
        bench_decay(args.full_reference)
        bench_scc()
    bench_mid()
    bench_batch()
    if args.accuracy:
        accuracy(args.accuracy)


if __name__ == "__main__":
    main()
