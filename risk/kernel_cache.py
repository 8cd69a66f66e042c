"""Where numba keeps the compiled kernels, so that a read-only install compiles them only once.

numba caches a compiled function beside its module (``__pycache__``) when that folder is
writable, and otherwise in the user's cache folder. When neither is writable (a read-only
install run by an account whose home is read-only or absent, as on some servers and
containers) it silently compiles again in every process: about 15 s each run. This module
chooses the folder explicitly, before numba is imported, in this order:

1. ``NUMBA_CACHE_DIR`` when the user set it (their choice stands);
2. beside the module, when the package folder is writable (numba's default);
3. ``$XDG_CACHE_HOME/risk/numba`` or ``~/.cache/risk/numba`` (the XDG base-directory
   convention), when it can be created and written;
4. ``<temporary folder>/risk-<uid>/numba`` as the last resort (kept until the machine cleans
   its temporary folder).

For 3 and 4 it sets ``NUMBA_CACHE_DIR``; the command line says once, when that folder is first
made, where the compiled kernels went.
"""

from __future__ import annotations

import os
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

__all__ = ["CacheChoice", "choose", "configure", "choice", "warm_up", "COMPILING"]

#: What the command line says when loading the kernels takes long: they are being compiled.
COMPILING = ("compiling the yield-onset kernels (once per machine and version, about 2-3 min; "
             "`risk warm-up` does it ahead of a run)...")
#: The compiled modules, in the order they are loaded.
KERNEL_MODULES = ("risk.mechanics._mc_kernel", "risk.mechanics._onset_kernel",
                  "risk.mechanics._rotation_kernel", "risk.mechanics._compaction_kernel",
                  "risk.mechanics._arc_kernel", "risk.mechanics._collapse_kernel",
                  "risk.mechanics._mogi_kernel", "risk.mechanics._frame_kernel")

_MECHANICS = Path(__file__).resolve().parent / "mechanics"


@dataclass(frozen=True)
class CacheChoice:
    """The folder chosen: ``path`` None means numba's default (beside the module)."""

    path: Path | None
    reason: str          # "user", "in-tree", "user-cache" or "temporary"
    created: bool        # the folder was made by this choice (the first run on this machine)


def _writable(folder: Path) -> bool:
    """A folder where a file can really be created (permission bits, read-only mounts)."""
    if not os.access(folder, os.W_OK | os.X_OK):
        return False
    try:
        tempfile.TemporaryFile(dir=folder).close()
    except OSError:
        return False
    return True


def _make(folder: Path) -> tuple[bool, bool]:
    """(usable, created) for a cache folder made with owner-only permissions if missing."""
    existed = folder.is_dir()
    try:
        folder.mkdir(parents=True, exist_ok=True, mode=0o700)
    except OSError:
        return False, False
    return _writable(folder), not existed


def choose(*, module_dir: Path = _MECHANICS, environ: dict[str, str] | None = None
           ) -> CacheChoice:
    """The cache folder for the kernels of ``module_dir`` (see the module docstring)."""
    env = os.environ if environ is None else environ
    if env.get("NUMBA_CACHE_DIR"):
        return CacheChoice(Path(env["NUMBA_CACHE_DIR"]), "user", False)
    pycache = module_dir / "__pycache__"
    if (pycache.is_dir() and _writable(pycache)) or (
            not pycache.exists() and _writable(module_dir)):
        return CacheChoice(None, "in-tree", False)
    xdg = env.get("XDG_CACHE_HOME", "")
    home = env.get("HOME", "")
    bases = [Path(xdg)] if xdg and Path(xdg).is_absolute() else []
    if home and Path(home).is_absolute():
        bases.append(Path(home) / ".cache")
    for base in bases:
        usable, created = _make(base / "risk" / "numba")
        if usable:
            return CacheChoice(base / "risk" / "numba", "user-cache", created)
    uid = os.getuid() if hasattr(os, "getuid") else 0
    last = Path(tempfile.gettempdir()) / f"risk-{uid}" / "numba"
    usable, created = _make(last)
    return CacheChoice(last if usable else None, "temporary", created)


choice: CacheChoice | None = None


def configure() -> CacheChoice:
    """Choose once per process and tell numba (before it compiles anything)."""
    global choice
    if choice is None:
        choice = choose()
        if choice.path is not None and choice.reason != "user":
            os.environ["NUMBA_CACHE_DIR"] = str(choice.path)
            numba = sys.modules.get("numba")
            if numba is not None:  # imported already: its config was read at import
                numba.config.CACHE_DIR = str(choice.path)
    return choice


def first_use_note() -> str | None:
    """The sentence the command line prints the first time a fallback folder is made."""
    c = configure()
    if c.created and c.path is not None and c.reason in ("user-cache", "temporary"):
        return (f"the install folder is read-only: compiled kernels are cached in "
                f"{str(c.path)!r} (compiled once, about 15 s)")
    return None


def _load(name: str) -> None:
    import importlib

    importlib.import_module(name)


def warm_up(*, notify: Callable[[str], None] | None = None, after: float = 1.5) -> float:
    """Load the compiled kernels, compiling them first where numba has no valid cache.

    Their modules compile at import (fixed signatures), so importing them is the whole work:
    from the cache it takes about a second; compiling takes 2-3 minutes once per machine and
    version. ``notify`` is called once with :data:`COMPILING` if it is still loading after
    ``after`` seconds (from a timer thread, so the message appears while the compiler works and
    never when the cache is warm). Returns the time taken [s].
    """
    configure()
    start = time.perf_counter()
    timer = None
    if notify is not None:
        timer = threading.Timer(after, notify, args=(COMPILING,))
        timer.daemon = True
        timer.start()
    try:
        for name in KERNEL_MODULES:
            _load(name)
    finally:
        if timer is not None:
            timer.cancel()
    return time.perf_counter() - start
