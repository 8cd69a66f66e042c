"""Marginal distributions of the uncertain inputs and their physical bounds.

The clamping and bounds rules are stated in the package docstring (:mod:`risk.uncertainty`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property
from typing import Any, Final

import numpy as np
import scipy.special as sc
from numpy.typing import ArrayLike, NDArray

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


def _fmt(value: float) -> str:
    return f"{value:.6g}"


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
        from scipy import stats  # imported here: about a second, for this distribution only

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
