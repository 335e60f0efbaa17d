r"""The exact long-time limit :math:`c(\infty)` from the class structure of K.

Classes (strongly connected components of the species graph) are treated in
topological order: a transient class passes what it receives downstream, a closed class
keeps it as its stationary vector, a fed transient class reaches a steady state, and a
class reached by a feed without outlet, or one that makes more than it uses, grows
without bound (see the module Definitions of :mod:`kinetics.analysis`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from kinetics.analysis.problem import Problem
from kinetics.analysis.results import Limit
from kinetics.analysis.structure import CRITICAL, GROWING, Class
from kinetics.analysis.tolerances import CONST, DECAY, EXPONENTIAL, NEVER

__all__ = ["LimitParts", "limit_parts", "long_time_limit"]


@dataclass(frozen=True)
class LimitParts:
    """The limit and what the other quantities need of it.

    Attributes
    ----------
    limit : Limit
    areas : ndarray
        Area to infinity of each species [conc*s] (inf where infinite).
    notes_of : dict of int to tuple of str
        The note on growth without bound of each unbounded species.
    """

    limit: Limit
    areas: np.ndarray
    notes_of: dict[int, tuple[str, ...]]


@dataclass(frozen=True)
class _Degrees:
    """Growth degrees, limits, areas to infinity and growth rates of a problem.

    Per class the growth degree q; per species the limit L, the area to infinity X and the
    growth rate (slope [conc/s] or exponent [1/s], nan when bounded).
    """

    q: np.ndarray
    L: np.ndarray
    X: np.ndarray
    rate: np.ndarray


def _degree(kind: str, forcing: int) -> int:
    """Growth degree of a class of this kind, forced by upstream classes of degree ``forcing``.

    t^q: a critical class integrates what flows in, one power higher.
    """
    if kind == GROWING or forcing >= EXPONENTIAL:
        return EXPONENTIAL
    if kind == CRITICAL:
        return forcing + 1 if forcing >= CONST else CONST
    return forcing if forcing >= CONST else DECAY


def _degrees(p: Problem) -> _Degrees:
    st = p.struct
    has_c0 = st.species_to_classes(p.c0 > 0)
    has_f = st.species_to_classes(p.f > 0)
    q = np.full(st.ncomp, NEVER)
    L, X = np.zeros(p.n), np.zeros(p.n)
    rate = np.full(p.n, np.nan)
    gexp = np.full(st.ncomp, np.nan)
    for c in st.order:
        cl = st.classes[c]
        idx = cl.members
        forcing = max((q[pr] for pr in st.preds[c]), default=NEVER)
        if has_f[c]:
            forcing = max(forcing, CONST)
        if not (has_c0[c] or has_f[c] or forcing > NEVER):
            continue
        q[c] = _degree(cl.kind, forcing)
        if q[c] == DECAY:
            # transient: X_C = (-K_CC)^{-1} (c0_C + inflow of upstream areas)
            X[idx] = p.solve_block(cl, p.c0[idx] + p.inflow(cl, X))
            continue
        if q[c] == CONST and cl.kind == CRITICAL:
            # closed class: keeps what it starts with plus all that flows in
            L[idx] = _along_null_vector(cl, p.c0[idx] + p.inflow(cl, X))
        elif q[c] == CONST:
            L[idx] = p.solve_block(cl, p.f[idx] + p.inflow(cl, L))
        else:
            L[idx] = np.inf
            _growth_rate(p, c, q, L, rate, gexp)
        X[idx] = np.inf  # after its own inflow is taken: the class keeps material
    return _Degrees(q, L, X, rate)


def _along_null_vector(cl: Class, x: np.ndarray) -> np.ndarray:
    r"""What a critical class holds of the amount (or rate) ``x`` it gets, in the long run.

    :math:`v \, (u \cdot x) / (u \cdot v)` with the left and right null vectors ``u``
    and ``v`` of its block: the class keeps :math:`u \cdot x`, spread as ``v``.
    """
    # a critical class has both null vectors
    assert cl.u is not None
    assert cl.v is not None
    return cl.v * (cl.u @ x) / (cl.u @ cl.v)


def _growth_rate(p: Problem, c: int, q, L, rate, gexp) -> None:
    """Slope of a linearly growing class or exponent of an exponentially growing one.

    In place in ``rate`` and ``gexp``.
    """
    st = p.struct
    cl = st.classes[c]
    idx = cl.members
    if q[c] == 1 and cl.kind == CRITICAL:
        Lfin = np.where(np.isfinite(L), L, 0.0)
        rate[idx] = _along_null_vector(cl, p.f[idx] + p.inflow(cl, Lfin))
    elif q[c] == 1:
        r = np.where(np.isfinite(rate), rate, 0.0)
        rate[idx] = p.solve_block(cl, p.inflow(cl, r))
    elif q[c] >= EXPONENTIAL:
        # growth exponent: the largest Perron root of a growing class upstream
        ups = [gexp[pr] for pr in st.preds[c] if q[pr] >= EXPONENTIAL]
        own = [cl.perron] if cl.kind == GROWING else []
        gexp[c] = max(ups + own)
        rate[idx] = gexp[c]


def _kind(p: Problem, c: int, qc: int) -> str:
    cl = p.struct.classes[c]
    if qc == NEVER:
        return "not formed"
    if qc == DECAY:
        return "transient"
    if qc == CONST and cl.kind == CRITICAL:
        if cl.members.size > 1:
            return "equilibrium"
        return "end product" if p.struct.preds[c] else "inert"
    return "steady state" if qc == CONST else "unbounded"


def _growth(qc: int) -> str | None:
    if qc >= EXPONENTIAL:
        return "exponential"
    if qc == 1:
        return "linear"
    return "polynomial" if qc > 1 else None


def _note(p: Problem, kind: str, who: list[int], rate: np.ndarray) -> str:
    """The sentence on the species ``who`` that grow without bound in the same way."""
    st = p.struct
    names = ", ".join(p.names[i] for i in who)
    verb = "grows" if len(who) == 1 else "grow"
    if kind == "linear":
        fed = [i for i in who if st.classes[st.labels[i]].kind == CRITICAL and np.isfinite(rate[i])]
        detail = "; ".join(f"{p.names[i]} by about {rate[i]:.6g} per second" for i in fed)
        return (
            f"{names} {verb} without bound: a feed reaches "
            f"{'it' if len(who) == 1 else 'them'} (directly or through other species) "
            "and there is no outlet, so the concentration rises steadily"
            + (f" ({detail} at long times)" if detail else "")
            + "; there is no finite limit."
        )
    if kind == "polynomial":
        return (
            f"{names} {verb} without bound like a power of t: material keeps flowing "
            "out of one species without outlet into another; there is no finite limit."
        )
    r = float(max(rate[i] for i in who))
    return (
        f"{names} {verb} without bound, exponentially (about e^({r:.6g} t) with t "
        "in s): a cycle of steps makes more of its members than it uses "
        "(stoichiometric factors above one); there is no finite limit."
    )


def limit_parts(problem: Problem) -> LimitParts:
    """The limit of every species, the areas to infinity and the notes on growth."""
    d = _degrees(problem)
    labels = problem.struct.labels
    kinds = tuple(_kind(problem, labels[i], d.q[labels[i]]) for i in range(problem.n))
    growth = tuple(_growth(d.q[labels[i]]) for i in range(problem.n))
    notes: list[str] = []
    notes_of: dict[int, tuple[str, ...]] = {}
    for kind in ("exponential", "linear", "polynomial"):
        who = [i for i in range(problem.n) if growth[i] == kind]
        if who:
            notes.append(_note(problem, kind, who, d.rate))
            notes_of.update((i, (notes[-1],)) for i in who)
    limit = Limit(d.L, np.isinf(d.L), kinds, growth, d.rate, tuple(notes))
    return LimitParts(limit, d.X, notes_of)


def long_time_limit(K, c0, feed=None, *, names: Sequence[str] | None = None) -> Limit:
    r"""The exact long-time limit :math:`c(\infty)`.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    names : sequence of str, optional
        Species names for the notes.

    Returns
    -------
    Limit

    .. math::

        c_C(\infty) = \frac{v_C\, u_C^T\left(c_{0,C} + K_{CT} X_T\right)}{u_C^T v_C},
        \quad X_T = -K_{TT}^{-1} c_{0,T}, \qquad
        c_S(\infty) = -K_{SS}^{-1}\left(f_S + K_{S\cdot}\, c(\infty)\right)

    for closed classes C (left/right null vectors u, v; u = 1 for conservative schemes),
    transient classes T upstream, and fed transient classes S.

    Notes
    -----
    Classes are the strongly connected components of the species graph, treated in
    topological order (Berman & Plemmons 1979, ch. 8).  A class is closed when its
    column sums vanish to 1e-12 relative (or its Perron root does, for stoichiometric
    factors other than one).  For ``A <=> B`` the limit of A is
    :math:`A_0 k_r/(k_f+k_r)`.  Growth without bound is detected from the class structure
    (feed reaching a class without outlet: linear; a chain of such classes: polynomial;
    a class whose Perron root is positive: exponential).

    References
    ----------
    Berman, A.; Plemmons, R. J. "Nonnegative Matrices in the Mathematical Sciences",
    Academic Press (1979).
    Grassmann, W. K.; Taksar, M. I.; Heyman, D. P. Operations Research 33, 1107-1116 (1985).
    IUPAC Gold Book, "chemical relaxation".

    Examples
    --------
    A <=> B with kf = 2 1/s and kr = 1 1/s: the closed form of the equilibrium is
    c(∞) = c(0) [kr, kf] / (kf + kr):

    >>> limit = long_time_limit([[-2.0, 1.0], [2.0, -1.0]], [1.0, 0.0])
    >>> limit.values.round(15).tolist(), limit.kind
    ([0.333333333333333, 0.666666666666667], ('equilibrium', 'equilibrium'))
    """
    return limit_parts(Problem(K, c0, feed, names=names)).limit
