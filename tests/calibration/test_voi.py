"""Value of information on a linear-Gaussian model whose conditional quantiles have a closed
form."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from scipy import stats

from risk.calibration.voi import (
    bootstrap_multipliers,
    simulate_measurement,
    value_of_information,
)

A, B, C, P = 10.0, 2.0, 1.0, 0.1


def _exact(err: float) -> float:
    # D = A + B X + C W with X, W ~ N(0, 1), Y = X + err N(0, 1): D | Y is normal with mean
    # A + B Y/(1 + err^2) and variance B^2 err^2/(1 + err^2) + C^2 (conditional normal,
    # derived), so E_Y[q_p(D | Y)] - q_p(D) = z_p (sqrt(B^2 err^2/(1+err^2) + C^2) - sqrt(B^2+C^2))
    zp = stats.norm.ppf(P)
    return float(zp * (math.sqrt(B * B * err * err / (1 + err * err) + C * C)
                       - math.sqrt(B * B + C * C)))


@pytest.mark.parametrize("err", [0.0, 0.5, 1.0])
def test_linear_gaussian_within_reported_error(err: float) -> None:
    rng = np.random.default_rng(21)
    n = 20_000
    x, w = rng.standard_normal(n), rng.standard_normal(n)
    signal = simulate_measurement(x, error=err, rng=rng)
    est: Any = value_of_information(signal=signal, output=A + B * x + C * w, accepted_risk=P,
                                    rng=rng)
    assert abs(est.value - _exact(err)) < 3 * est.error
    # the paired error is a few percent of the gain (the unpaired one was about 0.1 of it)
    assert est.error < 0.03 * _exact(0.0)


def test_reported_error_is_the_spread_over_independent_runs() -> None:
    # 20 independent runs: the standard deviation of the estimates over the mean reported
    # error; with 19 degrees of freedom the ratio of a sample sd to the true one lies in
    # [0.69, 1.31] with probability 0.95 (chi-square, derived: sqrt(chi2(0.025/0.975, 19)/19))
    # widened to [0.6, 1.4] for the error's own bootstrap noise (64 replicates: ~9%)
    vals, errs = [], []
    for seed in range(20):
        rng = np.random.default_rng(300 + seed)
        x, w = rng.standard_normal(5000), rng.standard_normal(5000)
        signal = simulate_measurement(x, error=0.5, rng=rng)
        est: Any = value_of_information(signal=signal, output=A + B * x + C * w,
                                        accepted_risk=P, rng=rng)
        vals.append(est.value)
        errs.append(est.error)
    ratio = float(np.std(vals, ddof=1) / np.mean(errs))
    assert 0.6 < ratio < 1.4


def test_irrelevant_input_has_no_value() -> None:
    # the limit does not depend on x: the gain is 0 (derived); the paired error is small, far
    # below the error of today's limit alone (which the unpaired error exceeded)
    from risk.calibration.voi import limit_today

    rng = np.random.default_rng(22)
    n = 20_000
    x, w = rng.standard_normal(n), rng.standard_normal(n)
    g = bootstrap_multipliers(n, rng=rng)
    est: Any = value_of_information(signal=x, output=A + C * w, accepted_risk=P, boot=g)
    (today,) = limit_today(output=A + C * w, accepted_risk=P, boot=g)
    assert abs(est.value) < 3 * est.error
    assert est.error < 0.6 * today.error  # the unpaired error was at least today.error
    # and small against the spread of the output: below 1% of its sd C (derived: 0 exactly)
    assert est.error < 0.01 * C


def test_capped_output_and_weights() -> None:
    # a cap above every value changes nothing; equal weights equal no weights (derived)
    rng = np.random.default_rng(23)
    x, w = rng.standard_normal(4000), rng.standard_normal(4000)
    y = A + B * x + C * w
    a: Any = value_of_information(signal=x, output=y, accepted_risk=P,
                                  rng=np.random.default_rng(7))
    b: Any = value_of_information(signal=x, output=y, accepted_risk=P, cap=1e9,
                                  weights=np.full(4000, 3.0), rng=np.random.default_rng(7))
    assert a.value == pytest.approx(b.value, rel=1e-9, abs=1e-12)
    assert a.error == pytest.approx(b.error, rel=1e-9)
    assert a.limit_today == float(np.sort(y)[int(0.1 * 4000) - 1])


def test_bad_arguments_are_value_errors() -> None:
    rng = np.random.default_rng(0)
    with pytest.raises(ValueError):
        value_of_information(signal=np.ones(3), output=np.ones(4), accepted_risk=0.1, rng=rng)
    with pytest.raises(ValueError):  # neither rng nor bootstrap multipliers
        value_of_information(signal=np.ones(40), output=np.ones(40), accepted_risk=0.1)
    with pytest.raises(ValueError):
        simulate_measurement(np.ones(3), error=1.0, relative_error=0.1, rng=rng)


def test_stages_at_once_equal_one_at_a_time() -> None:
    # a 2-D output is its columns computed one by one (derived)
    rng = np.random.default_rng(24)
    x, w = rng.standard_normal(3000), rng.standard_normal(3000)
    y = np.column_stack([A + B * x + C * w, np.minimum(A + B * x + C * w, 11.0)])
    g = bootstrap_multipliers(3000, rng=rng)
    both: Any = value_of_information(signal=x, output=y, accepted_risk=P, cap=[np.inf, 11.0],
                                     boot=g)
    one: Any = value_of_information(signal=x, output=y[:, 1], accepted_risk=P, cap=11.0, boot=g)
    assert both[1] == one


def test_shared_today_changes_nothing() -> None:
    # passing today's limit computed apart gives the same estimate (derived)
    from risk.calibration.voi import limit_today

    rng = np.random.default_rng(25)
    x, w = rng.standard_normal(3000), rng.standard_normal(3000)
    y = A + B * x + C * w
    g = bootstrap_multipliers(3000, rng=rng)
    a: Any = value_of_information(signal=x, output=y, accepted_risk=P, boot=g)
    b: Any = value_of_information(signal=x, output=y, accepted_risk=P, boot=g,
                                  today=limit_today(output=y, accepted_risk=P, boot=g))
    assert a == b
