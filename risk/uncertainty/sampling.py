"""Unit-cube samplers (Sobol', Latin hypercube, pseudo-random) drawn in chunks."""

from __future__ import annotations

import warnings
from typing import TYPE_CHECKING, Final

import numpy as np
import scipy
from numpy.typing import NDArray

from risk.errors import ScenarioError, did_you_mean
from risk.uncertainty.marginals import U_MAX, U_MIN, FloatArray

if TYPE_CHECKING:
    from scipy.stats import qmc

#: Unit-cube sampling rules.
RULES: Final = ("sobol", "lhs", "random")


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
        ``"lhs"``: Latin hypercube (McKay, Beckman & Conover 1979). With ``total`` given, the
        design is one Latin hypercube of ``total`` points however it is drawn: point ``i``
        gets stratum ``pi_j(i)`` of column ``j`` and the value ``(pi_j(i) + v_ij) / total``,
        ``v_ij`` uniform from a stream read in row order, ``pi_j`` a keyed pseudo-random
        permutation of ``0 .. total-1`` computed point by point (a 4-round Feistel network,
        Luby & Rackoff 1988, SIAM J. Comput. 17(2), 373-386, restricted to the range by cycle
        walking, Black & Rogaway 2002, CT-RSA, LNCS 2271, 114-130), so no permutation is
        stored and chunked draws equal one large draw bit for bit. Without ``total`` each
        :meth:`draw` is an independent Latin hypercube of its own size
        (scipy.stats.qmc.LatinHypercube).
        ``"random"``: plain Monte Carlo, ``rng.random``; chunked draws equal one large draw.
    d : int
        Dimension (number of uncertain inputs), >= 0.
    rng : numpy.random.Generator
        The only source of randomness. Never the global RNG.
    total : int, optional
        Number of points that will be drawn in all [-] (``"lhs"``: one design of that size;
        drawing more is an error). Ignored by the other rules.

    Notes
    -----
    Values are clamped to ``[U_MIN, U_MAX]`` (see the module docstring).
    """

    def __init__(self, rule: str, d: int, rng: np.random.Generator,
                 total: int | None = None) -> None:
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
        self._lhs: _FeistelLHS | None = None
        if total is not None and total < 1:
            raise ValueError("total must be >= 1")
        if d > 0 and rule in ("sobol", "lhs"):
            # imported here: scipy.stats takes about a second to import, and the scenario
            # loader (hence `risk new`, `risk memo`) needs none of it
            from scipy.stats import qmc
        if d > 0 and rule == "sobol":
            self._engine = qmc.Sobol(self.d, scramble=True, rng=rng)
        elif d > 0 and rule == "lhs" and total is not None:
            self._lhs = _FeistelLHS(self.d, int(total), rng)
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
        elif self._lhs is not None:
            u = self._lhs.rows(self.n_drawn, n)
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


_MASK64 = np.uint64(0xFFFFFFFFFFFFFFFF)


def _mix64(x: NDArray[np.uint64]) -> NDArray[np.uint64]:
    """The splitmix64 finaliser (Steele, Lea & Flood 2014, OOPSLA — from memory): a bijective
    64-bit mixing function, the round function of the Feistel network."""
    with np.errstate(over="ignore"):
        x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        return x ^ (x >> np.uint64(31))


class _FeistelLHS:
    """One Latin hypercube of ``total`` points in ``d`` columns, computed by rows on demand."""

    ROUNDS: Final = 4

    def __init__(self, d: int, total: int, rng: np.random.Generator) -> None:
        self.d, self.total = d, total
        bits = max(2, int(total - 1).bit_length())
        bits += bits % 2
        self.half = np.uint64(bits // 2)
        self.mask = np.uint64((1 << (bits // 2)) - 1)
        self.keys = rng.integers(0, 2**63, size=(d, self.ROUNDS), dtype=np.uint64)
        self._jitter = np.random.default_rng(rng.integers(0, 2**63, size=4))

    def _feistel(self, i: NDArray[np.uint64], j: int) -> NDArray[np.uint64]:
        left, right = i >> self.half, i & self.mask
        for k in self.keys[j]:
            left, right = right, left ^ (_mix64(right ^ k) & self.mask)
        return (left << self.half) | right

    def permute(self, i: NDArray[np.uint64], j: int) -> NDArray[np.uint64]:
        """``pi_j(i)`` for indices ``i < total`` (cycle walking keeps it in range)."""
        out = self._feistel(i, j)
        bad = out >= np.uint64(self.total)
        while bad.any():
            out[bad] = self._feistel(out[bad], j)
            bad = out >= np.uint64(self.total)
        return out

    def rows(self, start: int, n: int) -> FloatArray:
        if start + n > self.total:
            raise ValueError(f"the Latin hypercube has {self.total} points; {start + n} "
                             "requested")
        idx = np.arange(start, start + n, dtype=np.uint64)
        v = self._jitter.random((n, self.d))
        strata = np.column_stack([self.permute(idx, j) for j in range(self.d)]) if n else (
            np.empty((0, self.d)))
        return np.asarray((strata.astype(np.float64) + v) / self.total)


#: Named random streams of a run. Each stream's generator is seeded from the run's seed and
#: the stream's fixed key (numpy's SeedSequence of ``[seed, key, *index]``), so the streams are
#: independent of each other and of the sampling stream (``default_rng(seed)``), and adding a
#: stream never changes the others. The keys are part of the reproducibility promise: changing
#: one changes that stream's results.
STREAMS: Final[dict[str, int]] = {"reliability": 1, "sensitivity": 2,
                                  # transform errors along depth of a log run (issue 16)
                                  "logs": 16,
                                  # field-history calibration (issue 17): pairing of the
                                  # well-to-well inputs, MCMC, value-of-information bootstrap
                                  "calibration": 17, "mcmc": 18, "voi": 19}


def rng_stream(seed: int, name: str, *index: int) -> np.random.Generator:
    """The generator of the named stream ``name`` (``STREAMS``) for the run's ``seed``, with an
    optional index (e.g. the depletion stage) [NumPy SeedSequence entropy lists]."""
    return np.random.default_rng([seed, STREAMS[name], *index])
