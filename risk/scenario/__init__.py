"""Scenario files: TOML in field or SI units -> a validated, frozen scenario in internal units.

The engineer's file is read once here; every value is converted to internal units
(:mod:`risk.conventions`) and every problem found is reported at once in one
:class:`~risk.errors.ScenarioError`. Nothing downstream converts units or re-validates input.

Each numeric input listed in :data:`INPUTS` may be a plain number (fixed) or a distribution
table such as ``{ dist = "normal", mean = 9000, sd = 900, source = "core plugs" }``
(:func:`risk.uncertainty.parse_input`). Stresses and the initial pore pressure are given either
as an absolute value (``sv = ...``) or as a gradient from surface (``sv_gradient = ...``), exactly
one of the two.

Limits (far above any real scenario; they keep a mistyped or hostile file from flooding the
terminal or the run): a file of at most :data:`MAX_FILE_BYTES`, a title of at most
:data:`MAX_TITLE_CHARS` characters and a source of at most
:data:`~risk.uncertainty.MAX_SOURCE_CHARS`, both one line without control characters,
:data:`MAX_SHOTS` shot directions, :data:`MAX_STAGES` depletion stages,
:data:`MAX_OPERATING_POINTS` operating points, :data:`MAX_OPTIONS` completion options (names of
at most :data:`MAX_OPTION_NAME_CHARS` characters), :data:`MAX_PHASINGS` gun phasings, and at
most one correlation per pair of uncertain inputs.

Completion options (``[[option]]``: the ``[well]`` table with some of :data:`COMPLETION_KEYS`
replaced), candidate gun phasings (``[well] phasings``), depletion stages by rule
(``reservoir_pressure = { from = "initial", to = ..., stages = N }``) and operating points by
drawdown (``{ reservoir_pressure = ..., drawdown = ... }``) are described in README "Scenario
files"; a rule is expanded here, so the scenario holds the stages as a list would.

Inputs that are given but unused by the chosen options, and stages that look mistyped, are
accepted with a warning (:attr:`Scenario.warnings`), which the console, results.json and the
memo repeat.
"""

from risk.scenario.load import (
    load_scenario,
)
from risk.scenario.model import (
    COMPLETION_KEYS,
    DEFAULT_PHASINGS,
    MAX_FILE_BYTES,
    MAX_OPERATING_POINTS,
    MAX_OPTION_NAME_CHARS,
    MAX_OPTIONS,
    MAX_PHASINGS,
    MAX_SAMPLES,
    MAX_SHOTS,
    MAX_STAGES,
    MAX_TITLE_CHARS,
    PAIR_TAIL,
    STAGE_ABOVE_PP,
    CompletionOption,
    Scenario,
    Well,
)
from risk.scenario.parse import (
    parse_scenario,
)
from risk.scenario.schema import (
    _SECTIONS,  # noqa: F401 (imported from risk.scenario by tests and older modules)
    _SPEC,  # noqa: F401 (imported from risk.scenario by tests and older modules)
    INPUT_SPECS,
    INPUTS,
    MECHANISM_INPUTS,
    InputSpec,
    mechanisms_of,
)

__all__ = [
    "InputSpec",
    "INPUTS",
    "INPUT_SPECS",
    "MECHANISM_INPUTS",
    "mechanisms_of",
    "Well",
    "CompletionOption",
    "Scenario",
    "load_scenario",
    "parse_scenario",
    "MAX_SAMPLES",
    "MAX_FILE_BYTES",
    "MAX_TITLE_CHARS",
    "MAX_SHOTS",
    "MAX_STAGES",
    "MAX_OPERATING_POINTS",
    "MAX_OPTIONS",
    "MAX_OPTION_NAME_CHARS",
    "MAX_PHASINGS",
    "DEFAULT_PHASINGS",
    "COMPLETION_KEYS",
    "PAIR_TAIL",
    "STAGE_ABOVE_PP",
]
