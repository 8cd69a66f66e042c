"""Value of information on a linear-Gaussian model whose conditional quantiles have a closed
form."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from scipy import stats

from risk.calibration.voi import simulate_measurement, value_of_information

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
    est: Any = value_of_information(signal=signal, output=A + B * x + C * w, accepted_risk=P)
    assert abs(est.value - _exact(err)) < 4 * est.error
    assert est.error < 0.1 * _exact(0.0)  # the error is small enough to mean something


def test_irrelevant_input_has_no_value() -> None:
    rng = np.random.default_rng(22)
    n = 20_000
    x, w = rng.standard_normal(n), rng.standard_normal(n)
    est: Any = value_of_information(signal=x, output=A + C * w, accepted_risk=P)
    assert abs(est.value) < 4 * est.error


def test_capped_output_and_weights() -> None:
    # a cap above every value changes nothing; equal weights equal no weights (derived)
    rng = np.random.default_rng(23)
    x, w = rng.standard_normal(4000), rng.standard_normal(4000)
    y = A + B * x + C * w
    a: Any = value_of_information(signal=x, output=y, accepted_risk=P)
    b: Any = value_of_information(signal=x, output=y, accepted_risk=P, cap=1e9,
                             weights=np.full(4000, 3.0))
    assert a.value == pytest.approx(b.value, rel=1e-9, abs=1e-12)
    assert a.error == pytest.approx(b.error, rel=1e-9)
    assert a.limit_today == float(np.sort(y)[int(0.1 * 4000) - 1])


def test_bad_arguments_are_value_errors() -> None:
    rng = np.random.default_rng(0)
    with pytest.raises(ValueError):
        value_of_information(signal=np.ones(3), output=np.ones(4), accepted_risk=0.1)
    with pytest.raises(ValueError):
        simulate_measurement(np.ones(3), error=1.0, relative_error=0.1, rng=rng)


def test_stages_at_once_equal_one_at_a_time() -> None:
    # a 2-D output is its columns computed one by one (derived)
    rng = np.random.default_rng(24)
    x, w = rng.standard_normal(3000), rng.standard_normal(3000)
    y = np.column_stack([A + B * x + C * w, np.minimum(A + B * x + C * w, 11.0)])
    both: Any = value_of_information(signal=x, output=y, accepted_risk=P, cap=[np.inf, 11.0])
    one: Any = value_of_information(signal=x, output=y[:, 1], accepted_risk=P, cap=11.0)
    assert both[1] == one


def test_shared_today_changes_nothing() -> None:
    # passing today's limit computed apart gives the same estimate (derived)
    from risk.calibration.voi import limit_today

    rng = np.random.default_rng(25)
    x, w = rng.standard_normal(3000), rng.standard_normal(3000)
    y = A + B * x + C * w
    a: Any = value_of_information(signal=x, output=y, accepted_risk=P)
    b: Any = value_of_information(signal=x, output=y, accepted_risk=P,
                                  today=limit_today(output=y, accepted_risk=P))
    assert a == b
