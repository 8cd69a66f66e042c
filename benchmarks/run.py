"""Speed and memory benchmarks, printed as ratios measured side by side in one run.

Usage: ``python benchmarks/run.py [--quick]`` (``make bench``). The machines these run on are
shared: absolute times vary by tens of percent between runs, ratios much less. Nothing here is a
test; results are recorded by hand in benchmarks/README.md with the machine they came from.
"""

from __future__ import annotations

import argparse
import gc
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from risk.mechanics import cavity
from risk.mechanics import stresses as st
from risk.mechanics.criteria import CRITERIA, StrengthParameters
from risk.mechanics.yield_onset import critical_wall_pressure

ROOT = Path(__file__).resolve().parents[1]
RISK = str(Path(sys.executable).parent / "risk")


def best_of(fn: Callable[[], object], repeat: int = 3) -> float:
    """Smallest wall time of ``repeat`` calls [s] (the least disturbed by other load)."""
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def yield_case(n: int, rng: np.random.Generator, inclination: float = 0.0
               ) -> dict[str, object]:
    """n well cases with random stresses (normal faulting, p_r 30 MPa) and strengths (MC)."""
    sh_min = rng.uniform(40, 50, n)
    sh_max = sh_min + rng.uniform(0, 15, n)
    sv = sh_max + rng.uniform(2, 10, n)
    ucs = rng.uniform(20, 120, n)
    loc = st.local_stress(st.far_field_tensor(shmax=sh_max, shmin=sh_min, sv=sv,
                                              shmax_azimuth=0.4),
                          st.cavity_frame(inclination, 1.0))
    return {"loc": loc, "ucs": ucs, "sh_max": sh_max, "sh_min": sh_min}


def vectorised(case: dict[str, object]) -> np.ndarray:
    return onset(case)[0]


def scipy_loop(case: dict[str, object], count: int) -> list[float]:
    """The straightforward per-sample way: a Brent root in p of the angle maximum, each found
    by a 24-point scan refined with scipy's bounded scalar minimiser."""
    loc: st.LocalStress = case["loc"]  # type: ignore[assignment]
    ucs = np.asarray(case["ucs"])
    out = []
    for i in range(count):
        one = st.LocalStress(*(np.asarray(c)[i] for c in loc))
        prm = StrengthParameters(float(ucs[i]), 0.5)

        def f(theta: float, p: float, one: st.LocalStress = one,
              prm: StrengthParameters = prm) -> float:
            w = st.wall_stresses(one, theta=theta, wall_pressure=p, reservoir_pressure=30.0,
                                 poro_coefficient=0.5, poisson_ratio=0.25)
            m = np.zeros((3, 3))
            m[1, 1], m[2, 2] = w.hoop - p, w.axial - p
            m[1, 2] = m[2, 1] = w.shear_hoop_axial
            ev = np.linalg.eigvalsh(m)
            return float(CRITERIA["mohr-coulomb"](ev[2], ev[1], ev[0], prm))

        def g(p: float, f: Callable[[float, float], float] = f) -> float:
            grid = np.linspace(0, np.pi, 24, endpoint=False)
            vals = [f(t, p) for t in grid]
            k = int(np.argmax(vals))
            r = minimize_scalar(lambda t: -f(t, p), bounds=(grid[k] - 0.14, grid[k] + 0.14),
                                method="bounded", options={"xatol": 1e-10})
            return max(vals[k], -float(r.fun))

        if g(30.0) >= 0:
            out.append(30.0)
        elif g(0.0) < 0:
            out.append(-np.inf)
        else:
            out.append(brentq(g, 0.0, 30.0, xtol=1e-12))
    return out


def probe(case: dict[str, object]) -> tuple[np.ndarray, np.ndarray]:
    """Bare-arithmetic numpy evaluation of the same answer for these vertical wells: the
    closed form of docs/derivations.md sec. 3 for both the hoop and the axial branch
    (Mohr-Coulomb with the radial stress as the minor one, valid as every wall here is
    compressive all round), the outcome conventions (p_r: fails with no drawdown, -inf: never)
    and the worst angle (Kirsch: where the hoop stress peaks). Nothing is checked or classified."""
    loc: st.LocalStress = case["loc"]  # type: ignore[assignment]
    ucs = np.asarray(case["ucs"])
    a, nu, p_r = 0.5, 0.25, 30.0
    d = loc.sxx - loc.syy
    r = 2.0 * np.sqrt(d * d + 4.0 * loc.sxy * loc.sxy)
    hoop = (loc.sxx + loc.syy + r - a * p_r - ucs) / (2.0 - a)
    axial = (loc.szz + nu * r - a * p_r - ucs) / (1.0 - a)
    pc = np.maximum(hoop, axial)
    p_wc = np.where(pc >= p_r, p_r, np.where(pc < 0.0, -np.inf, pc))
    theta = 0.5 * np.arctan2(4.0 * loc.sxy, 2.0 * d) + 0.5 * np.pi
    theta[np.isneginf(p_wc)] = np.nan
    return p_wc, theta


def hoop_line(case: dict[str, object]) -> np.ndarray:
    """The hoop branch alone, one line (what a hand calculation would type)."""
    s1, s3, ucs = (np.asarray(case[k]) for k in ("sh_max", "sh_min", "ucs"))
    return (3 * s1 - s3 - ucs - 0.5 * 30.0) / (2 - 0.5)


def onset(case: dict[str, object]) -> tuple[np.ndarray, np.ndarray]:
    r = critical_wall_pressure(
        case["loc"], reservoir_pressure=30.0, poro_coefficient=0.5, poisson_ratio=0.25,  # type: ignore[arg-type]
        strength=StrengthParameters(case["ucs"], 0.5), tensile_strength=np.inf)
    return r.wall_pressure, r.theta


def run_cli(args: list[str]) -> tuple[float, int]:
    """Wall time [s] and peak resident memory [bytes] of one `risk` subprocess."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t = time.perf_counter()
    subprocess.run([RISK, *args], check=True, stdout=subprocess.DEVNULL)
    dt = time.perf_counter() - t
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return dt, max(peak, before) * 1024


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--quick", action="store_true", help="smaller sizes")
    ap.add_argument("--full", action="store_true", help="also run 10^7 samples (minutes)")
    ap.add_argument("--only", choices=("criteria", "memo", "run"),
                    help="only the per-criterion rows, the memo's fixed cost, or the whole run "
                         "against the per-sample loop")
    args = ap.parse_args()
    quick = args.quick
    rng = np.random.default_rng(1)
    print(f"machine: {platform.machine()}, {os.cpu_count()} cores, Python "
          f"{platform.python_version()}, numpy {np.__version__}")
    rows: list[tuple[str, str, str]] = []
    if args.only:
        {"criteria": criteria_rows, "memo": memo_rows, "run": whole_run_rows}[args.only](
            rows, quick)
        _print(rows)
        return
    criteria_rows(rows, quick)
    memo_rows(rows, quick)
    whole_run_rows(rows, quick)

    # 1. yield onset: vectorised vs per-sample scipy loop vs bare numpy probe
    # 40,960 cases a call: what a run passes for an open hole (4,096 samples x 10 stages)
    n = 40_960
    n_loop = 20 if not quick else 8
    for label, inc in (("vertical well", 0.0), ("60-degree well", np.radians(60.0))):
        case = yield_case(n, rng, inc)
        t_vec = best_of(lambda case=case: vectorised(case)) / n
        t_loop = best_of(lambda case=case: scipy_loop(case, n_loop), repeat=1) / n_loop
        agree = np.allclose(vectorised(case)[:n_loop], scipy_loop(case, n_loop), atol=1e-6)
        rows.append((f"yield onset, {label}", f"{t_vec * 1e6:.2f} us per case",
                     f"per-sample scipy loop {t_loop * 1e6:.0f} us: {t_loop / t_vec:.0f}x "
                     f"(goal >= 1000x); answers agree: {agree}"))
        if inc == 0.0:
            t_on = best_of(lambda case=case: onset(case), repeat=7) / n
            t_probe = best_of(lambda case=case: probe(case), repeat=7) / n
            t_line = best_of(lambda case=case: hoop_line(case), repeat=7) / n
            same = all(np.allclose(np.nan_to_num(u), np.nan_to_num(v), atol=1e-9)
                       for u, v in zip(onset(case), probe(case), strict=True))
            rows.append(("  vs bare numpy, same outputs (p_wc, outcomes, angle)",
                         f"{t_on / t_probe:.1f}x", f"goal <= 3x; same answers: {same}"))
            rows.append(("  vs the hoop branch alone (one line, no angle)",
                         f"{t_on / t_line:.1f}x", "for reference"))

    # 2. throughput of the whole well: 10^6 samples x 12 shots x 10 stages, in chunks of
    # 20,000 samples (2.4 million cases) as a run would; --full measures all of it
    m_total = 1_000_000 if args.full else (50_000 if quick else 200_000)
    chunk = 20_000
    shots = st.tunnel_frame(well_inclination=0.6, well_azimuth=1.0,
                            shot_angle=np.radians(np.arange(0, 360, 30)))[None, :, None]
    p_r = np.linspace(32.0, 18.0, 10)[None, None, :]

    def well_chunk(k: int) -> np.ndarray:
        g = np.random.default_rng(k)
        loc = st.local_stress(
            st.far_field_tensor(shmax=g.uniform(55, 65, (chunk, 1, 1)), shmin=48.0, sv=70.0,
                                shmax_azimuth=0.3), shots)
        return critical_wall_pressure(
            loc, reservoir_pressure=p_r, poro_coefficient=0.5, poisson_ratio=0.25,
            strength=StrengthParameters(g.uniform(60, 140, (chunk, 1, 1)), 0.55),
            tensile_strength=3.0).wall_pressure

    well_chunk(0)
    t0 = time.perf_counter()
    for k in range(m_total // chunk):
        well_chunk(k)
    t = time.perf_counter() - t0
    per = t / (m_total * 120)
    how = "measured" if m_total == 1_000_000 else f"extrapolated from {m_total:,} samples"
    rows.append(("10^6 samples x 12 shots x 10 stages (yield onset)",
                 f"{per * 1.2e8:.1f} s ({how})", f"goal < 10 s; {per * 1e9:.0f} ns per case"))

    # 3. tunnel collapse, 10^6 samples (Mohr-Coulomb)
    k = 1_000_000 if not quick else 100_000
    kw = dict(criterion="mohr-coulomb", critical_plastic_strain=rng.uniform(0.005, 0.03, k),
              sigma0=rng.uniform(40, 60, k), p_r=30.0, r_w=0.006, r_e=0.3,
              dilation_angle=0.1, young_modulus=rng.uniform(5e3, 2e4, k), poisson_ratio=0.25,
              biot=0.9, ucs=rng.uniform(10, 40, k), friction_angle=0.55)
    t_tc = best_of(lambda: cavity.collapse_wall_pressure(**kw), repeat=1)
    rows.append((f"tunnel collapse, {k:,} samples", f"{t_tc:.1f} s", "goal well under 20 s"))

    # 4. compiling the kernel: once per machine, then loaded from numba's cache
    code = ("import time; t = time.perf_counter(); import numpy as np; "
            "from risk.mechanics.yield_onset import critical_wall_pressure as f; "
            "from risk.mechanics.stresses import LocalStress; "
            "from risk.mechanics.criteria import StrengthParameters as S; "
            "f(LocalStress(40., 30., 50., 1., 0., 0.), reservoir_pressure=20., "
            "poro_coefficient=.5, poisson_ratio=.25, strength=S(30., .5), tensile_strength=2.); "
            "print(time.perf_counter() - t)")
    with tempfile.TemporaryDirectory() as cache:
        env = {**os.environ, "NUMBA_CACHE_DIR": cache}
        first, again = (float(subprocess.run([sys.executable, "-c", code], env=env, check=True,
                                             capture_output=True, text=True).stdout)
                        for _ in range(2))
    rows.append(("first yield-onset call: compiling / from cache", f"{first:.1f} s / "
                 f"{again:.1f} s", "once per machine (numba's cache)"))

    # 5. end to end and start-up
    demo = ROOT / "examples" / "ravenmoor_r7_openhole.toml"
    out = Path(os.environ.get("TMPDIR", "/tmp")) / "risk-bench-demo"
    t_demo, _ = run_cli(["run", str(demo), "--out", str(out), "--force", "-q"])
    rows.append(("risk run on the demo (8,192 samples, memo and PDF)", f"{t_demo:.1f} s", ""))
    t_help = min(run_cli(["--help"])[0] for _ in range(3))
    rows.append(("risk --help start-up", f"{t_help * 1e3:.0f} ms", ""))

    # 6. peak memory: two sizes give the per-sample slope; --full measures 10^7 directly
    def rss_at(n_samples: int) -> float:
        # a fresh interpreter per size, so the children's maximum is that run's own peak
        code = ("import resource, subprocess, sys; subprocess.run(sys.argv[1:], check=True, "
                "stdout=subprocess.DEVNULL); "
                "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
        res = subprocess.run([sys.executable, "-c", code, RISK, "run", str(demo), "--out",
                              str(out), "--force", "-q", "--samples", str(n_samples)],
                             check=True, capture_output=True, text=True)
        return float(res.stdout.strip()) * 1024.0

    n1, n2 = (16_384, 65_536) if quick else (65_536, 524_288)
    r1, r2 = rss_at(n1), rss_at(n2)
    slope = (r2 - r1) / (n2 - n1)
    rows.append((f"peak RSS at {n1:,} / {n2:,} samples",
                 f"{r1 / 2**20:.0f} / {r2 / 2**20:.0f} MiB",
                 f"{slope:.0f} B per sample; 10^7 samples about "
                 f"{(r2 + slope * (1e7 - n2)) / 1e9:.2f} GB (goal < 1 GB; double precision "
                 "below 2^20 samples, single above, so this overestimates)"))
    if args.full:
        t10 = time.perf_counter()
        r10 = rss_at(10_000_000)
        rows.append(("peak RSS at 10^7 samples (measured)", f"{r10 / 1e9:.2f} GB",
                     f"goal < 1 GB; run took {time.perf_counter() - t10:.0f} s"))

    _print(rows)
    print("sensitivity: python benchmarks/bench_sensitivity.py (about a minute)")


def _print(rows: list[tuple[str, str, str]]) -> None:
    width = max(len(r[0]) for r in rows)
    for name, value, note in rows:
        print(f"{name:<{width}}  {value:>24}  {note}")


def well_cases(samples: int, seed: int) -> tuple[st.LocalStress, np.ndarray, StrengthParameters]:
    """The throughput well: samples x 12 shots (tunnels from a 34-degree well) x 10 stages."""
    shots = st.tunnel_frame(well_inclination=0.6, well_azimuth=1.0,
                            shot_angle=np.radians(np.arange(0, 360, 30)))[None, :, None]
    p_r = np.linspace(32.0, 18.0, 10)[None, None, :]
    g = np.random.default_rng(seed)
    loc = st.local_stress(
        st.far_field_tensor(shmax=g.uniform(55, 65, (samples, 1, 1)), shmin=48.0, sv=70.0,
                            shmax_azimuth=0.3), shots)
    # Hoek-Brown constants of a good-quality sandstone (m_i 17, GSI 75; Hoek, Carranza-Torres
    # & Corkum 2002, eqs. 2-4)
    strength = StrengthParameters(g.uniform(60, 140, (samples, 1, 1)), 0.55, 6.96, 0.0622,
                                  0.5009)
    return loc, p_r, strength


def criteria_rows(rows: list[tuple[str, str, str]], quick: bool) -> None:
    """Every criterion on the throughput well, side by side with Mohr-Coulomb in one run:
    ns per case (best of 3), the ratio to the Mohr-Coulomb kernel, the numpy reference path's
    cost, and 10^6 samples x 12 x 10 extrapolated."""
    samples = 200 if quick else 1000
    loc, p_r, strength = well_cases(samples, 0)
    n = samples * 120

    def call(name: str, compiled: bool = True) -> object:
        return critical_wall_pressure(loc, reservoir_pressure=p_r, poro_coefficient=0.5,
                                      poisson_ratio=0.25, strength=strength,
                                      tensile_strength=3.0, criterion=name, compiled=compiled)

    call("mohr-coulomb")
    t_mc = best_of(lambda: call("mohr-coulomb")) / n
    rows.append(("Mohr-Coulomb kernel, the throughput well", f"{t_mc * 1e9:.0f} ns per case",
                 f"10^6 x 12 x 10: {t_mc * 1.2e8:.0f} s"))
    for name in sorted(CRITERIA):
        if name == "mohr-coulomb":
            continue
        call(name)
        # Mohr-Coulomb timed alternately with the criterion (best of 3 each), so both see the
        # same load on a shared machine
        t, t_pair = np.inf, np.inf
        for _ in range(3):
            t_pair = min(t_pair, best_of(lambda: call("mohr-coulomb"), repeat=1) / n)
            t = min(t, best_of(lambda name=name: call(name), repeat=1) / n)
        t_ref = best_of(lambda name=name: call(name, compiled=False), repeat=1) / n
        rows.append((f"  {name}", f"{t * 1e9:.0f} ns per case",
                     f"{t / t_pair:.1f}x Mohr-Coulomb ({t_pair * 1e9:.0f} ns alongside; goal "
                     f"<= 3x); numpy reference path {t_ref / t:.1f}x slower; 10^6 x 12 x 10: "
                     f"{t * 1.2e8:.0f} s (goal < 30 s)"))


def memo_rows(rows: list[tuple[str, str, str]], quick: bool) -> None:
    """The fixed cost of a run's memo on the demo's results (figures, HTML, PDF), in this
    process after one warm-up rendering (fonts and caches loaded, as in a run): wall and CPU
    time of each step, then the whole memo one step after the other and with the PDF laid out
    while the figures are drawn in a forked process (what a run does when a core is idle), and
    the full garbage collections one memo in turn still pays."""
    import json

    from risk.report.figures import render_all
    from risk.report.memo.render import build_memo, render_html, render_pdf

    del quick
    out = Path(os.environ.get("TMPDIR", "/tmp")) / "risk-bench-memo"
    demo = ROOT / "examples" / "ravenmoor_r7_openhole.toml"
    subprocess.run([RISK, "run", str(demo), "--out", str(out), "--force", "-q"], check=True)
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    build_memo(results, workers=1)  # warm-up

    def timed(fn: Callable[[], object]) -> tuple[float, float, object]:
        w, c = time.perf_counter(), time.process_time()
        r = fn()
        return time.perf_counter() - w, time.process_time() - c, r

    t_fig, c_fig, figs = timed(lambda: render_all(results, workers=1))
    t_html, c_html, _ = timed(lambda: render_html(results, figs))  # type: ignore[arg-type]
    page = render_html(results, figs, linked=True)  # type: ignore[arg-type]
    t_pdf, c_pdf, _ = timed(lambda: render_pdf(page, images=figs))  # type: ignore[arg-type]
    t_seq = best_of(lambda: build_memo(results, workers=1), repeat=2)
    t_par = best_of(lambda: build_memo(results, workers=2), repeat=2)
    load = os.getloadavg()[0]
    # full collections of the cyclic garbage collector during one memo in turn (the memo keeps
    # it off the objects that were there before: risk.report.heap.settled)
    full: list[float] = []
    started = [0.0]

    def watch(phase: str, info: dict[str, int]) -> None:
        if info["generation"] == 2:
            if phase == "start":
                started[0] = time.perf_counter()
            else:
                full.append(time.perf_counter() - started[0])

    gc.callbacks.append(watch)
    try:
        build_memo(results, workers=1)
    finally:
        gc.callbacks.remove(watch)
    rows.append(("memo of the demo: figures (one process)", f"{t_fig:.2f} s",
                 f"CPU {c_fig:.2f} s"))
    rows.append(("  HTML / PDF (WeasyPrint)", f"{t_html:.2f} s / {t_pdf:.2f} s",
                 f"CPU {c_html:.2f} s / {c_pdf:.2f} s"))
    rows.append(("  whole memo: in turn / PDF laid out while drawing",
                 f"{t_seq:.2f} s / {t_par:.2f} s",
                 f"{t_seq / t_par:.2f}x; goal figures + PDF <= 1.5 s; load average {load:.1f}"))
    rows.append(("  full garbage collections during one memo in turn", f"{len(full)}",
                 f"{sum(full):.2f} s"))
    # what a run pays once: importing the drawing and the PDF engine after the pipeline's own
    # modules (a fresh interpreter; seaborn, and pyplot with it, is imported for the figures)
    code = ("import time, sys, risk.api, risk.cli\n"
            "c = time.process_time()\n"
            "import risk.report.memo.render, weasyprint\n"
            "print(time.process_time() - c, 'seaborn' in sys.modules)")
    done = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True,
                          text=True, cwd=ROOT, env={**os.environ, "PYTHONPATH": str(ROOT)})
    cpu, seaborn = done.stdout.split()
    rows.append(("  importing the memo's modules and WeasyPrint (cold)",
                 f"CPU {float(cpu):.2f} s", f"seaborn imported: {seaborn}"))


def memo_cost(results: dict[str, object]) -> tuple[float, float, int]:
    """CPU seconds of drawing the figures (one process) and of the PDF for these results,
    after a warm-up rendering, and the number of figures."""
    from risk.report.figures import render_all
    from risk.report.memo.render import build_memo, render_html, render_pdf

    build_memo(results, workers=1)
    c = time.process_time()
    figs = render_all(results, workers=1)
    c_fig = time.process_time() - c
    page = render_html(results, figs, linked=True)
    c = time.process_time()
    render_pdf(page, images=figs)
    return c_fig, time.process_time() - c, len(figs)


def whole_run_rows(rows: list[tuple[str, str, str]], quick: bool) -> None:
    """A whole `risk run` (sampling, every mechanism, sensitivity, figures, memo and PDF) of
    the G-3 example (vertical perforated gas well, 6 shots) at three reservoir-pressure stages
    and 200,000 samples (20,000 with --quick), against two per-sample loops, each per case
    times the run's cases:

    1. the issue's (issue 19): the per-sample scipy loop of the yield onset alone
       (:func:`scipy_loop`, on random vertical-well cases), printed as before;
    2. the same mechanisms the run computes (since issue 15: yield onset, effective-strength
       onset in the far field and at the tunnel root, tunnel collapse, pore collapse), each by
       its straightforward per-sample scipy/numpy form on the run's own sampled inputs
       (benchmarks/mechanism_loop.py; CPU time per case on 12 samples x 6 shots x 3 stages,
       the answers checked against the run's evaluation of the same samples). Printed against
       the run's wall time and against its CPU time (the fairer one on a loaded machine: the
       loop's time is CPU time).
    """
    import json

    from mechanism_loop import per_case_seconds

    samples = 20_000 if quick else 200_000
    text = (ROOT / "examples" / "ravenmoor_g3_depleting_gas.toml").read_text(encoding="utf-8")
    stages = "reservoir_pressure = [5260, 3500, 1500]"
    text = text.replace("reservoir_pressure = [5260, 4500, 3500, 2500, 1500]", stages)
    if stages not in text:
        raise SystemExit("benchmarks: the G-3 example's stages changed; update whole_run_rows")
    n_loop = 8 if quick else 20
    case = yield_case(40_960, np.random.default_rng(1))
    t_case = best_of(lambda: scipy_loop(case, n_loop), repeat=1) / n_loop
    with tempfile.TemporaryDirectory() as tmp:
        scenario = Path(tmp) / "g3_three_stages.toml"
        scenario.write_text(text, encoding="utf-8")
        per, agree = per_case_seconds(scenario, samples=3 if quick else 12)
        load = os.getloadavg()[0]  # the run overlaps its steps only where a core is idle
        before = os.times()
        t_run, _ = run_cli(["run", str(scenario), "--out", str(Path(tmp) / "out"), "-q",
                            "--samples", str(samples)])
        after = os.times()
        results = json.loads((Path(tmp) / "out" / "results.json").read_text(encoding="utf-8"))
    cpu = (after.children_user - before.children_user
           + after.children_system - before.children_system)
    # the memo's cost does not grow with the sample count: the figures and the PDF are drawn
    # from results.json alone (summaries, histograms of 24 bins, curves on fixed grids)
    c_fig, c_pdf, n_fig = memo_cost(results)
    cases = samples * 6 * 3
    rows.append((f"risk run, G-3 at 3 stages, {samples:,} samples x 6 shots",
                 f"{t_run:.1f} s (CPU {cpu:.1f} s)",
                 f"per-sample loop {t_case * 1e3:.1f} ms x {cases:,} cases = "
                 f"{t_case * cases / 3600:.2f} h: {t_case * cases / t_run:,.0f}x "
                 f"(goal >= 2,000x); load average before it {load:.1f}"))
    pore = per.pop("pore collapse (per sample)")
    tunnel = sum(per.values())
    loop = tunnel * cases + pore * samples
    rows.append(("  vs a per-sample loop of every mechanism the run computes",
                 f"{loop / t_run:,.0f}x wall, {loop / cpu:,.0f}x CPU",
                 f"{tunnel * 1e3:.2f} ms per tunnel case + {pore * 1e3:.2f} ms per sample "
                 f"= {loop / 3600:.1f} h of CPU; answers agree with the run: {agree}"))
    for name, t in per.items():
        rows.append((f"    {name}", f"{t * 1e3:.3f} ms per case", ""))
    rows.append(("    pore collapse", f"{pore * 1e3:.3f} ms per sample", ""))
    rows.append((f"  its memo: {n_fig} figures / PDF (CPU, warm)", f"{c_fig:.2f} s / {c_pdf:.2f} s",
                 "drawn from results.json alone: bounded whatever the sample count"))


if __name__ == "__main__":
    main()
