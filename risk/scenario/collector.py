"""Gathering every problem of a scenario before raising (the _Collector, key checks)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from risk.errors import Problem, ScenarioError, did_you_mean, toml_key
from risk.scenario.schema import _SECTIONS
from risk.uncertainty import (
    MAGNITUDE_TEXT,
    is_plain_number,
    is_real,
)

# --------------------------------------------------------------------------------------------
_key_text = toml_key


class _Collector:
    """Gathers problems so that one pass reports all of them."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []

    def add(self, key: str, value: Any, expected: str, found_text: str | None = None) -> None:
        self.problems.append(Problem(key, value, expected, found_text))

    def extend(self, err: ScenarioError) -> None:
        self.problems.extend(err.problems)

    def number(self, table: Mapping[str, Any], section: str, key: str, *, required: bool,
               expected: str, check: Any = None, integer: bool = False) -> float | None:
        full = f"{section}.{key}" if section else key
        if key not in table:
            if required:
                self.add(full, None, expected, found_text="nothing (the key is missing)")
            return None
        v = table[key]
        if integer:
            if not isinstance(v, int) or isinstance(v, bool) or not is_real(v):
                self.add(full, v, expected)
                return None
        elif not is_plain_number(v):
            self.add(full, v, expected if not isinstance(v, int | float) or isinstance(v, bool)
                     or (is_real(v) and not math.isfinite(float(v)))
                     else f"{MAGNITUDE_TEXT}; {expected}")
            return None
        fv = float(v)
        if not math.isfinite(fv) or (check is not None and not check(fv)):
            self.add(full, v, expected)
            return None
        return fv


def _check_keys(c: _Collector, table: Mapping[str, Any], section: str) -> None:
    allowed = _SECTIONS[section]
    for key in table:
        if key not in allowed:
            where = f"{section}.{_key_text(key)}" if section else _key_text(key)
            kind = "section" if not section and isinstance(table[key], dict) else "key"
            c.add(where, table[key],
                  f"a known {kind}{' in [' + section + ']' if section else ''}: "
                  f"{', '.join(allowed)}{did_you_mean(str(key), allowed)}",
                  found_text=f"unknown {kind} {key!r}")
