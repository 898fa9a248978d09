"""Spread of the switching points over part tolerances and the operating temperature range.

Three analyses of one design, all through the one vectorized stage model
(:class:`bandcalc.spread.factors.VariedModel` over the stage model, through the front end if any),
every build taken over the whole temperature range (:mod:`bandcalc.spread.over_range`):

- worst case: the least and greatest upper point, lower point and hysteresis over the whole
  tolerance box and the whole range, and the corner and temperature that give each;
- Monte Carlo: seeded, reproducible sampling of every factor at once; each build's extremes over
  the range, with statistics and histograms; the yield against the design's windows (a build
  passes only if it keeps every window at every temperature), where the failing builds fail, and
  the failure probability down to parts per billion (:mod:`bandcalc.spread.rare_failures`);
- sensitivity: each factor's first-order share of each point's variance, ranked.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.operating import analyze
from bandcalc.model.points import design_points, input_range
from bandcalc.model.tolerances import Tolerances
from bandcalc.model.units import format_probability, format_si, format_value
from bandcalc.spread.draws import Stream
from bandcalc.spread.factors import QUANTITIES, Factor, SpreadError, VariedModel
from bandcalc.spread.over_range import DENSE, RangeExtremes, over_range
from bandcalc.spread.rare_failures import (
    FailureProbability,
    failed_builds,
    failure_probability,
    wilson_interval,
)

__all__ = [
    "CHUNK",
    "DEFAULT_SAMPLES",
    "DEFAULT_SEED",
    "EXHAUSTIVE_LIMIT",
    "MAX_SAMPLES",
    "MIN_SAMPLES",
    "PERCENTILES",
    "Extreme",
    "FailurePlace",
    "Missing",
    "MonteCarlo",
    "Sensitivity",
    "Share",
    "Spread",
    "SpreadError",
    "Summary",
    "WorstCase",
    "Yield",
    "build_yield",
    "corner_words",
    "failure_places",
    "monte_carlo",
    "sensitivity",
    "simplifications",
    "spread",
    "spread_to_dict",
    "summarize",
    "wilson_interval",
    "worst_case",
]

#: Percentiles reported (percent): +/-3 sigma and +/-1.96 sigma of a normal distribution, and the median.
PERCENTILES = (0.135, 2.5, 50.0, 97.5, 99.865)
DEFAULT_SAMPLES = 100_000
#: Most builds one run takes: each keeps nine values (three quantities' least, greatest and middle).
MAX_SAMPLES = 2_000_000
MIN_SAMPLES = 10
DEFAULT_SEED = 1
#: Builds per model call: blocks this small keep the model's intermediate arrays (builds x five
#: temperatures x reference edges) in the processor's cache.
CHUNK = 16_384
#: Up to this many factors every corner of the box is evaluated; beyond, the corner is searched.
EXHAUSTIVE_LIMIT = 16
DEFAULT_BINS = 60
#: Bins of the temperature at which failing builds fail.
PLACE_BINS = 10


# --- worst case -------------------------------------------------------------------------------

@dataclass(frozen=True)
class Extreme:
    """Least and greatest value of one quantity over the box and the range, and the corner of each.

    A corner maps each factor's name to its value there, in the factor's unit, and "temperature"
    to the temperature (C) of the extreme where the points move with it; "reference.drift" is
    signed by the edge of the reference's box it takes (+: upper edge).
    """

    min: float
    max: float
    min_corner: dict[str, float]
    max_corner: dict[str, float]


@dataclass(frozen=True)
class Missing:
    """Corners of the tolerance box where the stage has no such switching point.

    ``count`` of ``corners`` looked at (both None where the corner was searched, not counted);
    ``corner`` is one of them (factor name to value); ``others`` the least and greatest value
    over the corners that do have the point (None if none has).
    """

    count: int | None
    corners: int | None
    corner: dict[str, float]
    others: tuple[float, float] | None


@dataclass(frozen=True)
class WorstCase:
    """Extremes of the upper point, the lower point and the hysteresis over the box and the range.

    Where some corner has no switching point somewhere in the range (no value of the input switches
    the stage there), that quantity's extremes are NaN, at that corner, and ``missing`` says where
    and how many.
    """

    nominal: dict[str, float]
    upper: Extreme
    lower: Extreme
    hysteresis: Extreme
    method: str
    evaluated: int
    missing: dict[str, Missing] = field(default_factory=dict)


def _corner_values(model: VariedModel, z: np.ndarray) -> RangeExtremes:
    return over_range(model, model.unit_values(z), z.shape[0])


def _exhaustive(model: VariedModel) -> tuple[dict[str, tuple[np.ndarray, np.ndarray]], int,
                                             dict[str, Missing]]:
    """Every corner, in blocks: for each quantity, the unit vectors of its least and greatest corner
    (of a corner without the point, if there is one), and the corners without a point."""
    k = len(model.factors)
    total = 2**k
    best: dict[str, list] = {q: [math.inf, None, -math.inf, None] for q in QUANTITIES}
    lacking: dict[str, list] = {q: [0, None] for q in QUANTITIES}
    for start in range(0, total, CHUNK):
        codes = np.arange(start, min(start + CHUNK, total), dtype=np.int64)
        z = ((codes[:, None] >> np.arange(k)) & 1) * 2.0 - 1.0
        r = _corner_values(model, z)
        for q in QUANTITIES:
            least, greatest = r.lowest[q], r.highest[q]
            bad = ~(np.isfinite(least) & np.isfinite(greatest))  # no point somewhere in the range
            if bad.any():
                lacking[q][0] += int(np.count_nonzero(bad))
                if lacking[q][1] is None:
                    lacking[q][1] = z[int(np.argmax(bad))]
                if bad.all():
                    continue
            lo = int(np.argmin(np.where(bad, np.inf, least)))
            hi = int(np.argmax(np.where(bad, -np.inf, greatest)))
            if least[lo] < best[q][0]:
                best[q][:2] = least[lo], z[lo]
            if greatest[hi] > best[q][2]:
                best[q][2:] = greatest[hi], z[hi]
    corners, missing = {}, {}
    for q, (count, z_missing) in lacking.items():
        if count:
            others = None if best[q][1] is None else (float(best[q][0]), float(best[q][2]))
            missing[q] = Missing(count, total, _lacking_corner(model, z_missing, q), others)
            corners[q] = (z_missing, z_missing)
        else:
            corners[q] = (best[q][1], best[q][3])
    return corners, total, missing


def _searched(model: VariedModel, quantity: str, sign: float, slope: np.ndarray) -> tuple[np.ndarray, int]:
    """A corner that maximizes ``sign`` x quantity over the range: from the signs of the partial
    derivatives at the centre, improved by single flips until none helps.

    Exact when each factor moves the quantity one way throughout the box, as each part value does
    for each switching point at a given temperature; the flips correct a start whose partial
    derivative's sign differs between the centre and the corner.
    """
    k = len(model.factors)

    def value(z: np.ndarray) -> np.ndarray:
        r = _corner_values(model, z)
        return sign * (r.highest[quantity] if sign > 0 else r.lowest[quantity])

    z = np.where(sign * slope >= 0, 1.0, -1.0)
    best = value(z[None, :])[0]
    evaluated = 1
    for _ in range(4 * k):
        flips = np.tile(z, (k, 1))
        flips[np.arange(k), np.arange(k)] *= -1
        values = value(flips)
        evaluated += k
        j = int(np.argmax(values))
        if not values[j] > best:
            break
        z, best = flips[j], values[j]
    return z, evaluated


def _corner(model: VariedModel, z: np.ndarray, r: RangeExtremes, i: int, q: str,
            least: bool) -> dict[str, float]:
    corner = model.corner(z)
    at, edge = (x[i] for x in r.where(q, least))
    if math.isfinite(at):
        corner["temperature"] = float(at)
    if "reference.drift" in corner:
        corner["reference.drift"] = corner["reference.drift"] * (edge if edge else 1.0)  # the edge taken
    return corner


def _lacking_corner(model: VariedModel, z: np.ndarray, q: str) -> dict[str, float]:
    """The corner ``z`` where quantity ``q`` has no point somewhere in the range, with a temperature
    (C) and reference edge where it has none, looked for on :data:`~bandcalc.spread.over_range.DENSE`
    temperatures of the range (signed as in :class:`Extreme`)."""
    corner = model.corner(z)
    if not (model.moves or model.box):
        return corner
    celsius = np.linspace(*model.temperature, DENSE) if model.moves else np.array([model.middle])
    edges = np.array([-1.0, 1.0]) if model.box else np.array([0.0])
    values = model.points({k: np.asarray(v) for k, v in corner.items()}, celsius[:, None], edges[None, :])
    bad = ~np.isfinite(np.broadcast_to(values[q], (celsius.size, edges.size)))
    if bad.any():
        i, j = np.unravel_index(int(np.argmax(bad)), bad.shape)
        if model.moves:
            corner["temperature"] = float(celsius[i])
        if model.box:
            corner["reference.drift"] *= float(edges[j])
    return corner


def _worst_case(model: VariedModel, exhaustive_limit: int) -> WorstCase:
    nominal = {q: float(v) for q, v in model.points({}).items()}  # every part at nominal, at 25 C
    if len(model.factors) <= exhaustive_limit:
        corners, evaluated, missing = _exhaustive(model)
        method = "every corner of the box"
    else:
        slopes, corners, evaluated = model.gradient(), {}, 2 * len(model.factors)
        for q in QUANTITIES:
            lo, n_lo = _searched(model, q, -1.0, slopes[q])
            hi, n_hi = _searched(model, q, 1.0, slopes[q])
            corners[q] = (lo, hi)
            evaluated += n_lo + n_hi
        method = "corner from the signs of the partial derivatives, refined by single flips"
        missing = {}
    if model.moves or model.box:
        method += ", each over the temperature range"
    extremes = {}
    for q, (lo, hi) in corners.items():
        if q not in missing:
            r = _corner_values(model, np.stack([lo, hi]))
            least, greatest = float(r.lowest[q][0]), float(r.highest[q][1])
            if math.isfinite(least) and math.isfinite(greatest):
                extremes[q] = Extreme(min=least, max=greatest, min_corner=_corner(model, lo, r, 0, q, True),
                                      max_corner=_corner(model, hi, r, 1, q, False))
                continue
            z = lo if not math.isfinite(least) else hi  # a searched corner without the point
            missing[q] = Missing(None, None, _lacking_corner(model, z, q), None)
        corner = missing[q].corner  # no worst case: it is where the point does not exist
        extremes[q] = Extreme(min=math.nan, max=math.nan, min_corner=dict(corner), max_corner=dict(corner))
    return WorstCase(nominal=nominal, method=method, evaluated=evaluated, missing=missing, **extremes)


def worst_case(design: Design, tolerances: Tolerances | None = None, *,
               exhaustive_limit: int = EXHAUSTIVE_LIMIT) -> WorstCase:
    """Extremes of each switching point and of the hysteresis over the tolerance box and the range.

    Parameters
    ----------
    design : Design
    tolerances : Tolerances, optional
        Default: the design's own section, else resistors at their series' tolerance.
    exhaustive_limit : int
        With at most this many factors, all 2**k corners are evaluated (in vectorized
        blocks); with more, each extreme's corner is found from the partial derivatives.

    Notes
    -----
    At any one temperature, with the reference at either edge of its box, each point is monotonic
    in each factor alone (a part value, a coefficient, a limit), so the extremes sit at corners of
    the box; each corner is a build, taken over the whole range with its turning points
    (:mod:`bandcalc.spread.over_range`).
    """
    return _worst_case(VariedModel(design, tolerances), exhaustive_limit)


# --- Monte Carlo ------------------------------------------------------------------------------

@dataclass(frozen=True)
class Summary:
    """Statistics of one quantity over the builds (design's unit); ``percentiles`` keyed by percent."""

    mean: float
    std: float
    min: float
    max: float
    percentiles: dict[float, float]
    edges: np.ndarray
    counts: np.ndarray


@dataclass(frozen=True)
class FailurePlace:
    """Where the Monte Carlo builds miss one side of one window.

    ``side`` "below": the build's least value over the range under the window's lowest; "above":
    its greatest over the highest.  ``temperatures`` is a histogram (bin edges in C, counts) of the
    temperature at which each of those builds goes furthest, and ``at_ends`` how many of them go
    furthest at the range's lowest and at its highest temperature; None where nothing moves with it.
    """

    quantity: str
    side: str
    limit: float
    builds: int
    temperatures: tuple[np.ndarray, np.ndarray] | None
    at_ends: tuple[int, int] | None = None


@dataclass(frozen=True)
class Yield:
    """Share of builds inside every window at every temperature of the range, with its 95 % Wilson
    score interval; where the others fail; and the failure probability down to parts per billion."""

    windows: dict[str, tuple[float, float]]
    passed: int
    samples: int
    low: float
    high: float
    outside: dict[str, int]
    places: tuple[FailurePlace, ...] = ()
    failure: FailureProbability | None = None

    @property
    def fraction(self) -> float:
        return self.passed / self.samples


@dataclass(frozen=True)
class MonteCarlo:
    """Sampled spread of the points; ``build_yield`` is None when the design gives no windows.

    ``upper``, ``lower`` and ``hysteresis`` describe the builds at the middle of the temperature
    range (``middle``, C) with the reference at V25; ``lowest`` and ``highest`` each build's least and
    greatest value over the range and the reference's box (the same figures where nothing moves
    with temperature).
    """

    samples: int
    seed: int
    upper: Summary
    lower: Summary
    hysteresis: Summary
    build_yield: Yield | None
    invalid: int
    lowest: dict[str, Summary]
    highest: dict[str, Summary]
    temperature: tuple[float, float] | None
    middle: float


def summarize(values: np.ndarray, bins: int) -> Summary:
    """Statistics of the finite ``values``: mean, standard deviation, extremes, the PERCENTILES
    (linear interpolation, numpy's default) and a histogram of ``bins`` equal bins from the least to
    the greatest.  One sort serves both (numpy sorts faster than it selects several percentiles)."""
    finite = np.isfinite(values)
    ordered = np.sort(values if finite.all() else values[finite])
    n = ordered.size
    if n == 0:
        raise SpreadError("the stage model gives no finite switching point for any sample")
    position = np.asarray(PERCENTILES) / 100 * (n - 1)  # linear interpolation, as numpy's default
    below = np.floor(position).astype(int)
    above = np.minimum(below + 1, n - 1)
    share = position - below
    points = ordered[below] * (1 - share) + ordered[above] * share
    low, high = ordered[0], ordered[-1]
    least = 1e-9 * max(abs(low), abs(high), 1e-30)  # a quantity that hardly moves still gets bins
    if high - low < least:
        low, high = 0.5 * (low + high) - least, 0.5 * (low + high) + least
    edges = np.linspace(low, high, bins + 1)
    index = np.searchsorted(ordered, edges, side="left")  # bins [a, b), the last one [a, b]
    index[-1] = n
    counts = np.diff(index)
    return Summary(mean=float(ordered.mean()), std=float(ordered.std(ddof=1)) if n > 1 else 0.0,
                   min=float(ordered[0]), max=float(ordered[-1]),
                   percentiles={q: float(v) for q, v in zip(PERCENTILES, points, strict=True)},
                   edges=edges, counts=counts)


def _check_run(samples: object, seed: object) -> None:
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) \
            or not MIN_SAMPLES <= samples <= MAX_SAMPLES:
        raise SpreadError(f"samples: must be a whole number from {MIN_SAMPLES:,} to {MAX_SAMPLES:,}, "
                          f"got {samples!r}")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise SpreadError(f"seed: must be a whole number, 0 or more, got {seed!r}")


class _Tally:
    """The yield's counts, block by block: passed builds, builds outside each window, and where."""

    def __init__(self, model: VariedModel, windows: dict[str, tuple[float, float]]) -> None:
        self.windows, self.passed = windows, 0
        self.outside = {q: 0 for q in windows}
        self.sides = [(q, side, limit) for q, (lo, hi) in windows.items()
                      for side, limit in (("below", lo), ("above", hi)) if math.isfinite(limit)]
        self.builds = [0] * len(self.sides)
        self.edges = None if not model.moves else np.linspace(*model.temperature, PLACE_BINS + 1)
        self.counts = [np.zeros(PLACE_BINS, dtype=np.int64) for _ in self.sides]
        self.ends = [[0, 0] for _ in self.sides]

    def add(self, r: RangeExtremes) -> None:
        self.passed += int(r.invalid.size - np.count_nonzero(failed_builds(r, self.windows)))
        for q, (lo, hi) in self.windows.items():
            inside = (r.lowest[q] >= lo) & (r.highest[q] <= hi)
            self.outside[q] += int(inside.size - np.count_nonzero(inside))
        for i, (q, side, limit) in enumerate(self.sides):
            missed = r.lowest[q] < limit if side == "below" else r.highest[q] > limit
            self.builds[i] += int(np.count_nonzero(missed))
            if self.edges is not None and missed.any():
                at = r.where(q, side == "below")[0][missed]
                self.counts[i] += np.histogram(at, bins=self.edges)[0]
                self.ends[i][0] += int(np.count_nonzero(at == self.edges[0]))
                self.ends[i][1] += int(np.count_nonzero(at == self.edges[-1]))

    def result(self, samples: int) -> Yield:
        low, high = wilson_interval(self.passed, samples)
        places = tuple(FailurePlace(q, side, limit, self.builds[i],
                                    None if self.edges is None else (self.edges, self.counts[i]),
                                    None if self.edges is None else tuple(self.ends[i]))
                       for i, (q, side, limit) in enumerate(self.sides))
        return Yield(windows=self.windows, passed=self.passed, samples=samples, low=low, high=high,
                     outside=self.outside, places=places)


def _can_fail(model: VariedModel, wc: WorstCase, windows: dict[str, tuple[float, float]]) -> bool:
    """False where every factor is bounded and the worst case keeps every window."""
    if any(f.distribution == "normal" for f in model.factors):
        return True
    # a worst case that is not a number (a corner without the point) fails too
    return not all(getattr(wc, q).min >= lo and getattr(wc, q).max <= hi for q, (lo, hi) in windows.items())


def _monte_carlo(model: VariedModel, samples: int, seed: int, progress: Callable[[int, int], None] | None,
                 bins: int, wc: WorstCase | None = None, rare: bool = True) -> MonteCarlo:
    _check_run(samples, seed)
    # One generator per factor: the numbers do not depend on the block size.
    generators = np.random.default_rng(seed).spawn(len(model.factors))
    streams = [Stream(f.distribution, g) for f, g in zip(model.factors, generators, strict=True)]
    ranged = model.moves or model.box
    kept = {(kind, q): np.empty(samples) for q in QUANTITIES
            for kind in (("middle", "lowest", "highest") if ranged else ("middle",))}
    windows = model.tolerances.limits.windows()
    tally = _Tally(model, windows)
    buffer = np.empty(min(CHUNK, samples))  # reused by every block
    invalid = done = 0
    while done < samples:
        n = min(CHUNK, samples - done)
        x = {f.name: f.at(stream.take(n, buffer[:n]))
             for f, stream in zip(model.factors, streams, strict=True)}
        r = over_range(model, x, n)
        for (kind, q), store in kept.items():
            store[done:done + n] = getattr(r, kind)[q]
        invalid += int(np.count_nonzero(r.invalid))
        tally.add(r)
        done += n
        if progress is not None:
            progress(done, samples)
    middle = {q: summarize(kept[("middle", q)], bins) for q in QUANTITIES}
    lowest = {q: summarize(kept[("lowest", q)], bins) for q in QUANTITIES} if ranged else middle
    highest = {q: summarize(kept[("highest", q)], bins) for q in QUANTITIES} if ranged else middle
    build_yield = None
    if windows:
        build_yield = tally.result(samples)
    if windows and rare:
        if wc is None and not any(f.distribution == "normal" for f in model.factors):
            wc = _worst_case(model, EXHAUSTIVE_LIMIT)
        cannot = wc is not None and not _can_fail(model, wc, windows)
        failed = samples - build_yield.passed
        failure = failure_probability(model, windows, failed, samples, int(seed), cannot)
        build_yield = replace(build_yield, failure=failure)
    return MonteCarlo(samples=samples, seed=int(seed), invalid=invalid, build_yield=build_yield,
                      lowest=lowest, highest=highest, temperature=model.temperature, middle=model.middle,
                      **middle)


def monte_carlo(design: Design, tolerances: Tolerances | None = None, *, samples: int = DEFAULT_SAMPLES,
                seed: int = DEFAULT_SEED, progress: Callable[[int, int], None] | None = None,
                bins: int = DEFAULT_BINS) -> MonteCarlo:
    """Sample the design's builds over the temperature range: statistics, histograms and yield.

    Parameters
    ----------
    samples : int
        10 to 2,000,000; evaluated in blocks of :data:`CHUNK`.
    seed : int
        The same seed gives the same numbers, whatever the block size.
    progress : callable(done, total), optional
        Called after each block.
    """
    return _monte_carlo(VariedModel(design, tolerances), samples, seed, progress, bins)


def build_yield(design: Design, tolerances: Tolerances | None = None, *, samples: int = DEFAULT_SAMPLES,
                seed: int = DEFAULT_SEED) -> Yield:
    """The per-build yield against the windows of ``tolerances`` (the design's own if not given), with
    its 95 % interval: the Monte Carlo of :func:`monte_carlo`, the same builds for the same seed,
    without the failure probability's rare-event search.  A design without windows is refused."""
    model = VariedModel(design, tolerances)
    if not model.tolerances.limits.windows():
        raise SpreadError("tolerances.limits: give a window for the yield")
    return _monte_carlo(model, samples, seed, None, DEFAULT_BINS, rare=False).build_yield


# --- sensitivity ------------------------------------------------------------------------------

@dataclass(frozen=True)
class Share:
    """One factor's part in a quantity's spread (first order).

    ``effect``: change of the quantity (V) with the factor at its upper bound, the others at
    their centre; ``sigma``: its standard deviation (V); ``share``: its fraction of the variance.
    """

    factor: str
    effect: float
    sigma: float
    share: float


@dataclass(frozen=True)
class Sensitivity:
    """Factors ranked by their share of each quantity's variance; first-order mean and std (V)."""

    upper: tuple[Share, ...]
    lower: tuple[Share, ...]
    hysteresis: tuple[Share, ...]
    mean: dict[str, float]
    std: dict[str, float]


def _sensitivity(model: VariedModel) -> Sensitivity:
    k = len(model.factors)
    centre = model.points(model.unit_values(np.zeros((1, k))), model.middle)
    slopes = model.gradient()
    ranked, std = {}, {}
    for q in QUANTITIES:
        sigmas = np.array([abs(s) * f.sigma_unit for s, f in zip(slopes[q], model.factors, strict=True)])
        total = float(np.sum(sigmas**2))
        std[q] = math.sqrt(total)
        shares = [Share(f.name, float(s), float(sg), float(sg**2 / total) if total > 0 else 0.0)
                  for f, s, sg in zip(model.factors, slopes[q], sigmas, strict=True)]
        ranked[q] = tuple(sorted(shares, key=lambda sh: -sh.share))
    return Sensitivity(mean={q: float(np.ravel(centre[q])[0]) for q in QUANTITIES}, std=std, **ranked)


def sensitivity(design: Design, tolerances: Tolerances | None = None) -> Sensitivity:
    """Each factor's first-order share of each point's variance: (dq/dx sigma_x)^2, normalised.

    The ranking shows which part to tighten.  Derivatives are central differences through the
    model at the centre of every range, at the middle of the temperature range; a coefficient's at
    25 C + the RMS of (T - 25 C) over the range (:meth:`VariedModel.gradient`).
    """
    return _sensitivity(VariedModel(design, tolerances))


# --- all three --------------------------------------------------------------------------------

@dataclass(frozen=True)
class Spread:
    """Worst case, Monte Carlo and sensitivity of one design, with notes, cautions and the model's
    simplifications in words."""

    design: Design
    tolerances: Tolerances
    factors: tuple[Factor, ...]
    worst_case: WorstCase
    monte_carlo: MonteCarlo
    sensitivity: Sensitivity
    notes: tuple[str, ...]
    cautions: tuple[str, ...]
    simplifications: tuple[str, ...] = ()

    @property
    def unit(self) -> str:
        """Unit of the points: the design's (volts, or a front end's watched quantity)."""
        return self.design.unit


_DISTRIBUTION_WORDS = {
    "normal": "normal, a tolerance taken as 3 sigma, its tails kept (0.27 % of parts beyond it)",
    "screened": "normal within the tolerance (3 sigma), cut there: parts screened to their tolerance",
    "uniform": "uniform within each tolerance",
}


def simplifications(model: VariedModel, failure: FailureProbability | None = None) -> tuple[str, ...]:
    """Where the spread's model simplifies, in words: the distribution, the temperature law, and how
    the failure probability was found and its stated error."""
    out = [f"Distribution: {_DISTRIBUTION_WORDS[model.tolerances.distribution]}; data-sheet limits (output "
           "levels, built-in hysteresis) are read as a tolerance about their middle. Factors are independent "
           "of each other, except the resistors of one network."]
    if model.temperature is None:
        out.append("Temperature: none given, so every build is taken at 25 °C.")
    else:
        low, high = model.temperature
        out.append(
            f"Temperature: every build is checked over the whole range, {low:g} to {high:g} °C. A resistor "
            "is R25 (1 + alpha (T - 25 °C)), each alpha its own within its bound (in a network the network's "
            "common one plus the member's share within the tracking); the offset is linear in T. The "
            "reference is taken by the box method, V25 +/- drift x V25 x (high - low), with no shape "
            "assumed: both edges of the box at every temperature, which bounds any curve within it. Bias and "
            "offset currents, output levels and rails hold their drawn values over the range. Each build's "
            "extremes come from five temperatures and the turning points between them (see the methods).")
    if failure is not None:
        out.append(f"Failure probability: {failure.method}.")
    return tuple(out)


_NAMES = {"upper": "upper point", "lower": "lower point", "hysteresis": "hysteresis"}


def _where_in_range(place: FailurePlace) -> str:
    if place.temperatures is None or place.at_ends is None:
        return ""
    edges, counts = place.temperatures
    low, high = place.at_ends
    parts = [f"{n:,} at {t:g} °C" for n, t in ((high, edges[-1]), (low, edges[0])) if n]
    inside = place.builds - low - high
    if inside:
        i = int(np.argmax(counts))
        parts.append(f"{inside:,} inside the range (most between {edges[i]:.3g} and {edges[i + 1]:.3g} °C)")
    return ": " + ", ".join(parts)


def failure_places(s: Spread) -> list[str]:
    """Where builds fail, in words: each window side the Monte Carlo builds miss, how often and at what
    temperature; where none failed, the most probable failure point found."""
    y, v = s.monte_carlo.build_yield, (lambda x: format_value(x, s.unit, 4))
    if y is None:
        return []
    out = []
    for p in (p for p in y.places if p.builds):
        beyond = "below" if p.side == "below" else "above"
        out.append(f"{_NAMES[p.quantity].capitalize()} {beyond} {v(p.limit)}: {p.builds:,} builds "
                   f"({format_probability(p.builds / y.samples)}){_where_in_range(p)}.")
    if not out and y.failure is not None and y.failure.points:
        f = y.failure.points[0]
        at = "" if f.temperature is None else f" at {f.temperature:g} °C"
        out.append(f"No sampled build failed. The most probable failure: the {_NAMES[f.quantity]} "
                   f"{f.side} {v(f.limit)}{at}, {f.beta:.2f} standard deviations out.")
    return out


def corner_words(factors: Sequence[Factor], corner: Mapping[str, float],
                 name: Callable[[str], str] = str) -> str:
    """A corner of :class:`Extreme` in words: each factor (``name`` of its path) at its value in its
    own unit, and the temperature; "" for none."""
    by_name = {f.name: f for f in factors}
    return ", ".join(f"{name(k)} {by_name[k].format(x) if k in by_name else f'{x:g} °C'}"
                     for k, x in corner.items())


def _missing_notes(model: VariedModel, wc: WorstCase) -> list[str]:
    """Where a corner of the box has no switching point somewhere in the range: which corner, at
    what temperature, and why."""
    design, out = model.design, []
    v, volts = (lambda x: format_value(x, design.unit, 4)), (lambda x: format_si(x, "V", 4))
    by_name = {f.name: f for f in model.factors}
    for q in ("upper", "lower"):
        m = wc.missing.get(q)
        if m is None:
            continue
        x = {k: np.asarray(value) for k, value in m.corner.items() if k in by_name}
        at = corner_words(model.factors, m.corner) or "nominal values"
        celsius = m.corner.get("temperature")
        how_many = "a corner" if m.count is None else f"{m.count:,} of {m.corners:,} corners"
        # the drift's sign in the corner stands for the edge of the reference's box
        values = model.values(x, model.middle if celsius is None else celsius, 1.0)
        with np.errstate(all="ignore"):
            pts = design_points(design, values)
            v0, v1, _, _ = front_end_of(design).ends({**model.nominal, **values})
        stage = float(pts.stage_upper if (q == "upper") == pts.rises else pts.stage_lower)
        if math.isfinite(stage):
            lo, hi = sorted((float(v0), float(v1)))
            why = (f"the stage would switch at {volts(stage)} at its input, beyond the {volts(lo)} to "
                   f"{volts(hi)} the front end gives")
        else:
            why = "the stage has no switching point there at all: its + and - pins never cross"
        others = ("" if m.others is None
                  else f"; over the other corners it runs from {v(m.others[0])} to {v(m.others[1])}")
        out.append(f"The stage has no {q} switching point at {how_many} of the tolerance box, so its worst "
                   f"case is not a number: at {at}, {why}. Such a build never switches there{others}.")
    return out


def _findings(design: Design, wc: WorstCase, mc: MonteCarlo) -> list[str]:
    out, v = [], (lambda x: format_value(x, design.unit, 4))
    low, high = input_range(design)
    if wc.upper.max > high:
        out.append(f"At its worst corner the upper point reaches {v(wc.upper.max)}, above the highest "
                   f"signal the source reaches ({v(high)}): such a build never switches on a rising signal.")
    if wc.lower.min < low:
        out.append(f"At its worst corner the lower point falls to {v(wc.lower.min)}, below the lowest "
                   f"signal the source reaches ({v(low)}): such a build never switches back.")
    if wc.hysteresis.min <= 0:
        out.append(f"At its worst corner the hysteresis vanishes ({v(wc.hysteresis.min)}): the output may "
                   "chatter on a slow or noisy signal.")
    if mc.invalid:
        out.append(f"{mc.invalid:,} builds give no finite switching point somewhere in the range; they count "
                   "as failed builds.")
    y = mc.build_yield
    if y is not None and y.failure is not None:
        out += list(y.failure.notes)
    return out


def spread(design: Design, tolerances: Tolerances | None = None, *, samples: int = DEFAULT_SAMPLES,
           seed: int = DEFAULT_SEED, progress: Callable[[int, int], None] | None = None,
           exhaustive_limit: int = EXHAUSTIVE_LIMIT) -> Spread:
    """Worst case, Monte Carlo and sensitivity of a design under its tolerances, over its range."""
    _check_run(samples, seed)
    model = VariedModel(design, tolerances)
    wc = _worst_case(model, exhaustive_limit)
    mc = _monte_carlo(model, samples, seed, progress, DEFAULT_BINS, wc)
    failure = None if mc.build_yield is None else mc.build_yield.failure
    return Spread(design=design, tolerances=model.tolerances, factors=tuple(model.factors),
                  worst_case=wc, monte_carlo=mc, sensitivity=_sensitivity(model),
                  notes=tuple(model.notes + _missing_notes(model, wc) + _findings(design, wc, mc)),
                  cautions=analyze(design).cautions, simplifications=simplifications(model, failure))


def _summary_dict(m: Summary) -> dict:
    return {"mean": m.mean, "std": m.std, "min": m.min, "max": m.max,
            "percentiles": {f"{q:g}": v for q, v in m.percentiles.items()},
            "histogram": {"edges": m.edges.tolist(), "counts": m.counts.tolist()}}


def _yield_dict(y: Yield) -> dict:
    out = {"fraction": y.fraction, "passed": y.passed, "samples": y.samples, "confidence": 0.95,
           "low": y.low, "high": y.high, "outside": y.outside,
           # an open side of a window is null, as in the design file
           "windows": {k: [None if math.isinf(v) else v for v in w] for k, w in y.windows.items()},
           "where": [{"quantity": p.quantity, "side": p.side, "limit": p.limit, "builds": p.builds,
                      "temperatures": None if p.temperatures is None else
                      {"edges": p.temperatures[0].tolist(), "counts": p.temperatures[1].tolist(),
                       "at_lowest": p.at_ends[0], "at_highest": p.at_ends[1]}}
                     for p in y.places]}
    f = y.failure
    out["failure"] = None if f is None else {
        "probability": f.probability, "low": f.low, "high": f.high, "confidence": 0.95, "method": f.method,
        "samples": f.samples, "notes": list(f.notes),
        "points": [{"quantity": p.quantity, "side": p.side, "limit": p.limit, "temperature": p.temperature,
                    "beta": p.beta, "corner": dict(p.corner)}
                   for p in f.points]}
    return out


def spread_to_dict(s: Spread) -> dict:
    """Plain numbers (SI units; temperature in degrees Celsius) of a spread.  A figure that does not
    exist (a worst case at a corner without the point) stays NaN, as the notes say why;
    :mod:`bandcalc.outputs.strict_json` makes it null at the edge, listed under "not_finite"."""
    wc, mc, se = s.worst_case, s.monte_carlo, s.sensitivity

    def extreme(e: Extreme) -> dict:
        return {"min": e.min, "max": e.max, "min_corner": dict(e.min_corner),
                "max_corner": dict(e.max_corner)}

    out_mc: dict = {"samples": mc.samples, "seed": mc.seed, "distribution": s.tolerances.distribution,
                    "invalid": mc.invalid, "middle_temperature": mc.middle,
                    **{q: {**_summary_dict(getattr(mc, q)), "lowest": _summary_dict(mc.lowest[q]),
                           "highest": _summary_dict(mc.highest[q])} for q in QUANTITIES}}
    out_mc["yield"] = None if mc.build_yield is None else _yield_dict(mc.build_yield)
    temperature = s.tolerances.temperature
    return {
        "name": s.design.name,
        "unit": s.unit,
        "temperature": None if temperature is None else {"low": temperature[0], "high": temperature[1]},
        "factors": [{"name": f.name, "unit": f.unit, "nominal": f.nominal, "low": f.low, "high": f.high,
                     "distribution": f.distribution, "origin": f.origin} for f in s.factors],
        "nominal": dict(wc.nominal),
        "worst_case": {"method": wc.method, "evaluated": wc.evaluated,
                       **{q: extreme(getattr(wc, q)) for q in QUANTITIES}},
        "monte_carlo": out_mc,
        "sensitivity": {"mean": dict(se.mean), "std": dict(se.std),
                        **{q: [{"factor": sh.factor, "share": sh.share, "effect": sh.effect,
                                "sigma": sh.sigma} for sh in getattr(se, q)] for q in QUANTITIES}},
        "simplifications": list(s.simplifications),
        "notes": list(s.notes),
        "cautions": list(s.cautions),
    }
