"""Shared types, constants and helpers of :mod:`risk.sensitivity`."""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from typing import Final, Literal

import numpy as np
from numpy.typing import NDArray

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]


#: Relative mean-square error of the expansion above which :func:`sensitivity` abandons it for
#: Monte Carlo on the model: measured on held-out runs when there are any (the pipeline holds
#: out runs of its own sample), else the corrected leave-one-out error, which is optimistic
#: after a sparse selection. An error ``eps`` can move an index by at most the derived bound
#: of docs/derivations.md sec. 13 (``sqrt(S)`` by about ``sqrt(eps)(1 + sqrt(S))``); that bound
#: widens the bands, so the threshold decides cost, not honesty.
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
