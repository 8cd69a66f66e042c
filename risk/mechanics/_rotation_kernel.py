"""Compiled stress rotation: the six components of S' = R S R^T for every tensor and frame.

One pass over the outputs, nothing allocated: ``S'_il = sum_j R_ij (sum_k S_jk R_lk)`` written
out for the six upper-triangle components (i <= l), each a fixed sum in a fixed order,
so the result of a case does not depend on how many cases are computed with it or where
(chunks, threads). The kernel releases the GIL, so callers can run it from a thread pool.

References
----------
Fjaer, E. et al. (2008) *Petroleum Related Rock Mechanics*, 2nd ed., Elsevier, sec. 4.4
(transformation of the stress tensor to a well frame); Zoback, M.D. (2007) *Reservoir
Geomechanics*, Cambridge University Press, Appendix (the same transformation).
"""

from __future__ import annotations

from numba import njit, types

_T = types.Array(types.float64, 4, "C", readonly=True)
_R = types.Array(types.float64, 3, "C", readonly=True)
_OUT = types.Array(types.float64, 4, "C")


@njit(types.void(_T, _R, _OUT), cache=True, nogil=True, error_model="numpy")
def rotate_components(tensor, frames, out):
    """Components of ``tensor[p, q]`` (P, Q, 3, 3) in each frame ``frames[m]`` (M, 3, 3, rows
    the frame's unit vectors in the tensor's axes) into ``out[c, p, m, q]`` (6, P, M, Q), c in
    the order xx, yy, zz, xy, xz, yz [units of the tensor]."""
    n_p, n_q = tensor.shape[0], tensor.shape[1]
    n_m = frames.shape[0]
    for p in range(n_p):
        for q in range(n_q):
            s00, s01, s02 = tensor[p, q, 0, 0], tensor[p, q, 0, 1], tensor[p, q, 0, 2]
            s10, s11, s12 = tensor[p, q, 1, 0], tensor[p, q, 1, 1], tensor[p, q, 1, 2]
            s20, s21, s22 = tensor[p, q, 2, 0], tensor[p, q, 2, 1], tensor[p, q, 2, 2]
            for m in range(n_m):
                x0, x1, x2 = frames[m, 0, 0], frames[m, 0, 1], frames[m, 0, 2]
                y0, y1, y2 = frames[m, 1, 0], frames[m, 1, 1], frames[m, 1, 2]
                z0, z1, z2 = frames[m, 2, 0], frames[m, 2, 1], frames[m, 2, 2]
                # S r for r = x, y, z (the rows of R): column j of S R^T
                ax0 = s00 * x0 + s01 * x1 + s02 * x2
                ax1 = s10 * x0 + s11 * x1 + s12 * x2
                ax2 = s20 * x0 + s21 * x1 + s22 * x2
                ay0 = s00 * y0 + s01 * y1 + s02 * y2
                ay1 = s10 * y0 + s11 * y1 + s12 * y2
                ay2 = s20 * y0 + s21 * y1 + s22 * y2
                az0 = s00 * z0 + s01 * z1 + s02 * z2
                az1 = s10 * z0 + s11 * z1 + s12 * z2
                az2 = s20 * z0 + s21 * z1 + s22 * z2
                out[0, p, m, q] = x0 * ax0 + x1 * ax1 + x2 * ax2
                out[1, p, m, q] = y0 * ay0 + y1 * ay1 + y2 * ay2
                out[2, p, m, q] = z0 * az0 + z1 * az1 + z2 * az2
                out[3, p, m, q] = x0 * ay0 + x1 * ay1 + x2 * ay2
                out[4, p, m, q] = x0 * az0 + x1 * az1 + x2 * az2
                out[5, p, m, q] = y0 * az0 + y1 * az1 + y2 * az2
