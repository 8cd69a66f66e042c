"""Benchmark of the small-risk path (risk.small_risk) as the pipeline runs it (prints model runs
and relative RMSE; not a test).

Goal (issue 14): P(failure) ~ 1e-3 within +-10% relative RMSE in <= 500 model runs beyond the
sampling run on near-linear cases, <= 1,000 on curved ones.

Cases, in the independent standard-normal space of 12 inputs (the number R-12 samples):
``D_c = mu - s t - k Q`` capped to [0, p_r], ``t = a . u``, ``Q = |u - t a|^2 ~ chi2(11)``, so
``P(D_c <= D) = E_Q[Phi(-(mu - D - k Q)/s)]`` exactly (one-dimensional quadrature against
the chi-square density, scipy.integrate.quad); k = 0 is linear (``Phi`` closed form). Each seed
draws a sampling run of 2,000 points (2 below the 1e-3 quantile: sampling cannot resolve it),
then runs the small-risk methods; the reported limit's true probability is compared with the
accepted 1e-3 (relative error), and the probability estimated at the exact 1e-3 drawdown is
compared with 1e-3 (the estimator alone).

Run: python benchmarks/bench_small_risk.py [--seeds 40] [--r12]
``--r12`` also runs the R-12 example at accepted risk 1e-3 (effective-strength onset, first
stage) over a few seeds and prints the limit, its method and the model runs.
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np
from scipy import integrate, optimize, stats

from risk.rare_events import importance_sampling_cv
from risk.small_risk import (
    IS_COV_TARGET,
    IS_FIRST,
    IS_MAX_RUNS,
    form_starts,
    robust_form,
    small_risk_limit,
)

D = 12
A = np.ones(D) / math.sqrt(D)
MU, S, P_R, RISK, N_RUN = 12.0, 3.0, 25.0, 1e-3, 2000
CASES = (("linear", 0.0, 500), ("near-linear", -0.01, 500), ("curved", -0.03, 1000),
         ("curved, toward the origin", 0.03, 1000), ("strongly curved", -0.08, 1000))


def response(k: float):
    def resp(u: np.ndarray) -> np.ndarray:
        u = np.atleast_2d(u)
        t = u @ A
        q = np.sum((u - np.outer(t, A)) ** 2, axis=1)
        return np.clip(MU - S * t - k * q, 0.0, P_R)
    return resp


def exact_p(k: float, dd: float) -> float:
    if k == 0.0:
        return float(stats.norm.cdf((dd - MU) / S))

    def f(q: float) -> float:
        return float(stats.chi2.pdf(q, D - 1) * stats.norm.cdf(-(MU - dd - k * q) / S))
    return float(integrate.quad(f, 0.0, np.inf, limit=200, epsabs=1e-14, epsrel=1e-10)[0])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seeds", type=int, default=40)
    ap.add_argument("--r12", action="store_true")
    args = ap.parse_args()
    print(f"{args.seeds} seeds, d = {D}, accepted risk {RISK:g}, sampling run {N_RUN}, "
          f"IS c.o.v. target {IS_COV_TARGET}, first batch {IS_FIRST}, budget {IS_MAX_RUNS}")
    print(f"{'case':27s} {'SORM/FORM':>9s} {'runs':>6s} {'(FORM/SORM/IS)':>16s} "
          f"{'RMSE at limit':>13s} {'RMSE of P':>10s} {'goal':>6s}")
    for name, k, goal in CASES:
        resp = response(k)
        d_exact = optimize.brentq(lambda x, k=k: exact_p(k, x) - RISK, 0.0, MU)
        errs, p_errs, runs, parts = [], [], [], []
        for seed in range(args.seeds):
            rng = np.random.default_rng(seed)
            xi = rng.standard_normal((N_RUN, D))
            dc = resp(xi)
            lim = float(np.quantile(dc, RISK, method="inverted_cdf"))
            r = small_risk_limit(resp, tuple(f"x{j}" for j in range(D)), reservoir_pressure=P_R,
                                 accepted_risk=RISK, sampled_limit=lim, n_samples=N_RUN,
                                 sampled_fraction=lambda x, dc=dc: float(np.mean(dc <= x)),
                                 xi_head=xi, dc_head=dc, rng=np.random.default_rng([seed, 1]))
            errs.append(exact_p(k, r["limit"]) / RISK - 1.0)
            runs.append(r["model_runs"])
            parts.append([r["runs"].get(m, 0) for m in ("form", "sorm", "is")])

            # the estimator alone: FORM + importance sampling at the exact 1e-3 drawdown
            def g(u: np.ndarray, resp=resp, d_exact=d_exact) -> np.ndarray:
                return resp(u) - d_exact
            fr, _, _ = robust_form(g, D, form_starts(xi, dc, drawdown=d_exact,
                                                     reservoir_pressure=P_R))
            if fr is not None:
                est = importance_sampling_cv(g, fr, np.random.default_rng([seed, 2]),
                                             cov_target=IS_COV_TARGET, first=IS_FIRST,
                                             max_evals=IS_MAX_RUNS)
                p_errs.append(est.pf / RISK - 1.0)
        rmse = math.sqrt(float(np.mean(np.square(errs))))
        p_rmse = math.sqrt(float(np.mean(np.square(p_errs)))) if p_errs else math.nan
        # Breitung's factor (1 + beta kappa)^(-(d-1)/2), kappa = -2 k / s: how curved
        sorm_factor = (1.0 + stats.norm.isf(RISK) * (-2.0 * k / S)) ** (-(D - 1) / 2)
        pm = np.mean(parts, axis=0)
        print(f"{name:27s} {sorm_factor:9.2f} {np.mean(runs):6.0f} "
              f"{f'({pm[0]:.0f}/{pm[1]:.0f}/{pm[2]:.0f})':>16s} {rmse:13.3f} {p_rmse:10.3f} "
              f"{goal:6d}")
    if args.r12:
        _r12()


def _r12() -> None:
    import dataclasses
    from pathlib import Path

    from risk.assessment import assess
    from risk.scenario import load_scenario

    path = Path(__file__).resolve().parents[1] / "examples/ravenmoor_r12_deviated_perforated.toml"
    sc = dataclasses.replace(load_scenario(path), accepted_risk=1e-3)
    print("\nR-12, accepted risk 1e-3, effective-strength onset at p_r = 27.3 MPa")
    for seed in range(4):
        t = time.perf_counter()
        a = assess(sc, samples=8192, seed=seed)
        r = a.reliability[("effective_strength_onset", 0)]
        print(f"seed {seed}: limit {r['limit']:.3f} MPa by {r['limit_method']} (sampled "
              f"{r.get('sampled_limit', math.nan):.3f}), beta {r['beta']:.3f}, FORM P "
              f"{r['form_p']:.3g}, IS P {r['is_p']:.3g} (c.o.v. {r['is_cov']:.2g}), runs "
              f"{r['model_runs']} {r['runs']}, starts {r.get('starts')}, "
              f"{time.perf_counter() - t:.0f} s")


if __name__ == "__main__":
    main()
