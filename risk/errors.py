"""Domain exceptions.

Every problem with user input is a :class:`ScenarioError` raised where the input enters
(scenario loading, CLI paths). Its message names the key, the value found and what is
expected. Several problems found in one pass are gathered into one :class:`ScenarioError`
whose ``problems`` list holds each of them, so the engineer fixes the file in one go.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

__all__ = ["Problem", "ScenarioError", "RiskError"]


class RiskError(Exception):
    """Base class of the exceptions this package raises on purpose."""


def _show(value: Any) -> str:
    if hasattr(value, "isoformat"):  # TOML dates and times: as written in the file
        return str(value.isoformat())
    text = repr(value)
    return text if len(text) <= 80 else text[:77] + "..."


@dataclass(frozen=True)
class Problem:
    """One input problem: where it is, what was found, what is expected."""

    key: str
    value: Any
    expected: str
    found_text: str | None = field(default=None)

    def __str__(self) -> str:
        found = self.found_text if self.found_text is not None else _show(self.value)
        return f"{self.key}: found {found}; expected {self.expected}"


class ScenarioError(RiskError):
    """Bad input: one or more :class:`Problem` s, reported together."""

    def __init__(self, problems: list[Problem] | Problem, source: str | None = None) -> None:
        self.problems = [problems] if isinstance(problems, Problem) else list(problems)
        self.source = source
        super().__init__(self.message)

    @classmethod
    def single(cls, key: str, value: Any, expected: str, source: str | None = None,
               found_text: str | None = None) -> ScenarioError:
        return cls(Problem(key, value, expected, found_text), source)

    @property
    def message(self) -> str:
        head = f"{self.source}: " if self.source else ""
        if len(self.problems) == 1:
            return head + str(self.problems[0])
        lines = [f"{head}{len(self.problems)} problems in the scenario:"]
        lines += [f"  - {p}" for p in self.problems]
        return "\n".join(lines)
