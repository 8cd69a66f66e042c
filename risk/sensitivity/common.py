"""Shared types, constants and helpers of :mod:`risk.sensitivity`."""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from typing import Final, Literal

import numpy as np
from numpy.typing import NDArray

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]


#: Relative corrected leave-one-out error above which :func:`sensitivity` abandons the
#: expansion for Monte Carlo on the model. Derived bound: if the surrogate's relative mean-square
#: error is ``eps``, an index ``S`` moves by at most about ``2 sqrt(eps S) + eps``; at
#: ``eps = 0.01`` that is <= 0.11 in the worst case and, because least-squares residuals are
#: nearly orthogonal to the fitted terms, typically a few hundredths (measured here, sparse
#: fits of the Ishigami, 8-input Sobol G and 10-input exponential functions at 256-1024 runs,
#: 3 seeds: LOO <= 0.01 went with index errors <= 0.025; LOO >= 0.1 with errors up to 0.4).
LOO_THRESHOLD: Final = 0.01

Method = Literal["omp", "ols"]


@contextlib.contextmanager
def blas_single_thread() -> Iterator[None]:
    """Limit BLAS to one thread inside the block (threadpoolctl); a no-op when not installed.

    Small dense least-squares problems run several times slower with threaded BLAS on shared
    cores (measured 3-56x; docs/derivations.md, sec. 8).
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        yield
        return
    with threadpool_limits(limits=1, user_api="blas"):
        yield


def bad_argument(key: str, value: object, expected: str, found_text: str | None = None
                 ) -> ValueError:
    """A wrong argument in a library call (a programmer error, not bad scenario input): a
    ValueError whose text names the argument, the value found and what is expected."""
    from risk.errors import Problem

    return ValueError(str(Problem(key, value, expected, found_text)))
