"""Whether a second core is idle: the test both the run (sensitivity overlapped with the
evaluation, :mod:`risk._overlap`) and the report (figures drawn in forked processes,
:mod:`risk.report.figures.render`) use before they start a second process.

Standard library only, so that any layer may import it.
"""

from __future__ import annotations

import os
import time


def _idle_cores(window: float = 0.1) -> float | None:
    """Cores left idle [-] over ``window`` [s] while this process sleeps, from the kernel's
    CPU time counters (Linux ``/proc/stat``, first line: user, nice, system, idle, iowait,
    irq, softirq, steal in clock ticks, summed over the CPUs); None where unreadable."""
    def counters() -> tuple[int, int]:
        with open("/proc/stat", "rb") as f:
            ticks = [int(v) for v in f.readline().split()[1:9]]
        return ticks[3] + ticks[4], sum(ticks)

    try:
        idle0, total0 = counters()
        time.sleep(window)
        idle1, total1 = counters()
    except (OSError, ValueError, IndexError):
        return None
    if total1 <= total0:
        return None
    return (idle1 - idle0) / (total1 - total0) * (os.cpu_count() or 1)


def second_core_idle() -> bool:
    """True when this process may use two cores and about two are idle while it waits (so
    that it and a second process each get one).

    The same test as the figures' (:func:`risk.report.figures.render._workers`): the
    one-minute load average only rules a second process out (load >= cores: every core
    busy); where it leaves room, the idle cores are measured over 0.1 s
    (:func:`_idle_cores`, at least 1.5 of them)."""
    try:
        cores = len(os.sched_getaffinity(0))
        load = os.getloadavg()[0]
    except (AttributeError, OSError):  # pragma: no cover - not on Linux
        return False
    if cores < 2 or load >= cores:
        return False
    idle = _idle_cores()
    if idle is None:  # pragma: no cover - no /proc/stat: the load average alone
        return load < cores - 1
    return idle >= 1.5
