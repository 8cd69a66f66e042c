"""The Gaussian copula (rank correlations) and the maps from the unit cube to inputs."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Final

import numpy as np
import scipy.special as sc
from numpy.typing import ArrayLike

from risk.errors import Problem, ScenarioError, did_you_mean
from risk.uncertainty.marginals import U_MAX, U_MIN, FloatArray, Marginal
from risk.uncertainty.parse import is_real

# --------------------------------------------------------------------------------------------
# Gaussian copula
# --------------------------------------------------------------------------------------------


def rank_to_normal_corr(rho_s: ArrayLike) -> FloatArray:
    """Normal-space (Pearson) correlation of a Gaussian copula with Spearman correlation ``rho_s``.

    ``rho = 2 sin(pi rho_s / 6)`` (Pearson 1907; Kruskal 1958, eq. for the bivariate normal).
    Exact for the Gaussian copula, whatever the marginals. Diagonal ones stay exactly one.

    Parameters
    ----------
    rho_s : array_like
        Spearman rank correlation(s) [-], in [-1, 1].

    Returns
    -------
    ndarray
        Correlation(s) of the underlying standard normals [-].
    """
    r = np.asarray(rho_s, dtype=float)
    out = 2.0 * np.sin(np.pi * r / 6.0)
    return np.asarray(np.where(np.abs(r) == 1.0, r, out))


def normal_to_rank_corr(rho: ArrayLike) -> FloatArray:
    """Inverse of :func:`rank_to_normal_corr`: ``rho_s = (6/pi) arcsin(rho/2)`` [-]."""
    r = np.asarray(rho, dtype=float)
    return np.asarray(np.where(np.abs(r) == 1.0, r, 6.0 / np.pi * np.arcsin(r / 2.0)))


@dataclass(frozen=True, eq=False)
class JointModel:
    """Uncertain inputs coupled by a Gaussian copula.

    Attributes
    ----------
    names : tuple of str
        The uncertain inputs, in column order.
    marginals : tuple of Marginal
        Their distributions [internal units].
    rank_corr : ndarray (d, d)
        Spearman rank correlations as the scenario gave them [-].
    normal_corr : ndarray (d, d)
        Correlations of the underlying standard normals, ``2 sin(pi rank_corr / 6)`` [-].
    chol : ndarray (d, d)
        Lower Cholesky factor of ``normal_corr``.
    fixed : tuple of (name, value)
        The fixed inputs and their values [internal units] (not sampled).
    """

    names: tuple[str, ...]
    marginals: tuple[Marginal, ...]
    rank_corr: FloatArray
    normal_corr: FloatArray
    chol: FloatArray
    fixed: tuple[tuple[str, float], ...] = field(default=())

    @property
    def d(self) -> int:
        """Number of uncertain inputs."""
        return len(self.names)


_PAIRS_KEY: Final = "correlation.pairs"


def build_joint(names: Sequence[str], marginals: Sequence[Marginal],
                pairs: Sequence[Sequence[object]] | None = None) -> JointModel:
    """Couple the uncertain inputs with a Gaussian copula given rank correlations.

    Parameters
    ----------
    names : sequence of str
        All input names (fixed ones included), in order.
    marginals : sequence of Marginal
        Their distributions, same order.
    pairs : sequence of [name_a, name_b, rho_s], optional
        Spearman rank correlations from the scenario's ``[correlation] pairs``; unlisted pairs
        are independent.

    Returns
    -------
    JointModel
        Over the uncertain inputs only (in the order of ``names``).

    Raises
    ------
    ScenarioError
        (key ``correlation.pairs``) for malformed pairs, unknown names (with a suggestion), a
        name paired with itself, a pair given twice, |rho_s| >= 1, a pair naming a fixed input,
        or a correlation matrix that is not positive definite (with its smallest eigenvalue).

    Notes
    -----
    The normal-space matrix is ``2 sin(pi rho_s / 6)`` elementwise (Pearson 1907; Kruskal 1958);
    it must be positive definite for the copula to exist. Spearman correlations are invariant
    under the marginal transforms, so the sampled inputs carry exactly the requested rank
    correlation (in the limit of many samples).
    """
    if len(names) != len(marginals):
        raise ValueError("names and marginals differ in length")
    if len(set(names)) != len(names):
        raise ValueError(f"duplicate input names in {list(names)}")
    uncertain = [n for n, m in zip(names, marginals, strict=True) if not m.is_fixed]
    fixed = tuple((n, m.value) for n, m in zip(names, marginals, strict=True) if m.is_fixed)
    index = {n: i for i, n in enumerate(uncertain)}
    fixed_names = {n for n, _ in fixed}
    d = len(uncertain)
    rank = np.eye(d)
    problems: list[Problem] = []
    seen: dict[frozenset[str], int] = {}
    for i, pair in enumerate(pairs or ()):
        where = f"pair {i + 1} {list(pair) if isinstance(pair, Sequence) else pair!r}"
        if (isinstance(pair, str | bytes) or not isinstance(pair, Sequence) or len(pair) != 3
                or not isinstance(pair[0], str) or not isinstance(pair[1], str)):
            problems.append(Problem(_PAIRS_KEY, pair, "[name_a, name_b, rank_correlation]",
                                    found_text=where))
            continue
        a, b, rho = pair[0], pair[1], pair[2]
        bad = False
        for name in (a, b):
            if name in fixed_names:
                problems.append(Problem(_PAIRS_KEY, pair,
                                        "names of uncertain inputs (a fixed input cannot be "
                                        "correlated)", found_text=f"{where}: {name!r} is fixed"))
                bad = True
            elif name not in index:
                hint = did_you_mean(name, list(names))
                problems.append(Problem(_PAIRS_KEY, pair, f"input names among {list(names)}{hint}",
                                        found_text=f"{where}: unknown input {name!r}"))
                bad = True
        if a == b:
            problems.append(Problem(_PAIRS_KEY, pair, "two different inputs",
                                    found_text=f"{where}: {a!r} paired with itself"))
            bad = True
        if not is_real(rho) or not math.isfinite(float(rho)):  # type: ignore[arg-type]
            problems.append(Problem(_PAIRS_KEY, pair, "a rank correlation, a number in (-1, 1)",
                                    found_text=f"{where}: correlation {rho!r}"))
            bad = True
        elif not abs(float(rho)) < 1.0:  # type: ignore[arg-type]
            problems.append(Problem(_PAIRS_KEY, pair, "a rank correlation in (-1, 1)",
                                    found_text=f"{where}: correlation {rho!r}"))
            bad = True
        pair_id = frozenset((a, b))
        if pair_id in seen and a != b:
            problems.append(Problem(_PAIRS_KEY, pair, "each pair of inputs at most once",
                                    found_text=f"{where} repeats pair {seen[pair_id]}"))
            bad = True
        seen.setdefault(pair_id, i + 1)
        if not bad:
            ia, ib = index[a], index[b]
            rank[ia, ib] = rank[ib, ia] = float(rho)  # type: ignore[arg-type]
    if problems:
        raise ScenarioError(problems)

    normal: FloatArray = np.array(rank_to_normal_corr(rank), dtype=np.float64)
    np.fill_diagonal(normal, 1.0)
    if d:
        eig = np.linalg.eigvalsh(normal)
        if eig[0] <= 1e-10:
            eig_rank = np.linalg.eigvalsh(rank)[0]
            raise ScenarioError.single(
                _PAIRS_KEY, [list(p) for p in pairs or ()],
                "correlations that can hold together (a positive-definite matrix); weaken "
                "or remove some pairs",
                found_text=(f"a correlation matrix that is not positive definite: smallest "
                            f"eigenvalue {eig[0]:.3g} in normal space ({eig_rank:.3g} for the "
                            "rank correlations as given)"))
        chol: FloatArray = np.array(np.linalg.cholesky(normal), dtype=np.float64)
    else:
        chol = np.zeros((0, 0))
    for arr in (rank, normal, chol):
        arr.setflags(write=False)
    return JointModel(tuple(uncertain),
                      tuple(m for m in marginals if not m.is_fixed),
                      rank, normal, chol, fixed)


def correlated_normals(joint: JointModel, xi: ArrayLike) -> FloatArray:
    """Independent standard normals (n, d) -> copula-correlated normals ``z = xi L^T`` (n, d)."""
    a = np.asarray(xi, dtype=float)
    if a.ndim != 2 or a.shape[1] != joint.d:
        raise ValueError(f"expected an array of shape (n, {joint.d}), got {a.shape}")
    return np.asarray(a @ joint.chol.T)


def normals_to_inputs(joint: JointModel, xi: ArrayLike) -> FloatArray:
    """Independent standard normals (n, d) [-] -> input values (n, d) [internal units].

    ``z = xi L^T``, ``x_j = F_j^-1(Phi(z_j))`` (the Nataf/Gaussian-copula transform; Nataf 1962,
    Liu & Der Kiureghian 1986 — from memory). ``Phi(z)`` is clamped to ``[U_MIN, U_MAX]``.
    """
    z = correlated_normals(joint, xi)
    u = np.clip(sc.ndtr(z), U_MIN, U_MAX)
    x = np.empty_like(z)
    for j, m in enumerate(joint.marginals):
        x[:, j] = m.ppf(u[:, j])
    return x


def to_inputs(joint: JointModel, u: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Unit-cube points (n, d) [-] -> input values and their independent normals.

    Returns
    -------
    x : ndarray (n, d)
        Input values [internal units], columns in ``joint.names`` order.
    xi : ndarray (n, d)
        ``Phi^-1(u)``, the independent standard normals behind ``x`` [-]
        (``correlated_normals(joint, xi)`` gives the correlated ones).
    """
    a = np.asarray(u, dtype=float)
    if a.ndim != 2 or a.shape[1] != joint.d:
        raise ValueError(f"expected unit-cube points of shape (n, {joint.d}), got {a.shape}")
    xi = np.asarray(sc.ndtri(np.clip(a, U_MIN, U_MAX)))
    return normals_to_inputs(joint, xi), xi


def input_columns(joint: JointModel, x: ArrayLike) -> dict[str, FloatArray]:
    """Every input by name: sampled columns of ``x`` (n, d) and fixed values as (n,) arrays."""
    a = np.asarray(x, dtype=float)
    if a.ndim != 2 or a.shape[1] != joint.d:
        raise ValueError(f"expected an array of shape (n, {joint.d}), got {a.shape}")
    cols = {name: a[:, j] for j, name in enumerate(joint.names)}
    cols.update({name: np.full(a.shape[0], v) for name, v in joint.fixed})
    return cols
