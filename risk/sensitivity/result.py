"""The result container of :mod:`risk.sensitivity`: SensitivityResult."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike

from risk.sensitivity.common import Array

# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------


def _frozen(a: ArrayLike) -> Array:
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


_EMPTY = _frozen(np.empty(0))


@dataclass(frozen=True)
class SensitivityResult:
    """Sensitivity indices of one model output [1] (fractions of the output variance).

    With independent inputs, ``first`` and ``total`` are the Sobol first-order and total
    indices, ``full_first == first`` and ``independent_total == total``. With correlated inputs
    ``first`` is the full first-order index ``Var(E[Y|x_j]) / Var(Y)`` (the effect of ``x_j``
    with everything correlated with it) and ``total`` the independent total index
    ``E[Var(Y|x_-j)] / Var(Y)`` (the part only ``x_j`` explains); Shapley effects (they add up
    to one) give the ranking and usually lie between the two. The ``*_low``/``*_high`` bounds
    are intervals at ``confidence``: for the expansion, bootstrap percentile intervals widened
    by what the surrogate's error can move an index (``surrogate_error``; docs/derivations.md,
    sec. 13); for Monte-Carlo methods, the estimator's sampling interval. ``loo_error`` is the
    corrected leave-one-out error of the fit, ``validation_error`` its relative mean-square
    error on held-out runs (NaN when none were held out). Group indices are defined the
    same way for blocks of inputs (e.g. the stresses); a group's Shapley effect is the sum of
    its members'.
    """

    names: tuple[str, ...]
    first: Array
    total: Array
    first_low: Array
    first_high: Array
    total_low: Array
    total_high: Array
    shapley: Array
    shapley_low: Array
    shapley_high: Array
    full_first: Array
    independent_total: Array
    loo_error: float
    method: str
    n_runs: int
    output: int = 0
    mean: float = math.nan
    variance: float = math.nan
    confidence: float = 0.95
    n_bootstrap: int = 0
    n_terms: int = 0
    degree: int = 0
    correlated: bool = False
    group_names: tuple[str, ...] = ()
    group_first: Array = field(default_factory=lambda: _EMPTY)
    group_total: Array = field(default_factory=lambda: _EMPTY)
    group_shapley: Array = field(default_factory=lambda: _EMPTY)
    validation_error: float = math.nan

    @property
    def surrogate_error(self) -> float:
        """The expansion's relative mean-square error as measured [1]: on held-out runs when
        there were any, else the corrected leave-one-out error."""
        return (self.validation_error if math.isfinite(self.validation_error)
                or self.validation_error == math.inf else self.loo_error)

    @property
    def ranking(self) -> tuple[str, ...]:
        """Input names, most influential first (by Shapley effect, else by total index).

        Raises ValueError for given-data first-order indices alone: with correlated inputs they
        measure association (an input merely correlated with an influential one scores high),
        not an input's own effect, so they never rank what to measure.
        """
        if np.all(np.isfinite(self.shapley)):
            key = self.shapley
        elif np.all(np.isfinite(self.total)):
            key = self.total
        else:
            raise ValueError(f"no Shapley effects or total indices to rank by (method "
                             f"{self.method!r}: first-order indices measure association)")
        return tuple(self.names[i] for i in np.argsort(-key, kind="stable"))
