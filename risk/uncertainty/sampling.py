"""Unit-cube samplers (Sobol', Latin hypercube, pseudo-random) drawn in chunks."""

from __future__ import annotations

import warnings
from typing import Final

import numpy as np
import scipy
from scipy.stats import qmc

from risk.errors import ScenarioError, did_you_mean
from risk.uncertainty.marginals import U_MAX, U_MIN, FloatArray

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


#: Named random streams of a run. Each stream's generator is seeded from the run's seed and
#: the stream's fixed key (numpy's SeedSequence of ``[seed, key, *index]``), so the streams are
#: independent of each other and of the sampling stream (``default_rng(seed)``), and adding a
#: stream never changes the others. The keys are part of the reproducibility promise: changing
#: one changes that stream's results.
STREAMS: Final[dict[str, int]] = {"reliability": 1, "sensitivity": 2,
                                  # field-history calibration (issue 17): pairing of the
                                  # well-to-well inputs, MCMC, value-of-information bootstrap
                                  "calibration": 17, "mcmc": 18, "voi": 19}


def rng_stream(seed: int, name: str, *index: int) -> np.random.Generator:
    """The generator of the named stream ``name`` (``STREAMS``) for the run's ``seed``, with an
    optional index (e.g. the depletion stage) [NumPy SeedSequence entropy lists]."""
    return np.random.default_rng([seed, STREAMS[name], *index])
