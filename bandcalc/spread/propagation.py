"""Spread of the switching points over part tolerances and temperature.

Three analyses of one design, all through the one vectorized stage model
(:class:`bandcalc.spread.factors.VariedModel` over the stage model, through the front end if any):

- worst case: the exact least and greatest upper point, lower point and hysteresis over the
  whole tolerance box, and the corner that gives each;
- Monte Carlo: seeded, reproducible sampling of every factor at once, with statistics,
  histograms and the yield against the design's windows;
- sensitivity: each factor's first-order share of each point's variance, ranked.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.operating import analyze
from bandcalc.model.points import design_points, input_range
from bandcalc.model.tolerances import Tolerances
from bandcalc.model.units import format_si, format_value
from bandcalc.spread.factors import QUANTITIES, Factor, VariedModel

__all__ = [
    "CHUNK",
    "DEFAULT_SAMPLES",
    "DEFAULT_SEED",
    "EXHAUSTIVE_LIMIT",
    "MAX_SAMPLES",
    "MIN_SAMPLES",
    "PERCENTILES",
    "Missing",
    "Extreme",
    "MonteCarlo",
    "Sensitivity",
    "Share",
    "Spread",
    "SpreadError",
    "Summary",
    "WorstCase",
    "Yield",
    "monte_carlo",
    "sensitivity",
    "spread",
    "spread_to_dict",
    "summarize",
    "wilson_interval",
    "worst_case",
]

#: Percentiles reported (percent): +/-3 sigma and +/-1.96 sigma of a normal distribution, and the median.
PERCENTILES = (0.135, 2.5, 50.0, 97.5, 99.865)
DEFAULT_SAMPLES = 100_000
MAX_SAMPLES = 10_000_000
MIN_SAMPLES = 10
DEFAULT_SEED = 1
#: Samples per model call: blocks this small keep the model's intermediate arrays in the
#: processor's cache, which measured up to twice as fast per sample as one call over a million.
CHUNK = 32_768
#: Up to this many factors every corner of the box is evaluated; beyond, the corner is searched.
EXHAUSTIVE_LIMIT = 20
DEFAULT_BINS = 60
#: Two-sided 95 % quantile of the standard normal distribution (normal-distribution tables).
Z95 = 1.959963984540054


class SpreadError(BandcalcError):
    """A spread request that cannot be run; the message names the setting and what is allowed."""


# --- worst case -------------------------------------------------------------------------------

@dataclass(frozen=True)
class Extreme:
    """Least and greatest value (volts) of one quantity over the box, and the corner of each.

    A corner maps each factor's name to its value there, in the factor's unit.
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
    """Extremes of the upper point, the lower point and the hysteresis over the tolerance box.

    Where some corner has no switching point (no value of the input switches the stage there),
    that quantity's extremes are NaN at that corner and ``missing`` says where and how many.
    """

    nominal: dict[str, float]
    upper: Extreme
    lower: Extreme
    hysteresis: Extreme
    method: str
    evaluated: int
    missing: dict[str, Missing] = field(default_factory=dict)


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
        values = model.at_unit(z)
        for q in QUANTITIES:
            v = values[q]
            bad = ~np.isfinite(v)
            if bad.any():
                lacking[q][0] += int(np.count_nonzero(bad))
                if lacking[q][1] is None:
                    lacking[q][1] = z[int(np.argmax(bad))]
                if bad.all():
                    continue
            lo, hi = int(np.argmin(np.where(bad, np.inf, v))), int(np.argmax(np.where(bad, -np.inf, v)))
            if v[lo] < best[q][0]:
                best[q][:2] = v[lo], z[lo]
            if v[hi] > best[q][2]:
                best[q][2:] = v[hi], z[hi]
    corners, missing = {}, {}
    for q, (count, z_missing) in lacking.items():
        if count:
            others = None if best[q][1] is None else (float(best[q][0]), float(best[q][2]))
            missing[q] = Missing(count, total, model.corner(z_missing), others)
            corners[q] = (z_missing, z_missing)
        else:
            corners[q] = (best[q][1], best[q][3])
    return corners, total, missing


def _searched(model: VariedModel, quantity: str, sign: float, slope: np.ndarray) -> tuple[np.ndarray, int]:
    """The corner picked by the signs of the partial derivatives, refined by single flips.

    Each point is monotonic in each part value alone, so the signs at the centre give the
    extreme corner; a flip of one factor at a time is then tried until none improves,
    which catches a partial derivative whose sign differs between the centre and the corner.
    """
    k = len(model.factors)
    z = np.where(sign * slope >= 0, 1.0, -1.0)
    best = sign * model.at_unit(z[None, :])[quantity][0]
    evaluated = 1
    for _ in range(4 * k):
        flips = np.tile(z, (k, 1))
        flips[np.arange(k), np.arange(k)] *= -1
        values = sign * model.at_unit(flips)[quantity]
        evaluated += k
        j = int(np.argmax(values))
        if not values[j] > best:
            break
        z, best = flips[j], values[j]
    return z, evaluated


def _worst_case(model: VariedModel, exhaustive_limit: int) -> WorstCase:
    nominal = {q: float(v[0]) for q, v in model.evaluate({}, 1).items()}  # every part at nominal
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
    extremes = {}
    for q, (lo, hi) in corners.items():
        both = model.at_unit(np.stack([lo, hi]))[q]
        extremes[q] = Extreme(min=float(both[0]), max=float(both[1]),
                              min_corner=model.corner(lo), max_corner=model.corner(hi))
        if q not in missing and not np.isfinite(both).all():  # a searched corner without the point
            z = lo if not np.isfinite(both[0]) else hi
            missing[q] = Missing(None, None, model.corner(z), None)
    return WorstCase(nominal=nominal, method=method, evaluated=evaluated, missing=missing, **extremes)


def worst_case(design: Design, tolerances: Tolerances | None = None, *,
               exhaustive_limit: int = EXHAUSTIVE_LIMIT) -> WorstCase:
    """Exact extremes of each switching point and of the hysteresis over the tolerance box.

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
    Each point is monotonic in each part value alone, so the extremes sit at corners.  The
    temperature moves several parts at once; the points' curvature in it is of second order in
    tempco x (T - 25 C), so the ends of the range give the extremes to that order (the tests
    compare the corners with a fine temperature grid).
    """
    return _worst_case(VariedModel(design, tolerances), exhaustive_limit)


# --- Monte Carlo ------------------------------------------------------------------------------

@dataclass(frozen=True)
class Summary:
    """Statistics (volts) of one quantity over the samples; ``percentiles`` keyed by percent."""

    mean: float
    std: float
    min: float
    max: float
    percentiles: dict[float, float]
    edges: np.ndarray
    counts: np.ndarray


@dataclass(frozen=True)
class Yield:
    """Share of builds inside every window, with its 95 % Wilson score interval."""

    windows: dict[str, tuple[float, float]]
    passed: int
    samples: int
    low: float
    high: float
    outside: dict[str, int]

    @property
    def fraction(self) -> float:
        return self.passed / self.samples


@dataclass(frozen=True)
class MonteCarlo:
    """Sampled spread of the points; ``build_yield`` is None when the design gives no windows."""

    samples: int
    seed: int
    upper: Summary
    lower: Summary
    hysteresis: Summary
    build_yield: Yield | None
    invalid: int


def wilson_interval(passed: int, n: int, z: float = Z95) -> tuple[float, float]:
    """Wilson score interval of a binomial proportion (E. B. Wilson, JASA 22, 1927, pp. 209-212)."""
    p = passed / n
    denominator = 1.0 + z * z / n
    centre = (p + z * z / (2 * n)) / denominator
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / denominator
    return max(0.0, centre - half), min(1.0, centre + half)


def summarize(values: np.ndarray, bins: int) -> Summary:
    """Statistics of the finite ``values``: mean, standard deviation, extremes, the PERCENTILES
    (linear interpolation) and a histogram of ``bins`` equal bins from the least to the greatest."""
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


def _yield(samples: dict[str, np.ndarray], windows: dict[str, tuple[float, float]]) -> Yield:
    ok = np.ones(samples["upper"].size, dtype=bool)
    outside = {}
    for key, (lo, hi) in windows.items():
        inside = (samples[key] >= lo) & (samples[key] <= hi)
        outside[key] = int(inside.size - np.count_nonzero(inside))
        ok &= inside
    passed, n = int(np.count_nonzero(ok)), ok.size
    low, high = wilson_interval(passed, n)
    return Yield(windows=windows, passed=passed, samples=n, low=low, high=high, outside=outside)


def _monte_carlo(model: VariedModel, samples: int, seed: int, progress: Callable[[int, int], None] | None,
                 bins: int) -> MonteCarlo:
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) \
            or not MIN_SAMPLES <= samples <= MAX_SAMPLES:
        raise SpreadError(f"samples: must be a whole number from {MIN_SAMPLES:,} to {MAX_SAMPLES:,}, "
                          f"got {samples!r}")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise SpreadError(f"seed: must be a whole number, 0 or more, got {seed!r}")
    # One generator per factor: the numbers do not depend on the block size.
    generators = np.random.default_rng(seed).spawn(len(model.factors))
    upper, lower = np.empty(samples), np.empty(samples)
    buffers = {f.name: np.empty(min(CHUNK, samples)) for f in model.factors}  # reused by every block
    done = 0
    while done < samples:
        n = min(CHUNK, samples - done)
        x = {f.name: f.draw(g, n, buffers[f.name][:n])
             for f, g in zip(model.factors, generators, strict=True)}
        values = model.evaluate(x, n)
        upper[done:done + n], lower[done:done + n] = values["upper"], values["lower"]
        done += n
        if progress is not None:
            progress(done, samples)
    sampled = {"upper": upper, "lower": lower, "hysteresis": upper - lower}
    windows = model.tolerances.limits.windows()
    invalid = int(samples - np.count_nonzero(np.isfinite(sampled["hysteresis"])))
    return MonteCarlo(samples=samples, seed=int(seed), invalid=invalid,
                      build_yield=_yield(sampled, windows) if windows else None,
                      **{q: summarize(sampled[q], bins) for q in QUANTITIES})


def monte_carlo(design: Design, tolerances: Tolerances | None = None, *, samples: int = DEFAULT_SAMPLES,
                seed: int = DEFAULT_SEED, progress: Callable[[int, int], None] | None = None,
                bins: int = DEFAULT_BINS) -> MonteCarlo:
    """Sample the design's builds: statistics, histograms and yield of each point.

    Parameters
    ----------
    samples : int
        10 to 10,000,000; evaluated in blocks of :data:`CHUNK`.
    seed : int
        The same seed gives the same numbers, whatever the block size.
    progress : callable(done, total), optional
        Called after each block.
    """
    return _monte_carlo(VariedModel(design, tolerances), samples, seed, progress, bins)


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
    centre = model.at_unit(np.zeros((1, k)))
    slopes = model.gradient()
    ranked, std = {}, {}
    for q in QUANTITIES:
        sigmas = np.array([abs(s) * f.sigma_unit for s, f in zip(slopes[q], model.factors, strict=True)])
        total = float(np.sum(sigmas**2))
        std[q] = math.sqrt(total)
        shares = [Share(f.name, float(s), float(sg), float(sg**2 / total) if total > 0 else 0.0)
                  for f, s, sg in zip(model.factors, slopes[q], sigmas, strict=True)]
        ranked[q] = tuple(sorted(shares, key=lambda sh: -sh.share))
    return Sensitivity(mean={q: float(centre[q][0]) for q in QUANTITIES}, std=std, **ranked)


def sensitivity(design: Design, tolerances: Tolerances | None = None) -> Sensitivity:
    """Each factor's first-order share of each point's variance: (dq/dx sigma_x)^2, normalised.

    The ranking shows which part to tighten.  Derivatives are central differences through the
    model at the centre of every range.
    """
    return _sensitivity(VariedModel(design, tolerances))


# --- all three --------------------------------------------------------------------------------

@dataclass(frozen=True)
class Spread:
    """Worst case, Monte Carlo and sensitivity of one design, with notes and cautions."""

    design: Design
    tolerances: Tolerances
    factors: tuple[Factor, ...]
    worst_case: WorstCase
    monte_carlo: MonteCarlo
    sensitivity: Sensitivity
    notes: tuple[str, ...]
    cautions: tuple[str, ...]

    @property
    def unit(self) -> str:
        """Unit of the points: the design's (volts, or a front end's watched quantity)."""
        return self.design.unit


def _missing_notes(model: VariedModel, wc: WorstCase) -> list[str]:
    """Where a corner of the box has no switching point: which corner, and why."""
    design, out = model.design, []
    v, volts = (lambda x: format_value(x, design.unit, 4)), (lambda x: format_si(x, "V", 4))
    by_name = {f.name: f for f in model.factors}
    for q in ("upper", "lower"):
        m = wc.missing.get(q)
        if m is None:
            continue
        at = ", ".join(f"{k} {by_name[k].format(x)}" for k, x in m.corner.items()) or "nominal values"
        how_many = "a corner" if m.count is None else f"{m.count:,} of {m.corners:,} corners"
        values = model.values({k: np.asarray(x) for k, x in m.corner.items()})
        with np.errstate(all="ignore"):
            pts = design_points(design, values)
            v0, v1, _, _ = front_end_of(design).ends({**model.nominal, **values})
        stage = float(pts.stage_upper if (q == "upper") == pts.rises else pts.stage_lower)
        if math.isfinite(stage):
            lo, hi = sorted(float(x) for x in (v0, v1))
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
        out.append(f"{mc.invalid:,} samples give no finite switching point; they count as failed builds.")
    return out


def spread(design: Design, tolerances: Tolerances | None = None, *, samples: int = DEFAULT_SAMPLES,
           seed: int = DEFAULT_SEED, progress: Callable[[int, int], None] | None = None,
           exhaustive_limit: int = EXHAUSTIVE_LIMIT) -> Spread:
    """Worst case, Monte Carlo and sensitivity of a design under its tolerances."""
    model = VariedModel(design, tolerances)
    wc = _worst_case(model, exhaustive_limit)
    mc = _monte_carlo(model, samples, seed, progress, DEFAULT_BINS)
    return Spread(design=design, tolerances=model.tolerances, factors=tuple(model.factors),
                  worst_case=wc, monte_carlo=mc, sensitivity=_sensitivity(model),
                  notes=tuple(model.notes + _missing_notes(model, wc) + _findings(design, wc, mc)),
                  cautions=analyze(design).cautions)


def spread_to_dict(s: Spread) -> dict:
    """Plain JSON-ready numbers (SI units; temperature in degrees Celsius) of a spread."""
    wc, mc, se = s.worst_case, s.monte_carlo, s.sensitivity

    def extreme(e: Extreme) -> dict:
        return {"min": e.min, "max": e.max, "min_corner": dict(e.min_corner),
                "max_corner": dict(e.max_corner)}

    def summary(m: Summary) -> dict:
        return {"mean": m.mean, "std": m.std, "min": m.min, "max": m.max,
                "percentiles": {f"{q:g}": v for q, v in m.percentiles.items()},
                "histogram": {"edges": m.edges.tolist(), "counts": m.counts.tolist()}}

    out_mc: dict = {"samples": mc.samples, "seed": mc.seed, "distribution": s.tolerances.distribution,
                    "invalid": mc.invalid, **{q: summary(getattr(mc, q)) for q in QUANTITIES}}
    y = mc.build_yield
    out_mc["yield"] = None if y is None else {
        "fraction": y.fraction, "passed": y.passed, "samples": y.samples, "confidence": 0.95,
        "low": y.low, "high": y.high, "outside": y.outside,
        "windows": {k: [None if math.isinf(v) else v for v in w] for k, w in y.windows.items()}}
    return {
        "name": s.design.name,
        "unit": s.unit,
        "factors": [{"name": f.name, "unit": f.unit, "nominal": f.nominal, "low": f.low, "high": f.high,
                     "distribution": f.distribution, "origin": f.origin} for f in s.factors],
        "nominal": wc.nominal,
        "worst_case": {"method": wc.method, "evaluated": wc.evaluated,
                       **{q: extreme(getattr(wc, q)) for q in QUANTITIES}},
        "monte_carlo": out_mc,
        "sensitivity": {"mean": se.mean, "std": se.std,
                        **{q: [{"factor": sh.factor, "share": sh.share, "effect": sh.effect,
                                "sigma": sh.sigma} for sh in getattr(se, q)] for q in QUANTITIES}},
        "notes": list(s.notes),
        "cautions": list(s.cautions),
    }
