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

from __future__ import annotations

import math
import numbers
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, Final

import numpy as np
import scipy
import scipy.special as sc
from numpy.typing import ArrayLike, NDArray
from scipy import stats
from scipy.stats import qmc

from risk.errors import CONTROL_CHARACTERS, Problem, ScenarioError, did_you_mean, toml_key

__all__ = [
    "KINDS",
    "MAX_SOURCE_CHARS",
    "OUTSIDE_TOLERANCE",
    "PERT_LAMBDA",
    "RULES",
    "U_MAX",
    "U_MIN",
    "Bounds",
    "JointModel",
    "Marginal",
    "UnitSampler",
    "build_joint",
    "correlated_normals",
    "input_columns",
    "normal_to_rank_corr",
    "normals_to_inputs",
    "parse_input",
    "rank_to_normal_corr",
    "text_problem",
    "to_inputs",
]

FloatArray = NDArray[np.float64]

#: Smallest and largest unit-cube values that keep Phi^-1 finite (see the module docstring).
U_MIN: Final = float(np.nextafter(0.0, 1.0))
U_MAX: Final = float(np.nextafter(1.0, 0.0))

#: Largest probability a distribution may put outside its quantity's physical range.
OUTSIDE_TOLERANCE: Final = 1.0e-6

#: Shape parameter of the beta-PERT distribution (Malcolm et al. 1959; Vose 2008, sec. 9.1.4).
PERT_LAMBDA: Final = 4.0

#: Parameter names of each distribution, in the order they are stored. Lognormal has two
#: alternative pairs; truncnormal's ``low`` and ``high`` are optional (+-inf when omitted).
_PARAMS: Final[dict[str, tuple[str, ...]]] = {
    "fixed": ("value",),
    "normal": ("mean", "sd"),
    "lognormal": ("median", "cov", "mean", "sd"),
    "uniform": ("low", "high"),
    "triangular": ("low", "mode", "high"),
    "truncnormal": ("mean", "sd", "low", "high"),
    "pert": ("low", "mode", "high"),
}

#: Distribution names a scenario may use.
KINDS: Final = tuple(_PARAMS)

#: Parameters that do not scale with the unit (dimensionless).
_DIMENSIONLESS: Final = frozenset({"cov"})

#: Unit-cube sampling rules.
RULES: Final = ("sobol", "lhs", "random")

_SCENARIO_EXTRA_KEYS: Final = ("dist", "source")

#: Longest ``source`` text of an input [characters]: a reference, not a report.
MAX_SOURCE_CHARS: Final = 500


def text_problem(key: str, value: object, *, max_chars: int, what: str) -> Problem | None:
    """The problem of a one-line free text of the scenario (a title, a source), or None.

    A text must be a string of at most ``max_chars`` characters without control characters
    (:data:`risk.errors.CONTROL_CHARACTERS`: no tab, no line break, no terminal escape, no
    bidirectional override). ``what`` names the text in the message ("a title").
    """
    expected = (f"{what}: a text on one line, at most {max_chars:,} characters, without "
                "control characters")
    if not isinstance(value, str):
        return Problem(key, value, expected)
    if len(value) > max_chars:
        return Problem(key, value, expected,
                       found_text=f"a text of {len(value):,} characters ({_show_start(value)})")
    bad = CONTROL_CHARACTERS.search(value)
    if bad:
        return Problem(key, value, expected,
                       found_text=f"{_show_start(value)}, with the control character "
                       f"{bad.group()!r} at position {bad.start() + 1}")
    return None


def _show_start(text: str) -> str:
    """The start of a text as a Python literal (control characters escaped), at most ~60 chars."""
    shown = repr(text[:60])
    return shown + "..." if len(text) > 60 else shown


def _fmt(value: float) -> str:
    return f"{value:.6g}"


#: Plain numbers in a scenario must be 0 or of magnitude in [MIN_MAGNITUDE, MAX_MAGNITUDE]:
#: wider values are typing errors, and they overflow or underflow the unit conversions.
MAX_MAGNITUDE: Final = 1e12
MIN_MAGNITUDE: Final = 1e-12
MAGNITUDE_TEXT: Final = "a number of magnitude between 1e-12 and 1e12 (or 0)"


def is_real(value: object) -> bool:
    """A real number (not a bool) that converts to a float without overflow."""
    if not isinstance(value, numbers.Real) or isinstance(value, bool):
        return False
    try:
        float(value)
    except OverflowError:
        return False
    return True


def is_plain_number(value: object) -> bool:
    """A finite real number of sensible magnitude (:func:`magnitude_ok`): what a scenario may
    write wherever a plain number is expected."""
    return is_real(value) and math.isfinite(float(value)) and magnitude_ok(float(value))  # type: ignore[arg-type]


def magnitude_ok(value: float) -> bool:
    """0, or a finite magnitude within [MIN_MAGNITUDE, MAX_MAGNITUDE]."""
    a = abs(value)
    return a == 0.0 or MIN_MAGNITUDE <= a <= MAX_MAGNITUDE


# --------------------------------------------------------------------------------------------
# Bounds
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Bounds:
    """Physical range of a quantity, in internal units.

    Parameters
    ----------
    lower, upper : float
        Limits [internal unit of the quantity]; ``-inf``/``+inf`` for none.
    lower_inclusive, upper_inclusive : bool
        Whether a value equal to the limit is allowed (matters for fixed values only; a
        continuous distribution puts zero probability on a single point).
    text : str
        How the range is shown to the user in messages, e.g. ``"> 0"`` or ``"in [0, 0.5)"``.
        Write it unit-free or in the display unit; empty means "built from the limits".
    """

    lower: float = -math.inf
    upper: float = math.inf
    lower_inclusive: bool = True
    upper_inclusive: bool = True
    text: str = ""

    def __post_init__(self) -> None:
        if math.isnan(self.lower) or math.isnan(self.upper) or not self.lower < self.upper:
            raise ValueError(f"Bounds need lower < upper, got {self.lower}, {self.upper}")
        if not self.text:
            object.__setattr__(self, "text", self._auto_text())

    def _auto_text(self) -> str:
        lo, hi = self.lower, self.upper
        if math.isinf(lo) and math.isinf(hi):
            return "any real number"
        if math.isinf(hi):
            return (">= " if self.lower_inclusive else "> ") + _fmt(lo)
        if math.isinf(lo):
            return ("<= " if self.upper_inclusive else "< ") + _fmt(hi)
        left = "[" if self.lower_inclusive else "("
        right = "]" if self.upper_inclusive else ")"
        return f"in {left}{_fmt(lo)}, {_fmt(hi)}{right}"

    @classmethod
    def positive(cls, text: str = "> 0") -> Bounds:
        """``(0, inf)``: strictly positive quantities (UCS, moduli, lengths)."""
        return cls(0.0, math.inf, lower_inclusive=False, text=text)

    @classmethod
    def nonnegative(cls, text: str = ">= 0") -> Bounds:
        """``[0, inf)``."""
        return cls(0.0, math.inf, text=text)

    def contains(self, x: ArrayLike) -> NDArray[np.bool_]:
        """Whether each value lies in the range [internal unit]."""
        a = np.asarray(x, dtype=float)
        above = a >= self.lower if self.lower_inclusive else a > self.lower
        below = a <= self.upper if self.upper_inclusive else a < self.upper
        return np.asarray(above & below)

    def outside_probability(self, marginal: Marginal) -> tuple[float, float]:
        """Probability ``marginal`` puts below ``lower`` and above ``upper`` [-]."""
        if marginal.is_fixed:
            v = marginal.value
            inside_low = v >= self.lower if self.lower_inclusive else v > self.lower
            inside_high = v <= self.upper if self.upper_inclusive else v < self.upper
            return (0.0 if inside_low else 1.0, 0.0 if inside_high else 1.0)
        below = float(marginal.cdf(self.lower)) if math.isfinite(self.lower) else 0.0
        above = 1.0 - float(marginal.cdf(self.upper)) if math.isfinite(self.upper) else 0.0
        return below, max(above, 0.0)


UNBOUNDED: Final = Bounds()


# --------------------------------------------------------------------------------------------
# Marginal distributions
# --------------------------------------------------------------------------------------------


def _param_problems(kind: str, p: Mapping[str, float]) -> list[tuple[str, float, str]]:
    """Value problems of a distribution's parameters: (parameter, value, expected).

    ``p`` holds finite numbers for the given names (truncnormal ``low``/``high`` may be
    infinite when omitted). Works in any unit (all checks are scale-free).
    """
    out: list[tuple[str, float, str]] = []
    if kind in ("normal", "truncnormal"):
        if not p["sd"] > 0:
            out.append(("sd", p["sd"], "a standard deviation > 0"))
    if kind == "lognormal":
        if "median" in p:
            if not p["median"] > 0:
                out.append(("median", p["median"], "a median > 0 (lognormal values are > 0)"))
            if not p["cov"] > 0:
                out.append(("cov", p["cov"], "a coefficient of variation > 0"))
        else:
            if not p["mean"] > 0:
                out.append(("mean", p["mean"], "a mean > 0 (lognormal values are > 0)"))
            if not p["sd"] > 0:
                out.append(("sd", p["sd"], "a standard deviation > 0"))
    if kind in ("uniform", "triangular", "pert", "truncnormal"):
        lo, hi = p["low"], p["high"]
        if not lo < hi:
            out.append(("high", hi, f"high > low (low = {_fmt(lo)})"))
        elif kind in ("triangular", "pert") and not lo <= p["mode"] <= hi:
            out.append(("mode", p["mode"], f"a mode in [low, high] = [{_fmt(lo)}, {_fmt(hi)}]"))
        elif kind == "truncnormal" and p["sd"] > 0:
            a, b = (lo - p["mean"]) / p["sd"], (hi - p["mean"]) / p["sd"]
            mass = _normal_mass(a, b)
            if mass < OUTSIDE_TOLERANCE:
                out.append((
                    "high" if b <= 0 else "low", hi if b <= 0 else lo,
                    f"a window [low, high] holding at least {OUTSIDE_TOLERANCE:g} of the "
                    f"normal(mean {_fmt(p['mean'])}, sd {_fmt(p['sd'])}) it truncates "
                    f"(it holds {mass:.2g})",
                ))
    return out


def _normal_mass(a: float, b: float) -> float:
    """Phi(b) - Phi(a) without cancellation in the upper tail."""
    if a > 0:
        return float(sc.ndtr(-a) - sc.ndtr(-b))
    return float(sc.ndtr(b) - sc.ndtr(a))


@dataclass(frozen=True)
class Marginal:
    """One input's distribution, in internal units.

    Parameters
    ----------
    kind : str
        One of :data:`KINDS`.
    params : tuple of (name, value)
        Parameters in internal units (``cov`` is dimensionless):
        fixed ``value``; normal ``mean, sd``; lognormal ``median, cov`` or ``mean, sd``;
        uniform ``low, high``; triangular and pert ``low, mode, high``; truncnormal
        ``mean, sd, low, high`` (mean and sd of the parent normal before truncation; an
        omitted bound is stored as -inf/+inf).
    source : str or None
        Where the numbers come from (quoted in the memo).

    Notes
    -----
    Lognormal: ``ln X ~ normal(ln median, s)`` with ``s^2 = ln(1 + cov^2)``; from mean and sd,
    ``cov = sd/mean`` and ``median = mean / sqrt(1 + cov^2)`` (Johnson, Kotz & Balakrishnan
    1994, ch. 14). Beta-PERT: ``a + (b - a) Beta(1 + 4 (m - a)/(b - a), 1 + 4 (b - m)/(b - a))``,
    mean ``(a + 4 m + b)/6`` (Malcolm et al. 1959; Vose 2008, sec. 9.1.4).
    """

    kind: str
    params: tuple[tuple[str, float], ...]
    source: str | None = None

    def __post_init__(self) -> None:
        if self.kind not in _PARAMS:
            raise ValueError(f"unknown distribution kind {self.kind!r}; expected one of {KINDS}")
        p = dict(self.params)
        names = set(p)
        if self.kind == "lognormal":
            ok = names in ({"median", "cov"}, {"mean", "sd"})
        elif self.kind == "truncnormal":
            ok = names == set(_PARAMS["truncnormal"])
        else:
            ok = names == set(_PARAMS[self.kind])
        if not ok or len(p) != len(self.params):
            raise ValueError(
                f"{self.kind} needs parameters {_PARAMS[self.kind]}, got {self.params}")
        for name, value in p.items():
            finite_ok = math.isfinite(value) or (
                self.kind == "truncnormal" and name in ("low", "high")
                and value == (-math.inf if name == "low" else math.inf))
            if not finite_ok:
                raise ValueError(f"{self.kind} parameter {name} = {value} is not finite")
        bad = _param_problems(self.kind, p)
        if bad:
            raise ValueError("; ".join(f"{n} = {v}: expected {e}" for n, v, e in bad))

    # -- construction helpers --------------------------------------------------------------
    @classmethod
    def constant(cls, value: float, source: str | None = None) -> Marginal:
        """A fixed value [internal unit]."""
        return cls("fixed", (("value", float(value)),), source)

    # -- parameters --------------------------------------------------------------------------
    @cached_property
    def _p(self) -> dict[str, float]:
        return dict(self.params)

    @property
    def is_fixed(self) -> bool:
        """True for a ``fixed`` value (not sampled)."""
        return self.kind == "fixed"

    @property
    def value(self) -> float:
        """The value of a fixed input [internal unit]; its median otherwise."""
        return self._p["value"] if self.is_fixed else self.median

    @cached_property
    def _lognormal(self) -> tuple[float, float]:
        """(ln median, s) of a lognormal."""
        p = self._p
        if "median" in p:
            median, cov = p["median"], p["cov"]
        else:
            cov = p["sd"] / p["mean"]
            median = p["mean"] / math.sqrt(1.0 + cov * cov)
        return math.log(median), math.sqrt(math.log1p(cov * cov))

    @cached_property
    def _beta_shape(self) -> tuple[float, float, float, float]:
        """(alpha, beta, low, width) of a beta-PERT."""
        a, m, b = self._p["low"], self._p["mode"], self._p["high"]
        w = b - a
        return 1.0 + PERT_LAMBDA * (m - a) / w, 1.0 + PERT_LAMBDA * (b - m) / w, a, w

    @cached_property
    def _truncnorm(self) -> Any:
        p = self._p
        a, b = (p["low"] - p["mean"]) / p["sd"], (p["high"] - p["mean"]) / p["sd"]
        return stats.truncnorm(a, b, loc=p["mean"], scale=p["sd"])

    @property
    def support(self) -> tuple[float, float]:
        """Smallest and largest possible value [internal unit]."""
        p, k = self._p, self.kind
        if k == "fixed":
            return p["value"], p["value"]
        if k == "normal":
            return -math.inf, math.inf
        if k == "lognormal":
            return 0.0, math.inf
        return p["low"], p["high"]

    # -- distribution functions --------------------------------------------------------------
    def ppf(self, u: ArrayLike) -> FloatArray:
        """Inverse CDF at probabilities ``u`` in [0, 1] [-] -> values [internal unit].

        Normal, lognormal, uniform and triangular use closed forms; beta-PERT uses the inverse
        regularised incomplete beta function; truncnormal uses scipy.stats.truncnorm. A fixed
        input returns its value for every ``u``.
        """
        q = np.asarray(u, dtype=float)
        p, k = self._p, self.kind
        if k == "fixed":
            return np.full(q.shape, p["value"])
        if k == "normal":
            return np.asarray(p["mean"] + p["sd"] * sc.ndtri(q))
        if k == "lognormal":
            mu, s = self._lognormal
            return np.asarray(np.exp(mu + s * sc.ndtri(q)))
        if k == "uniform":
            return np.asarray(p["low"] + q * (p["high"] - p["low"]))
        if k == "triangular":
            a, c, b = p["low"], p["mode"], p["high"]
            fc = (c - a) / (b - a)
            left = a + np.sqrt(q * (b - a) * (c - a))
            right = b - np.sqrt((1.0 - q) * (b - a) * (b - c))
            return np.asarray(np.where(q < fc, left, right))
        if k == "pert":
            al, be, a, w = self._beta_shape
            return np.asarray(a + w * sc.betaincinv(al, be, q))
        return np.asarray(self._truncnorm.ppf(q), dtype=float)

    def cdf(self, x: ArrayLike) -> FloatArray:
        """Probability of a value <= ``x`` [internal unit] -> [-]."""
        v = np.asarray(x, dtype=float)
        p, k = self._p, self.kind
        if k == "fixed":
            return np.asarray(np.where(v >= p["value"], 1.0, 0.0))
        if k == "normal":
            return np.asarray(sc.ndtr((v - p["mean"]) / p["sd"]))
        if k == "lognormal":
            mu, s = self._lognormal
            with np.errstate(divide="ignore"):
                logv = np.log(np.where(v > 0, v, 0.0))
            return np.asarray(np.where(v > 0, sc.ndtr((logv - mu) / s), 0.0))
        if k == "uniform":
            return np.asarray(np.clip((v - p["low"]) / (p["high"] - p["low"]), 0.0, 1.0))
        if k == "triangular":
            a, c, b = p["low"], p["mode"], p["high"]
            vc = np.clip(v, a, b)
            with np.errstate(divide="ignore", invalid="ignore"):
                left = (vc - a) ** 2 / ((b - a) * (c - a))
                right = 1.0 - (b - vc) ** 2 / ((b - a) * (b - c))
            return np.asarray(np.where(vc <= c, np.where(vc <= a, 0.0, left),
                                       np.where(vc >= b, 1.0, right)))
        if k == "pert":
            al, be, a, w = self._beta_shape
            return np.asarray(sc.betainc(al, be, np.clip((v - a) / w, 0.0, 1.0)))
        return np.asarray(self._truncnorm.cdf(v), dtype=float)

    def quantile(self, q: float) -> float:
        """The ``q``-quantile [internal unit] for a probability ``q`` in [0, 1] [-]."""
        return float(self.ppf(q))

    @property
    def median(self) -> float:
        """Median [internal unit]."""
        if self.kind == "lognormal":
            return math.exp(self._lognormal[0])
        return self.quantile(0.5)

    @property
    def mean(self) -> float:
        """Mean [internal unit]."""
        p, k = self._p, self.kind
        if k == "fixed":
            return p["value"]
        if k == "normal":
            return p["mean"]
        if k == "lognormal":
            mu, s = self._lognormal
            return math.exp(mu + 0.5 * s * s)
        if k == "uniform":
            return 0.5 * (p["low"] + p["high"])
        if k == "triangular":
            return (p["low"] + p["mode"] + p["high"]) / 3.0
        if k == "pert":
            al, be, a, w = self._beta_shape
            return a + w * al / (al + be)
        return float(self._truncnorm.mean())

    @property
    def std(self) -> float:
        """Standard deviation [internal unit]."""
        p, k = self._p, self.kind
        if k == "fixed":
            return 0.0
        if k == "normal":
            return p["sd"]
        if k == "lognormal":
            s = self._lognormal[1]
            return self.mean * math.sqrt(math.expm1(s * s))
        if k == "uniform":
            return (p["high"] - p["low"]) / math.sqrt(12.0)
        if k == "triangular":
            a, c, b = p["low"], p["mode"], p["high"]
            return math.sqrt((a * a + b * b + c * c - a * b - a * c - b * c) / 18.0)
        if k == "pert":
            al, be, _, w = self._beta_shape
            return w * math.sqrt(al * be / ((al + be) ** 2 * (al + be + 1.0)))
        return float(self._truncnorm.std())

    def describe(self, scale: float = 1.0, unit: str = "") -> str:
        """Human text in the display unit, e.g. ``"normal(mean 9000 psi, sd 900 psi)"``.

        Parameters
        ----------
        scale : float
            Internal units per display unit (the factor :func:`parse_input` multiplied by).
        unit : str
            Display unit; ``""`` or ``"-"`` for dimensionless quantities.
        """
        suffix = f" {unit}" if unit and unit != "-" else ""

        def show(name: str, value: float) -> str:
            if name in _DIMENSIONLESS:
                return f"{name} {_fmt(value)}"
            return f"{name} {_fmt(value / scale)}{suffix}"

        if self.is_fixed:
            return f"{_fmt(self._p['value'] / scale)}{suffix} (fixed)"
        items = [show(n, v) for n, v in self.params if math.isfinite(v)]
        return f"{self.kind}({', '.join(items)})"


# --------------------------------------------------------------------------------------------
# Parsing scenario entries
# --------------------------------------------------------------------------------------------


def parse_input(key: str, raw: object, *, scale: float, bounds: Bounds = UNBOUNDED,
                unit: str = "") -> Marginal:
    """Read one scenario entry into a :class:`Marginal` in internal units.

    Parameters
    ----------
    key : str
        Scenario key used in messages, e.g. ``"rock.ucs"``.
    raw : number or table
        A plain number (a fixed value) or a table such as
        ``{dist = "normal", mean = 9000, sd = 900, source = "core tests"}`` with values in the
        scenario's display unit. Distributions and their parameters: ``fixed`` (value),
        ``normal`` (mean, sd), ``lognormal`` (median and cov, or mean and sd), ``uniform``
        (low, high), ``triangular`` (low, mode, high), ``truncnormal`` (mean, sd, and optional
        low, high), ``pert`` (low, mode, high).
    scale : float
        Internal units per display unit [internal/display], > 0; multiplies every parameter
        except ``cov``.
    bounds : Bounds
        Physical range of the quantity [internal unit].
    unit : str
        Display unit, only for messages.

    Returns
    -------
    Marginal

    Raises
    ------
    ScenarioError
        Listing every problem of the entry at once: unknown ``dist`` (with a suggestion),
        missing, unknown, non-numeric, boolean, NaN or infinite parameters, sd <= 0,
        low >= high, mode outside [low, high], a fixed value outside ``bounds``, or a
        distribution with more than :data:`OUTSIDE_TOLERANCE` probability outside ``bounds``.
    """
    if not scale > 0 or not math.isfinite(scale):
        raise ValueError(f"scale must be a finite number > 0, got {scale!r}")
    plain = isinstance(raw, numbers.Real) and not isinstance(raw, bool)
    if plain:
        table: Mapping[str, Any] = {"dist": "fixed", "value": raw}
    elif isinstance(raw, Mapping):
        table = raw
    else:
        raise ScenarioError.single(
            key, raw, "a number or a table like { dist = \"normal\", mean = ..., sd = ... }")

    problems: list[Problem] = []

    def where(name: str) -> str:
        """Key of a parameter in messages (a plain number is the key itself)."""
        return key if plain else f"{key}.{name}"

    dist = table.get("dist")
    if dist is None:
        raise ScenarioError.single(
            f"{key}.dist", table, f"a 'dist' entry, one of {', '.join(KINDS)}",
            found_text=f"a table without 'dist' (keys {sorted(map(str, table))})")
    if not isinstance(dist, str) or dist not in _PARAMS:
        hint = did_you_mean(dist, KINDS) if isinstance(dist, str) else ""
        raise ScenarioError.single(f"{key}.dist", dist, f"one of {', '.join(KINDS)}{hint}")

    source = table.get("source")
    if source is not None:
        bad_source = text_problem(f"{key}.source", source, max_chars=MAX_SOURCE_CHARS,
                                  what="where the value comes from")
        if bad_source:
            problems.append(bad_source)

    allowed = _PARAMS[dist]
    given: dict[str, float] = {}
    for name, value in table.items():
        if name in _SCENARIO_EXTRA_KEYS:
            continue
        if name not in allowed:
            hint = did_you_mean(str(name), allowed)
            problems.append(Problem(f"{key}.{toml_key(name)}", value,
                                    f"only parameters {', '.join(allowed)} for {dist}{hint}",
                                    found_text=f"unknown parameter {name!r} = {value!r}"))
        elif not is_real(value):
            problems.append(Problem(where(name), value,
                                    "a number" if not isinstance(value, numbers.Real)
                                    or isinstance(value, bool) else MAGNITUDE_TEXT))
        elif not math.isfinite(float(value)):
            problems.append(Problem(where(name), value, "a finite number"))
        elif not magnitude_ok(float(value)):
            problems.append(Problem(where(name), value, MAGNITUDE_TEXT))
        else:
            given[name] = float(value)

    required: tuple[str, ...]
    if dist == "lognormal":
        pairs = (("median", "cov"), ("mean", "sd"))
        present = [pair for pair in pairs if any(n in table for n in pair)]
        if len(present) != 1:
            problems.append(Problem(
                key, {n: table[n] for n in allowed if n in table},
                "exactly one pair of lognormal parameters: median and cov, or mean and sd",
                found_text="parameters "
                + (", ".join(n for n in allowed if n in table) or "none")))
            required = ()
        else:
            required = present[0]
    elif dist == "truncnormal":
        required = ("mean", "sd")
    else:
        required = allowed
    for name in required:
        if name not in table:
            problems.append(Problem(f"{key}.{name}", None, f"a number ({dist} needs "
                                    f"{', '.join(required)})", found_text="nothing"))
    if problems:
        raise ScenarioError(problems)

    if dist == "truncnormal":
        given.setdefault("low", -math.inf)
        given.setdefault("high", math.inf)
    ordered = [n for n in allowed if n in given]
    internal = {n: given[n] if n in _DIMENSIONLESS else given[n] * scale for n in ordered}
    for name, value, expected in _param_problems(dist, given):
        problems.append(Problem(where(name), value, expected))
    if problems:
        raise ScenarioError(problems)

    try:
        marginal = Marginal(dist, tuple((n, internal[n]) for n in ordered), source)
        below, above = bounds.outside_probability(marginal)
        tails: tuple[float, ...] = (marginal.quantile(1e-9), marginal.quantile(0.5),
                                    marginal.quantile(1 - 1e-9))
    except (ValueError, OverflowError, ZeroDivisionError, FloatingPointError):
        tails = (math.nan,)
    if not all(math.isfinite(t) for t in tails):
        raise ScenarioError.single(
            key, raw, "distribution parameters whose spread and quantiles are finite numbers "
            "after conversion to internal units (these overflow or underflow)")
    if marginal.is_fixed:
        if below > 0 or above > 0:
            if isinstance(raw, Mapping):
                raise ScenarioError.single(f"{key}.value", raw["value"], f"a value {bounds.text}")
            raise ScenarioError.single(key, raw, f"a value {bounds.text}")
    elif below > OUTSIDE_TOLERANCE or above > OUTSIDE_TOLERANCE:
        parts = []
        if below > OUTSIDE_TOLERANCE:
            parts.append(f"{below:.2g} below the physical range")
        if above > OUTSIDE_TOLERANCE:
            parts.append(f"{above:.2g} above " + ("it" if parts else "the physical range"))
        raise ScenarioError.single(
            key, raw,
            f"a distribution with at most {OUTSIDE_TOLERANCE:g} probability outside the "
            f"physical range {bounds.text} (use dist = \"truncnormal\" with low/high inside the "
            "range to truncate explicitly; values are never clipped)",
            found_text=f"{marginal.describe(scale, unit)}, which puts probability "
            + " and ".join(parts))
    return marginal


# --------------------------------------------------------------------------------------------
# Gaussian copula
# --------------------------------------------------------------------------------------------


def rank_to_normal_corr(rho_s: ArrayLike) -> FloatArray:
    """Normal-space (Pearson) correlation of a Gaussian copula with Spearman correlation ``rho_s``.

    ``rho = 2 sin(pi rho_s / 6)`` (Pearson 1907; Kruskal 1958, eq. for the bivariate normal).
    Exact for the Gaussian copula, whatever the marginals. Diagonal ones stay exactly one.

    Parameters
    ----------
    rho_s : array_like
        Spearman rank correlation(s) [-], in [-1, 1].

    Returns
    -------
    ndarray
        Correlation(s) of the underlying standard normals [-].
    """
    r = np.asarray(rho_s, dtype=float)
    out = 2.0 * np.sin(np.pi * r / 6.0)
    return np.asarray(np.where(np.abs(r) == 1.0, r, out))


def normal_to_rank_corr(rho: ArrayLike) -> FloatArray:
    """Inverse of :func:`rank_to_normal_corr`: ``rho_s = (6/pi) arcsin(rho/2)`` [-]."""
    r = np.asarray(rho, dtype=float)
    return np.asarray(np.where(np.abs(r) == 1.0, r, 6.0 / np.pi * np.arcsin(r / 2.0)))


@dataclass(frozen=True, eq=False)
class JointModel:
    """Uncertain inputs coupled by a Gaussian copula.

    Attributes
    ----------
    names : tuple of str
        The uncertain inputs, in column order.
    marginals : tuple of Marginal
        Their distributions [internal units].
    rank_corr : ndarray (d, d)
        Spearman rank correlations as the scenario gave them [-].
    normal_corr : ndarray (d, d)
        Correlations of the underlying standard normals, ``2 sin(pi rank_corr / 6)`` [-].
    chol : ndarray (d, d)
        Lower Cholesky factor of ``normal_corr``.
    fixed : tuple of (name, value)
        The fixed inputs and their values [internal units] (not sampled).
    """

    names: tuple[str, ...]
    marginals: tuple[Marginal, ...]
    rank_corr: FloatArray
    normal_corr: FloatArray
    chol: FloatArray
    fixed: tuple[tuple[str, float], ...] = field(default=())

    @property
    def d(self) -> int:
        """Number of uncertain inputs."""
        return len(self.names)


_PAIRS_KEY: Final = "correlation.pairs"


def build_joint(names: Sequence[str], marginals: Sequence[Marginal],
                pairs: Sequence[Sequence[object]] | None = None) -> JointModel:
    """Couple the uncertain inputs with a Gaussian copula given rank correlations.

    Parameters
    ----------
    names : sequence of str
        All input names (fixed ones included), in order.
    marginals : sequence of Marginal
        Their distributions, same order.
    pairs : sequence of [name_a, name_b, rho_s], optional
        Spearman rank correlations from the scenario's ``[correlation] pairs``; unlisted pairs
        are independent.

    Returns
    -------
    JointModel
        Over the uncertain inputs only (in the order of ``names``).

    Raises
    ------
    ScenarioError
        (key ``correlation.pairs``) for malformed pairs, unknown names (with a suggestion), a
        name paired with itself, a pair given twice, |rho_s| >= 1, a pair naming a fixed input,
        or a correlation matrix that is not positive definite (with its smallest eigenvalue).

    Notes
    -----
    The normal-space matrix is ``2 sin(pi rho_s / 6)`` elementwise (Pearson 1907; Kruskal 1958);
    it must be positive definite for the copula to exist. Spearman correlations are invariant
    under the marginal transforms, so the sampled inputs carry exactly the requested rank
    correlation (in the limit of many samples).
    """
    if len(names) != len(marginals):
        raise ValueError("names and marginals differ in length")
    if len(set(names)) != len(names):
        raise ValueError(f"duplicate input names in {list(names)}")
    uncertain = [n for n, m in zip(names, marginals, strict=True) if not m.is_fixed]
    fixed = tuple((n, m.value) for n, m in zip(names, marginals, strict=True) if m.is_fixed)
    index = {n: i for i, n in enumerate(uncertain)}
    fixed_names = {n for n, _ in fixed}
    d = len(uncertain)
    rank = np.eye(d)
    problems: list[Problem] = []
    seen: dict[frozenset[str], int] = {}
    for i, pair in enumerate(pairs or ()):
        where = f"pair {i + 1} {list(pair) if isinstance(pair, Sequence) else pair!r}"
        if (isinstance(pair, str | bytes) or not isinstance(pair, Sequence) or len(pair) != 3
                or not isinstance(pair[0], str) or not isinstance(pair[1], str)):
            problems.append(Problem(_PAIRS_KEY, pair, "[name_a, name_b, rank_correlation]",
                                    found_text=where))
            continue
        a, b, rho = pair[0], pair[1], pair[2]
        bad = False
        for name in (a, b):
            if name in fixed_names:
                problems.append(Problem(_PAIRS_KEY, pair,
                                        "names of uncertain inputs (a fixed input cannot be "
                                        "correlated)", found_text=f"{where}: {name!r} is fixed"))
                bad = True
            elif name not in index:
                hint = did_you_mean(name, list(names))
                problems.append(Problem(_PAIRS_KEY, pair, f"input names among {list(names)}{hint}",
                                        found_text=f"{where}: unknown input {name!r}"))
                bad = True
        if a == b:
            problems.append(Problem(_PAIRS_KEY, pair, "two different inputs",
                                    found_text=f"{where}: {a!r} paired with itself"))
            bad = True
        if not is_real(rho) or not math.isfinite(float(rho)):  # type: ignore[arg-type]
            problems.append(Problem(_PAIRS_KEY, pair, "a rank correlation, a number in (-1, 1)",
                                    found_text=f"{where}: correlation {rho!r}"))
            bad = True
        elif not abs(float(rho)) < 1.0:  # type: ignore[arg-type]
            problems.append(Problem(_PAIRS_KEY, pair, "a rank correlation in (-1, 1)",
                                    found_text=f"{where}: correlation {rho!r}"))
            bad = True
        pair_id = frozenset((a, b))
        if pair_id in seen and a != b:
            problems.append(Problem(_PAIRS_KEY, pair, "each pair of inputs at most once",
                                    found_text=f"{where} repeats pair {seen[pair_id]}"))
            bad = True
        seen.setdefault(pair_id, i + 1)
        if not bad:
            ia, ib = index[a], index[b]
            rank[ia, ib] = rank[ib, ia] = float(rho)  # type: ignore[arg-type]
    if problems:
        raise ScenarioError(problems)

    normal: FloatArray = np.array(rank_to_normal_corr(rank), dtype=np.float64)
    np.fill_diagonal(normal, 1.0)
    if d:
        eig = np.linalg.eigvalsh(normal)
        if eig[0] <= 1e-10:
            eig_rank = np.linalg.eigvalsh(rank)[0]
            raise ScenarioError.single(
                _PAIRS_KEY, [list(p) for p in pairs or ()],
                "correlations that can hold together (a positive-definite matrix); weaken "
                "or remove some pairs",
                found_text=(f"a correlation matrix that is not positive definite: smallest "
                            f"eigenvalue {eig[0]:.3g} in normal space ({eig_rank:.3g} for the "
                            "rank correlations as given)"))
        chol: FloatArray = np.array(np.linalg.cholesky(normal), dtype=np.float64)
    else:
        chol = np.zeros((0, 0))
    for arr in (rank, normal, chol):
        arr.setflags(write=False)
    return JointModel(tuple(uncertain),
                      tuple(m for m in marginals if not m.is_fixed),
                      rank, normal, chol, fixed)


# --------------------------------------------------------------------------------------------
# Sampling
# --------------------------------------------------------------------------------------------


class UnitSampler:
    """Points in the open unit cube, drawn in chunks from one continuing stream.

    Parameters
    ----------
    rule : {"sobol", "lhs", "random"}
        ``"sobol"``: scrambled Sobol' sequence (scipy.stats.qmc.Sobol, Owen scrambling with
        digital shift, scrambled once from ``rng``; Owen 1998 — from memory). Successive
        :meth:`draw` calls continue the same sequence, so draws of 3 x 1024 equal one draw of
        3072. Its balance (low-discrepancy) properties hold for totals that are powers of two:
        choose chunk and total sizes accordingly. scipy warns when the first draw is not a
        power of two; that warning is suppressed here and :attr:`balanced` tells whether the
        points drawn so far form a balanced set (the estimate stays unbiased either way, just
        less accurate).
        ``"lhs"``: Latin hypercube (scipy.stats.qmc.LatinHypercube; McKay, Beckman & Conover
        1979). The strata are per call: each :meth:`draw` is an independent Latin hypercube
        of its own size, so a chunked draw is a union of smaller designs (still unbiased, less
        stratified) and differs from one large draw.
        ``"random"``: plain Monte Carlo, ``rng.random``; chunked draws equal one large draw.
    d : int
        Dimension (number of uncertain inputs), >= 0.
    rng : numpy.random.Generator
        The only source of randomness. Never the global RNG.

    Notes
    -----
    Values are clamped to ``[U_MIN, U_MAX]`` (see the module docstring).
    """

    def __init__(self, rule: str, d: int, rng: np.random.Generator) -> None:
        if rule not in RULES:
            hint = did_you_mean(str(rule), RULES)
            raise ScenarioError.single("sampling.rule", rule, f"one of {', '.join(RULES)}{hint}")
        if not isinstance(rng, np.random.Generator):
            raise TypeError("rng must be a numpy.random.Generator")
        if d < 0:
            raise ValueError("d must be >= 0")
        self.rule = rule
        self.d = int(d)
        self.n_drawn = 0
        self._rng = rng
        self._engine: qmc.QMCEngine | None = None
        if d > 0 and rule == "sobol":
            self._engine = qmc.Sobol(self.d, scramble=True, rng=rng)
        elif d > 0 and rule == "lhs":
            self._engine = qmc.LatinHypercube(self.d, rng=rng)

    @property
    def balanced(self) -> bool:
        """For ``"sobol"``: whether the number drawn so far is a power of two (else True)."""
        n = self.n_drawn
        return self.rule != "sobol" or (n > 0 and n & (n - 1) == 0)

    def draw(self, n: int) -> FloatArray:
        """Next ``n`` points, shape (n, d), in ``[U_MIN, U_MAX]`` [-]."""
        if n < 0:
            raise ValueError("n must be >= 0")
        if self.d == 0:
            u = np.empty((n, 0))
        elif self._engine is None:
            u = self._rng.random((n, self.d))
        else:
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message="The balance properties of Sobol")
                u = self._engine.random(n)
        self.n_drawn += n
        return np.clip(u, U_MIN, U_MAX)

    def provenance(self) -> dict[str, object]:
        """What a result must record to be rerun bit for bit (plus the seed it was built with)."""
        return {"rule": self.rule, "d": self.d, "n_drawn": self.n_drawn,
                "numpy": np.__version__, "scipy": scipy.__version__}


def correlated_normals(joint: JointModel, xi: ArrayLike) -> FloatArray:
    """Independent standard normals (n, d) -> copula-correlated normals ``z = xi L^T`` (n, d)."""
    a = np.asarray(xi, dtype=float)
    if a.ndim != 2 or a.shape[1] != joint.d:
        raise ValueError(f"expected an array of shape (n, {joint.d}), got {a.shape}")
    return np.asarray(a @ joint.chol.T)


def normals_to_inputs(joint: JointModel, xi: ArrayLike) -> FloatArray:
    """Independent standard normals (n, d) [-] -> input values (n, d) [internal units].

    ``z = xi L^T``, ``x_j = F_j^-1(Phi(z_j))`` (the Nataf/Gaussian-copula transform; Nataf 1962,
    Liu & Der Kiureghian 1986 — from memory). ``Phi(z)`` is clamped to ``[U_MIN, U_MAX]``.
    """
    z = correlated_normals(joint, xi)
    u = np.clip(sc.ndtr(z), U_MIN, U_MAX)
    x = np.empty_like(z)
    for j, m in enumerate(joint.marginals):
        x[:, j] = m.ppf(u[:, j])
    return x


def to_inputs(joint: JointModel, u: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Unit-cube points (n, d) [-] -> input values and their independent normals.

    Returns
    -------
    x : ndarray (n, d)
        Input values [internal units], columns in ``joint.names`` order.
    xi : ndarray (n, d)
        ``Phi^-1(u)``, the independent standard normals behind ``x`` [-]
        (``correlated_normals(joint, xi)`` gives the correlated ones).
    """
    a = np.asarray(u, dtype=float)
    if a.ndim != 2 or a.shape[1] != joint.d:
        raise ValueError(f"expected unit-cube points of shape (n, {joint.d}), got {a.shape}")
    xi = np.asarray(sc.ndtri(np.clip(a, U_MIN, U_MAX)))
    return normals_to_inputs(joint, xi), xi


def input_columns(joint: JointModel, x: ArrayLike) -> dict[str, FloatArray]:
    """Every input by name: sampled columns of ``x`` (n, d) and fixed values as (n,) arrays."""
    a = np.asarray(x, dtype=float)
    if a.ndim != 2 or a.shape[1] != joint.d:
        raise ValueError(f"expected an array of shape (n, {joint.d}), got {a.shape}")
    cols = {name: a[:, j] for j, name in enumerate(joint.names)}
    cols.update({name: np.full(a.shape[0], v) for name, v in joint.fixed})
    return cols
