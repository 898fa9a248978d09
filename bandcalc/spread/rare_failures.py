"""How often a build fails, down to parts per billion: importance sampling around the most probable
failure points.

A build fails if any window is missed at any temperature of the range (with the reference at
either edge of its box), or if a point does not exist.  Where the Monte Carlo builds fail often
enough to count (:data:`PLAIN_ENOUGH` failures give about +/-10 % at 95 %), their own count is
the answer, with its Wilson score interval.  Where every factor is bounded (``screened`` or
``uniform``) and the worst case keeps every window, no build can fail: the answer is 0, exactly.
Otherwise the failures are rare, and plain sampling would need about 400 / p builds for +/-10 %:
4e8 at one part per million.  So:

1. Every factor is written in the coordinate u = 3 z (:mod:`bandcalc.spread.draws`), where a
   normal factor is standard normal.  For each side of each window, at the range's lowest and
   highest temperature and over the whole range, the *most probable failure point* is found: the
   point of the failure boundary nearest the centre, ``beta`` standard deviations out (the design
   point of first-order reliability methods).  It is found by the Hasofer-Lind-Rackwitz-Fiessler
   iteration (linearize the margin, step to the nearest point of the linearized boundary),
   screened and uniform factors held within their bounds, uniform ones costing nothing.
2. Builds are drawn from a mixture: a unit normal about each failure point (cut at the bounds for
   bounded factors), weighted by its first-order probability, and a tenth drawn as the design's
   own builds (a "defensive" mixture, which keeps every weight below 10).  The reference drift's
   box makes the margin even in its drift, so each point has its mirror image too.
3. Each build is evaluated over the range exactly as the Monte Carlo's are, and weighted by its
   density under the design's distributions over its density under the mixture.  The mean of
   weight x failed is an unbiased estimate of the failure probability; the 95 % interval is that
   mean +/- 1.96 of its standard errors (the central limit theorem for the weighted mean).
   Batches are added until the interval is within +/-10 % of the estimate, or
   :data:`MAX_BATCHES` are spent.

Sources: importance sampling and its variance, defensive mixtures: A. B. Owen, *Monte Carlo
theory, methods and examples* (2013), chapter 9, and T. Hesterberg, "Weighted average importance
sampling and defensive mixture distributions", *Technometrics* 37 (1995); R. Y. Rubinstein and
D. P. Kroese, *Simulation and the Monte Carlo method* (2008); the design point: A. M. Hasofer and
N. C. Lind, *J. Eng. Mech. Div. ASCE* 100 (1974), R. Rackwitz and B. Fiessler, *Computers &
Structures* 9 (1978) (all from memory).

The estimate is unbiased whatever the mixture; a failure region far from every point found would
only be sampled by the defensive tenth, so the estimate is checked against the Monte Carlo
builds' own count wherever they failed at all, and a disagreement is reported.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandcalc.spread.draws import BOUND, log_density, normal_cdf, truncated_normal
from bandcalc.spread.factors import VariedModel
from bandcalc.spread.over_range import RangeExtremes, over_range

__all__ = ["BATCH", "MAX_BATCHES", "PLAIN_ENOUGH", "FailurePoint", "FailureProbability", "failed_builds",
           "failure_probability", "wilson_interval"]

#: Failures among the Monte Carlo builds above which their own count is used: 1.96 / sqrt(400)
#: is about 10 % (the normal approximation to the binomial).
PLAIN_ENOUGH = 400
#: Share of the mixture drawn as the design's own builds.
DEFENSIVE = 0.1
#: Builds per importance-sampling batch, and the most batches.
BATCH = 16_384
MAX_BATCHES = 16
#: Relative half-width of the 95 % interval aimed at.
TARGET = 0.1
#: Failure points further out are left out: Phi(-37) is below 1e-299.
BETA_LIMIT = 37.0
#: Two-sided 95 % quantile of the standard normal distribution (normal-distribution tables).
Z95 = 1.959963984540054
_STEP = 1e-3  # finite-difference step in u
_ITERATIONS = 40


def wilson_interval(passed: int, n: int, z: float = Z95) -> tuple[float, float]:
    """Wilson score interval of a binomial proportion (E. B. Wilson, JASA 22, 1927, pp. 209-212)."""
    p = passed / n
    denominator = 1.0 + z * z / n
    centre = (p + z * z / (2 * n)) / denominator
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / denominator
    return max(0.0, centre - half), min(1.0, centre + half)


@dataclass(frozen=True)
class FailurePoint:
    """The most probable way a build misses one side of one window.

    ``side`` is "below" (the least value under the window's lowest) or "above"; ``temperature`` the
    range's lowest or highest temperature (C) the search held, or None for the whole range;
    ``beta`` the distance in standard deviations; ``corner`` each factor's value there.
    """

    quantity: str
    side: str
    limit: float
    temperature: float | None
    beta: float
    corner: dict[str, float]


@dataclass(frozen=True)
class FailureProbability:
    """Probability that a build fails any window anywhere in the range, with its 95 % interval."""

    probability: float
    low: float
    high: float
    method: str
    samples: int
    points: tuple[FailurePoint, ...] = ()
    notes: tuple[str, ...] = ()


def failed_builds(r: RangeExtremes, windows: dict[str, tuple[float, float]]) -> np.ndarray:
    """Which builds miss any window somewhere in the range (or have a point that does not exist)."""
    fail = r.invalid.copy()
    for q, (lo, hi) in windows.items():
        fail |= (r.lowest[q] < lo) | (r.highest[q] > hi)
    return fail


class _Space:
    """The factors in u = 3 z: bounds, densities, and the model evaluated at rows of u."""

    def __init__(self, model: VariedModel, windows: dict[str, tuple[float, float]]) -> None:
        self.model, self.windows = model, windows
        self.dist = [f.distribution for f in model.factors]
        self.bounded = np.array([d != "normal" for d in self.dist])
        self.free = np.array([d == "uniform" for d in self.dist])  # no cost within the bounds
        self.k = len(self.dist)
        names = [f.name for f in model.factors]
        self.even = names.index("reference.drift") if model.box else None
        self.sides = [(q, side, lo if side == "below" else hi) for q, (lo, hi) in windows.items()
                      for side, limit in (("below", lo), ("above", hi)) if math.isfinite(limit)]

    def extremes(self, u: np.ndarray) -> RangeExtremes:
        z = u / BOUND
        z = np.where(self.bounded, np.clip(z, -1.0, 1.0), z)
        return over_range(self.model, self.model.unit_values(z), u.shape[0])

    def log_target(self, u: np.ndarray) -> np.ndarray:
        return sum(log_density(d, u[:, i]) for i, d in enumerate(self.dist))


def _margins(space: _Space, r: RangeExtremes, scale: np.ndarray) -> np.ndarray:
    """Margins (rows, sides x 3): each side at the lowest temperature, the highest, over the range.

    Positive: inside the window; scaled so the centre build's is 1 where it is inside.
    """
    cols = []
    for q, side, limit in space.sides:
        if side == "below":
            cols += [r.ends_least[q][:, 0] - limit, r.ends_least[q][:, 1] - limit, r.lowest[q] - limit]
        else:
            cols += [limit - r.ends_greatest[q][:, 0], limit - r.ends_greatest[q][:, 1], limit - r.highest[q]]
    m = np.stack(cols, axis=1) / scale
    return np.where(np.isfinite(m), m, -1.0)


def _nearest(a: np.ndarray, b: float, space: _Space) -> np.ndarray | None:
    """The point v nearest the centre with a . v = b: least sum of v_i^2 over the normal and screened
    factors (uniform ones cost nothing), bounded factors within +/-BOUND; None where none exists."""
    free, held, normal = space.free, space.bounded & ~space.free, ~space.bounded
    v = np.zeros(space.k)
    reach = BOUND * float(np.abs(a[free]).sum())
    if abs(b) <= reach:  # the uniform factors alone reach the boundary
        v[free] = BOUND * (b / reach) * np.sign(a[free]) if reach else 0.0
        return v
    v[free] = BOUND * np.sign(a[free]) * np.sign(b)
    rest = b - float(a[free] @ v[free])
    sign, target = math.copysign(1.0, rest), abs(rest)
    # sum a_i w_i with w_i = lam a_i (held ones clipped at BOUND) is piecewise linear in lam >= 0.
    held_a = np.abs(a[held])
    turns = np.sort(np.where(held_a > 0, BOUND / np.where(held_a > 0, held_a, 1.0), np.inf))
    start = 0.0
    for end in [*turns[np.isfinite(turns)], math.inf]:
        active = held_a * BOUND > start * held_a * held_a  # not clipped yet just above ``start``
        slope = float((a[normal] ** 2).sum() + (held_a[active] ** 2).sum())
        fixed = BOUND * float(held_a[~active].sum())
        if slope > 0:
            lam = (target - fixed) / slope
            if lam <= end:
                w = np.clip(sign * max(lam, 0.0) * a, -BOUND, BOUND)
                v[normal] = sign * max(lam, 0.0) * a[normal]
                v[held] = w[held]
                return v
        elif fixed >= target:
            v[held] = sign * BOUND * np.sign(a[held])
            return v
        start = end
    return None


def _search(space: _Space) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The most probable failure point of every margin: points (L, k), betas (L,), found (L,) and the
    margin's gradient there (L, k)."""
    k, count = space.k, 3 * len(space.sides)
    centre = space.extremes(np.zeros((1, k)))
    scale = np.abs(_margins(space, centre, np.ones(count)))[0]
    scale = np.where(scale > 0, scale, 1.0)
    u = np.zeros((count, k))
    if space.even is not None:  # the margin is even in the drift, with a kink at 0: start off it
        u[:, space.even] = 1.0
    gradient = np.zeros((count, k))
    done = np.zeros(count, dtype=bool)
    found = np.ones(count, dtype=bool)
    eye = np.eye(k) * _STEP
    for _ in range(_ITERATIONS):
        live = np.flatnonzero(~done & found)
        if live.size == 0:
            break
        here = u[live][:, None, :]
        rows = np.concatenate([here, here + eye, here - eye], axis=1).reshape(-1, k)
        m = _margins(space, space.extremes(rows), scale).reshape(live.size, 2 * k + 1, count)
        for j, at in enumerate(live):
            g = m[j, 0, at]
            a = (m[j, 1:k + 1, at] - m[j, k + 1:, at]) / (2 * _STEP)
            v = _nearest(a, float(a @ u[at] - g), space) if np.any(a) else (u[at] if g <= 0 else None)
            if v is None:  # the margin cannot reach zero: this side cannot fail
                found[at] = False
                continue
            step = float(np.linalg.norm(v - u[at]))
            u[at], gradient[at] = v, a
            done[at] = step < 1e-7 * (1.0 + float(np.linalg.norm(v)))
    beta = np.sqrt(((u * ~space.free) ** 2).sum(axis=1))
    return u, beta, found, gradient


def _widths(space: _Space, point: np.ndarray, a: np.ndarray) -> np.ndarray:
    """Each factor's spread in the mixture component about ``point``: 1 for a normal factor; for a
    bounded one, the width of the failure region along it: the distance from the point to the bound
    it fails towards, or what the normal factors' unit spread moves it by, at most 1."""
    width = np.ones(space.k)
    normal = np.linalg.norm(a[~space.bounded])
    for i in np.flatnonzero(space.bounded & (a != 0)):
        room = BOUND + math.copysign(1.0, a[i]) * point[i]  # to the bound where the margin falls
        width[i] = min(1.0, max(room, normal / abs(a[i]), 1e-12))
    return width


def _components(space: _Space, u: np.ndarray, beta: np.ndarray, found: np.ndarray,
                gradient: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Means and spreads (J, k) of the mixture's normals and their weights (J,), the defensive share apart."""
    keep = found & (beta < BETA_LIMIT)
    means, widths, weights = [], [], []
    for point, b, a in zip(u[keep], beta[keep], gradient[keep], strict=True):
        copies = [point]
        if space.even is not None and abs(point[space.even]) > 1e-9:
            mirror = point.copy()
            mirror[space.even] = -mirror[space.even]
            copies.append(mirror)
        for c in copies:
            if all(np.linalg.norm(c - m) > 1e-3 for m in means):
                means.append(c)
                widths.append(_widths(space, point, a))
                weights.append(normal_cdf(-b) / len(copies))
    if not means:
        return np.empty((0, space.k)), np.empty((0, space.k)), np.empty(0)
    w = np.array(weights)
    return np.array(means), np.array(widths), (1.0 - DEFENSIVE) * w / w.sum()


def _draw(space: _Space, rng: np.random.Generator, means: np.ndarray, widths: np.ndarray,
          weights: np.ndarray, n: int) -> np.ndarray:
    """``n`` rows of u from the mixture: the design's own builds, or a normal about a failure point
    (cut at the bounds for bounded factors)."""
    which = rng.choice(means.shape[0] + 1, size=n, p=np.concatenate([[DEFENSIVE], weights]))
    own = which == 0
    centre, spread = np.zeros((n, space.k)), np.ones((n, space.k))
    centre[~own], spread[~own] = means[which[~own] - 1], widths[which[~own] - 1]
    u = centre + spread * rng.standard_normal((n, space.k))
    for i, d in enumerate(space.dist):
        if d != "normal":
            u[:, i] = truncated_normal(rng, centre[:, i], spread[:, i])
        if d == "uniform":
            u[own, i] = rng.uniform(-BOUND, BOUND, int(own.sum()))
    return u


def _log_mixture(space: _Space, u: np.ndarray, means: np.ndarray, widths: np.ndarray,
                 weights: np.ndarray) -> np.ndarray:
    terms = [math.log(DEFENSIVE) + space.log_target(u)]
    for mean, width, w in zip(means, widths, weights, strict=True):
        d = (u - mean) / width
        log = -0.5 * (d * d).sum(axis=1) - 0.5 * space.k * math.log(2.0 * math.pi) - np.log(width).sum()
        for i in np.flatnonzero(space.bounded):
            mass = normal_cdf((BOUND - mean[i]) / width[i]) - normal_cdf((-BOUND - mean[i]) / width[i])
            log -= math.log(mass)
        terms.append(math.log(w) + log)
    return np.logaddexp.reduce(np.stack(terms), axis=0)


def _point(space: _Space, u: np.ndarray, beta: float, index: int) -> FailurePoint:
    q, side, limit = space.sides[index // 3]
    temperature = None if index % 3 == 2 else space.model.temperature[index % 3] \
        if space.model.temperature is not None else None
    z = np.where(space.bounded, np.clip(u / BOUND, -1, 1), u / BOUND)
    return FailurePoint(q, side, limit, temperature, float(beta), space.model.corner(z))


def failure_probability(model: VariedModel, windows: dict[str, tuple[float, float]], failed: int,
                        samples: int, seed: int, cannot_fail: bool) -> FailureProbability:
    """The probability that a build fails, with its 95 % interval and how it was found.

    ``failed`` of ``samples`` Monte Carlo builds failed; ``cannot_fail`` says that every factor is
    bounded and the worst case keeps every window.
    """
    plain_low, plain_high = wilson_interval(failed, samples)
    if cannot_fail:
        return FailureProbability(0.0, 0.0, 0.0, "none can fail: every factor is bounded and the worst case "
                                  "keeps every window", 0)
    if failed >= PLAIN_ENOUGH or not model.factors:
        return FailureProbability(failed / samples, plain_low, plain_high,
                                  "the Monte Carlo builds' own count, Wilson score interval", samples)
    space = _Space(model, windows)
    u, beta, found, gradient = _search(space)
    means, widths, weights = _components(space, u, beta, found, gradient)
    # The whole range's point is reported where it lies nearer than both ends' (a turn inside the range).
    usable = found & (beta < BETA_LIMIT)
    for side in range(len(space.sides)):
        ends = [beta[3 * side + e] for e in (0, 1) if usable[3 * side + e]]
        if ends and beta[3 * side + 2] >= min(ends) - 1e-6:
            usable[3 * side + 2] = False
    order = np.argsort(np.where(usable, beta, np.inf), kind="stable")
    distinct: list[int] = []
    for i in (i for i in order if usable[i]):
        if all(np.linalg.norm(u[i] - u[j]) > 1e-3 for j in distinct):
            distinct.append(i)
    points = tuple(_point(space, u[i], beta[i], i) for i in distinct)
    if means.shape[0] == 0:
        if failed:  # builds without a switching point: no window margin leads to them
            return FailureProbability(failed / samples, plain_low, plain_high,
                                      "the Monte Carlo builds' own count, Wilson score interval (no failure "
                                      "point found to sample around: the failing builds have no switching "
                                      "point somewhere in the range)", samples)
        return FailureProbability(0.0, 0.0, 0.0, f"no failure point within {BETA_LIMIT:g} standard "
                                  "deviations of the centre: below 1e-299", 0)
    rng = np.random.default_rng([seed, 1])
    total = square = 0.0
    n = 0
    for _ in range(MAX_BATCHES):
        u_batch = _draw(space, rng, means, widths, weights, BATCH)
        weight = np.exp(space.log_target(u_batch) - _log_mixture(space, u_batch, means, widths, weights))
        hits = weight * failed_builds(space.extremes(u_batch), windows)
        total, square, n = total + hits.sum(), square + (hits * hits).sum(), n + BATCH
        p = total / n
        half = Z95 * math.sqrt(max(square / n - p * p, 0.0) / (n - 1))
        if p > 0 and half <= TARGET * p:
            break
    notes = []
    if p > 0 and half > TARGET * p:
        notes.append(f"The failure probability is known to +/-{100 * half / p:.0f} % only, after {n:,} "
                     "weighted builds.")
    if failed and (p + half < plain_low or p - half > plain_high):
        notes.append(f"The weighted estimate ({p:.3g}) and the Monte Carlo builds' own count ({failed:,} of "
                     f"{samples:,}) disagree: a failure region may lie away from the points found; the "
                     "larger figure is the safer one.")
    method = (f"importance sampling around {len(points)} most probable failure point"
              f"{'' if len(points) == 1 else 's'} ({n:,} weighted builds); 95 % interval: the estimate "
              "+/- 1.96 standard errors")
    return FailureProbability(p, max(0.0, p - half), min(1.0, p + half), method, n, points, tuple(notes))
