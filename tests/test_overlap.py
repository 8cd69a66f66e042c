"""The sensitivity step overlapped with the evaluation (risk._overlap, assess(overlap=...)).

The reference of every check here is the same computation done in turn in this process: the
overlapped run must give the same bits (the reproducibility promise: same scenario and seed,
byte-identical results, whatever the machine's idle cores).
"""

from __future__ import annotations

import dataclasses
import json
import os
import pickle
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest

import risk.assessment as asm
from risk import _overlap
from risk.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[1]

SMALL = """
title = "Ravenmoor test well, perforated, pore collapse"
units = "si"
[well]
depth = 2500
inclination = 30
azimuth = 40
completion = "perforated"
shot_angles = [0, 90, 180, 270]
tunnel_diameter = 0.012
[stress]
sv = 55
shmax = 50
shmin = { dist = "normal", mean = 42, sd = 1.5 }
shmax_azimuth = 20
pp = 25
[rock]
ucs = { dist = "lognormal", median = 90, cov = 0.25 }
twc_ratio = { dist = "uniform", low = 1.3, high = 2.0 }
friction_angle = { dist = "uniform", low = 28, high = 36 }
tensile_strength = 3
poisson_ratio = 0.25
biot = 0.8
pore_collapse_pressure = { dist = "normal", mean = 26, sd = 3 }
[production]
reservoir_pressure = [25, 15]
max_drawdown = 12
accepted_risk = 0.1
[analysis]
samples = 4096
seed = 11
"""


def _same(a: object, b: object) -> bool:
    """Equal bit for bit: arrays by their bytes, NaN equal to NaN, dataclasses field by
    field, mappings and sequences item by item."""
    if isinstance(a, np.ndarray):
        return (isinstance(b, np.ndarray) and a.dtype == b.dtype and a.shape == b.shape
                and a.tobytes() == b.tobytes())
    if dataclasses.is_dataclass(a) and not isinstance(a, type):
        return type(a) is type(b) and all(_same(getattr(a, f.name), getattr(b, f.name))
                                          for f in dataclasses.fields(a))
    if isinstance(a, dict):
        return (isinstance(b, dict) and list(a) == list(b)
                and all(_same(a[k], b[k]) for k in a))
    if isinstance(a, list | tuple):
        return (type(a) is type(b) and len(a) == len(b)
                and all(_same(x, y) for x, y in zip(a, b, strict=True)))
    if isinstance(a, float) and isinstance(b, float) and a != a and b != b:
        return True
    return bool(a == b)


@pytest.mark.parametrize(("samples", "large"), [(3000, False), (9000, False), (9000, True)])
def test_head_sensitivity_equals_the_step_in_turn(write, monkeypatch, samples, large):
    # What the child computes (only the leading chunks evaluated afresh, stored as assess
    # stores them) against the step of the whole run in turn: fewer samples than the design
    # and hold-out need (3,000: all of them), more (9,000: 5,120 of them), and the single
    # precision of large runs (LARGE_RUN lowered so that 9,000 samples count as large).
    if large:
        monkeypatch.setattr(asm, "LARGE_RUN", 4096)
    sc = load_scenario(write(SMALL))
    a = asm.assess(sc, samples=samples, overlap=False)
    if large:
        assert a.mechanisms["yield_onset"].by_direction.dtype == np.float32
    joint = asm.build_joint(list(sc.inputs), [sc.inputs[k] for k in sc.inputs],
                            [list(p) for p in sc.correlation])
    sens, torn, base = asm._head_sensitivity(sc, joint, samples, sc.seed)
    assert a.sensitivity and _same(sens, dict(a.sensitivity))
    assert _same(torn, dict(a.tornado)) and _same(base, dict(a.tornado_base))


def test_overlap_follows_the_idle_core_test(write, monkeypatch):
    # Automatic: a child only where a second core is idle and the run has more chunks than
    # the child evaluates again; never when asked not to; forced on for tests.
    calls: list[str] = []
    monkeypatch.setattr(_overlap, "fork_call", lambda fn, what: calls.append(what))
    sc = load_scenario(write(SMALL))
    joint = asm.build_joint(list(sc.inputs), [sc.inputs[k] for k in sc.inputs],
                            [list(p) for p in sc.correlation])
    for idle, samples, overlap, forks in ((False, 9000, None, 0), (True, 9000, None, 1),
                                          (True, 8192, None, 0), (True, 9000, False, 0),
                                          (False, 2048, True, 1), (True, 63, True, 0)):
        monkeypatch.setattr(asm, "second_core_idle", lambda idle=idle: idle)
        calls.clear()
        asm._start_sensitivity(sc, joint, samples, 1, overlap)
        assert len(calls) == forks, (idle, samples, overlap)


@pytest.fixture
def forking(monkeypatch):
    """Fork allowed whatever numba's threads (the children below run no compiled code)."""
    monkeypatch.setattr(_overlap, "fork_safe", lambda: True)


def _reaped(pid: int) -> bool:
    """True once the process is gone (reaped: not even a zombie is left)."""
    return not Path(f"/proc/{pid}").exists()


def test_child_value_comes_back_and_the_child_is_reaped(forking):
    job = _overlap.fork_call(lambda: {"x": np.arange(5.0) * 2}, what="a test value")
    assert job is not None
    pid = job._child.pid
    np.testing.assert_array_equal(job.result()["x"], [0.0, 2.0, 4.0, 6.0, 8.0])
    assert _reaped(pid)


def test_child_exception_is_raised_in_the_caller(forking):
    job = _overlap.fork_call(lambda: 1 / 0, what="a division")
    assert job is not None
    with pytest.raises(ZeroDivisionError) as info:
        job.result()
    assert any("a division" in note for note in info.value.__notes__)


class _Unpicklable(Exception):
    def __reduce__(self):  # type: ignore[override]
        raise TypeError("cannot pickle")


def test_child_exception_that_does_not_pickle_comes_back_as_text(forking):
    def fail() -> None:
        raise _Unpicklable("deep inside")

    with pytest.raises(TypeError):
        pickle.dumps(_Unpicklable("x"))
    job = _overlap.fork_call(fail, what="a step")
    assert job is not None
    with pytest.raises(RuntimeError, match="deep inside"):
        job.result()


def test_child_killed_leaves_the_step_to_the_caller(forking):
    job = _overlap.fork_call(lambda: os.kill(os.getpid(), signal.SIGKILL), what="a step")
    assert job is not None
    pid = job._child.pid
    assert job.result() is _overlap.LOST
    assert _reaped(pid)


def test_close_stops_a_computing_child(forking):
    job = _overlap.fork_call(lambda: time.sleep(60), what="a long step")
    assert job is not None
    pid = job._child.pid
    t = time.perf_counter()
    job.close()
    assert time.perf_counter() - t < 10 and _reaped(pid)


def test_ctrl_c_while_waiting_stops_the_child(forking):
    # SIGINT reaches the caller while it waits for the child (which ignores SIGINT): the
    # caller gets KeyboardInterrupt at once and the child is killed and reaped.
    job = _overlap.fork_call(lambda: time.sleep(60), what="a long step")
    assert job is not None
    pid = job._child.pid
    timer = threading.Timer(0.3, os.kill, (os.getpid(), signal.SIGINT))
    timer.start()
    t = time.perf_counter()
    with pytest.raises(KeyboardInterrupt):
        job.result()
    timer.join()
    assert time.perf_counter() - t < 10 and _reaped(pid)


@pytest.mark.slow
def test_overlapped_run_is_bit_identical_to_the_run_in_turn(tmp_path):
    # The whole assessment of the G-3 example (12 inputs, correlated, pore collapse, options)
    # with the sensitivity step in a forked child against the same run in turn; in a fresh
    # process, so that no compiled parallel code has run before the fork (fork_safe).
    code = f"""
import dataclasses, json, sys
sys.path.insert(0, {str(ROOT)!r})
sys.path.insert(0, {str(Path(__file__).parent)!r})
from risk import _overlap
import risk.assessment as asm
from risk.scenario import load_scenario
from test_overlap import _same
forked = []
real = _overlap.fork_call
_overlap.fork_call = lambda fn, what: forked.append(what) or real(fn, what=what)
sc = load_scenario({str(ROOT / "examples" / "ravenmoor_g3_depleting_gas.toml")!r})
a = asm.assess(sc, samples=9000, overlap=True)
job = bool(forked) and all(not v.flags.writeable for r in a.sensitivity.values()
                           for v in vars(r).values() if hasattr(v, "flags"))
b = asm.assess(sc, samples=9000, overlap=False)
same = all(_same(getattr(a, f.name), getattr(b, f.name)) for f in dataclasses.fields(a)
           if f.name not in ("scenario", "mechanisms", "compaction", "options"))
same = same and all(_same(a.mechanisms[k].by_direction, b.mechanisms[k].by_direction)
                    for k in a.mechanisms)
print(json.dumps({{"forked": job, "same": same, "n": len(a.sensitivity)}}))
"""
    env = {**os.environ, "OMP_NUM_THREADS": "1"}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         env=env, cwd=tmp_path, check=True)
    res = json.loads(out.stdout.strip().splitlines()[-1])
    assert res == {"forked": True, "same": True, "n": res["n"]} and res["n"] > 0


def test_run_forks_the_sensitivity_step_before_the_kernels_load(tmp_path, monkeypatch):
    # The command line loads the compiled kernels through run_scenario(prepare=...): after
    # the sensitivity step is forked (a child forked once numba's GNU OpenMP threads are set
    # up cannot use them), and the child is closed whatever happens next.
    import risk.api as api

    order: list[str] = []

    class Job:
        def close(self) -> None:
            order.append("closed")

    class Stop(Exception):
        pass

    def produce(*args: object) -> None:
        order.append("compute")
        raise Stop

    monkeypatch.setattr(asm, "start_sensitivity",
                        lambda scenario, **kw: order.append("fork") or Job())
    monkeypatch.setattr(api, "_produce", produce)
    with pytest.raises(Stop):
        api.run_scenario(ROOT / "examples" / "ravenmoor_r7_openhole.toml", out=tmp_path / "o",
                         samples=64, prepare=lambda: order.append("kernels"))
    assert order == ["fork", "kernels", "compute", "closed"]


def test_a_step_started_for_another_run_is_refused(write, forking, monkeypatch):
    monkeypatch.setattr(asm, "_head_sensitivity", lambda *args: time.sleep(60))
    sc = load_scenario(write(SMALL))
    job = asm.start_sensitivity(sc, samples=2048, overlap=True)
    assert job is not None
    pid = job._child.pid
    with pytest.raises(ValueError, match="another run"):
        asm.assess(sc, samples=4096, sensitivity=job)
    assert _reaped(pid)
