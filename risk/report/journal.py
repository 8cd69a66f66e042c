"""The all-or-nothing swap of an output folder's files: staging, the journal, recovery.

The rules are those of :mod:`risk.report.writer` (its docstring is the specification, rule 4):
new outputs are staged in ``.risk/staging-*``; a journal written atomically records the
decision; the swap then removes the listed files, renames the staged ones into place, replaces
the manifest and removes the journal, each step idempotent, so that the next process that opens
the folder (:func:`recover`) completes a decided swap and discards undecided staging. This module
also holds the small file primitives both share (names in ``.risk``, digests, atomic writes).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import re
import secrets
import shutil
import signal
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

from risk.errors import ScenarioError

__all__ = ["STATE_DIR", "MANIFEST", "JOURNAL", "dumps", "sha256_of", "recover"]

STATE_DIR = ".risk"            # the tool's own folder inside an output folder
MANIFEST = "manifest.json"     # inside STATE_DIR: {"tool": "risk", "files": {rel: sha256}}
JOURNAL = "journal.json"       # inside STATE_DIR while a swap is decided but not finished

# Test hook: ``RISK_TEST_KILL_AT=<step>`` kills this process (SIGKILL) at that step of a swap,
# so that the tests can show that every step is recoverable. Steps: "staged", "journal",
# "removed", "installed-1" (after the first file), "installed", "manifest".
_KILL_ENV = "RISK_TEST_KILL_AT"


def dumps(data: Any) -> str:
    """Deterministic JSON text (no NaN or infinity; insertion order kept)."""
    return json.dumps(data, indent=2, allow_nan=False, ensure_ascii=False) + "\n"


def sha256_of(content: bytes) -> str:
    return hashlib.sha256(content).hexdigest()


def _as_bytes(content: str | bytes) -> bytes:
    return content.encode("utf-8") if isinstance(content, str) else content


def _file_digest(path: Path) -> str | None:
    """Digest of a regular file; None for anything else (a link, a folder, nothing)."""
    try:
        if path.is_symlink() or not path.is_file():
            return None
        return sha256_of(path.read_bytes())
    except OSError:
        return None


def _refuse(where: tuple[str, str | Path], expected: str, found: str) -> ScenarioError:
    """The refusal of the folder named by option or argument ``key`` (``where = (key, path)``)."""
    key, path = where
    return ScenarioError.single(key, str(path), expected, found_text=found)


def _show(path: str | Path) -> str:
    """A path as text for a message (repr: quotes, and control characters made visible)."""
    return repr(str(path))


def _is_within(child: Path, parent: Path) -> bool:
    """``child`` is ``parent`` or lies below it (both resolved)."""
    return child == parent or parent in child.parents



def _safe_rel(rel: str) -> bool:
    """A relative path that stays inside the folder (no '..', not absolute, not in .risk)."""
    p = Path(rel)
    return (bool(rel) and not p.is_absolute() and ".." not in p.parts
            and p.parts[0] != STATE_DIR)


# Names the tool gives its own entries in .risk: staging folders and temporary files. Only
# entries of exactly these shapes are ever removed from there.
_STAGING_NAME = re.compile(r"staging-\d+-[0-9a-f]{8}")
_TMP_NAME = re.compile(r"\.(?:manifest|journal)\.json\.tmp-[0-9a-f]{8}")


def _clash(where: tuple[str, str | Path], clash: list[str]) -> ScenarioError:
    return _refuse(where, "a folder where risk's output names are free (move these files "
                   "away; --force never replaces files risk did not write)",
                   f"{_show(where[1])} holding {', '.join(_show(c) for c in clash[:5])}, "
                   "not written by risk")


# --------------------------------------------------------------------------------- swap ----

def _kill_point(step: str) -> None:
    if os.environ.get(_KILL_ENV) == step:
        os.kill(os.getpid(), signal.SIGKILL)


def _fsync_dir(path: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(path, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _write_atomic(target: Path, data: bytes) -> None:
    tmp = target.with_name(f".{target.name}.tmp-{secrets.token_hex(4)}")
    try:
        with open(tmp, "xb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def _discard_staging(folder: Path) -> None:
    """Staging folders no journal refers to (left by a process killed before its decision)."""
    state = folder / STATE_DIR
    if not state.is_dir():
        return
    journal = _read_journal(folder)
    live = journal.get("staging") if journal else None
    for p in state.iterdir():
        if _STAGING_NAME.fullmatch(p.name) and p.name != live and not p.is_symlink():
            shutil.rmtree(p, ignore_errors=True)
        elif _TMP_NAME.fullmatch(p.name):
            p.unlink(missing_ok=True)


def _read_journal(folder: Path) -> dict[str, Any] | None:
    try:
        data = json.loads((folder / STATE_DIR / JOURNAL).read_text(encoding="utf-8"))
    except FileNotFoundError:
        return None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        return None  # cannot happen with the atomic write; treated as no decision
    if not (isinstance(data, dict) and data.get("tool") == "risk"
            and isinstance(data.get("staging"), str) and _STAGING_NAME.fullmatch(data["staging"])
            and all(isinstance(r, str) and _safe_rel(r)
                    for key in ("install", "remove") for r in data.get(key) or [])
            and isinstance(data.get("manifest"), dict)):
        return None  # not a journal of this tool: never acted on
    return data


def recover(folder: str | Path) -> bool:
    """Finish a swap that a killed process decided but did not complete; discard staging
    folders of processes killed before deciding. Call with the folder's lock held.

    Returns True when an interrupted swap was completed.
    """
    folder = Path(folder)
    journal = _read_journal(folder)
    done = False
    if journal is not None:
        _apply(folder, journal)
        done = True
    _discard_staging(folder)
    return done


def _apply(folder: Path, journal: Mapping[str, Any]) -> None:
    """The decided swap, idempotent so that a process killed in it can be followed by another.

    Every step checks what is already done: a listed file that is gone was removed; a staged
    file that is gone was already renamed into place.
    """
    staging = folder / STATE_DIR / str(journal["staging"])
    seen = journal.get("remove_digests") or {}
    for rel in journal["remove"]:
        target = folder / rel
        # only the file as it was when the swap was decided (a file put there since is kept)
        if (target.is_symlink() or target.is_file()) and _file_digest(target) == seen.get(rel):
            target.unlink()
            _prune(folder, target.parent)
    _kill_point("removed")
    for i, rel in enumerate(journal["install"], start=1):
        src = staging / rel
        if src.exists():
            dest = folder / rel
            before = (journal.get("replaced") or {}).get(rel)
            if (dest.is_symlink() or dest.is_file()) and _file_digest(dest) not in (
                    before, _file_digest(src)):
                # a file appeared at an output name after the swap was decided: never replaced
                raise _clash(("--out", folder), [rel])
            dest.parent.mkdir(parents=True, exist_ok=True)
            if dest.is_dir() and not dest.is_symlink():
                # an empty folder of the old run in the way (nothing in it: checked before)
                dest.rmdir()
            os.replace(src, dest)
        if i == 1:
            _kill_point("installed-1")
    _kill_point("installed")
    _fsync_dir(folder)
    manifest = {"tool": "risk", "files": journal["manifest"]}
    _write_atomic(folder / STATE_DIR / MANIFEST, dumps(manifest).encode())
    _kill_point("manifest")
    (folder / STATE_DIR / JOURNAL).unlink(missing_ok=True)
    _fsync_dir(folder / STATE_DIR)
    shutil.rmtree(staging, ignore_errors=True)


def _prune(folder: Path, sub: Path) -> None:
    """Remove folders left empty by removing outputs (never ``folder`` itself)."""
    while sub != folder and _is_within(sub, folder):
        try:
            sub.rmdir()
        except OSError:
            return
        sub = sub.parent


@contextlib.contextmanager
def _signals_held() -> Iterator[None]:
    """SIGINT and SIGTERM wait until the swap is complete (it is a few renames)."""
    held = {signal.SIGINT, signal.SIGTERM}
    try:
        old = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    except (ValueError, OSError):  # not the main thread: nothing to hold
        yield
        return
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)
