"""Compiled largest compaction excess at any cavity wall, for every run's pore collapse.

For each case: the wall stresses of :func:`risk.mechanics.stresses.wall_stresses` (generalized
Kirsch at the wall with the steady inflow term) at every frame and wall angle, the compaction
excess of :func:`risk.mechanics.cap.wall_cap_excess` on them, and the largest over frames and
angles: the same operations in the same order as the numpy path, without its (cases x frames x
angles) temporaries. The kernel releases the GIL.

References
----------
Wall stresses: Fjaer, E. et al. (2008) *Petroleum Related Rock Mechanics*, 2nd ed., Elsevier,
eqs. 4.81-4.86; inflow term: Willson, S.M. et al. (2002) SPE 78168. Cap: Roscoe, K.H. &
Burland, J.B. (1968), in *Engineering Plasticity*, Cambridge Univ. Press, 535-609.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, types

_LOC = types.Array(types.float64, 2, "C", readonly=True)
_CASE = types.Array(types.float64, 1, "C", readonly=True)
_OUT = types.Array(types.float64, 1, "C")


@njit(types.void(_LOC, _LOC, _LOC, _LOC, _LOC, _LOC, _CASE, _CASE, _CASE, _CASE, _CASE, _CASE,
                 _CASE, _CASE, _CASE, _CASE, _OUT), cache=True, nogil=True, error_model="numpy")
def wall_cap_max(sxx, syy, szz, sxy, sxz, syz, p_r, p_w, big_a, nu, p_star, m_slope,
                 cos_t, sin_t, cos_2t, sin_2t, out):
    """Largest compaction excess E [MPa] over frames and wall angles, per case, into out.

    sxx ... syz : (n, frames) far-field components in each cavity frame [MPa]; p_r, p_w :
    (n,) reservoir and wall pressures [MPa]; big_a, nu : (n,) [1]; p_star : (n,) [MPa];
    m_slope : (n,) critical-state slope M [1] (inf: the mean-stress criterion); cos_t ...
    sin_2t : the wall angles' cos t, sin t, cos 2t, sin 2t. NaN in any term gives NaN (as
    numpy's max).
    """
    n, n_f = sxx.shape
    n_t = cos_t.shape[0]
    buf = np.empty(n_t)
    for i in range(n):
        pw = p_w[i]
        inflow = big_a[i] * (p_r[i] - pw)
        half = 0.5 * p_star[i]
        mm = m_slope[i]
        best = -math.inf
        for f in range(n_f):
            dxy = 2.0 * (sxx[i, f] - syy[i, f])
            qxy = 4.0 * sxy[i, f]
            sum_xy = sxx[i, f] + syy[i, f]
            zz, xz, yz, nu_i = szz[i, f], sxz[i, f], syz[i, f], nu[i]
            # every angle first, without branches (the loop vectorises: the same IEEE
            # operations on every lane, so the same values), then the largest
            for k in range(n_t):
                dev = dxy * cos_2t[k] + qxy * sin_2t[k]
                hoop = sum_xy - dev - pw - inflow
                axial = zz - nu_i * dev - inflow
                shear = 2.0 * (yz * cos_t[k] - xz * sin_t[k])
                s_t = hoop - pw
                s_z = axial - pw
                tr = s_t + s_z
                q = math.sqrt(max(tr * tr - 3.0 * (s_t * s_z - shear * shear), 0.0))
                ratio = q / mm
                buf[k] = tr / 3.0 - half - math.sqrt(max(half * half - ratio * ratio, 0.0))
            for k in range(n_t):
                e = buf[k]
                if e > best or e != e:
                    best = e
                if best != best:
                    break
            if best != best:
                break
        out[i] = best
