"""The memo's calibration section, the VoI table and the two figures, from a results dict."""

from __future__ import annotations

from typing import Any

from matplotlib.figure import Figure

from risk.report.figures.calibration import plot_calibration, plot_value_of_information
from risk.report.memo.calibration import calibration_context


def _stage(p_r: float, lim: float) -> dict[str, Any]:
    return {"reservoir_pressure": p_r, "drawdown_limit": lim,
            "critical_wall_pressure": {"p10": p_r - lim},
            "failure_probability": [{"drawdown": 0.0, "p": 0.0, "low": 0.0, "high": 0.01},
                                    {"drawdown": 1000.0, "p": 0.2, "low": 0.1, "high": 0.3}]}


def _results() -> dict[str, Any]:
    risk = {"mechanisms": {"effective_strength_onset": [_stage(3000, 900)]},
            "sand_free": [{"reservoir_pressure": 3000, "drawdown_limit": 900,
                           "p_no_drawdown": 0.01}]}
    post = {"mechanisms": {"effective_strength_onset": [_stage(3000, 800)]},
            "sand_free": [{"reservoir_pressure": 3000, "drawdown_limit": 800,
                           "p_no_drawdown": 0.02}]}
    return {
        "units": {"pressure": "psi"},
        "calibration": {
            "method": "reweight", "model_error_log_sd": 0.3, "effective_sample_size": 812.0,
            "posterior_rows": 8192, "mcmc": None, "warnings": ["history 'A' conflicts"],
            "note": "modelling note",
            "inputs": [{"name": "twc_factor", "unit": "-",
                        "prior": {"p10": 2.5, "p50": 3.1, "p90": 3.8},
                        "posterior": {"p10": 2.2, "p50": 2.7, "p90": 3.3},
                        "histogram": {"edges": [2.0, 3.0, 4.0], "prior": [0.5, 0.5],
                                      "posterior": [0.8, 0.2]}}],
            "observations": [{"name": "A", "source": "", "outcome": "onset_between",
                              "reservoir_pressure": 3000, "drawdown": None,
                              "drawdown_low": 1400, "drawdown_high": 1900, "weight": 1.0,
                              "overridden": ["depth"], "prior_predictive": 0.04,
                              "posterior_predictive": 0.28, "reproduced": True,
                              "conflict": False}],
            "prior": risk, "posterior": post},
        "value_of_information": {
            "under": "posterior",
            "rows": [{"name": "ucs (perfect)", "input": "ucs", "perfect": True, "error": None,
                      "error_unit": None, "relative_error": None,
                      "stages": [{"reservoir_pressure": 3000, "gain": 110.8,
                                  "mc_error": 61.2}]},
                     {"name": "core plugs", "input": "ucs", "perfect": False, "error": None,
                      "error_unit": None, "relative_error": 0.06,
                      "stages": [{"reservoir_pressure": 3000, "gain": -5.0,
                                  "mc_error": 20.0}]}]},
    }


def test_context_states_units_method_and_rows() -> None:
    ctx = calibration_context(_results())
    assert ctx is not None
    assert ctx["observations"][0]["what"] == "onset between 1,400 and 1,900 psi"
    assert ctx["observations"][0]["verdict"] == "reproduced"
    assert "effective sample size 812" in ctx["how"]
    assert ctx["limits"] == [{"p_r": "3,000 psi", "prior": "900 psi", "posterior": "800 psi"}]
    assert ctx["voi"]["rows"][0]["gains"] == ["111 ± 61"]
    assert ctx["voi"]["rows"][1]["gains"] == ["-5 ± 20"]
    assert ctx["voi"]["rows"][1]["error"] == "6%"
    assert ctx["warnings"] == ["history 'A' conflicts"]
    assert ctx["voi"]["rows"][0]["name"] == "UCS, measured perfectly"
    # 110.8 is within two errors (2 x 61.2) of zero and -5 is no gain: nothing recommended
    assert ctx["voi"]["recommendation"].startswith("No measurement is expected")


def _clear_gain() -> dict[str, Any]:
    res = _results()
    res["value_of_information"]["rows"][0]["stages"][0]["mc_error"] = 40.0  # 110.8 > 2 x 40
    return res


def test_measure_next_is_the_largest_clear_gain() -> None:
    # what to measure next comes from the value of information: the largest first-stage gain
    # distinguished from zero by two Monte-Carlo errors, named by the input's label
    ctx = calibration_context(_clear_gain())
    assert ctx is not None
    assert ctx["voi"]["recommendation"].startswith("Measure next: UCS, measured perfectly.")
    assert "111 psi" in ctx["voi"]["recommendation"]


def test_memo_replaces_measure_next_with_the_value_of_information() -> None:
    # the main memo's "what to measure next" is the value of information when it was computed,
    # the variance-based sentence otherwise; the Sobol/Shapley tables stay in both cases
    from risk.report.memo.render import render_html

    res = _clear_gain()
    res["sensitivity"] = {"effective_strength_onset": [
        {"input": "ucs", "first": 0.6, "total": 0.7, "shapley": 0.65},
        {"input": "twc_factor", "first": 0.2, "total": 0.3, "shapley": 0.35}]}
    res["mechanisms"] = {"effective_strength_onset": {"name": "Effective-strength onset"}}
    with_voi = render_html(res, {})
    assert "Measure next: UCS, measured perfectly." in with_voi
    assert "measure UCS next" not in with_voi
    assert "ranked by their Shapley effect" in with_voi
    del res["value_of_information"]
    without = render_html(res, {})
    assert "Measure next:" not in without
    assert "measure UCS next" in without
    assert "ranked by their Shapley effect" in without


def test_absent_without_history() -> None:
    assert calibration_context({"units": {"pressure": "psi"}}) is None
    assert plot_calibration({}) is None
    assert plot_value_of_information({}) is None


def test_figures_draw_with_units_on_every_axis() -> None:
    # the project's rule (common practice): every labelled axis names its unit in brackets
    import re

    for fig in (plot_calibration(_results()), plot_value_of_information(_results())):
        assert isinstance(fig, Figure)
        labels = [lab for ax in fig.axes for lab in (ax.get_xlabel(), ax.get_ylabel()) if lab]
        assert labels
        assert all(re.search(r"\[[^\]]+\]", lab) for lab in labels), labels


def test_figures_are_numbered_in_the_order_the_memo_shows_them() -> None:
    # the value-of-information chart stands in the sensitivity section before the Sobol/Shapley
    # charts, the calibration chart in its own later section: numbers must read 1, 2, 3, ...
    import re

    from risk.report.memo.render import render_html

    res = _clear_gain()
    res["sensitivity"] = {"effective_strength_onset": [
        {"input": "ucs", "first": 0.6, "total": 0.7, "shapley": 0.65}]}
    res["mechanisms"] = {"effective_strength_onset": {"name": "Effective-strength onset"}}
    png = b"\x89PNG\r\n\x1a\n"
    html = render_html(res, dict.fromkeys(("tornado", "calibration", "sensitivity",
                                           "value_of_information"), png))
    shown = [int(n) for n in re.findall(r"Figure (\d+)\.", html)]
    assert shown and shown == sorted(shown), shown
