"""The sand-free limit and the life-of-well phasing (risk/decision.py).

Independent references: numpy's inverted-CDF quantile (Hyndman & Fan 1996, definition 1) for
the limits, the Wilson (1927) interval from its formula, and a brute force over every shot set
written here from the definition of a gun phasing (shots at equal angular steps around the
tunnel axis, a whole number per turn: common practice).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from risk.decision import (
    Candidate,
    choose_phasing,
    phasing_candidates,
    sand_free,
    zero_limit_pressure,
)

RISK = 0.1


def quantile(x: np.ndarray, q: float) -> float:
    return float(np.quantile(x, q, method="inverted_cdf"))


def synthetic(n: int = 400, ndir: int = 6, stages: int = 3, seed: int = 1) -> dict:
    """Critical drawdowns that fall with depletion and differ by direction [MPa]."""
    rng = np.random.default_rng(seed)
    base = rng.normal(12.0, 3.0, size=(n, 1, 1))
    by_dir = rng.normal(0.0, 1.5, size=(1, ndir, 1)) + rng.normal(0.0, 1.0, size=(n, ndir, 1))
    depl = -np.arange(stages)[None, None, :] * 3.0
    twc = np.maximum(base + by_dir + depl, 0.0)
    tc = np.maximum(base + 2.0 + 0.8 * by_dir[:, ::-1] + 1.3 * depl, 0.0)
    tc[rng.random(n) < 0.05] = np.inf  # some samples never collapse
    return {"yield_onset": np.zeros_like(twc), "effective_strength_onset": twc,
            "tunnel_collapse": tc}


def test_limit_is_the_quantile_of_the_first_sand_mechanism():
    by_dir = synthetic()
    stages = [30.0, 27.0, 24.0]
    res = sand_free(by_dir, stages, RISK)
    assert res is not None and res.mechanisms == ("effective_strength_onset", "tunnel_collapse")
    for k, row in enumerate(res.stages):
        first = np.minimum(by_dir["effective_strength_onset"][:, :, k].min(axis=1),
                           by_dir["tunnel_collapse"][:, :, k].min(axis=1))
        assert row.limit == min(quantile(first, RISK), stages[k])
        own = {m: quantile(by_dir[m][:, :, k].min(axis=1), RISK)
               for m in ("effective_strength_onset", "tunnel_collapse")}
        assert row.governing == min(own, key=own.get)
        assert row.limit <= min(own.values())  # the earlier mechanism: never above either
    # yield onset (zero everywhere here) never governs the sand-free limit
    assert res.stages[0].limit > 0.0 and res.stages[-1].limit == 0.0
    assert res.zero.kind == "between" and res.zero.below == 24.0


def test_no_drawdown_probability_and_wilson_band():
    by_dir = synthetic()
    by_dir["effective_strength_onset"][:37, :, 0] = 0.0  # 37 samples sand with no drawdown
    res = sand_free(by_dir, [30.0, 27.0, 24.0], RISK)
    assert res is not None
    row = res.stages[0]
    k, n = 37 + int(np.sum(by_dir["tunnel_collapse"][37:, :, 0].min(axis=1) <= 0)), 400
    assert row.p_no_drawdown == pytest.approx(k / n)
    z = 1.959963984540054  # two-sided 95% normal quantile (tables)
    centre = (k + z * z / 2) / (n + z * z)
    half = z / (n + z * z) * math.sqrt(k * (n - k) / n + z * z / 4)
    assert row.p_no_drawdown_band == pytest.approx((centre - half, centre + half))


def test_no_sand_mechanism_gives_no_limit():
    by_dir = synthetic()
    assert sand_free({"yield_onset": by_dir["yield_onset"]}, [30.0, 27.0, 24.0], RISK) is None


def test_operating_points_at_stages_only():
    by_dir = synthetic()
    res = sand_free(by_dir, [30.0, 27.0, 24.0], RISK,
                    operating_points=[(27.0, 20.0), (25.0, 20.0)])
    assert res is not None
    first = np.minimum(by_dir["effective_strength_onset"][:, :, 1].min(axis=1),
                       by_dir["tunnel_collapse"][:, :, 1].min(axis=1))
    at = res.points[0]
    assert at.stage == 1 and at.probability == pytest.approx(np.mean(first <= 7.0))
    assert at.beyond_limit == (7.0 > res.stages[1].limit)
    assert res.points[1].probability is None and res.points[1].stage is None


def test_zero_limit_pressure():
    # derived: P0 crosses the accepted risk 0.1 a quarter of the way from 0.05 to 0.25
    z = zero_limit_pressure([30.0, 26.0, 22.0], [4.0, 0.0, 0.0], [0.05, 0.25, 0.6], 0.1)
    assert z.kind == "between" and (z.above, z.below) == (30.0, 26.0)
    assert z.estimate == pytest.approx(29.0)
    assert zero_limit_pressure([30.0, 26.0], [0.0, 0.0], [0.3, 0.5], 0.1).kind == "first-stage"
    never = zero_limit_pressure([26.0, 30.0], [2.0, 3.0], [0.0, 0.0], 0.1)
    assert never.kind == "never" and never.above == 26.0


# --------------------------------------------------------------------------- phasing ----

def brute_sets(angles: list[float], phasings: list[float]) -> list[tuple[float | None, tuple]]:
    """Every shot set from the definition: for each phasing p dividing 360 and each shot
    direction as the first shot, the shots o, o + p, ... (360/p of them; one for p = 0)."""
    out: list[tuple[float | None, tuple]] = []
    seen: set = set()
    for p in phasings:
        shots = 1 if p == 0 else int(round(360 / p))
        if p and shots * p != 360:
            continue
        for o in angles:
            want = [(o + i * p) % 360 for i in range(shots)]
            if all(any(abs(((w - a + 180) % 360) - 180) < 1e-9 for a in angles)
                   for w in want):
                idx = tuple(sorted({min(range(len(angles)), key=lambda j, w=w: abs(
                    ((w - angles[j] + 180) % 360) - 180)) for w in want}))
                if idx not in seen:
                    seen.add(idx)
                    out.append((p, idx))
    if tuple(range(len(angles))) not in seen:
        out.append((None, tuple(range(len(angles)))))
    return out


@pytest.mark.parametrize("seed", range(6))
def test_life_of_well_phasing_equals_brute_force(seed):
    angles = [0.0, 60.0, 120.0, 180.0, 240.0, 300.0]
    by_dir = synthetic(n=300, seed=seed)
    stages = [30.0, 27.0, 24.0]
    points = [(27.0, 21.0)]
    choice = choose_phasing(by_dir, angles, stages, RISK, operating_points=points)
    assert choice is not None
    best = None
    for i, (p, idx) in enumerate(brute_sets(angles, [0, 60, 90, 120, 180])):
        first = np.minimum(by_dir["effective_strength_onset"][:, list(idx), :].min(axis=1),
                           by_dir["tunnel_collapse"][:, list(idx), :].min(axis=1))
        limits = [min(quantile(first[:, k], RISK), stages[k]) for k in range(3)]
        p_mean = float(np.mean(first[:, 1] <= 6.0))
        key = (round(min(limits), 9), -round(p_mean, 9), round(sum(limits), 9), len(idx), -i)
        if best is None or key > best[0]:
            best = (key, p, idx, limits)
    assert best is not None
    assert (choice.chosen.phasing, choice.chosen.directions) == (best[1], best[2])
    assert choice.limits == pytest.approx(best[3])


def test_candidates_of_a_sixty_degree_gun():
    cands = phasing_candidates([0, 60, 120, 180, 240, 300])
    by = {}
    for c in cands:
        by.setdefault(c.phasing, []).append(c.directions)
    assert by[0.0] == [(i,) for i in range(6)]
    assert by[60.0] == [tuple(range(6))]
    assert by[120.0] == [(0, 2, 4), (1, 3, 5)]
    assert by[180.0] == [(0, 3), (1, 4), (2, 5)]
    assert 90.0 not in by and None not in by  # 90 cannot be formed; the full set is 60 degrees


def test_equal_directions_tie_and_more_shots_win():
    # every direction alike: every set scores the same limit, so the rule falls through to
    # the number of shot directions and reports the others as tied
    rng = np.random.default_rng(3)
    col = rng.normal(10, 2, size=(500, 1, 2))
    by_dir = {"effective_strength_onset": np.repeat(col, 4, axis=1)}
    choice = choose_phasing(by_dir, [0, 90, 180, 270], [30.0, 25.0], RISK)
    assert choice is not None
    assert choice.chosen == Candidate(90.0, 0.0, (0, 1, 2, 3))
    assert len(set(choice.limits)) <= 2 and choice.tied == ()
    singles = [c for c, _ in choice.by_phasing if c.phasing == 0.0]
    assert singles and singles[0].orientation == 0.0  # ties: the first orientation
    assert choose_phasing(by_dir, [0.0], [30.0], RISK) is None
    assert choose_phasing({"yield_onset": col}, [0, 180], [30.0], RISK) is None
    # brute-force over every subset confirms that fewer directions never score worse
    for r in range(1, 5):
        for sub in itertools.combinations(range(4), r):
            assert np.all(by_dir["effective_strength_onset"][:, list(sub), :].min(axis=1)
                          >= by_dir["effective_strength_onset"].min(axis=1))


def test_solved_limits_replace_the_sampled_quantile_where_given():
    # At a small accepted risk the sampled quantile is replaced by the limit the reliability
    # methods solved (risk.small_risk), capped at p_r, its lower bound kept at or below it and
    # the method named; stages without a solved limit keep the sampled quantile (the rule of
    # the module docstring, checked against the sampled answer computed independently here).
    by_dir = synthetic()
    stages = [30.0, 27.0, 24.0]
    base = sand_free(by_dir, stages, RISK)
    res = sand_free(by_dir, stages, RISK, solved={0: (0.25, 1.5, "importance sampling"),
                                                  1: (99.0, None, "SORM")},
                    solved_own={("tunnel_collapse", 0): 0.5})
    assert base is not None and res is not None
    assert (res.stages[0].limit, res.stages[0].lower, res.stages[0].method) == (
        0.25, 0.25, "importance sampling")
    # never above a mechanism's own limit: P(min(D_1, D_2) <= D) >= P(D_i <= D)
    assert res.stages[1].limit == min(27.0, *res.stages[1].by_mechanism.values())
    assert (res.stages[1].lower, res.stages[1].method) == (None, "SORM")
    res2 = sand_free(by_dir, stages, RISK, solved={0: (9.0, None, "FORM")},
                     solved_own={("tunnel_collapse", 0): 0.5})
    assert res2 is not None and res2.stages[0].limit == 0.5
    assert res.stages[2].limit == base.stages[2].limit and res.stages[2].method == "sampling"
    assert res.stages[0].by_mechanism["tunnel_collapse"] == 0.5
    assert res.stages[0].governing == "tunnel_collapse"
    assert all(r.method == "sampling" for r in base.stages)
