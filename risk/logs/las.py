"""Reading LAS 2.0 well logs with lasio, into internal units, refusing what cannot be trusted.

The file is parsed by ``lasio`` (never by hand). What the tool then refuses, each with one
message naming the section or curve, the value found and what is expected (:class:`ScenarioError`):
an empty or unreadable file, no ``~A`` data, a depth curve in an unknown unit, duplicated or
non-monotonic depths, a required curve that is missing, ambiguous, in an unknown unit, holds
text where numbers belong, is null over the whole interval or over a run longer than the
largest gap allowed, or lies outside its physical range; an interval outside the logged range.
Depth stored in decreasing order (the standard allows a negative STEP) is reversed, and said.
Null runs and depth gaps up to ``max_gap`` are filled by linear interpolation, and said.

Units are converted on load to the internal units of :data:`INTERNAL_UNITS` with exact factors
(NIST SP 811: 1 ft = 0.3048 m, 1 in = 0.0254 m). Common mnemonics and unit spellings are
common practice (service companies differ); a scenario can name the mnemonic of each curve.

References
----------
Canadian Well Logging Society (1992, rev.), LAS Version 2.0: A Floppy Disk Standard for Log
Data (the ~V, ~W, ~C, ~P, ~O, ~A sections; NULL; WRAP; STRT/STOP/STEP).
"""

from __future__ import annotations

import contextlib
import logging
import warnings
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Final

import numpy as np
from numpy.typing import NDArray

from risk.errors import Problem, ScenarioError

Array = NDArray[np.float64]

__all__ = ["ROLES", "INTERNAL_UNITS", "LogSet", "read_las", "DEPTH_UNITS", "CURVE_UNITS",
           "MAX_LAS_BYTES"]

#: Largest LAS file read [bytes] (200 MiB: tens of curves over thousands of feet are a few MB).
MAX_LAS_BYTES: Final = 200 * 1024 * 1024

#: Curve roles: the mnemonics recognised by default, in order of preference (common practice).
ROLES: Final[Mapping[str, tuple[str, ...]]] = MappingProxyType({
    "dt": ("DTC", "DTCO", "DT", "AC", "DT4P"),
    "rhob": ("RHOB", "RHOZ", "DEN", "ZDEN"),
    "phi": ("PHIT", "PHIE", "NPHI", "DPHI", "TNPH"),
    "gr": ("GR", "GRC", "SGR", "CGR"),
    "vsh": ("VSH", "VCL", "VSHALE"),
    "dts": ("DTS", "DTSM", "DTSH"),
    "cali": ("CALI", "HCAL", "CAL"),
})
#: What each role means (messages, memo).
ROLE_NAMES: Final[Mapping[str, str]] = MappingProxyType({
    "dt": "compressional slowness", "rhob": "bulk density", "phi": "porosity",
    "gr": "gamma ray", "vsh": "shale volume", "dts": "shear slowness", "cali": "caliper"})
#: Internal unit of each role.
INTERNAL_UNITS: Final[Mapping[str, str]] = MappingProxyType({
    "dt": "us/m", "rhob": "kg/m3", "phi": "v/v", "gr": "gAPI", "vsh": "v/v", "dts": "us/m",
    "cali": "m"})
_FT: Final = 0.3048
_IN: Final = 0.0254
#: Depth unit spellings -> metres per unit (NIST SP 811 exact factors; .1IN as in LAS files).
DEPTH_UNITS: Final[Mapping[str, float]] = MappingProxyType({
    "M": 1.0, "METER": 1.0, "METERS": 1.0, "METRE": 1.0, "METRES": 1.0, "F": _FT, "FT": _FT,
    "FEET": _FT, "FOOT": _FT, ".1IN": 0.1 * _IN, "0.1IN": 0.1 * _IN})
_SLOW: Final = {"US/M": 1.0, "USEC/M": 1.0, "US/FT": 1.0 / _FT, "US/F": 1.0 / _FT,
                "USEC/FT": 1.0 / _FT, "USEC/F": 1.0 / _FT, "MS/FT": 1.0 / _FT}
#: Curve unit spellings per role -> factor to the internal unit (upper case, spaces removed).
CURVE_UNITS: Final[Mapping[str, Mapping[str, float]]] = MappingProxyType({
    "dt": _SLOW, "dts": _SLOW,
    "rhob": {"G/CC": 1000.0, "G/CM3": 1000.0, "GM/CC": 1000.0, "G/C3": 1000.0,
             "GR/CC": 1000.0, "K/M3": 1.0, "KG/M3": 1.0},
    "phi": {"V/V": 1.0, "FRAC": 1.0, "DEC": 1.0, "M3/M3": 1.0, "%": 0.01, "PU": 0.01,
            "P.U.": 0.01, "PERCENT": 0.01},
    "vsh": {"V/V": 1.0, "FRAC": 1.0, "DEC": 1.0, "%": 0.01, "PERCENT": 0.01, "": 1.0},
    "gr": {"GAPI": 1.0, "API": 1.0, "GAPI_UNITS": 1.0},
    "cali": {"IN": _IN, "INCH": _IN, "INCHES": _IN, "MM": 0.001, "CM": 0.01, "M": 1.0},
})
#: Physical range of each role [internal units]: a value outside is a unit or data error.
PHYSICAL: Final[Mapping[str, tuple[float, float, str]]] = MappingProxyType({
    "dt": (100.0, 720.0, "100 to 720 us/m (30 to 220 us/ft)"),
    "dts": (160.0, 1700.0, "160 to 1,700 us/m (50 to 520 us/ft)"),
    "rhob": (1000.0, 3300.0, "1,000 to 3,300 kg/m3 (1.0 to 3.3 g/cm3)"),
    "phi": (0.0, 0.6, "0 to 0.6 v/v (0 to 60 %)"),
    "vsh": (0.0, 1.0, "0 to 1 v/v"),
    "gr": (0.0, 1000.0, "0 to 1,000 gAPI"),
    "cali": (0.02, 1.5, "0.02 to 1.5 m (1 to 60 in)"),
})


@dataclass(frozen=True)
class LogSet:
    """Logs of one interval on increasing depth, in internal units.

    depth : (n,) measured depth of the samples [m], strictly increasing
    curves : role -> (n,) values [INTERNAL_UNITS of the role], no nulls (filled runs said in
        ``notes``)
    mnemonics, units : role -> the mnemonic and the unit found in the file
    well : the file's WELL name (may be empty); source : the file's name
    notes : what was done to the data on the way in (reversed, filled, resampled)
    """

    depth: Array
    curves: Mapping[str, Array]
    mnemonics: Mapping[str, str]
    units: Mapping[str, str]
    well: str = ""
    source: str = ""
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        self.depth.setflags(write=False)
        for v in self.curves.values():
            v.setflags(write=False)


@contextlib.contextmanager
def _quiet_lasio() -> Iterator[None]:
    """lasio logs and warns on quirks it tolerates; the tool decides and says so itself."""
    log = logging.getLogger("lasio")
    level = log.level
    log.setLevel(logging.CRITICAL + 1)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            yield
    finally:
        log.setLevel(level)


def _norm_unit(unit: str) -> str:
    return "".join(str(unit).split()).upper()


def _read(path: Path, key: str) -> Any:
    import lasio

    name = str(path)
    if not path.is_file():
        raise ScenarioError.single(key, name, "an existing LAS 2.0 file",
                                   found_text=f"no file at {name!r}")
    size = path.stat().st_size
    if size == 0:
        raise ScenarioError.single(key, name, "a LAS 2.0 file (~V, ~W, ~C and ~A sections)",
                                   found_text="an empty file")
    if size > MAX_LAS_BYTES:
        raise ScenarioError.single(key, name, f"a LAS file of at most {MAX_LAS_BYTES:,} bytes",
                                   found_text=f"a file of {size:,} bytes")
    try:
        with _quiet_lasio():
            las = lasio.read(str(path), ignore_header_errors=False, null_policy="strict")
    except UnicodeDecodeError as exc:
        raise ScenarioError.single(key, name, "a LAS 2.0 text file",
                                   found_text=f"non-text content (byte {exc.start})") from None
    except KeyError as exc:  # lasio: "No ~ sections found"
        raise ScenarioError.single(f"{key} (sections)", name,
                                   "a LAS 2.0 file with ~V, ~W, ~C and ~A sections",
                                   found_text=f"a file lasio cannot read: {exc}") from None
    except Exception as exc:  # noqa: BLE001 - lasio raises many types on a broken file
        text = str(exc).splitlines()[0][:160] if str(exc) else type(exc).__name__
        section = "~A" if "~A" in text or "reshape" in text or "data" in text.lower() else "header"
        raise ScenarioError.single(f"{key} ({section} section)", name,
                                   "a LAS 2.0 file lasio reads (in a wrapped file every depth "
                                   "step holds one value per ~C curve)",
                                   found_text=f"a file lasio refuses: {text}") from None
    return las


def _curve_values(las: Any, mnemonic: str, key: str) -> Array:
    raw = np.asarray(las[mnemonic])
    if raw.dtype.kind in "fiu":
        return np.asarray(raw, dtype=float)
    out = np.empty(raw.size)
    for i, v in enumerate(raw):
        try:
            out[i] = float(v)
        except (TypeError, ValueError):
            raise ScenarioError.single(
                key, str(v), "numbers in the ~A section (or the NULL value)",
                found_text=f"the text {str(v)[:40]!r} in row {i + 1} of the ~A section"
            ) from None
    return out


def _find(las: Any, role: str, named: str | None, key: str) -> str | None:
    """The mnemonic of a role: the one the scenario names, else the first recognised."""
    mnemonics = [c.mnemonic for c in las.curves]
    if named is not None:
        if named not in mnemonics:
            raise ScenarioError.single(
                key, named, f"a curve of the ~C section (one of {', '.join(mnemonics[1:])})",
                found_text=f"{named!r}, which the file does not have")
        return named
    for mn in ROLES[role]:
        hits = [m for m in mnemonics[1:] if m == mn or m.split(":")[0] == mn]
        if len(hits) > 1:
            raise ScenarioError.single(
                key, mn, f"one curve named {mn} (name the one to use in logs.curves)",
                found_text=f"{len(hits)} curves named {mn} ({', '.join(hits)})")
        if hits:
            return hits[0]
    return None


def _null_value(las: Any) -> float | None:
    try:
        return float(las.well["NULL"].value)
    except (KeyError, TypeError, ValueError):
        return None


def _runs(mask: NDArray[np.bool_]) -> list[tuple[int, int]]:
    """(start, stop) index pairs of the True runs of ``mask``."""
    m = np.concatenate(([False], mask, [False])).astype(np.int8)
    d = np.diff(m)
    return list(zip(np.nonzero(d == 1)[0].tolist(), np.nonzero(d == -1)[0].tolist(),
                    strict=True))


def read_las(path: str | Path, *, top: float, base: float,
             curves: Mapping[str, str] | None = None, required: Sequence[str] = ("dt",),
             optional: Sequence[str] = ("rhob", "phi", "gr", "vsh", "dts", "cali"),
             max_gap: float = 1.524, key: str = "logs.file",
             depth_unit_out: str = "m") -> LogSet:
    """Read the logs of the interval ``[top, base]`` of a LAS 2.0 file.

    Parameters
    ----------
    path : str or Path
        The LAS file.
    top, base : float
        Interval to assess, measured depth [m], ``top < base``; must lie within the logged range.
    curves : mapping role -> mnemonic, optional
        Mnemonics to use instead of the recognised ones (:data:`ROLES`).
    required, optional : sequence of str
        Roles that must be present; roles read when present.
    max_gap : float
        Longest run of nulls, or depth gap, filled by linear interpolation [m]
        (default 1.524 m = 5 ft); longer runs are refused.
    key : str
        The scenario key named in messages about the file.
    depth_unit_out : str
        Unit in which depths are quoted in messages ("m" or "ft").

    Raises
    ------
    ScenarioError
        For every refusal listed in the module docstring.
    """
    p = Path(path)
    las = _read(p, key)
    name = str(path)
    shown = (lambda z: f"{z / _FT:,.1f} ft") if depth_unit_out == "ft" else (
        lambda z: f"{z:,.2f} m")
    curves = dict(curves or {})
    if len(las.curves) == 0:
        raise ScenarioError.single(f"{key} (~C section)", name, "a ~C section listing the depth "
                                   "curve and the logs", found_text="no curves")
    index = las.curves[0]
    d_unit = _norm_unit(index.unit)
    if d_unit not in DEPTH_UNITS:
        raise ScenarioError.single(
            f"{key} (depth curve {index.mnemonic})", index.unit,
            f"a depth unit of {', '.join(sorted(DEPTH_UNITS))}",
            found_text=f"the unit {index.unit!r}" if index.unit else "no unit")
    try:
        with _quiet_lasio():
            n_rows = np.asarray(las.index).size
    except Exception:  # noqa: BLE001
        n_rows = 0
    if n_rows == 0:
        raise ScenarioError.single(f"{key} (~A section)", name, "a ~A section with data rows",
                                   found_text="no data rows (the ~A section is missing or "
                                   "empty)")
    depth = _curve_values(las, index.mnemonic, f"{key} (depth curve {index.mnemonic})")
    null_value = _null_value(las)
    if null_value is not None:
        depth = np.where(depth == null_value, np.nan, depth)
    depth = depth * DEPTH_UNITS[d_unit]
    notes: list[str] = []
    if not np.all(np.isfinite(depth)):
        raise ScenarioError.single(f"{key} (depth curve {index.mnemonic})", name,
                                   "a depth on every row", found_text="null depths")
    step = np.diff(depth)
    if np.any(step == 0.0):
        i = int(np.nonzero(step == 0.0)[0][0])
        raise ScenarioError.single(f"{key} (depth curve {index.mnemonic})",
                                   float(depth[i] / DEPTH_UNITS[d_unit]),
                                   "each depth once (duplicated depths)",
                                   found_text=f"the depth {shown(depth[i])} twice "
                                   f"(rows {i + 1} and {i + 2})")
    if step.size and not (np.all(step > 0) or np.all(step < 0)):
        i = int(np.nonzero(np.sign(step) != np.sign(step[0]))[0][0])
        raise ScenarioError.single(
            f"{key} (depth curve {index.mnemonic})", float(depth[i + 1] / DEPTH_UNITS[d_unit]),
            "depths that only increase (or only decrease) down the ~A section",
            found_text=f"{shown(depth[i + 1])} after {shown(depth[i])} at row {i + 2}")
    order = np.arange(depth.size)
    if step.size and step[0] < 0:
        order = order[::-1]
        notes.append("depths decrease down the file: read in reverse order")
    depth = depth[order]
    lo, hi = float(depth[0]), float(depth[-1])
    if not (lo - 1e-9 <= top and base <= hi + 1e-9):
        raise ScenarioError.single(
            "logs.top/logs.base", f"{shown(top)} to {shown(base)}",
            f"an interval within the logged range {shown(lo)} to {shown(hi)}")
    sel = (depth >= top - 1e-9) & (depth <= base + 1e-9)
    if np.count_nonzero(sel) < 2:
        raise ScenarioError.single("logs.top/logs.base", f"{shown(top)} to {shown(base)}",
                                   "an interval holding at least two log samples")
    gaps = np.diff(depth[sel])
    if gaps.size and gaps.max() > max_gap + 1e-9:
        j = int(np.argmax(gaps))
        z0 = depth[sel][j]
        raise ScenarioError.single(
            f"{key} (depth curve {index.mnemonic})", f"{shown(z0)} to {shown(z0 + gaps[j])}",
            f"no depth gap longer than logs.max_gap = {shown(max_gap)} in the interval",
            found_text=f"no samples from {shown(z0)} to {shown(z0 + gaps[j])}")
    if gaps.size and gaps.max() > 1.5 * np.median(gaps):
        notes.append(f"depth gaps up to {shown(float(gaps.max()))} bridged by linear "
                     "interpolation")
    out: dict[str, Array] = {}
    mnem: dict[str, str] = {}
    units: dict[str, str] = {}
    unknown = set(curves) - set(ROLES)
    if unknown:
        bad = sorted(unknown)[0]
        raise ScenarioError.single(f"logs.curves.{bad}", curves[bad],
                                   f"a curve role of {', '.join(ROLES)}")
    problems: list[Problem] = []
    for role in (*required, *optional):
        ckey = f"logs.curves.{role}"
        mn = _find(las, role, curves.get(role), ckey)
        if mn is None:
            if role in required:
                problems.append(Problem(
                    ckey, None, f"a {ROLE_NAMES[role]} curve (one of "
                    f"{', '.join(ROLES[role])}, or name it in logs.curves.{role})",
                    found_text="no such curve in the file"))
            continue
        curve = las.curves[mn]
        unit = _norm_unit(curve.unit)
        table = CURVE_UNITS[role]
        if unit not in table:
            problems.append(Problem(f"{ckey} ({mn})", curve.unit,
                                    f"a {ROLE_NAMES[role]} unit of "
                                    f"{', '.join(u for u in table if u)}",
                                    found_text=f"the unit {curve.unit!r}" if curve.unit
                                    else "no unit"))
            continue
        values = _curve_values(las, mn, f"{ckey} ({mn})")[order] * table[unit]
        values = values[sel]
        z = depth[sel]
        null = ~np.isfinite(values)
        if null.all():
            problems.append(Problem(f"{ckey} ({mn})", _null_value(las),
                                    f"{ROLE_NAMES[role]} values in the interval",
                                    found_text="only null values in the interval"))
            continue
        low, high, text = PHYSICAL[role]
        badv = ~null & ((values < low) | (values > high))
        if badv.any():
            i = int(np.nonzero(badv)[0][0])
            problems.append(Problem(f"{ckey} ({mn})", float(values[i] / table[unit]),
                                    f"{text} (check the unit {curve.unit!r})",
                                    found_text=f"{values[i] / table[unit]:g} {curve.unit} at "
                                    f"{shown(z[i])}"))
            continue
        for a, b in _runs(null):
            za = z[a - 1] if a > 0 else None
            zb = z[b] if b < z.size else None
            if za is None or zb is None or zb - za > max_gap + 1e-9:
                problems.append(Problem(
                    f"{ckey} ({mn})", f"{shown(z[a])} to {shown(z[b - 1])}",
                    f"null runs no longer than logs.max_gap = {shown(max_gap)} inside the "
                    "interval (or an interval that avoids them)",
                    found_text=f"null values from {shown(z[a])} to {shown(z[b - 1])}"))
                break
        else:
            if null.any():
                values = values.copy()
                values[null] = np.interp(z[null], z[~null], values[~null])
                notes.append(f"{mn}: {int(null.sum())} null samples filled by linear "
                             "interpolation")
            out[role] = values
            mnem[role] = mn
            units[role] = curve.unit
    if problems:
        raise ScenarioError(problems, name)
    well = str(las.well["WELL"].value) if "WELL" in las.well else ""
    return LogSet(depth[sel].copy(), out, mnem, units, well=well, source=p.name,
                  notes=tuple(notes))
