r"""Fitting rate constants (and start values) to measured concentrations.

Weighted nonlinear least squares on the exact solution of the scheme,

.. math::

    \min_\theta\; S(\theta) = \sum_{r}\sum_{i,s} \left(
        \frac{y_{ris} - c_s(t_{ri};\, \theta, \mathrm{run}\ r)}{\sigma_{ris}} \right)^2 ,

solved with :func:`scipy.optimize.least_squares` (trust-region reflective) in
transformed parameters :math:`\theta` that keep every constant positive:
:math:`\theta = \ln k` for rate constants, Arrhenius prefactors and start values,
:math:`\theta = E_a / (R T_\mathrm{ref})` for activation energies.

The Jacobian is exact, not a finite difference.  For a parameter that enters the
rate matrix, :math:`\partial K/\partial\theta_j = E_j` is a fixed sparse matrix
per step times :math:`\partial k/\partial\theta_j`, and the sensitivity
:math:`s_j = \partial c/\partial\theta_j` obeys :math:`s_j' = K s_j + E_j c`,
:math:`s_j(0) = 0`: it is the Fréchet derivative of the matrix exponential in the
direction :math:`t E_j` (Van Loan 1978; Al-Mohy & Higham 2009),

.. math::

    \exp\begin{bmatrix} tK & tE_j \\ 0 & tK \end{bmatrix}
    = \begin{bmatrix} e^{tK} & L(tK, tE_j) \\ 0 & e^{tK} \end{bmatrix} .

All parameters are propagated together through one block matrix (concentration
block, one sensitivity block per parameter, feed column), interval by interval,
with a stacked scaling-and-squaring Taylor exponential (one exponential per
distinct time step).  A start value enters linearly:
:math:`\partial c/\partial \ln c_{0,A} = e^{tK} c_{0,A} e_A`.

Uncertainty follows the usual linearisation (Bates & Watts 1988, ch. 2):
:math:`\mathrm{Cov}(\hat\theta) = s^2 (J^\top J)^{-1}`, :math:`s^2 = S(\hat\theta)/(N-p)`,
carried to the constants by the delta method; profile intervals use the
F-based threshold :math:`S \le S(\hat\theta)\,(1 + F_{0.95}(1, N-p)/(N-p))`
(Bates & Watts 1988, ch. 6).

References
----------
D. M. Bates, D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
Wiley, New York (1988).
C. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans.
Automat. Control 23, 395-404 (1978).
A. H. Al-Mohy, N. J. Higham, "Computing the Fréchet derivative of the matrix
exponential, with an application to condition number estimation", SIAM J.
Matrix Anal. Appl. 30, 1639-1657 (2009).

Modules
-------
:mod:`~kinetics.fit.model` (free parameters, runs, residuals and the exact Jacobian),
:mod:`~kinetics.fit.estimation` (the multi-start search, the linearised uncertainty, profile
intervals, :func:`fit`), :mod:`~kinetics.fit.diagnostics` (statistics and warnings),
:mod:`~kinetics.fit.result` (:class:`FitResult`, the fitted scheme).
"""

from .diagnostics import chi2_error_level
from .estimation import fit
from .model import WEIGHTS, Parameter, parse_free
from .result import Estimate, FitResult

__all__ = [
    "WEIGHTS",
    "Estimate",
    "FitResult",
    "Parameter",
    "chi2_error_level",
    "fit",
    "parse_free",
]
