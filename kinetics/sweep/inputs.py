"""The inputs of a range of sets, exactly: step rates, rate matrices, start values.

Each set's constants are formed from exact values (the constants as written, Arrhenius
constants through :func:`kinetics.scheme.arrhenius_pairs`, excess factors exactly) and
rounded to double-double pairs; the rate matrices are the pairs
:meth:`kinetics.ratematrix.RatePattern.dense_pair` sums without rounding the diagonal.
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from .. import _doubledouble as dd
from .. import activity
from ..errors import SettingError

if TYPE_CHECKING:
    from ..scheme import Scheme
    from .plan import SweepPlan

__all__ = ["input_pairs", "input_rates", "set_inputs", "set_matrices"]


class _SetValues:
    """The varied values of a range of sets, by parameter name, as pairs ``(hi, lo)``."""

    def __init__(self, plan: SweepPlan, internal: np.ndarray, low: np.ndarray) -> None:
        self.columns = {p.name: j for j, p in enumerate(plan.varied)}
        self.internal = internal
        self.low = low

    def get(self, name: str):
        j = self.columns.get(name)
        return None if j is None else (self.internal[:, j], self.low[:, j])


def _constant_pairs(plan: SweepPlan, name: str, varied: _SetValues):
    r"""Values of constant ``name`` [SI] for the sets, as pairs; None when no set changes it.

    .. math:: k = A \exp(-E_a/(R T)) \text{ for Arrhenius constants}
    """
    from ..rate_constants import arrhenius_pairs

    scheme = plan.scheme
    law = scheme.constants[name].arrhenius
    if law is None:
        return varied.get(name)
    a, ea, t = varied.get(f"{name}.A"), varied.get(f"{name}.Ea"), varied.get("temperature")
    if a is None and ea is None and t is None:
        return None
    return arrhenius_pairs(  # the one Arrhenius law (exact, cached per distinct value)
        law,
        scheme.temperature if t is None else t[0],
        prefactor=None if a is None else a[0],
        prefactor_low=None if a is None else a[1],
        energy=None if ea is None else ea[0],
    )


def _quantities(plan: SweepPlan) -> list[str]:
    """The named quantities the sets vary (grid axes and spreads)."""
    return [p.name for p in plan.varied if p.kind == "quantity"]


def _followers(plan: SweepPlan, varied: _SetValues, constants: dict, b: int) -> dict:
    """Pairs of the constants that follow the varied ones through the file's definitions.

    A constant defined from others (``k2 = k1 / 3``) or from named quantities
    (``lam = 0.88 * ln(2) / t_p`` with ``t_p`` varied), or by a temperature law other than
    a plain ``arrhenius`` line (``eyring(...)``, ``q10(...)``, expressions), is evaluated
    exactly for each distinct set by :meth:`kinetics.scheme.Scheme.exact_constants`
    (40 digits), with the varied constants and quantities and the temperature of that set.
    """
    scheme = plan.scheme
    deps = scheme.dependencies
    if not deps:
        return {}
    changed = [c for c, v in constants.items() if v is not None]
    sources = changed + _quantities(plan)
    affected: set[str] = set()
    for c in sources:
        affected.update(scheme.driven_by(c))
    t = varied.get("temperature")
    if t is not None:
        hot = set(deps.on_temperature) & set(scheme.constants)
        for c in hot:
            affected.add(c)
            affected.update(scheme.driven_by(c))
    affected -= set(changed)
    if not affected:
        return {}
    pairs = [constants[c] for c in changed] + [varied.get(q) for q in _quantities(plan)]
    columns = [np.broadcast_to(np.asarray(x[j], dtype=float), (b,)) for x in pairs for j in (0, 1)]
    temps = np.full(b, np.nan) if t is None else np.asarray(t[0], dtype=float)
    cache: dict[tuple, dict] = {}
    out = {c: (np.empty(b), np.empty(b)) for c in affected}
    for i in range(b):
        key = (float(temps[i]), *(float(col[i]) for col in columns))
        values = cache.get(key)
        if values is None:
            given: dict[str, float | Fraction] = {
                c: Fraction(key[1 + 2 * m]) + Fraction(key[2 + 2 * m])
                for m, c in enumerate(sources)
            }
            exact = scheme.exact_constants(None if t is None else key[0], given)
            values = cache[key] = {c: dd.pair(exact[c]) for c in affected}
        for c in affected:
            out[c][0][i], out[c][1][i] = values[c]
    return out


def _excess_power(w, nu):
    r""":math:`W^\nu` for excess concentrations ``w`` [SI] given as pairs ``(hi, lo)``.

    Integer powers by double-double products; others exactly to 40 digits
    (:func:`kinetics._doubledouble.decimal_power`), once per distinct value.
    """
    wh, wl = w
    nu = Fraction(nu)
    if nu.denominator == 1 and 0 <= nu <= 64:
        ph, pl = np.ones(wh.shape), np.zeros(wh.shape)
        for _ in range(int(nu)):
            ph, pl = dd.product(ph, pl, wh, wl)
        return ph, pl
    rows, inverse = np.unique(np.stack([wh, wl], axis=1), axis=0, return_inverse=True)
    exact = [dd.pair(dd.decimal_power(Fraction(h) + Fraction(lo), nu)) for h, lo in rows.tolist()]
    out = np.array(exact)[inverse.reshape(-1)]
    return out[:, 0], out[:, 1]


def _step_rate(plan: SweepPlan, s: int, k, varied: _SetValues, b: int):
    r"""Effective rate pairs of step ``s`` for the sets (None: the file's own, unchanged).

    .. math:: k_\mathrm{eff} = k \prod_j [W_j]^{\nu_j}
    """
    scheme = plan.scheme
    step = scheme.steps[s]
    excess = [(nu, w, varied.get(f"excess:{w}")) for nu, w in step.co_reactants]
    if k is None and all(v is None for *_, v in excess):
        return None
    if k is None:
        d = scheme.constants[step.constant]
        if d.arrhenius is None:
            k = dd.pair(d.value_si)
        else:
            assert scheme.temperature is not None  # a scheme with an Arrhenius law sets one
            k = dd.pair(d.arrhenius.exact(scheme.temperature))
    kh = np.broadcast_to(np.asarray(k[0], dtype=float), (b,))
    kl = np.broadcast_to(np.asarray(k[1], dtype=float), (b,))
    if not step.co_reactants:
        return kh, kl
    if all(v is None for *_, v in excess):
        # the file's excess concentrations: their exact factor, rounded once
        fh, fl = plan.cached("excess factors", lambda: _fixed_excess_factors(scheme))
        return dd.product(kh, kl, np.full(b, fh[s]), np.full(b, fl[s]))
    unit = [np.full(b, x) for x in dd.pair(scheme.concentration_si)]
    for nu, w, v in excess:
        if v is None:  # the file's value, exact in SI
            w_si = tuple(np.full(b, x) for x in dd.pair(scheme.excess_si[w]))
        else:  # varied in the scheme's unit: times the exact SI value of that unit
            w_si = dd.product(v[0], v[1], *unit)
        kh, kl = dd.product(kh, kl, *_excess_power(w_si, nu))
    return kh, kl


def _fixed_excess_factors(scheme: Scheme):
    """The exact excess factor of every step (its constant set to 1), as pairs."""
    from ..ratematrix import step_rate_pairs

    return step_rate_pairs(scheme, constants=dict.fromkeys(scheme.constants, 1.0))


def input_pairs(plan: SweepPlan, internal: np.ndarray, low: np.ndarray):
    """Step rates as pairs ``(hi, lo)`` (b, n_steps) [1/s], start (b, n) [conc], feed (n,).

    Steps that no parameter changes keep :attr:`kinetics.scheme.Scheme.rate_pairs` bit for
    bit; changed ones are formed from the exact values (constants as written, Arrhenius
    constants through :func:`kinetics.scheme.arrhenius_pairs`, excess factors exactly).
    """
    scheme = plan.scheme
    b = internal.shape[0]
    varied = _SetValues(plan, internal, low)
    base_hi, base_lo = scheme.rate_pairs
    hi = np.broadcast_to(base_hi, (b, base_hi.size)).copy()
    lo = np.broadcast_to(base_lo, (b, base_lo.size)).copy()
    constants = {c: _constant_pairs(plan, c, varied) for c in scheme.constants}
    constants.update(_followers(plan, varied, constants, b))
    for s, step in enumerate(scheme.steps):
        rate = _step_rate(plan, s, constants[step.constant], varied, b)
        if rate is not None:
            hi[:, s], lo[:, s] = rate
    c0 = np.broadcast_to(scheme.initial_vector, (b, len(scheme.species))).copy()
    if scheme.start_activities and (np.any(hi != base_hi) or np.any(lo != base_lo)):
        # start values written as activities follow the decay constants of each set
        for name, amounts in activity.start_amounts_for_rates(scheme, hi + lo).items():
            c0[:, scheme.index[name]] = amounts
    for p in plan.varied:
        if p.kind == "start":
            c0[:, scheme.index[p.target]] = varied.get(p.name)[0]
    feed = scheme.feed_vector if scheme.feed else None
    return hi, lo, c0, feed


def input_rates(plan: SweepPlan, internal: np.ndarray):
    """Step rates (b, n_steps) [1/s], start (b, n) [conc] and feed (n,) [conc/s] or None.

    The high parts of :func:`input_pairs` for values without low parts (checks of the
    working range, references in tests and benchmarks).
    """
    hi, _, c0, feed = input_pairs(plan, internal, np.zeros_like(internal))
    return hi, c0, feed


def set_inputs(plan: SweepPlan, i: int) -> dict[str, Any]:
    """The inputs of set ``i``, for checking single sets.

    They have the form :func:`kinetics.ratematrix.step_rates` and
    :meth:`kinetics.scheme.Scheme.with_values` take.

    Returns
    -------
    dict
        ``constants`` (name -> SI value, Arrhenius constants evaluated), ``temperature``
        [K] or None, ``initial`` (species -> conc), ``excess`` (species -> conc),
        ``quantities`` (named quantity -> SI value; the constants that follow them are
        not in ``constants``: :meth:`kinetics.scheme.Scheme.with_values` follows them).
    """
    if not 0 <= i < plan.n_sets:
        raise SettingError(f"set {i} does not exist", f"sets are 0 .. {plan.n_sets - 1}")
    _, internal = plan.set_values(i, i + 1)
    varied = _SetValues(plan, internal, plan.internal_low(i, i + 1))
    out: dict[str, Any] = {
        "constants": {},
        "temperature": None,
        "initial": {},
        "excess": {},
        "quantities": {},
    }
    if varied.get("temperature") is not None:
        out["temperature"] = float(varied.get("temperature")[0][0])
    for c in plan.scheme.constants:
        k = _constant_pairs(plan, c, varied)
        if k is not None:
            out["constants"][c] = float(np.asarray(k[0]).reshape(-1)[0])
    for q in _quantities(plan):
        out["quantities"][q] = float(varied.get(q)[0][0])
    for p in plan.varied:
        if p.kind in ("start", "excess"):
            out["initial" if p.kind == "start" else "excess"][p.target] = float(
                varied.get(p.name)[0][0]
            )
    return out


def _pattern(plan: SweepPlan):
    """The scheme's :class:`kinetics.ratematrix.RatePattern` (once per plan)."""
    from ..ratematrix import rate_pattern

    return plan.cached("pattern", lambda: rate_pattern(plan.scheme))


def set_matrices(plan: SweepPlan, start: int, stop: int):
    """The exact rate matrices of sets ``start .. stop-1`` and their other inputs.

    Returns
    -------
    K, K_low : ndarray, shape (b, n, n)
        Rate matrices [1/s] as double-double pairs: ``K + K_low`` is the matrix of the
        exact constants of each set (:meth:`kinetics.ratematrix.RatePattern.dense_pair`;
        steps no parameter changes carry :attr:`kinetics.scheme.Scheme.rate_pairs` bit
        for bit).
    c0 : ndarray, shape (b, n)
        Start concentrations [conc].
    feed : ndarray, shape (n,) or None
        Zero-order feed [conc/s].
    """
    _, internal = plan.set_values(start, stop)
    hi, lo, c0, feed = input_pairs(plan, internal, plan.internal_low(start, stop))
    K, K_low = _pattern(plan).dense_pair(hi, lo)
    return K, K_low, c0, feed
