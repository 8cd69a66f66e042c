"""Terminal output of the CLI (rich tables). Reads a scenario or a summary; writes no files.

Every text that comes from the user (title, sources, file and folder names, input names and
texts read back from a results file, warnings) goes through :func:`risk.report.text.safe`:
printed as it is, with control characters visible and no markup interpreted.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from rich.console import Console
from rich.table import Table
from rich.text import Text

from risk.conventions import DISPLAY_UNITS, TO_INTERNAL, angle_reference
from risk.report.text import safe
from risk.scenario import INPUT_SPECS, Scenario, Well

__all__ = ["print_scenario", "print_summary", "print_answer", "angle_reference"]


def _fmt(v: float | None, digits: int = 4, none: str = "never") -> str:
    if v is None:
        return none
    return f"{v:,.{digits}g}" if abs(v) < 1e5 else f"{v:,.0f}"


def _completion_cells(w: Well, sc: Scenario) -> tuple[str, str, str]:
    """(completion, shot angles, diameters) of a well, in the scenario's units."""
    small = TO_INTERNAL[sc.units]["small_length"]
    unit = DISPLAY_UNITS[sc.units]["small_length"]
    shots = (", ".join(f"{math.degrees(a):.4g}" for a in w.shot_angles) + " deg"
             if w.shot_angles else "-")
    sizes = []
    if w.tunnel_diameter:
        sizes.append(f"tunnel {w.tunnel_diameter / small:.4g} {unit}")
    if w.hole_diameter:
        sizes.append(f"hole {w.hole_diameter / small:.4g} {unit}")
    return w.completion, shots, ", ".join(sizes) or "-"


def _key_table(*columns: str) -> Table:
    """A table whose first column holds scenario keys, always whole (never truncated or
    wrapped; the other columns wrap instead)."""
    t = Table(show_edge=False)
    t.add_column(columns[0], no_wrap=True, overflow="ignore")
    for col in columns[1:]:
        t.add_column(col, overflow="fold")
    return t


def print_scenario(sc: Scenario, console: Console | None = None) -> None:
    """The normalised inputs, each in the scenario's unit, with its distribution; the
    completion options, gun phasings and correlations when given. Keys are printed whole
    (``section.key``); the descriptions wrap to the console's width."""
    con = console or Console()
    disp = DISPLAY_UNITS[sc.units]
    conv = TO_INTERNAL[sc.units]
    w = sc.well
    con.print(Text.assemble(safe(sc.title, "bold"), "  (", safe(sc.source_name),
                            f", units = {sc.units!r})"))
    t = _key_table("well", "value")
    t.add_row("well.depth", f"{w.depth / conv['length']:,.6g} {disp['length']} (true "
              "vertical depth)")
    t.add_row("well.inclination", f"{math.degrees(w.inclination):.4g} deg from vertical")
    t.add_row("well.azimuth", f"{math.degrees(w.azimuth):.4g} deg clockwise from north")
    t.add_row("well.completion", w.completion)
    if w.completion == "perforated":
        t.add_row("well.shot_angles", ", ".join(f"{math.degrees(a):.4g}" for a in w.shot_angles)
                  + " deg")
    if w.tunnel_diameter:
        t.add_row("well.tunnel_diameter",
                  f"{w.tunnel_diameter / conv['small_length']:.4g} {disp['small_length']}")
    if w.hole_diameter:
        t.add_row("well.hole_diameter",
                  f"{w.hole_diameter / conv['small_length']:.4g} {disp['small_length']}")
    if any(x.completion == "perforated" for x in (w, *(o.well for o in sc.options))):
        given = "phasings" in (sc.raw.get("well") or {})
        t.add_row("well.phasings", ", ".join(f"{p:g}" for p in sc.phasings)
                  + " deg" + ("" if given else " (default)") + "; 0 = every shot in one "
                  "direction")
    t.add_row("angles", "shot and wall angles are measured "
              + angle_reference(w.inclination, w.azimuth))
    con.print(t)
    if sc.options:
        t = Table("option", "completion", "shot angles", "diameter", show_edge=False,
                  title=Text("completion options ([[option]])"), title_justify="left")
        t.add_row(Text("as planned ([well])"), *_completion_cells(w, sc))
        for o in sc.options:
            t.add_row(safe(o.name), *_completion_cells(o.well, sc))
        con.print(t)
    t = _key_table("input", "distribution; meaning; source")
    for name, m in sc.inputs.items():
        spec = INPUT_SPECS[name]
        scale = conv[spec.dimension]
        unit = disp[spec.dimension]
        cell = Text.assemble(safe(m.describe(scale, unit)), "\n", safe(spec.description, "dim"))
        if m.source:
            cell.append_text(Text.assemble("\nsource: ", safe(m.source, "italic")))
        t.add_row(safe(f"{spec.section}.{name}"), cell)
    con.print(t)
    if sc.correlation:
        t = Table("input", "input", "rank correlation", show_edge=False,
                  title=Text("correlation.pairs (Spearman rank correlations)"),
                  title_justify="left")
        for a, b, rho in sc.correlation:
            t.add_row(safe(a), safe(b), f"{rho:g}")
        con.print(t)
    p = disp["pressure"]

    def pr(v: float) -> str:
        return f"{sc.to_display(v, 'pressure'):,.6g}"

    t = _key_table("production", "value")
    rule = isinstance((sc.raw.get("production") or {}).get("reservoir_pressure"), dict)
    t.add_row("production.reservoir_pressure",
              ", ".join(pr(s) for s in sc.reservoir_pressure) + f" {p}"
              + (f" ({len(sc.reservoir_pressure)} stages by rule)" if rule else ""))
    t.add_row("production.max_drawdown", f"{pr(sc.max_drawdown)} {p}")
    t.add_row("production.accepted_risk", f"{sc.accepted_risk:g}")
    if sc.operating_points:
        shown = [f"{pr(r)} / {pr(wp)} (drawdown {pr(r - wp)})"
                 for r, wp in sc.operating_points[:_MAX_POINTS_SHOWN]]
        more = len(sc.operating_points) - _MAX_POINTS_SHOWN
        t.add_row("production.operating_points",
                  Text(f"reservoir / wall pressure [{p}]: " + "; ".join(shown)
                  + (f"; and {more:,} more" if more > 0 else "")))
    con.print(t)
    con.print(f"criterion {sc.criterion}; {sc.samples:,} samples ({sc.sampling}), seed {sc.seed}")
    _print_warnings(con, sc.warnings)
    con.print("[green]scenario is valid[/]")


#: Operating points listed by ``risk check`` (the rest are counted).
_MAX_POINTS_SHOWN = 10


def _print_warnings(con: Console, warnings: Any) -> None:
    """One ``warning: ...`` line per input warning (texts as they are, escaped)."""
    for w in warnings or ():
        con.print(Text.assemble(("warning", "yellow"), ": ", safe(w)))


_SHORT = {"effective_strength_onset": "TWC onset", "tunnel_collapse": "tunnel collapse"}


def _shots(c: dict[str, Any]) -> str:
    ph = c.get("phasing")
    what = ("planned set" if ph is None else "0 deg phasing" if float(ph) == 0.0
            else f"{float(ph):g} deg phasing")
    return f"{what} ({', '.join(f'{float(a):g}' for a in c.get('shot_angles') or [])} deg)"


def print_answer(summary: dict[str, Any], console: Console | None = None) -> None:
    """The answer first: the sand-free drawdown limit now and per stage, where it reaches zero,
    P(sanding) at the planned points, and the gun for the life of the well."""
    con = console or Console()
    u = summary["units"]["pressure"]
    sf = summary.get("sand_free")
    if sf is None:
        con.print(Text.assemble(("No sand-free limit: ", "bold"),
                                safe(summary.get("sand_free_note") or "")))
        return
    stages = sf["stages"]
    names = {k: m.get("name", k) for k, m in summary["mechanisms"].items()}
    first = stages[0]
    con.print(Text.assemble(
        ("Sand-free drawdown limit now: ", "bold"),
        (f"{_fmt(first['drawdown_limit'])} {u}", "bold"),
        safe(f" at p_r {_fmt(first['reservoir_pressure'])} {u}"
             + (" with the planned shots" if summary.get("completion") == "perforated" else "")
             + f", governed by {names.get(first['governing'], first['governing'])}; accepted "
             f"risk {summary['accepted_risk']:g}")))
    t = Table(show_edge=False, title=f"sand-free limit per stage, pressures in {u}",
              title_justify="left")
    for col in ("p_r", "limit", "low95", "governed by", "P(sand at 0) 95%", "yield ref"):
        t.add_column(col, justify="left" if col == "governed by" else "right")
    fy = {st["reservoir_pressure"]: st["drawdown_limit"]
          for st in (summary.get("first_yield") or {}).get("stages") or []}
    for st in stages:
        t.add_row(_fmt(st["reservoir_pressure"]), _fmt(st["drawdown_limit"]),
                  "n/a" if st["drawdown_limit_lower"] is None
                  else _fmt(st["drawdown_limit_lower"]),
                  _SHORT.get(st["governing"], st["governing"]),
                  f"{100 * st['p_no_drawdown']:.1f}% ({100 * st['p_no_drawdown_low']:.1f}-"
                  f"{100 * st['p_no_drawdown_high']:.1f})",
                  _fmt(fy.get(st["reservoir_pressure"])))
    con.print(t)
    z = sf["zero_limit"]
    if z["kind"] == "between":
        con.print(f"The limit reaches zero below about {_fmt(z['estimate'])} {u} (between the "
                  f"stages at {_fmt(z['above'])} and {_fmt(z['below'])} {u}).")
    elif z["kind"] == "first-stage":
        con.print("The limit is zero from the first stage: sand is expected with no drawdown.")
    else:
        con.print(f"The limit stays above zero down to the last stage ({_fmt(z['above'])} {u}).")
    if any(st["drawdown_limit"] == 0 for st in stages):
        con.print("[yellow]screening[/]: where the limit is zero the completion needs sand "
                  "control, a changed completion or a rate restriction - the engineer's "
                  "decision, under local practice.")
    for pt in sf.get("operating_points") or []:
        p = ("not a depletion stage" if pt["probability"] is None else
             f"P(sanding) {pt['probability']:.1%} ({pt['low']:.1%}-{pt['high']:.1%})"
             + (", beyond the limit" if pt["beyond_limit"] else ""))
        con.print(f"planned point p_r {_fmt(pt['reservoir_pressure'])} {u}, drawdown "
                  f"{_fmt(pt['drawdown'])} {u}: {p}")
    ch = summary.get("completion_choice")
    if ch:
        lims = ", ".join(_fmt(v) for v in ch["chosen"]["drawdown_limits"])
        con.print(Text.assemble(("Gun for the life of the well: ", "bold"),
                                safe(f"{_shots(ch['chosen'])}; sand-free limit per stage "
                                     f"{lims} {u}")))
    for o in summary.get("completion_options") or []:
        osf = o.get("sand_free") or {}
        lims = ", ".join(_fmt(st["drawdown_limit"]) for st in osf.get("stages") or [])
        con.print(Text.assemble("option ", safe(o["name"], "bold"),
                                f": sand-free limit per stage {lims or '-'} {u}"))


def _print_pore_collapse(con: Console, mech: dict[str, Any], u: str) -> None:
    far, wall = mech["critical_reservoir_pressure"], mech["wall_critical_reservoir_pressure"]
    con.print(Text.assemble(
        safe(mech["name"], "bold"),
        safe(f" (pore_collapse): critical reservoir pressure far field p10/p50/p90 "
             f"{_fmt(far['p10'])} / {_fmt(far['p50'])} / {_fmt(far['p90'])} {u}; at the wall "
             f"{_fmt(wall['p10'])} / {_fmt(wall['p50'])} / {_fmt(wall['p90'])} {u}")))
    mean = mech.get("mean_stress_critical_reservoir_pressure")
    if mean:
        con.print(safe(f"  surface {mech.get('surface')}; mean-stress criterion (q = 0) far field "
                       f"p10/p50/p90 {_fmt(mean['p10'])} / {_fmt(mean['p50'])} / "
                       f"{_fmt(mean['p90'])} {u}"))
    with_dd = all("wall_probability_at_max_drawdown" in s for s in mech["stages"])
    t = Table(show_edge=False)
    for col in (f"p_r [{u}]", "P(collapse) far field", "95% band", "P(collapse) at the wall",
                *(("at the wall, largest drawdown",) if with_dd else ())):
        t.add_column(col, justify="right")
    for s in mech["stages"]:
        t.add_row(_fmt(s["reservoir_pressure"]), f"{s['probability']:.1%}",
                  f"{s['low']:.1%} - {s['high']:.1%}", f"{s['wall_probability']:.1%}",
                  *((f"{s['wall_probability_at_max_drawdown']:.1%}",) if with_dd else ()))
    con.print(t)


def _print_extensions(con: Console, summary: dict[str, Any], u: str) -> None:
    """Tunnel root beside the far field, and water weakening by stage."""
    root = summary.get("tunnel_root")
    if root:
        gov = ("the worse governs" if root["governing"] == "root-and-far-field"
               else "the far field governs")
        t = Table(title=safe(f"Effective-strength onset, tunnel root vs far field ({gov}) - "
                             f"drawdown limit in {u}"), show_edge=False, title_justify="left")
        for col in ("p_r", "far field", "root", "root worse"):
            t.add_column(col, justify="right")
        for s in root["stages"]:
            t.add_row(_fmt(s["reservoir_pressure"]), _fmt(s["far_field"]["drawdown_limit"]),
                      _fmt(s["root"]["drawdown_limit"]), f"{s['root_worse_fraction']:.0%}")
        con.print(t)
    water = summary.get("water_weakening")
    if water:
        t = Table(title="Water weakening: saturation rise and strength factor (P10/P50/P90)",
                  show_edge=False, title_justify="left")
        for col in (f"p_r [{u}]", "saturation rise", "strength factor"):
            t.add_column(col, justify="right")
        for s in water["stages"]:
            f = s["strength_factor"]
            t.add_row(_fmt(s["reservoir_pressure"]), f"{s['water_saturation']:.2f}",
                      f"{f['p10']:.2f} / {f['p50']:.2f} / {f['p90']:.2f}")
        con.print(t)


def print_summary(summary: dict[str, Any], out_dir: Path, console: Console | None = None
                  ) -> None:
    """A compact table per mechanism: limits and critical values per depletion stage."""
    con = console or Console()
    if summary.get("kind") == "logs":
        _print_log_summary(con, summary, out_dir)
        return
    u = summary["units"]["pressure"]
    con.print(Text.assemble(
        safe(summary["title"], "bold"),
        safe(f" - {summary['samples']:,} samples ({summary['sampling']}), seed "
             f"{summary['seed']}, criterion {summary['criterion']}")))
    _print_warnings(con, summary.get("warnings"))
    print_answer(summary, con)
    con.print("[bold]Per mechanism[/] (first yield is a conservative reference, not sand "
              "production):")
    for key, mech in summary["mechanisms"].items():
        if key == "pore_collapse":
            _print_pore_collapse(con, mech, u)
            continue
        perforated = "shots" in mech["stages"][0]
        t = Table(title=safe(f"{mech['name']} ({key}) - pressures in {u}"), show_edge=False,
                  title_justify="left")
        for col in ("p_r", f"limit@{summary['accepted_risk']:g}", "low95", "Dc P10",
                    "Dc P50", "Dc P90", "never", "best/worst" if perforated else "wall"):
            t.add_column(col, justify="right")
        for s in mech["stages"]:
            dc = s["critical_drawdown"]
            if perforated:
                b, w = s.get("best_shot_angle"), s.get("worst_shot_angle")
                angle = "-" if b is None else f"{_fmt(b)}/{_fmt(w)}"
            else:
                wa = s.get("worst_wall_angle")
                angle = "-" if wa is None else _fmt(wa)
            t.add_row(_fmt(s["reservoir_pressure"]), _fmt(s["drawdown_limit"]),
                      "n/a" if s["drawdown_limit_lower"] is None
                      else _fmt(s["drawdown_limit_lower"]),
                      *(_fmt(dc[k]) for k in ("p10", "p50", "p90")),
                      f"{s['never_fraction']:.0%}", angle)
        con.print(t)
        for s in mech["stages"]:
            if s.get("convergence_warning"):
                con.print(Text.assemble(
                    ("warning", "yellow"),
                    safe(f" (p_r {_fmt(s['reservoir_pressure'])} {u}): "
                         f"{s['convergence_warning']}")))
    _print_extensions(con, summary, u)
    for key, rows in summary.get("sensitivity", {}).items():
        ranked = [r for r in rows if r.get("rank_value") is not None]
        if not ranked:
            con.print(safe(f"sensitivity ({key}): no spread in the output (almost every sample "
                           "has the same outcome)"))
            continue
        name = summary["mechanisms"].get(key, {}).get("name", key)
        t = Table(title=safe(f"What drives it: {name}, first stage"), show_edge=False,
                  title_justify="left")
        for col in ("input", "total", "first", "Shapley"):
            t.add_column(col, justify="right" if col != "input" else "left")

        def num(v: float | None) -> str:
            # a Monte-Carlo estimate of a null effect may come out slightly negative: shown
            # as 0.00 (results.json keeps the estimate)
            return "-" if v is None else f"{v + 0.0:.2f}".replace("-0.00", "0.00")

        for r in ranked[:8]:
            t.add_row(safe(r["input"]), num(r["total"]), num(r["first"]), num(r["shapley"]))
        con.print(t)
    con.print(Text.assemble("results: ", safe(out_dir / "results.json")))
    if (out_dir / "memo.html").exists():
        con.print(Text.assemble("memo: ", safe(out_dir / "memo.html"), " (and memo.pdf)"))


def _print_log_summary(con: Console, s: dict[str, Any], out_dir: Path) -> None:
    """A log run: the interval's sanding probability per stage and the perforation plan."""
    pu, lu = s["units"]["pressure"], s["units"]["length"]
    con.print(Text.assemble(
        safe(s["title"], "bold"),
        safe(f" - {s['las']['depths']:,} depths x {s['samples']:,} samples ({s['sampling']}), "
             f"seed {s['seed']}")))
    _print_warnings(con, s.get("warnings"))
    plan = s.get("plan")
    if plan is None:
        con.print("No sand-production mechanism switched on: first yield only.")
    else:
        iv = s["interval"]
        table = Table(title=f"At the planned drawdown of {s['planned_drawdown']:,.0f} {pu}")
        for col in ("stage", f"p_r [{pu}]", "P(interval sands)", "if independent",
                    f"limit whole [{pu}]", f"limit plan [{pu}]"):
            table.add_column(col, justify="right")
        for k, st in enumerate(s["stages"]):
            lim = plan["sand_free_limit"][k]
            whole = iv["sand_free_limit_whole"][k]
            table.add_row(str(k + 1), f"{st:,.0f}", f"{iv['probability_whole'][k]:.3f}",
                          f"{iv['probability_if_independent'][k]:.3f}",
                          "never" if whole is None else f"{whole:,.0f}",
                          "never" if lim is None else f"{lim:,.0f}")
        con.print(table)
        runs = ", ".join(f"{a:,.1f}-{b:,.1f}" for a, b in plan["runs"]) or "nothing"
        con.print(safe(f"plan: perforate {runs} {lu} ({plan['length']:,.1f} {lu}), "
                       f"P(interval sands) {plan['probability']:.3f}"))
    con.print(safe(f"outputs in {out_dir}"))
