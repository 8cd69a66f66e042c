"""True vertical depth of log depths (measured depth) from a directional survey.

Minimum curvature: between two survey stations the well path is the circular arc tangent to
both station directions. The dogleg angle is
``beta = 2 asin(sqrt(sin^2((I2 - I1)/2) + sin I1 sin I2 sin^2((A2 - A1)/2)))`` (the form that
stays accurate for small doglegs), and a point a fraction ``f`` along the arc of length
``dMD`` sits at ``P1 + R (sin(f beta) t1 + (1 - cos(f beta)) n)``, ``R = dMD / beta``,
``n = (t2 - cos(beta) t1) / sin(beta)``; at ``f = 1`` its vertical part is the familiar
``dMD/2 (cos I1 + cos I2) RF`` with ``RF = 2/beta tan(beta/2)``. A straight segment
(``beta = 0``) is ``P1 + s t1``.

References
----------
Sawaryn, S.J., Thorogood, J.L. (2005). A compendium of directional calculations based on the
minimum curvature method. SPE Drilling & Completion 20(1), 24-36 (SPE 84246), eqs. for the
dogleg, the station increments and the interpolation along the arc (from memory).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = ["tangent", "dogleg", "minimum_curvature_tvd"]


def tangent(*, inclination: ArrayLike, azimuth: ArrayLike) -> Array:
    """Unit tangents (..., 3) [-] in (north, east, down) of inclinations and azimuths [rad]."""
    i = np.asarray(inclination, dtype=float)
    a = np.asarray(azimuth, dtype=float)
    return np.stack([np.sin(i) * np.cos(a), np.sin(i) * np.sin(a), np.cos(i)], axis=-1)


def dogleg(*, inc1: ArrayLike, azi1: ArrayLike, inc2: ArrayLike, azi2: ArrayLike) -> Array:
    """Dogleg angle [rad] between two station directions (Sawaryn & Thorogood 2005)."""
    i1, i2 = np.asarray(inc1, dtype=float), np.asarray(inc2, dtype=float)
    a1, a2 = np.asarray(azi1, dtype=float), np.asarray(azi2, dtype=float)
    h = np.sin(0.5 * (i2 - i1)) ** 2 + np.sin(i1) * np.sin(i2) * np.sin(0.5 * (a2 - a1)) ** 2
    return np.asarray(2.0 * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0))))


def minimum_curvature_tvd(*, md: ArrayLike, stations: ArrayLike, tvd0: float = 0.0) -> Array:
    """TVD [m] at measured depths ``md`` from survey stations by minimum curvature.

    Parameters
    ----------
    md : array_like (n,)
        Measured depths to place [m], within the stations' span.
    stations : array_like (s, 3)
        Survey stations (measured depth [m], inclination [rad], azimuth [rad]), measured depth
        strictly increasing; the first is the tie-in point.
    tvd0 : float
        TVD of the first station [m].
    """
    st = np.asarray(stations, dtype=float)
    z = np.asarray(md, dtype=float)
    if st.ndim != 2 or st.shape[1] != 3 or st.shape[0] < 1:
        raise ValueError("stations must be an (s, 3) array of (md, inclination, azimuth)")
    if np.any(np.diff(st[:, 0]) <= 0.0):
        raise ValueError("station measured depths must increase strictly")
    if np.any(z < st[0, 0] - 1e-9) or np.any(z > st[-1, 0] + 1e-9):
        raise ValueError("measured depths must lie within the survey's span")
    if st.shape[0] == 1:
        return np.full(z.shape, float(tvd0))
    t = tangent(inclination=st[:, 1], azimuth=st[:, 2])
    d_md = np.diff(st[:, 0])
    beta = dogleg(inc1=st[:-1, 1], azi1=st[:-1, 2], inc2=st[1:, 1], azi2=st[1:, 2])
    pos = _along(t[:-1], t[1:], beta, d_md, np.ones_like(d_md))  # station increments
    start = np.concatenate(([tvd0], tvd0 + np.cumsum(pos)))
    seg = np.clip(np.searchsorted(st[:, 0], z, side="right") - 1, 0, st.shape[0] - 2)
    f = (z - st[seg, 0]) / d_md[seg]
    return np.asarray(start[seg] + _along(t[seg], t[seg + 1], beta[seg], d_md[seg], f))


def _along(t1: Array, t2: Array, beta: Array, d_md: Array, f: Array) -> Array:
    """Vertical offset [m] a fraction ``f`` along each arc (straight where beta ~ 0)."""
    small = beta < 1e-9
    b = np.where(small, 1.0, beta)
    n = (t2 - np.cos(b)[:, None] * t1) / np.sin(b)[:, None]
    r = d_md / b
    arc = r * (np.sin(f * b) * t1[:, 2] + (1.0 - np.cos(f * b)) * n[:, 2])
    return np.asarray(np.where(small, f * d_md * t1[:, 2], arc))
