"""Pore collapse (onset of compaction) under depletion.

Permanent compaction starts when the mean effective stress reaches the pore-collapse pressure
P* measured in hydrostatic tests (the cap of the yield surface; Fjaer et al. 2008, sec. 2.6 and
ch. 12). Terzaghi effective stress, compression positive.

Far field, with the horizontal stresses on the depletion path S_h(p_r) = S_h0 - g (p0 - p_r)
and S_v constant (docs/derivations.md, sec. 2)::

    p'(p_r) = (S_v + S_H0 + S_h0 - 2 g (p0 - p_r)) / 3 - p_r
    p'(p_rc) = P*  =>  p_rc = ((S_v + S_H0 + S_h0 - 2 g p0)/3 - P*) / (1 - 2 g / 3)

At a cavity wall at zero drawdown (p_w = p_r, radial effective stress zero) the largest mean
effective stress around the wall is (derived from the wall stresses of
:func:`risk.mechanics.stresses.wall_stresses`)::

    p'_wall = (I1 + 2 (1 + nu) sqrt((sxx - syy)^2 + 4 sxy^2) - 3 p_r) / 3

with I1 the trace of the far-field total stress in the cavity frame.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from risk.mechanics.stresses import LocalStress

Array = NDArray[np.float64]

__all__ = ["far_field_mean_effective", "far_field_collapse_pressure", "wall_mean_effective"]


def far_field_mean_effective(
    *, sv: ArrayLike, shmax0: ArrayLike, shmin0: ArrayLike, p0: ArrayLike,
    reservoir_pressure: ArrayLike, path: ArrayLike,
) -> Array:
    """Far-field mean effective stress p' [MPa] at reservoir pressure p_r [MPa]."""
    g = np.asarray(path, dtype=float)
    dp = np.asarray(p0, dtype=float) - np.asarray(reservoir_pressure, dtype=float)
    total = (np.asarray(sv) + np.asarray(shmax0) + np.asarray(shmin0) - 2.0 * g * dp) / 3.0
    return total - np.asarray(reservoir_pressure, dtype=float)


def far_field_collapse_pressure(
    *, sv: ArrayLike, shmax0: ArrayLike, shmin0: ArrayLike, p0: ArrayLike, path: ArrayLike,
    collapse_pressure: ArrayLike, path_shmax: ArrayLike | None = None,
) -> Array:
    """Reservoir pressure p_rc [MPa] at which the far-field mean effective stress reaches P*.

    Depletion below p_rc compacts the rock. A value at or above p0 means the rock is already
    at or past P* initially; a negative value means no depletion to zero pressure reaches it.

    Parameters
    ----------
    sv, shmax0, shmin0 : array_like
        Initial total stresses [MPa].
    p0 : array_like
        Initial pore pressure [MPa].
    path : array_like
        Depletion stress path g = dSh/dp [1], in [0, 1].
    collapse_pressure : array_like
        Pore-collapse pressure P* (mean effective stress) [MPa].
    path_shmax : array_like, optional
        dSH/dp [1] when it differs from ``path``; the sum of the two replaces 2 g above.
    """
    g = np.asarray(path, dtype=float)
    g_sum = g + (g if path_shmax is None else np.asarray(path_shmax, dtype=float))
    num = ((np.asarray(sv) + np.asarray(shmax0) + np.asarray(shmin0)
            - g_sum * np.asarray(p0)) / 3.0 - np.asarray(collapse_pressure))
    return num / (1.0 - g_sum / 3.0)


def wall_mean_effective(local: LocalStress, *, reservoir_pressure: ArrayLike,
                        poisson_ratio: ArrayLike) -> Array:
    """Largest mean effective stress around a cavity wall at zero drawdown [MPa]."""
    i1 = local.sxx + local.syy + local.szz
    amp = np.hypot(local.sxx - local.syy, 2.0 * local.sxy)
    nu = np.asarray(poisson_ratio, dtype=float)
    return (i1 + 2.0 * (1.0 + nu) * amp - 3.0 * np.asarray(reservoir_pressure)) / 3.0
