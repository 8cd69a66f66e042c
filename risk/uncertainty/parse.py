"""Scenario entries -> marginals: validation of numbers, texts and distribution tables."""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from typing import Any, Final

from risk.errors import CONTROL_CHARACTERS, Problem, ScenarioError, did_you_mean, toml_key
from risk.uncertainty.marginals import (
    _DIMENSIONLESS,
    _PARAMS,
    KINDS,
    OUTSIDE_TOLERANCE,
    UNBOUNDED,
    Bounds,
    Marginal,
    _param_problems,
)

_SCENARIO_EXTRA_KEYS: Final = ("dist", "source")

#: Longest ``source`` text of an input [characters]: a reference, not a report.
MAX_SOURCE_CHARS: Final = 500


def text_problem(key: str, value: object, *, max_chars: int, what: str) -> Problem | None:
    """The problem of a one-line free text of the scenario (a title, a source), or None.

    A text must be a string of at most ``max_chars`` characters without control characters
    (:data:`risk.errors.CONTROL_CHARACTERS`: no tab, no line break, no terminal escape, no
    bidirectional override). ``what`` names the text in the message ("a title").
    """
    expected = (f"{what}: a text on one line, at most {max_chars:,} characters, without "
                "control characters")
    if not isinstance(value, str):
        return Problem(key, value, expected)
    if len(value) > max_chars:
        return Problem(key, value, expected,
                       found_text=f"a text of {len(value):,} characters ({_show_start(value)})")
    bad = CONTROL_CHARACTERS.search(value)
    if bad:
        return Problem(key, value, expected,
                       found_text=f"{_show_start(value)}, with the control character "
                       f"{bad.group()!r} at position {bad.start() + 1}")
    return None


def _show_start(text: str) -> str:
    """The start of a text as a Python literal (control characters escaped), at most ~60 chars."""
    shown = repr(text[:60])
    return shown + "..." if len(text) > 60 else shown


#: Plain numbers in a scenario must be 0 or of magnitude in [MIN_MAGNITUDE, MAX_MAGNITUDE]:
#: wider values are typing errors, and they overflow or underflow the unit conversions.
MAX_MAGNITUDE: Final = 1e12
MIN_MAGNITUDE: Final = 1e-12
MAGNITUDE_TEXT: Final = "a number of magnitude between 1e-12 and 1e12 (or 0)"


def is_real(value: object) -> bool:
    """A real number (not a bool) that converts to a float without overflow."""
    if not isinstance(value, numbers.Real) or isinstance(value, bool):
        return False
    try:
        float(value)
    except OverflowError:
        return False
    return True


def is_plain_number(value: object) -> bool:
    """A finite real number of sensible magnitude (:func:`magnitude_ok`): what a scenario may
    write wherever a plain number is expected."""
    return is_real(value) and math.isfinite(float(value)) and magnitude_ok(float(value))  # type: ignore[arg-type]


def magnitude_ok(value: float) -> bool:
    """0, or a finite magnitude within [MIN_MAGNITUDE, MAX_MAGNITUDE]."""
    a = abs(value)
    return a == 0.0 or MIN_MAGNITUDE <= a <= MAX_MAGNITUDE


# --------------------------------------------------------------------------------------------
# Parsing scenario entries
# --------------------------------------------------------------------------------------------


def parse_input(key: str, raw: object, *, scale: float, bounds: Bounds = UNBOUNDED,
                unit: str = "") -> Marginal:
    """Read one scenario entry into a :class:`Marginal` in internal units.

    Parameters
    ----------
    key : str
        Scenario key used in messages, e.g. ``"rock.ucs"``.
    raw : number or table
        A plain number (a fixed value) or a table such as
        ``{dist = "normal", mean = 9000, sd = 900, source = "core tests"}`` with values in the
        scenario's display unit. Distributions and their parameters: ``fixed`` (value),
        ``normal`` (mean, sd), ``lognormal`` (median and cov, or mean and sd), ``uniform``
        (low, high), ``triangular`` (low, mode, high), ``truncnormal`` (mean, sd, and optional
        low, high), ``pert`` (low, mode, high).
    scale : float
        Internal units per display unit [internal/display], > 0; multiplies every parameter
        except ``cov``.
    bounds : Bounds
        Physical range of the quantity [internal unit].
    unit : str
        Display unit, only for messages.

    Returns
    -------
    Marginal

    Raises
    ------
    ScenarioError
        Listing every problem of the entry at once: unknown ``dist`` (with a suggestion),
        missing, unknown, non-numeric, boolean, NaN or infinite parameters, sd <= 0,
        low >= high, mode outside [low, high], a fixed value outside ``bounds``, or a
        distribution with more than :data:`OUTSIDE_TOLERANCE` probability outside ``bounds``.
    """
    if not scale > 0 or not math.isfinite(scale):
        raise ValueError(f"scale must be a finite number > 0, got {scale!r}")
    plain = isinstance(raw, numbers.Real) and not isinstance(raw, bool)
    if plain:
        table: Mapping[str, Any] = {"dist": "fixed", "value": raw}
    elif isinstance(raw, Mapping):
        table = raw
    else:
        raise ScenarioError.single(
            key, raw, "a number or a table like { dist = \"normal\", mean = ..., sd = ... }")

    problems: list[Problem] = []

    def where(name: str) -> str:
        """Key of a parameter in messages (a plain number is the key itself)."""
        return key if plain else f"{key}.{name}"

    dist = table.get("dist")
    if dist is None:
        raise ScenarioError.single(
            f"{key}.dist", table, f"a 'dist' entry, one of {', '.join(KINDS)}",
            found_text=f"a table without 'dist' (keys {sorted(map(str, table))})")
    if not isinstance(dist, str) or dist not in _PARAMS:
        hint = did_you_mean(dist, KINDS) if isinstance(dist, str) else ""
        raise ScenarioError.single(f"{key}.dist", dist, f"one of {', '.join(KINDS)}{hint}")

    source = table.get("source")
    if source is not None:
        bad_source = text_problem(f"{key}.source", source, max_chars=MAX_SOURCE_CHARS,
                                  what="where the value comes from")
        if bad_source:
            problems.append(bad_source)

    allowed = _PARAMS[dist]
    given: dict[str, float] = {}
    for name, value in table.items():
        if name in _SCENARIO_EXTRA_KEYS:
            continue
        if name not in allowed:
            hint = did_you_mean(str(name), allowed)
            problems.append(Problem(f"{key}.{toml_key(name)}", value,
                                    f"only parameters {', '.join(allowed)} for {dist}{hint}",
                                    found_text=f"unknown parameter {name!r} = {value!r}"))
        elif not is_real(value):
            problems.append(Problem(where(name), value,
                                    "a number" if not isinstance(value, numbers.Real)
                                    or isinstance(value, bool) else MAGNITUDE_TEXT))
        elif not math.isfinite(float(value)):
            problems.append(Problem(where(name), value, "a finite number"))
        elif not magnitude_ok(float(value)):
            problems.append(Problem(where(name), value, MAGNITUDE_TEXT))
        else:
            given[name] = float(value)

    required: tuple[str, ...]
    if dist == "lognormal":
        pairs = (("median", "cov"), ("mean", "sd"))
        present = [pair for pair in pairs if any(n in table for n in pair)]
        if len(present) != 1:
            problems.append(Problem(
                key, {n: table[n] for n in allowed if n in table},
                "exactly one pair of lognormal parameters: median and cov, or mean and sd",
                found_text="parameters "
                + (", ".join(n for n in allowed if n in table) or "none")))
            required = ()
        else:
            required = present[0]
    elif dist == "truncnormal":
        required = ("mean", "sd")
    else:
        required = allowed
    for name in required:
        if name not in table:
            problems.append(Problem(f"{key}.{name}", None, f"a number ({dist} needs "
                                    f"{', '.join(required)})", found_text="nothing"))
    if problems:
        raise ScenarioError(problems)

    if dist == "truncnormal":
        given.setdefault("low", -math.inf)
        given.setdefault("high", math.inf)
    ordered = [n for n in allowed if n in given]
    internal = {n: given[n] if n in _DIMENSIONLESS else given[n] * scale for n in ordered}
    for name, value, expected in _param_problems(dist, given):
        problems.append(Problem(where(name), value, expected))
    if problems:
        raise ScenarioError(problems)

    try:
        marginal = Marginal(dist, tuple((n, internal[n]) for n in ordered), source)
        below, above = bounds.outside_probability(marginal)
        tails: tuple[float, ...] = (marginal.quantile(1e-9), marginal.quantile(0.5),
                                    marginal.quantile(1 - 1e-9))
    except (ValueError, OverflowError, ZeroDivisionError, FloatingPointError):
        tails = (math.nan,)
    if not all(math.isfinite(t) for t in tails):
        raise ScenarioError.single(
            key, raw, "distribution parameters whose spread and quantiles are finite numbers "
            "after conversion to internal units (these overflow or underflow)")
    if marginal.is_fixed:
        if below > 0 or above > 0:
            if isinstance(raw, Mapping):
                raise ScenarioError.single(f"{key}.value", raw["value"], f"a value {bounds.text}")
            raise ScenarioError.single(key, raw, f"a value {bounds.text}")
    elif below > OUTSIDE_TOLERANCE or above > OUTSIDE_TOLERANCE:
        parts = []
        if below > OUTSIDE_TOLERANCE:
            parts.append(f"{below:.2g} below the physical range")
        if above > OUTSIDE_TOLERANCE:
            parts.append(f"{above:.2g} above " + ("it" if parts else "the physical range"))
        raise ScenarioError.single(
            key, raw,
            f"a distribution with at most {OUTSIDE_TOLERANCE:g} probability outside the "
            f"physical range {bounds.text} (use dist = \"truncnormal\" with low/high inside the "
            "range to truncate explicitly; values are never clipped)",
            found_text=f"{marginal.describe(scale, unit)}, which puts probability "
            + " and ".join(parts))
    return marginal
