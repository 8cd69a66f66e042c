"""The field's ranking, envelope and inputs that matter, on hand-made results.json extracts
(values derived by hand: linear interpolation between a case's stages)."""

from __future__ import annotations

from risk.batch.field import Field
from risk.batch.summary import envelope, inputs_that_matter, ranking


def _summary(pressures, limits, governing="effective_strength_onset", sens=()):
    return {"unit_system": "field", "accepted_risk": 0.1,
            "sand_free": {"stages": [{"reservoir_pressure": p, "drawdown_limit": lim,
                                      "drawdown_limit_lower": lim, "governing": governing,
                                      "governing_name": governing}
                                     for p, lim in zip(pressures, limits, strict=True)],
                          "operating_points": []},
            "sensitivity": {governing: [{"input": n, "rank_value": v} for n, v in sens]}}


FIELD = Field(title="t", units="field", cases=(), source_name="x", sha256="", files=())


def test_ranking_smallest_limit_first_then_earlier_in_depletion():
    summaries = {"A": _summary([3000, 2500], [400, 100]),
                 "B": _summary([3000, 2500, 2000], [300, 0, 0]),
                 "C": _summary([3000, 2500, 2000], [500, 200, 0])}
    ranked = ranking(FIELD, summaries)
    # B and C both reach 0; B at 2,500 psi (earlier in depletion) ranks first
    assert [r["case"] for r in ranked] == ["B", "C", "A"]
    assert ranked[0]["reservoir_pressure"] == 2500


def test_envelope_is_the_smallest_limit_of_the_cases_spanning_each_pressure():
    summaries = {"A": _summary([3000, 2000], [400, 200]),
                 "B": _summary([2800, 2600], [350, 250])}
    env = {e["reservoir_pressure"]: (e["limit"], e["case"])
           for e in envelope(ranking(FIELD, summaries))}
    # A at 2,800 psi: 400 + (2800 - 3000) / (2000 - 3000) * (200 - 400) = 360 > B's 350
    assert env[2800] == (350, "B")
    # A at 2,600 psi: 320 > 250
    assert env[2600] == (250, "B")
    # 3,000 and 2,000 psi: only A spans them (B is never extrapolated)
    assert env[3000] == (400, "A") and env[2000] == (200, "A")


def test_inputs_that_matter_count_top_three_per_case():
    summaries = {"A": _summary([3000], [1], sens=[("ucs", 0.5), ("twc_ratio", 0.3),
                                                   ("biot", 0.1), ("sv_gradient", 0.05)]),
                 "B": _summary([3000], [1], sens=[("twc_ratio", 0.6), ("ucs", 0.2),
                                                   ("sv_gradient", 0.1), ("biot", 0.05)])}
    rows = {r["input"]: r for r in inputs_that_matter(summaries)}
    assert rows["ucs"]["cases_top"] == 2 and rows["twc_ratio"]["cases_top"] == 2
    assert rows["biot"]["cases_top"] == 1 and rows["sv_gradient"]["cases_top"] == 1
    assert abs(rows["ucs"]["mean_index"] - 0.35) < 1e-12
