"""Risk over depth: every mechanism at every log depth, sample and stage, vectorised.

Depth is one more array axis: the rows handed to :func:`risk.limit_states.evaluate` are
(depth x sample) flattened, in blocks of at most ``rows`` so that memory stays bounded (and a
block's arrays stay in cache); the well-level critical drawdown of each (depth, sample, stage)
is kept in single precision. The blocks run on a pool of ``workers`` threads (the numpy work
and the compiled kernels release the GIL); each writes its own slices of the outputs with the
same arithmetic whatever the block size or thread count, so the results are bit-identical for
any. The rotation into the tunnel frames is the compiled closed form and the wall angles are
not computed (``evaluate(..., rotation="compiled", angles=False)``).

Sampling: the scenario's inputs are drawn exactly as :func:`risk.assessment.assess` draws them
(same sampler, same seed), with ``ucs`` replaced by the transform's lognormal error factor
(median 1, the stated cov). That factor is the error at the first depth; down the interval the
error's normal score follows the exponential-correlation AR(1) recursion
``e_{k+1} = r e_k + sqrt(1 - r^2) w_k``, ``r = exp(-dz/L)``, exact for a stationary Gaussian
process with correlation ``exp(-|dz|/L)`` on any grid (the Ornstein-Uhlenbeck process sampled
at its own points; Gillespie 1996, Phys. Rev. E 54, 2084, eq. 1.8 — from memory), with ``w``
from the run's ``logs`` random stream. ``L = 0``: independent depths; ``L = inf``: one error
for the whole interval.

The friction transform's error (when the logs give the friction angle) follows the same
recursion with the same ``L``. Correlation pairs of the scenario that involve a depth-varying
error (``ucs``, ``friction_angle``) hold at every depth, not only the first: the errors'
copula normal scores ``z_V`` are split into their regression on the depth-constant inputs'
scores ``z_K`` and a residual, ``z_V(z) = B z_K + R(z)``, ``B = C_VK C_KK^-1``, and only the
residual follows the vector AR(1) recursion with innovations of covariance
``S = C_VV - B C_KV`` (the conditional covariance of a Gaussian vector; Anderson 2003, An
Introduction to Multivariate Statistical Analysis, 3rd ed., Wiley, thm. 2.5.1 — from memory).
A stationary vector AR(1) ``R_{k+1} = r R_k + sqrt(1 - r^2) W_k`` keeps ``cov R = S`` at every
depth, so ``cov(z_V(z), z_K) = C_VK`` and ``cov z_V(z) = C_VV`` everywhere.

Pore collapse (when the scenario has ``pore_collapse_pressure``) is evaluated at every depth
and sample by :func:`risk.limit_states.evaluate_compaction` on that depth's stresses; it is
stored as the stage pressure at the datum at or below which the depth has collapsed (the
depth's critical reservoir pressure less its pore-pressure offset from the datum).
"""

from __future__ import annotations

import dataclasses
import math
import os
import threading
from collections.abc import Callable, Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from typing import Final

import numpy as np
from numpy.typing import NDArray

from risk import decision
from risk.limit_states import evaluate, evaluate_compaction
from risk.logs.scenario import LogScenario
from risk.logs.stresses import overburden, poroelastic_horizontal
from risk.logs.survey import minimum_curvature_tvd
from risk.uncertainty import Marginal, UnitSampler, build_joint, input_columns, to_inputs
from risk.uncertainty.copula import correlated_normals
from risk.uncertainty.sampling import STREAMS, rng_stream

Array = NDArray[np.float64]

__all__ = ["DepthResult", "assess_depth", "ar1_normals", "depth_scores", "LOG_STREAM", "ROWS",
           "DEPTH_VARYING", "core_factor",
           "true_vertical_depth"]

#: Inputs whose error varies along depth (the transforms' errors), in this order.
DEPTH_VARYING: Final = ("ucs", "friction_angle")

#: Key of the transform-error stream (:func:`risk.uncertainty.rng_stream` "logs", indexed by
#: the sample chunk; its key 16 was chosen apart from the others so that no stream changed).
LOG_STREAM: Final = STREAMS["logs"]
CHUNK: Final = 4096  # samples per chunk, as in risk.assessment
ROWS: Final = 4096  # (depth x sample) rows per evaluate call: arrays of a block fit in L2


@dataclass(frozen=True)
class DepthResult:
    """Per-depth, per-sample outcomes of a log scenario (internal units).

    depth : (d,) [m]; stages : stage pressures at the datum [MPa]
    dc : mechanism -> (d, n, k) well-level critical drawdown [MPa], float32, +inf = never
    sand : (d, n, k) earliest sand-production mechanism per sample, or None
    ucs : (d, n) sampled UCS [MPa], float32; ucs_transform : (d,) the transform's median [MPa]
    profile : per-depth medians of the stresses [MPa] (sv, shmin, shmax, pp) over the first
        chunk of samples
    warnings : calibration-range and data warnings
    collapse_far, collapse_wall : (d, n) datum stage pressure [MPa] at or below which the
        depth's pore space has collapsed (far field; at the most loaded cavity wall), float32,
        -inf = never; None without ``pore_collapse_pressure``
    """

    ls: LogScenario
    depth: Array
    stages: tuple[float, ...]
    samples: int
    seed: int
    dc: Mapping[str, NDArray[np.float32]]
    sand: NDArray[np.float32] | None
    ucs: NDArray[np.float32]
    ucs_transform: Array
    friction: Array  # (d,) median friction angle [rad]
    profile: Mapping[str, Array]
    warnings: tuple[str, ...] = field(default=())
    tvd: Array | None = None  # (d,) true vertical depth [m]
    collapse_far: NDArray[np.float32] | None = None
    collapse_wall: NDArray[np.float32] | None = None
    ucs_calibration: Array | None = None  # (d,) local core factor applied to the transform [-]


def depth_scores(*, first: Array, corr: Array, vary: list[int], depth: Array,
                 length: float, rng: np.random.Generator) -> Array:
    """Copula normal scores (d, n, v) of the depth-varying inputs ``vary`` along depth.

    Parameters
    ----------
    first : (n, p) the copula-correlated normals of every uncertain input at the first depth
    corr : (p, p) their normal correlation matrix [-]
    vary : column indices of the depth-varying inputs
    depth : (d,) increasing depths [m]; length : correlation length [m] (0, finite or inf)
    rng : source of the innovations

    Returns scores whose correlation with the other inputs and with each other equals
    ``corr`` at every depth (see the module docstring).
    """
    z0 = np.asarray(first, dtype=float)
    c = np.asarray(corr, dtype=float)
    keep = [j for j in range(c.shape[0]) if j not in vary]
    c_vk = c[np.ix_(vary, keep)]
    c_kk = c[np.ix_(keep, keep)]
    b = np.linalg.solve(c_kk, c_vk.T).T if keep else np.zeros((len(vary), 0))
    s = c[np.ix_(vary, vary)] - b @ c_vk.T
    w_s, v_s = np.linalg.eigh(0.5 * (s + s.T))
    root = v_s * np.sqrt(np.clip(w_s, 0.0, None))  # root @ root.T = S
    mean = z0[:, keep] @ b.T  # (n, v)
    resid0 = z0[:, vary] - mean
    z = np.asarray(depth, dtype=float)
    out = np.empty((z.size, z0.shape[0], len(vary)))
    out[0] = resid0
    if z.size > 1:
        if math.isinf(length):
            out[1:] = resid0
        else:
            w = rng.standard_normal((z.size - 1, z0.shape[0], len(vary))) @ root.T
            if length == 0.0:
                out[1:] = w
            else:
                r = np.exp(-np.diff(z) / length)
                sq = np.sqrt(1.0 - r * r)
                for k in range(1, z.size):
                    out[k] = r[k - 1] * out[k - 1] + sq[k - 1] * w[k - 1]
    out += mean[None]
    out[0] = z0[:, vary]  # exactly the sampled scores at the first depth
    return out


def true_vertical_depth(ls: LogScenario, depth: Array) -> Array:
    """TVD [m] of the log depths: themselves (``depth_reference = "tvd"``), by minimum
    curvature on the survey, or, without one, ``MD cos I`` with the [well] inclination held
    from surface (:mod:`risk.logs.survey`)."""
    if ls.depth_reference != "md":
        return np.asarray(depth, dtype=float)
    w = ls.scenario.well
    stations = (np.asarray(ls.survey, dtype=float) if ls.survey else
                np.array([[0.0, w.inclination, w.azimuth],
                          [float(depth[-1]) + 1.0, w.inclination, w.azimuth]]))
    tvd0 = ls.survey_tvd if ls.survey else 0.0
    return minimum_curvature_tvd(md=depth, stations=stations, tvd0=tvd0)


def core_factor(*, depth: Array, core_depth: Array, ratio: Array, influence: float) -> Array:
    """Local calibration factor of the transform (d,) [-] from core/transform UCS ratios.

    ``ln c(z) = sum_i w_i(z) ln rho_i / max(1, sum_i w_i(z))``, ``w_i = exp(-|z - z_i|/D)``:
    an exponentially decaying kernel (the correlation model of the transform error) that
    equals the core at an isolated core depth, fades to the uncalibrated transform (c = 1)
    beyond a few ``D``, and is the weighted geometric mean of the ratios where cores are
    dense. ``D = inf`` gives one factor, the geometric mean of all ratios.

    Parameters
    ----------
    depth : (d,) [m]; core_depth : (c,) [m]; ratio : (c,) core UCS / transform UCS [-]
    influence : D, the influence distance of a core test [m] (> 0, or inf)
    """
    z = np.asarray(depth, dtype=float)
    zc = np.asarray(core_depth, dtype=float)
    lr = np.log(np.asarray(ratio, dtype=float))
    if math.isinf(influence):
        return np.full(z.size, math.exp(float(np.mean(lr))))
    if not influence > 0.0:
        raise ValueError(f"influence must be > 0 or inf, got {influence}")
    w = np.exp(-np.abs(z[:, None] - zc[None, :]) / influence)
    return np.asarray(np.exp((w @ lr) / np.maximum(1.0, w.sum(axis=1))))


def ar1_normals(*, first: Array, depth: Array, length: float,
                rng: np.random.Generator) -> Array:
    """Standard normals (d, n) along depth with correlation exp(-|dz|/length).

    Parameters
    ----------
    first : (n,) the normals at the first depth [-]
    depth : (d,) increasing depths [m]
    length : correlation length [m]; 0 independent, inf identical at every depth
    rng : source of the innovations (drawn only for 0 < length < inf)
    """
    first = np.asarray(first, dtype=float)
    z = np.asarray(depth, dtype=float)
    out = np.empty((z.size, first.size))
    out[0] = first
    if z.size == 1:
        return out
    if math.isinf(length):
        out[1:] = first
        return out
    w = rng.standard_normal((z.size - 1, first.size))
    if length == 0.0:
        out[1:] = w
        return out
    r = np.exp(-np.diff(z) / length)
    s = np.sqrt(1.0 - r * r)
    for k in range(1, z.size):
        out[k] = r[k - 1] * out[k - 1] + s[k - 1] * w[k - 1]
    return out


def _stress_field(ls: LogScenario, name: str, cols: Mapping[str, Array], tvd: Array) -> Array:
    """A stress or pore pressure of the scenario over depth (d, n) [MPa]."""
    sc = ls.scenario
    if sc.stress_given[name] == "absolute":
        return np.broadcast_to(cols[name][None, :], (tvd.size, cols[name].size))
    return np.asarray(tvd[:, None] * cols[f"{name}_gradient"][None, :])


def _stresses(ls: LogScenario, cols: Mapping[str, Array], tvd: Array,
              sv_log: Array | None, elastic: tuple[Array, Array] | None = None
              ) -> dict[str, Array]:
    """Sv, Shmin, SHmax and Pp [MPa] of a block of depths (b, n)."""
    m = next(iter(cols.values())).size
    pp = _stress_field(ls, "pp", cols, tvd)
    sv = (np.broadcast_to(sv_log[:, None], (tvd.size, m)) if sv_log is not None
          else _stress_field(ls, "sv", cols, tvd))
    if ls.horizontal == "ratio":  # effective-stress ratios (Zoback 2007, sec. 1.2)
        shmin = ls.k_min * (sv - pp) + pp
        shmax = ls.k_max * (sv - pp) + pp
    elif ls.horizontal == "poroelastic":
        if elastic is not None:  # static moduli from the logs, per depth (b, 1)
            e_mod, nu = elastic[0][:, None], elastic[1][:, None]
        else:
            e_mod = cols.get("young_modulus", np.zeros(m))[None, :]
            nu = cols["poisson_ratio"][None, :]
        shmin, shmax = poroelastic_horizontal(
            sv=sv, pore_pressure=pp, poisson_ratio=nu, biot=cols["biot"][None, :],
            young_modulus=e_mod, strain_min=ls.strain_min, strain_max=ls.strain_max)
    else:
        shmin = _stress_field(ls, "shmin", cols, tvd)
        shmax = _stress_field(ls, "shmax", cols, tvd)
    return {"sv": sv, "shmin": shmin, "shmax": shmax, "pp": pp}


def _run_blocks(fn: Callable[[int], None], starts: range, workers: int) -> None:
    """fn(start) for every start, on ``workers`` threads (1: in this thread, in order).

    Each worker runs the compiled kernels single-threaded (numba's thread count is per
    thread), so that two workers use two cores without oversubscribing them; the numpy work
    and the kernels release the GIL. Results do not depend on the worker count: each block
    writes its own slices, with the same arithmetic in any order.
    """
    if workers <= 1 or len(starts) <= 1:
        for d0 in starts:
            fn(d0)
        return
    import numba

    def task(d0: int) -> None:
        if numba.get_num_threads() != 1:
            numba.set_num_threads(1)
        fn(d0)

    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(task, d0) for d0 in starts]
        try:
            for fut in futures:
                fut.result()  # re-raises a worker's exception here
        except BaseException:
            for fut in futures:  # the blocks not started are dropped
                fut.cancel()
            raise


def default_workers() -> int:
    """Threads of a log run: the cores this process may use (at least 1)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - platforms without sched_getaffinity
        return max(1, os.cpu_count() or 1)


def assess_depth(ls: LogScenario, *, samples: int | None = None, seed: int | None = None,
                 rows: int = ROWS, progress: Callable[[int, int], None] | None = None,
                 workers: int | None = None) -> DepthResult:
    """Every mechanism over the log interval (see the module docstring).

    Parameters
    ----------
    ls : LogScenario
    samples, seed : int, optional
        Override the scenario's ``[analysis] samples`` and ``seed``.
    rows : int
        Largest (depth x sample) block of one evaluation (memory bound).
    progress : callable(done, total), optional
    workers : int, optional
        Threads over the depth blocks (default :func:`default_workers`). The results are the
        same, bit for bit, for any ``rows`` and ``workers``.
    """
    workers_ = default_workers() if workers is None else int(workers)
    if workers_ < 1:
        raise ValueError(f"workers must be >= 1, got {workers}")
    sc = ls.scenario
    n = sc.samples if samples is None else int(samples)
    seed_ = sc.seed if seed is None else int(seed)
    depth = np.asarray(ls.logs.depth)
    nd = depth.size
    tvd = true_vertical_depth(ls, depth)
    curves = ls.logs.curves
    t_ucs = np.asarray(ls.ucs_transform.apply(curves), dtype=float)
    if not np.all(t_ucs > 0.0):
        from risk.errors import ScenarioError

        i = int(np.nonzero(~(t_ucs > 0.0))[0][0])
        raise ScenarioError.single("logs.ucs_transform", ls.ucs_transform.name,
                                   "a transform that gives a positive UCS over the interval",
                                   found_text=f"{ls.ucs_transform.name}: UCS "
                                   f"{t_ucs[i]:.3g} MPa at {depth[i]:.2f} m")
    notes: list[str] = []
    calib = None
    if ls.core:
        zc = np.array([c[0] for c in ls.core])
        ratio = np.array([c[1] for c in ls.core]) / np.interp(zc, depth, t_ucs)
        calib = core_factor(depth=depth, core_depth=zc, ratio=ratio,
                            influence=ls.core_influence)
        t_ucs = t_ucs * calib
        where = ("every depth (one factor, the geometric mean of the ratios)"
                 if math.isinf(ls.core_influence) else
                 f"depths near the cores (influence distance "
                 f"{sc.to_display(ls.core_influence, 'length'):g} "
                 f"{sc.display_unit('length')}; factor {float(calib.min()):.3f} to "
                 f"{float(calib.max()):.3f} over the interval)")
        notes.append(f"logs.core: {zc.size} core/transform UCS ratio(s) "
                     f"{float(ratio.min()):.2f} to {float(ratio.max()):.2f} calibrate the "
                     f"transform at {where}")
    names = list(sc.inputs)
    marg = dict(sc.inputs)
    s_ucs = math.sqrt(math.log1p(ls.ucs_cov ** 2))
    marg["ucs"] = (Marginal("lognormal", (("median", 1.0), ("cov", ls.ucs_cov)))
                   if ls.ucs_cov > 0 else Marginal.constant(1.0))
    t_fric = None
    if ls.friction_transform is not None:
        t_fric = np.radians(ls.friction_transform.apply(curves))
        marg["friction_angle"] = (Marginal("normal", (("mean", 0.0), ("sd", ls.friction_sd)))
                                  if ls.friction_sd > 0 else Marginal.constant(0.0))
    joint = build_joint(names, [marg[k] for k in names], [list(p) for p in sc.correlation])
    n = 1 if joint.d == 0 else n
    vary_names = [k for k in DEPTH_VARYING if k in joint.names
                  and (k == "ucs" or t_fric is not None)]
    vary = [joint.names.index(k) for k in vary_names]
    rng = np.random.default_rng(seed_)
    sampler = UnitSampler(sc.sampling, joint.d, rng)
    k_st = len(sc.reservoir_pressure)
    sc_abs = dataclasses.replace(sc, stress_given=dict.fromkeys(sc.stress_given, "absolute"))
    sv_log = (overburden(depth=tvd, density=curves["rhob"],
                         top_stress=ls.overburden_gradient_above * tvd[0])
              if ls.overburden == "density" else None)
    elastic = None
    if ls.elastic == "logs":
        from risk.errors import ScenarioError
        from risk.logs.transforms import static_elastic

        elastic = static_elastic(curves)
        bad = ~((elastic[0] > 0.0) & (elastic[1] > 0.0) & (elastic[1] < 0.5))
        if np.any(bad):
            i = int(np.nonzero(bad)[0][0])
            raise ScenarioError.single(
                "logs.elastic", "logs", "logs giving a static Young's modulus > 0 and a "
                "Poisson's ratio in (0, 0.5) at every depth (check dt, dts, rhob)",
                found_text=f"E = {elastic[0][i]:.4g} MPa, nu = {elastic[1][i]:.3f} at "
                f"{sc.to_display(float(depth[i]), 'length'):,.1f} {sc.display_unit('length')}")
        notes.append("logs.elastic: the poroelastic stresses use the dynamic Poisson's ratio "
                     "and the static Young's modulus of Eissa & Kazi (1988) from dt, dts and "
                     "rhob at each depth (the mechanics keep the scenario's values)")
    with_collapse = "pore_collapse_pressure" in sc.inputs
    c_far = np.empty((nd, n), dtype=np.float32) if with_collapse else None
    c_wall = np.empty((nd, n), dtype=np.float32) if with_collapse else None
    dc: dict[str, NDArray[np.float32]] = {}
    ucs_all = np.empty((nd, n), dtype=np.float32)
    prof_acc: dict[str, Array] = {key: np.empty(nd) for key in ("sv", "shmin", "shmax", "pp")}
    lock = threading.Lock()
    datum = sc.well.depth
    stages = np.asarray(sc.reservoir_pressure)
    done = 0
    chunk_no = 0
    block = max(1, rows // min(CHUNK, n))
    while done < n:
        m = min(CHUNK, n - done)
        u = sampler.draw(m)
        x, xi = to_inputs(joint, u)
        cols = input_columns(joint, x)
        scores = (depth_scores(first=correlated_normals(joint, xi), corr=joint.normal_corr,
                               vary=vary, depth=depth, length=ls.correlation_length,
                               rng=rng_stream(seed_, "logs", chunk_no))
                  if vary else np.zeros((nd, m, 0)))
        pp_datum = (cols["pp"] if sc.stress_given["pp"] == "absolute"
                    else cols["pp_gradient"] * datum)

        def run_block(d0: int, cols: dict[str, Array] = cols, scores: Array = scores,
                      pp_datum: Array = pp_datum, done: int = done, m: int = m) -> None:
            """Depths d0 .. d0 + block of this chunk of samples, into disjoint slices of the
            outputs (so blocks may run in any order, on any thread)."""
            d1 = min(nd, d0 + block)
            nb = d1 - d0
            if "ucs" in vary_names:
                ucs = t_ucs[d0:d1, None] * np.exp(
                    s_ucs * scores[d0:d1, :, vary_names.index("ucs")])
            else:
                ucs = np.broadcast_to(t_ucs[d0:d1, None] * cols["ucs"][None, :], (nb, m))
            ucs_all[d0:d1, done:done + m] = ucs
            fields = _stresses(ls, cols, tvd[d0:d1],
                               None if sv_log is None else sv_log[d0:d1],
                               None if elastic is None else (elastic[0][d0:d1],
                                                             elastic[1][d0:d1]))
            if done == 0:
                for key, arr in fields.items():
                    prof_acc[key][d0:d1] = np.median(arr, axis=1)
            flat = {k: np.tile(v, nb) for k, v in cols.items()}
            flat["ucs"] = np.ascontiguousarray(ucs).ravel()
            if t_fric is not None:
                err = (ls.friction_sd * scores[d0:d1, :, vary_names.index("friction_angle")]
                       if "friction_angle" in vary_names
                       else np.broadcast_to(cols["friction_angle"][None, :], (nb, m)))
                flat["friction_angle"] = (t_fric[d0:d1, None] + err).ravel()
            for key, arr in fields.items():
                flat[key] = np.ascontiguousarray(arr).ravel()
            shift = (fields["pp"] - pp_datum[None, :]).ravel()
            p_r = stages[None, :] + shift[:, None]
            out = evaluate(flat, sc_abs, reservoir_pressure=p_r, rotation="compiled",
                           angles=False)
            if c_far is not None and c_wall is not None:
                comp = evaluate_compaction(flat, sc_abs, rotation="compiled")
                c_far[d0:d1, done:done + m] = (comp.far_field - shift).reshape(nb, m)
                c_wall[d0:d1, done:done + m] = (comp.wall - shift).reshape(nb, m)
            for key, res in out.items():
                with lock:
                    if key not in dc:
                        dc[key] = np.empty((nd, n, k_st), dtype=np.float32)
                dc[key][d0:d1, done:done + m] = res.well.reshape(nb, m, k_st)

        _run_blocks(run_block, range(0, nd, block), workers_)
        done += m
        chunk_no += 1
        if progress is not None:
            progress(done, n)
    sand_keys = [k for k in decision.SAND_PRODUCTION if k in dc]
    sand = None
    if sand_keys:
        sand = dc[sand_keys[0]].copy() if len(sand_keys) > 1 else dc[sand_keys[0]]
        for k in sand_keys[1:]:
            np.minimum(sand, dc[k], out=sand)
    fric = (t_fric if t_fric is not None
            else np.full(nd, sc.inputs["friction_angle"].median))
    from risk.logs.transforms import range_warnings

    def shown(z: float) -> str:
        return f"{sc.to_display(z, 'length'):,.1f} {sc.display_unit('length')}"

    if ls.depth_reference == "md":
        notes.append(f"logs: depths are measured depth; TVD {shown(float(tvd[0]))} to "
                     f"{shown(float(tvd[-1]))} by "
                     + ("minimum curvature on the survey" if ls.survey else
                        "the [well] inclination held from surface (no survey)"))
        if ls.survey:
            st_ = np.asarray(ls.survey)
            inc = np.interp(depth, st_[:, 0], st_[:, 1])
            off = float(np.max(np.abs(inc - sc.well.inclination)))
            if off > math.radians(5.0):
                notes.append(f"logs.survey: the survey inclination over the interval differs "
                             f"from [well] inclination by up to {math.degrees(off):.1f} deg; "
                             "the mechanics use the [well] orientation at every depth")
    warn = range_warnings(ls.ucs_transform, curves, depth, t_ucs, show_depth=shown)
    if ls.friction_transform is not None and t_fric is not None:
        warn += range_warnings(ls.friction_transform, curves, depth,
                               np.degrees(t_fric), show_depth=shown, key="logs.friction_transform")
    return DepthResult(ls=ls, depth=depth, stages=tuple(sc.reservoir_pressure), samples=n,
                       seed=seed_, dc=dc, sand=sand, ucs=ucs_all, ucs_transform=t_ucs,
                       friction=np.asarray(fric), profile=prof_acc,
                       tvd=np.asarray(tvd), collapse_far=c_far, collapse_wall=c_wall,
                       ucs_calibration=calib,
                       warnings=tuple(ls.warnings) + tuple(warn) + ls.logs.notes + tuple(notes))
