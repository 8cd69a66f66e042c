"""Benchmark of risk.sensitivity against SALib and chaospy (prints ratios; not a test).

1. Ten smooth inputs: f = exp(sum_i b_i x_i), x_i ~ U(0, 1) independent. Analytic indices
   (derived; f is a product of g_i = exp(b_i x_i)): with E_i = E[g_i] = (e^b_i - 1)/b_i and
   F_i = E[g_i^2] = (e^(2 b_i) - 1)/(2 b_i), V = prod F - prod E^2,
   S_i = (F_i - E_i^2) prod_{j != i} E_j^2 / V,  S_Ti = (F_i - E_i^2) prod_{j != i} F_j / V.
   Target (docs/derivations.md, sec. 8): every first-order and total index within
   0.01 with <= 1,024 model runs and <= 0.5 s of analysis. SALib (Saltelli sampling, Sobol
   analysis) is run at doubling sample sizes until it meets the same target.
2. Indices from an already fitted expansion of ~500 terms (8 inputs, degree 4: 495 terms) in
   < 1 ms, beside chaospy's Sens_t on a 3-input, order-8 expansion (165 terms; chaospy took
   ~17 s for that on this kind of machine, so larger ones are not attempted: a time cap).
3. A run's design (docs/derivations.md, sec. 17): 1,024 runs of 10 inputs, 7 outputs, total
   degree 5 (3,003 candidate terms): the sparse fit of all outputs with the matching pursuits
   side by side, against one output at a time (the same paths, checked), and the basis.
4. The fixed cost's remaining parts on part 3's design (docs/derivations.md, sec. 17), each
   old and new form alternated in this one process (ratios; the machine is shared): the
   pursuits with a second Gram-Schmidt pass always / only when needed; the bootstraps'
   Gram matrices over all n rows / over the rows drawn; correlated indices (a block of four
   correlated inputs, 101 coefficient sets per output) with the rotations recomputed /
   cached.

BLAS is pinned to one thread through OPENBLAS_NUM_THREADS before numpy loads, since
threadpoolctl is not installed here (threaded BLAS made these small problems ~10x slower).
Run: .venv/bin/python benchmarks/bench_sensitivity.py [--skip-chaospy]
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import math  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
from scipy.special import ndtr, ndtri  # noqa: E402
from scipy.stats import qmc  # noqa: E402

from risk import sensitivity as sa  # noqa: E402

B = np.array([1.5, 1.2, 1.0, 0.8, 0.6, 0.5, 0.4, 0.3, 0.2, 0.1])
D = len(B)
_E = np.expm1(B) / B
_F = np.expm1(2 * B) / (2 * B)
_V = np.prod(_F) - np.prod(_E**2)
FIRST = (_F - _E**2) * np.array([np.prod(np.delete(_E**2, i)) for i in range(D)]) / _V
TOTAL = (_F - _E**2) * np.array([np.prod(np.delete(_F, i)) for i in range(D)]) / _V
SEEDS = (0, 1, 2)


def expo_u(u: np.ndarray) -> np.ndarray:
    return np.exp(u @ B)


def best_of(fn, repeat: int = 3) -> float:  # type: ignore[no-untyped-def]
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def ours(n: int, n_bootstrap: int) -> tuple[float, float]:
    """Worst index error over SEEDS and the slowest analysis time [s]."""
    err, slow = 0.0, 0.0
    for seed in SEEDS:
        rng = np.random.default_rng(seed)
        xi = ndtri(qmc.Sobol(D, seed=rng).random(n))
        y = expo_u(ndtr(xi))
        t0 = time.perf_counter()
        (res,) = sa.sobol_pce(xi, y, names=[f"x{i}" for i in range(D)], rng=rng,
                              families=["legendre"] * D, n_bootstrap=n_bootstrap)
        slow = max(slow, time.perf_counter() - t0)
        err = max(err, np.abs(res.first - FIRST).max(), np.abs(res.total - TOTAL).max())
    return err, slow


def salib(n: int) -> tuple[float, float]:
    from SALib.analyze import sobol as salib_analyze
    from SALib.sample import sobol as salib_sample

    problem = {"num_vars": D, "names": [f"x{i}" for i in range(D)], "bounds": [[0, 1]] * D}
    err, slow = 0.0, 0.0
    for seed in SEEDS:
        x = salib_sample.sample(problem, n, calc_second_order=False, seed=seed)
        y = expo_u(x)
        t0 = time.perf_counter()
        si = salib_analyze.analyze(problem, y, calc_second_order=False, seed=seed)
        slow = max(slow, time.perf_counter() - t0)
        err = max(err, np.abs(si["S1"] - FIRST).max(), np.abs(si["ST"] - TOTAL).max())
    return err, slow


def part1() -> None:
    print("1. Ten smooth inputs, f = exp(sum b_i x_i), x_i ~ U(0,1); worst |error| over "
          f"{len(SEEDS)} seeds, all 20 indices")
    print(f"   {'method':34s} {'runs':>7s} {'max err':>8s} {'analysis s':>10s}")
    ours_hit = None
    for n in (256, 512, 1024):
        for nb in (0, 200):
            err, t = ours(n, nb)
            tag = f"risk PCE (OMP, {nb} bootstrap)"
            print(f"   {tag:34s} {n:7d} {err:8.4f} {t:10.3f}")
            if nb == 0 and err <= 0.01 and t <= 0.5 and ours_hit is None:
                ours_hit = (n, t)
    salib_hit = None
    for n in (1024, 2048, 4096, 8192, 16384):
        err, t = salib(n)
        runs = n * (D + 2)
        print(f"   {'SALib Saltelli/Sobol':34s} {runs:7d} {err:8.4f} {t:10.3f}")
        if err <= 0.01:
            salib_hit = (runs, t)
            break
    if ours_hit and salib_hit:
        print(f"   -> target met: risk with {ours_hit[0]} runs in {ours_hit[1]:.3f} s, SALib "
              f"with {salib_hit[0]} runs: {salib_hit[0] / ours_hit[0]:.0f}x fewer model runs")
    else:
        print(f"   -> target (0.01, <= 1024 runs, <= 0.5 s): risk {ours_hit}, SALib {salib_hit}")


def part2(skip_chaospy: bool) -> None:
    print("\n2. Indices from a fitted expansion")
    rng = np.random.default_rng(0)
    idx = sa.multi_indices(8, 4)
    coef = rng.normal(size=len(idx)) / (1.0 + idx.sum(axis=1)) ** 2
    t_ind = best_of(lambda: sa.independent_indices(idx, coef, groups=[[0, 1, 2]]), 20)
    print(f"   risk, 8 inputs order 4 ({len(idx)} terms): first, total, Shapley, group in "
          f"{t_ind * 1e3:.3f} ms (target < 1 ms)")
    corr = np.eye(8)
    corr[0, 1] = corr[1, 0] = 0.5
    corr[0, 2] = corr[2, 0] = 0.3
    exp8 = sa.PolynomialChaos(idx, coef, 0.0, 1000)
    t_cor = best_of(lambda: sa.correlated_indices(exp8, corr, groups=[[0, 1, 2]]), 3)
    print(f"   risk, same with inputs 1-3 correlated: full first, independent total, exact "
          f"Shapley over 256 subsets in {t_cor * 1e3:.1f} ms")
    if skip_chaospy:
        return
    import chaospy

    n, order = 400, 8
    xi = rng.standard_normal((n, 3))
    y = np.exp(0.3 * xi[:, 0]) + xi[:, 1] ** 2 * xi[:, 2] + 0.5 * np.sin(xi[:, 2])
    dist = chaospy.J(*[chaospy.Normal(0, 1) for _ in range(3)])
    basis = chaospy.generate_expansion(order, dist, normed=True)
    poly = chaospy.fit_regression(basis, xi.T, y)
    full = sa.multi_indices(3, order)
    c_full = np.linalg.lstsq(sa.design_matrix(xi, full), y, rcond=None)[0]
    t_mine = best_of(lambda: sa.independent_indices(full, c_full), 20)
    ref_mine = sa.independent_indices(full, c_full)["total"]
    print(f"   chaospy Sens_t, 3 inputs order {order} ({len(full)} terms): running once "
          "(capped at this size) ...", flush=True)
    t0 = time.perf_counter()
    st = np.asarray(chaospy.Sens_t(poly, dist), dtype=float)
    t_cp = time.perf_counter() - t0
    print(f"   chaospy Sens_t: {t_cp:.2f} s; risk on the same least-squares fit: "
          f"{t_mine * 1e3:.3f} ms -> {t_cp / t_mine:,.0f}x; max |difference| "
          f"{np.abs(st - ref_mine).max():.1e}")


def part3() -> None:
    from risk.sensitivity.pce import _omp, _omp_many

    print("\n3. A run's design: 1,024 runs x 10 inputs, 7 outputs, degree 5")
    rng = np.random.default_rng(7)
    xi = ndtri(qmc.Sobol(D, scramble=True, seed=rng).random(1024))
    u = ndtr(xi)
    y = np.column_stack([expo_u(u), *(np.prod(1.0 + b * (u - 0.5) ** 2, axis=1)
                                      for b in (0.5, 1.0, 2.0)),
                         np.sin(3.0 * u[:, 0]) + u[:, 1] * u[:, 2], np.abs(u[:, 3] - 0.4),
                         np.minimum(u @ B, 2.0)])
    cand = sa.multi_indices(D, 5)
    t_dm = best_of(lambda: sa.design_matrix(xi, cand), 3)
    psi = sa.design_matrix(xi, cand)
    cap, patience = 512, 51  # fit_pce's defaults at 1,024 runs
    t_one = best_of(lambda: [_omp(psi, y[:, c], cap, patience) for c in range(y.shape[1])], 1)
    t_many = best_of(lambda: _omp_many(psi, y, cap, patience), 1)
    same = all(np.array_equal(a[0], b[0]) for a, b in zip(
        _omp_many(psi, y, cap, patience),
        [_omp(psi, y[:, c], cap, patience) for c in range(y.shape[1])], strict=True))
    print(f"   basis ({len(cand)} terms): {t_dm:.3f} s; pursuits one output at a time "
          f"{t_one:.2f} s, side by side {t_many:.2f} s -> {t_one / t_many:.1f}x; "
          f"same terms chosen: {same}")


def _alternate(old, new, rounds: int = 5) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    """Least CPU time [s] of each of two callables, run alternately ``rounds`` times."""
    t_old, t_new = [], []
    for _ in range(rounds):
        for fn, out in ((old, t_old), (new, t_new)):
            t0 = time.process_time()
            fn()
            out.append(time.process_time() - t0)
    return min(t_old), min(t_new)


def part4() -> None:
    import scipy.linalg.blas

    from risk.sensitivity import pce, shapley

    print("\n4. The rest of the fixed cost on part 3's design, old / new alternated (CPU s)")
    rng = np.random.default_rng(7)
    xi = ndtri(qmc.Sobol(D, scramble=True, seed=rng).random(1024))
    u = ndtr(xi)
    y = np.column_stack([expo_u(u), *(np.prod(1.0 + b * (u - 0.5) ** 2, axis=1)
                                      for b in (0.5, 1.0, 2.0)),
                         np.sin(3.0 * u[:, 0]) + u[:, 1] * u[:, 2], np.abs(u[:, 3] - 0.4),
                         np.minimum(u @ B, 2.0)])
    cand = sa.multi_indices(D, 5)
    psi = sa.design_matrix(xi, cand)
    cap, patience = 512, 51
    dgks = pce._DGKS

    def pursuits(threshold: float) -> list[tuple[np.ndarray, np.ndarray, float]]:
        pce._DGKS = threshold  # inf: the second pass always (the former algorithm)
        try:
            return pce._omp_many(psi, y, cap, patience)
        finally:
            pce._DGKS = dgks

    t_old, t_new = _alternate(lambda: pursuits(math.inf), lambda: pursuits(dgks))
    old, new = pursuits(math.inf), pursuits(dgks)
    same = all(np.array_equal(a[0], b[0]) for a, b in zip(old, new, strict=True))
    diff = max(float(np.abs(a[1] - b[1]).max() / np.abs(a[1]).max())
               for a, b in zip(old, new, strict=True))
    print(f"   pursuits, second pass always {t_old:.2f} s, when needed {t_new:.2f} s -> "
          f"{t_old / t_new:.2f}x; same terms: {same}; coefficients within {diff:.0e} "
          "(relative)")
    basis = np.ascontiguousarray(psi[:, np.sort(new[3][0])])  # the largest, as sobol_pce has it
    syrk = scipy.linalg.blas.get_blas_funcs("syrk", (basis,))
    w = np.zeros((100, 1024))
    np.add.at(w, (np.arange(100)[:, None], rng.integers(0, 1024, size=(100, 1024))), 1.0)
    t_old, t_new = _alternate(
        lambda: [syrk(1.0, basis * np.sqrt(wb)[:, None], trans=1) for wb in w],
        lambda: [pce._resampled_gram(syrk, basis, wb) for wb in w])
    iu = np.triu_indices(basis.shape[1])
    gap = max(float(np.abs(syrk(1.0, basis * np.sqrt(wb)[:, None], trans=1)[iu]
                           - pce._resampled_gram(syrk, basis, wb)[iu]).max()
                    / np.abs(pce._resampled_gram(syrk, basis, wb)[iu]).max()) for wb in w[:5])
    print(f"   100 bootstrap Gram matrices ({basis.shape[1]} terms), all rows {t_old:.2f} s, "
          f"drawn rows {t_new:.2f} s -> {t_old / t_new:.2f}x; within {gap:.0e} (relative)")
    corr = np.eye(D)
    for i, j, r in ((3, 4, 0.42), (3, 7, 0.62), (3, 9, 0.52)):
        corr[i, j] = corr[j, i] = r
    lmat = np.linalg.cholesky(corr)
    z = xi @ lmat.T
    fits = pce.fit_pce(np.linalg.solve(lmat, z.T).T, y)
    sets = [np.column_stack([f.coefficients, rng.normal(f.coefficients[:, None], 0.01,
                                                        (len(f.coefficients), 100))])
            for f in fits]

    def indices(cached: bool) -> None:
        for f, c in zip(fits, sets, strict=True):
            if not cached:
                shapley._rotation_plan_of.cache_clear()
                shapley._gauss_hermite.cache_clear()
            shapley.correlated_indices(f, corr, coefficients=c)

    t_old, t_new = _alternate(lambda: indices(False), lambda: indices(True))
    print(f"   correlated indices of 7 outputs, rotations recomputed for each {t_old:.2f} s, "
          f"cached {t_new:.2f} s -> {t_old / t_new:.2f}x")


def main() -> None:
    print(f"numpy {np.__version__}; BLAS threads {os.environ.get('OPENBLAS_NUM_THREADS')}")
    part1()
    part2("--skip-chaospy" in sys.argv)
    part3()
    part4()


if __name__ == "__main__":
    main()
