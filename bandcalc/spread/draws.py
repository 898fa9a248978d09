"""How a factor's value is drawn: normal, screened (normal cut at the tolerance) or uniform.

Every varied factor has a tolerance box, its unit variable z running from -1 (its least value) to
+1 (its greatest).  Monte Carlo reads the tolerance in one of three ways
(:data:`bandcalc.model.tolerances.DISTRIBUTIONS`):

``normal``    z = Z / 3 with Z standard normal: the tolerance is 3 sigma, and 0.27 % of parts fall
              outside it (tails kept, as a part population that was never screened).
``screened``  the same normal cut at the tolerance: a part screened to its tolerance never lies
              outside it, and within it the normal shape holds.
``uniform``   z uniform on [-1, 1].

The rare-failure estimate (:mod:`bandcalc.spread.rare_failures`) works in the coordinate u = 3 z,
in which a ``normal`` factor is standard normal, a ``screened`` one standard normal within
+/-3 and a ``uniform`` one uniform on [-3, 3]: :func:`log_density` gives each density there.

A :class:`Stream` draws one factor's values block after block.  Its numbers do not depend on
how the blocks are cut: a ``screened`` stream is the standard normal stream of its generator
with every value beyond +/-3 left out, carried over from one block to the next.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["BOUND", "SCREENED_SHARE", "Stream", "log_density", "normal_cdf", "truncated_normal"]

#: The tolerance in the coordinate u = 3 z: 3 standard deviations of a normal factor.
BOUND = 3.0
#: Share of a standard normal within +/-3: P(|Z| <= 3) = 0.9973 (standard normal tables).
SCREENED_SHARE = math.erf(BOUND / math.sqrt(2.0))
_LOG_ROOT_2PI = 0.5 * math.log(2.0 * math.pi)


def normal_cdf(x: float) -> float:
    """The standard normal distribution function at ``x`` (a number)."""
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


class Stream:
    """The unit variables z of one factor, block after block, from its own generator."""

    def __init__(self, distribution: str, generator: np.random.Generator) -> None:
        self.distribution = distribution
        self.generator = generator
        self._carry = np.empty(0)  # screened values drawn but not yet handed out

    def take(self, n: int, out: np.ndarray | None = None) -> np.ndarray:
        """The next ``n`` unit variables (filled into ``out`` when given)."""
        z = np.empty(n) if out is None else out
        if self.distribution == "normal":
            self.generator.standard_normal(out=z)
            z /= BOUND
        elif self.distribution == "uniform":
            self.generator.random(out=z)
            z *= 2.0
            z -= 1.0
        else:
            z[:] = self._screened(n)
            z /= BOUND
        return z

    def _screened(self, n: int) -> np.ndarray:
        kept = [self._carry]
        have = self._carry.size
        while have < n:
            more = self.generator.standard_normal(int((n - have) / SCREENED_SHARE) + 16)
            more = more[np.abs(more) <= BOUND]
            kept.append(more)
            have += more.size
        pool = np.concatenate(kept)
        self._carry = pool[n:]
        return pool[:n]


def truncated_normal(rng: np.random.Generator, mean: np.ndarray,
                     spread: np.ndarray | float = 1.0) -> np.ndarray:
    """One draw per element of a normal about ``mean`` (standard deviation ``spread``) cut to
    [-BOUND, BOUND], by rejection; ``mean`` lies within the bounds."""
    spread = np.broadcast_to(spread, mean.shape)
    u = mean + spread * rng.standard_normal(mean.shape)
    bad = np.abs(u) > BOUND
    while bad.any():
        u[bad] = mean[bad] + spread[bad] * rng.standard_normal(int(bad.sum()))
        bad = np.abs(u) > BOUND
    return u


def log_density(distribution: str, u: np.ndarray) -> np.ndarray:
    """Natural log of the density of u = 3 z under the factor's distribution (-inf outside it)."""
    u = np.asarray(u, dtype=float)
    if distribution == "normal":
        return -0.5 * u * u - _LOG_ROOT_2PI
    inside = np.abs(u) <= BOUND
    if distribution == "uniform":
        inside_value = -math.log(2.0 * BOUND)
        return np.where(inside, inside_value, -np.inf)
    return np.where(inside, -0.5 * u * u - _LOG_ROOT_2PI - math.log(SCREENED_SHARE), -np.inf)
