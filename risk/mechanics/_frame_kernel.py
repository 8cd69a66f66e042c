"""Compiled S' = R S R^T for stacks of 3 x 3 tensors and frames (any broadcast shapes), the
arithmetic of :func:`risk.mechanics.stresses.rotate_to_frame`.

Each entry of each of the two products is a chain of fused multiply-adds in a fixed order,
``fma(a2, b2, fma(a1, b1, a0 * b0))`` (IEEE 754-2008 fusedMultiplyAdd: one rounding per
step, LLVM's ``llvm.fma.f64``): the order and roundings numpy's ``matmul`` takes on
OpenBLAS's fused-multiply-add kernels, which the run's rotation used before (two pairwise
``einsum`` contractions), so the run's results stay the same bit for bit on such machines, at
a quarter of the cost (no per-matrix BLAS call; benchmarks/README.md). A case's result does
not depend on how many are computed with it. The gufunc releases the GIL.

References
----------
Fjaer, E. et al. (2008) *Petroleum Related Rock Mechanics*, 2nd ed., Elsevier, sec. 4.4
(transformation of the stress tensor to a well frame). IEEE Std 754-2008, sec. 5.4.1
(fusedMultiplyAdd).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from llvmlite import ir
from numba import guvectorize, types
from numba.core import cgutils
from numba.extending import intrinsic


@intrinsic
def _fma(typingctx: Any, a: Any, b: Any, c: Any) -> Any:
    """a * b + c rounded once (llvm.fma.f64: fused wherever the machine has it, else the
    correctly rounded library routine)."""
    sig = types.float64(types.float64, types.float64, types.float64)

    def codegen(context: Any, builder: Any, signature: Any, args: Any) -> Any:
        d = ir.DoubleType()
        fn = cgutils.get_or_insert_function(builder.module, ir.FunctionType(d, [d, d, d]),
                                            "llvm.fma.f64")
        return builder.call(fn, args)

    return sig, codegen


@guvectorize(["void(float64[:, :], float64[:, :], float64[:, :])"], "(a,a),(a,a)->(a,a)",
             cache=True, nopython=True)
def rotate(s, r, out):
    """out = r s r^T for 3 x 3 ``s`` (the tensor) and ``r`` (rows: the frame's unit vectors
    in the tensor's axes); broadcasts over leading axes [units of the tensor]."""
    a = np.empty((3, 3))
    for i in range(3):
        for k in range(3):
            a[i, k] = _fma(r[i, 2], s[2, k], _fma(r[i, 1], s[1, k], r[i, 0] * s[0, k]))
    for i in range(3):
        for j in range(3):
            out[i, j] = _fma(a[i, 2], r[j, 2], _fma(a[i, 1], r[j, 1], a[i, 0] * r[j, 0]))
