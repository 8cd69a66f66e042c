"""risk batch: scaling from 1 to 2 local workers, and the per-case overhead of the batch path.

Usage::

    python benchmarks/bench_batch.py                       # the issue's 200 cases x 20,000
    python benchmarks/bench_batch.py --cases 8 --samples 4096   # a quick look

Prints ratios (the machines are shared: absolute times vary, ratios much less):

- scaling = wall time on 1 worker / wall time on 2 workers (goal >= 1.7 on two free cores);
- overhead = (batch wall time per case on 1 worker) / (bare ``risk.assess`` per case, in a
  fresh process of its own, warmed like the workers, same number of cases) - 1 (goal <= 10%
  at 20,000 samples). The batch path includes what a bare call does not: scenario validation
  on the client, the task round trip, the JSON summary (results.json, run.json), writing each
  case folder and the field's table and summary memo; case memos are off (``--memos`` adds
  them; they cost about as much as the assessment itself).

The cases are the fictional Ravenmoor R-7 scenario at depths a few feet apart (each case its
own scenario, hence its own digest). Cluster start-up is timed apart.
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
R7 = ROOT / "examples" / "ravenmoor_r7_openhole.toml"


def field(cases: int, first: int = 0) -> dict[str, object]:
    return {"title": "Ravenmoor benchmark field", "defaults": str(R7),
            "case": [{"well": f"B-{i:04d}", "overrides": {"well": {"depth": 7000 + i}}}
                     for i in range(first, first + cases)]}


def bare(cases: int, first: int, samples: int) -> float:
    """Seconds for these cases through ``risk.assess`` in this process, one after another."""
    import risk
    from risk.batch import load_field

    scenarios = [risk.load_scenario(c.document)
                 for c in load_field(field(cases, first)).cases]
    t = time.perf_counter()
    for sc in scenarios:
        risk.assess(sc, samples=samples)
    return time.perf_counter() - t


def batch(client: object, cases: int, first: int, samples: int, memos: bool) -> float:
    """Seconds for these cases through ``run_field`` on ``client`` (a fresh output folder)."""
    from risk.batch import run_field

    with tempfile.TemporaryDirectory() as tmp:
        t = time.perf_counter()
        res = run_field(field(cases, first), out=Path(tmp) / "out", client=client,
                        samples=samples, memos=memos)
        took = time.perf_counter() - t
    if res.failed:
        raise SystemExit(f"failed cases: {res.failed}")
    return took


def cluster(workers: int) -> tuple[object, object, float]:
    """The local cluster ``risk batch`` starts (risk.batch.runner.local_cluster)."""
    from distributed import Client

    from risk.batch.runner import local_cluster

    t0 = time.perf_counter()
    c = local_cluster(workers, dashboard_address=":0")
    client = Client(c)
    client.run(_warm)
    return c, client, time.perf_counter() - t0


def _warm() -> None:
    import risk

    risk.assess(risk.load_scenario(R7), samples=256)


def _peak_rss_mb() -> float:
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _bare_pool() -> object:
    """A fresh process for the bare loop (spawned, warmed like the workers), so that it pays
    neither the clusters' schedulers and heartbeats that live in this process nor their
    memory: the same footing as a worker."""
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    pool = ProcessPoolExecutor(max_workers=1, mp_context=multiprocessing.get_context("spawn"))
    pool.submit(_warm).result()
    return pool


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--cases", type=int, default=200)
    ap.add_argument("--samples", type=int, default=20_000)
    ap.add_argument("--rounds", type=int, default=4,
                    help="interleave bare / 1 worker / 2 workers in this many rounds, so that "
                         "the load of a shared machine falls on all three alike")
    ap.add_argument("--memos", action="store_true")
    args = ap.parse_args()
    os.environ.setdefault("NUMBA_NUM_THREADS", "1")
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    print(f"{args.cases} cases x {args.samples:,} samples in {args.rounds} interleaved rounds, "
          f"CPUs available: {len(os.sched_getaffinity(0))}")
    _warm()
    pool = _bare_pool()
    c1, client1, s1 = cluster(1)
    c2, client2, s2 = cluster(2)
    per = max(1, args.cases // args.rounds)
    t_bare = t1 = t2 = cpu1 = cpu2 = 0.0
    for r in range(args.rounds):
        first = 3 * r * per  # every run its own cases: nothing reused
        t_bare += pool.submit(bare, per, first, args.samples).result()  # type: ignore[attr-defined]
        c0 = time.process_time()
        t1 += batch(client1, per, first + per, args.samples, args.memos)
        c1_ = time.process_time()
        t2 += batch(client2, per, first + 2 * per, args.samples, args.memos)
        cpu1 += c1_ - c0
        cpu2 += time.process_time() - c1_
        print(f"  round {r + 1}: bare {t_bare:.0f} s, 1 worker {t1:.0f} s, 2 workers {t2:.0f} s "
              "(cumulative)", flush=True)
    peaks = [*client1.run(_peak_rss_mb).values(),  # type: ignore[attr-defined]
             *client2.run(_peak_rss_mb).values()]  # type: ignore[attr-defined]
    pool.shutdown()  # type: ignore[attr-defined]
    for cl, c in ((client1, c1), (client2, c2)):
        cl.close()  # type: ignore[attr-defined]
        c.close()  # type: ignore[attr-defined]
    n = per * args.rounds
    print(f"bare risk.assess, one process : {t_bare / n:8.3f} s per case")
    print(f"batch, 1 worker               : {t1 / n:8.3f} s per case (cluster start {s1:.1f} s)")
    print(f"batch, 2 workers              : {t2 / n:8.3f} s per case (cluster start {s2:.1f} s)")
    print(f"client CPU (scheduler, writing, field summary): {cpu1 / n:.3f} / {cpu2 / n:.3f} s "
          "per case (1 / 2 workers)")
    print(f"peak memory per worker        : {max(peaks):8.0f} MB")
    print(f"scaling 1 -> 2 workers        : {t1 / t2:8.2f}  (goal >= 1.7 on two free cores)")
    print(f"per-case overhead vs bare     : {t1 / t_bare - 1:8.1%}  (goal <= 10% at 20,000)")


if __name__ == "__main__":
    main()
