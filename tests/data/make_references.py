"""Write the stored high-precision references of the test suite (run from the repository root).

    python tests/data/make_references.py

Writes, next to this script:

* ``stiff_expm_300.json.gz``: 300 random stiff networks (5-14 species, each ordered pair
  linked with probability 0.4, constants 10^U(-8, 8) 1/s, a time 10^U(-6, 3) s), each
  with its exponential exp(tK) from mpmath.expm at 50 significant digits (mpmath: the
  general-purpose arbitrary-precision reference library; Taylor series with scaling and
  squaring).  Used by tests/test_reference_expm.py.
* ``very_stiff_arb_100.json.gz``: 100 random very stiff networks (issue 11's class: 5-14
  species, pairs linked with probability 0.4, constants 10^U(-9, 9) 1/s, a time
  10^U(-6, 4) s) with a random start vector, each with the solution c(t) = exp(tK) c0
  enclosed by python-flint's ball arithmetic (Arb; F. Johansson, IEEE Trans. Comput. 66,
  1281-1292 (2017)) at 400 bits from the exact rate matrix: constants as the doubles
  stored here, diagonal the exact sum of the outflows.  Stored as the ball's midpoint
  (30 digits) and radius.  Used by tests/test_reference_certificate.py.

Every input is stored as the exact double (``float.hex``), so the tests do not depend on
numpy's random streams.
"""

from __future__ import annotations

import gzip
import json
from fractions import Fraction
from pathlib import Path

import flint
import mpmath
import numpy as np

HERE = Path(__file__).resolve().parent


def random_network(rng, low: float, high: float, t_low: float, t_high: float):
    n = int(rng.integers(5, 15))
    links = [
        (i, j, float(10.0 ** rng.uniform(low, high)))
        for i in range(n)
        for j in range(n)
        if i != j and rng.random() < 0.4
    ]
    return n, links, float(10.0 ** rng.uniform(t_low, t_high))


def dense(n: int, links) -> np.ndarray:
    """The double rate matrix as the engine gets it from numpy (column sums rounded)."""
    K = np.zeros((n, n))
    for i, j, k in links:
        K[i, j] = k
    K -= np.diag(K.sum(axis=0))
    return K


def expm_cases() -> list[dict]:
    rng = np.random.default_rng(20260512)
    cases = []
    for _ in range(300):
        n, links, t = random_network(rng, -8, 8, -6, 3)
        K = dense(n, links)
        with mpmath.workdps(50):
            E = mpmath.expm(mpmath.matrix(K.tolist()) * mpmath.mpf(t))
            ref = [[mpmath.nstr(E[i, j], 30) for j in range(n)] for i in range(n)]
        cases.append({"K": [[x.hex() for x in row] for row in K], "t": t.hex(), "exp": ref})
    return cases


def arb(x: Fraction):
    return flint.arb(x.numerator) / x.denominator


def certificate_cases() -> list[dict]:
    flint.ctx.prec = 400
    rng = np.random.default_rng(11011)
    cases = []
    for _ in range(100):
        n, links, t = random_network(rng, -9, 9, -6, 4)
        c0 = [float(x) for x in rng.random(n)]
        diagonal = [Fraction(0)] * n
        for _, j, k in links:
            diagonal[j] -= Fraction(k)
        sigma = max(-d for d in diagonal)
        B = [[flint.arb(0)] * n for _ in range(n)]
        for i, j, k in links:
            B[i][j] = flint.arb(k)
        for j in range(n):
            B[j][j] = arb(sigma + diagonal[j])
        tt = flint.arb(t)
        # e^{tK} = e^{-sigma t} e^{t(K + sigma I)}: a nonnegative matrix inside the balls
        v = (flint.arb_mat(B) * tt).exp() * flint.arb_mat([[flint.arb(x)] for x in c0])
        factor = (-arb(sigma) * tt).exp()
        balls = [v[i, 0] * factor for i in range(n)]
        cases.append(
            {
                "n": n,
                "links": [[i, j, k.hex()] for i, j, k in links],
                "t": t.hex(),
                "c0": [x.hex() for x in c0],
                "mid": [b.mid().str(30, radius=False) for b in balls],
                "rad": [float(b.rad()) for b in balls],
            }
        )
    return cases


def write(name: str, cases: list[dict]) -> None:
    with gzip.open(HERE / name, "wt", encoding="utf-8") as out:
        json.dump(cases, out, separators=(",", ":"))


if __name__ == "__main__":
    write("very_stiff_arb_100.json.gz", certificate_cases())
    write("stiff_expm_300.json.gz", expm_cases())
