"""Limit states: what each mechanism predicts for a block of samples (pure, vectorised).

:func:`evaluate` runs every mechanism on a block of sampled inputs over samples x directions
x stages: first yield at the wall, effective-strength (TWC) sanding onset, tunnel collapse;
:func:`evaluate_compaction` the pore-collapse pressures; :func:`collapse_profile` the plastic
zone along the drawdown axis. :mod:`risk.assessment` calls them chunk by chunk.

Directions: an open hole is one direction (the well itself); a perforated well has one
direction per shot. The well-level critical drawdown of a sample is the smallest over its
directions (the first tunnel to fail).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import elementwise

from risk.mechanics import cap, cavity, compaction, root, sanding, tip
from risk.mechanics import stresses as st
from risk.mechanics.criteria import StrengthParameters, hoek_brown_rock_mass
from risk.mechanics.yield_onset import critical_wall_pressure
from risk.scenario import Scenario

Array = NDArray[np.float64]

__all__ = ["MECHANISMS", "DEFAULT_TWC_FACTOR", "MechanismResult", "CompactionResult",
           "physical_inputs", "depletion_paths", "evaluate", "evaluate_compaction",
           "collapse_profile", "cavity_radius", "PROFILE_SAMPLES", "PROFILE_POINTS",
           "water_factor"]

#: Mechanisms by result key, with the human name used in tables and the memo.
MECHANISMS: Final[dict[str, str]] = {
    "yield_onset": "Yield onset at the wall",
    "effective_strength_onset": "Effective-strength sanding onset (TWC)",
    "tunnel_collapse": "Tunnel collapse (critical plastic strain)",
    "pore_collapse": "Pore collapse under depletion",
}
DEFAULT_TWC_FACTOR: Final = 3.1  # Willson et al. (2002), SPE 78168, as quoted by Bellarby (2009)

@dataclass(frozen=True)
class MechanismResult:
    """Per-sample outcomes of one mechanism.

    by_direction : critical drawdown [MPa], shape (n, n_directions, n_stages); +inf = never.
        Single precision for runs above LARGE_RUN samples (relative rounding 6e-8, far below
        any input uncertainty), so that 10^7 samples fit in memory.
    theta : wall angle [rad] where the limit is first reached, for the first HEAD_ROWS
        samples (nan = never)
    """

    name: str
    by_direction: Array
    theta: Array
    #: the parts the governing result is the worst of, same shape as by_direction: for a
    #: perforated well's effective-strength onset "far_field" (the tunnel in the far-field
    #: stress) and "root" (in the wellbore's field at its root and along its first wellbore
    #: radii, risk.mechanics.root); empty when there is one part only
    parts: Mapping[str, Array] = field(default_factory=dict)

    @property
    def well(self) -> Array:
        """Well-level critical drawdown [MPa], (n, n_stages): first direction to fail."""
        d = self.by_direction
        if d.ndim != 3 or d.shape[1] < 2:
            return np.asarray(d.min(axis=1))
        # pairwise minima over the few directions: the same values as d.min(axis=1) (a
        # minimum is exact), several times faster than numpy's reduction along a middle axis
        out = np.minimum(d[:, 0], d[:, 1])
        for j in range(2, d.shape[1]):
            np.minimum(out, d[:, j], out=out)
        return out


@dataclass(frozen=True)
class CompactionResult:
    """Critical reservoir pressure [MPa] of pore collapse per sample: compaction starts when the
    reservoir is depleted to or below it. ``-inf``: never above zero pressure.

    far_field : (n,) far-field mean effective stress reaches P*
    wall : (n,) largest mean effective stress at any cavity wall (zero drawdown) reaches P*
    """

    far_field: Array
    wall: Array
    initial: Array | None = None  # initial pore pressure p0 of each sample [MPa]
    #: far-field critical reservoir pressure of the mean-stress criterion (the q = 0 case)
    #: when the cap governs [MPa], (n,); None when the mean-stress criterion governs
    far_field_mean_stress: Array | None = None
    #: largest compaction excess E [MPa] at any cavity wall at each stage with the drawdown
    #: min(max_drawdown, p_r) (E >= 0: compacting), (n, n_stages)
    wall_at_max_drawdown: Array | None = None

def physical_inputs(cols: Mapping[str, Array], scenario: Scenario) -> dict[str, Array]:
    """Absolute stresses and pore pressure [MPa] from the sampled columns (gradients x depth)."""
    depth = scenario.well.depth
    out: dict[str, Array] = {}
    for name in ("sv", "shmax", "shmin", "pp"):
        if scenario.stress_given[name] == "absolute":
            out[name] = np.asarray(cols[name], dtype=float)
        else:
            out[name] = np.asarray(cols[f"{name}_gradient"], dtype=float) * depth
    return out


def depletion_paths(cols: Mapping[str, Array]) -> tuple[Array, Array]:
    """Depletion paths dSh/dp and dSH/dp [1] (docs/derivations.md, sec. 2):
    ``depletion_path``, or the uniaxial-strain value alpha (1 - 2 nu)/(1 - nu);
    ``depletion_path_shmax`` defaults to it."""
    nu = np.asarray(cols["poisson_ratio"], dtype=float)
    biot = np.asarray(cols["biot"], dtype=float)
    path = (np.asarray(cols["depletion_path"], dtype=float) if "depletion_path" in cols
            else st.uniaxial_strain_path(biot=biot, poisson_ratio=nu))
    path_big = (np.asarray(cols["depletion_path_shmax"], dtype=float)
                if "depletion_path_shmax" in cols else path)
    return path, path_big


def depleted_far_field(*, sv: Array, shmax: Array, shmin: Array, pore_pressure: Array,
                       path: Array, path_shmax: Array, shmax_azimuth: Array,
                       reservoir_pressure: Array | float) -> Array:
    """Far-field total stress tensor [MPa] once the reservoir is at ``reservoir_pressure``:
    both horizontal stresses follow their depletion paths from their initial values, S_v stays
    (docs/derivations.md, sec. 2); the one place this is written."""
    big = st.depleted_stress(initial=shmax, initial_pore_pressure=pore_pressure,
                             reservoir_pressure=reservoir_pressure, path=path_shmax)
    small = st.depleted_stress(initial=shmin, initial_pore_pressure=pore_pressure,
                               reservoir_pressure=reservoir_pressure, path=path)
    return np.asarray(st.far_field_tensor(shmax=big, shmin=small, sv=sv,
                                          shmax_azimuth=shmax_azimuth))


def water_factor(cols: Mapping[str, Array], scenario: Scenario) -> Array | None:
    """Strength factor of water weakening per sample and stage [1], (n, 1, n_stages), or None
    when the scenario has no water (every result then as without the rule).

    Linear between the as-tested rock (rise in water saturation S = 0, factor 1) and the
    fully water-saturated one (S = 1, factor r = ``wet_strength_ratio``, the measured
    saturated-to-as-tested strength ratio): f = 1 - (1 - r) S. It multiplies UCS (sigma_ci),
    the effective strength k TWC and the critical plastic strain; friction angle, tensile
    strength and the elastic constants stay. The reduction of strength with water saturation
    of weak sandstones is documented by Hawkins & McConnell (1992), Q. J. Eng. Geol. 25,
    115-130 (from memory); the linear interpolation in S is this tool's stated assumption
    (docs/derivations.md, sec. 12).
    """
    sw = scenario.water_saturation
    if not sw or not any(v > 0.0 for v in sw):
        return None
    r = np.asarray(cols["wet_strength_ratio"], dtype=float)[:, None, None]
    return np.asarray(1.0 - (1.0 - r) * np.asarray(sw, dtype=float)[None, None, :])


def strength_scaled(cols: Mapping[str, Array]) -> Mapping[str, Array]:
    """The columns with UCS multiplied by the strength multiplier (``strength_multiplier``;
    absent: 1, the columns unchanged) [internal units].

    The multiplier is a model-calibration input: a field-wide factor between the strength the
    samples were tested at and the strength the model should use, the "log strength
    multiplier" a field's sanding history calibrates (docs/derivations.md, sec. 14). It
    scales UCS and so everything the model derives from UCS: the Mohr-Coulomb cohesion, the
    Hoek-Brown sigma_ci and a TWC given as ``twc_ratio`` x UCS. A TWC given directly, the
    tensile strength and the critical plastic strain are measurements of their own and stay.
    """
    if "strength_multiplier" not in cols:
        return cols
    out = dict(cols)
    out["ucs"] = (np.asarray(cols["ucs"], dtype=float)
                  * np.asarray(cols["strength_multiplier"], dtype=float))
    return out


def _frames(scenario: Scenario) -> Array:
    w = scenario.well
    if w.completion == "openhole":
        return st.cavity_frame(w.inclination, w.azimuth)[None]
    return st.tunnel_frame(well_inclination=w.inclination, well_azimuth=w.azimuth,
                           shot_angle=np.asarray(w.shot_angles))


def evaluate(cols: Mapping[str, Array], scenario: Scenario,
             only: set[str] | None = None, *, parts: bool = False,
             reservoir_pressure: Array | None = None, rotation: str = "einsum",
             angles: bool = True, cavity_path: str = "compiled") -> dict[str, MechanismResult]:
    """Run every mechanism on a block of samples.

    Parameters
    ----------
    cols : mapping of name -> ndarray (n,)
        Every scenario input [internal units] (fixed ones as constant columns).
    scenario : Scenario
    only : set of mechanism keys, optional
        Evaluate only these (yield onset is always computed when asked for or when ``only`` is
        None).
    parts : bool
        Also return the parts a result is the worst of (MechanismResult.parts), computed
        when they govern anyway: the tunnel-root check of a perforated well.
    reservoir_pressure : ndarray (n, n_stages), optional
        Stage pressures of each sample [MPa] in place of ``scenario.reservoir_pressure``
        (samples at different depths of a log interval, :mod:`risk.logs.depth`).
    rotation : {"einsum", "compiled"}
        How the far-field tensors are rotated into the cavity frames: the stacked 3 x 3
        products of :func:`risk.mechanics.stresses.local_stress` (the default, whose results
        the single-interval runs keep bit for bit) or the compiled closed form of
        :func:`risk.mechanics.stresses.local_stress_frames` (equal to rounding, several times
        faster; the log runs use it).
    angles : bool
        False: the wall angles of the yield onset (Mohr-Coulomb) and of the effective-strength
        onset are not computed (their ``theta`` is then all nan; the log runs keep only the
        critical drawdowns). The critical drawdowns are the same either way.
    cavity_path : {"compiled", "numpy"}
        How tunnel collapse (Mohr-Coulomb) and the tunnel-root onset are computed: by the
        compiled kernels of :mod:`risk.mechanics._collapse_kernel` (the default; the same
        arithmetic per case, equal to rounding, docs/derivations.md sec. 16) or by the numpy
        reference path.

    Returns
    -------
    dict of mechanism key -> MechanismResult, arrays (n, n_directions, n_stages)
    """
    if cavity_path not in ("compiled", "numpy"):
        raise ValueError(f"cavity_path must be 'compiled' or 'numpy', got {cavity_path!r}")
    cols = strength_scaled(cols)
    phys = physical_inputs(cols, scenario)
    n = phys["sv"].size
    stages = (np.asarray(scenario.reservoir_pressure)[None, :] if reservoir_pressure is None
              else np.asarray(reservoir_pressure, dtype=float))  # (1 or n, k)
    nu = np.asarray(cols["poisson_ratio"], dtype=float)
    biot = np.asarray(cols["biot"], dtype=float)
    big_a = st.poroelastic_coefficient(biot=biot, poisson_ratio=nu)
    path, path_big = depletion_paths(cols)
    p0 = phys["pp"][:, None]
    tensor = depleted_far_field(
        sv=phys["sv"][:, None], shmax=phys["shmax"][:, None], shmin=phys["shmin"][:, None],
        pore_pressure=p0, path=path[:, None], path_shmax=path_big[:, None],
        shmax_azimuth=np.asarray(cols["shmax_azimuth"])[:, None], reservoir_pressure=stages)
    frames = _frames(scenario)  # (m, 3, 3)
    if rotation == "compiled":
        local = st.local_stress_frames(
            np.broadcast_to(tensor, (n,) + tensor.shape[1:]), frames)  # (n, m, k)
    elif rotation == "einsum":
        local = st.local_stress(tensor[:, None], frames[None, :, None])  # (n, m, k)
    else:
        raise ValueError(f"rotation must be 'einsum' or 'compiled', got {rotation!r}")

    def per_sample(a: Array) -> Array:
        return np.asarray(a, dtype=float).reshape(n, 1, 1)

    if scenario.criterion == "hoek-brown":
        gsi = cols.get("gsi", np.full(n, 100.0))
        mb, s, a = hoek_brown_rock_mass(mi=cols["hb_mi"], gsi=gsi)
    else:
        mb, s, a = np.full(n, np.nan), np.ones(n), np.full(n, 0.5)
    weak = water_factor(cols, scenario)  # (n, 1, k) or None

    def weakened(a: Array) -> Array:
        return per_sample(a) if weak is None else per_sample(a) * weak

    strength = StrengthParameters(weakened(cols["ucs"]), per_sample(cols["friction_angle"]),
                                  per_sample(mb), per_sample(s), per_sample(a))
    p_r = stages[:, None, :]  # (1, 1, k)
    out: dict[str, MechanismResult] = {}
    if only is None or "yield_onset" in only:
        onset = critical_wall_pressure(
            local, reservoir_pressure=p_r, poro_coefficient=per_sample(big_a),
            poisson_ratio=per_sample(nu), strength=strength,
            tensile_strength=per_sample(cols["tensile_strength"]), criterion=scenario.criterion,
            angles=angles)
        out["yield_onset"] = MechanismResult("yield_onset", p_r - onset.wall_pressure,
                                             onset.theta)
    if ("twc" in cols or "twc_ratio" in cols) and (
            only is None or "effective_strength_onset" in only):
        twc = (np.asarray(cols["twc"]) if "twc" in cols
               else np.asarray(cols["twc_ratio"]) * np.asarray(cols["ucs"]))
        factor = np.asarray(cols.get("twc_factor", np.full(n, DEFAULT_TWC_FACTOR)))
        u = weakened(sanding.effective_strength(twc=twc, factor=factor))
        es_parts: dict[str, Array] = {}
        if scenario.effective_strength_cavity == "tip":
            # the full spherical-cavity concentration (Goodier 1933), maximised over the tip
            eq = tip.equivalent_mean_stress(tensor, poisson_ratio=nu[:, None])[:, None, :]
            pw = sanding.tip_onset_wall_pressure(sigma=eq, strength=u, reservoir_pressure=p_r,
                                                 poro_coefficient=per_sample(big_a))
        else:
            s1, s3 = st.in_plane_principal(local)
            pw = sanding.cylinder_onset_wall_pressure(sigma_1=s1, sigma_3=s3, strength=u,
                                                      reservoir_pressure=p_r,
                                                      poro_coefficient=per_sample(big_a))
        dc_es = sanding.classify_wall_pressure(pw, p_r)
        if not angles:
            th_es = np.broadcast_to(np.nan, dc_es.shape)
        elif scenario.effective_strength_cavity == "tip":
            th_es = np.full(dc_es.shape, np.nan)
        else:  # the hoop stress peaks where 2 (sxx - syy) cos 2t + 4 sxy sin 2t is least
            th_es = np.mod(0.5 * (np.arctan2(4.0 * local.sxy, 2.0 * (local.sxx - local.syy))
                                  + np.pi), np.pi)
            th_es = np.where(np.isinf(dc_es), np.nan, np.broadcast_to(th_es, dc_es.shape))
        root_governs = scenario.tunnel_stress == "root-and-far-field"
        if (scenario.effective_strength_cavity == "tunnel"
                and scenario.well.completion == "perforated" and (parts or root_governs)):
            dc_root, th_root = _root_onset(tensor, nu, u, p_r, per_sample(big_a), scenario,
                                            cavity_path)
            if parts:
                es_parts = {"far_field": dc_es, "root": dc_root}
            if root_governs:
                worse = dc_root < dc_es
                th_es = np.where(worse, th_root, th_es)
                dc_es = np.where(worse, dc_root, dc_es)
        out["effective_strength_onset"] = MechanismResult("effective_strength_onset", dc_es,
                                                          th_es, es_parts)
    if "critical_plastic_strain" in cols and (only is None or "tunnel_collapse" in only):
        kw = _cavity_inputs(cols, scenario, local, per_sample, mb, s, a, weak)
        p_wc = cavity.collapse_wall_pressure(
            critical_plastic_strain=weakened(cols["critical_plastic_strain"]), p_r=p_r,
            path=cavity_path, **kw)
        dc_tc = p_r - p_wc
        out["tunnel_collapse"] = MechanismResult("tunnel_collapse", dc_tc,
                                                 np.full(dc_tc.shape, np.nan))
    return out


def _root_onset(tensor: Array, nu: Array, u: Array, p_r: Array, big_a: Array,
                scenario: Scenario, path: str = "compiled") -> tuple[Array, Array]:
    """Effective-strength onset of each tunnel in the wellbore's field, the worst over the
    root and the first wellbore radii (risk.mechanics.root): critical drawdown [MPa] and wall
    angle [rad], (n, n_directions, n_stages). ``path``: "compiled" (the same arithmetic per
    tunnel, :func:`risk.mechanics._collapse_kernel.root_onset`, equal to rounding) or "numpy"
    (the reference path below)."""
    w = scenario.well
    well_frame = st.cavity_frame(w.inclination, w.azimuth)
    shots = np.asarray(w.shot_angles)
    # G = F W^T B^T per shot: cylindrical components of the wellbore -> tunnel frame
    rot = _frames(scenario) @ well_frame.T @ np.swapaxes(root.cylindrical_basis(shots), -1, -2)
    local_w = root.well_local(tensor, well_frame)  # (n, k)
    if path == "compiled":
        from risk.mechanics._collapse_kernel import root_onset

        n, n_k = local_w.sxx.shape

        def nk(a: Array) -> Array:
            return np.ascontiguousarray(np.broadcast_to(
                np.asarray(a, dtype=float).reshape(np.shape(a)[0], -1), (n, n_k)))

        best = np.empty(n * shots.size * n_k)
        theta = np.empty(best.size)
        trig = np.ascontiguousarray(np.stack([np.cos(2 * shots), np.sin(2 * shots),
                                              np.cos(shots), np.sin(shots)], -1), dtype=float)
        root_onset(*(np.ascontiguousarray(c, dtype=float) for c in local_w),  # type: ignore[call-arg]
                   np.ascontiguousarray(nu, dtype=float), trig,
                   np.ascontiguousarray(rot.reshape(-1, 9)),
                   np.asarray(root.ROOT_RADII, dtype=float), nk(u), nk(big_a), nk(p_r), best,
                   theta)
        return best.reshape(n, shots.size, n_k), theta.reshape(n, shots.size, n_k)
    if path != "numpy":
        raise ValueError(f"path must be 'compiled' or 'numpy', got {path!r}")
    rot = rot[None, :, None]  # (1, m, 1, 3, 3)
    local_w = st.LocalStress(*(c[:, None, :] for c in local_w))  # (n, 1, k)
    zero = st.LocalStress(*(np.zeros((1, 1, 1)) for _ in range(6)))
    th_shot = shots[None, :, None]
    nu3 = nu[:, None, None]
    best = np.full(np.broadcast(local_w.sxx, th_shot).shape, np.inf)
    theta = np.full(best.shape, np.nan)
    for ratio in root.ROOT_RADII:
        f0 = root.wellbore_field(local_w, theta=th_shot, radius_ratio=ratio, wall_pressure=0.0,
                                 poisson_ratio=nu3)
        f1 = root.wellbore_field(zero, theta=th_shot, radius_ratio=ratio, wall_pressure=1.0,
                                 poisson_ratio=0.0)
        pw, th = root.onset_wall_pressure(root.tunnel_in_plane(f0, rot),
                                          root.tunnel_in_plane(f1, rot),
                                          strength=u, reservoir_pressure=p_r,
                                          poro_coefficient=big_a)
        dc = sanding.classify_wall_pressure(pw, p_r)
        worse = dc < best
        theta = np.where(worse, th, theta)
        best = np.where(worse, dc, best)
    return best, theta


def collapse_profile(cols: Mapping[str, Array], scenario: Scenario,
                     dc: Array) -> tuple[dict[str, Any], ...]:
    """Plastic radius and wall plastic strain against drawdown for a block of samples.

    Parameters
    ----------
    cols : input columns of the block [internal units]
    scenario : Scenario
    dc : tunnel-collapse critical drawdown of the block (n, n_directions, n_stages) [MPa]
    """
    phys = physical_inputs(cols, scenario)
    n = phys["sv"].size
    stages = np.asarray(scenario.reservoir_pressure)
    path, path_big = depletion_paths(cols)
    frames = _frames(scenario)
    worst = np.argmin(dc, axis=1)  # (n, k): first direction to collapse
    if scenario.criterion == "hoek-brown":
        mb, s, a = hoek_brown_rock_mass(mi=cols["hb_mi"], gsi=cols.get("gsi", np.full(n, 100.)))
    else:
        mb, s, a = np.full(n, np.nan), np.ones(n), np.full(n, 0.5)
    out = []
    for k, p_r in enumerate(stages):
        t = depleted_far_field(
            sv=phys["sv"], shmax=phys["shmax"], shmin=phys["shmin"], pore_pressure=phys["pp"],
            path=path, path_shmax=path_big, shmax_azimuth=np.asarray(cols["shmax_azimuth"]),
            reservoir_pressure=p_r)
        frame = frames[worst[:, k]]  # (n, 3, 3)
        loc = st.local_stress(t, frame)
        loc = st.LocalStress(*(np.asarray(c)[:, None] for c in loc))  # (n, 1)

        def col(v: Array) -> Array:
            return np.asarray(v, dtype=float).reshape(n, 1)

        weak_k = water_factor(cols, scenario)
        kw = _cavity_inputs(cols, scenario, loc, col, mb, s, a,
                            None if weak_k is None else weak_k[:, 0, k:k + 1])
        crit = kw.pop("criterion")
        fn = cavity.hoek_brown_cavity if crit == "hoek-brown" else cavity.mohr_coulomb_cavity
        grid = np.linspace(0.0, min(scenario.max_drawdown, p_r), PROFILE_POINTS)
        resp = fn(p_r=p_r, p_w=p_r - grid[None, :], sigma_axial=loc.szz, **kw)
        ratio = np.where(resp.seepage_unstable, np.inf, resp.plastic_radius / kw["r_w"])
        strain = np.where(resp.seepage_unstable, np.inf, resp.wall_plastic_strain)
        d_crit = dc[np.arange(n), worst[:, k], k]
        collapsing = np.isfinite(d_crit)  # including collapse with no drawdown
        flag = 0.0
        if np.any(collapsing):
            at = fn(p_r=p_r, p_w=np.where(collapsing, p_r - d_crit, p_r)[:, None],
                    sigma_axial=loc.szz, **kw)
            flag = float(np.mean(np.asarray(at.axial_exceeds_hoop)[collapsing, 0]))
        out.append({"drawdown": grid, "plastic_radius_ratio": ratio,
                    "wall_plastic_strain": strain, "plane_strain_flag": flag})
    return tuple(out)


def cavity_radius(scenario: Scenario) -> float:
    """Wall radius of the collapsing cavity [m]: the tunnel's, or the open hole's."""
    w = scenario.well
    d = w.tunnel_diameter if w.completion == "perforated" else w.hole_diameter
    if d is None:  # the scenario loader refuses this combination
        raise ValueError("tunnel collapse needs the cavity diameter")
    return 0.5 * d


def _cavity_inputs(cols: Mapping[str, Array], scenario: Scenario, local: st.LocalStress,
                   per_sample: Callable[[Array], Array], mb: Array, s: Array, a: Array,
                   weak: Array | None = None) -> dict[str, Any]:
    """Keyword arguments of the cavity model (docs/derivations.md, sec. 5): equivalent hydrostatic
    in-plane stress (3 s1 - s3)/2 of each direction and stage, radii, elastic constants."""
    s1, s3 = st.in_plane_principal(local)
    n = np.asarray(cols["ucs"]).size
    kw: dict[str, Any] = {
        "sigma0": 0.5 * (3.0 * s1 - s3),
        "r_w": cavity_radius(scenario),
        "r_e": per_sample(cols["drainage_radius"]),
        "dilation_angle": per_sample(cols.get("dilation_angle", np.zeros(n))),
        "young_modulus": per_sample(cols["young_modulus"]),
        "poisson_ratio": per_sample(cols["poisson_ratio"]),
        "biot": per_sample(cols["biot"]),
    }
    ucs = per_sample(cols["ucs"]) if weak is None else per_sample(cols["ucs"]) * weak
    if scenario.criterion == "hoek-brown":
        kw.update(criterion="hoek-brown", sigma_ci=ucs, mb=per_sample(mb),
                  s=per_sample(s), a=per_sample(a))
    else:
        kw.update(criterion="mohr-coulomb", ucs=ucs,
                  friction_angle=per_sample(cols["friction_angle"]))
    return kw


WALL_ANGLES: Final = 48  # wall angles [0, pi) on which the cap is checked at a cavity wall


def _cap_slope(cols: Mapping[str, Array]) -> Array:
    """Critical-state slope M [1]: ``cap_m``, or 6 sin(phi)/(3 - sin(phi)) (risk.mechanics.cap)."""
    if "cap_m" in cols:
        return np.asarray(cols["cap_m"], dtype=float)
    return cap.critical_state_slope(np.asarray(cols["friction_angle"], dtype=float))


def evaluate_compaction(cols: Mapping[str, Array], scenario: Scenario, *,
                        rotation: str = "einsum", wall_path: str = "compiled") -> CompactionResult:
    """Pore collapse: far-field and wall critical reservoir pressures per sample [MPa], on the
    compaction cap (``compaction_cap = "modified-cam-clay"``, the default) or the mean
    effective stress (``"mean-stress"``), and the wall state at the largest drawdown.
    ``rotation``: as in :func:`evaluate`. ``wall_path``: how the largest compaction excess at
    the walls is computed, "compiled" (the fused kernel of
    :mod:`risk.mechanics._compaction_kernel`, the default) or "numpy" (the reference path:
    :func:`risk.mechanics.stresses.wall_stresses` and
    :func:`risk.mechanics.cap.wall_cap_excess` on every frame and wall angle); the same
    operations in the same order, so the same results bit for bit."""
    if rotation not in ("einsum", "compiled"):
        raise ValueError(f"rotation must be 'einsum' or 'compiled', got {rotation!r}")
    if wall_path not in ("compiled", "numpy"):
        raise ValueError(f"wall_path must be 'compiled' or 'numpy', got {wall_path!r}")
    phys = physical_inputs(cols, scenario)
    nu = np.asarray(cols["poisson_ratio"], dtype=float)
    big_a = st.poroelastic_coefficient(biot=np.asarray(cols["biot"], dtype=float),
                                       poisson_ratio=nu)
    path, path_big = depletion_paths(cols)
    p_star = np.asarray(cols["pore_collapse_pressure"], dtype=float)
    with_cap = scenario.compaction_cap == "modified-cam-clay"
    m = _cap_slope(cols)
    mean_far = compaction.far_field_collapse_pressure(
        sv=phys["sv"], shmax0=phys["shmax"], shmin0=phys["shmin"], p0=phys["pp"], path=path,
        path_shmax=path_big, collapse_pressure=p_star)
    mean_far = np.where(mean_far < 0.0, -np.inf, mean_far)
    if with_cap:
        far = cap.far_field_cap_pressure(
            sv=phys["sv"], shmax0=phys["shmax"], shmin0=phys["shmin"], p0=phys["pp"],
            path=path, path_shmax=path_big, collapse_pressure=p_star, m=m)
    else:
        far = mean_far
    frames = _frames(scenario)
    theta = (np.arange(WALL_ANGLES) + 0.5) * np.pi / WALL_ANGLES

    def rotated(t: Array) -> st.LocalStress:
        """Components of the tensors t (..., 3, 3) in every frame, (..., frames) [MPa]."""
        if rotation == "einsum":
            return st.local_stress(t[..., None, :, :], frames)
        lead = t.shape[:-2]
        loc = st.local_stress_frames(t.reshape(-1, 1, 3, 3), frames)
        return st.LocalStress(*(c.reshape(lead + (frames.shape[0],)) for c in loc))

    def wall_state(p_r: Array, drawdown: Array | float, *args: Array) -> Array:
        """Largest compaction excess at any wall [MPa] at reservoir pressure p_r [MPa]."""
        sv, sh_max0, sh_min0, p0, g, g_big, az, nu_, pstar, m_, a_ = args
        t = depleted_far_field(sv=sv, shmax=sh_max0, shmin=sh_min0, pore_pressure=p0, path=g,
                               path_shmax=g_big, shmax_azimuth=az, reservoir_pressure=p_r)
        loc = rotated(t)
        if wall_path == "compiled":  # the same arithmetic, fused (mechanics._compaction_kernel)
            return _wall_cap_compiled(loc, p_r - drawdown, p_r, a_, nu_, pstar,
                                      m_ if with_cap else np.full(np.shape(m_), np.inf), theta)
        loc = st.LocalStress(*(c[..., None] for c in loc))  # (..., frames, 1)
        p_w = (p_r - drawdown)[..., None, None]
        w = st.wall_stresses(loc, theta=theta, wall_pressure=p_w,
                             reservoir_pressure=p_r[..., None, None],
                             poro_coefficient=a_[..., None, None],
                             poisson_ratio=nu_[..., None, None])
        e = cap.wall_cap_excess(hoop=w.hoop - p_w, axial=w.axial - p_w,
                                shear=w.shear_hoop_axial, collapse_pressure=pstar[..., None, None],
                                m=m_[..., None, None] if with_cap else np.inf)
        return np.asarray(e.max(axis=(-1, -2)))

    def wall_excess(p_r: Array, *args: Array) -> Array:
        if with_cap:
            return wall_state(p_r, 0.0, *args)
        sv, sh_max0, sh_min0, p0, g, g_big, az, nu_, pstar, _, _ = args
        t = depleted_far_field(sv=sv, shmax=sh_max0, shmin=sh_min0, pore_pressure=p0, path=g,
                               path_shmax=g_big, shmax_azimuth=az, reservoir_pressure=p_r)
        loc = rotated(t)
        mean = compaction.wall_mean_effective(loc, reservoir_pressure=p_r[..., None],
                                              poisson_ratio=nu_[..., None])
        return np.asarray(mean.max(axis=-1) - pstar)

    args = (phys["sv"], phys["shmax"], phys["shmin"], phys["pp"], path, path_big,
            np.asarray(cols["shmax_azimuth"], dtype=float), nu, p_star,
            np.broadcast_to(m, nu.shape), big_a)
    hi = phys["pp"]
    f_hi = wall_excess(hi, *args)
    f_lo = wall_excess(np.zeros_like(hi), *args)
    wall = np.where(f_hi >= 0.0, hi, -np.inf)
    solve = (f_hi < 0.0) & (f_lo >= 0.0)
    if np.any(solve):
        idx = np.nonzero(solve)[0]
        res = elementwise.find_root(
            wall_excess, (np.zeros(idx.size), hi[idx]), args=tuple(a[idx] for a in args),
            tolerances={"xatol": 1e-12, "xrtol": 4 * np.finfo(float).eps})
        wall[idx] = res.x
    at_max = np.column_stack([
        wall_state(np.full_like(hi, p_r), min(scenario.max_drawdown, p_r), *args)
        for p_r in scenario.reservoir_pressure])
    return CompactionResult(np.asarray(far, dtype=float), wall, phys["pp"],
                            far_field_mean_stress=mean_far if with_cap else None,
                            wall_at_max_drawdown=at_max)


def _wall_cap_compiled(loc: st.LocalStress, p_w: Array, p_r: Array, big_a: Array, nu: Array,
                       p_star: Array, m: Array, theta: Array) -> Array:
    """Largest wall compaction excess [MPa] over frames and wall angles by the compiled
    kernel: loc (..., frames), the others (...) or broadcastable to it."""
    from risk.mechanics._compaction_kernel import wall_cap_max

    lead = loc.sxx.shape[:-1]
    comps = [np.ascontiguousarray(c, dtype=float).reshape(-1, c.shape[-1]) for c in loc]

    def flat(a: Array) -> Array:
        return np.ascontiguousarray(np.broadcast_to(np.asarray(a, dtype=float), lead)).ravel()

    out = np.empty(comps[0].shape[0])
    wall_cap_max(*comps, *(flat(a) for a in (p_r, p_w, big_a, nu, p_star, m)),  # type: ignore[call-arg]
                 np.cos(theta), np.sin(theta), np.cos(2.0 * theta), np.sin(2.0 * theta), out)
    return out.reshape(lead)


PROFILE_SAMPLES: Final = 256
PROFILE_POINTS: Final = 21
