"""The exact propagation engine: the one matrix exponential and the one Fréchet derivative.

c(t) = exp(tK) c0 + ∫ exp(sK) ds f, accurate entry by entry against the exact inputs
(the rate matrix as a double-double pair), with a certified componentwise bound.

==================  ==========================================================================
module              owns
==================  ==========================================================================
``propagate``       the public functions: :func:`propagate`, :func:`propagate_certified`,
                    :func:`propagate_batch`, :func:`expm_nonnegative`, :class:`Propagation`,
                    :func:`check_inputs` (inputs checked once for many grids)
``stretch``         :class:`StretchPropagator`: stretches applied to many start vectors
``sensitivity``     derivatives along directions of K: the entrywise and the block route
``checks``          the input checks and their wording (one home)
``plan``            plans (squarings, Taylor degree) and the error bounds of a plan
``dense``           the dense engine on stacks: exponentials, grids, time residuals
``blocks``          the block-triangular route for large sparse schemes, its cost model
``block_exp``       one interval's exponential on the block route
``kernels``         compiled loops of the dense engine (numba; imported when needed)
``block_kernels``   compiled loops of the block route (numba; imported when needed)
==================  ==========================================================================

Layers inside: ``checks`` and ``plan`` at the bottom; ``kernels`` below ``dense`` and
``blocks``; ``propagate`` above them; ``stretch`` and ``sensitivity`` on top.  Importing
the engine does not load numba.

>>> import numpy as np
>>> from kinetics.engine import propagate
>>> K = np.array([[-1.0, 0.0], [1.0, 0.0]])  # A -> B, k = 1 1/s
>>> float(propagate(K, [1.0, 0.0], [1.0])[0, 0])  # closed form e^-1
0.36787944117144233
"""

from kinetics.engine.plan import AUTO_RTOL, DENSE_MAX, TINY
from kinetics.engine.propagate import (
    CheckedInputs,
    Precision,
    Propagation,
    check_inputs,
    expm_nonnegative,
    expm_nonnegative_certified,
    propagate,
    propagate_batch,
    propagate_certified,
)
from kinetics.engine.sensitivity import (
    block_sensitivities,
    point_sensitivities,
    sensitivities,
)
from kinetics.engine.stretch import StretchPropagator

__all__ = [
    "AUTO_RTOL",
    "DENSE_MAX",
    "TINY",
    "CheckedInputs",
    "Precision",
    "Propagation",
    "StretchPropagator",
    "block_sensitivities",
    "check_inputs",
    "expm_nonnegative",
    "expm_nonnegative_certified",
    "point_sensitivities",
    "propagate",
    "propagate_batch",
    "propagate_certified",
    "sensitivities",
]
