"""All file output of a run. Files are written whole or not at all (temporary file, then an
atomic rename), so an interrupted run never leaves a half-written result."""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any

from risk.errors import ScenarioError

__all__ = ["prepare_output_dir", "write_json", "dumps"]


def dumps(data: Any) -> str:
    """Deterministic JSON text (no NaN or infinity; insertion order kept)."""
    return json.dumps(data, indent=2, allow_nan=False, ensure_ascii=False) + "\n"


def prepare_output_dir(path: str | Path) -> Path:
    """Create the output folder if needed; refuse a file or an unwritable place."""
    p = Path(path)
    if p.exists() and not p.is_dir():
        raise ScenarioError.single("--out", str(path), "a folder for the outputs",
                                   found_text=f"the file {str(path)!r}")
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ScenarioError.single("--out", str(path), "a folder that can be created",
                                   found_text=f"{str(path)!r} ({exc.strerror})") from None
    if not os.access(p, os.W_OK | os.X_OK):
        raise ScenarioError.single("--out", str(path), "a writable folder",
                                   found_text=f"{str(path)!r} (not writable)")
    return p


def write_json(data: Any, path: str | Path) -> Path:
    """Write JSON atomically (temporary file in the same folder, then rename)."""
    target = Path(path)
    text = dumps(data)
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".json", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target
