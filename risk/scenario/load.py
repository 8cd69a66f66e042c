"""Reading a scenario file."""

from __future__ import annotations

import hashlib
import tomllib
from pathlib import Path

from risk.errors import ScenarioError
from risk.scenario.model import MAX_FILE_BYTES, Scenario
from risk.scenario.parse import parse_scenario


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario file.

    Raises
    ------
    ScenarioError
        For a missing or unreadable file, a folder, a file that is not UTF-8 TOML (with line
        and column), and every problem :func:`parse_scenario` finds.
    """
    p = Path(path)
    name = str(path)
    if not p.exists():
        raise ScenarioError.single("scenario", name, "an existing scenario file (.toml)",
                                   found_text=f"no file at {name!r}")
    if p.is_dir():
        raise ScenarioError.single("scenario", name, "a scenario file, not a folder",
                                   found_text=f"the folder {name!r}")
    try:
        with p.open("rb") as f:  # at most one byte more than allowed, whatever the file is
            data = f.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise ScenarioError.single("scenario", name, "a readable file",
                                   found_text=f"{name!r} ({exc.strerror})") from None
    if len(data) > MAX_FILE_BYTES:
        size = p.stat().st_size if p.is_file() else 0
        raise ScenarioError.single(
            "scenario", name, f"a scenario file of at most {MAX_FILE_BYTES:,} bytes (1 MiB; a "
            "scenario is a few kB)", found_text=f"{name!r}, a file of "
            + (f"{size:,} bytes" if size > MAX_FILE_BYTES else
               f"more than {MAX_FILE_BYTES:,} bytes"))
    if not data.strip():
        raise ScenarioError.single("scenario", name, "a TOML scenario (see `risk new`)",
                                   found_text="an empty file")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ScenarioError.single("scenario", name, "a UTF-8 text file in TOML",
                                   found_text=f"binary or non-UTF-8 content (byte "
                                   f"{exc.start})") from None
    if text.startswith("\ufeff"):
        text = text[1:]  # a UTF-8 byte-order mark, as some editors write
    if "\x00" in text:
        raise ScenarioError.single("scenario", name, "a UTF-8 text file in TOML",
                                   found_text="binary content (NUL bytes)")
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError.single("scenario", name, "valid TOML",
                                   found_text=f"a syntax error: {exc}") from None
    except RecursionError:
        raise ScenarioError.single("scenario", name, "a TOML scenario of sensible depth",
                                   found_text="arrays or tables nested too deeply to read"
                                   ) from None
    sha = hashlib.sha256(data).hexdigest()
    return parse_scenario(doc, source_name=name, sha256=sha)
