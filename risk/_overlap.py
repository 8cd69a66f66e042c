"""A step of the run computed in a forked child process while the caller goes on
(:func:`fork_call`): the run's sensitivity step needs only the leading samples, so it can run
on an idle core while the caller evaluates the rest (:func:`risk.assessment.assess`).

The child is a fork of the caller: it computes from the caller's memory as it was (no
arguments are pickled), sends its result back through a pipe, and exits. An exception in the
child is raised again in the caller (with the child's traceback as a note); a child that
ends without a word (killed) leaves the caller to compute the step itself. Ctrl-C (SIGINT)
and SIGTERM reach the caller, which kills and reaps the child on its way out
(:meth:`Forked.close`); the child ignores SIGINT so that the terminal shows no second
traceback. Standard library only.
"""

from __future__ import annotations

import multiprocessing
import pickle
import signal
import sys
import traceback
from collections.abc import Callable
from multiprocessing.connection import Connection
from typing import Any, Final

#: what :meth:`Forked.result` returns when the child ended without a result or an error
LOST: Final[Any] = object()


def fork_safe() -> bool:
    """Whether this process may fork a child that computes: fork is available, and numba's
    parallel threads, if started, are not GNU OpenMP's (whose runtime cannot be used in a
    child forked after it started; numba's workqueue and TBB layers can)."""
    if "fork" not in multiprocessing.get_all_start_methods():  # pragma: no cover - not POSIX
        return False
    parallel = sys.modules.get("numba.np.ufunc.parallel")
    if parallel is None or not getattr(parallel, "_is_initialized", False):
        return True
    try:
        return str(parallel.threading_layer()) != "omp"
    except ValueError:  # pragma: no cover - initialised but no layer recorded
        return False


def _child(conn: Connection, fn: Callable[[], Any]) -> None:
    """Run ``fn`` and send ("ok", result) or ("error", pickled exception or None, traceback)."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    try:
        message: tuple[Any, ...] = ("ok", fn())
    except BaseException as exc:  # noqa: BLE001 - reported to the caller, which raises it
        text = traceback.format_exc()
        raw: bytes | None
        try:
            raw = pickle.dumps(exc)
            pickle.loads(raw)  # it must come back as it went
        except Exception:  # noqa: BLE001 - an exception that does not pickle: text only
            raw = None
        message = ("error", raw, text)
    try:
        conn.send(message)
    except (BrokenPipeError, OSError):  # the caller is gone
        pass
    finally:
        conn.close()


class Forked:
    """A child process computing one value: :meth:`result`, then (always) :meth:`close`."""

    def __init__(self, child: Any, receive: Connection, what: str) -> None:
        self._child = child
        self._receive = receive
        self._what = what
        self._closed = False
        #: what the caller started it for (checked by the caller when it takes the result)
        self.key: Any = None

    def result(self) -> Any:
        """The child's value (waiting for it), or :data:`LOST` where the child ended without
        one; the child's exception is raised here."""
        try:
            message = self._receive.recv()
        except (EOFError, OSError):  # it ended without a word
            self.close(kill=False)
            return LOST
        except BaseException:  # Ctrl-C while waiting: stop the child too
            self.close()
            raise
        self.close(kill=False)
        if message[0] == "ok":
            return message[1]
        _, raw, text = message
        if raw is None:
            raise RuntimeError(f"{self._what} failed in its child process:\n{text}")
        exc = pickle.loads(raw)
        exc.add_note(f"(raised in the child process computing {self._what}:\n{text})")
        raise exc

    def close(self, *, kill: bool = True) -> None:
        """Reap the child (no zombie is left), killing it first where it may still be
        computing (``kill``: the caller stops early); a second call does nothing."""
        if self._closed:
            return
        self._closed = True
        self._receive.close()
        if kill and self._child.is_alive():
            self._child.kill()
        self._child.join()


def fork_call(fn: Callable[[], Any], *, what: str) -> Forked | None:
    """Start computing ``fn()`` in a forked child and return at once; None where this
    process may not fork (:func:`fork_safe`) or the child could not start. ``what`` names
    the step in error messages."""
    if not fork_safe():
        return None
    ctx = multiprocessing.get_context("fork")
    receive, send = ctx.Pipe(duplex=False)
    child = ctx.Process(target=_child, args=(send, fn), daemon=True, name="risk-overlap")
    try:
        child.start()
    except (AssertionError, OSError):  # a daemonic process (no children allowed), no memory
        receive.close()
        send.close()
        return None
    send.close()
    return Forked(child, receive, what)
