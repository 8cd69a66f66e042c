"""Effective-strength (TWC-calibrated) sanding onset at a perforation tunnel or open-hole wall.

The practitioner's criterion of Willson et al. (2002): sanding starts when the largest effective
hoop stress at the cavity wall reaches an effective strength ``U = k * TWC``, TWC the thick-wall
cylinder collapse strength and k a calibration factor (about 3.1 for perforations in the original
calibration; 3.8-4.6 in perforation-collapse tests, Yeow et al. 2004; both as quoted by
Bellarby 2009, *Well Completion Design*, ch. 3).

Cylindrical cavity (tunnel or open hole), the shear stress along the axis ignored::

    s'_t,max = 3 s1 - s3 - p_w - A (p_r - p_w) - p_w = U
    =>  p_wc = (3 s1 - s3 - U - A p_r) / (2 - A)

with s1 >= s3 the in-plane principal far-field total stresses in the cavity frame
(docs/derivations.md, sec. 1 and 4). Spherical perforation tip in an equivalent hydrostatic stress s
(Lame's sphere: s_t = (3 s - p_w)/2 at the wall, inflow term as for the cylinder; derived)::

    p_wc = (3 s - 2 U - 2 A p_r) / (3 - 2 A)

Outcomes follow :mod:`risk.conventions`: the returned wall pressure is clipped to nothing; the
caller maps ``p_wc >= p_r`` to "fails with no drawdown" and ``p_wc < 0`` to "never"
(:func:`classify_wall_pressure`).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = ["cylinder_onset_wall_pressure", "tip_onset_wall_pressure", "classify_wall_pressure",
           "effective_strength"]


def effective_strength(*, twc: ArrayLike, factor: ArrayLike) -> Array:
    """U = k TWC [MPa] (Willson et al. 2002, SPE 78168)."""
    return np.asarray(twc, dtype=float) * np.asarray(factor, dtype=float)


def cylinder_onset_wall_pressure(
    *, sigma_1: ArrayLike, sigma_3: ArrayLike, strength: ArrayLike,
    reservoir_pressure: ArrayLike, poro_coefficient: ArrayLike,
) -> Array:
    """Wall pressure [MPa] at which the largest effective hoop stress of a cylinder reaches U.

    Parameters
    ----------
    sigma_1, sigma_3 : array_like
        In-plane principal far-field total stresses in the cavity frame [MPa].
    strength : array_like
        Effective strength U = k TWC [MPa].
    reservoir_pressure : array_like
        p_r [MPa].
    poro_coefficient : array_like
        A = alpha (1 - 2 nu)/(1 - nu) [1].

    Returns
    -------
    ndarray
        p_wc [MPa], not clipped to [0, p_r].

    References
    ----------
    Willson, S.M., Moschovidis, Z.A., Cameron, J.R. & Palmer, I.D. (2002) New model for
    predicting the rate of sand production, SPE/ISRM 78168; Bellarby (2009) ch. 3.
    """
    a = np.asarray(poro_coefficient, dtype=float)
    return ((3.0 * np.asarray(sigma_1) - np.asarray(sigma_3) - np.asarray(strength)
             - a * np.asarray(reservoir_pressure)) / (2.0 - a))


def tip_onset_wall_pressure(
    *, sigma: ArrayLike, strength: ArrayLike, reservoir_pressure: ArrayLike,
    poro_coefficient: ArrayLike,
) -> Array:
    """Wall pressure [MPa] at which the effective hoop stress at a spherical tip reaches U.

    ``sigma`` is the equivalent hydrostatic far-field total stress [MPa]: the caller uses
    :func:`risk.mechanics.tip.equivalent_mean_stress`, the full spherical-cavity concentration
    of a triaxial field (Goodier 1933; the mean stress for a hydrostatic one). Derived from
    Lame's sphere with the inflow term (docs/derivations.md,
    sec. 4).
    """
    a = np.asarray(poro_coefficient, dtype=float)
    return ((3.0 * np.asarray(sigma) - 2.0 * np.asarray(strength)
             - 2.0 * a * np.asarray(reservoir_pressure)) / (3.0 - 2.0 * a))


def classify_wall_pressure(wall_pressure: ArrayLike, reservoir_pressure: ArrayLike) -> Array:
    """Critical drawdown [MPa] from an unclipped critical wall pressure.

    ``p_wc >= p_r`` -> 0 (fails with no drawdown); ``p_wc < 0`` -> +inf (never within
    [0, p_r]); otherwise ``p_r - p_wc``.
    """
    pw = np.asarray(wall_pressure, dtype=float)
    pr = np.asarray(reservoir_pressure, dtype=float)
    return np.where(pw >= pr, 0.0, np.where(pw < 0.0, np.inf, pr - pw))
