"""Numerical thresholds of the summary quantities, in one place.

The exact analysis (:mod:`kinetics.analysis`) and the batched summaries of sweeps
(:mod:`kinetics.sweep_summary`) find the same turning points, crossings and limits;
both read their thresholds here, so that the two routes agree (common practice, no
source: the values were chosen for this package and are explained beside each).
"""

from __future__ import annotations

__all__ = [
    "CLASS_TOL",
    "CONST",
    "DECAY",
    "EXPONENTIAL",
    "GLOBAL_TOL",
    "NEVER",
    "REL_NOISE_C",
    "REL_NOISE_D",
    "SCAN_FAST",
    "SCAN_SLOW",
    "XTOL",
]

#: A derivative (K c + f)_i whose size is below this fraction of the flux magnitudes
#: sum_j |K_ij| c_j + |f_i| is rounding noise: its sign carries no information.
REL_NOISE_D = 1e-12
#: Same for a concentration compared with a level.
REL_NOISE_C = 1e-12
#: First point of the log-spaced scan: this many of the fastest time constants.
SCAN_FAST = 1e-3
#: Last point of the scan: this many of the slowest time constants.
SCAN_SLOW = 50.0
#: Relative tolerance of the bracketing root finder (in time).
XTOL = 1e-13
#: A class of the species graph is closed when its column sums (or its Perron root)
#: vanish to this fraction of the size of its entries.
CLASS_TOL = 1e-12
#: The highest local maximum is the global one when it reaches the larger of the start
#: value and the limit to this relative tolerance.
GLOBAL_TOL = 1e-12

#: Growth degree q of a class of the species graph (its concentrations behave as t^q):
#: never reached, decays to zero, tends to a constant, grows exponentially.
NEVER, DECAY, CONST, EXPONENTIAL = -2, -1, 0, 10**9

# The ladder and scan grid of the batched summaries (kinetics.sweep_summary and its
# compiled kernels), in scaled time: levels u_l = U0 RATIO^l; the scan starts with 4
# steps of level 2 up to TAU0, then segments [TAU0 4^d, TAU0 4^(d+1)] of SEGMENT_STEPS
# steps of level d + 2 (about 20 points per decade)
U0 = 2.0**-15
RATIO = 4
TAU0 = 2.0**-9
SEGMENT_STEPS = 12
# brackets are narrowed until u ||B|| <= NEWTON_Y, then a Taylor series of NEWTON_TERMS
# terms beyond the longest path of the species graph gives the state
# (remainder < 0.25^14/14!); at most MAX_NEWTON refinement steps
NEWTON_Y = 0.25
NEWTON_TERMS = 14
MAX_NEWTON = 60
