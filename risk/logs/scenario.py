"""A log scenario: an ordinary scenario plus a ``[logs]`` table (the LAS file and its use).

``[logs]`` keys (lengths, pressures and gradients in the scenario's units)::

    file = "ravenmoor_r9_logs.las"     # relative to the scenario file
    top = 7800  base = 7900            # interval to assess, in the log depth (TVD or MD)
    curves = { dt = "DTC" }            # optional: mnemonics in place of the recognised ones
    max_gap = 5                        # optional: longest null run / gap filled [length]
    ucs_transform = "mcnally_1987"     # risk.logs.transforms.UCS_TRANSFORMS
    ucs_cov = 0.35                     # lognormal scatter of the transform (cov) [-]
    correlation_length = 4             # of the transform error along depth [length];
                                       # 0 = independent samples, "inf" = one error throughout
    friction_transform = "weingarten_perkins_1995"   # optional (else [rock] friction_angle)
    friction_sd = 3                    # its normal scatter [deg], constant over depth
    overburden = "density"             # or "scenario" ([stress] sv / sv_gradient)
    overburden_gradient_above = 0.95   # Sv at the log top = gradient x top [gradient]
    horizontal = "poroelastic"         # or "scenario"; tectonic strains strain_min/max [-]
    elastic = "logs"                   # optional, with "poroelastic": Poisson's ratio and
                                       # Young's modulus of the stresses from dt, dts, rhob
                                       # (static by Eissa & Kazi 1988); default "scenario"
                                       # or "ratio": S_h = k (Sv - Pp) + Pp, k_min, k_max [-]
    step = 0.5                         # optional: resample the logs to this step [length]
    core = [[7841, 2900], [7866, 5200]]   # optional: core UCS tests [length, pressure] that
                                       # calibrate the transform near each core depth
    core_influence = 10                # optional: influence distance of a core [length];
                                       # "inf" (default) = one factor over the interval
    depth_reference = "md"             # optional: the log depth is "tvd" (default) or "md";
    survey = [[7000, 0, 0], [7900, 24, 40]]   # with "md": stations [MD, inc deg, azi deg]
    survey_tvd = 7000                  # TVD of the first station [length] (minimum curvature;
                                       # no survey: constant [well] inclination from surface)
    zoning = "fixed"                   # plan zones: "fixed" thickness, or "breaks" where the
    zone_break = 0.2                   # transform's UCS changes by more than this fraction
    planned_drawdown = 500             # [pressure]
    zone_thickness = 2                 # plan unit [length]
    min_interval = 6  standoff = 2     # perforated run at least; distance from weak zones

``[well] depth`` is the datum TVD of the stage pressures: at depth z a stage's reservoir
pressure is the stage value plus the sample's initial pore pressure at z minus that at the
datum (a connected interval depletes uniformly). Inputs the logs give (``rock.ucs``, and
``rock.friction_angle``, ``stress.sv*``, ``stress.shmin*``/``shmax*`` when the logs give
them) must not be written in the scenario as well.
"""

from __future__ import annotations

import hashlib
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Final

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL
from risk.errors import Problem, ScenarioError, did_you_mean
from risk.logs.las import LogSet, read_las
from risk.logs.transforms import FRICTION_TRANSFORMS, UCS_TRANSFORMS, Transform
from risk.scenario import Scenario, parse_scenario
from risk.scenario.model import MAX_FILE_BYTES

__all__ = ["LogScenario", "load_log_scenario", "has_logs", "parse_log_section", "LOG_KEYS"]

LOG_KEYS: Final = ("file", "top", "base", "curves", "max_gap", "ucs_transform", "ucs_cov",
                   "correlation_length", "friction_transform", "friction_sd", "overburden",
                   "overburden_gradient_above", "horizontal", "strain_min", "strain_max",
                   "planned_drawdown", "zone_thickness", "min_interval", "standoff", "step",
                   "k_min", "k_max", "core", "zoning", "zone_break", "core_influence",
                   "depth_reference", "survey", "survey_tvd", "elastic")


@dataclass(frozen=True)
class LogScenario:
    """A validated log scenario (internal units: m, MPa, rad)."""

    scenario: Scenario
    logs: LogSet
    ucs_transform: Transform
    ucs_cov: float
    correlation_length: float  # [m]; 0 independent, inf fully correlated
    friction_transform: Transform | None
    friction_sd: float  # [rad]
    overburden: str  # "density" or "scenario"
    overburden_gradient_above: float  # [MPa/m]
    horizontal: str  # "poroelastic" or "scenario"
    strain_min: float
    strain_max: float
    planned_drawdown: float  # [MPa]
    zone_thickness: float  # [m]
    min_interval: float  # [m]
    standoff: float  # [m]
    warnings: tuple[str, ...] = field(default=())
    k_min: float = math.nan  # effective-stress ratios of horizontal = "ratio" [-]
    k_max: float = math.nan
    core: tuple[tuple[float, float], ...] = ()  # (depth [m], UCS [MPa]) core tests
    zoning: str = "fixed"  # "fixed" or "breaks"
    zone_break: float = 0.2  # relative change of the transform's UCS that starts a zone [-]
    core_influence: float = math.inf  # [m] influence distance of a core test
    depth_reference: str = "tvd"  # the log depth is "tvd" or "md"
    survey: tuple[tuple[float, float, float], ...] = ()  # (MD [m], inc [rad], azi [rad])
    survey_tvd: float = 0.0  # TVD of the first station [m]
    elastic: str = "scenario"  # "logs": static nu and E of the poroelastic stresses from logs
    las_path: str = ""  # the LAS file as found (an input: its folder is never an output)


def has_logs(path: str | Path) -> bool:
    """Whether a scenario file has a ``[logs]`` table (False for anything unreadable: the
    ordinary loader then says what is wrong)."""
    try:
        with Path(path).open("rb") as f:
            data = f.read(MAX_FILE_BYTES + 1)
        return isinstance(tomllib.loads(data.decode("utf-8-sig")).get("logs"), dict)
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return False


def _num(t: Mapping[str, Any], key: str, problems: list[Problem], expected: str,
         default: float | None = None, *, low: float = 0.0, inclusive: bool = True,
         allow_inf: bool = False) -> float:
    v = t.get(key, default)
    if v is None:
        problems.append(Problem(f"logs.{key}", None, expected,
                                found_text="nothing (the key is missing)"))
        return math.nan
    if allow_inf and (v == "inf" or (isinstance(v, float) and v == math.inf)):
        return math.inf
    if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v) or (
            v < low if inclusive else v <= low):
        problems.append(Problem(f"logs.{key}", v, expected))
        return math.nan
    return float(v)


def parse_log_section(t: Any, units: str) -> tuple[dict[str, Any], list[Problem]]:
    """The ``[logs]`` table -> values in internal units, and every problem found."""
    p: list[Problem] = []
    if not isinstance(t, dict):
        return {}, [Problem("logs", t, "a table [logs]")]
    conv, disp = TO_INTERNAL[units], DISPLAY_UNITS[units]
    for k in t:
        if k not in LOG_KEYS:
            p.append(Problem(f"logs.{k}", t[k], "a key of [logs]" + did_you_mean(str(k),
                                                                                   LOG_KEYS)))
    L, P, G = conv["length"], conv["pressure"], conv["gradient"]
    out: dict[str, Any] = {}
    f = t.get("file")
    if not isinstance(f, str) or not f.strip():
        p.append(Problem("logs.file", f, "the LAS file name (text, relative to the scenario)",
                         found_text="nothing (the key is missing)" if f is None else None))
    out["file"] = f
    length = f"a length >= 0 [{disp['length']}]"
    out["top"] = _num(t, "top", p, f"the interval top, a depth > 0 [{disp['length']}]") * L
    out["base"] = _num(t, "base", p, f"the interval base, below logs.top "
                       f"[{disp['length']}]") * L
    if out["base"] <= out["top"]:
        p.append(Problem("logs.base", t.get("base"), f"a depth below logs.top = {t.get('top')} "
                         f"[{disp['length']}]"))
    out["max_gap"] = _num(t, "max_gap", p, length, 1.524 / L) * L
    curves = t.get("curves", {})
    if not isinstance(curves, dict) or not all(isinstance(v, str) for v in curves.values()):
        p.append(Problem("logs.curves", curves, 'a table of role = "MNEMONIC", e.g. '
                         '{ dt = "DTC", rhob = "RHOZ" }'))
        curves = {}
    out["curves"] = curves
    name = t.get("ucs_transform")
    if name not in UCS_TRANSFORMS:
        p.append(Problem("logs.ucs_transform", name, "one of " + ", ".join(UCS_TRANSFORMS)
                         + (did_you_mean(name, UCS_TRANSFORMS) if isinstance(name, str)
                            else ""), found_text="nothing (the key is missing)"
                         if name is None else None))
    out["ucs_transform"] = UCS_TRANSFORMS.get(name) if isinstance(name, str) else None
    out["ucs_cov"] = _num(t, "ucs_cov", p, "the transform's scatter as a coefficient of "
                          "variation >= 0 (0.3 to 0.5 is typical of published transforms)")
    out["correlation_length"] = _num(t, "correlation_length", p, f"a length >= 0 "
                                     f"[{disp['length']}] or \"inf\"", allow_inf=True) * L
    fname = t.get("friction_transform")
    if fname is not None and fname not in FRICTION_TRANSFORMS:
        p.append(Problem("logs.friction_transform", fname,
                         "one of " + ", ".join(FRICTION_TRANSFORMS)))
    out["friction_transform"] = FRICTION_TRANSFORMS.get(fname) if isinstance(fname, str) else None
    out["friction_sd"] = math.radians(_num(t, "friction_sd", p, "a scatter >= 0 [deg]", 0.0))
    for key, opts in (("overburden", ("scenario", "density")),
                      ("horizontal", ("scenario", "poroelastic", "ratio")),
                      ("zoning", ("fixed", "breaks")), ("elastic", ("scenario", "logs"))):
        v = t.get(key, opts[0])
        if v not in opts:
            p.append(Problem(f"logs.{key}", v, " or ".join(f'"{o}"' for o in opts)))
        out[key] = v
    out["overburden_gradient_above"] = _num(
        t, "overburden_gradient_above", p, f"the mean overburden gradient above the log top, "
        f"> 0 [{disp['gradient']}]", 1.0 if out["overburden"] == "density" else 0.0,
        low=0.0, inclusive=out["overburden"] != "density") * G
    for key in ("strain_min", "strain_max"):
        v = t.get(key, 0.0)
        if isinstance(v, bool) or not isinstance(v, int | float) or not abs(v) < 0.01:
            p.append(Problem(f"logs.{key}", v, "a tectonic strain within +-0.01 [-]"))
            v = 0.0
        out[key] = float(v)
    out["planned_drawdown"] = _num(t, "planned_drawdown", p, f"the planned drawdown > 0 "
                                   f"[{disp['pressure']}]", low=0.0, inclusive=False) * P
    out["zone_thickness"] = _num(t, "zone_thickness", p, f"a length > 0 [{disp['length']}]",
                                 0.6096 / L, inclusive=False) * L
    out["min_interval"] = _num(t, "min_interval", p, length, 0.0) * L
    out["standoff"] = _num(t, "standoff", p, length, 0.0) * L
    out["step"] = (_num(t, "step", p, f"a resampling step > 0 [{disp['length']}]",
                        inclusive=False) * L if "step" in t else None)
    for key in ("k_min", "k_max"):
        out[key] = (_num(t, key, p, "an effective-stress ratio S'h/S'v > 0 [-]", low=0.0,
                         inclusive=False) if out["horizontal"] == "ratio" else math.nan)
    out["zone_break"] = _num(t, "zone_break", p, "a relative change > 0 [-]", 0.2,
                             inclusive=False)
    out["core_influence"] = _num(t, "core_influence", p, f"the influence distance of a core "
                                 f"test > 0 [{disp['length']}] or \"inf\"", math.inf,
                                 inclusive=False, allow_inf=True) * L
    if out["elastic"] == "logs" and out["horizontal"] != "poroelastic":
        p.append(Problem("logs.elastic", "logs", 'logs.horizontal = "poroelastic" (the log '
                         'moduli feed the uniaxial-strain stresses only), or elastic = '
                         '"scenario"'))
    ref = t.get("depth_reference", "tvd")
    if ref not in ("tvd", "md"):
        p.append(Problem("logs.depth_reference", ref, '"tvd" or "md"'))
    out["depth_reference"] = ref
    survey = t.get("survey", [])
    rows: list[tuple[float, float, float]] = []
    if not isinstance(survey, list):
        survey = [survey]
    for i, row in enumerate(survey):
        if (isinstance(row, list) and len(row) == 3 and all(
                isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)
                for v in row) and row[0] >= 0 and 0 <= row[1] <= 180 and 0 <= row[2] < 360
                and (not rows or row[0] * L > rows[-1][0])):
            rows.append((float(row[0]) * L, math.radians(row[1]), math.radians(row[2])))
        else:
            p.append(Problem(f"logs.survey[{i}]", row, f"[MD >= 0 {disp['length']}, "
                             "inclination 0-180 deg, azimuth 0-360 deg], MD increasing"))
    if rows and ref != "md":
        p.append(Problem("logs.survey", survey, 'no survey unless logs.depth_reference = "md"'))
    out["survey"] = tuple(rows)
    out["survey_tvd"] = _num(t, "survey_tvd", p, f"the TVD of the first survey station >= 0 "
                             f"[{disp['length']}]", rows[0][0] / L if rows else 0.0) * L
    core = t.get("core", [])
    pairs: list[tuple[float, float]] = []
    if not isinstance(core, list):
        core = [core]
    for i, row in enumerate(core):
        if (isinstance(row, list) and len(row) == 2 and all(
                isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)
                and v > 0 for v in row)):
            pairs.append((float(row[0]) * L, float(row[1]) * P))
        else:
            p.append(Problem(f"logs.core[{i}]", row, f"[depth, UCS] > 0 [{disp['length']}, "
                             f"{disp['pressure']}]"))
    out["core"] = tuple(pairs)
    return out, p


#: Values the ordinary loader sees for inputs the logs give (field, si units); never used.
_PLACEHOLDERS: Final = {"ucs": ("rock", (3000.0, 20.0)), "friction_angle": ("rock", (30.0, 30.0))}


def load_log_scenario(path: str | Path) -> LogScenario:
    """Read and validate a log scenario and its LAS file (all scenario problems at once).

    Raises
    ------
    ScenarioError
        For every problem of the scenario, the ``[logs]`` table and the LAS file.
    """
    p = Path(path)
    name = str(path)
    try:
        data = p.read_bytes()[:MAX_FILE_BYTES + 1]
        doc = tomllib.loads(data.decode("utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise ScenarioError.single("scenario", name, "a readable TOML scenario",
                                   found_text=f"{exc}") from None
    units = doc.get("units")
    if units not in TO_INTERNAL:
        return _fail(doc, name)
    logs, problems = parse_log_section(doc.get("logs"), units)
    given: list[str] = ["ucs"]
    if logs.get("friction_transform") is not None:
        given.append("friction_angle")
    rock = doc.get("rock", {})
    stress = doc.get("stress", {})
    for key in given:
        if isinstance(rock, dict) and key in rock:
            problems.append(Problem(f"rock.{key}", rock[key], f"no rock.{key}: the logs give it "
                                    "(logs.ucs_transform / logs.friction_transform)"))
    if isinstance(stress, dict):
        over = (["sv"] if logs.get("overburden") == "density" else []) + (
            ["shmin", "shmax"] if logs.get("horizontal") in ("poroelastic", "ratio") else [])
        for s in over:
            for k in (s, f"{s}_gradient"):
                if k in stress:
                    problems.append(Problem(f"stress.{k}", stress[k], f"no stress.{k}: the logs "
                                            "give it (logs.overburden / logs.horizontal)"))
    # the ordinary loader checks the rest; inputs the logs give get a placeholder it accepts
    base = {k: (dict(v) if isinstance(v, dict) else v) for k, v in doc.items() if k != "logs"}
    for key in given:
        sec, vals = _PLACEHOLDERS[key]
        val: Any = vals[0] if units == "field" else vals[1]
        # uncertain when the transform's error is, so that correlation pairs stay valid
        if key == "ucs" and logs.get("ucs_cov", 0.0) > 0:
            val = {"dist": "lognormal", "median": val, "cov": logs["ucs_cov"]}
        if key == "friction_angle" and logs.get("friction_sd", 0.0) > 0:
            val = {"dist": "normal", "mean": val, "sd": math.degrees(logs["friction_sd"])}
        if isinstance(base.get(sec), dict):
            base[sec].setdefault(key, val)
    if isinstance(base.get("stress"), dict):
        if logs.get("overburden") == "density":
            base["stress"].setdefault("sv_gradient", 1.0)
        if logs.get("horizontal") in ("poroelastic", "ratio"):
            base["stress"].setdefault("shmin_gradient", 0.7)
            base["stress"].setdefault("shmax_gradient", 0.8)
    try:
        sc = parse_scenario(base, source_name=name, sha256=hashlib.sha256(data).hexdigest())
    except ScenarioError as err:
        raise ScenarioError(problems + err.problems, name) from None
    if logs["horizontal"] == "poroelastic" and (logs["strain_min"] or logs["strain_max"]) \
            and "young_modulus" not in sc.inputs and logs["elastic"] != "logs":
        problems.append(Problem("rock.young_modulus", None, "the static Young's modulus, needed "
                                "by logs.strain_min/strain_max", found_text="nothing"))
    if problems:
        raise ScenarioError(problems, name)
    t: Transform = logs["ucs_transform"]
    needs = set(t.needs) | (set(logs["friction_transform"].needs)
                            if logs["friction_transform"] is not None else set())
    if logs["overburden"] == "density":
        needs.add("rhob")
    if logs["elastic"] == "logs":
        needs |= {"dt", "dts", "rhob"}
    file = Path(logs["file"])
    if not file.is_absolute():
        file = p.parent / file
    ls = read_las(file, top=logs["top"], base=logs["base"], curves=logs["curves"],
                  required=tuple(sorted(needs)),
                  optional=tuple(r for r in ("rhob", "phi", "gr", "vsh", "dts", "cali")
                                 if r not in needs),
                  max_gap=logs["max_gap"], depth_unit_out="ft" if units == "field" else "m")
    conv, disp = TO_INTERNAL[units], DISPLAY_UNITS[units]
    if logs["step"] is not None:
        ls = resample(ls, logs["step"], shown=f"{logs['step'] / conv['length']:g} "
                      f"{disp['length']}")
    for i, (z, _) in enumerate(logs["core"]):
        if not logs["top"] <= z <= logs["base"]:
            raise ScenarioError.single(f"logs.core[{i}]", z / conv["length"],
                                       "a core depth within logs.top to logs.base", name)
    if logs["depth_reference"] == "md" and logs["survey"]:
        sv_ = logs["survey"]
        if not sv_[0][0] <= logs["top"] or not logs["base"] <= sv_[-1][0]:
            raise ScenarioError.single(
                "logs.survey", f"MD {sv_[0][0] / conv['length']:g} to "
                f"{sv_[-1][0] / conv['length']:g} {disp['length']}",
                "survey stations spanning logs.top to logs.base", name)
    kw = {k: v for k, v in logs.items()
          if k not in ("file", "top", "base", "curves", "max_gap", "step")}
    return LogScenario(scenario=sc, logs=ls, warnings=sc.warnings, las_path=str(file), **kw)


def resample(ls: LogSet, step: float, *, shown: str = "") -> LogSet:
    """The logs linearly interpolated onto a regular grid of ``step`` [m] from the top."""
    import numpy as np

    z = np.arange(ls.depth[0], ls.depth[-1] + 1e-9, step)
    curves = {r: np.interp(z, ls.depth, v) for r, v in ls.curves.items()}
    note = f"logs resampled to a {shown or f'{step:g} m'} step by linear interpolation"
    return LogSet(z, curves, ls.mnemonics, ls.units, well=ls.well, source=ls.source,
                  notes=(*ls.notes, note))


def _fail(doc: Mapping[str, Any], name: str) -> LogScenario:
    parse_scenario({k: v for k, v in doc.items() if k != "logs"}, source_name=name)
    raise ScenarioError.single("units", doc.get("units"), '"field" or "si"')  # not reached
