r"""What the chemist reads: half-lives, intermediate maxima, limits, time scales, areas.

Every quantity here is computed from the exact solution of a first-order scheme,

.. math::

    \frac{dc}{dt} = K c + f, \qquad
    c(t) = e^{tK} c_0 + \int_0^t e^{sK}\,ds\, f ,

with the rate matrix ``K`` [1/s] (column ``j`` is the outflow of species ``j``:
``K[j, j] = -sum k_out(j)``, ``K[i, j] = nu * k`` for a step ``j -> i``), the start
concentrations ``c0`` and an optional zero-order feed ``f`` [conc/s].  Concentrations
come from :func:`kinetics.propagate.propagate`; times of events are found by root
finding on the exact curve and its exact derivative ``(K c + f)_i``, never by reading a
grid.  All functions take plain arrays; times are in seconds and concentrations in the
caller's unit.

The package, by concept: :mod:`~kinetics.analysis.inputs` (checks of the arguments),
:mod:`~kinetics.analysis.working_range`, :mod:`~kinetics.analysis.tolerances` (the
thresholds shared with the batched summaries of sweeps),
:mod:`~kinetics.analysis.results` (the result types), :mod:`~kinetics.analysis.structure`
(classes of the species graph), :mod:`~kinetics.analysis.problem` (one checked problem
and its exact curve), :mod:`~kinetics.analysis.scan`, :mod:`~kinetics.analysis.hermite`
and :mod:`~kinetics.analysis.roots` (the scan and the batched root finder),
:mod:`~kinetics.analysis.limits`, :mod:`~kinetics.analysis.turning` (maxima),
:mod:`~kinetics.analysis.crossings` (half-lives, times to a fraction and to the limit),
:mod:`~kinetics.analysis.areas`, :mod:`~kinetics.analysis.relaxation`,
:mod:`~kinetics.analysis.survey` (what the quantities share, computed once),
:mod:`~kinetics.analysis.summary` (everything from one shared scan) and
:mod:`~kinetics.analysis.solution_summary` (the summary of a solved scheme in its units).

Definitions
-----------
Half-life, time to a fraction (DT50, DT90, t90)
    The half-life of a species with a start value is the first time its concentration
    falls to half of the start value, :math:`c_i(t_{1/2}) = c_{0,i}/2`.  More generally
    the time to a fraction :math:`\phi` is the first :math:`t` with
    :math:`c_i(t) = \phi\,c_{0,i}`.  It is found by root finding on the exact solution
    (relative accuracy 1e-10 or better) and is ``None``, with a sentence saying why, when the
    concentration never falls that low (a reversible step whose equilibrium lies above
    the fraction, a species that is not consumed, growth without bound).  "t90" has two
    opposite meanings in the trade: in shelf-life work it is the time until 90 % is
    *left* (:math:`\phi = 0.9`, :math:`t = \ln(10/9)/k \approx 0.105/k` for first
    order); in degradation studies DT90 is the time until 90 % has *gone*
    (:math:`\phi = 0.1`, :math:`t = \ln 10/k`).  The summary reports both, under names
    that say which is which.

Lifetime and first-order half-life
    :math:`\tau_i = 1/\sum k_{out}(i) = -1/K_{ii}` and :math:`\ln 2\,\tau_i`: how long one
    molecule of ``i`` survives on average once formed, ignoring that it may be formed
    again.  Infinite for a species with no outgoing step.  It equals the half-life above
    only for a species that decays by first-order steps and is not formed.

Intermediate maxima
    Every local maximum of :math:`c_i(t)` over :math:`t > 0`, located where the exact
    derivative :math:`(K c + f)_i` changes sign from + to - (bracketed on a log-spaced
    scan that spans all time scales of ``K``, refined by root finding to 1e-13 relative in
    time).  The highest one is flagged *global* when it is also at least the start value
    and the long-time limit (otherwise the supremum over :math:`t \ge 0` is at
    :math:`t = 0` or approached as :math:`t \to \infty`).  Maxima after the end of the
    chosen time window are found all the same and flagged ``beyond_window``.  Where
    :math:`(Kc + f)_i` is only rounding noise (a species in quasi-steady state, e.g. the
    short-lived daughter of a long-lived parent), the derivative is taken as
    :math:`e^{tK}g^+ - e^{tK}g^-` with :math:`g^\pm` the positive and negative parts of
    :math:`Kc_0 + f`, each propagated entrywise accurately.  Cycles can
    give several local maxima; all are listed.  Local maxima whose size is below the
    rounding level of the curve (damped oscillation about an equilibrium after ~30
    relaxation times) cannot be resolved in double precision and are not reported.

Long-time limit
    :math:`c(\infty) = \lim_{t\to\infty} c(t)`, computed exactly from the class structure
    of ``K`` (strongly connected components of the species graph).  Material in a
    *transient* class (one that loses material) ends up downstream; a *closed* class
    (no outlet, e.g. a final reversible equilibrium or a single end product) keeps what
    flows into it, distributed as its stationary vector :math:`v` (``K_CC v = 0``,
    computed subtraction-free by the Grassmann-Taksar-Heyman algorithm):
    :math:`c_C(\infty) = v\,\mathbf 1^T (c_{0,C} + K_{C,T} X_T)/\mathbf 1^T v`, with
    :math:`X_T = -K_{TT}^{-1} c_{0,T}` the areas of the transient species upstream.  This
    is the projection of :math:`c_0` onto the null space of ``K`` along its range (the
    conserved quantities of a closed reversible network).  A feed into transient species
    gives the steady state :math:`-K^{-1} f` on them; a feed that reaches a species with no
    outlet makes it grow without bound (linearly in ``t``), and a class that makes more
    than it uses (stoichiometric factors above one in a loop) grows exponentially: those
    species are reported as unbounded, with a sentence saying so.

Time to the limit
    For a tolerance :math:`\epsilon` (default 0.01): the time after which every species
    stays within :math:`\epsilon` of its own limit,
    :math:`|c_i(s) - c_i(\infty)| \le \epsilon\,c_i(\infty)` for all :math:`s \ge t`.  A
    species whose limit is zero is compared with :math:`\epsilon` times the largest finite
    limit of any species (the largest start value when all limits are zero).  Reported per
    species and for the whole scheme (the largest of them).  A species that grows without
    bound has none; the others are still reported, and the whole scheme has ``None``.

Relaxation times
    :math:`\tau_k = 1/|\operatorname{Re}\lambda_k|` for the nonzero eigenvalues
    :math:`\lambda_k` of ``K`` (one per complex pair), longest first, and the periods
    :math:`2\pi/|\operatorname{Im}\lambda_k|` of complex pairs (damped oscillation, from
    cycles).  For ``A <=> B`` the single relaxation time is :math:`1/(k_f + k_r)`.  When
    ``K`` is defective (a rate repeated along a reaction path, e.g. equal constants in a
    chain), the curves contain terms :math:`t\,e^{-kt}` (:math:`t^m e^{-kt}` for
    :math:`m+1` equal rates) instead of pure exponentials; this is flagged with a note.

Yield at the maximum and selectivity
    The yield of an intermediate (a species that starts at zero and has a global maximum)
    at its maximum is :math:`Y_i = c_{i,\max} / \sum_j c_{0,j}`, the peak concentration
    relative to the total start concentration of all starting materials (or of one chosen
    starting material, ``basis``).  It is a fraction of material only for 1:1
    stoichiometry.  End products are the species in closed classes (no outlet) that are
    formed.  The selectivity between end products is the ratio of the amounts formed,
    :math:`S_{P/Q}(t) = (c_P(t) - c_{0,P})/(c_Q(t) - c_{0,Q})`, and the fractional
    selectivity :math:`s_P(t) = \Delta c_P(t)/\sum_Q \Delta c_Q(t)`, reported at the end of
    the time window and in the limit :math:`t \to \infty`.

Areas and mean residence time
    :math:`AUC_i(T) = \int_0^T c_i\,dt`, exact, from the exponential of the augmented
    matrix :math:`\begin{pmatrix} K & 0 \\ I & 0 \end{pmatrix}` (Van Loan 1978; no
    quadrature), and :math:`AUC_i(\infty) = (-K_{TT}^{-1} c_{0,T})_i` for species that decay
    to zero (infinite when the limit is nonzero).  The mean residence time of a species
    that starts with material is :math:`MRT_i = AUC_i(\infty)/c_{0,i}`, which is
    :math:`1/k` for a single first-order decay; when ``i`` is also formed from other
    starting materials that material is counted too.

References
----------
Bateman, H. "Solution of a system of differential equations occurring in the theory of
radioactive transformations." Proc. Cambridge Philos. Soc. 15, 423-427 (1910).

Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University Press
(2014): consecutive and parallel first-order reactions, pre-equilibria.

IUPAC Compendium of Chemical Terminology (the Gold Book), entries "chemical relaxation"
and "relaxation time".

Grassmann, W. K.; Taksar, M. I.; Heyman, D. P. "Regenerative analysis and steady state
distributions for Markov chains." Operations Research 33, 1107-1116 (1985).

Berman, A.; Plemmons, R. J. "Nonnegative Matrices in the Mathematical Sciences",
Academic Press (1979), ch. 6 (M-matrices) and ch. 8 (class structure, limits).

Rothblum, U. G. "Algebraic eigenspaces of nonnegative matrices." Linear Algebra Appl. 12,
281-292 (1975).

Van Loan, C. F. "Computing integrals involving the matrix exponential." IEEE Trans.
Automat. Control 23, 395-404 (1978).

Gibaldi, M.; Perrier, D. "Pharmacokinetics", 2nd ed., Marcel Dekker (1982).

Yamaoka, K.; Nakagawa, T.; Uno, T. "Statistical moments in pharmacokinetics."
J. Pharmacokinet. Biopharm. 6, 547-558 (1978).
"""

from kinetics.analysis.areas import areas, mean_residence_time
from kinetics.analysis.crossings import (
    half_life,
    half_life_detail,
    time_to_fraction,
    time_to_fraction_detail,
    time_to_limit,
)
from kinetics.analysis.limits import long_time_limit
from kinetics.analysis.relaxation import lifetimes, relaxation_times
from kinetics.analysis.results import (
    Areas,
    FractionTime,
    Limit,
    Maximum,
    RelaxationTimes,
    SchemeSummary,
    SpeciesSummary,
    TimeToLimit,
    YieldsAndSelectivity,
)
from kinetics.analysis.summary import (
    BATCH_QUANTITIES,
    summarise,
    summarise_all,
    yields_and_selectivity,
)
from kinetics.analysis.turning import intermediate_maxima
from kinetics.analysis.working_range import (
    MAX_LIFETIMES,
    MAX_RATE,
    MAX_SCALE,
    MAX_TIME,
    check_working_range,
)

__all__ = [
    "BATCH_QUANTITIES",
    "MAX_LIFETIMES",
    "MAX_RATE",
    "MAX_SCALE",
    "MAX_TIME",
    "Areas",
    "FractionTime",
    "Limit",
    "Maximum",
    "RelaxationTimes",
    "SchemeSummary",
    "SpeciesSummary",
    "TimeToLimit",
    "YieldsAndSelectivity",
    "areas",
    "check_working_range",
    "half_life",
    "half_life_detail",
    "intermediate_maxima",
    "lifetimes",
    "long_time_limit",
    "mean_residence_time",
    "relaxation_times",
    "summarise",
    "summarise_all",
    "time_to_fraction",
    "time_to_fraction_detail",
    "time_to_limit",
    "yields_and_selectivity",
]
