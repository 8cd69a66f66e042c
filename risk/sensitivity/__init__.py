"""Sensitivity of model outputs to uncertain inputs: Sobol indices, Shapley effects, tornado.

Input model (stated once, see also :mod:`risk.uncertainty`): every uncertain input is
``x_j = F_j^-1(Phi(z_j))`` with ``z ~ N(0, C)`` a correlated standard-normal vector (a Gaussian
copula; ``C`` is the normal-space correlation matrix, lower Cholesky factor ``L``). The
independent underlying variables are ``xi = L^-1 z ~ N(0, I)``. This package works on arrays:
``z`` (n, d) [1], ``corr`` = C (d, d) [1] and model outputs ``y`` (n,) or (n, k) [unit of the
output, e.g. MPa for a critical drawdown].

Methods
-------
- :func:`sobol_pce`: a polynomial chaos expansion (PCE) in orthonormal probabilists' Hermite
  polynomials of ``xi``, fitted by least squares (a sparse basis chosen by orthogonal matching
  pursuit, or total-degree bases with the degree chosen by the corrected leave-one-out error);
  Sobol indices come from the squared coefficients (Sudret 2008), bootstrap intervals from
  refitting the chosen basis on resampled rows, widened by the derived bound of how far the
  surrogate's error (measured on held-out runs when given) can move an index
  (:func:`surrogate_bounds`). Legendre polynomials for independent uniform inputs
  (:func:`families_for`). With correlated inputs the same expansion gives
  full first-order indices, independent total indices and Shapley effects exactly (see
  :func:`correlated_indices` for the scheme).
- :func:`mc_sobol`: pick-freeze Monte Carlo on the model itself (Saltelli et al. 2010 first
  order, Jansen 1999 total), the fallback when the expansion's leave-one-out error is high
  (plateaus and kinks of the critical drawdown).
- :func:`mc_shapley`: Shapley effects of correlated inputs on the model itself (random
  orderings, conditional redraws through the copula), the fallback for correlated inputs.
- :func:`given_data_first_order`: full first-order indices from a sample alone; they measure
  association (an input merely correlated with an influential one scores high), so they are
  never used to rank inputs (``SensitivityResult.ranking`` refuses them).
- :func:`sensitivity`: picks the expansion or the Monte-Carlo fallback by
  :data:`LOO_THRESHOLD` (the run's pipeline calls it, :func:`risk.assessment.assess`).
- :func:`has_spread`: outputs that leave their plateau often enough for indices to mean anything.
- :func:`tornado`: one-at-a-time swings between P10 and P90 values, one or many outputs.

Layout (one module per job)
---------------------------
- ``common``: array types, :data:`LOO_THRESHOLD`, :func:`blas_single_thread`.
- ``result``: :class:`SensitivityResult`.
- ``pce``: :class:`PolynomialChaos`, bases, :func:`fit_pce` (leave-one-out, bootstrap refits).
- ``families``: orthonormal polynomials of a bounded marginal (:func:`stieltjes_family`).
- ``indices``: Sobol indices from coefficients (independent variables), grouped inputs.
- ``shapley``: correlated inputs: full first-order, independent total, Shapley effects
  (:data:`MAX_EXACT_SHAPLEY_INPUTS`).
- ``montecarlo``: pick-freeze (:func:`mc_sobol`) and given-data estimators.
- ``shapley_mc``: :func:`mc_shapley`.
- ``tornado``: :func:`tornado`.
- ``driver``: :func:`sobol_pce` and :func:`sensitivity`, which pick the method; :func:`has_spread`.

Nothing here reads files, prints, or uses a global random state: a seeded
``numpy.random.Generator`` is passed in and the caller records its seed.

References
----------
Abramowitz, M., Stegun, I.A. (1964). Handbook of Mathematical Functions, chapter 22
    (orthogonal polynomial recurrences).
Blatman, G., Sudret, B. (2010). An adaptive algorithm to build up sparse polynomial chaos
    expansions for stochastic finite element analysis. Probabilistic Engineering Mechanics 25,
    183-197 (corrected leave-one-out error, after Chapelle, Vapnik & Bengio 2002). From memory.
Blatman, G., Sudret, B. (2011). Adaptive sparse polynomial chaos expansion based on least angle
    regression. Journal of Computational Physics 230, 2345-2367 (hyperbolic index sets).
    From memory.
Castro, J., Gomez, D., Tejada, J. (2009). Polynomial calculation of the Shapley value based
    on sampling. Computers & Operations Research 36, 1726-1730. From memory.
Jansen, M.J.W. (1999). Analysis of variance designs for model output. Computer Physics
    Communications 117, 35-43.
Owen, A.B. (2014). Sobol' indices and Shapley value. SIAM/ASA Journal on Uncertainty
    Quantification 2, 245-251.
Pati, Y.C., Rezaiifar, R., Krishnaprasad, P.S. (1993). Orthogonal matching pursuit. Proc. 27th
    Asilomar Conference on Signals, Systems and Computers, 40-44.
Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M., Tarantola, S. (2010).
    Variance based sensitivity analysis of model output. Computer Physics Communications 181,
    259-270.
Shapley, L.S. (1953). A value for n-person games. Contributions to the Theory of Games II,
    307-317.
Song, E., Nelson, B.L., Staum, J. (2016). Shapley effects for global sensitivity analysis:
    theory and computation. SIAM/ASA Journal on Uncertainty Quantification 4, 1060-1083.
Sudret, B. (2008). Global sensitivity analysis using polynomial chaos expansions. Reliability
    Engineering & System Safety 93, 964-979.
Mara, T.A., Tarantola, S., Annoni, P. (2015). Non-parametric methods for global sensitivity
    analysis of model output with dependent inputs. Environmental Modelling & Software 72,
    173-183 (full and independent indices). From memory.
"""

from __future__ import annotations

from risk.sensitivity.common import LOO_THRESHOLD, blas_single_thread
from risk.sensitivity.driver import families_for, has_spread, sensitivity, sobol_pce
from risk.sensitivity.families import Recurrence, stieltjes_family
from risk.sensitivity.indices import independent_indices, surrogate_bounds
from risk.sensitivity.montecarlo import given_data_first_order, mc_sobol
from risk.sensitivity.pce import (
    PolynomialChaos,
    design_matrix,
    fit_pce,
    hermite_orthonormal,
    legendre_orthonormal,
    multi_indices,
)
from risk.sensitivity.result import SensitivityResult
from risk.sensitivity.shapley import MAX_EXACT_SHAPLEY_INPUTS, correlated_indices
from risk.sensitivity.shapley import _blocks_of as _blocks_of
from risk.sensitivity.shapley import _Closure as _Closure
from risk.sensitivity.shapley import _prefix_variances as _prefix_variances
from risk.sensitivity.shapley_mc import mc_shapley
from risk.sensitivity.tornado import tornado

__all__ = [
    "LOO_THRESHOLD",
    "MAX_EXACT_SHAPLEY_INPUTS",
    "PolynomialChaos",
    "Recurrence",
    "SensitivityResult",
    "blas_single_thread",
    "correlated_indices",
    "design_matrix",
    "families_for",
    "fit_pce",
    "given_data_first_order",
    "has_spread",
    "hermite_orthonormal",
    "independent_indices",
    "legendre_orthonormal",
    "mc_shapley",
    "mc_sobol",
    "multi_indices",
    "sensitivity",
    "sobol_pce",
    "stieltjes_family",
    "surrogate_bounds",
    "tornado",
]
