"""Polynomial chaos expansions: orthonormal bases, sparse and total-degree least-squares fits,
corrected leave-one-out error and bootstrap refits.

References
----------
Sudret, B. (2008). Global sensitivity analysis using polynomial chaos expansions. Reliability
    Engineering & System Safety 93, 964-979.
Blatman, G., Sudret, B. (2010, 2011) and Pati, Rezaiifar & Krishnaprasad (1993): see
    :mod:`risk.sensitivity`.
"""

from __future__ import annotations

import math
from collections.abc import Generator, Iterator, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import scipy.linalg
import scipy.linalg.blas
from numpy.typing import ArrayLike
from scipy.special import ndtr

from risk.sensitivity.common import Array, IntArray, Method
from risk.sensitivity.families import Recurrence
from risk.sensitivity.result import _frozen


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
    families : polynomial family per input (empty = all Hermite; see :data:`Family`)
    """

    indices: IntArray
    coefficients: Array
    loo_error: float
    n_runs: int
    families: tuple[Family, ...] = ()

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
                            self.families)
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


#: A polynomial family per input: Hermite in xi, Legendre in 2 Phi(xi) - 1 (a uniform
#: marginal), or the orthonormal family of a bounded marginal in the input itself
#: (:func:`risk.sensitivity.families.stieltjes_family`).
Family = Literal["hermite", "legendre"] | Recurrence


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
    families : per input, ``"hermite"`` (in xi_j, default), ``"legendre"`` (in
        ``2 Phi(xi_j) - 1``, for a uniform marginal) or a :class:`Recurrence` (the orthonormal
        polynomials of a bounded marginal in the input itself)
    """
    xi = np.asarray(xi, dtype=float)
    if xi.ndim != 2 or xi.shape[1] != indices.shape[1]:
        raise ValueError(f"xi must be (n, {indices.shape[1]}), got {xi.shape}")
    top = int(indices.max()) if indices.size else 0
    return _products(basis_table(xi, top, families), indices)


def basis_table(xi: Array, top: int, families: Sequence[Family] | None = None) -> Array:
    """The one-dimensional polynomials of every input, ``(top + 1, d, n)`` [1]: entry
    ``[k, j, i]`` is the degree-``k`` polynomial of input ``j``'s family at row ``i`` (what
    :func:`design_matrix` multiplies; computed once, it serves any index set of degree <= top).

    Parameters
    ----------
    xi : independent standard normals (n, d) [1]
    top : highest degree in any one input [1]
    families : as for :func:`design_matrix`
    """
    table = hermite_orthonormal(xi.T, top)  # (top+1, d, n)
    for j, fam in enumerate(families or ()):
        if isinstance(fam, Recurrence):
            table[:, j, :] = fam.evaluate(xi[:, j], top)
        elif fam == "legendre":
            table[:, j, :] = legendre_orthonormal(2.0 * ndtr(xi[:, j]) - 1.0, top)
        elif fam != "hermite":
            raise ValueError(f"family must be 'hermite', 'legendre' or a Recurrence, got "
                             f"{fam!r}")
    return table


def _products(table: Array, indices: IntArray) -> Array:
    """The products ``prod_j table[a_j, j, :]`` of every multi-index ``a`` (n, m) [1].

    Built a block of rows at a time (about 64 k values, which stay in the processor's cache
    while every input's factor multiplies them in); each value is the same product, in the
    same order, as a whole-matrix pass would give.
    """
    rows = np.ascontiguousarray(table.transpose(2, 1, 0))  # (n, d, top + 1)
    n, m = table.shape[2], indices.shape[0]
    used = [(j, np.ascontiguousarray(indices[:, j])) for j in range(indices.shape[1])
            if np.any(indices[:, j])]
    psi = np.empty((n, m))
    step = max(1, 65_536 // max(m, 1))
    for lo in range(0, n, step):
        block = psi[lo:lo + step]
        block[...] = 1.0
        for j, col in used:
            block *= rows[lo:lo + step, j, col]
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

#: Gram-Schmidt is repeated when a pass leaves less than this share of the vector's norm
#: (Daniel, Gragg, Kaufman & Stewart 1976: a second pass is then needed, and enough)
_DGKS = 1.0 / math.sqrt(2.0)


def _omp(psi: Array, y: Array, max_terms: int, patience: int) -> tuple[IntArray, Array, float]:
    """Orthogonal matching pursuit (Pati et al. 1993) stopped at the least corrected LOO error.

    The constant term (column 0) enters first. Each step adds the column most correlated with
    the residual, orthogonalised by classical Gram-Schmidt against the columns already in,
    with a second pass only when the first left less than ``1/sqrt(2)`` of its norm (Daniel
    et al. 1976: then one more pass restores orthogonality to working precision; otherwise
    the first already has); the corrected leave-one-out error is updated in O(n + s) per
    step (``||R^-1||_F^2`` kept as a running sum over the columns of ``R^-1``). The path
    stops ``patience`` steps after its best point or at ``max_terms``; the returned basis is
    the one at the best point and its coefficients are its least-squares fit.

    References
    ----------
    Daniel, J.W., Gragg, W.B., Kaufman, L., Stewart, G.W. (1976). Reorthogonalization and
        stable algorithms for updating the Gram-Schmidt QR factorization. Mathematics of
        Computation 30, 772-795.
    """
    path = _omp_path(psi, y, max_terms, patience)
    try:
        resid = next(path)
        while True:
            resid = path.send(psi.T @ resid)
    except StopIteration as done:
        return done.value


def _omp_many(psi: Array, y2: Array, max_terms: int, patience: int
              ) -> list[tuple[IntArray, Array, float]]:
    """:func:`_omp` of every column of ``y2`` (n, k) on the same basis, the paths run side by
    side: the correlations of all the residuals still running with the candidate columns come
    from one matrix product per step (``psi`` is read from memory once for all outputs, where
    one matrix-vector product per output read it k times). The paths are those of
    :func:`_omp` but for the rounding of those correlations (about 1e-16 relative)."""
    paths = {c: _omp_path(psi, y2[:, c], max_terms, patience) for c in range(y2.shape[1])}
    out: dict[int, tuple[IntArray, Array, float]] = {}
    asked: dict[int, Array] = {}
    for c, path in paths.items():
        try:  # the constant enters without a product
            asked[c] = next(path)
        except StopIteration as done:
            out[c] = done.value
    while asked:
        cols = list(asked)
        corr = np.stack([asked[c] for c in cols]) @ psi  # (running outputs, m)
        asked = {}
        for row, c in enumerate(cols):
            try:
                asked[c] = paths[c].send(corr[row])
            except StopIteration as done:
                out[c] = done.value
    return [out[c] for c in range(y2.shape[1])]


def _omp_path(psi: Array, y: Array, max_terms: int, patience: int
              ) -> Generator[Array, Array, tuple[IntArray, Array, float]]:
    """The matching pursuit of :func:`_omp` as a generator: it yields the residual whenever it
    needs the correlations ``psi.T @ resid`` and is sent them back, so that the caller can
    compute them for several outputs at once; it returns (active columns, coefficients,
    corrected LOO error)."""
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
    trace = 0.0  # squared Frobenius norm of R^-1 so far
    k = 0
    while len(active) < max_terms:
        s = len(active)
        if s == 0:
            k = 0
        else:
            score = np.abs((yield resid)) / np.where(usable, norms, np.inf)
            k = int(np.argmax(score))
            if not usable[k] or score[k] <= 1e-14 * math.sqrt(max(var_y, 1e-300) * n):
                break
        v = psi[:, k].copy()
        rcol = np.zeros(s)
        size = norms[k]
        for _ in range(2):  # classical Gram-Schmidt, repeated only when it cancelled much
            c = q[:, :s].T @ v
            v -= q[:, :s] @ c
            rcol += c
            rho = float(np.linalg.norm(v))
            if rho >= _DGKS * size:
                break
            size = rho
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
        trace += float(rinv[:p, s] @ rinv[:p, s])
        if p >= 2 and n - p > 0 and var_y > 0:
            with np.errstate(divide="ignore", invalid="ignore"):
                loo = float(np.mean((resid / (1.0 - h)) ** 2)) / var_y
            err = loo * n / (n - p) * (1.0 + trace)
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
    return _fit(xi, y, max_degree=max_degree, q=q, method=method, max_terms=max_terms,
                families=families)[0]


def _fit(
    xi: ArrayLike,
    y: ArrayLike,
    *,
    max_degree: int | None,
    q: float,
    method: Method,
    max_terms: int | None,
    families: Sequence[Family] | None,
) -> tuple[list[PolynomialChaos], list[IntArray], Array]:
    """:func:`fit_pce`, also returning where each expansion's terms sit among the candidate
    columns and the candidates' design matrix (n, m) [1], whose columns ``psi[:, cols]`` are
    bit for bit ``design_matrix(xi, expansion.indices)`` (a product of the same factors in the
    same order; a factor of degree 0 is an exact 1.0), so no caller evaluates the basis again."""
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
    where: list[IntArray] = []
    if method == "omp":
        cap = max_terms if max_terms is not None else max(2, n // 2)
        patience = max(10, cap // 10)
        for active, coef, err in _omp_many(psi, y2, cap, patience):
            order = np.argsort(active, kind="stable")
            out.append(PolynomialChaos(_ro(cand[active[order]]), _frozen(coef[order]),
                                       err, n, fams))
            where.append(active[order])
        return out, where, psi
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
        where.append(cols)
    return out, where, psi


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
            gram = np.stack([_resampled_gram(syrk, psi, wb) for wb in w])
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


def _resampled_gram(syrk: Any, psi: Array, counts: Array) -> Array:
    """Upper triangle of ``Psi^T W Psi`` for resampling counts ``W`` (n,) [1], summed over the
    rows drawn at least once (about 63 % of them: a row is left out of a resample of n with
    probability (1 - 1/n)^n ~ 1/e), each scaled by the square root of its count.

    The rows left out contribute exact zeros, so the matrix is that of all n rows but for the
    order of summation (a BLAS sums in blocks of rows; about 1e-16 relative).
    """
    drawn = np.flatnonzero(counts)
    # formed in column-major order, the layout the Fortran routine takes without a copy
    return syrk(1.0, np.multiply(psi[drawn], np.sqrt(counts[drawn])[:, None], order="F"),
                trans=1)
