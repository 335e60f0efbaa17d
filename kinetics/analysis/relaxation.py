r"""Time scales of a scheme from its rate matrix.

First-order lifetimes, relaxation times and oscillation periods, and whether K is (nearly)
defective.

References
----------
IUPAC Compendium of Chemical Terminology (the Gold Book), entries "chemical relaxation"
and "relaxation time".

Rothblum, U. G. "Algebraic eigenspaces of nonnegative matrices." Linear Algebra Appl. 12,
281-292 (1975).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import networkx as nx
import numpy as np

from kinetics.analysis import inputs
from kinetics.analysis.results import RelaxationTimes
from kinetics.analysis.structure import Structure, block

__all__ = ["lifetimes", "relaxation_times"]

# Eigenvalue gaps (relative) for "repeated" and "nearly repeated" rates.
_REPEATED = 1e-10
_NEARLY = 1e-3
# Condition number of the eigenvectors of a class above which K is nearly defective there.
_ILL_CONDITIONED = 1e6
# Most pairs of each kind named in the note.
_NOTE_PAIRS = 3


def _eigenvalues(st: Structure) -> tuple[np.ndarray, np.ndarray, int]:
    """Nonzero eigenvalues of the classes [1/s], the class of each, and the zero modes."""
    evs, owner = [], []
    zero_modes = 0
    for c, cl in enumerate(st.classes):
        for ev in cl.eigenvalues:
            if ev == 0:
                zero_modes += 1
            else:
                evs.append(ev)
                owner.append(c)
    return np.array(evs, dtype=complex), np.array(owner, dtype=int), zero_modes


def _ill_conditioned(Ks, Kd, members: np.ndarray) -> bool:
    """True when the eigenvectors of a class of several species are nearly parallel."""
    if members.size <= 1:
        return False
    _, V = np.linalg.eig(block(Ks, Kd, members))
    return bool(np.linalg.cond(V) > _ILL_CONDITIONED)


def _repeated_along_paths(st: Structure, evs: np.ndarray, owner: np.ndarray):
    """Equal or nearly equal eigenvalues of two classes linked by a reaction path.

    Pairs equal to 1e-10 or nearly equal to 1e-3, upstream class first.
    """
    exact: list[tuple[int, int]] = []
    near: list[tuple[int, int]] = []
    srt = np.argsort(evs.real, kind="stable")
    for a_pos in range(srt.size):
        a = srt[a_pos]
        for b in srt[a_pos + 1 :]:
            scale = max(abs(evs[a]), abs(evs[b]))
            if evs[b].real - evs[a].real > _NEARLY * scale:
                break
            gap = abs(evs[a] - evs[b])
            if gap > _NEARLY * scale or owner[a] == owner[b]:
                continue
            ca, cb = int(owner[a]), int(owner[b])
            if nx.has_path(st.dag, cb, ca):
                pair = (b, a)  # upstream class first in the note
            elif nx.has_path(st.dag, ca, cb):
                pair = (a, b)
            else:
                continue
            (exact if gap <= _REPEATED * scale else near).append(pair)
    return exact, near


def _shape_note(st: Structure, nm, evs, owner, exact, near, ill) -> str:
    """What (nearly) repeated rates mean for the curve shape; empty when none."""
    if not (exact or near or ill):
        return ""

    def who(c):
        return "/".join(nm[j] for j in st.classes[c].members)

    parts = []
    for a, b in exact[:_NOTE_PAIRS]:
        k = -evs[a].real
        parts.append(
            f"the rate {k:.6g} 1/s occurs for both {who(owner[a])} and {who(owner[b])}, "
            "which are linked by a reaction path, so K is defective: the curves contain "
            f"terms t*exp(-{k:.6g} t) (t^m exp(-k t) for m+1 equal rates in a row) besides "
            "pure exponentials, and an intermediate fed and drained at the same rate k rises "
            "and falls as k t exp(-k t), peaking at t = 1/k"
        )
    for a, b in near[:_NOTE_PAIRS]:
        ka, kb = -evs[a].real, -evs[b].real
        gap = abs(evs[a] - evs[b])
        parts.append(
            f"the rates {ka:.6g} and {kb:.6g} 1/s of {who(owner[a])} and {who(owner[b])} "
            "are nearly equal, so K is nearly defective: for t well below "
            f"1/|difference| = {1 / gap:.3g} s the curves look like t*exp(-k t); the "
            "classical closed form with differences of rates cancels badly here (the "
            "solution used does not rely on it)"
        )
    for c in ill:
        parts.append(
            f"the eigenvectors of the reaction network {who(c)} are nearly parallel "
            "(K is nearly defective there), so its curves have t*exp(-k t)-like shapes"
        )
    note = "; ".join(parts) + "."
    return note[0].upper() + note[1:]


def lifetimes(K) -> tuple[np.ndarray, np.ndarray]:
    r"""First-order lifetime and half-life of each species from its total outflow.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].

    Returns
    -------
    lifetime : ndarray
        :math:`\tau_i` [s], ``inf`` for a species with no outgoing step.
    first_order_half_life : ndarray
        :math:`\ln 2\,\tau_i` [s].

    .. math::

        \tau_i = \frac{1}{\sum k_{out}(i)} = -\frac{1}{K_{ii}}, \qquad
        t_{1/2,i} = \ln 2 \, \tau_i

    Notes
    -----
    The survival time of one molecule of ``i`` once formed; equal to the half-life of
    :math:`c_i` only when ``i`` is not formed by any step.

    References
    ----------
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014), first-order reactions.

    Examples
    --------
    A chain A -> B -> C with k1 = 0.1 and k2 = 0.05 1/s: closed forms τ = 1/k and
    t½ = ln 2 · τ; the end product never leaves:

    >>> tau, first_order_half_life = lifetimes([[-0.1, 0, 0], [0.1, -0.05, 0], [0, 0.05, 0]])
    >>> tau.tolist(), first_order_half_life.round(6).tolist()
    ([10.0, 20.0, inf], [6.931472, 13.862944, inf])
    """
    _, Ks = inputs.rate_matrix(K)
    k_out = -Ks.diagonal()
    with np.errstate(divide="ignore"):
        tau = np.where(k_out > 0, 1.0 / np.where(k_out > 0, k_out, 1.0), np.inf)
    return tau, math.log(2.0) * tau


def relaxation_times(K, *, names: Sequence[str] | None = None) -> RelaxationTimes:
    r"""Relaxation times and oscillation periods from the eigenvalues of ``K``.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    names : sequence of str, optional
        Species names for the note.

    Returns
    -------
    RelaxationTimes

    .. math::

        \tau_k = \frac{1}{|\operatorname{Re}\lambda_k|}, \qquad
        P_k = \frac{2\pi}{|\operatorname{Im}\lambda_k|}, \qquad
        \tau_{A\rightleftharpoons B} = \frac{1}{k_f + k_r}

    Notes
    -----
    Eigenvalues are those of the diagonal blocks of the strongly connected components
    (``K`` is block triangular in their topological order), so a triangular scheme has
    exactly its outflow rates.  ``defective`` is set when two classes linked by a reaction
    path share an eigenvalue (to 1e-10 relative): then the Jordan block has size >= 2
    (Rothblum 1975) and the curves contain :math:`t e^{-kt}` terms; ``nearly_defective``
    when they agree to 1e-3, or when the eigenvectors of one class are ill-conditioned
    (condition number above 1e6).

    References
    ----------
    IUPAC Gold Book, "chemical relaxation", "relaxation time".
    Rothblum, U. G. Linear Algebra Appl. 12, 281-292 (1975).

    Examples
    --------
    A <=> B relaxes with the eigenvalue -(kf + kr) of K (closed form τ = 1/(kf + kr));
    the other eigenvalue is the conserved total (a zero mode):

    >>> result = relaxation_times([[-2.0, 1.0], [2.0, -1.0]])
    >>> result.times.round(15).tolist(), result.zero_modes
    ([0.333333333333333], 1)
    """
    Kd, Ks = inputs.rate_matrix(K)
    n = Ks.shape[0]
    nm = [str(x) for x in names] if names is not None else [f"species {i}" for i in range(n)]
    st = Structure(Ks, Kd)
    evs, owner, zero_modes = _eigenvalues(st)
    ill = [c for c, cl in enumerate(st.classes) if _ill_conditioned(Ks, Kd, cl.members)]
    keep = evs.imag >= 0
    ev_k = evs[keep]
    order = np.argsort(np.abs(ev_k.real), kind="stable")
    ev_k = ev_k[order]
    dec = ev_k.real < 0
    times = 1.0 / np.abs(ev_k.real[dec])
    periods = 2 * math.pi / ev_k.imag[ev_k.imag > 0]
    growth = 1.0 / ev_k.real[ev_k.real > 0]
    # repeated eigenvalues along reaction paths (defective K)
    exact, near = _repeated_along_paths(st, evs, owner)
    note = _shape_note(st, nm, evs, owner, exact, near, ill)
    defective, nearly = bool(exact), bool(ill) or bool(near)
    return RelaxationTimes(ev_k, times, periods, growth, zero_modes, defective, nearly, note)
