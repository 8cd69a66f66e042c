"""Domain exceptions.

Every problem with user input is a :class:`ScenarioError` raised where the input enters
(scenario loading, CLI paths). Its message names the key, the value found and what is
expected. Several problems found in one pass are gathered into one :class:`ScenarioError`
whose ``problems`` list holds each of them, so the engineer fixes the file in one go; its
message lists at most :data:`MAX_LISTED` of them (the list itself stays complete).

Messages are printed on terminals: every control character in them (including those of a key or
a file name taken from the user's input) is shown as a visible escape such as ``\\x1b`` by
:func:`visible`, so nothing a file contains can move the cursor, recolour or hide text.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any, Final

__all__ = ["Problem", "ScenarioError", "RiskError", "CONTROL_CHARACTERS", "MAX_LISTED",
           "closest", "did_you_mean", "toml_key", "visible"]

#: Characters that change how a terminal or a page shows the text around them: the C0 controls
#: (U+0000-U+001F), DEL (U+007F), the C1 controls (U+0080-U+009F), the line and paragraph
#: separators (U+2028, U+2029) and the bidirectional embeddings, overrides and isolates
#: (U+202A-U+202E, U+2066-U+2069; these can show text in an order other than the one stored).
CONTROL_CHARACTERS: Final = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e"
                                       "\u2066-\u2069]")

#: Problem lines a :class:`ScenarioError` message lists; the rest are counted.
MAX_LISTED: Final = 10


def visible(text: str, keep: str = "") -> str:
    """``text`` with every control character (:data:`CONTROL_CHARACTERS`) shown as its Python
    escape (ESC -> ``\\x1b``, newline -> ``\\n``, U+202E -> ``\\u202e``), except those in ``keep``.
    """
    return CONTROL_CHARACTERS.sub(
        lambda m: m.group() if m.group() in keep else repr(m.group())[1:-1], text)


def closest(word: str, choices: Iterable[str]) -> str | None:
    """The choice most like ``word`` (difflib ratio at least 0.6), or None: the one place that
    decides what a typing error was meant to be."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return close[0] if close else None


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """`` (did you mean 'x'?)`` for the :func:`closest` choice, or an empty string."""
    close = closest(word, choices)
    return f" (did you mean {close!r}?)" if close is not None else ""


def toml_key(key: object) -> str:
    """A key as TOML would need it written: bare when possible, else a quoted basic string
    with quotes, backslashes and control characters escaped (``"a\\u001bb"``), so that a key
    named in a message never carries a control character itself."""
    text = str(key)
    if re.fullmatch(r"[A-Za-z0-9_-]+", text):
        return text
    text = text.replace("\\", "\\\\").replace('"', '\\"')
    return '"' + CONTROL_CHARACTERS.sub(lambda m: f"\\u{ord(m.group()):04x}", text) + '"'


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
        return visible(f"{self.key}: found {found}; expected {self.expected}")


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
        head = f"{visible(self.source)}: " if self.source else ""
        if len(self.problems) == 1:
            return head + str(self.problems[0])
        lines = [f"{head}{len(self.problems):,} problems in the scenario:"]
        lines += [f"  - {p}" for p in self.problems[:MAX_LISTED]]
        if len(self.problems) > MAX_LISTED:
            more = len(self.problems) - MAX_LISTED
            lines.append(f"  ... and {more:,} more problem{'s' if more > 1 else ''}")
        return "\n".join(lines)
