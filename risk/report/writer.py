"""All file output. A run's outputs appear whole or not at all.

:func:`publish` writes every file of a run into a temporary folder beside the target and then
swaps it into place with renames, so a run killed at any moment leaves either the previous
complete outputs or none, never a half-written memo. A folder is only overwritten if the tool
wrote it (it holds the marker file :data:`MARKER`), unless ``force`` is given.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from risk.errors import ScenarioError

__all__ = ["MARKER", "check_output_dir", "publish", "write_json", "dumps", "replace_files"]

MARKER = ".risk-output"


def dumps(data: Any) -> str:
    """Deterministic JSON text (no NaN or infinity; insertion order kept)."""
    return json.dumps(data, indent=2, allow_nan=False, ensure_ascii=False) + "\n"


def check_output_dir(path: str | Path, *, force: bool = False) -> Path:
    """Refuse, before any work is done, an output path that cannot or must not be written.

    Raises
    ------
    ScenarioError
        (key ``--out``) for a file, an unwritable place, or a non-empty folder the tool did not
        write (unless ``force``).
    """
    p = Path(path)
    if p.exists() and not p.is_dir():
        raise ScenarioError.single("--out", str(path), "a folder for the outputs",
                                   found_text=f"the file {str(path)!r}")
    if p.is_dir() and any(p.iterdir()) and not (p / MARKER).exists() and not force:
        raise ScenarioError.single(
            "--out", str(path),
            "an empty folder, a folder written by risk, or --force to replace it",
            found_text=f"the non-empty folder {str(path)!r} that risk did not write")
    parent = p.parent
    anc = parent
    while not anc.exists():
        anc = anc.parent
    if not anc.is_dir() or not os.access(anc, os.W_OK | os.X_OK):
        raise ScenarioError.single("--out", str(path), "a folder that can be created and written",
                                   found_text=f"{str(path)!r} ({str(anc)!r} is not writable)")
    if p.is_dir() and not os.access(p, os.W_OK | os.X_OK):
        raise ScenarioError.single("--out", str(path), "a writable folder",
                                   found_text=f"{str(path)!r} (not writable)")
    return p


def _as_bytes(content: str | bytes) -> bytes:
    return content.encode("utf-8") if isinstance(content, str) else content


def publish(out_dir: str | Path, files: Mapping[str, str | bytes], *, force: bool = False
            ) -> Path:
    """Write ``files`` (relative path -> content) as the complete content of ``out_dir``.

    The previous content of ``out_dir`` (if the tool wrote it) is replaced as a whole.
    """
    out = check_output_dir(out_dir, force=force)
    out.parent.mkdir(parents=True, exist_ok=True)
    for stale in out.parent.glob(f".{out.name}.tmp-*"):
        shutil.rmtree(stale, ignore_errors=True)  # left by a killed run
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.tmp-", dir=out.parent))
    try:
        for rel, content in files.items():
            target = tmp / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(_as_bytes(content))
        (tmp / MARKER).write_text("written by risk; safe to replace with a new run\n")
        if out.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
            old.rmdir()
            os.replace(out, old)
            os.replace(tmp, out)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out


def replace_files(out_dir: str | Path, files: Mapping[str, str | bytes]) -> None:
    """Replace single files inside an existing output folder, each atomically."""
    out = Path(out_dir)
    for rel, content in files.items():
        target = out / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".tmp-", dir=target.parent)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(_as_bytes(content))
            os.replace(tmp, target)
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise


def write_json(data: Any, path: str | Path) -> Path:
    """Write one JSON file atomically (temporary file in the same folder, then rename)."""
    target = Path(path)
    replace_files(target.parent, {target.name: dumps(data)})
    return target
