"""Every criterion, sampling rule and cavity option runs end to end (integration smoke test).

Checks no exception escapes, the summary is strict JSON, and the physics orderings that hold
whatever the option: collapse never before yield onset when both use Mohr-Coulomb (derived,
docs/derivations.md, sec. 5), probabilities within [0, 1], limits within [0, p_r]. Scenario:
tests/data/matrix_base.toml (invented).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from risk.assessment import assess
from risk.mechanics.criteria import CRITERIA
from risk.report.results import summarize
from risk.scenario import parse_scenario

BASE = (Path(__file__).parent / "data" / "matrix_base.toml").read_text()


def _scenario(criterion: str, sampling: str = "sobol", cavity: str = "tunnel"):
    import tomllib

    text = BASE.replace("CRIT", criterion).replace("SAMP", sampling).replace("CAV", cavity)
    return parse_scenario(tomllib.loads(text), source_name="matrix.toml")


CASES = ([(c, "sobol", "tunnel") for c in sorted(CRITERIA)]
         + [("mohr-coulomb", "lhs", "tip"), ("mohr-coulomb", "random", "tip")])


@pytest.mark.parametrize("criterion,sampling,cavity", CASES)
def test_runs_end_to_end(criterion, sampling, cavity):
    a = assess(_scenario(criterion, sampling, cavity), samples=128)
    s = summarize(a)
    json.dumps(s, allow_nan=False)  # strict JSON: no NaN or infinity leaks out
    assert set(s["mechanisms"]) == {"yield_onset", "effective_strength_onset",
                                    "tunnel_collapse", "pore_collapse"}
    for key in ("yield_onset", "effective_strength_onset", "tunnel_collapse"):
        for st in s["mechanisms"][key]["stages"]:
            assert 0.0 <= st["drawdown_limit"] <= st["reservoir_pressure"]
            assert all(0.0 <= r["low"] <= r["p"] <= r["high"] <= 1.0
                       for r in st["failure_probability"])
    if criterion == "mohr-coulomb":
        tc = a.mechanisms["tunnel_collapse"].by_direction
        yo = a.mechanisms["yield_onset"].by_direction
        assert np.all(tc >= yo - 1e-9)


@pytest.mark.slow
def test_small_risk_starts_form_off_the_plateau():
    # Most samples never reach the effective-strength onset (a plateau at p_r), so FORM started
    # at the median point would find no gradient. Started from the run's failing sample nearest
    # the limit surface it must converge, and importance sampling must agree with plain
    # sampling within four combined standard errors (binomial for sampling, its own c.o.v. for
    # IS). 4096 x 0.005 = 20 samples below the quantile: the limit is solved (risk.small_risk).
    import math
    import tomllib

    text = (BASE.replace("CRIT", "mohr-coulomb").replace("SAMP", "sobol")
            .replace("CAV", "tunnel").replace("accepted_risk = 0.1", "accepted_risk = 0.005"))
    a = assess(parse_scenario(tomllib.loads(text)), samples=4096)
    rel = a.reliability[("effective_strength_onset", 0)]
    assert rel["converged"] and math.isfinite(rel["form_p"])
    assert rel["limit_method"] == "importance sampling" and rel["starts"] >= 1
    p_s, p_is = rel["sampling_p"], rel["is_p"]
    se = math.hypot(math.sqrt(p_s * (1 - p_s) / 4096), rel["is_cov"] * p_is)
    assert abs(p_s - p_is) < 4 * se
