"""All file output, and the rules that keep a user's files safe.

The tool writes into an output folder that it *owns*: one it created, or an empty one it was
given. Ownership is recorded in a manifest (``.risk/manifest.json`` inside the folder) that lists
every file the tool wrote, with its SHA-256 digest. The rules, in the spirit of ``git`` and
``rsync``:

1. **A file the tool did not write is never deleted or overwritten**, whatever the flags. A rerun
   replaces only the files of the manifest and removes only files the manifest lists; anything
   else in the folder stays untouched and is named in a warning. A new output whose name is taken
   by a file the tool did not write is refused.
2. **Refused outright** (exit 2 at the CLI), with or without ``--force``: the filesystem root,
   the user's home folder and its parents, the current working directory and its parents, any
   folder holding (at any depth) an input file the run reads, a symbolic link (dangling or not:
   the tool neither follows nor replaces it; name the real folder), a path that is a file, and a
   non-empty folder without a manifest.
3. ``force`` only means: replace outputs of an earlier run *even if they were edited since*
   (their digest no longer matches the manifest). Without it, edited outputs are refused.
4. **All or nothing.** New outputs are written to a staging folder inside ``.risk/``; a journal
   (written atomically) then records the decision, and the swap follows: listed files removed,
   new files renamed into place, manifest replaced, journal removed. A process killed before the
   journal exists changed nothing (its staging folder is discarded by the next process); one
   killed after it is completed by the next process that opens the folder (a run or
   ``risk memo``): either the old complete outputs or the new complete outputs, never neither.
   SIGINT and SIGTERM are held back during the swap itself (a few renames).
5. **One process at a time per folder**: an advisory ``fcntl`` lock on ``.risk/lock`` is held
   from the start of a run (or of ``risk memo``) to its end; a second process is refused at once
   with a message naming the process that holds the folder. Nobody deletes another's staging.

A folder written by version 0.1 (marked by ``.risk-output``) is adopted: the files that version
wrote are taken as its outputs; anything else in it is kept as foreign.

Outputs are created with the process's umask, like any other tool's files.

This module checks, locks and decides; the swap itself (staging, journal, recovery) and the file
primitives live in :mod:`risk.report.journal`.
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import json
import os
import pwd
import secrets
import shutil
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from risk.report.journal import (
    _STAGING_NAME,
    _TMP_NAME,
    JOURNAL,
    MANIFEST,
    STATE_DIR,
    _apply,
    _as_bytes,
    _clash,
    _discard_staging,
    _file_digest,
    _fsync_dir,
    _is_within,
    _kill_point,
    _read_journal,
    _refuse,
    _safe_rel,
    _show,
    _signals_held,
    _write_atomic,
    dumps,
    recover,
    sha256_of,
)

__all__ = ["STATE_DIR", "MANIFEST", "LEGACY_MARKER", "OutputFolder", "check_output_dir",
           "publish", "read_manifest", "recover", "write_json", "dumps", "replace_files",
           "sha256_of", "committed_folders"]

LOCK = "lock"                  # inside STATE_DIR: the advisory lock (holds the owner's pid)
LEGACY_MARKER = ".risk-output"  # version 0.1's marker of a folder it wrote whole
_LEGACY_NAMES = ("results.json", "run.json", "memo.html", "memo.pdf")

# Folders whose outputs were complete when this process was interrupted (the CLI's message).
committed_folders: list[Path] = []

# --------------------------------------------------------------------------- ownership ----

def _homes() -> list[Path]:
    homes = []
    env = os.environ.get("HOME")
    if env:
        homes.append(Path(env))
    with contextlib.suppress(KeyError, OSError):
        homes.append(Path(pwd.getpwuid(os.getuid()).pw_dir))
    return [h.resolve() for h in homes if str(h).strip() and str(h) != "/"] or []


def read_manifest(folder: Path) -> dict[str, str] | None:
    """The files (relative path -> sha256) the tool wrote into ``folder``, or None when the
    folder holds no readable manifest of this tool."""
    path = folder / STATE_DIR / MANIFEST
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        return None
    if not isinstance(data, dict) or data.get("tool") != "risk":
        return None
    files = data.get("files")
    if not isinstance(files, dict) or not all(
            isinstance(k, str) and isinstance(v, str) for k, v in files.items()):
        return None
    return {k: v for k, v in files.items() if _safe_rel(k)}


def _legacy_outputs(folder: Path) -> dict[str, str] | None:
    """Version 0.1 wrote a folder whole and marked it: its outputs are the files of the names it
    wrote (the current digests are taken as written). None when the folder is not such."""
    marker = folder / LEGACY_MARKER
    if marker.is_symlink() or not marker.is_file():
        return None
    names = [LEGACY_MARKER, *_LEGACY_NAMES]
    figures = folder / "figures"
    if figures.is_dir() and not figures.is_symlink():
        names += [f"figures/{p.name}" for p in sorted(figures.glob("*.png"))]
    files: dict[str, str] = {}
    for rel in names:
        digest = _file_digest(folder / rel)
        if digest is not None:
            files[rel] = digest
    return files


def _listing(folder: Path) -> list[str]:
    """Every file (and link, and empty folder) below ``folder`` outside ``.risk``, relative."""
    found: list[str] = []
    for root, dirs, files in os.walk(folder):
        rel_root = Path(root).relative_to(folder)
        if rel_root == Path("."):
            dirs[:] = [d for d in dirs if d != STATE_DIR]
        for name in files:
            found.append(str(rel_root / name) if rel_root != Path(".") else name)
        for name in list(dirs):
            p = Path(root) / name
            if p.is_symlink():
                found.append(str(rel_root / name) if rel_root != Path(".") else name)
                dirs.remove(name)
    return sorted(found)


@dataclass
class _State:
    """What is in an output folder now."""

    owned: dict[str, str]            # files of the manifest (or adopted), with their digests
    foreign: list[str]               # files the tool did not write
    edited: list[str] = field(default_factory=list)  # owned files changed since written


def _inspect(folder: Path) -> _State | None:
    """None for a folder that neither holds a manifest nor is empty nor is a 0.1 folder."""
    if not folder.exists():
        return _State({}, [])
    owned = read_manifest(folder)
    if owned is None:
        owned = _legacy_outputs(folder)
    present = _listing(folder)
    if owned is None:
        if present or ((folder / STATE_DIR).exists() and not _only_lock(folder)):
            return None
        return _State({}, [])
    foreign = [rel for rel in present if rel not in owned]
    edited = [rel for rel, digest in owned.items()
              if (folder / rel).exists() or (folder / rel).is_symlink()
              if _file_digest(folder / rel) != digest]
    return _State(owned, foreign, edited)


def _only_lock(folder: Path) -> bool:
    """The tool's state folder holds nothing but what a process killed before its first swap
    leaves (its lock, staging folders, temporary files)."""
    state = folder / STATE_DIR
    return state.is_dir() and not state.is_symlink() and all(
        p.name == LOCK or _STAGING_NAME.fullmatch(p.name) or _TMP_NAME.fullmatch(p.name)
        for p in state.iterdir())


def check_output_dir(path: str | Path, *, force: bool = False,
                     inputs: Iterable[str | Path] = (), key: str = "--out",
                     protect: bool = True) -> Path:
    """Refuse, before any work is done, an output folder that cannot or must not be written.

    Parameters
    ----------
    path
        The output folder.
    force
        Accept outputs of an earlier run that were edited since (they will be replaced).
    inputs
        Files the run reads: a folder holding any of them is refused.
    key
        The option or argument that named the folder (for messages).
    protect
        Refuse the root, home, the current folder and input folders (False for ``risk memo``,
        which only replaces memo files in a folder the tool already owns).

    Returns
    -------
    Path
        The folder as an absolute path (symbolic links in its parents are kept as given).

    Raises
    ------
    ScenarioError
        (key ``key``) for every refusal listed in the module docstring.
    """
    where = (key, path)
    absolute = Path(os.path.abspath(path))
    if absolute.is_symlink():
        target = os.readlink(absolute)
        if not absolute.exists():
            raise _refuse(where, "a folder path (not a symbolic link)",
                          f"a dangling symbolic link {_show(path)} -> {_show(target)}")
        raise _refuse(where, "a real folder, not a symbolic link (give the folder it points "
                      "to)", f"the symbolic link {_show(path)} -> {_show(target)}")
    if protect:
        _check_protected(where, absolute.resolve(), inputs)
    if absolute.exists() and not absolute.is_dir():
        raise _refuse(where, "a folder for the outputs", f"the file {_show(path)}")
    anc = absolute
    while not anc.exists():
        anc = anc.parent
    if not anc.is_dir() or not os.access(anc, os.W_OK | os.X_OK):
        if anc == absolute:
            raise _refuse(where, "a writable folder", f"{_show(path)} (not writable)")
        raise _refuse(where, "a folder that can be created and written",
                      f"{_show(path)} ({_show(anc)} is not writable)")
    if _read_journal(absolute) is None:  # else: checked once the interrupted swap is finished
        _check_state(where, absolute, force=force)
    return absolute


def _check_protected(where: tuple[str, str | Path], resolved: Path,
                     inputs: Iterable[str | Path]) -> None:
    """Folders never used for outputs: the root, home and its parents, the current folder and
    its parents, any folder holding an input file."""
    path = where[1]
    own = "a folder of its own for the outputs (for example reports/run)"
    if resolved.parent == resolved:
        raise _refuse(where, own, f"the filesystem root {_show(path)}")
    for home in _homes():
        if _is_within(home, resolved):
            raise _refuse(where, own, f"{_show(path)}, " + (
                "the home folder" if home == resolved
                else f"a parent of the home folder {_show(home)}"))
    cwd = Path.cwd().resolve()
    if _is_within(cwd, resolved):
        raise _refuse(where, own, f"{_show(path)}, the current folder"
                      + ("" if cwd == resolved else " or one of its parents"))
    for item in inputs:
        if _is_within(Path(item).resolve().parent, resolved):
            raise _refuse(where, own + ", apart from the inputs",
                          f"{_show(path)}, which holds the input file {_show(item)}")


def _check_state(where: tuple[str, str | Path], folder: Path, *, force: bool) -> _State:
    """The folder's content allows a new swap: refused otherwise (see the module docstring)."""
    path = where[1]
    state = _inspect(folder)
    if state is None:
        present = _listing(folder)
        shown = ", ".join(_show(p) for p in present[:3]) + (
            f" and {len(present) - 3} more" if len(present) > 3 else "")
        raise _refuse(where, "a new or empty folder, or one written by risk (--force never "
                      "replaces files risk did not write)",
                      f"the folder {_show(path)} holding files that risk did not write "
                      f"({shown or 'an unknown .risk folder'})")
    clash = [rel for rel in state.foreign if _is_output_name(rel)]
    clash += [rel for rel in state.edited
              if (folder / rel).is_dir() and not (folder / rel).is_symlink()]
    if clash:
        raise _clash(where, clash)
    if state.edited and not force:
        raise _refuse(where, "an output folder whose outputs are as risk wrote them, or "
                      "--force to replace the edited outputs",
                      f"{_show(path)} whose outputs changed since risk wrote them: "
                      + ", ".join(_show(e) for e in state.edited[:5]))
    return state


def _is_output_name(rel: str) -> bool:
    """Fixed names every run writes, refused early when taken by a foreign file (figure names
    depend on the run: a clash there is refused when the outputs are known)."""
    return rel in _LEGACY_NAMES


# ------------------------------------------------------------------------------ locking ----

class OutputFolder:
    """An output folder held by this process: created if needed, locked, recovered.

    Use as a context manager around the whole run (from the check of the folder to the last file
    written). On an exception, a folder this object created and that received no outputs is
    removed again; an existing folder is left exactly as it was.
    """

    def __init__(self, path: str | Path, *, force: bool = False,
                 inputs: Iterable[str | Path] = (), create: bool = True,
                 key: str = "--out") -> None:
        self.given = path
        self.where = (key, path)
        self.force = force
        self.inputs = tuple(inputs)
        self.create = create
        self.path = Path(os.path.abspath(path))
        self._fd: int | None = None
        self._created: list[Path] = []
        self.kept_foreign: list[str] = []
        self.published = False

    def __enter__(self) -> OutputFolder:
        self.path = check_output_dir(self.given, force=self.force, inputs=self.inputs,
                                     key=self.where[0], protect=self.create)
        if not self.path.exists():
            if not self.create:
                raise _refuse(self.where, "an output folder of `risk run`",
                              f"no folder {_show(self.given)}")
            missing = [self.path, *[p for p in self.path.parents if not p.exists()]]
            for p in reversed(missing):
                try:
                    p.mkdir()
                except FileExistsError:
                    continue
                except OSError as exc:
                    self._undo()
                    raise _refuse(self.where, "a folder that can be created and written",
                                  f"{_show(self.given)} ({exc.strerror})") from None
                self._created.append(p)
        try:
            self._lock()
            recover(self.path)
            _check_state(self.where, self.path, force=self.force)  # again, under the lock
        except BaseException:
            self._release()
            self._undo()
            raise
        return self

    def _lock(self) -> None:
        state = self.path / STATE_DIR
        if state.is_symlink():
            raise _refuse(self.where, "an output folder whose .risk is risk's own folder",
                          f"{_show(state)}, a symbolic link")
        try:
            state.mkdir()
            self._created.append(state)
        except FileExistsError:
            pass  # made before, or by a process racing this one: the lock decides
        for _ in range(100):  # a lock file unlinked by a process that gave up: take the new one
            try:
                fd = os.open(state / LOCK, os.O_RDWR | os.O_CREAT | os.O_NOFOLLOW, 0o666)
            except OSError as exc:
                raise _refuse(self.where, "an output folder whose lock file risk can open",
                              f"{_show(state / LOCK)} ({exc.strerror})") from None
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError as exc:
                if exc.errno not in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                    os.close(fd)
                    raise
                holder = os.pread(fd, 64, 0).decode("ascii", "replace").strip() or "unknown"
                os.close(fd)
                raise _refuse(self.where, "a folder no other risk process is writing (wait "
                              "for it to finish, or choose another --out)",
                              f"{_show(self.given)}, in use by risk process {holder}") from None
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(state / LOCK,
                                                              follow_symlinks=False))
            except FileNotFoundError:
                same = False
            if same:
                os.ftruncate(fd, 0)
                os.pwrite(fd, f"{os.getpid()}\n".encode(), 0)
                self._fd = fd
                return
            os.close(fd)
        raise _refuse(self.where, "a folder whose lock can be taken",
                      f"{_show(self.given)} (its lock file keeps changing)")

    def _release(self) -> None:
        if self._fd is not None:
            with contextlib.suppress(OSError):
                fcntl.flock(self._fd, fcntl.LOCK_UN)
            os.close(self._fd)
            self._fd = None

    def _undo(self) -> None:
        """Remove what this object created (its lock, the folders it made) unless outputs were
        published; an existing folder keeps everything it held."""
        if self.published:
            return
        state = self.path / STATE_DIR
        if state in self._created or self.path in self._created:
            with contextlib.suppress(OSError):
                (state / LOCK).unlink(missing_ok=True)
            for stale in state.glob("staging-*"):
                shutil.rmtree(stale, ignore_errors=True)
            with contextlib.suppress(OSError):
                state.rmdir()
        for p in sorted(self._created, key=lambda q: len(q.parts), reverse=True):
            if p != state:
                with contextlib.suppress(OSError):
                    p.rmdir()  # only an empty folder goes

    def __exit__(self, kind: Any, exc: Any, tb: Any) -> None:
        if kind is not None:
            with contextlib.suppress(OSError):
                _discard_staging(self.path)
        self._release()
        if kind is not None:
            self._undo()

    def digest_of(self, rel: str) -> str | None:
        """The digest the manifest records for an output (None when it is not listed)."""
        return (read_manifest(self.path) or {}).get(rel)

    def publish(self, files: Mapping[str, str | bytes], *, keep: Iterable[str] = ()
                ) -> list[str]:
        """Write ``files`` (relative path -> content) as the new outputs.

        Outputs of the manifest that are neither in ``files`` nor in ``keep`` are removed.
        Returns the files of the folder the tool did not write (kept, for a warning).
        """
        if self._fd is None:
            raise RuntimeError("publish outside the `with OutputFolder(...)` block")
        self.kept_foreign = _swap(self.where, self.path, files, keep=tuple(keep),
                                  force=self.force)
        self.published = True
        return self.kept_foreign


def _swap(where: tuple[str, str | Path], folder: Path, files: Mapping[str, str | bytes], *,
          keep: tuple[str, ...], force: bool) -> list[str]:
    for rel in files:
        if not _safe_rel(rel):
            raise ValueError(f"output name {rel!r} leaves the output folder")
    state = _check_state(where, folder, force=force)
    clash = [f for f in state.foreign
             if any(f == rel or f.startswith(rel + "/") or rel.startswith(f + "/")
                    for rel in files)]
    if clash:
        raise _clash(where, clash)
    stage_name = f"staging-{os.getpid()}-{secrets.token_hex(4)}"
    staging = folder / STATE_DIR / stage_name
    staging.mkdir()
    manifest: dict[str, str] = {}
    try:
        for rel, content in files.items():
            data = _as_bytes(content)
            target = staging / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            with open(target, "xb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            manifest[rel] = sha256_of(data)
        for rel in keep:  # listed as before (an edited one stays "edited")
            if rel in state.owned and rel not in files:
                manifest[rel] = state.owned[rel]
        _fsync_dir(staging)
        _kill_point("staged")
        journal = {"tool": "risk", "staging": stage_name, "install": sorted(files),
                   "remove": sorted(rel for rel in state.owned if rel not in manifest),
                   "remove_digests": {rel: _file_digest(folder / rel) for rel in state.owned
                                      if rel not in manifest},
                   "replaced": {rel: _file_digest(folder / rel) for rel in sorted(files)
                                if rel in state.owned},
                   "manifest": dict(sorted(manifest.items()))}
        with _signals_held():
            _write_atomic(folder / STATE_DIR / JOURNAL, dumps(journal).encode())
            _kill_point("journal")
            _apply(folder, journal)
            committed_folders.append(folder)
    except BaseException:
        if not (folder / STATE_DIR / JOURNAL).exists():
            shutil.rmtree(staging, ignore_errors=True)
        raise
    return state.foreign


def publish(out_dir: str | Path, files: Mapping[str, str | bytes], *, force: bool = False,
            keep: Iterable[str] = (), inputs: Iterable[str | Path] = ()) -> list[str]:
    """Check, lock, and write ``files`` as the outputs of ``out_dir`` in one call.

    Returns the files in the folder that the tool did not write (kept untouched).
    """
    with OutputFolder(out_dir, force=force, inputs=inputs) as folder:
        return folder.publish(files, keep=keep)


# ---------------------------------------------------------------------- single files ----

def replace_files(out_dir: str | Path, files: Mapping[str, str | bytes]) -> None:
    """Write single files, each atomically (a temporary file in the same folder, renamed)."""
    out = Path(out_dir)
    for rel, content in files.items():
        target = out / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        _write_atomic(target, _as_bytes(content))


def write_json(data: Any, path: str | Path) -> Path:
    """Write one JSON file atomically (temporary file in the same folder, then rename)."""
    target = Path(path)
    replace_files(target.parent, {target.name: dumps(data)})
    return target
