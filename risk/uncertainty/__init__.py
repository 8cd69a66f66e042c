"""Input distributions, the Gaussian copula and unit-cube sampling.

Three separate steps turn a scenario's uncertain inputs into sample values:

1. :func:`parse_input` reads one scenario entry (a number or a ``{ dist = ... }`` table in the
   scenario's display unit) into a :class:`Marginal` in internal units, refusing anything that
   is malformed or that puts probability outside the quantity's physical :class:`Bounds`.
2. :func:`build_joint` couples the uncertain marginals with a Gaussian copula specified by rank
   (Spearman) correlations and returns a :class:`JointModel`.
3. :class:`UnitSampler` draws points in the open unit cube (scrambled Sobol', Latin hypercube or
   plain Monte Carlo, always from an explicit :class:`numpy.random.Generator`), and
   :func:`to_inputs` maps them to input values through the copula and the marginals.

Spaces and transforms (one row per sample, one column per uncertain input)::

    u  in (0, 1)^d     unit cube (what the sampler draws)
    xi = Phi^-1(u)     independent standard normals
    z  = xi @ L^T      correlated standard normals, L = chol(normal_corr)
    x_j = F_j^-1(Phi(z_j))   input values in internal units (see risk.conventions)

``xi`` is the space in which the reliability methods (:mod:`risk.reliability`) and a
polynomial-chaos surrogate work; :func:`normals_to_inputs` maps it to ``x``.

Floating-point clamping
-----------------------
``Phi^-1(0) = -inf`` and ``Phi^-1(1) = +inf``. Unit-cube values (and ``Phi(z)`` before a
marginal's inverse CDF) are therefore clamped to ``[U_MIN, U_MAX]`` with
``U_MIN = 5e-324`` (the smallest positive double) and ``U_MAX = 1 - 2**-53`` (the largest
double below one): the smallest change that keeps ``Phi^-1`` finite
(``Phi^-1(U_MIN) = -38.5``, ``Phi^-1(U_MAX) = 8.3``). Sobol', LHS and ``Generator.random``
all draw from ``[0, 1)``, so only an exact 0 is ever moved, with probability about 2**-53 per
coordinate. No value is clipped anywhere else.

Physical bounds
---------------
A distribution may put at most ``OUTSIDE_TOLERANCE = 1e-6`` probability outside the physical
range of its quantity; otherwise it is refused (use ``truncnormal`` with ``low``/``high`` inside
the range to truncate explicitly). Between 0 and 1e-6, a sample outside the range can occur
(at most about one in a million samples); it is not clipped.
"""

from risk.uncertainty.copula import (
    JointModel,
    build_joint,
    correlated_normals,
    input_columns,
    normal_to_rank_corr,
    normals_to_inputs,
    rank_to_normal_corr,
    to_inputs,
)
from risk.uncertainty.marginals import (
    KINDS,
    OUTSIDE_TOLERANCE,
    PERT_LAMBDA,
    U_MAX,
    U_MIN,
    Bounds,
    Marginal,
)
from risk.uncertainty.parse import (
    MAGNITUDE_TEXT,
    MAX_SOURCE_CHARS,
    is_plain_number,
    is_real,
    parse_input,
    text_problem,
)
from risk.uncertainty.sampling import RULES, STREAMS, UnitSampler, rng_stream

__all__ = [
    "KINDS",
    "MAGNITUDE_TEXT",
    "MAX_SOURCE_CHARS",
    "OUTSIDE_TOLERANCE",
    "PERT_LAMBDA",
    "RULES",
    "STREAMS",
    "rng_stream",
    "U_MAX",
    "U_MIN",
    "Bounds",
    "JointModel",
    "Marginal",
    "UnitSampler",
    "build_joint",
    "correlated_normals",
    "input_columns",
    "is_plain_number",
    "is_real",
    "normal_to_rank_corr",
    "normals_to_inputs",
    "parse_input",
    "rank_to_normal_corr",
    "text_problem",
    "to_inputs",
]
