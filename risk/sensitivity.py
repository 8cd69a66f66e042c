"""Sensitivity of model outputs to uncertain inputs: Sobol indices, Shapley effects, tornado.

Input model (stated once, see also :mod:`risk.uncertainty`): every uncertain input is
``x_j = F_j^-1(Phi(z_j))`` with ``z ~ N(0, C)`` a correlated standard-normal vector (a Gaussian
copula; ``C`` is the normal-space correlation matrix, lower Cholesky factor ``L``). The
independent underlying variables are ``xi = L^-1 z ~ N(0, I)``. This module works on arrays:
``z`` (n, d) [1], ``corr`` = C (d, d) [1] and model outputs ``y`` (n,) or (n, k) [unit of the
output, e.g. MPa for a critical drawdown].

Methods
-------
- :func:`sobol_pce`: a polynomial chaos expansion (PCE) in orthonormal probabilists' Hermite
  polynomials of ``xi``, fitted by least squares (a sparse basis chosen by orthogonal matching
  pursuit, or total-degree bases with the degree chosen by the corrected leave-one-out error);
  Sobol indices come from the squared coefficients (Sudret 2008), bootstrap intervals from
  refitting the chosen basis on resampled rows. With correlated inputs the same expansion gives
  full first-order indices, independent total indices and Shapley effects exactly (see
  :func:`correlated_indices` for the scheme).
- :func:`mc_sobol`: pick-freeze Monte Carlo on the model itself (Saltelli et al. 2010 first
  order, Jansen 1999 total), the fallback when the expansion's leave-one-out error is high
  (plateaus and kinks of the critical drawdown).
- :func:`sensitivity`: picks one of the two by :data:`LOO_THRESHOLD`.
- :func:`tornado`: one-at-a-time swings between P10 and P90 values.

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

import contextlib
import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from itertools import product
from typing import Any, Final, Literal

import numpy as np
import scipy.linalg
import scipy.linalg.blas
import scipy.sparse
import scipy.special
from numpy.typing import ArrayLike, NDArray
from scipy.sparse.csgraph import connected_components
from scipy.special import ndtr, ndtri
from scipy.stats import qmc

from risk.errors import ScenarioError

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "LOO_THRESHOLD",
    "MAX_EXACT_SHAPLEY_INPUTS",
    "PolynomialChaos",
    "SensitivityResult",
    "blas_single_thread",
    "correlated_indices",
    "design_matrix",
    "fit_pce",
    "given_data_first_order",
    "hermite_orthonormal",
    "independent_indices",
    "legendre_orthonormal",
    "mc_sobol",
    "multi_indices",
    "sensitivity",
    "sobol_pce",
    "tornado",
]

#: Relative corrected leave-one-out error above which :func:`sensitivity` abandons the
#: expansion for Monte Carlo on the model. Derived bound: if the surrogate's relative mean-square
#: error is ``eps``, an index ``S`` moves by at most about ``2 sqrt(eps S) + eps``; at
#: ``eps = 0.01`` that is <= 0.11 in the worst case and, because least-squares residuals are
#: nearly orthogonal to the fitted terms, typically a few hundredths (measured here, sparse
#: fits of the Ishigami, 8-input Sobol G and 10-input exponential functions at 256-1024 runs,
#: 3 seeds: LOO <= 0.01 went with index errors <= 0.025; LOO >= 0.1 with errors up to 0.4).
LOO_THRESHOLD: Final = 0.01

#: Up to this many inputs, Shapley effects with correlated inputs come from all 2**d subsets
#: exactly; above it, from random orderings (Castro, Gomez & Tejada 2009 estimator).
MAX_EXACT_SHAPLEY_INPUTS: Final = 16

Method = Literal["omp", "ols"]


@contextlib.contextmanager
def blas_single_thread() -> Iterator[None]:
    """Limit BLAS to one thread inside the block (threadpoolctl); a no-op when not installed.

    Small dense least-squares problems run several times slower with threaded BLAS on shared
    cores (measured 3-56x; docs/derivations.md, sec. 8).
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        yield
        return
    with threadpool_limits(limits=1, user_api="blas"):
        yield


# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------


def _frozen(a: ArrayLike) -> Array:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


_EMPTY = _frozen(np.empty(0))


@dataclass(frozen=True)
class SensitivityResult:
    """Sensitivity indices of one model output [1] (fractions of the output variance).

    With independent inputs, ``first`` and ``total`` are the Sobol first-order and total
    indices, ``full_first == first`` and ``independent_total == total``. With correlated inputs
    ``first`` is the full first-order index ``Var(E[Y|x_j]) / Var(Y)`` (the effect of ``x_j``
    with everything correlated with it) and ``total`` the independent total index
    ``E[Var(Y|x_-j)] / Var(Y)`` (the part only ``x_j`` explains); Shapley effects (they add up
    to one) give the ranking and usually lie between the two. The ``*_low``/``*_high`` bounds
    are bootstrap percentile intervals at ``confidence``: they show sampling noise, not the
    expansion's truncation error, which ``loo_error`` measures. Group indices are defined the
    same way for blocks of inputs (e.g. the stresses); a group's Shapley effect is the sum of
    its members'.
    """

    names: tuple[str, ...]
    first: Array
    total: Array
    first_low: Array
    first_high: Array
    total_low: Array
    total_high: Array
    shapley: Array
    shapley_low: Array
    shapley_high: Array
    full_first: Array
    independent_total: Array
    loo_error: float
    method: str
    n_runs: int
    output: int = 0
    mean: float = math.nan
    variance: float = math.nan
    confidence: float = 0.95
    n_bootstrap: int = 0
    n_terms: int = 0
    degree: int = 0
    correlated: bool = False
    group_names: tuple[str, ...] = ()
    group_first: Array = field(default_factory=lambda: _EMPTY)
    group_total: Array = field(default_factory=lambda: _EMPTY)
    group_shapley: Array = field(default_factory=lambda: _EMPTY)

    @property
    def ranking(self) -> tuple[str, ...]:
        """Input names, most influential first (by Shapley effect, else by total index)."""
        key = self.shapley if np.all(np.isfinite(self.shapley)) else self.total
        return tuple(self.names[i] for i in np.argsort(-key, kind="stable"))


@dataclass(frozen=True)
class PolynomialChaos:
    """A fitted expansion ``y = sum_a c_a psi_a(xi)`` of one output.

    indices : multi-indices ``a`` (m, d) [1] of products of orthonormal polynomials
        ``psi_a(xi) = prod_j psi_{a_j}(xi_j)``: probabilists' Hermite ``He_n / sqrt(n!)`` in
        ``xi_j``, or Legendre in ``2 Phi(xi_j) - 1`` where ``families`` says so; row 0 is the
        constant term.
    coefficients : ``c_a`` (m,) [unit of y]
    loo_error : corrected leave-one-out error relative to the sample variance of y [1]
    n_runs : rows the expansion was fitted on [1]
    families : polynomial family per input (empty = all Hermite)
    """

    indices: IntArray
    coefficients: Array
    loo_error: float
    n_runs: int
    families: tuple[str, ...] = ()

    @property
    def mean(self) -> float:
        """Mean of the expansion [unit of y]."""
        return float(self.coefficients[0])

    @property
    def variance(self) -> float:
        """Variance of the expansion [unit of y squared]."""
        return float(np.sum(self.coefficients[1:] ** 2))

    @property
    def degree(self) -> int:
        """Highest total degree among the terms [1]."""
        return int(self.indices.sum(axis=1).max())

    def __call__(self, xi: ArrayLike) -> Array:
        """Evaluate the expansion at independent standard normals ``xi`` (n, d) [1]."""
        psi = design_matrix(np.atleast_2d(np.asarray(xi, dtype=float)), self.indices,
                            self.families)  # type: ignore[arg-type]
        return psi @ self.coefficients


# ---------------------------------------------------------------------------------------------
# Basis
# ---------------------------------------------------------------------------------------------


def hermite_orthonormal(x: ArrayLike, degree: int) -> Array:
    """Orthonormal probabilists' Hermite polynomials ``psi_0 .. psi_degree`` at ``x``.

    ``psi_n = He_n / sqrt(n!)`` is orthonormal under the standard normal density. Three-term
    recurrence ``sqrt(n+1) psi_{n+1}(x) = x psi_n(x) - sqrt(n) psi_{n-1}(x)``, from
    ``He_{n+1} = x He_n - n He_{n-1}`` (Abramowitz & Stegun 1964, eq. 22.7.14).

    Parameters
    ----------
    x : standard-normal values, any shape [1]
    degree : highest degree [1], >= 0

    Returns
    -------
    array of shape ``(degree + 1, *x.shape)`` [1]
    """
    x = np.asarray(x, dtype=float)
    out = np.empty((degree + 1, *x.shape))
    out[0] = 1.0
    if degree >= 1:
        out[1] = x
    for n in range(1, degree):
        out[n + 1] = (x * out[n] - math.sqrt(n) * out[n - 1]) / math.sqrt(n + 1)
    return out


def legendre_orthonormal(u: ArrayLike, degree: int) -> Array:
    """Orthonormal Legendre polynomials ``phi_0 .. phi_degree`` at ``u`` in [-1, 1].

    ``phi_n = sqrt(2n + 1) P_n`` is orthonormal under the uniform density on [-1, 1].
    Recurrence ``(n+1) P_{n+1} = (2n+1) u P_n - n P_{n-1}`` (Abramowitz & Stegun 1964,
    eq. 22.7.10). Used for inputs with a uniform marginal, ``u = 2 Phi(xi) - 1``.

    Parameters
    ----------
    u : values in [-1, 1], any shape [1]
    degree : highest degree [1], >= 0

    Returns
    -------
    array of shape ``(degree + 1, *u.shape)`` [1]
    """
    u = np.asarray(u, dtype=float)
    p = np.empty((degree + 1, *u.shape))
    p[0] = 1.0
    if degree >= 1:
        p[1] = u
    for n in range(1, degree):
        p[n + 1] = ((2 * n + 1) * u * p[n] - n * p[n - 1]) / (n + 1)
    return p * np.sqrt(2.0 * np.arange(degree + 1) + 1.0).reshape(-1, *([1] * u.ndim))


Family = Literal["hermite", "legendre"]


def multi_indices(d: int, degree: int, q: float = 1.0) -> IntArray:
    """Multi-indices of a total-degree (q = 1) or hyperbolic (q < 1) truncation.

    Keeps ``a`` with ``(sum_j a_j**q)**(1/q) <= degree`` (Blatman & Sudret 2011, eq. 23 -- from
    memory), sorted by total degree then lexicographically (descending); row 0 is the constant.

    Parameters
    ----------
    d : number of variables [1]
    degree : maximum total degree [1]
    q : hyperbolic norm exponent, 0 < q <= 1 [1]

    Returns
    -------
    int array (m, d) [1]
    """
    if d < 1 or degree < 0 or not 0.0 < q <= 1.0:
        raise ValueError(f"need d >= 1, degree >= 0, 0 < q <= 1; got {d}, {degree}, {q}")
    return np.concatenate(list(_index_levels(d, degree, q)))


def _index_levels(d: int, degree: int, q: float) -> Iterator[IntArray]:
    """The kept multi-indices of total degree 0, 1, ..., degree, one array per degree.

    The q-norm is monotone in each component, so every kept index of degree k + 1 is a kept
    index of degree k plus one unit: each level grows from the previous one.
    """
    prev = np.zeros((1, d), dtype=np.int64)
    yield prev
    eye = np.eye(d, dtype=np.int64)
    weights = (degree + 1) ** np.arange(d, dtype=np.int64) if d * math.log(degree + 1) < 43 \
        else None
    for _ in range(degree):
        nxt = (prev[:, None, :] + eye[None, :, :]).reshape(-1, d)
        if q < 1.0:
            norm = np.sum(nxt.astype(float) ** q, axis=1) ** (1.0 / q)
            nxt = nxt[norm <= degree + 1e-9]
        if weights is not None:
            _, first = np.unique(nxt @ weights, return_index=True)
            nxt = nxt[first]
            nxt = nxt[np.lexsort(nxt.T[::-1])][::-1]
        else:
            nxt = np.unique(nxt, axis=0)[::-1]
        if len(nxt) == 0:
            return
        yield nxt
        prev = nxt


def design_matrix(xi: Array, indices: IntArray,
                  families: Sequence[Family] | None = None) -> Array:
    """Values of the orthonormal products ``psi_a(xi) = prod_j psi_{a_j}(xi_j)`` (n, m) [1].

    Parameters
    ----------
    xi : independent standard normals (n, d) [1]
    indices : multi-indices (m, d) [1]
    families : per input, ``"hermite"`` (in xi_j, default) or ``"legendre"`` (in
        ``2 Phi(xi_j) - 1``, for a uniform marginal)
    """
    xi = np.asarray(xi, dtype=float)
    if xi.ndim != 2 or xi.shape[1] != indices.shape[1]:
        raise ValueError(f"xi must be (n, {indices.shape[1]}), got {xi.shape}")
    top = int(indices.max()) if indices.size else 0
    table = hermite_orthonormal(xi.T, top)  # (top+1, d, n)
    for j, fam in enumerate(families or ()):
        if fam == "legendre":
            table[:, j, :] = legendre_orthonormal(2.0 * ndtr(xi[:, j]) - 1.0, top)
        elif fam != "hermite":
            raise ValueError(f"family must be 'hermite' or 'legendre', got {fam!r}")
    psi = np.ones((xi.shape[0], indices.shape[0]))
    for j in range(indices.shape[1]):
        col = indices[:, j]
        if np.any(col):
            psi *= table[col, j, :].T
    return psi


# ---------------------------------------------------------------------------------------------
# Fitting
# ---------------------------------------------------------------------------------------------


def _loo_from_qr(q: Array, r: Array, y: Array, var_y: Array) -> Array:
    """Corrected leave-one-out error for every column of y given the thin QR of the basis.

    err = mean((e_i / (1 - h_i))^2) / var(y) * T,  T = N/(N-P) (1 + tr(C^-1)/N),
    C = Psi^T Psi / N, so tr(C^-1)/N = ||R^-1||_F^2 (Blatman & Sudret 2010, eqs. 18-21; from
    memory; the correction is Chapelle, Vapnik & Bengio 2002).
    """
    n, p = q.shape
    resid = y - q @ (q.T @ y)
    h = np.sum(q * q, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        loo = np.mean((resid / (1.0 - h)[:, None]) ** 2, axis=0) / var_y
        rinv = scipy.linalg.solve_triangular(r, np.eye(p))
        corr = n / (n - p) * (1.0 + np.sum(rinv * rinv))
    out = loo * corr
    return np.where(np.isfinite(out) & (n > p), out, np.inf)


_AUTO_MAX = 10


def _omp(psi: Array, y: Array, max_terms: int, patience: int) -> tuple[IntArray, Array, float]:
    """Orthogonal matching pursuit (Pati et al. 1993) stopped at the least corrected LOO error.

    The constant term (column 0) enters first. Each step adds the column most correlated with
    the residual, orthogonalised by Gram-Schmidt with one re-orthogonalisation; the corrected
    leave-one-out error is updated in O(n + s^2). The path stops ``patience`` steps after its
    best point or at ``max_terms``; the returned basis is the one at the best point and its
    coefficients are its least-squares fit.
    """
    n, m = psi.shape
    max_terms = min(max_terms, m, n - 2)
    norms = np.sqrt(np.sum(psi * psi, axis=0))
    var_y = float(np.var(y, ddof=1))
    q = np.zeros((n, max_terms))
    r = np.zeros((max_terms, max_terms))
    rinv = np.zeros((max_terms, max_terms))
    qty = np.zeros(max_terms)
    active: list[int] = []
    usable = norms > 0
    h = np.zeros(n)
    resid = y.astype(float).copy()
    best = (math.inf, 0)
    k = 0
    while len(active) < max_terms:
        s = len(active)
        if s == 0:
            k = 0
        else:
            score = np.abs(psi.T @ resid) / np.where(usable, norms, np.inf)
            k = int(np.argmax(score))
            if not usable[k] or score[k] <= 1e-14 * math.sqrt(max(var_y, 1e-300) * n):
                break
        v = psi[:, k].copy()
        rcol = np.zeros(s)
        for _ in range(2):
            c = q[:, :s].T @ v
            v -= q[:, :s] @ c
            rcol += c
        rho = float(np.linalg.norm(v))
        usable[k] = False
        if rho <= 1e-8 * norms[k]:
            continue
        q[:, s] = v / rho
        r[:s, s] = rcol
        r[s, s] = rho
        # inverse of the grown upper-triangular R
        rinv[:s, s] = -rinv[:s, :s] @ rcol / rho
        rinv[s, s] = 1.0 / rho
        qty[s] = q[:, s] @ y
        resid -= qty[s] * q[:, s]
        h += q[:, s] ** 2
        active.append(k)
        p = s + 1
        if p >= 2 and n - p > 0 and var_y > 0:
            with np.errstate(divide="ignore", invalid="ignore"):
                loo = float(np.mean((resid / (1.0 - h)) ** 2)) / var_y
            err = loo * n / (n - p) * (1.0 + float(np.sum(rinv[:p, :p] ** 2)))
            if not np.isfinite(err):
                err = math.inf
            if err < best[0]:
                best = (err, p)
            if p - best[1] >= patience:
                break
    p = best[1] if best[1] > 0 else len(active)
    coef = scipy.linalg.solve_triangular(r[:p, :p], qty[:p])
    return np.asarray(active[:p], dtype=np.int64), coef, float(best[0])


def _auto_degree(d: int, n: int, q: float) -> int:
    """Largest total degree <= _AUTO_MAX whose candidate set has at most 4 n terms (>= 1)."""
    count, deg = 0, 0
    for k, level in enumerate(_index_levels(d, _AUTO_MAX, q)):
        count += len(level)
        if count > 4 * n:
            break
        deg = k
    return max(deg, 1)


def fit_pce(
    xi: ArrayLike,
    y: ArrayLike,
    *,
    max_degree: int | None = None,
    q: float = 1.0,
    method: Method = "omp",
    max_terms: int | None = None,
    families: Sequence[Family] | None = None,
) -> list[PolynomialChaos]:
    """Fit orthonormal Hermite expansions of every output column by least squares.

    ``method="omp"``: a sparse basis per output by orthogonal matching pursuit over the
    candidate set (total degree <= ``max_degree``, hyperbolic norm ``q``), keeping the step with
    the least corrected leave-one-out error (Blatman & Sudret 2010). ``method="ols"``: full
    candidate sets of increasing degree, one QR for all outputs per degree, each output keeping
    the degree with the least corrected leave-one-out error.

    Parameters
    ----------
    xi : independent standard-normal inputs (n, d) [1]
    y : outputs (n,) or (n, k) [unit of y]
    max_degree : highest total degree [1]; default: the largest <= 10 with at most 4 n
        candidate terms
    q : hyperbolic truncation exponent [1] (1 = total degree)
    method : ``"omp"`` or ``"ols"``
    max_terms : cap on the sparse basis size [1]; default n // 2
    families : per input ``"hermite"`` (default) or ``"legendre"`` (see :func:`design_matrix`)

    Returns
    -------
    one :class:`PolynomialChaos` per output column
    """
    xi, y2 = _check_xy(xi, y)
    n, d = xi.shape
    if max_degree is None:
        max_degree = _auto_degree(d, n, q)
    cand = multi_indices(d, max_degree, q)
    fams = tuple(families) if families is not None else ()
    if fams and len(fams) != d:
        raise ValueError(f"families must name {d} families, got {len(fams)}")
    psi = design_matrix(xi, cand, families)
    out: list[PolynomialChaos] = []
    if method == "omp":
        cap = max_terms if max_terms is not None else max(2, n // 2)
        patience = max(10, cap // 10)
        for col in y2.T:
            active, coef, err = _omp(psi, col, cap, patience)
            order = np.argsort(active, kind="stable")
            out.append(PolynomialChaos(_ro(cand[active[order]]), _frozen(coef[order]),
                                       err, n, fams))
        return out
    if method != "ols":
        raise ValueError(f"method must be 'omp' or 'ols', got {method!r}")
    degrees = cand.sum(axis=1)
    var_y = np.var(y2, axis=0, ddof=1)
    best_err = np.full(y2.shape[1], np.inf)
    best_coef: list[Array | None] = [None] * y2.shape[1]
    best_p = np.zeros(y2.shape[1], dtype=int)
    for p in range(1, max_degree + 1):
        cols = np.flatnonzero(degrees <= p)
        if cols.size >= n - 1:
            break
        qm, rm = np.linalg.qr(psi[:, cols])
        errs = _loo_from_qr(qm, rm, y2, var_y)
        coef = scipy.linalg.solve_triangular(rm, qm.T @ y2)
        for j in map(int, np.flatnonzero(errs < best_err)):
            best_err[j] = errs[j]
            best_coef[j] = coef[:, j]
            best_p[j] = p
    for j in range(y2.shape[1]):
        cj = best_coef[j]
        if cj is None:
            raise ValueError(f"too few runs ({n}) for even a degree-1 basis in {d} inputs")
        cols = np.flatnonzero(degrees <= best_p[j])
        out.append(PolynomialChaos(_ro(cand[cols]), _frozen(cj), float(best_err[j]), n, fams))
    return out


def _ro(a: IntArray) -> IntArray:
    a = np.array(a, dtype=np.int64)
    a.setflags(write=False)
    return a


def _check_xy(xi: ArrayLike, y: ArrayLike) -> tuple[Array, Array]:
    xi = np.asarray(xi, dtype=float)
    y2 = np.asarray(y, dtype=float)
    if xi.ndim != 2:
        raise ValueError(f"inputs must be a 2-D array (n, d), got shape {xi.shape}")
    if y2.ndim == 1:
        y2 = y2[:, None]
    if y2.ndim != 2 or y2.shape[0] != xi.shape[0]:
        raise ValueError(f"outputs must be (n,) or (n, k) with n = {xi.shape[0]}, got {y2.shape}")
    if not (np.all(np.isfinite(xi)) and np.all(np.isfinite(y2))):
        raise ValueError("inputs and outputs must be finite (cap 'never' values first)")
    return xi, y2


def _bootstrap_coefficients(psi: Array, y: Array, rng: np.random.Generator,
                            n_boot: int) -> Array:
    """Least-squares coefficients refitted on ``n_boot`` row resamples (s, n_boot).

    The weighted normal equations ``Psi^T W Psi c = Psi^T W y`` (W = resampling counts) are
    formed for all resamples with one matrix product and solved in a batch; a resample whose
    Gram matrix is singular is refitted with ``lstsq`` on its rows.
    """
    n, s = psi.shape
    syrk = scipy.linalg.blas.get_blas_funcs("syrk", (psi,))
    out = np.empty((s, n_boot))
    batched = n * s * s <= 4_000_000
    outer = (psi[:, :, None] * psi[:, None, :]).reshape(n, s * s) if batched else psi
    chunk = max(1, min(n_boot, 4_000_000 // max(1, n * s)))
    for lo in range(0, n_boot, chunk):
        hi = min(n_boot, lo + chunk)
        rows = rng.integers(0, n, size=(hi - lo, n))
        w = np.zeros((hi - lo, n))
        np.add.at(w, (np.arange(hi - lo)[:, None], rows), 1.0)
        if batched:
            gram = (w @ outer).reshape(hi - lo, s, s)
        else:  # upper triangle only (BLAS syrk), which is all cho_factor reads
            gram = np.stack([syrk(1.0, psi * np.sqrt(wb)[:, None], trans=1) for wb in w])
        rhs = (w * y) @ psi
        for b in range(hi - lo):
            try:
                cf = scipy.linalg.cho_factor(gram[b], lower=False, check_finite=False)
                if np.min(np.abs(np.diag(cf[0]))) < 1e-7 * math.sqrt(n):
                    raise np.linalg.LinAlgError
                out[:, lo + b] = scipy.linalg.cho_solve(cf, rhs[b], check_finite=False)
            except (np.linalg.LinAlgError, scipy.linalg.LinAlgError):
                out[:, lo + b] = np.linalg.lstsq(psi[rows[b]], y[rows[b]], rcond=None)[0]
    return out


# ---------------------------------------------------------------------------------------------
# Indices from coefficients: independent variables
# ---------------------------------------------------------------------------------------------


def independent_indices(
    indices: IntArray, coefficients: ArrayLike, groups: Sequence[Sequence[int]] = ()
) -> dict[str, Array]:
    """Sobol and Shapley indices of independent variables from an orthonormal expansion.

    With ``D = sum_{a != 0} c_a^2`` (Sudret 2008, eqs. 38-41):
    first order ``S_j = sum_{supp a = {j}} c_a^2 / D``; total ``S_Tj = sum_{a_j > 0} c_a^2 / D``;
    Shapley effect ``Sh_j = sum_{a_j > 0} c_a^2 / (|supp a| D)`` (Owen 2014, interactions
    shared equally); for a group ``g``: closed first order ``sum_{supp a subset g}``, total
    ``sum_{supp a meets g}``.

    Parameters
    ----------
    indices : multi-indices (m, d) [1]
    coefficients : (m,) or (m, r) for r coefficient sets at once [unit of y]
    groups : lists of variable positions

    Returns
    -------
    dict with ``first``, ``total``, ``shapley`` (d,) or (d, r) and ``group_first``,
    ``group_total``, ``group_shapley`` (g,) or (g, r), ``variance`` () or (r,)
    [1; variance in unit of y squared]
    """
    c = np.asarray(coefficients, dtype=float)
    sq = c * c
    nz = indices > 0
    size = nz.sum(axis=1)
    keep = size > 0
    sq2 = sq.reshape(sq.shape[0], -1)[keep]
    nzk = nz[keep].astype(float)
    sizek = size[keep].astype(float)
    var = sq2.sum(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = np.where(var > 0, 1.0 / var, np.nan)
    single = nzk * (sizek == 1)[:, None]
    first = (single.T @ sq2) * inv
    total = (nzk.T @ sq2) * inv
    shap = ((nzk / sizek[:, None]).T @ sq2) * inv
    gf, gt, gs = [], [], []
    for g in groups:
        inside = nzk[:, list(g)].sum(axis=1)
        gf.append(((inside == sizek).astype(float) @ sq2) * inv)
        gt.append(((inside > 0).astype(float) @ sq2) * inv)
        gs.append(shap[list(g)].sum(axis=0))
    shape = sq.shape[1:]
    ng = len(groups)
    return {
        "first": first.reshape(-1, *shape),
        "total": total.reshape(-1, *shape),
        "shapley": shap.reshape(-1, *shape),
        "group_first": np.array(gf).reshape(ng, *shape),
        "group_total": np.array(gt).reshape(ng, *shape),
        "group_shapley": np.array(gs).reshape(ng, *shape),
        "variance": var.reshape(shape),
    }


# ---------------------------------------------------------------------------------------------
# Correlated inputs: exact conditional variances from the expansion
# ---------------------------------------------------------------------------------------------


def _gauss_hermite(npts: int) -> tuple[Array, Array]:
    t, w = np.polynomial.hermite_e.hermegauss(npts)
    return t, w / w.sum()


def _plane_maps(g: Array, top: int) -> list[Array]:
    """Coefficient maps of a 2-D orthogonal change of variables on each chaos degree.

    For ``(u', v') = g (u, v)``: ``psi_a(u) psi_{n-a}(v) = sum_b W_n[a, b] psi_b(u')
    psi_{n-b}(v')`` for n = 0..top. ``W_n`` is computed exactly by a tensor Gauss-Hermite rule
    with top+1 nodes per axis (exact for degree <= 2 top + 1 in each variable).
    """
    t, w = _gauss_hermite(top + 1)
    u, v = (a.ravel() for a in np.meshgrid(t, t, indexing="ij"))
    ww = np.outer(w, w).ravel()
    u2, v2 = g[0, 0] * u + g[0, 1] * v, g[1, 0] * u + g[1, 1] * v
    hu, hv = hermite_orthonormal(u, top), hermite_orthonormal(v, top)
    hu2, hv2 = hermite_orthonormal(u2, top), hermite_orthonormal(v2, top)
    maps = []
    for n in range(top + 1):
        a = np.arange(n + 1)
        left = hu[a] * hv[n - a] * ww  # (n+1, Q)
        right = hu2[a] * hv2[n - a]
        maps.append(left @ right.T)
    return maps


def _givens(r: Array) -> tuple[list[tuple[int, int, Array]], Array]:
    """Plane rotations G_1..G_m with G_m ... G_1 R = D (diagonal of +-1) for orthogonal R."""
    rw = r.copy()
    b = rw.shape[0]
    rots: list[tuple[int, int, Array]] = []
    for col in range(b - 1):
        for row in range(b - 1, col, -1):
            a0, b0 = rw[row - 1, col], rw[row, col]
            if b0 == 0.0:
                continue
            rad = math.hypot(a0, b0)
            g = np.array([[a0 / rad, b0 / rad], [-b0 / rad, a0 / rad]])
            rw[[row - 1, row], :] = g @ rw[[row - 1, row], :]
            rots.append((row - 1, row, g))
    return rots, np.sign(np.diag(rw))


class _Closure:
    """Closure of a multi-index set under orthogonal changes of variables inside blocks.

    An orthogonal change of the variables of a block keeps each term's degree in that block and
    its other components, so the set of all indices with the same per-block degrees and the same
    components outside correlated blocks carries every rotated expansion exactly.
    """

    def __init__(self, indices: IntArray, blocks: list[IntArray]) -> None:
        d = indices.shape[1]
        self.blocks = blocks
        self.top = int(indices.sum(axis=1).max()) if indices.size else 0
        in_block = np.zeros(d, dtype=bool)
        for blk in blocks:
            in_block[blk] = True
        self.free = np.flatnonzero(~in_block)
        comps: dict[tuple[int, int], IntArray] = {}
        seen: dict[tuple[int, ...], int] = {}
        rows: list[IntArray] = []
        profiles = {tuple(r[self.free]) + tuple(int(r[blk].sum()) for blk in blocks)
                    for r in indices}
        for prof in sorted(profiles):
            parts = []
            for i, blk in enumerate(blocks):
                k = prof[len(self.free) + i]
                key = (k, len(blk))
                if key not in comps:
                    comps[key] = _compositions(k, len(blk))
                parts.append(comps[key])
            for combo in product(*[range(len(p)) for p in parts]):
                row = np.zeros(d, dtype=np.int64)
                row[self.free] = prof[: len(self.free)]
                for blk, part, ci in zip(blocks, parts, combo, strict=True):
                    row[blk] = part[ci]
                t = tuple(int(v) for v in row)
                if t not in seen:
                    seen[t] = len(rows)
                    rows.append(row)
        self.indices = np.array(rows, dtype=np.int64).reshape(-1, d)
        self.position = seen
        self._pairs: dict[tuple[int, int], list[IntArray]] = {}

    def embed(self, indices: IntArray, coefficients: Array) -> Array:
        """Coefficients (m, r) placed on the closed set (m*, r); the constant set to zero."""
        out = np.zeros((len(self.indices), coefficients.shape[1]))
        for row, c in zip(indices, coefficients, strict=True):
            if row.any():
                out[self.position[tuple(int(v) for v in row)]] = c
        return out

    def pair_table(self, i: int, j: int) -> list[IntArray]:
        """For columns i, j: per n >= 1, rows (G, n+1) of term positions with a_i = 0..n."""
        if (i, j) not in self._pairs:
            a = self.indices
            tables: list[IntArray] = [np.zeros((0, 1), dtype=np.int64)]
            n_all = a[:, i] + a[:, j]
            for n in range(1, self.top + 1):
                sel = np.flatnonzero(n_all == n)
                if sel.size == 0:
                    tables.append(np.zeros((0, n + 1), dtype=np.int64))
                    continue
                rest = a[sel].copy()
                rest[:, [i, j]] = 0
                _, group = np.unique(rest, axis=0, return_inverse=True)
                tab = np.full((int(group.max()) + 1, n + 1), -1, dtype=np.int64)
                tab[group.ravel(), a[sel, i]] = sel
                if np.any(tab < 0):
                    raise RuntimeError("multi-index set not closed under plane rotations")
                tables.append(tab)
            self._pairs[(i, j)] = tables
        return self._pairs[(i, j)]

    def rotate(self, coef: Array, block: IntArray, rmat: Array) -> Array:
        """Coefficients of ``f`` in ``xi'`` where ``xi'_block = rmat xi_block``.

        Writes ``rmat = G_1^T ... G_m^T D`` (plane rotations) and applies the sign flips
        ``psi_n(-x) = (-1)^n psi_n(x)`` and then each plane map (:func:`_plane_maps`).
        """
        out = coef.copy()
        rots, signs = _givens(rmat)
        for col, sgn in zip(block, signs, strict=True):
            if sgn < 0:
                out *= np.where(self.indices[:, col] % 2 == 1, -1.0, 1.0)[:, None]
        for i, j, g in reversed(rots):
            maps = _plane_maps(g.T, self.top)
            tables = self.pair_table(int(block[i]), int(block[j]))
            for n in range(1, self.top + 1):
                tab = tables[n]
                if tab.size:
                    out[tab] = np.einsum("gac,ab->gbc", out[tab], maps[n])
        return out


def _compositions(k: int, b: int) -> IntArray:
    """All non-negative integer vectors of length b summing to k (C(k+b-1, b-1) rows)."""
    if b == 1:
        return np.array([[k]], dtype=np.int64)
    rows = [np.concatenate([[first], rest]) for first in range(k, -1, -1)
            for rest in _compositions(k - first, b - 1)]
    return np.array(rows, dtype=np.int64)


def _blocks_of(corr: Array) -> list[IntArray]:
    """Blocks of mutually dependent inputs (connected components of corr != 0), size >= 2."""
    adj = scipy.sparse.csr_matrix((corr != 0) & ~np.eye(len(corr), dtype=bool))
    nb, label = connected_components(adj, directed=False)
    return [np.flatnonzero(label == b) for b in range(nb) if np.sum(label == b) > 1]


def _block_rotation(corr: Array, block: IntArray, order: IntArray) -> Array:
    """Orthogonal R with ``xi'_order = R xi_block``: Cholesky variables in a new order.

    ``xi_block = L^-1 z_block`` (natural order), ``xi' = L_o^-1 z_order`` (Cholesky of the
    reordered block), so ``R = L_o^-1 P L``; the first k components of ``xi'`` generate the
    same sigma-algebra as the first k inputs of ``order``.
    """
    cb = corr[np.ix_(block, block)]
    pos = np.searchsorted(block, order)
    lo = np.linalg.cholesky(cb[np.ix_(pos, pos)])
    return scipy.linalg.solve_triangular(np.asarray(lo), np.linalg.cholesky(cb)[pos], lower=True)


def _subset_variances(clos: _Closure, coef: Array, corr: Array) -> Array:
    """``V_u = Var(E[f | z_u])`` for all 2**d subsets u (bit j = input j), per column (2**d, r).

    For each choice of ``u & B`` in every correlated block B the expansion is rotated into the
    block's Cholesky variables with ``u & B`` first, so that ``E[. | z_u]`` keeps exactly the
    terms supported on those leading variables and on the chosen independent inputs. The sum of
    squared coefficients per support pattern of the independent inputs is then turned into
    sums over all their subsets at once by the subset-sum (zeta) transform.
    """
    d = clos.indices.shape[1]
    free = clos.free
    nf = len(free)
    a = clos.indices
    fmask = np.zeros(len(a), dtype=np.int64)
    for p, j in enumerate(free):
        fmask |= (a[:, j] > 0).astype(np.int64) << p
    spread = np.zeros(1 << nf, dtype=np.int64)
    ar = np.arange(1 << nf)
    for p, j in enumerate(free):
        spread |= ((ar >> p) & 1) << int(j)
    scatter = scipy.sparse.csr_matrix(
        (np.ones(len(a)), (fmask, np.arange(len(a)))), shape=(1 << nf, len(a)))
    out = np.zeros((1 << d, coef.shape[1]))

    def recurse(level: int, c: Array, keep: NDArray[np.bool_], bits: int) -> None:
        if level == len(clos.blocks):
            w = np.asarray(scatter @ np.where(keep[:, None], c * c, 0.0))
            for p in range(nf):
                wv = w.reshape(-1, 2, 1 << p, w.shape[1])
                wv[:, 1] += wv[:, 0]
            out[spread | bits] = w
            return
        blk = clos.blocks[level]
        for sub in range(1 << len(blk)):
            inside = np.array([(sub >> i) & 1 for i in range(len(blk))], dtype=bool)
            order = np.concatenate([blk[inside], blk[~inside]])
            rmat = _block_rotation(corr, blk, order)
            rc = clos.rotate(c, blk, rmat)
            k = int(inside.sum())
            ok = keep & np.all(a[:, blk[k:]] == 0, axis=1)
            mask = int(np.sum(1 << blk[inside].astype(np.int64))) if k else 0
            recurse(level + 1, rc, ok, bits | mask)

    recurse(0, coef, np.ones(len(a), dtype=bool), 0)
    return out


def _prefix_variances(clos: _Closure, coef: Array, corr: Array, order: IntArray,
                      cache: dict[tuple[int, ...], Array] | None = None) -> Array:
    """``V`` of every leading set of ``order`` (d+1, r): ``V[s] = Var(E[f | z_order[:s]])``.

    ``cache`` keeps rotated coefficients by the within-block orders already seen.
    """
    d = clos.indices.shape[1]
    pos = np.empty(d, dtype=np.int64)
    pos[order] = np.arange(d)
    a = clos.indices
    c = coef
    where = np.where(a > 0, pos[None, :], -1)
    key: tuple[int, ...] = ()
    for blk in clos.blocks:
        sub = order[np.isin(order, blk)]
        key += (-1, *map(int, sub))
        if cache is not None and key in cache:
            c = cache[key]
        else:
            c = clos.rotate(c, blk, _block_rotation(corr, blk, sub))
            if cache is not None:
                cache[key] = c
        # rotated column i of the block is the i-th block member in `order`
        where[:, blk] = np.where(a[:, blk] > 0, pos[sub][None, :], -1)
    last = where.max(axis=1)
    acc = np.zeros((d + 1, c.shape[1]))
    np.add.at(acc, last + 1, c * c)
    acc[0] = 0.0
    return np.cumsum(acc, axis=0)


def _shapley_exact(v: Array, d: int) -> Array:
    """Shapley values of the game u -> v[u] over all subsets (Shapley 1953) (d, r)."""
    out = np.empty((d, v.shape[1]))
    weights = np.array([math.factorial(s) * math.factorial(d - s - 1) / math.factorial(d)
                        for s in range(d)])
    pc_all = np.zeros(1 << d, dtype=np.int64)
    for j in range(d):
        pc_all += (np.arange(1 << d) >> j) & 1
    for j in range(d):
        vv = v.reshape(-1, 2, 1 << j, v.shape[1])
        diff = (vv[:, 1] - vv[:, 0]).reshape(-1, v.shape[1])
        pc = pc_all.reshape(-1, 2, 1 << j)[:, 0].ravel()
        out[j] = weights[pc] @ diff
    return out


def correlated_indices(
    expansion: PolynomialChaos,
    corr: ArrayLike,
    *,
    coefficients: ArrayLike | None = None,
    groups: Sequence[Sequence[int]] = (),
    rng: np.random.Generator | None = None,
    n_orderings: int = 2000,
) -> dict[str, Array]:
    """Full first-order, independent total and Shapley indices of correlated inputs.

    The expansion is in ``xi = L^-1 z`` (Cholesky in the natural order). For a subset u of
    inputs, ``V_u = Var(E[Y | z_u])`` is read off the same expansion re-expressed in the
    Cholesky variables of an ordering that puts u first: the change of variables between two
    Cholesky orderings is orthogonal, an orthogonal change keeps every chaos degree, and the
    first |u| new variables generate the sigma-algebra of ``z_u``, so ``V_u`` is the sum of
    squared re-expressed coefficients supported on them. This is the "refit in several
    Cholesky orderings" scheme done exactly, without refitting: on a total-degree basis a
    refit on the same sample returns the same numbers. Orderings only matter inside blocks of
    mutually correlated inputs, so the work is (number of subsets of each block) rotations
    plus one subset-sum transform over the independent inputs.

    - full first order ``V_{j} / V`` and independent total ``(V - V_{-j}) / V`` (Mara,
      Tarantola & Annoni 2015);
    - Shapley effects (Owen 2014; Song, Nelson & Staum 2016) from all 2**d subsets when
      d <= :data:`MAX_EXACT_SHAPLEY_INPUTS` (exact given the expansion), otherwise the average
      marginal contribution over ``n_orderings`` random orderings (Castro, Gomez & Tejada 2009;
      each ordering gives all its d contributions from one rotation);
    - groups: ``V_g / V``, ``(V - V_{-g}) / V`` and the sum of the members' Shapley effects.

    Parameters
    ----------
    expansion : fitted expansion in ``xi = L^-1 z`` [unit of y]
    corr : normal-space correlation matrix C (d, d) [1]
    coefficients : other coefficient sets on the same basis (m, r), e.g. bootstrap refits
        [unit of y]; default the expansion's own
    groups : lists of input positions
    rng : random generator, needed only above MAX_EXACT_SHAPLEY_INPUTS inputs
    n_orderings : random orderings for Shapley above MAX_EXACT_SHAPLEY_INPUTS inputs [1]

    Returns
    -------
    dict with ``full_first``, ``independent_total``, ``shapley`` (d, r), ``group_first``,
    ``group_total``, ``group_shapley`` (g, r) [1] and ``variance`` (r,) [unit of y squared]
    """
    c = np.asarray(expansion.coefficients if coefficients is None else coefficients, float)
    c2 = c.reshape(c.shape[0], -1)
    c_mat = _check_corr(corr, expansion.indices.shape[1])
    d = c_mat.shape[0]
    blocks = _blocks_of(c_mat)
    fams = expansion.families
    if fams and any(fams[int(j)] != "hermite" for blk in blocks for j in blk):
        raise ValueError("correlated inputs need Hermite polynomials (rotation invariance)")
    clos = _Closure(np.asarray(expansion.indices), blocks)
    coef = clos.embed(np.asarray(expansion.indices), c2)
    var = np.sum(coef * coef, axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = np.where(var > 0, 1.0 / var, np.nan)
    full_all = (1 << d) - 1
    if d <= MAX_EXACT_SHAPLEY_INPUTS:
        v = _subset_variances(clos, coef, c_mat)

        def vset(members: Sequence[int]) -> Array:
            return v[int(sum(1 << int(m) for m in members))]

        shap = _shapley_exact(v, d)
        first = np.array([v[1 << j] for j in range(d)])
        indep = np.array([var - v[full_all ^ (1 << j)] for j in range(d)])
    else:
        if rng is None:
            raise ValueError(f"rng is needed for Shapley effects of more than "
                             f"{MAX_EXACT_SHAPLEY_INPUTS} correlated inputs")
        shap = np.zeros((d, c2.shape[1]))
        cache: dict[tuple[int, ...], Array] = {}
        for _ in range(n_orderings):
            order = rng.permutation(d)
            pv = _prefix_variances(clos, coef, c_mat, order, cache)
            shap[order] += np.diff(pv, axis=0)
        shap /= n_orderings
        first = np.empty((d, c2.shape[1]))
        indep = np.empty((d, c2.shape[1]))
        for j in range(d):
            order = np.roll(np.arange(d), -j)
            pv = _prefix_variances(clos, coef, c_mat, order, cache)
            first[j] = pv[1]
            indep[(j - 1) % d] = var - pv[d - 1]

        def vset(members: Sequence[int]) -> Array:
            mem = np.asarray(members, dtype=np.int64)
            order = np.concatenate([mem, np.setdiff1d(np.arange(d), mem)])
            return _prefix_variances(clos, coef, c_mat, order)[len(mem)]

    gf, gt, gs = [], [], []
    for g in groups:
        gf.append(vset(list(g)) * inv)
        rest = [j for j in range(d) if j not in set(g)]
        gt.append((var - vset(rest)) * inv)
        gs.append(shap[list(g)].sum(axis=0) * inv)
    shape = c.shape[1:]
    ng = len(groups)
    return {
        "full_first": (first * inv).reshape(d, *shape),
        "independent_total": (indep * inv).reshape(d, *shape),
        "shapley": (shap * inv).reshape(d, *shape),
        "group_first": np.array(gf).reshape(ng, *shape),
        "group_total": np.array(gt).reshape(ng, *shape),
        "group_shapley": np.array(gs).reshape(ng, *shape),
        "variance": var.reshape(shape),
    }


def _check_corr(corr: ArrayLike | None, d: int) -> Array:
    if corr is None:
        return np.eye(d)
    c = np.asarray(corr, dtype=float)
    if c.shape != (d, d):
        raise ScenarioError.single("correlation", c.shape, f"a {d} x {d} matrix")
    if not (np.allclose(c, c.T, atol=1e-12) and np.allclose(np.diag(c), 1.0, atol=1e-12)):
        raise ScenarioError.single("correlation", "matrix", "symmetric with a unit diagonal",
                                   found_text="a non-symmetric matrix or diagonal != 1")
    try:
        np.linalg.cholesky(c)
    except np.linalg.LinAlgError:
        raise ScenarioError.single(
            "correlation", "matrix", "positive definite",
            found_text=f"smallest eigenvalue {np.linalg.eigvalsh(c).min():.3g}") from None
    return c


# ---------------------------------------------------------------------------------------------
# Public PCE entry point
# ---------------------------------------------------------------------------------------------


def _group_positions(groups: Mapping[str, Sequence[int | str]] | None,
                     names: Sequence[str]) -> tuple[tuple[str, ...], list[list[int]]]:
    if not groups:
        return (), []
    pos = {n: i for i, n in enumerate(names)}
    out: list[list[int]] = []
    for gname, members in groups.items():
        idx = []
        for m in members:
            if isinstance(m, str):
                if m not in pos:
                    raise ScenarioError.single(f"sensitivity.groups.{gname}", m,
                                               f"one of the inputs {list(names)}")
                idx.append(pos[m])
            elif isinstance(m, int | np.integer) and 0 <= int(m) < len(names):
                idx.append(int(m))
            else:
                raise ScenarioError.single(f"sensitivity.groups.{gname}", m,
                                           f"an input name or a position 0..{len(names) - 1}")
        if len(set(idx)) != len(idx) or not idx:
            raise ScenarioError.single(f"sensitivity.groups.{gname}", list(members),
                                       "distinct inputs, at least one")
        out.append(idx)
    return tuple(groups), out


def _interval(samples: Array, confidence: float) -> tuple[Array, Array]:
    alpha = (1.0 - confidence) / 2.0
    if samples.shape[-1] == 0:
        nan = np.full(samples.shape[:-1], np.nan)
        return nan, nan
    lo, hi = np.quantile(samples, [alpha, 1.0 - alpha], axis=-1)
    return lo, hi


def sobol_pce(
    z: ArrayLike,
    y: ArrayLike,
    *,
    names: Sequence[str],
    rng: np.random.Generator,
    corr: ArrayLike | None = None,
    groups: Mapping[str, Sequence[int | str]] | None = None,
    max_degree: int | None = None,
    q: float = 1.0,
    method: Method = "omp",
    families: Sequence[Family] | None = None,
    n_bootstrap: int = 200,
    confidence: float = 0.95,
) -> list[SensitivityResult]:
    """Sobol indices, Shapley effects and their bootstrap intervals from a Hermite expansion.

    The outputs are expanded in the independent variables ``xi = L^-1 z`` (:func:`fit_pce`); the
    indices come from the squared coefficients (Sudret 2008) for independent inputs
    (:func:`independent_indices`) and from exact conditional variances for correlated ones
    (:func:`correlated_indices`). Bootstrap: the chosen basis of each output is refitted on
    ``n_bootstrap`` resamples of the rows and every index recomputed; intervals are the
    percentiles at ``confidence``. Needs no model runs beyond ``y``.

    Parameters
    ----------
    z : correlated standard normals of the inputs (n, d) [1] (= xi when corr is None)
    y : model outputs (n,) or (n, k) [unit of y]; finite (cap "never" values first)
    names : input names (d)
    rng : seeded generator for the bootstrap
    corr : normal-space correlation matrix C (d, d) [1]; None = independent
    groups : named blocks of inputs (names or positions), e.g. ``{"stresses": ["SH", "Sh"]}``
    max_degree : highest total degree [1] (default from the sample size, see :func:`fit_pce`)
    q : hyperbolic truncation exponent [1]
    method : ``"omp"`` (sparse, default) or ``"ols"`` (full basis, degree chosen by LOO)
    families : per input ``"hermite"`` (default) or ``"legendre"`` (a uniform marginal: the
        output is then polynomial in the input itself); Legendre only for inputs not
        correlated with any other
    n_bootstrap : bootstrap refits [1] (0 = no intervals)
    confidence : two-sided level of the percentile intervals [1]

    Returns
    -------
    one :class:`SensitivityResult` per output column
    """
    z_arr, y2 = _check_xy(z, y)
    n, d = z_arr.shape
    if len(names) != d:
        raise ScenarioError.single("sensitivity.names", list(names), f"{d} input names")
    group_names, group_pos = _group_positions(groups, names)
    c_mat = _check_corr(corr, d)
    correlated = not np.array_equal(c_mat, np.eye(d))
    lmat = np.linalg.cholesky(c_mat)
    xi = scipy.linalg.solve_triangular(lmat, z_arr.T, lower=True).T if correlated else z_arr
    if families is not None:
        coupled = {int(j) for blk in _blocks_of(c_mat) for j in blk}
        bad = [names[j] for j, f in enumerate(families) if f != "hermite" and j in coupled]
        if bad:
            raise ScenarioError.single("sensitivity.families", bad,
                                       "Hermite polynomials for correlated inputs")
    results = []
    with blas_single_thread():
        expansions = fit_pce(xi, y2, max_degree=max_degree, q=q, method=method,
                             families=families)
        for col, exp in enumerate(expansions):
            coef = exp.coefficients[:, None]
            if n_bootstrap > 0:
                psi = design_matrix(xi, exp.indices, families)
                boot = _bootstrap_coefficients(psi, y2[:, col], rng, n_bootstrap)
                coef = np.concatenate([coef, boot], axis=1)
            if correlated:
                ind = correlated_indices(exp, c_mat, coefficients=coef, groups=group_pos,
                                         rng=rng)
                first, total = ind["full_first"], ind["independent_total"]
            else:
                ind = independent_indices(exp.indices, coef, group_pos)
                first, total = ind["first"], ind["total"]
            shap = ind["shapley"]
            f_lo, f_hi = _interval(first[:, 1:], confidence)
            t_lo, t_hi = _interval(total[:, 1:], confidence)
            s_lo, s_hi = _interval(shap[:, 1:], confidence)
            results.append(SensitivityResult(
                names=tuple(names),
                first=_frozen(first[:, 0]), total=_frozen(total[:, 0]),
                first_low=_frozen(f_lo), first_high=_frozen(f_hi),
                total_low=_frozen(t_lo), total_high=_frozen(t_hi),
                shapley=_frozen(shap[:, 0]),
                shapley_low=_frozen(s_lo), shapley_high=_frozen(s_hi),
                full_first=_frozen(first[:, 0]), independent_total=_frozen(total[:, 0]),
                loo_error=exp.loo_error, method="pce", n_runs=n, output=col,
                mean=exp.mean, variance=exp.variance, confidence=confidence,
                n_bootstrap=n_bootstrap, n_terms=len(exp.indices), degree=exp.degree,
                correlated=correlated, group_names=group_names,
                group_first=_frozen(ind["group_first"][:, 0].reshape(-1)),
                group_total=_frozen(ind["group_total"][:, 0].reshape(-1)),
                group_shapley=_frozen(ind["group_shapley"][:, 0].reshape(-1)),
            ))
    return results


# ---------------------------------------------------------------------------------------------
# Monte Carlo on the model
# ---------------------------------------------------------------------------------------------


def _pick_freeze(fa: Array, fb: Array, fab: Array) -> tuple[Array, Array, Array]:
    """First-order and total indices from pick-freeze evaluations.

    fa, fb (n, k); fab (d, n, k) with column j of A replaced by column j of B.
    First order ``V_j = mean(f(B) (f(AB_j) - f(A)))`` (Saltelli et al. 2010, Table 2 (b)),
    total ``V_Tj = mean((f(A) - f(AB_j))^2) / 2`` (Jansen 1999; Saltelli et al. 2010 Table 2
    (f)), both divided by the variance of the pooled f(A), f(B).
    """
    var = np.var(np.concatenate([fa, fb]), axis=0, ddof=1)
    first = np.mean(fb[None] * (fab - fa[None]), axis=1) / var
    total = 0.5 * np.mean((fa[None] - fab) ** 2, axis=1) / var
    return first, total, var


def given_data_first_order(
    x: ArrayLike, y: ArrayLike, *, names: Sequence[str], rng: np.random.Generator,
    n_bootstrap: int = 100, confidence: float = 0.95, loo_error: float = math.nan,
) -> SensitivityResult:
    """Full first-order indices Var(E[Y|x_j])/Var(Y) from a sample alone (given data).

    For each input the sample is cut into ``M = round(sqrt(n))`` equal-count classes of
    ``x_j`` (ranks, so any monotone transform of an input gives the same answer); the
    variance of the class means, less its sampling bias ``(M - 1)/n`` times the mean
    within-class variance, over Var(Y). It needs no model runs, holds for correlated inputs
    (the index is then the *full* first-order one: the effect of ``x_j`` with everything
    correlated with it) and for non-smooth outputs, where a polynomial surrogate fails.
    Total indices and Shapley effects are not available from it (NaN). The bias-corrected
    estimate of an index near zero can come out slightly negative from sampling noise; such
    values (and interval ends) are reported as 0, which this docstring and the memo state.

    References
    ----------
    Plischke, E., Borgonovo, E. & Smith, C.L. (2013) Global sensitivity measures from given
    data, Eur. J. Oper. Res. 226, 536-550 (class-mean estimator; the bias term derived from
    the one-way analysis of variance).

    Parameters
    ----------
    x : inputs (n, d) [any unit; only ranks are used]
    y : output (n,) [unit of y]
    names : input names (d)
    rng : for the bootstrap over rows
    n_bootstrap : bootstrap resamples for the intervals [1]
    confidence : two-sided level of the percentile intervals [1]
    loo_error : the surrogate's leave-one-out error that led here, recorded [1]
    """
    xa = np.asarray(x, dtype=float)
    ya = np.asarray(y, dtype=float)
    n, d = xa.shape
    m_cls = max(2, int(round(math.sqrt(n))))
    classes = np.argsort(np.argsort(xa, axis=0, kind="stable"), axis=0) * m_cls // n

    def estimate(rows: NDArray[np.intp]) -> Array:
        yy = ya[rows]
        var = yy.var()
        out = np.full(d, np.nan)
        if not var > 0:
            return out
        for j in range(d):
            c = classes[rows, j]
            cnt = np.bincount(c, minlength=m_cls).astype(float)
            tot = np.bincount(c, weights=yy, minlength=m_cls)
            sq = np.bincount(c, weights=yy * yy, minlength=m_cls)
            used = cnt > 0
            mean = np.where(used, tot / np.where(used, cnt, 1.0), 0.0)
            between = float(np.sum(cnt * (mean - yy.mean()) ** 2)) / rows.size
            within = float(np.sum(sq - cnt * mean**2)) / max(rows.size - int(used.sum()), 1)
            out[j] = (between - (int(used.sum()) - 1) / rows.size * within) / var
        return out

    raw = estimate(np.arange(n))
    first = np.maximum(raw, 0.0)
    if n_bootstrap > 0:
        # normal interval from the bootstrap standard error: resampling with replacement
        # biases this estimator upward (repeated rows shrink the within-class variance), so
        # percentile intervals can miss the estimate itself
        boot = np.array([estimate(np.asarray(rng.integers(0, n, n), dtype=np.intp))
                         for _ in range(n_bootstrap)])
        z = float(scipy.special.ndtri(0.5 + confidence / 2.0))
        half = z * np.nanstd(boot, axis=0, ddof=1)
        low, high = np.maximum(raw - half, 0.0), np.maximum(raw + half, 0.0)
    else:
        low = high = np.full(d, np.nan)
    nan = np.full(d, np.nan)
    return SensitivityResult(
        names=tuple(names), first=first, total=nan, first_low=low, first_high=high,
        total_low=nan, total_high=nan, shapley=nan, shapley_low=nan, shapley_high=nan,
        full_first=first, independent_total=nan, loo_error=loo_error, method="given-data",
        n_runs=n, mean=float(ya.mean()), variance=float(ya.var()), confidence=confidence,
        n_bootstrap=n_bootstrap, correlated=True)


def mc_sobol(
    model: Callable[[Array], ArrayLike],
    d: int,
    n: int,
    rng: np.random.Generator,
    *,
    names: Sequence[str] | None = None,
    rule: Literal["sobol", "random"] = "sobol",
    n_bootstrap: int = 200,
    confidence: float = 0.95,
) -> list[SensitivityResult]:
    """First-order and total Sobol indices by pick-freeze Monte Carlo on the model itself.

    Two independent standard-normal designs A, B (n, d) and the d hybrids AB_j cost
    ``n (d + 2)`` model runs in one vectorised call. Estimators: Saltelli et al. (2010) first
    order, Jansen (1999) total (see :func:`_pick_freeze`). Intervals: percentile bootstrap over
    the n rows (no extra runs); they assume independent rows, so they are exact in spirit for
    ``rule="random"`` and usually conservative for Sobol' points, except for indices near zero:
    on the 8-input Sobol G function at n = 2048 the x6 first-order index (7e-5) came out
    ~1e-3 high with Sobol' points, about 2 bootstrap widths (measured here, 40 seeds).
    For independent inputs only: with correlated inputs pass the model of the underlying
    ``xi = L^-1 z`` and read the indices as those of the Cholesky variables in the given
    order. Shapley effects are not estimated (NaN).

    Parameters
    ----------
    model : maps xi (N, d) [1] to outputs (N,) or (N, k) [unit of y]
    d : number of inputs [1]
    n : base sample size [1] (a power of two for ``rule="sobol"``)
    rng : seeded generator (scrambling of the Sobol' points, or the normal draws)
    names : input names (default x1..xd)
    rule : ``"sobol"`` (scrambled Sobol' points, 2d dimensions) or ``"random"``
    n_bootstrap : bootstrap resamples of the rows [1]
    confidence : two-sided interval level [1]

    Returns
    -------
    one :class:`SensitivityResult` per output column, ``method="monte-carlo"``
    """
    names = tuple(names) if names is not None else tuple(f"x{j + 1}" for j in range(d))
    if len(names) != d:
        raise ScenarioError.single("sensitivity.names", list(names), f"{d} input names")
    if n < 2:
        raise ValueError(f"n must be >= 2, got {n}")
    if rule == "sobol":
        u = qmc.Sobol(2 * d, scramble=True, seed=rng).random(n)
        ab = ndtri(np.clip(u, 1e-16, 1 - 1e-16))
    elif rule == "random":
        ab = rng.standard_normal((n, 2 * d))
    else:
        raise ValueError(f"rule must be 'sobol' or 'random', got {rule!r}")
    a, b = ab[:, :d], ab[:, d:]
    hybrids = np.repeat(a[None], d, axis=0)
    hybrids[np.arange(d), :, np.arange(d)] = b.T
    x = np.concatenate([a, b, hybrids.reshape(d * n, d)])
    out = np.asarray(model(x), dtype=float)
    if out.ndim == 1:
        out = out[:, None]
    if out.shape[0] != n * (d + 2):
        raise ValueError(f"model returned {out.shape[0]} rows for {n * (d + 2)} inputs")
    fa, fb, fab = out[:n], out[n:2 * n], out[2 * n:].reshape(d, n, -1)
    first, total, var = _pick_freeze(fa, fb, fab)
    if n_bootstrap > 0:
        rows = rng.integers(0, n, size=(n_bootstrap, n))
        bf = np.empty((n_bootstrap, *first.shape))
        bt = np.empty((n_bootstrap, *total.shape))
        for i, r in enumerate(rows):
            bf[i], bt[i], _ = _pick_freeze(fa[r], fb[r], fab[:, r])
        f_lo, f_hi = _interval(np.moveaxis(bf, 0, -1), confidence)
        t_lo, t_hi = _interval(np.moveaxis(bt, 0, -1), confidence)
    else:
        f_lo = f_hi = t_lo = t_hi = np.full(first.shape, np.nan)
    nan = np.full(d, np.nan)
    mean = np.mean(np.concatenate([fa, fb]), axis=0)
    return [
        SensitivityResult(
            names=names, first=_frozen(first[:, k]), total=_frozen(total[:, k]),
            first_low=_frozen(f_lo[:, k]), first_high=_frozen(f_hi[:, k]),
            total_low=_frozen(t_lo[:, k]), total_high=_frozen(t_hi[:, k]),
            shapley=_frozen(nan), shapley_low=_frozen(nan), shapley_high=_frozen(nan),
            full_first=_frozen(first[:, k]), independent_total=_frozen(total[:, k]),
            loo_error=math.nan, method="monte-carlo", n_runs=n * (d + 2), output=k,
            mean=float(mean[k]), variance=float(var[k]), confidence=confidence,
            n_bootstrap=n_bootstrap,
        )
        for k in range(out.shape[1])
    ]


def sensitivity(
    z: ArrayLike,
    y: ArrayLike,
    *,
    names: Sequence[str],
    rng: np.random.Generator,
    model: Callable[[Array], ArrayLike] | None = None,
    corr: ArrayLike | None = None,
    groups: Mapping[str, Sequence[int | str]] | None = None,
    loo_threshold: float = LOO_THRESHOLD,
    mc_n: int = 1024,
    **pce_options: Any,
) -> list[SensitivityResult]:
    """Indices per output: the expansion when it fits, Monte Carlo on the model when not.

    Each output whose corrected leave-one-out error exceeds ``loo_threshold``
    (:data:`LOO_THRESHOLD`, see there for the bound it implies) is recomputed by
    :func:`mc_sobol` with ``mc_n (d + 2)`` runs of ``model`` (which maps ``xi`` to all outputs);
    without a model the expansion's result is kept and its ``loo_error`` says how far to trust
    it. With correlated inputs the fallback's indices are those of the independent Cholesky
    variables ``xi`` in the given order (no full/independent split, no Shapley effects).

    Parameters
    ----------
    z, y, names, rng, corr, groups : as for :func:`sobol_pce`
    model : maps independent standard normals xi (N, d) [1] to outputs (N,) or (N, k)
    loo_threshold : relative corrected LOO error above which to fall back [1]
    mc_n : base sample of the fallback [1]
    pce_options : passed to :func:`sobol_pce`

    Returns
    -------
    one :class:`SensitivityResult` per output column
    """
    res = sobol_pce(z, y, names=names, rng=rng, corr=corr, groups=groups, **pce_options)
    bad = [r.output for r in res if not r.loo_error <= loo_threshold]
    if not bad or model is None:
        return res
    mc = mc_sobol(model, len(names), mc_n, rng, names=names,
                  n_bootstrap=pce_options.get("n_bootstrap", 200),
                  confidence=pce_options.get("confidence", 0.95))
    return [mc[r.output] if r.output in bad else r for r in res]


# ---------------------------------------------------------------------------------------------
# Tornado
# ---------------------------------------------------------------------------------------------


def tornado(model: Callable[[Array], ArrayLike], low: ArrayLike, mid: ArrayLike,
            high: ArrayLike) -> Array:
    """One-at-a-time swings: the output with input j at its low and at its high value.

    All other inputs stay at ``mid``; the 2 d cases run in one vectorised model call. The
    caller passes P10/P50/P90 values in physical units; sort by ``abs(high - low)`` to draw
    the tornado (common practice).

    Parameters
    ----------
    model : maps x (N, d) [physical units] to (N,) [unit of y]
    low, mid, high : input values (d,) [physical units of each input]

    Returns
    -------
    array (d, 2): ``(y_low, y_high)`` per input [unit of y]
    """
    lo, md, hi = (np.asarray(v, dtype=float).ravel() for v in (low, mid, high))
    d = md.size
    if lo.size != d or hi.size != d:
        raise ValueError(f"low, mid, high must have the same length, got "
                         f"{lo.size}, {d}, {hi.size}")
    x = np.tile(md, (2 * d, 1))
    x[np.arange(d), np.arange(d)] = lo
    x[d + np.arange(d), np.arange(d)] = hi
    out = np.asarray(model(x), dtype=float).ravel()
    if out.size != 2 * d:
        raise ValueError(f"model must return one value per row ({2 * d}), got {out.size}")
    return np.stack([out[:d], out[d:]], axis=1)
