"""The field file: shared defaults and, per well and interval, what differs.

A field file is TOML::

    title = "Ravenmoor field, Lower Tarn screening"   # optional
    cases_table = "ravenmoor_cases.csv"                # optional: one CSV row per case
    defaults = "ravenmoor_base.toml"    # a scenario file, or a [defaults] table written as one

    [[case]]
    well = "R-7"                        # required: the well's name
    interval = "Lower Tarn"             # optional
    scenario = "r7.toml"                # optional: this case's base instead of the defaults
    [case.overrides]                    # optional: what differs, with a scenario's tables and keys
    well.depth = 7850
    rock.ucs.median = 2400              # one key of an uncertain input's distribution
    stress.shmin_gradient = { dist = "normal", mean = 0.70, sd = 0.02 }  # a whole input

The CSV table has a header row: ``well`` (required), ``interval``, ``scenario`` (optional), and
one column per override named by its dotted key (``well.depth``, ``rock.ucs.median``). A cell
is read as a TOML value (``7850``, ``"text"``, ``[3000, 2500]``, ``{ dist = ... }``), else as
text; an empty cell overrides nothing.

Merging: the overrides' tables merge into the base key by key, down to the keys of an
uncertain input's table; a table that names a distribution (``dist``) replaces the whole value.
A case whose base is the defaults is titled ``"<well>, <interval>: <field title>"`` (the
defaults' title when the field has none) unless it sets a title. Cases run in the order of the
``[[case]]`` tables, then the table's rows.

Problems with the field file itself (its syntax, a missing well name, two
cases with the same name, an unreadable table) are :class:`~risk.errors.ScenarioError` s, all
gathered; problems of one case's scenario are that case's failure (reported in the results
table, the others run).
"""

from __future__ import annotations

import copy
import csv
import hashlib
import io
import json
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

from risk.errors import Problem, ScenarioError, visible

__all__ = ["Case", "Field", "load_field", "merge", "MAX_CASES"]

MAX_CASES: Final = 100_000
_MAX_BYTES: Final = 64 * 2**20  # field file and its table
_TOP_KEYS: Final = ("title", "cases_table", "defaults", "case", "units")
_CASE_KEYS: Final = ("well", "interval", "scenario", "overrides")
_NAME_CHARS: Final = 80


@dataclass(frozen=True)
class Case:
    """One well and interval of the field: its merged scenario document."""

    id: str                      # "<well>/<interval>" (or "<well>")
    well: str
    interval: str
    folder: str                  # its subfolder under cases/ (a safe file name)
    document: Mapping[str, Any]  # the scenario document (tables and keys of a scenario file)
    source_name: str             # what its results.json names as the scenario file
    sha256: str                  # of the base file's bytes (no overrides), else of the document
    origin: str                  # where the field defines it ("case[2]", "cases.csv row 3")
    files: tuple[str, ...] = ()  # files it reads (its base scenario file)


@dataclass(frozen=True)
class Field:
    """A parsed field file."""

    title: str
    units: str  # of the results table: the field's, else the first case's
    cases: tuple[Case, ...]
    source_name: str
    sha256: str
    files: tuple[str, ...]  # every file the field reads (itself, its table, base files)


def _read(path: Path, key: str, problems: list[Problem]) -> bytes | None:
    name = str(path)
    if not path.is_file():
        problems.append(Problem(key, name, "an existing file", found_text=f"no file at {name!r}"))
        return None
    try:
        with path.open("rb") as fh:
            data = fh.read(_MAX_BYTES + 1)
    except OSError as exc:
        problems.append(Problem(key, name, "a readable file",
                                found_text=f"{name!r} ({exc.strerror})"))
        return None
    if len(data) > _MAX_BYTES:
        problems.append(Problem(key, name, f"a file of at most {_MAX_BYTES:,} bytes",
                                found_text=f"{name!r}, a larger file"))
        return None
    return data


def _toml(data: bytes, key: str, name: str, problems: list[Problem]) -> dict[str, Any] | None:
    try:
        text = data.decode("utf-8").removeprefix("\ufeff")
        return tomllib.loads(text)
    except UnicodeDecodeError as exc:
        problems.append(Problem(key, name, "a UTF-8 text file in TOML",
                                found_text=f"non-UTF-8 content (byte {exc.start})"))
    except tomllib.TOMLDecodeError as exc:
        problems.append(Problem(key, name, "valid TOML", found_text=f"a syntax error: {exc}"))
    except RecursionError:
        problems.append(Problem(key, name, "TOML of sensible depth",
                                found_text="tables nested too deeply to read"))
    return None


def merge(base: Mapping[str, Any], overrides: Mapping[str, Any]) -> dict[str, Any]:
    """``base`` with ``overrides`` merged in (see the module docstring); neither is changed."""
    out = copy.deepcopy(dict(base))
    for key, value in overrides.items():
        old = out.get(key)
        if isinstance(value, Mapping) and isinstance(old, Mapping) and "dist" not in value:
            out[key] = merge(old, value)
        else:
            out[key] = copy.deepcopy(value)
    return out


def _cell(text: str) -> Any:
    """A CSV cell as a TOML value when it reads as one, else as text."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except (tomllib.TOMLDecodeError, RecursionError):
        return text.strip()


def _dotted(key: str, value: Any) -> dict[str, Any]:
    out: dict[str, Any] = {}
    node = out
    parts = key.split(".")
    for part in parts[:-1]:
        node = node.setdefault(part, {})
    node[parts[-1]] = value
    return out


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "-", text).strip("-.") or "case"


def _name(value: Any, key: str, problems: list[Problem], *, required: bool) -> str:
    if value is None and not required:
        return ""
    if (not isinstance(value, str) or not value.strip() or len(value) > _NAME_CHARS
            or visible(value) != value):
        problems.append(Problem(key, value, f"a name of 1 to {_NAME_CHARS} printable "
                                "characters", found_text=None if value is not None
                                else "nothing (the key is missing)"))
        return ""
    return value.strip()


def _table_rows(path: Path, key: str, problems: list[Problem]
                ) -> list[tuple[str, dict[str, Any]]]:
    """The CSV table's rows as (origin, case entry)."""
    data = _read(path, key, problems)
    if data is None:
        return []
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        problems.append(Problem(key, str(path), "a UTF-8 CSV file",
                                found_text=f"non-UTF-8 content (byte {exc.start})"))
        return []
    reader = csv.reader(io.StringIO(text))
    header = next(reader, None)
    if not header or "well" not in [h.strip() for h in header]:
        problems.append(Problem(key, str(path), "a CSV table whose header names a 'well' "
                                "column (then interval, scenario and dotted override keys)",
                                found_text=f"the header {header!r}"))
        return []
    names = [h.strip() for h in header]
    for col in names:
        if col not in _CASE_KEYS[:3] and (not col or "." not in col
                                          or any(not p for p in col.split("."))):
            problems.append(Problem(f"{path.name} column", col, "well, interval, scenario or "
                                    "a dotted scenario key such as rock.ucs or well.depth"))
    if len(set(names)) != len(names):
        problems.append(Problem(f"{path.name} header", names, "each column named once"))
    if problems:
        return []
    rows = []
    for i, cells in enumerate(reader, start=2):
        if not any(c.strip() for c in cells):
            continue
        if len(cells) != len(names):
            problems.append(Problem(f"{path.name} row {i}", cells,
                                    f"{len(names)} cells, as in the header"))
            continue
        entry: dict[str, Any] = {"overrides": {}}
        for col, cell in zip(names, cells, strict=True):
            if not cell.strip():
                continue
            if col in _CASE_KEYS[:3]:
                entry[col] = cell.strip()
            else:
                entry["overrides"] = merge(entry["overrides"], _dotted(col, _cell(cell)))
        rows.append((f"{path.name} row {i}", entry))
    return rows


def _doc_digest(doc: Mapping[str, Any]) -> str:
    text = json.dumps(doc, sort_keys=True, default=str, ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def load_field(source: str | Path | Mapping[str, Any]) -> Field:
    """Read and check a field file (or a dict with the same keys, for notebooks: relative
    paths then resolve against the current folder).

    Raises
    ------
    ScenarioError
        Every problem of the field file itself (see the module docstring), gathered.
    """
    problems: list[Problem] = []
    if isinstance(source, Mapping):
        doc: dict[str, Any] = dict(source)
        here, name = Path("."), "<dict>"
        digest = _doc_digest(doc)
        files: list[str] = []
    else:
        path = Path(source)
        here, name = path.parent, str(source)
        data = _read(path, "FIELD", problems)
        parsed = None if data is None else _toml(data, "FIELD", name, problems)
        if parsed is None:
            raise ScenarioError(problems, name)
        doc = parsed
        digest = hashlib.sha256(data or b"").hexdigest()
        files = [name]
    for key in doc:
        if key not in _TOP_KEYS:
            problems.append(Problem(key, doc[key], "one of the field file's keys: "
                                    + ", ".join(_TOP_KEYS)))
    title = doc.get("title", "")
    if not isinstance(title, str) or len(title) > 200 or visible(title) != title:
        problems.append(Problem("title", title, "a title of at most 200 printable characters"))
        title = ""
    defaults: dict[str, Any] | None = None
    d = doc.get("defaults")
    if isinstance(d, str):
        dpath = here / d
        data_d = _read(dpath, "defaults", problems)
        defaults = None if data_d is None else _toml(data_d, "defaults", str(dpath), problems)
        files.append(str(dpath))
    elif isinstance(d, Mapping):
        defaults = dict(d)
    elif d is not None:
        problems.append(Problem("defaults", d, "a scenario file name or a [defaults] table"))
    entries: list[tuple[str, Any]] = []
    raw_cases = doc.get("case", [])
    if not isinstance(raw_cases, list):
        problems.append(Problem("case", raw_cases, "[[case]] tables (one per well and "
                                "interval)"))
        raw_cases = []
    entries += [(f"case[{i}]", c) for i, c in enumerate(raw_cases, start=1)]
    table = doc.get("cases_table")
    if table is not None:
        if not isinstance(table, str) or not table:
            problems.append(Problem("cases_table", table, "the name of a CSV file"))
        else:
            entries += _table_rows(here / table, "cases_table", problems)
            files.append(str(here / table))
    units = doc.get("units", (defaults or {}).get("units"))
    if units is not None and units not in ("field", "si"):
        problems.append(Problem("units", units, '"field" or "si" (the results table\'s units)'))
        units = None
    cases = _cases(entries, defaults, title, here, problems)
    if not cases and not problems:
        problems.append(Problem("case", [], "at least one case ([[case]] or cases_table)"))
    if problems:
        raise ScenarioError(problems, name)
    for c in cases:
        files += [f for f in c.files if f not in files]
    first = cases[0].document.get("units")
    return Field(title=title or "Field",
                 units=units or (first if first in ("field", "si") else "field"),
                 cases=tuple(cases), source_name=name, sha256=digest, files=tuple(files))


def _cases(entries: list[tuple[str, Any]], defaults: Mapping[str, Any] | None, title: str,
           here: Path, problems: list[Problem]) -> list[Case]:
    if len(entries) > MAX_CASES:
        problems.append(Problem("case", f"{len(entries):,} cases",
                                f"at most {MAX_CASES:,} cases in one field file"))
        return []
    cases: list[Case] = []
    seen: dict[str, str] = {}
    base_cache: dict[str, tuple[dict[str, Any], str] | None] = {}
    for origin, entry in entries:
        if not isinstance(entry, Mapping):
            problems.append(Problem(origin, entry, "a table with well, interval, scenario, "
                                    "overrides"))
            continue
        for key in entry:
            if key not in _CASE_KEYS:
                problems.append(Problem(f"{origin}.{key}", entry[key], "one of "
                                        + ", ".join(_CASE_KEYS) + " (scenario keys go under "
                                        "overrides)"))
        well = _name(entry.get("well"), f"{origin}.well", problems, required=True)
        interval = _name(entry.get("interval"), f"{origin}.interval", problems,
                         required=False)
        over = entry.get("overrides", {})
        if not isinstance(over, Mapping):
            problems.append(Problem(f"{origin}.overrides", over, "a table of scenario keys"))
            continue
        scen = entry.get("scenario")
        base: dict[str, Any] | None
        sha = ""
        file_list: tuple[str, ...] = ()
        if scen is not None:
            if not isinstance(scen, str) or not scen:
                problems.append(Problem(f"{origin}.scenario", scen, "a scenario file name"))
                continue
            spath = str(here / scen)
            if spath not in base_cache:
                sub: list[Problem] = []
                data = _read(Path(spath), f"{origin}.scenario", sub)
                parsed = None if data is None else _toml(data, f"{origin}.scenario", spath, sub)
                base_cache[spath] = (None if parsed is None else
                                     (parsed, hashlib.sha256(data or b"").hexdigest()))
                problems += sub
            cached = base_cache[spath]
            if cached is None:
                continue
            base, sha = cached
            file_list = (spath,)
            source = spath
        elif defaults is None:
            problems.append(Problem(f"{origin}.scenario", None, "a scenario file for this case, "
                                    "or field-wide defaults (defaults = ...)",
                                    found_text="neither"))
            continue
        else:
            base = dict(defaults)
            if "title" not in over:
                label = f"{well}, {interval}" if interval else well
                base["title"] = f"{label}: {title or defaults.get('title') or 'field case'}"
            source = ""
        doc = merge(base, over)
        if over or scen is None:
            sha = _doc_digest(doc)
        cid = f"{well}/{interval}" if interval else well
        folder = _slug(well) + (f"__{_slug(interval)}" if interval else "")
        if folder.lower() in seen:
            problems.append(Problem(f"{origin}.well", cid, "a well and interval named once in "
                                    "the field", found_text=f"{cid!r}, also named by "
                                    f"{seen[folder.lower()]}"))
            continue
        seen[folder.lower()] = origin
        name = source if scen is not None and not over else f"{cid} ({origin})"
        cases.append(Case(id=cid, well=well, interval=interval, folder=folder, document=doc,
                          source_name=name, sha256=sha, origin=origin, files=file_list))
    return cases
