"""Shared builders of the test modules, and one warm-up of the compiled kernels per session.

The builders are plain functions; a test module imports them by name
(``from conftest import chain_matrix``), so that they also work at import time (in
``parametrize`` lists and hypothesis strategies).

The warm-up runs once, before the first test of a session: it calls the public entry points
that compile the engine's and the sweep's kernels (numba, ``cache=True``), so that the
compilation (about 25 s on a cold cache, 2 s to load from the disk cache) is billed to the
session set-up and not to whichever test happens to run first.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pytest


def chain_matrix(ks: Sequence[float]) -> np.ndarray:
    """Rate matrix K [1/s] of the chain S0 -> S1 -> ... -> Sn with constants ``ks`` [1/s].

    The last species is stable; column j loses ``ks[j]`` on the diagonal and gives it to
    row j + 1.

    >>> chain_matrix([0.1, 0.2]).tolist()
    [[-0.1, 0.0, 0.0], [0.1, -0.2, 0.0], [0.0, 0.2, 0.0]]
    """
    n = len(ks) + 1
    K = np.zeros((n, n))
    for j, k in enumerate(ks):
        K[j, j] -= k
        K[j + 1, j] += k
    return K


def bateman_chain(ks: Sequence[float], c0: float, t) -> np.ndarray:
    r"""Members 1..n of the chain ``chain_matrix(ks)`` started with ``c0`` in S0 only.

    Bateman, Proc. Cambridge Philos. Soc. 15, 423 (1910), for distinct constants:

    .. math:: c_n(t) = c_0 \prod_{i<n} k_i \sum_{i \le n}
              \frac{e^{-k_i t}}{\prod_{j \ne i} (k_j - k_i)}

    summed over the n decaying members (the stable end member is not returned).

    Parameters
    ----------
    ks : sequence of float
        Distinct rate constants [1/s].
    c0 : float
        Start value of S0 [any concentration unit].
    t : float or numpy.ndarray
        Times [s].

    Returns
    -------
    numpy.ndarray
        Shape ``(len(ks), *np.shape(t))``: S0 .. S(n-1) at ``t``.
    """
    out = []
    for n in range(1, len(ks) + 1):
        kk = ks[:n]
        total = 0.0
        for i in range(n):
            den = math.prod(kk[j] - kk[i] for j in range(n) if j != i)
            total = total + np.exp(-kk[i] * np.asarray(t)) / den
        out.append(c0 * math.prod(kk[:-1]) * total)
    return np.array(out)


def run_cli(capsys, *argv) -> tuple[int, str, str]:
    """Run ``kinetics ARGV`` in-process; the exit status and what it printed (out, err)."""
    from kinetics.cli import main

    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return status, out, err


@pytest.fixture
def in_tmp(tmp_path, monkeypatch):
    """An empty working directory for a test (``tmp_path``, made the current directory)."""
    monkeypatch.chdir(tmp_path)
    return tmp_path


def warm_up_kernels() -> None:
    """Compile (or load from the disk cache) every kernel signature the suite uses.

    Through public entry points only: the dense engine with writable and read-only rate
    matrices (solve, a timeline), its summaries, the batched sweep summaries with curves,
    and the block route of a large scheme with a cycle on an uneven grid.
    """
    import kinetics
    from kinetics.timeline import Addition, At, Timeline
    from kinetics.timeline_solve import solve_timeline

    small = kinetics.parse(
        "A -> B  k1 = 0.1 1/s\nB <=> C  k2 = 0.05 1/s, k3 = 0.01 1/s\nstart A = 1 mol/L\n"
    )
    kinetics.solve(small, np.linspace(0.0, 100.0, 11)).summary()
    kinetics.sweep(small, ["k1=0.05,0.1"], [0.0, 50.0, 100.0], curves=True)
    # 5 s lies inside a stretch: the exponential's action on its start (action_kernels)
    solve_timeline(small, Timeline([At(10.0, Addition({"A": 0.5}))]), [0.0, 5.0, 20.0])
    lines = [f"S{i} -> S{i + 1}  k{i} = {1 + 0.01 * i} 1/s" for i in range(230)]
    lines.append("S5 <=> R  kf = 2 1/s, kr = 1 1/s\nstart S0 = 1 mol/L")
    kinetics.solve(kinetics.parse("\n".join(lines)), [0.0, 0.3, 1.0, 10.0])


@pytest.fixture(scope="session", autouse=True)
def compiled_kernels() -> None:
    """One warm-up of the compiled kernels for the whole session (see the module doc)."""
    warm_up_kernels()
