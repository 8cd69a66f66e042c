"""Risk over depth: every mechanism at every log depth, sample and stage, vectorised.

Depth is one more array axis: the rows handed to :func:`risk.limit_states.evaluate` are
(depth x sample) flattened, in blocks of at most ``rows`` so that memory stays bounded; the
well-level critical drawdown of each (depth, sample, stage) is kept in single precision.

Sampling: the scenario's inputs are drawn exactly as :func:`risk.assessment.assess` draws them
(same sampler, same seed), with ``ucs`` replaced by the transform's lognormal error factor
(median 1, the stated cov). That factor is the error at the first depth; down the interval the
error's normal score follows the exponential-correlation AR(1) recursion
``e_{k+1} = r e_k + sqrt(1 - r^2) w_k``, ``r = exp(-dz/L)``, exact for a stationary Gaussian
process with correlation ``exp(-|dz|/L)`` on any grid (the Ornstein-Uhlenbeck process sampled
at its own points; Gillespie 1996, Phys. Rev. E 54, 2084, eq. 1.8 — from memory), with ``w``
from the run's ``logs`` random stream. ``L = 0``: independent depths; ``L = inf``: one error
for the whole interval.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Final

import numpy as np
from numpy.typing import NDArray

from risk import decision
from risk.limit_states import evaluate
from risk.logs.scenario import LogScenario
from risk.logs.stresses import overburden, poroelastic_horizontal
from risk.uncertainty import Marginal, UnitSampler, build_joint, input_columns, to_inputs
from risk.uncertainty.sampling import STREAMS

Array = NDArray[np.float64]

__all__ = ["DepthResult", "assess_depth", "ar1_normals", "LOG_STREAM", "ROWS"]

#: Key of the transform-error stream (numpy SeedSequence entropy [seed, key, chunk]); kept
#: apart from :data:`risk.uncertainty.STREAMS` keys so that no other stream changes.
LOG_STREAM: Final = 16
if LOG_STREAM in STREAMS.values():  # pragma: no cover - a module invariant
    raise RuntimeError("risk.logs.depth.LOG_STREAM collides with a key of uncertainty.STREAMS")
CHUNK: Final = 4096  # samples per chunk, as in risk.assessment
ROWS: Final = 32_768  # (depth x sample) rows per evaluate call


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
              sv_log: Array | None) -> dict[str, Array]:
    """Sv, Shmin, SHmax and Pp [MPa] of a block of depths (b, n)."""
    m = next(iter(cols.values())).size
    pp = _stress_field(ls, "pp", cols, tvd)
    sv = (np.broadcast_to(sv_log[:, None], (tvd.size, m)) if sv_log is not None
          else _stress_field(ls, "sv", cols, tvd))
    if ls.horizontal == "ratio":  # effective-stress ratios (Zoback 2007, sec. 1.2)
        shmin = ls.k_min * (sv - pp) + pp
        shmax = ls.k_max * (sv - pp) + pp
    elif ls.horizontal == "poroelastic":
        shmin, shmax = poroelastic_horizontal(
            sv=sv, pore_pressure=pp, poisson_ratio=cols["poisson_ratio"][None, :],
            biot=cols["biot"][None, :],
            young_modulus=cols.get("young_modulus", np.zeros(m))[None, :],
            strain_min=ls.strain_min, strain_max=ls.strain_max)
    else:
        shmin = _stress_field(ls, "shmin", cols, tvd)
        shmax = _stress_field(ls, "shmax", cols, tvd)
    return {"sv": sv, "shmin": shmin, "shmax": shmax, "pp": pp}


def assess_depth(ls: LogScenario, *, samples: int | None = None, seed: int | None = None,
                 rows: int = ROWS, progress: Callable[[int, int], None] | None = None
                 ) -> DepthResult:
    """Every mechanism over the log interval (see the module docstring).

    Parameters
    ----------
    ls : LogScenario
    samples, seed : int, optional
        Override the scenario's ``[analysis] samples`` and ``seed``.
    rows : int
        Largest (depth x sample) block of one evaluation (memory bound).
    progress : callable(done, total), optional
    """
    sc = ls.scenario
    n = sc.samples if samples is None else int(samples)
    seed_ = sc.seed if seed is None else int(seed)
    depth = np.asarray(ls.logs.depth)
    nd = depth.size
    tvd = depth  # the log depth is taken as true vertical depth (stated in the memo)
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
    if ls.core:
        zc = np.array([c[0] for c in ls.core])
        ratio = np.array([c[1] for c in ls.core]) / np.interp(zc, depth, t_ucs)
        factor = float(np.exp(np.mean(np.log(ratio))))
        t_ucs = t_ucs * factor
        notes.append(f"logs.core: the transform is calibrated by a factor {factor:.3f} (geometric"
                     f" mean of {zc.size} core/transform ratio(s), "
                     f"{float(ratio.min()):.2f} to {float(ratio.max()):.2f})")
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
    rng = np.random.default_rng(seed_)
    sampler = UnitSampler(sc.sampling, joint.d, rng)
    k_st = len(sc.reservoir_pressure)
    sc_abs = dataclasses.replace(sc, stress_given=dict.fromkeys(sc.stress_given, "absolute"))
    sv_log = (overburden(depth=tvd, density=curves["rhob"],
                         top_stress=ls.overburden_gradient_above * tvd[0])
              if ls.overburden == "density" else None)
    dc: dict[str, NDArray[np.float32]] = {}
    ucs_all = np.empty((nd, n), dtype=np.float32)
    prof_acc: dict[str, Array] = {}
    datum = sc.well.depth
    stages = np.asarray(sc.reservoir_pressure)
    done = 0
    chunk_no = 0
    block = max(1, rows // min(CHUNK, n))
    while done < n:
        m = min(CHUNK, n - done)
        u = sampler.draw(m)
        x, _ = to_inputs(joint, u)
        cols = input_columns(joint, x)
        first = (np.log(cols["ucs"]) / s_ucs if ls.ucs_cov > 0 else np.zeros(m))
        eps = ar1_normals(first=first, depth=depth, length=ls.correlation_length,
                          rng=np.random.default_rng([seed_, LOG_STREAM, chunk_no]))
        pp_datum = (cols["pp"] if sc.stress_given["pp"] == "absolute"
                    else cols["pp_gradient"] * datum)
        for d0 in range(0, nd, block):
            d1 = min(nd, d0 + block)
            nb = d1 - d0
            ucs = (t_ucs[d0:d1, None] * np.exp(s_ucs * eps[d0:d1])) if ls.ucs_cov > 0 else (
                np.broadcast_to(t_ucs[d0:d1, None] * cols["ucs"][None, :], (nb, m)))
            ucs_all[d0:d1, done:done + m] = ucs
            fields = _stresses(ls, cols, tvd[d0:d1],
                               None if sv_log is None else sv_log[d0:d1])
            if done == 0:
                for key, arr in fields.items():
                    prof_acc.setdefault(key, np.empty(nd))[d0:d1] = np.median(arr, axis=1)
            flat = {k: np.tile(v, nb) for k, v in cols.items()}
            flat["ucs"] = np.ascontiguousarray(ucs).ravel()
            if t_fric is not None:
                flat["friction_angle"] = (t_fric[d0:d1, None] + cols["friction_angle"][None, :]
                                          ).ravel()
            for key, arr in fields.items():
                flat[key] = np.ascontiguousarray(arr).ravel()
            shift = (fields["pp"] - pp_datum[None, :]).ravel()
            p_r = stages[None, :] + shift[:, None]
            out = evaluate(flat, sc_abs, reservoir_pressure=p_r)
            for key, res in out.items():
                if key not in dc:
                    dc[key] = np.empty((nd, n, k_st), dtype=np.float32)
                dc[key][d0:d1, done:done + m] = res.well.reshape(nb, m, k_st)
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

    warn = range_warnings(ls.ucs_transform, curves, depth, t_ucs, show_depth=shown)
    if ls.friction_transform is not None and t_fric is not None:
        warn += range_warnings(ls.friction_transform, curves, depth,
                               np.degrees(t_fric), show_depth=shown, key="logs.friction_transform")
    return DepthResult(ls=ls, depth=depth, stages=tuple(sc.reservoir_pressure), samples=n,
                       seed=seed_, dc=dc, sand=sand, ucs=ucs_all, ucs_transform=t_ucs,
                       friction=np.asarray(fric), profile=prof_acc,
                       warnings=tuple(ls.warnings) + tuple(warn) + ls.logs.notes + tuple(notes))
