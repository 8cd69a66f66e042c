"""Correlated inputs: exact conditional variances from the expansion, full first-order,
independent total indices and Shapley effects.

References
----------
Owen, A.B. (2014); Song, E., Nelson, B.L., Staum, J. (2016); Iooss, B., Prieur, C. (2019);
Mara, Tarantola & Annoni (2015); Castro, Gomez & Tejada (2009): see :mod:`risk.sensitivity`.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import Final

import numpy as np
import scipy.linalg
import scipy.sparse
from numpy.typing import ArrayLike, NDArray
from scipy.sparse.csgraph import connected_components

from risk.sensitivity.common import Array, IntArray, bad_argument
from risk.sensitivity.pce import PolynomialChaos, hermite_orthonormal

#: Up to this many inputs, Shapley effects with correlated inputs come from all 2**d subsets
#: exactly; above it, from random orderings (Castro, Gomez & Tejada 2009 estimator).
MAX_EXACT_SHAPLEY_INPUTS: Final = 16


# ---------------------------------------------------------------------------------------------
# Correlated inputs: exact conditional variances from the expansion
# ---------------------------------------------------------------------------------------------


@functools.lru_cache(maxsize=32)
def _gauss_hermite(npts: int) -> tuple[Array, Array]:
    """Nodes and weights (summing to 1) of the ``npts``-point probabilists' Gauss-Hermite
    rule, computed once per size (read-only arrays)."""
    t, w = np.polynomial.hermite_e.hermegauss(npts)
    w = w / w.sum()
    t.setflags(write=False)
    w.setflags(write=False)
    return t, w


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


_Plan = tuple[tuple[tuple[int, int, tuple[Array, ...]], ...], Array]


def _rotation_plan(rmat: Array, top: int) -> _Plan:
    """The plane rotations of ``rmat`` (:func:`_givens`) with each one's coefficient maps
    (:func:`_plane_maps`) up to degree ``top``, and the signs; computed once per rotation.

    Every output of a run, and every subset of a block, needs the same few rotations (they
    depend on the correlation matrix and the ordering only), so the maps are cached by the
    rotation's exact bits: the cached numbers are those a fresh computation would give.
    """
    r = np.ascontiguousarray(rmat, dtype=float)
    return _rotation_plan_of(r.tobytes(), r.shape[0], int(top))


@functools.lru_cache(maxsize=1024)
def _rotation_plan_of(rbytes: bytes, b: int, top: int) -> _Plan:
    rots, signs = _givens(np.frombuffer(rbytes, dtype=float).reshape(b, b))
    plan = []
    for i, j, g in rots:
        maps = _plane_maps(g.T, top)
        for mp in maps:
            mp.setflags(write=False)
        plan.append((i, j, tuple(maps)))
    signs.setflags(write=False)
    return tuple(plan), signs


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
        # the profiles (components outside the blocks, degree in each block) in sorted order;
        # each yields the product of its blocks' compositions, the last block varying fastest.
        # A row determines its profile, so no row comes twice.
        prof_all = np.column_stack([indices[:, self.free].astype(np.int64),
                                    *[indices[:, blk].sum(axis=1) for blk in blocks]]) \
            if len(indices) else np.zeros((0, len(self.free) + len(blocks)), dtype=np.int64)
        chunks: list[IntArray] = [np.zeros((0, d), dtype=np.int64)]
        for prof in np.unique(prof_all.reshape(len(prof_all), -1), axis=0):
            parts = []
            for i, blk in enumerate(blocks):
                key = (int(prof[len(self.free) + i]), len(blk))
                if key not in comps:
                    comps[key] = _compositions(*key)
                parts.append(comps[key])
            sizes = [len(p) for p in parts]
            combo = np.indices(sizes).reshape(len(parts), math.prod(sizes))
            rows = np.zeros((math.prod(sizes), d), dtype=np.int64)
            rows[:, self.free] = prof[: len(self.free)]
            for blk, part, ci in zip(blocks, parts, combo, strict=True):
                rows[:, blk] = part[ci]
            chunks.append(rows)
        self.indices = np.concatenate(chunks)
        self.position = {t: k for k, t in enumerate(map(tuple, self.indices.tolist()))}
        if len(self.position) != len(self.indices):
            raise RuntimeError("closure rows repeated")
        # keys of the rows read as numbers in base top + 1, the first input the most
        # significant digit: their order is the rows' lexicographic order
        self._weights = ((self.top + 1) ** np.arange(d - 1, -1, -1, dtype=np.int64)
                         if d * math.log(self.top + 1) < 43 else None)
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
                if self._weights is not None:  # the same groups, numbered in the same order
                    _, group = np.unique(rest @ self._weights, return_inverse=True)
                else:
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
        rots, signs = _rotation_plan(rmat, self.top)
        for col, sgn in zip(block, signs, strict=True):
            if sgn < 0:
                out *= np.where(self.indices[:, col] % 2 == 1, -1.0, 1.0)[:, None]
        for i, j, maps in reversed(rots):
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
        raise bad_argument("correlation", c.shape, f"a {d} x {d} matrix")
    if not (np.allclose(c, c.T, atol=1e-12) and np.allclose(np.diag(c), 1.0, atol=1e-12)):
        raise bad_argument("correlation", "matrix", "symmetric with a unit diagonal",
                                   found_text="a non-symmetric matrix or diagonal != 1")
    try:
        np.linalg.cholesky(c)
    except np.linalg.LinAlgError:
        raise bad_argument(
            "correlation", "matrix", "positive definite",
            found_text=f"smallest eigenvalue {np.linalg.eigvalsh(c).min():.3g}") from None
    return c
