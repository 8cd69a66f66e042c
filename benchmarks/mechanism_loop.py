"""The careful per-sample loop of every mechanism a run computes, for the whole-run ratio.

``python benchmarks/run.py --only run`` compares a whole `risk run` with two per-sample loops:
the issue's (the yield onset alone, :func:`run.scipy_loop`) and this one, which computes per
case what the run computes: the yield onset, the effective-strength onset in the far field and
at the tunnel root (5 radii), tunnel collapse, and per sample pore collapse. Each mechanism
takes its straightforward per-sample form on the run's own sampled inputs (scalars through the
library's numpy formulas, scipy's Brent root where a root is needed), so the per-case costs
are those of a careful hand-written loop, not of the run's vectorised or compiled paths:

- yield onset: :func:`yield_one`, the issue's loop (a Brent root in the wall pressure of the
  largest Mohr-Coulomb excess over the wall, each found by a 24-angle scan refined with
  scipy's bounded minimiser);
- effective-strength onset, far field: the closed form (3 s1 - s3 - U - A p_r)/(2 - A)
  (sanding.cylinder_onset_wall_pressure on scalars; cheaper than a loop would usually be);
- the same at the tunnel root: per radius, a Brent root in the wall pressure of
  3 s1 - s3 - (2 - A) p - A p_r - U with the tunnel's far field from root.root_stress at p;
- tunnel collapse: a Brent root of the collapse margin (cavity.mohr_coulomb_cavity at one wall
  pressure) between the seepage limit and first yield, the ends decided as the run does;
- pore collapse (per sample): the far-field cap in closed form (cap.far_field_cap_pressure),
  a Brent root in the reservoir pressure of the largest cap excess over every shot's wall
  (48 angles, numpy over the angles), and the wall state at each stage's largest drawdown.

:func:`per_case_seconds` times each on a few samples and checks the answers against the run's
own evaluation of the same samples (``agree``).
"""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from risk import limit_states as ls
from risk.mechanics import cap, cavity, root, sanding
from risk.mechanics import stresses as st
from risk.mechanics.criteria import CRITERIA, StrengthParameters
from risk.scenario import load_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs

ANGLES = (np.arange(48) + 0.5) * np.pi / 48


def yield_one(loc: st.LocalStress, p_r: float, big_a: float, nu: float, ucs: float,
              phi: float) -> float:
    """Critical wall pressure [MPa] of yield onset, the issue's per-sample way."""
    prm = StrengthParameters(ucs, phi)

    def f(theta: float, p: float) -> float:
        w = st.wall_stresses(loc, theta=theta, wall_pressure=p, reservoir_pressure=p_r,
                             poro_coefficient=big_a, poisson_ratio=nu)
        m = np.zeros((3, 3))
        m[1, 1], m[2, 2] = w.hoop - p, w.axial - p
        m[1, 2] = m[2, 1] = w.shear_hoop_axial
        ev = np.linalg.eigvalsh(m)
        return float(CRITERIA["mohr-coulomb"](ev[2], ev[1], ev[0], prm))

    def g(p: float) -> float:
        grid = np.linspace(0, np.pi, 24, endpoint=False)
        vals = [f(t, p) for t in grid]
        k = int(np.argmax(vals))
        r = minimize_scalar(lambda t: -f(t, p), bounds=(grid[k] - 0.14, grid[k] + 0.14),
                            method="bounded", options={"xatol": 1e-10})
        return max(vals[k], -float(r.fun))

    if g(p_r) >= 0:
        return p_r
    if g(0.0) < 0:
        return -np.inf
    return float(brentq(g, 0.0, p_r, xtol=1e-12))


def root_one(tensor: np.ndarray, well_frame: np.ndarray, frame: np.ndarray, shot: float,
             nu: float, p_r: float, big_a: float, u: float) -> float:
    """Critical drawdown [MPa] of the effective-strength onset at the tunnel root, worst over
    root.ROOT_RADII, by a Brent root per radius."""
    best = np.inf
    for ratio in root.ROOT_RADII:
        def excess(p: float, ratio: float = ratio) -> float:
            t = root.root_stress(tensor, well_frame=well_frame, shot_angle=shot,
                                 radius_ratio=ratio, wall_pressure=p, poisson_ratio=nu)
            s1, s3 = st.in_plane_principal(st.local_stress(t, frame))
            return float(3.0 * s1 - s3 - (2.0 - big_a) * p - big_a * p_r - u)

        if excess(p_r) >= 0.0:
            pw = p_r
        elif excess(0.0) < 0.0:
            pw = -np.inf
        else:
            pw = brentq(excess, 0.0, p_r, xtol=1e-12)
        best = min(best, float(sanding.classify_wall_pressure(pw, p_r)))
    return best


def collapse_one(sigma0: float, p_r: float, r_w: float, r_e: float, ucs: float, phi: float,
                 psi: float, e_mod: float, nu: float, biot: float, crit: float) -> float:
    """Critical wall pressure [MPa] of tunnel collapse by a Brent root of the margin."""
    kw = dict(sigma0=sigma0, p_r=p_r, r_w=r_w, r_e=r_e, ucs=ucs, friction_angle=phi,
              dilation_angle=psi, young_modulus=e_mod, poisson_ratio=nu, biot=biot)

    def margin(p: float) -> float:
        r = cavity.mohr_coulomb_cavity(p_w=p, **kw)
        if bool(r.seepage_unstable):
            return 1.0
        if not bool(r.yielded):
            return float((1 + nu) * (r.wall_hoop_stress_eff - ucs) / e_mod - crit)
        return float(r.wall_plastic_strain - crit)

    big_a = biot * (1 - 2 * nu) / (1 - nu)
    p_hi = min(p_r, p_r - (ucs - 2 * (sigma0 - p_r)) / (2 - big_a))
    p_seep = p_r - ucs * np.log(r_e / r_w)
    if p_hi < 0.0:
        return -np.inf
    if p_seep >= p_hi:
        return p_hi
    f_hi = margin(p_hi) if p_hi >= p_r else -crit
    if f_hi >= 0.0:
        return p_hi
    p_lo = min(p_seep + 1e-9, p_hi) if p_seep > 0.0 else 0.0
    if margin(p_lo) < 0.0:
        return p_seep if p_seep > 0.0 else -np.inf
    return float(brentq(margin, p_lo, p_hi, xtol=1e-9, rtol=1e-12))


def pore_one(args: tuple[float, ...], frames: np.ndarray, stages: np.ndarray,
             max_drawdown: float) -> tuple[float, float, list[float]]:
    """Far-field and wall critical reservoir pressures [MPa] and the wall excess at each
    stage's largest drawdown [MPa] of one sample (modified Cam clay cap)."""
    sv, shmax, shmin, p0, g, g_big, az, nu, p_star, m, big_a = args
    far = float(cap.far_field_cap_pressure(sv=sv, shmax0=shmax, shmin0=shmin, p0=p0, path=g,
                                           path_shmax=g_big, collapse_pressure=p_star, m=m))

    def wall(p_r: float, drawdown: float = 0.0) -> float:
        t = ls.depleted_far_field(sv=sv, shmax=shmax, shmin=shmin, pore_pressure=p0, path=g,
                                  path_shmax=g_big, shmax_azimuth=az, reservoir_pressure=p_r)
        worst = -np.inf
        for frame in frames:
            w = st.wall_stresses(st.local_stress(t, frame), theta=ANGLES,
                                 wall_pressure=p_r - drawdown, reservoir_pressure=p_r,
                                 poro_coefficient=big_a, poisson_ratio=nu)
            pw = p_r - drawdown
            e = cap.wall_cap_excess(hoop=w.hoop - pw, axial=w.axial - pw,
                                    shear=w.shear_hoop_axial, collapse_pressure=p_star, m=m)
            worst = max(worst, float(np.max(e)))
        return worst

    if wall(p0) >= 0.0:
        p_wall = p0
    elif wall(0.0) < 0.0:
        p_wall = -np.inf
    else:
        p_wall = float(brentq(wall, 0.0, p0, xtol=1e-12))
    at_max = [wall(float(p), min(max_drawdown, float(p))) for p in stages]
    return far, p_wall, at_max


def _timed(fn: Callable[..., Any], *args: Any, **kw: Any) -> tuple[float, Any]:
    """CPU seconds of fn(*args, **kw) and its value."""
    t = time.process_time()
    out = fn(*args, **kw)
    return time.process_time() - t, out


def per_case_seconds(scenario_file: Path, samples: int = 2, seed: int = 5
                     ) -> tuple[dict[str, float], bool]:
    """CPU seconds per case of each mechanism's per-sample form (per tunnel case: sample x
    shot x stage; pore collapse per sample) on ``samples`` samples of the scenario, and whether
    every answer agrees with the run's evaluation of the same samples (1e-6 MPa)."""
    sc = load_scenario(scenario_file)
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names], [list(p) for p in sc.correlation])
    x, _ = to_inputs(joint, UnitSampler("sobol", joint.d, np.random.default_rng(seed)).draw(
        max(samples, 2)))
    raw = {k: v[:samples] for k, v in input_columns(joint, x).items()}
    ref = ls.evaluate(raw, sc, parts=True)
    ref_c = ls.evaluate_compaction(raw, sc)
    cols = ls.strength_scaled(raw)
    phys = ls.physical_inputs(cols, sc)
    stages = np.asarray(sc.reservoir_pressure)
    nu, biot = cols["poisson_ratio"], cols["biot"]
    big_a = st.poroelastic_coefficient(biot=biot, poisson_ratio=nu)
    g, g_big = ls.depletion_paths(cols)
    tensor = ls.depleted_far_field(
        sv=phys["sv"][:, None], shmax=phys["shmax"][:, None], shmin=phys["shmin"][:, None],
        pore_pressure=phys["pp"][:, None], path=g[:, None], path_shmax=g_big[:, None],
        shmax_azimuth=np.asarray(cols["shmax_azimuth"])[:, None], reservoir_pressure=stages)
    frames = ls._frames(sc)
    w = sc.well
    well_frame = st.cavity_frame(w.inclination, w.azimuth)
    twc = (np.asarray(cols["twc"]) if "twc" in cols
           else np.asarray(cols["twc_ratio"]) * np.asarray(cols["ucs"]))
    u = sanding.effective_strength(twc=twc, factor=np.asarray(
        cols.get("twc_factor", np.full(samples, ls.DEFAULT_TWC_FACTOR))))
    r_w = ls.cavity_radius(sc)
    cost = {"yield onset": 0.0, "effective-strength onset, far field": 0.0,
            "effective-strength onset, tunnel root (5 radii)": 0.0, "tunnel collapse": 0.0}
    agree = True
    for i in range(samples):
        for j, frame in enumerate(frames):
            for k, p_r in enumerate(stages):
                loc = st.local_stress(tensor[i, k], frame)
                a, n_i = float(big_a[i]), float(nu[i])
                ucs, phi = float(cols["ucs"][i]), float(cols["friction_angle"][i])
                dt, pw = _timed(yield_one, loc, p_r, a, n_i, ucs, phi)
                cost["yield onset"] += dt
                dc = float(sanding.classify_wall_pressure(pw, p_r))
                agree &= bool(np.isclose(dc, ref["yield_onset"].by_direction[i, j, k], atol=1e-6))
                s1, s3 = (float(v) for v in st.in_plane_principal(loc))
                dt, pw = _timed(sanding.cylinder_onset_wall_pressure, sigma_1=s1, sigma_3=s3,
                                strength=u[i], reservoir_pressure=p_r, poro_coefficient=a)
                cost["effective-strength onset, far field"] += dt
                dc = float(sanding.classify_wall_pressure(pw, p_r))
                agree &= bool(np.isclose(dc, ref["effective_strength_onset"].parts["far_field"][
                    i, j, k], atol=1e-6))
                dt, dc = _timed(root_one, tensor[i, k], well_frame, frame,
                                float(w.shot_angles[j]), n_i, p_r, a, u[i])
                cost["effective-strength onset, tunnel root (5 radii)"] += dt
                agree &= bool(np.isclose(dc, ref["effective_strength_onset"].parts["root"][
                    i, j, k], atol=1e-6))
                dt, pw = _timed(collapse_one, 0.5 * (3 * s1 - s3), p_r, r_w,
                                float(cols["drainage_radius"][i]), ucs, phi,
                                float(cols.get("dilation_angle", np.zeros(samples))[i]),
                                float(cols["young_modulus"][i]), n_i, float(biot[i]),
                                float(cols["critical_plastic_strain"][i]))
                cost["tunnel collapse"] += dt
                agree &= bool(np.isclose(p_r - pw, ref["tunnel_collapse"].by_direction[i, j, k],
                                         atol=1e-6))
    cases = samples * frames.shape[0] * stages.size
    out = {key: v / cases for key, v in cost.items()}
    m_slope = (np.asarray(cols["cap_m"]) if "cap_m" in cols
               else cap.critical_state_slope(np.asarray(cols["friction_angle"])))
    t_pore = 0.0
    for i in range(samples):
        args = tuple(float(np.asarray(v)[i]) for v in (
            phys["sv"], phys["shmax"], phys["shmin"], phys["pp"], g, g_big,
            cols["shmax_azimuth"], nu, cols["pore_collapse_pressure"], m_slope, big_a))
        dt, (far, p_wall, at_max) = _timed(pore_one, args, frames, stages, sc.max_drawdown)
        t_pore += dt
        agree &= bool(np.isclose(far, ref_c.far_field[i], atol=1e-6)
                      and np.isclose(p_wall, ref_c.wall[i], atol=1e-6)
                      and np.allclose(at_max, ref_c.wall_at_max_drawdown[i], atol=1e-6))
    out["pore collapse (per sample)"] = t_pore / samples
    return out, agree
