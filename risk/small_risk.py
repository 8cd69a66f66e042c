"""Small accepted risks: FORM, SORM and importance sampling at the drawdown limit.

Plain sampling needs about (1 - p)/(p 0.1^2) runs to resolve a probability p to 10% (66,000 at
p = 1.5e-3; derived, docs/derivations.md, sec. 6). For accepted risks of 1% or less the
orchestrator therefore also computes, for each mechanism and stage, the probability of failure
at the sampled drawdown limit D* by

- FORM (improved HL-RF, :func:`risk.reliability.form`) on the limit state
  ``g(xi) = min(D_c(x(xi)), p_r) - D*`` in the independent standard-normal space behind the
  copula (``g <= 0``: failure at D*),
- SORM (Breitung 1984) from the curvatures at the design point, and
- importance sampling centred at the design point (an unbiased check with its own error),

and reports a diagnostic when they disagree with each other or with sampling. The critical
drawdown has plateaus (0 = "fails with no drawdown", p_r = "never"); where the design point sits
on one of them FORM is meaningless, and the diagnostic says so.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.typing import NDArray

from risk.reliability import compare, form, importance_sampling, sorm_breitung
from risk.uncertainty import JointModel, input_columns, normals_to_inputs

Array = NDArray[np.float64]
Model = Callable[[dict[str, Array]], Array]

__all__ = ["SMALL_RISK", "reliability_at_limit"]

SMALL_RISK = 0.01  #: accepted risks at or below this get the reliability methods
IS_SAMPLES = 4096


def reliability_at_limit(
    model: Model, joint: JointModel, *, reservoir_pressure: float, drawdown: float,
    sampling_p: float, n_samples: int, rng: np.random.Generator,
    start: Array | None = None,
) -> dict[str, Any]:
    """FORM, SORM and importance sampling of P(D_c <= drawdown) for one mechanism and stage.

    Parameters
    ----------
    model : callable(columns) -> ndarray (n,)
        Well-level critical drawdown [MPa] of the mechanism at the stage, for input columns
        [internal units].
    joint : JointModel
        The copula model of the uncertain inputs.
    reservoir_pressure : float
        p_r of the stage [MPa] (caps "never" so that g stays finite).
    drawdown : float
        D* [MPa], the sampled drawdown limit.
    sampling_p : float
        The sampled probability at D* [-], for the comparison.
    n_samples : int
        Size of the sampling run [-].
    rng : numpy.random.Generator
        For importance sampling.
    start : ndarray (d,), optional
        Starting point of FORM in the standard-normal space, e.g. the most probable failing
        sample of the run (the median point may sit on a plateau where g has no gradient).

    Returns
    -------
    dict (internal units) with beta, form_p, sorm_p, is_p, is_cov, importance (input -> alpha^2),
    model_runs and a diagnostic text or None.
    """
    d = joint.d
    if drawdown <= 0.0 or drawdown >= reservoir_pressure:
        return {
            "drawdown": drawdown, "sampling_p": sampling_p, "beta": math.nan,
            "form_p": math.nan, "sorm_p": math.nan, "is_p": math.nan, "is_cov": math.nan,
            "converged": False, "importance": {}, "model_runs": 0,
            "diagnostic": ("The drawdown limit lies on a plateau of the critical drawdown ("
                           + ("failure with no drawdown" if drawdown <= 0.0 else
                              "no failure up to the full reservoir pressure")
                           + "): FORM, SORM and importance sampling were not run; the sampled "
                           "value stands."),
        }

    def g(xi: Array) -> Array:
        x = normals_to_inputs(joint, xi)
        dc = model(input_columns(joint, x))
        return np.minimum(dc, reservoir_pressure) - drawdown

    fr = form(g, d, u0=start)
    if not np.all(np.isfinite(fr.design_point)) or not np.any(fr.gradient != 0.0):
        return {
            "drawdown": drawdown, "sampling_p": sampling_p, "beta": fr.beta, "form_p": fr.pf,
            "sorm_p": math.nan, "is_p": math.nan, "is_cov": math.nan, "converged": False,
            "importance": {}, "model_runs": int(fr.n_evals),
            "diagnostic": "FORM found no gradient at its design point (a plateau of the "
                          "critical drawdown); the sampled value stands.",
        }
    so = sorm_breitung(g, fr)
    is_p, is_cov = importance_sampling(g, fr.design_point, IS_SAMPLES, rng)
    notes = compare(fr, so.pf, is_p, is_cov)
    # sampling vs importance sampling: binomial standard error of the sampled estimate
    se = math.sqrt(max(sampling_p * (1 - sampling_p), 1e-300) / max(n_samples, 1))
    if is_p > 0 and math.isfinite(is_cov):
        gap = abs(sampling_p - is_p)
        allowed = 3.0 * math.hypot(se, is_cov * is_p)
        if gap > allowed:
            extra = (f"Sampling ({sampling_p:.3g}) and importance sampling ({is_p:.3g}) differ "
                     f"by more than three combined standard errors.")
            notes = extra if notes is None else notes + " " + extra
    return {
        "drawdown": drawdown,
        "sampling_p": sampling_p,
        "beta": fr.beta,
        "form_p": fr.pf,
        "sorm_p": so.pf,
        "is_p": is_p,
        "is_cov": is_cov,
        "converged": fr.converged,
        "importance": {n: float(v) for n, v in zip(joint.names, fr.importance, strict=True)},
        "model_runs": int(fr.n_evals + so.n_evals + IS_SAMPLES),
        "diagnostic": notes,
    }
