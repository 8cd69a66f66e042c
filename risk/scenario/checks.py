"""Checks across inputs (mechanism inputs, physics, strength, cavity) and warnings."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
from risk.errors import Problem, ScenarioError
from risk.scenario.collector import _Collector
from risk.scenario.model import PAIR_TAIL, STAGE_ABOVE_PP, CompletionOption, Scenario, Well
from risk.scenario.schema import INPUT_SPECS, INPUTS, MECHANISM_INPUTS
from risk.uncertainty import (
    Marginal,
)


def _given(sections: Mapping[str, Mapping[str, Any]], name: str) -> bool:
    return name in sections.get(INPUT_SPECS[name].section, {})


def _mechanism_inputs(c: _Collector, sections: Mapping[str, Mapping[str, Any]],
                      disp: Mapping[str, str]) -> None:
    """A mechanism runs when its switching input is given; then its other inputs are needed."""
    if _given(sections, "twc") and _given(sections, "twc_ratio"):
        c.add("rock.twc", sections["rock"]["twc"], "exactly one of rock.twc and rock.twc_ratio",
              found_text="both")
    for _mech, (switches, needs) in MECHANISM_INPUTS.items():
        if any(_given(sections, k) for k in switches):
            for k in needs:
                if not _given(sections, k):
                    spec = INPUT_SPECS[k]
                    c.add(f"{spec.section}.{k}", None,
                          f"the {spec.description} [{disp[spec.dimension]}], needed with "
                          f"{' or '.join(switches)}", found_text="nothing (the key is missing)")
    if _given(sections, "twc_factor") and not (_given(sections, "twc")
                                               or _given(sections, "twc_ratio")):
        c.add("rock.twc_factor", sections["rock"]["twc_factor"],
              "rock.twc or rock.twc_ratio as well (the factor multiplies TWC)",
              found_text="twc_factor without twc")


def _cavity_checks(sc: Scenario) -> None:
    """Tunnel collapse needs a cavity radius below the drainage radius, for [well] and for
    every [[option]] (named ``option[i].<key>``)."""
    if "critical_plastic_strain" not in sc.inputs:
        return
    disp = DISPLAY_UNITS[sc.units]
    length = TO_INTERNAL[sc.units]["length"]
    m = sc.inputs["drainage_radius"]
    low = m.value if m.is_fixed else m.quantile(1e-6)
    shown = f"{low / length:.4g} {disp['length']}"
    problems: list[Problem] = []
    widest: tuple[float, str] | None = None
    wells = [("well", sc.well)] + [(f"option[{i}]", o.well) for i, o in enumerate(sc.options)]
    for prefix, w in wells:
        if w.completion == "openhole" and w.hole_diameter is None:
            problems.append(Problem(
                f"{prefix}.hole_diameter", None,
                f"the hole diameter [{disp['small_length']}] (tunnel collapse of an open hole)",
                found_text="nothing (the key is missing)"))
            continue
        diameter = w.tunnel_diameter if w.completion == "perforated" else w.hole_diameter
        r_w = 0.5 * (diameter or 0.0)
        if not low > 1.01 * r_w and (widest is None or r_w > widest[0]):
            widest = (r_w, prefix)
    if widest is not None:  # one message, for the widest cavity the drainage radius misses
        r_w, prefix = widest
        problems.append(Problem(
            "production.drainage_radius", shown,
            f"a drainage radius above the cavity radius ({r_w / length:.4g} "
            f"{disp['length']}{'' if prefix == 'well' else ', of ' + prefix}) for every "
            "sample", found_text=shown + (" (fixed)" if m.is_fixed else " at its 1e-6 quantile")))
    if problems:
        raise ScenarioError(problems, sc.source_name)


def _central(name: str, inputs: Mapping[str, Marginal], given: Mapping[str, str],
             depth: float, disp: Mapping[str, str], units: str
             ) -> tuple[str, float, str] | None:
    """(key, central stress at depth [MPa], the value as written with its unit) of one of
    sv, shmax, shmin, pp: its median (its value when fixed), or None when it is not given."""
    conv = TO_INTERNAL[units]
    key = name if given.get(name) == "absolute" else f"{name}_gradient"
    m = inputs.get(key)
    if m is None:
        return None
    v = m.median if not m.is_fixed else m.value
    dim = "pressure" if key == name else "gradient"
    written = (f"{v / conv[dim]:.6g} {disp[dim]}" + ("" if m.is_fixed else " (median)"))
    return key, (v if key == name else v * depth), written


def _physics_checks(c: _Collector, inputs: Mapping[str, Marginal], given: Mapping[str, str],
                    depth: float, stages: tuple[float, ...], disp: Mapping[str, str],
                    units: str, ops: tuple[tuple[float, float], ...] = ()) -> None:
    """Checks that need several inputs together, on their medians (fixed values)."""
    conv = TO_INTERNAL[units]

    def central(name: str) -> tuple[str, float, str] | None:
        return _central(name, inputs, given, depth, disp, units)

    sv, pp = central("sv"), central("pp")
    sh, sH = central("shmin"), central("shmax")

    def show(v: float) -> str:
        return f"{v / conv['pressure']:.6g} {disp['pressure']}"

    def found(x: tuple[str, float, str]) -> str:
        if x[0].endswith("_gradient"):
            return f"{x[2]}, i.e. {show(x[1])} at the interval depth"
        return x[2]

    if sv and pp and pp[1] >= sv[1]:
        c.add(f"stress.{pp[0]}", found(pp),
              f"an initial pore pressure below the overburden stress ({found(sv)})",
              found_text=found(pp))
    if sh and sH and sh[1] > sH[1] * (1 + 1e-12):
        c.add(f"stress.{sh[0]}", found(sh),
              f"Shmin <= SHmax ({found(sH)}); swap them or check the azimuth",
              found_text=found(sh))
    if sh and pp and sh[1] <= pp[1]:
        c.add(f"stress.{sh[0]}", found(sh),
              f"Shmin above the initial pore pressure ({found(pp)}); otherwise the rock "
              "would be fracturing", found_text=found(sh))
    if sv:
        for i, st_ in enumerate(stages):
            if st_ >= sv[1]:
                c.add(f"production.reservoir_pressure[{i}]", show(st_),
                      f"a reservoir pressure below the overburden stress ({found(sv)})",
                      found_text=show(st_))
        for i, (op_r, op_w) in enumerate(ops):
            if op_r >= sv[1]:
                c.add(f"production.operating_points[{i}]", show(op_r),
                      "[reservoir pressure, flowing wall pressure] with the reservoir pressure "
                      f"below the overburden stress ({found(sv)})",
                      found_text=f"[{show(op_r)}, {show(op_w)}]")


def _strength_checks(c: _Collector, inputs: Mapping[str, Marginal], disp: Mapping[str, str],
                     units: str) -> None:
    """Rock constants that must keep an order between them.

    Rules (derived; a geomechanical reading of each is in the message):

    - tensile strength <= UCS, on the central values (median, or the value when fixed): the
      models evaluate any sample, so a wide overlap of the two ranges is accepted; a central
      tensile strength above the UCS is a unit or typing error.
    - dilation angle <= friction angle, on the central values always (associated flow, psi =
      phi, is the upper limit of plastic dilatancy); with tunnel collapse on, also in every
      sample, because the cavity model cannot evaluate a sample with psi > phi (the run would
      stop). The Gaussian copula of the run puts positive probability on every region where
      both ranges overlap whatever the correlation (|rho| < 1), so the rule is on the ranges:
      the 1 - PAIR_TAIL/2 quantile of psi must not exceed the PAIR_TAIL/2 quantile of phi,
      which bounds P(psi > phi) per sample by PAIR_TAIL (union bound). Bounded distributions
      (uniform, triangular, pert, truncnormal with low/high) whose ranges do not overlap always
      pass; a normal friction angle a dozen standard deviations above a fixed dilation angle
      passes too. Nothing is clipped.
    """
    conv = TO_INTERNAL[units]
    deg = disp["angle"]

    def central(m: Marginal) -> float:
        return m.value if m.is_fixed else m.median

    def written(m: Marginal, dim: str) -> str:
        v = f"{central(m) / conv[dim]:.6g} {disp[dim]}"
        return v if m.is_fixed else f"{v} (median)"

    ucs, t0 = inputs.get("ucs"), inputs.get("tensile_strength")
    if ucs is not None and t0 is not None and central(t0) > central(ucs):
        c.add("rock.tensile_strength", written(t0, "pressure"),
              f"a tensile strength at most the UCS ({written(ucs, 'pressure')}); one above it "
              "is usually a unit or typing error",
              found_text=written(t0, "pressure"))
    psi, phi = inputs.get("dilation_angle"), inputs.get("friction_angle")
    if psi is None or phi is None:
        return
    if central(psi) > central(phi):
        c.add("rock.dilation_angle", written(psi, "angle"),
              f"a dilation angle at most the friction angle ({written(phi, 'angle')}); "
              "associated flow (dilation = friction) is the upper limit",
              found_text=written(psi, "angle"))
    elif "critical_plastic_strain" in inputs:
        top = psi.value if psi.is_fixed else psi.quantile(1.0 - 0.5 * PAIR_TAIL)
        bottom = phi.value if phi.is_fixed else phi.quantile(0.5 * PAIR_TAIL)
        if top > bottom:
            where = f"its {0.5 * PAIR_TAIL:g} quantile"
            c.add("rock.dilation_angle", psi.describe(conv["angle"], deg),
                  "a dilation angle at most the friction angle in every sample, as tunnel "
                  "collapse needs: ranges that do not overlap (e.g. a truncnormal, uniform or "
                  "pert friction angle whose low end is above the largest dilation angle)",
                  found_text=f"dilation angle up to {top / conv['angle']:.4g} {deg}"
                  + ("" if psi.is_fixed else f" (its 1 - {0.5 * PAIR_TAIL:g} quantile)")
                  + f" and friction angle down to {bottom / conv['angle']:.4g} {deg}"
                  + ("" if phi.is_fixed else f" ({where})"))


def _uncertain_count(sections: Mapping[str, Mapping[str, Any]]) -> int:
    """How many inputs the file gives as a distribution other than fixed (before parsing)."""
    n = 0
    for spec in INPUTS:
        raw = sections.get(spec.section, {}).get(spec.name)
        if isinstance(raw, Mapping) and raw.get("dist") != "fixed":
            n += 1
    return n


def _input_warnings(sections: Mapping[str, Mapping[str, Any]], inputs: Mapping[str, Marginal],
                    given: Mapping[str, str], depth: float, stages: tuple[float, ...],
                    max_drawdown: float, criterion: str, units: str) -> tuple[str, ...]:
    """Inputs that are accepted but look unintended: one text each, starting with the key."""
    disp, conv = DISPLAY_UNITS[units], TO_INTERNAL[units]
    out: list[str] = []

    def show(v: float) -> str:
        return f"{v / conv['pressure']:.6g} {disp['pressure']}"

    if criterion != "hoek-brown":
        for name in ("hb_mi", "gsi"):
            if name in inputs:
                out.append(f"rock.{name}: given, but criterion = {criterion!r} does not use it "
                           "(only \"hoek-brown\" does); it is ignored")
    if "critical_plastic_strain" not in inputs:
        for name in ("young_modulus", "dilation_angle", "drainage_radius"):
            if name in inputs:
                out.append(f"{INPUT_SPECS[name].section}.{name}: given, but only tunnel "
                           "collapse uses it and tunnel collapse is off (no "
                           "rock.critical_plastic_strain); it is ignored")
    gsi = inputs.get("gsi")
    if criterion == "hoek-brown" and gsi is not None and (
            not gsi.is_fixed or float(gsi.value) < 100.0):
        out.append("rock.gsi: below 100 at perforation and open-hole scale: the geological "
                   "strength index describes a jointed rock mass (Hoek, Carranza-Torres & "
                   "Corkum 2002), not the intact rock around a tunnel of a few centimetres; "
                   "GSI < 100 lowers the strength by a rock-mass reduction that such a small "
                   "cavity need not see (use 100 unless jointing at that scale is known)")
    analysis = sections.get("analysis", {})
    if "wet_strength_ratio" in inputs and "water_saturation" not in sections.get("production",
                                                                                  {}):
        out.append("rock.wet_strength_ratio: given, but no production.water_saturation says "
                   "when water arrives; it is ignored")
    if "pore_collapse_pressure" not in inputs:
        if "cap_m" in inputs:
            out.append("rock.cap_m: given, but only pore collapse uses it and pore collapse "
                       "is off (no rock.pore_collapse_pressure); it is ignored")
        if "compaction_cap" in analysis:
            out.append("analysis.compaction_cap: given, but pore collapse is off (no "
                       "rock.pore_collapse_pressure); it is ignored")
    elif "cap_m" in inputs and analysis.get("compaction_cap") == "mean-stress":
        out.append('rock.cap_m: given, but analysis.compaction_cap = "mean-stress" does not '
                   "use it; it is ignored")
    if "tunnel_stress" in analysis and "twc" not in inputs and "twc_ratio" not in inputs:
        out.append("analysis.tunnel_stress: given, but only the effective-strength onset uses "
                   "it and that mechanism is off (no rock.twc or rock.twc_ratio); it is "
                   "ignored")
    if ("effective_strength_cavity" in sections.get("analysis", {})
            and "twc" not in inputs and "twc_ratio" not in inputs):
        out.append("analysis.effective_strength_cavity: given, but only the effective-strength "
                   "onset uses it and that mechanism is off (no rock.twc or rock.twc_ratio); "
                   "it is ignored")
    pp = _central("pp", inputs, given, depth, disp, units)
    if pp is not None:
        for i, p_r in enumerate(stages):
            # 1% leaves room for a first stage written as the rounded initial pore pressure
            # (3 significant digits round by up to 0.5%)
            if p_r > pp[1] * (1 + STAGE_ABOVE_PP):
                out.append(f"production.reservoir_pressure[{i}]: {show(p_r)} is more than "
                           f"{STAGE_ABOVE_PP:.0%} above the initial pore pressure "
                           f"({show(pp[1])}); the stage is computed as a pressure rise (the "
                           "depletion path followed backwards)")
    seen: dict[float, int] = {}
    for i, p_r in enumerate(stages):
        if p_r in seen:
            out.append(f"production.reservoir_pressure[{i}]: {show(p_r)} repeats stage "
                       f"[{seen[p_r]}]; it is computed and reported twice")
        seen.setdefault(p_r, i)
    if stages and max_drawdown > max(stages):
        out.append(f"production.max_drawdown: {show(max_drawdown)} is above the reservoir "
                   f"pressure of every stage (largest {show(max(stages))}); a drawdown cannot "
                   "exceed the reservoir pressure, so the failure curves are flat beyond it")
    return tuple(out)


def _option_warnings(w: Mapping[str, Any], well: Well, options: tuple[CompletionOption, ...]
                     ) -> tuple[str, ...]:
    """Phasings no well can use, and options that repeat [well] or another option."""
    out: list[str] = []
    if "phasings" in w and all(x.completion == "openhole"
                               for x in (well, *(o.well for o in options))):
        out.append("well.phasings: given, but no completion of the scenario is perforated "
                   '(completion = "openhole"' + (" in [well] and every [[option]]"
                                                  if options else "")
                   + "); gun phasings are ignored")
    for i, o in enumerate(options):
        if o.well == well:
            out.append(f"option[{i}]: the same completion as [well]; it is computed and "
                       "reported as a separate option")
            continue
        for j in range(i):
            if options[j].well == o.well:
                out.append(f"option[{i}]: the same completion as option[{j}]; it is computed "
                           "and reported twice")
                break
    return tuple(out)
