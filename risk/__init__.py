"""risk: probability of sand production and perforation-tunnel failure over the life of a well.

The Python API (for scripts and notebooks; nothing is written unless asked)::

    import risk
    sc = risk.load_scenario("examples/ravenmoor_r7_openhole.toml")  # or a dict
    res = risk.assess(sc, samples=4096, seed=7)
    res.limits.to_frame()          # pandas; units in the column names ("si" on request)
    risk.report.write(res, "reports/r7")

Heavy modules are imported on first use, so that ``import risk`` (and ``risk --help``) stays
fast.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from risk.kernel_cache import configure as _configure_kernel_cache

__version__ = "0.1.0"
__all__ = ["__version__", "load_scenario", "assess", "report", "Scenario", "Result",
           "ScenarioError"]

# before numba compiles anything: a read-only install caches its kernels in the user's cache
_configure_kernel_cache()

if TYPE_CHECKING:  # pragma: no cover
    from collections.abc import Callable, Mapping
    from pathlib import Path

    from risk import report
    from risk.errors import ScenarioError
    from risk.result import Result
    from risk.scenario import Scenario


def load_scenario(source: str | Path | Mapping[str, Any]) -> Scenario:
    """A validated scenario from a TOML file, or from a dict with the same tables and keys
    (``{"title": ..., "units": "field", "well": {...}, ...}``), so that a scenario can be
    built in Python without a file.

    Raises
    ------
    ScenarioError
        Every problem found, each naming the key, the value found and what is expected.
    """
    from collections.abc import Mapping as _Mapping

    from risk import scenario as _sc

    if isinstance(source, _Mapping):
        import hashlib
        import json

        text = json.dumps(source, sort_keys=True, default=str, ensure_ascii=False)
        return _sc.parse_scenario(source, source_name="<dict>",
                                  sha256=hashlib.sha256(text.encode("utf-8")).hexdigest())
    return _sc.load_scenario(source)


def assess(scenario: Scenario, *, samples: int | None = None, seed: int | None = None,
           progress: Callable[[int, int], None] | None = None) -> Result:
    """Sample the scenario's inputs, run every mechanism at every stage and direction, and
    return the typed :class:`~risk.result.Result` (limits, curves, sand-free limit, life-of-well
    gun, options, sensitivity). ``samples`` and ``seed`` override the scenario's; the same
    scenario, samples and seed give identical results."""
    from risk import assessment, result

    return result.summarize(assessment.assess(scenario, samples=samples, seed=seed,
                                              progress=progress))


def __getattr__(name: str) -> Any:
    if name == "report":
        import importlib

        return importlib.import_module("risk.report")
    if name == "Scenario":
        from risk.scenario import Scenario

        return Scenario
    if name == "Result":
        from risk.result import Result

        return Result
    if name == "ScenarioError":
        from risk.errors import ScenarioError

        return ScenarioError
    raise AttributeError(f"module 'risk' has no attribute {name!r}")
