"""Exact search for the standard values that place two switching points best.

The problem: ``k`` resistors, each taking any value of one sorted grid of standard values,
and a model giving both switching points for any set of values.  Rank every combination by
the larger of the two errors (ties: lower current) and return the best few.  A full search
costs ``n**k`` model evaluations (57 million for three resistors over E96 from 1 kOhm to
10 MOhm); this module finds the same best combinations from a few thousand.

Why that is exact.  A switching point is a linear-fractional (Moebius) function of any one
resistance with the others held: every resistor enters the network's linear equations as a
rank-one term, so by Cramer's rule the solution is a ratio of two functions affine in it.
Hence

* three evaluations determine a point as a function of one resistor exactly, and it is
  monotonic there (a Moebius function has no pole at positive resistance here);
* with the last resistor free, each error's magnitude is V-shaped in it, so the set of its
  values where both errors are within a bound ``t`` is one run of neighbouring grid values,
  found from the inverse function and a sorted search.

The search interpolates the points over the last two resistors from a 3 x 3 set of model
evaluations for each combination of the others, takes a bound ``t`` from the best of a few
predicted values, lists every combination whose predicted errors are within ``t`` plus a
margin, and evaluates only those with the model.  The ranking uses the model's values only;
the predictions only choose what to evaluate.  Should a prediction ever miss the model by
more than a quarter of the margin, the search falls back to evaluating everything.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

__all__ = [
    "ERROR_STEP",
    "Evaluate",
    "Found",
    "exhaustive",
    "ranking",
    "search",
]

# Errors are compared in steps of 0.1 nV; within one step the lower current ranks first.
ERROR_STEP = 1e-10
# Margin (relative to the larger target, at least 1 V) added to the bound so that a
# prediction's rounding never drops a combination the model would rank in.
_MARGIN = 1e-7
# Up to this many combinations the model simply evaluates them all.
_DIRECT_LIMIT = 4096
# Model evaluations per call, and interpolated combinations per block.
_CHUNK = 1 << 18

Evaluate = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]]
"""values (m, k) in ohms -> (upper, lower, current), each of shape (m,)."""


@dataclass(frozen=True)
class Found:
    """The best combinations, best first, with the model's values for each."""

    values: np.ndarray  # (count, k) ohms
    upper: np.ndarray
    lower: np.ndarray
    current: np.ndarray
    evaluations: int  # model evaluations spent


def ranking(worst: np.ndarray, current: np.ndarray) -> np.ndarray:
    """Order (indices) by worst error in steps of ERROR_STEP, then by lower current."""
    return np.lexsort((current, np.floor(np.asarray(worst) / ERROR_STEP)))


class _Pool:
    """The best ``count`` points offered so far, plus any tied with the last of them."""

    def __init__(self, grid: np.ndarray, k: int, upper: float, lower: float, count: int) -> None:
        self.grid, self.targets, self.count = grid, (upper, lower), count
        self.values = np.empty((0, k))
        self.u = self.l = self.cur = np.empty(0)
        self.evaluations = 0

    def worst(self, u: np.ndarray, l: np.ndarray) -> np.ndarray:  # noqa: E741
        return np.maximum(np.abs(u - self.targets[0]), np.abs(l - self.targets[1]))

    def offer(self, values: np.ndarray, evaluate: Evaluate) -> tuple[np.ndarray, np.ndarray]:
        u, l, cur = evaluate(values)  # noqa: E741
        self.evaluations += len(values)
        values = np.concatenate([self.values, values])
        # A combination offered twice counts once.
        _, first = np.unique(values, axis=0, return_index=True)
        self.values = values[first]
        self.u, self.l, self.cur = (np.concatenate(p)[first]
                                    for p in ((self.u, u), (self.l, l), (self.cur, cur)))
        w = self.worst(self.u, self.l)
        if len(w) > self.count:
            step = np.floor(w / ERROR_STEP)
            keep = step <= np.partition(step, self.count - 1)[self.count - 1]
            self.values, self.u, self.l, self.cur = (a[keep] for a in (self.values, self.u, self.l, self.cur))
        return u, l

    def bound(self) -> float:
        """The worst error of the count-th best point so far (inf while there are fewer)."""
        if len(self.u) < self.count:
            return np.inf
        return float(np.partition(self.worst(self.u, self.l), self.count - 1)[self.count - 1])

    def found(self) -> Found:
        order = ranking(self.worst(self.u, self.l), self.cur)[: self.count]
        return Found(self.values[order], self.u[order], self.l[order], self.cur[order], self.evaluations)


def _combinations(grid: np.ndarray, k: int, start: int, stop: int) -> np.ndarray:
    """Rows ``start:stop`` of all k-tuples of grid values, the last index running fastest."""
    if k == 0:
        return np.empty((stop - start, 0))
    index = np.unravel_index(np.arange(start, stop), (len(grid),) * k)
    return np.stack([grid[i] for i in index], axis=1)


def exhaustive(evaluate: Evaluate, grid: np.ndarray, k: int, upper: float, lower: float,
               count: int) -> Found:
    """Evaluate every combination with the model, in blocks; the reference the search must equal."""
    pool = _Pool(grid, k, upper, lower, count)
    total = len(grid) ** k
    for start in range(0, total, _CHUNK):
        pool.offer(_combinations(grid, k, start, min(total, start + _CHUNK)), evaluate)
    return pool.found()


# --- One resistor free: a Moebius function through three samples ------------------------------

@dataclass(frozen=True)
class _Curve:
    """Moebius functions of one resistance through samples at x0 < x1 < x2 (cross-ratio form).

    Arrays hold one entry per curve; each curve is monotonic between and beyond its samples.
    """

    x0: float
    x1: float
    x2: float
    y0: np.ndarray
    d1: np.ndarray  # y1 - y0
    d2: np.ndarray  # y2 - y0
    flat: np.ndarray  # no measurable change over the whole range: treated as constant
    low: np.ndarray  # smallest and largest sample, widened by the rounding floor
    high: np.ndarray

    @classmethod
    def through(cls, xs: np.ndarray, y: np.ndarray) -> _Curve:
        """Curves through samples ``y`` of shape (..., 3) taken at the three resistances ``xs``."""
        y0 = y[..., 0]
        d2 = y[..., 2] - y0
        floor = 1e-11 * (1.0 + np.abs(y0))
        flat = np.abs(d2) <= floor
        d2 = np.where(flat, 1.0, d2)
        # A monotonic curve passes strictly between its end samples; keep rounding from
        # putting the middle sample outside them (which would put a pole inside the range).
        ratio = np.clip(np.where(flat, 0.5, (y[..., 1] - y0) / d2), 1e-12, 1 - 1e-12)
        return cls(*(float(v) for v in xs), y0, ratio * d2, d2, flat,
                   y.min(axis=-1) - floor, y.max(axis=-1) + floor)

    def take(self, rows: np.ndarray) -> _Curve:
        """The curves of the given rows."""
        return _Curve(self.x0, self.x1, self.x2, *(a[rows] for a in (self.y0, self.d1, self.d2, self.flat,
                                                                     self.low, self.high)))

    @property
    def _m(self) -> float:
        return (self.x1 - self.x2) / (self.x1 - self.x0)

    def at(self, x: np.ndarray) -> np.ndarray:
        """Values at resistances x (broadcast against the curves)."""
        t = self._m * (x - self.x0)
        y = self.y0 - t * self.d1 * self.d2 / ((self.d1 - self.d2) * (x - self.x2) - t * self.d1)
        return np.where(self.flat, self.y0, y)

    def _x_of(self, w: np.ndarray) -> np.ndarray:
        """The resistance where the curve has moved by w from y0 (w between 0 and d2)."""
        d1, d2, md1 = self.d1, self.d2, self._m * self.d1
        return (w * (d1 - d2) * self.x2 - md1 * self.x0 * (w - d2)) / (w * (d1 - d2) - md1 * (w - d2))

    def band(self, grid: np.ndarray, low: float | np.ndarray,
             high: float | np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """First and last grid index where low <= value <= high (first > last when there is none)."""
        n = len(grid)
        rising = self.d2 > 0
        # Measure from y0 in the direction the curve moves, so that both cases read as rising.
        lo_w = np.where(rising, low - self.y0, self.y0 - high)
        hi_w = np.where(rising, high - self.y0, self.y0 - low)
        span, sign = np.abs(self.d2), np.where(rising, 1.0, -1.0)
        x_lo = self._x_of(np.clip(lo_w, 0, span) * sign)
        x_hi = self._x_of(np.clip(hi_w, 0, span) * sign)
        first = np.where(lo_w <= 0, 0, np.where(lo_w > span, n, np.searchsorted(grid, x_lo, "left")))
        last = np.where(hi_w < 0, -1,
                        np.where(hi_w >= span, n - 1, np.searchsorted(grid, x_hi, "right") - 1))
        inside = (self.low <= high) & (self.high >= low)
        return np.where(self.flat, np.where(inside, 0, n), first), np.where(self.flat, n - 1, last)


# --- The search ----------------------------------------------------------------------------------

def _sample(evaluate: Evaluate, grid: np.ndarray, outer: np.ndarray,
            nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Model values at each outer combination x 3 samples of the last two resistors: (B, 3, 3)."""
    b = len(outer)
    mid, last = np.meshgrid(grid[nodes], grid[nodes], indexing="ij")
    pts = np.concatenate([np.repeat(outer, 9, axis=0),
                          np.tile(np.stack([mid.ravel(), last.ravel()], axis=1), (b, 1))], axis=1)
    u, l, _ = evaluate(pts)  # noqa: E741
    return u.reshape(b, 3, 3), l.reshape(b, 3, 3)


def _gaps(curve: _Curve, grid: np.ndarray, low: float, high: float) -> tuple[np.ndarray, np.ndarray]:
    """The index set where ``low <= value <= high`` as ``i <= p or i >= q``, for a one-sided bound.

    With one of the bounds infinite the set is a prefix or a suffix of the grid (the curve is
    monotonic); a prefix is written (p, n) and a suffix (-1, q).
    """
    n = len(grid)
    first, last = curve.band(grid, low, high)
    empty = first > last
    prefix = (first == 0) & ~empty
    return np.where(prefix, last, -1), np.where(prefix | empty, n, first)


class _Bisection:
    """Branch and bound over the middle resistor's index range, one range per outer combination.

    For a range [a, b] of the middle resistor, each switching point lies between its values
    at a and at b for every value of the last resistor (monotonic in the middle one).  A range
    whose two ends leave no last value with both errors within the bound cannot hold a
    combination that ranks, and is dropped; the others are halved until single values remain.
    """

    def __init__(self, grid: np.ndarray, samples: tuple[np.ndarray, np.ndarray],
                 targets: tuple[float, float]) -> None:
        self.grid, self.targets = grid, targets
        xs = grid[np.array([0, len(grid) // 2, len(grid) - 1])]
        # Curves along the middle resistor, one per outer combination and sample of the last.
        self.mid = [_Curve.through(xs, np.moveaxis(s, 1, 2)) for s in samples]
        self.xs = xs

    def last_curves(self, outer: np.ndarray, mid: np.ndarray) -> tuple[_Curve, _Curve]:
        """Curves of both points along the last resistor at the given (outer, middle index) pairs."""
        x = self.grid[mid][:, None]
        return tuple(_Curve.through(self.xs, c.take(outer).at(x)) for c in self.mid)

    def alive(self, ends: list[tuple[_Curve, _Curve]], bound: float) -> np.ndarray:
        """Whether some last value may bring both points within ``bound`` for the ranges' ends."""
        n = len(self.grid)
        gaps = []
        for which, target in enumerate(self.targets):
            for low, high in ((-np.inf, target + bound), (target - bound, np.inf)):
                ps, qs = zip(*(_gaps(end[which], self.grid, low, high) for end in ends), strict=True)
                gaps.append((np.maximum.reduce(ps), np.minimum.reduce(qs)))
        ok = np.zeros(len(gaps[0][0]), dtype=bool)
        for start in [np.zeros_like(gaps[0][1])] + [q for _, q in gaps]:
            inside = start <= n - 1
            for p, q in gaps:
                inside &= (start <= p) | (start >= q)
            ok |= inside
        return ok

    def runs(self, curves: tuple[_Curve, _Curve], bound: float) -> tuple[np.ndarray, np.ndarray]:
        """For single combinations: the first and last index of the last resistor within bound."""
        (cu, cl), (up, lo) = curves, self.targets
        fu, lu = cu.band(self.grid, up - bound, up + bound)
        fl, ll = cl.band(self.grid, lo - bound, lo + bound)
        return np.maximum(fu, fl), np.minimum(lu, ll)

    def hint(self, curves: tuple[_Curve, _Curve]) -> tuple[np.ndarray, np.ndarray]:
        """A good last index for each combination (next to where the upper point is hit), predicted worst."""
        (cu, cl), (up, lo) = curves, self.targets
        first, _ = cu.band(self.grid, up, up)
        j = np.clip(first, 0, len(self.grid) - 1)
        x = self.grid[j]
        return j, np.maximum(np.abs(cu.at(x) - up), np.abs(cl.at(x) - lo))


def search(evaluate: Evaluate, grid: np.ndarray, k: int, upper: float, lower: float,
           count: int) -> Found:
    """The best ``count`` combinations of k grid values, equal to :func:`exhaustive`.

    Parameters
    ----------
    evaluate : callable
        values (m, k) in ohms -> (upper, lower, current) from the model.
    grid : numpy.ndarray
        Sorted standard values, ohms.
    k : int
        Resistors to choose.
    upper, lower : float
        Target switching points, volts.
    count : int
        Combinations to return, best first.
    """
    n = len(grid)
    if k < 2 or n < 3 or n**k <= _DIRECT_LIMIT:
        return exhaustive(evaluate, grid, k, upper, lower, count)
    nodes = np.array([0, n // 2, n - 1])
    margin = _MARGIN * max(1.0, abs(upper), abs(lower)) + ERROR_STEP
    pool = _Pool(grid, k, upper, lower, count)
    n_outer = n ** (k - 2)
    for start in range(0, n_outer, _CHUNK // 9):
        outer = _combinations(grid, k - 2, start, min(n_outer, start + _CHUNK // 9))
        samples = _sample(evaluate, grid, outer, nodes)
        pool.evaluations += 9 * len(outer)
        if not _bisect(_Bisection(grid, samples, (upper, lower)), outer, pool, evaluate, margin):
            return exhaustive(evaluate, grid, k, upper, lower, count)
    return pool.found()


def _bisect(b: _Bisection, outer: np.ndarray, pool: _Pool, evaluate: Evaluate, margin: float) -> bool:
    """Run the branch and bound for one block of outer combinations; False if a prediction failed."""
    grid, n = b.grid, len(b.grid)
    o = np.arange(len(outer))
    lo, hi = np.zeros(len(o), dtype=np.intp), np.full(len(o), n - 1, dtype=np.intp)
    while len(o):
        at_lo = b.last_curves(o, lo)
        # Tighten the bound first: evaluate the most promising predicted combinations.
        j, guess = b.hint(at_lo)
        best = np.argsort(guess)[: pool.count]
        pool.offer(np.column_stack([outer[o[best]], grid[lo[best]], grid[j[best]]]), evaluate)
        bound = pool.bound() + margin
        single = lo == hi
        if single.any():
            s = np.flatnonzero(single)
            curves = tuple(c.take(s) for c in at_lo)
            first, last = b.runs(curves, bound)
            if not _evaluate_runs(outer[o[s]], grid[lo[s]], first, last, curves, pool, evaluate, margin):
                return False
        wide = ~single
        ranges = np.flatnonzero(wide)
        keep = b.alive([tuple(c.take(ranges) for c in at_lo), b.last_curves(o[wide], hi[wide])], bound)
        o, lo, hi = o[wide][keep], lo[wide][keep], hi[wide][keep]
        mid = (lo + hi) // 2
        o, lo, hi = np.concatenate([o, o]), np.concatenate([lo, mid + 1]), np.concatenate([mid, hi])
    return True


def _evaluate_runs(heads: np.ndarray, mids: np.ndarray, first: np.ndarray, last: np.ndarray,
                   curves: tuple[_Curve, _Curve], pool: _Pool, evaluate: Evaluate, margin: float) -> bool:
    """Evaluate each combination's run of last values with the model; False if a prediction missed."""
    runs = np.maximum(last - first + 1, 0)
    if not runs.any():
        return True
    row = np.repeat(np.arange(len(runs)), runs)
    j = first[row] + np.arange(len(row)) - np.repeat(np.cumsum(runs) - runs, runs)
    x = pool.grid[j]
    u, l = pool.offer(np.column_stack([heads[row], mids[row], x]), evaluate)  # noqa: E741
    miss = max(np.max(np.abs(u - curves[0].take(row).at(x))), np.max(np.abs(l - curves[1].take(row).at(x))))
    return bool(miss <= margin / 4)
