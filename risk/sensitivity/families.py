"""Orthonormal polynomials of an arbitrary bounded marginal, from its three-term recurrence.

For an input ``x = F^-1(Phi(xi))`` with a bounded, non-uniform marginal (triangular, beta-PERT,
truncated normal), polynomials orthonormal under the law of ``x`` itself make an output that
is smooth in ``x`` a short expansion (a linear output is exactly degree 1), where Hermite
polynomials in the underlying ``xi`` need many terms. Every such family satisfies
``sqrt(b_{n+1}) p_{n+1}(x) = (x - a_n) p_n(x) - sqrt(b_n) p_{n-1}(x)``, ``p_0 = 1``, ``p_-1 = 0``
(Gautschi 2004, Theorem 1.29); the coefficients come from the discretized Stieltjes procedure
(Gautschi 2004, sec. 2.2.3.1) on a tanh-sinh rule in the probability ``u = F(x)``, which
needs only the quantile function. chaospy computes the same recurrence (its ``ttr``); the
few lines here keep it a numpy-only dependency and a seeded, documented computation.

References
----------
Gautschi, W. (2004). Orthogonal Polynomials: Computation and Approximation. Oxford University
    Press (Theorem 1.29: three-term recurrence; sec. 2.2.3.1: discretized Stieltjes
    procedure). From memory.
Xiu, D., Karniadakis, G.E. (2002). The Wiener-Askey polynomial chaos for stochastic
    differential equations. SIAM Journal on Scientific Computing 24, 619-644.
Takahasi, H., Mori, M. (1974). Double exponential formulas for numerical integration.
    Publications of the Research Institute for Mathematical Sciences 9, 721-741. From memory.
Wan, X., Karniadakis, G.E. (2006). Multi-element generalized polynomial chaos for arbitrary
    probability measures. SIAM Journal on Scientific Computing 28, 901-928 (orthogonal
    polynomials of arbitrary measures built numerically). From memory.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike
from scipy.special import ndtr

from risk.sensitivity.common import Array

#: Highest degree a :class:`Recurrence` is built for [1].
MAX_RECURRENCE_DEGREE = 30
#: tanh-sinh nodes of the discretized Stieltjes procedure [1].
STIELTJES_NODES = 600


@dataclass(frozen=True)
class Recurrence:
    """Orthonormal polynomials of one marginal, evaluated in the input ``x = ppf(Phi(xi))``.

    name : label of the family (e.g. ``"pert"``)
    alpha, beta : recurrence coefficients ``a_n``, ``b_n`` of the standardized input
        ``s = (x - loc) / scale`` [1] (``b_0 = 1``: a probability measure)
    loc, scale : standardization [unit of x]
    ppf : the marginal's quantile function, probability [1] -> x [unit of x]
    """

    name: str
    alpha: tuple[float, ...]
    beta: tuple[float, ...]
    loc: float
    scale: float
    ppf: Callable[[Array], ArrayLike] = field(compare=False, repr=False)

    @property
    def max_degree(self) -> int:
        """Highest degree the coefficients allow [1]."""
        return len(self.alpha) - 1

    def evaluate(self, xi: ArrayLike, degree: int) -> Array:
        """``p_0 .. p_degree`` at the inputs behind the standard normals ``xi`` [1], shape
        ``(degree + 1, *xi.shape)``."""
        if degree > self.max_degree:
            raise ValueError(f"degree {degree} above the {self.name} family's "
                             f"{self.max_degree}")
        z = np.asarray(xi, dtype=float)
        s = (np.asarray(self.ppf(ndtr(z)), dtype=float) - self.loc) / self.scale
        return _recurrence_values(s, self.alpha, self.beta, degree)


def _recurrence_values(s: Array, alpha: tuple[float, ...], beta: tuple[float, ...],
                       degree: int) -> Array:
    out = np.empty((degree + 1, *s.shape))
    out[0] = 1.0
    prev = np.zeros_like(s)
    for n in range(degree):
        nxt = ((s - alpha[n]) * out[n] - math.sqrt(beta[n]) * prev) / math.sqrt(beta[n + 1])
        prev = out[n]
        out[n + 1] = nxt
    return out


def _tanh_sinh(nodes: int) -> tuple[Array, Array]:
    """Double-exponential (tanh-sinh) rule on (0, 1) with ``nodes`` points, weights summing to 1.

    ``u = (1 + tanh(pi/2 sinh t)) / 2`` clusters the nodes at both ends, so integrands with
    end-point singularities (a quantile function's infinite slope at the mode-free end of a
    triangular or beta law) converge about exponentially in the node count (Takahasi & Mori
    1974).
    """
    half = 3.2  # |t| <= 3.2: the neglected end weights are below 1e-20
    t = np.linspace(-half, half, nodes)
    h = t[1] - t[0]
    arg = 0.5 * math.pi * np.sinh(t)
    u = 0.5 * (1.0 + np.tanh(arg))
    w = h * 0.25 * math.pi * np.cosh(t) / np.cosh(arg) ** 2
    return u, w / w.sum()


def stieltjes_family(ppf: Callable[[Array], ArrayLike], *, name: str,
                     degree: int = MAX_RECURRENCE_DEGREE,
                     nodes: int = STIELTJES_NODES) -> Recurrence:
    """The orthonormal family of a bounded marginal given by its quantile function.

    Discretized Stieltjes procedure (Gautschi 2004, sec. 2.2.3.1) on a ``nodes``-point
    tanh-sinh rule in ``u`` on (0, 1) (Takahasi & Mori 1974), mapped through ``ppf``: the
    discrete measure ``sum_k w_k delta(x - ppf(u_k))`` approximates the marginal, and its
    recurrence coefficients are those of the marginal up to the rule's error (measured at 600
    nodes: 1e-15 on the Legendre coefficients; 2e-13 at degree 8 to 4e-11 at degree 20 on the
    Gram matrix of a beta-PERT law, against a Gauss-Jacobi rule; 1e-10 on the mean and
    standard deviation of a triangular law, whose quantile function has a kink at the mode).

    Parameters
    ----------
    ppf : quantile function, probability [1] -> x [unit of x]; finite on [0, 1]
    name : label of the family
    degree : highest degree to build [1], 1 <= degree < nodes
    nodes : tanh-sinh nodes [1]

    Returns
    -------
    :class:`Recurrence`

    References
    ----------
    Gautschi (2004), sec. 2.2.3.1: see the module docstring.
    """
    if not 1 <= degree < nodes:
        raise ValueError(f"need 1 <= degree < nodes, got degree {degree}, nodes {nodes}")
    u, w = _tanh_sinh(nodes)
    x = np.asarray(ppf(u), dtype=float)
    ends = np.asarray(ppf(np.array([0.0, 1.0])), dtype=float)
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(ends))):
        raise ValueError(f"the {name} marginal must be bounded for its own polynomials")
    loc = float(np.sum(w * x))
    scale = float(math.sqrt(np.sum(w * (x - loc) ** 2)))
    if not scale > 0:
        raise ValueError(f"the {name} marginal has no spread")
    s = (x - loc) / scale
    alpha = np.zeros(degree + 1)
    beta = np.ones(degree + 1)
    p_prev = np.zeros_like(s)
    p = np.ones_like(s)   # orthonormal p_0 (w sums to one)
    for n in range(degree + 1):
        alpha[n] = float(np.sum(w * s * p * p))
        if n == degree:
            break
        q = (s - alpha[n]) * p - math.sqrt(beta[n]) * p_prev
        beta[n + 1] = float(np.sum(w * q * q))
        p_prev, p = p, q / math.sqrt(beta[n + 1])
    return Recurrence(name=name, alpha=tuple(map(float, alpha)), beta=tuple(map(float, beta)),
                      loc=loc, scale=scale, ppf=ppf)
