r"""Parameter sweeps and Monte Carlo propagation of uncertainty, evaluated in stacked batches.

A sweep evaluates one scheme for many *parameter sets*.  Each set replaces some of the
scheme's inputs: rate constants, Arrhenius parameters, the temperature, start or excess
concentrations.  Sets are laid out either as a Cartesian grid (``--vary``) or as Monte
Carlo samples around each grid point (``--samples``/``--spread``), and are evaluated in
*chunks*: a chunk of ``b`` sets builds a stack of ``b`` rate matrices at once; the
summary quantities of :mod:`kinetics.analysis` are computed for the whole stack by
:mod:`kinetics.sweep_summary`, and the curves (when asked for) by
:func:`kinetics.propagate.propagate_batch`.  No Python loop runs over the sets.

Parameter names (as in the scheme file)
---------------------------------------
``k2``
    A rate constant defined by value (not an Arrhenius constant).
``k3.A``, ``k3.Ea``
    Pre-exponential factor and activation energy of an Arrhenius constant ``k3``,

    .. math:: k(T) = A \exp\left(-\frac{E_a}{R T}\right)

    with :math:`R = 8.314462618` J/(mol K) (CODATA 2018).
``temperature``
    The temperature of the scheme (changes every Arrhenius constant).
``start:A``, ``excess:W``
    The start concentration of a species, the concentration of a co-reactant held in excess.

Value specifications (``NAME=VALUES``)
--------------------------------------
``LO:HI:N[:lin|:log][:UNIT]``
    ``N`` values from ``LO`` to ``HI`` inclusive, evenly spaced (``lin``, the default) or
    evenly spaced in the logarithm (``log``, needs ``LO, HI > 0``).
``V1,V2,...[:UNIT]``
    An explicit list (a single value is a list of one); the unit may also follow after a space.

A value without a unit is in the unit the file wrote for that quantity: the unit of the
constant's definition (``k2 = 0.045 min-1`` -> ``min-1``), of ``A`` or ``Ea`` in the
``arrhenius(...)`` definition, of the ``temperature`` line, and the scheme's concentration
unit for start and excess values.  Columns of the result are named ``NAME [UNIT]``.

Monte Carlo spreads (``NAME=SPREAD``)
-------------------------------------
Rate constants, pre-exponential factors, start and excess concentrations are *lognormal*
around their value :math:`x_0` with a relative spread ``s`` written as a percentage
(``k1=15%``): the spread is the geometric standard deviation minus one,

.. math:: \ln x = \ln x_0 + \ln(1 + s)\, z, \qquad z \sim N(0, 1),

so :math:`x_0` is the median and 68.3 % of the samples lie in
:math:`[x_0/(1+s),\ x_0(1+s)]`.  The temperature and activation energies are *normal*,
:math:`x = x_0 + \sigma z`, with an absolute standard deviation (``temperature=2K``,
``temperature=1.5`` in the file's temperature unit, ``k3.Ea=2kJ/mol``) or a percentage of
the value (of the absolute temperature in K).  The standard normal numbers come from the
counter-based Philox generator keyed by ``--seed`` (sample ``i``, parameter ``j`` uses
counter block ``i``), so a sample does not depend on the chunking or on the engine.

Set numbering
-------------
Grid points are numbered in C order (the first ``--vary`` varies slowest).  With
``samples = N``, set ``i`` is sample ``i % N`` of grid point ``i // N``.

Modules
-------
:mod:`~kinetics.sweep.spec` (grid axes and spreads), :mod:`~kinetics.sweep.plan` (the
checked plan, set values, Monte Carlo numbers), :mod:`~kinetics.sweep.inputs` (exact rate
matrices of the sets), :mod:`~kinetics.sweep.evaluation` (a chunk: summaries, curves and
their bound), :mod:`~kinetics.sweep.engines` (local and dask), :mod:`~kinetics.sweep.tables`
(summary rows, labelled curves, long tables, bands), :mod:`~kinetics.sweep.store`
(resumable chunk files and streamed tables, the only module here that writes files),
:mod:`~kinetics.sweep.api` (:func:`sweep`, :func:`monte_carlo`).  The batched summaries
are :mod:`kinetics.sweep_summary` and its compiled kernels :mod:`kinetics._sweep_kernels`.

References
----------
S. Arrhenius, "Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch
Säuren", Z. Phys. Chem. 4, 226-248 (1889).
J. K. Salmon, M. A. Moraes, R. O. Dror, D. E. Shaw, "Parallel random numbers: as easy as
1, 2, 3", Proc. Int. Conf. High Performance Computing, Networking, Storage and Analysis
(SC11), 2011. doi:10.1145/2063384.2063405
J. Aitchison, J. A. C. Brown, "The Lognormal Distribution", Cambridge University Press
(1957).
"""

from .api import monte_carlo, sweep
from .engines import run_chunks
from .evaluation import CURVE_RTOL, ChunkResult, chunk_result, evaluate_chunk
from .inputs import set_inputs, set_matrices
from .plan import DEFAULT_CHUNK, Column, SweepPlan, make_plan
from .spec import Parameter, Spread, parse_spread, parse_vary
from .tables import (
    BOUND_COLUMN,
    PERCENTILES,
    band_label,
    curve_bands,
    curves_array,
    curves_frame,
    curves_long_frame,
    percentile_bands,
    summary_frame,
)

__all__ = [
    "BOUND_COLUMN",
    "CURVE_RTOL",
    "DEFAULT_CHUNK",
    "PERCENTILES",
    "ChunkResult",
    "Column",
    "Parameter",
    "Spread",
    "SweepPlan",
    "band_label",
    "chunk_result",
    "curve_bands",
    "curves_array",
    "curves_frame",
    "curves_long_frame",
    "evaluate_chunk",
    "make_plan",
    "monte_carlo",
    "parse_spread",
    "parse_vary",
    "percentile_bands",
    "run_chunks",
    "set_inputs",
    "set_matrices",
    "summary_frame",
    "sweep",
]
