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
more than a quarter of the margin, the search falls back to evaluating everything; where that
would not fit in what is left of its budget (rounding over ranges of ten decades and more
gives such misses), it searches again with a margin of at least four times the miss.

A budget.  The search counts the combinations it checks: each evaluated with the model and
each predicted from the samples counts one.  It never starts a step that would take it past
its budget (``BUDGET`` unless the caller gives another); where it would, it stops and returns
the best combinations evaluated so far, marked not proven (``Found.proven``).  Seeds (say, the
grid values around the exact continuous solution) are evaluated first, so a stopped search
keeps at least those.  Before searching, :func:`search_size` estimates the work: at most every
combination of all values but the last (the last follows from the others through a sorted
search); on stages of four and five free values the checks made came within a factor of two
of it.  A caller may report progress: ``progress(checked, budget)`` is called before each
step, and may raise to stop the search (the page's Stop does).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError

__all__ = [
    "BUDGET",
    "ERROR_STEP",
    "Aim",
    "Curve",
    "Evaluate",
    "Found",
    "exhaustive",
    "ranking",
    "outside",
    "search",
    "search_size",
    "window",
]

# Errors are compared in steps of 0.1 nV; within one step the lower current ranks first.
ERROR_STEP = 1e-10
# Margin (relative to the larger target, at least 1 V) added to the bound so that a
# prediction's rounding never drops a combination the model would rank in.
_MARGIN = 1e-7
# Up to this many combinations the model simply evaluates them all.
_DIRECT_LIMIT = 4096
# Up to this many combinations of the resistors before the last two, each is a starting box.
_OUTER_LIMIT = 1024
# Model evaluations per call of the full enumeration.
_CHUNK = 1 << 18
# Combinations a search checks at most (evaluated or predicted): about a second or two of work
# on one core of a shared machine (benchmarks/bench_fit.py prints the time of runs that reach it).
BUDGET = 2_000_000

Evaluate = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]]
"""values (m, k) in ohms -> (upper, lower, current), each of shape (m,)."""

Progress = Callable[[int, int], None]
"""(combinations checked so far, budget); called before each step of a search; may raise to stop it."""

Aim = float | tuple[float, float]
"""Where a point should sit: a target, or a window (lowest, highest), one side possibly infinite."""


def window(aim: Aim) -> tuple[float, float]:
    """An aim as a window: a target ``x`` is the window (x, x)."""
    if isinstance(aim, tuple):
        return float(aim[0]), float(aim[1])
    return float(aim), float(aim)


def outside(u: np.ndarray, l: np.ndarray, upper: Aim, lower: Aim) -> np.ndarray:  # noqa: E741
    """How far the points stand outside their windows (the larger of the two; negative: inside by
    that much); for targets, the larger of the two errors."""
    (ul, uh), (ll, lh) = window(upper), window(lower)
    return np.maximum(np.maximum(ul - u, u - uh), np.maximum(ll - l, l - lh))


@dataclass(frozen=True)
class Found:
    """The best combinations, best first, with the model's values for each."""

    values: np.ndarray  # (count, k) ohms
    upper: np.ndarray
    lower: np.ndarray
    current: np.ndarray
    evaluations: int  # model evaluations spent by the search that gave these values
    checked: int  # combinations checked, evaluated or predicted: what the budget counts
    proven: bool  # False where the search stopped at its budget: the best evaluated, not proven best


def search_size(n: int, k: int) -> int:
    """Combinations a search of k values over n grid values may have to check: every combination
    of all values but the last (the last follows from the others), and the n values of one alone."""
    return n ** max(k - 1, 1)


class _OutOfBudget(BandcalcError):
    """The next step would take the search past its budget; caught in the search, which then
    returns the best found, not proven (a BandcalcError like every error class of the package)."""


class _Budget:
    """Combinations checked so far against the most a search may check."""

    def __init__(self, limit: int | None, progress: Progress | None) -> None:
        self.limit, self.progress, self.checked = limit, progress, 0

    def left(self) -> float:
        return math.inf if self.limit is None else self.limit - self.checked

    def fits(self, count: int) -> None:
        """Raise _OutOfBudget where ``count`` more checks would not fit."""
        if count > self.left():
            raise _OutOfBudget(f"the search reached its limit of {self.limit:,} combinations checked")

    def spend(self, count: int) -> None:
        """Count ``count`` checks about to be made, or raise _OutOfBudget where they do not fit."""
        self.fits(count)
        self.checked += count
        if self.progress is not None and self.limit is not None:
            self.progress(self.checked, self.limit)


def ranking(worst: np.ndarray, current: np.ndarray) -> np.ndarray:
    """Order (indices) by worst error in steps of ERROR_STEP, then by lower current."""
    return np.lexsort((current, np.floor(np.asarray(worst) / ERROR_STEP)))


class _Pool:
    """The best ``count`` points offered so far, plus any tied with the last of them."""

    def __init__(self, grid: np.ndarray, k: int, upper: Aim, lower: Aim, count: int,
                 budget: _Budget) -> None:
        self.grid, self.count, self.budget = grid, count, budget
        self.aims, self.windows = (upper, lower), (window(upper), window(lower))
        # Where the search aims each point first: its target, a window's middle or its finite edge.
        self.targets = tuple(lo if not math.isfinite(hi) else hi if not math.isfinite(lo) else 0.5 * (lo + hi)
                             for lo, hi in self.windows)
        self.values = np.empty((0, k))
        self.u = self.l = self.cur = np.empty(0)
        self.evaluations = 0

    def worst(self, u: np.ndarray, l: np.ndarray) -> np.ndarray:  # noqa: E741
        return outside(u, l, *self.aims)

    def offer(self, values: np.ndarray, evaluate: Evaluate) -> tuple[np.ndarray, np.ndarray]:
        self.budget.spend(len(values))
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

    def found(self, proven: bool = True) -> Found:
        order = ranking(self.worst(self.u, self.l), self.cur)[: self.count]
        return Found(self.values[order], self.u[order], self.l[order], self.cur[order], self.evaluations,
                     self.budget.checked, proven)


def _combinations(grid: np.ndarray, k: int, start: int, stop: int) -> np.ndarray:
    """Rows ``start:stop`` of all k-tuples of grid values, the last index running fastest."""
    if k == 0:
        return np.empty((stop - start, 0))
    index = np.unravel_index(np.arange(start, stop), (len(grid),) * k)
    return np.stack([grid[i] for i in index], axis=1)


def exhaustive(evaluate: Evaluate, grid: np.ndarray, k: int, upper: Aim, lower: Aim,
               count: int, budget: int | None = None, progress: Progress | None = None) -> Found:
    """Evaluate every combination with the model, in blocks; the reference the search must equal.

    With a ``budget`` (combinations) it stops before a block that would exceed it and returns the
    best of the blocks evaluated, not proven; without one it evaluates everything.
    """
    return _exhaustive(evaluate, grid, k, upper, lower, count, _Budget(budget, progress))


def _exhaustive(evaluate: Evaluate, grid: np.ndarray, k: int, upper: Aim, lower: Aim, count: int,
                budget: _Budget) -> Found:
    pool = _Pool(grid, k, upper, lower, count, budget)
    total = len(grid) ** k
    try:
        for start in range(0, total, _CHUNK):
            pool.offer(_combinations(grid, k, start, min(total, start + _CHUNK)), evaluate)
    except _OutOfBudget:
        return pool.found(proven=False)
    return pool.found()


# --- One resistor free: a Moebius function through three samples ------------------------------

@dataclass(frozen=True)
class Curve:
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
    def through(cls, xs: np.ndarray, y: np.ndarray) -> Curve:
        """Curves through samples ``y`` of shape (..., 3) taken at the three resistances ``xs``."""
        y0 = y[..., 0]
        d2 = y[..., 2] - y0
        floor = 1e-11 * (1.0 + np.abs(y0))
        flat = np.abs(d2) <= floor
        d2 = np.where(flat, 1.0, d2)
        # A monotonic curve passes strictly between its end samples; keep rounding from
        # putting the middle sample outside them (which would put a pole inside the range).
        ratio = np.clip(np.where(flat, 0.5, (y[..., 1] - y0) / d2), 1e-12, 1 - 1e-12)
        y1, y2 = y[..., 1], y[..., 2]
        return cls(*(float(v) for v in xs), y0, ratio * d2, d2, flat,
                   np.minimum(np.minimum(y0, y1), y2) - floor, np.maximum(np.maximum(y0, y1), y2) + floor)

    def take(self, rows: np.ndarray) -> Curve:
        """The curves of the given rows."""
        return Curve(self.x0, self.x1, self.x2, *(a[rows] for a in (self.y0, self.d1, self.d2, self.flat,
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

    def side(self, grid: np.ndarray, theta: float, below: bool) -> tuple[np.ndarray, np.ndarray]:
        """The grid indices where value <= theta (``below``) or >= theta, as ``i <= p or i >= q``.

        The curve is monotonic, so the set is a prefix of the grid, written (p, n), or a suffix,
        written (-1, q); everything is (n - 1, n) and nothing (-1, n).
        """
        n = len(grid)
        rising = self.d2 > 0
        # How far along its own direction the curve must move from y0 to reach theta.
        w = np.where(rising, theta - self.y0, self.y0 - theta)
        span = np.abs(self.d2)
        x = self._x_of(np.clip(w, 0, span) * np.where(rising, 1.0, -1.0))
        left = np.searchsorted(grid, x, "left")
        right = left + (grid[np.minimum(left, n - 1)] == x)
        prefix = rising == below
        last = np.where(w < 0, -1, np.where(w >= span, n - 1, right - 1))
        first = np.where(w <= 0, 0, np.where(w > span, n, left))
        reached = (self.low <= theta) if below else (self.high >= theta)
        p = np.where(self.flat, np.where(reached, n - 1, -1), np.where(prefix, last, -1))
        q = np.where(self.flat | prefix, n, first)
        return p, q

    def band(self, grid: np.ndarray, low: float, high: float) -> tuple[np.ndarray, np.ndarray]:
        """First and last grid index where low <= value <= high (first > last when there is none)."""
        n = len(grid)
        firsts, lasts = [], []
        for theta, below in ((low, False), (high, True)):
            p, q = self.side(grid, theta, below)
            firsts.append(np.where(q == n, 0, q))
            lasts.append(np.where(q == n, p, n - 1))
        return np.maximum(*firsts), np.minimum(*lasts)


# --- The search ----------------------------------------------------------------------------------

class _Branching:
    """Branch and bound over boxes of grid indices of all resistors but the last.

    Within a box each switching point lies, for every value of the last resistor, between its
    values at the box's corners (it is monotonic in each resistor).  A box whose corners leave
    no last value with both errors within the bound holds no combination that ranks and is
    dropped; the others are halved until single combinations remain, whose runs of last values
    within the bound are then evaluated with the model.

    The points along the last resistor at a corner come from a 3 x 3 sample of the model over
    the last two resistors, taken once per combination of the others (kept in a cache), and
    interpolated along the middle resistor.
    """

    def __init__(self, evaluate: Evaluate, grid: np.ndarray, k: int, pool: _Pool) -> None:
        self.evaluate, self.grid, self.k, self.pool = evaluate, grid, k, pool
        n = len(grid)
        self.xs = grid[np.array([0, n // 2, n - 1])]
        self.keys = np.empty(0, dtype=np.int64)
        self.samples = np.empty((0, 2, 3, 3))  # per outer combination: (u, l) x last sample x mid sample
        self.along_mid = self._along_mid()

    def _along_mid(self) -> tuple[Curve, Curve]:
        """Curves of both points along the middle resistor, per sampled outer combination and last sample."""
        return tuple(Curve.through(self.xs, self.samples[:, i]) for i in (0, 1))

    def _rows(self, outer: np.ndarray) -> np.ndarray:
        """Cache rows for outer index rows (m, k - 2), sampling the model for new ones."""
        n, width = len(self.grid), self.k - 2
        keys = np.ravel_multi_index(tuple(outer.T), (n,) * width) if width else np.zeros(len(outer), np.int64)
        new = np.setdiff1d(keys, self.keys)
        if len(new):
            rows = np.stack(np.unravel_index(new, (n,) * width), axis=1) if width else np.empty((1, 0), int)
            mid, last = np.meshgrid(self.xs, self.xs, indexing="ij")
            tail = np.tile(np.stack([mid.ravel(), last.ravel()], axis=1), (len(new), 1))
            pts = np.concatenate([np.repeat(self.grid[rows], 9, axis=0), tail], axis=1)
            self.pool.budget.spend(len(pts))
            u, l, _ = self.evaluate(pts)  # noqa: E741
            self.pool.evaluations += len(pts)
            keys_all = np.concatenate([self.keys, new])
            order = np.argsort(keys_all)
            sampled = np.swapaxes(np.stack([u.reshape(-1, 3, 3), l.reshape(-1, 3, 3)], axis=1), 2, 3)
            self.keys, self.samples = keys_all[order], np.concatenate([self.samples, sampled])[order]
            self.along_mid = self._along_mid()
        return np.searchsorted(self.keys, keys)

    def curves(self, index: np.ndarray) -> tuple[Curve, Curve]:
        """Curves of both points along the last resistor at combinations ``index`` (m, k - 1)."""
        self.pool.budget.spend(len(index))
        rows = self._rows(index[:, :-1])
        x = self.grid[index[:, -1]][:, None]
        return tuple(Curve.through(self.xs, c.take(rows).at(x)) for c in self.along_mid)

    def alive(self, ends: list[tuple[Curve, Curve]], bound: float) -> np.ndarray:
        """Whether some last value may bring both points within ``bound``, given the boxes' corners."""
        n = len(self.grid)
        gaps = []
        for which, (low, high) in enumerate(self.pool.windows):
            for theta, below in ((high + bound, True), (low - bound, False)):
                ps, qs = zip(*(end[which].side(self.grid, theta, below) for end in ends), strict=True)
                gaps.append((np.maximum.reduce(ps), np.minimum.reduce(qs)))
        ok = np.zeros(len(gaps[0][0]), dtype=bool)
        for start in [np.zeros_like(gaps[0][1])] + [q for _, q in gaps]:
            inside = start <= n - 1
            for p, q in gaps:
                inside &= (start <= p) | (start >= q)
            ok |= inside
        return ok

    def run(self, lo: np.ndarray, hi: np.ndarray, margin: float) -> float | None:
        """Search the boxes [lo, hi] (index rows); None, or by how much a prediction missed the model
        where that was more than a quarter of the margin (the search then stops)."""
        grid, pool = self.grid, self.pool
        up, down = pool.targets
        aims = pool.aims
        while len(lo):
            at_lo = self.curves(lo)
            # Tighten the bound first: evaluate the most promising predicted combinations.
            # The last value where the upper point passes its target, and the one before.
            j = np.minimum(at_lo[0].side(grid, up, below=False)[1], at_lo[0].side(grid, up, below=True)[1])
            guess = np.full(len(j), np.inf)
            for jj in (np.clip(j - 1, 0, len(grid) - 1), np.clip(j, 0, len(grid) - 1)):
                w = outside(at_lo[0].at(grid[jj]), at_lo[1].at(grid[jj]), *aims)
                j, guess = np.where(w < guess, jj, j), np.minimum(w, guess)
            best = np.argsort(guess)[: pool.count]
            u, l = pool.offer(np.column_stack([grid[lo[best]], grid[j[best]]]), self.evaluate)  # noqa: E741
            miss = float(np.max(np.abs(outside(u, l, *aims) - guess[best])))
            if not miss <= margin / 4:
                return miss
            bound = pool.bound() + margin
            single = np.all(lo == hi, axis=1)
            if single.any():
                curves = tuple(c.take(single) for c in at_lo)
                miss = self._runs(lo[single], curves, bound)
                if not miss <= margin / 4:
                    return miss
            lo, hi = lo[~single], hi[~single]
            if not len(lo):
                break
            wide = np.flatnonzero(np.any(lo != hi, axis=0))
            ends = [tuple(c.take(~single) for c in at_lo)]
            for bits in range(1, 2 ** len(wide)):
                corner = lo.copy()
                for b, dim in enumerate(wide):
                    if bits >> b & 1:
                        corner[:, dim] = hi[:, dim]
                ends.append(self.curves(corner))
            keep = self.alive(ends, bound)
            lo, hi = lo[keep], hi[keep]
            # Halve each box along its widest range.
            dim = np.argmax(hi - lo, axis=1)
            rows = np.arange(len(lo))
            cut = (lo[rows, dim] + hi[rows, dim]) // 2
            lo2, hi1 = lo.copy(), hi.copy()
            hi1[rows, dim], lo2[rows, dim] = cut, cut + 1
            lo, hi = np.concatenate([lo, lo2]), np.concatenate([hi1, hi])
        return None

    def _runs(self, index: np.ndarray, curves: tuple[Curve, Curve], bound: float) -> float:
        """Evaluate each combination's run of last values within bound; the largest miss of a prediction."""
        (cu, cl), ((ul, uh), (ll_, lh)) = curves, self.pool.windows
        fu, lu = cu.band(self.grid, ul - bound, uh + bound)
        fl, ll = cl.band(self.grid, ll_ - bound, lh + bound)
        first, last = np.maximum(fu, fl), np.minimum(lu, ll)
        runs = np.maximum(last - first + 1, 0)
        if not runs.any():
            return 0.0
        self.pool.budget.fits(int(runs.sum()))  # before the arrays of that size are built
        row = np.repeat(np.arange(len(runs)), runs)
        j = first[row] + np.arange(len(row)) - np.repeat(np.cumsum(runs) - runs, runs)
        x = self.grid[j]
        u, l = self.pool.offer(np.column_stack([self.grid[index[row]], x]), self.evaluate)  # noqa: E741
        return float(max(np.max(np.abs(u - cu.take(row).at(x))), np.max(np.abs(l - cl.take(row).at(x)))))


def search(evaluate: Evaluate, grid: np.ndarray, k: int, upper: Aim, lower: Aim,
           count: int, budget: int = BUDGET, progress: Progress | None = None,
           seeds: np.ndarray | None = None) -> Found:
    """The best ``count`` combinations of k grid values, equal to :func:`exhaustive`.

    Parameters
    ----------
    evaluate : callable
        values (m, k) in ohms -> (upper, lower, current) from the model.
    grid : numpy.ndarray
        Sorted standard values, ohms.
    k : int
        Resistors to choose.
    upper, lower : float or (float, float)
        Target switching points, volts; or windows (lowest, highest), one side possibly infinite,
        where the ranking is by how far the points stand outside their windows (:func:`outside`:
        negative inside, so the first combinations are the furthest inside).
    count : int
        Combinations to return, best first.
    budget : int
        Combinations the search may check (evaluated or predicted).  A search that would need
        more stops before the step that would pass it and returns the best combinations it has
        evaluated, with ``proven`` False.
    progress : callable, optional
        ``progress(checked, budget)`` before each step; it may raise to stop the search.
    seeds : numpy.ndarray, optional
        Combinations of grid values (m, k) likely to rank well, evaluated first: they tighten the
        bound from the start, and a search stopped at its budget keeps them.  The result of a
        search that finishes does not depend on them.
    """
    n = len(grid)
    spent = _Budget(budget, progress)
    if k < 2 or n < 3 or n**k <= _DIRECT_LIMIT:
        return _exhaustive(evaluate, grid, k, upper, lower, count, spent)
    pool = _Pool(grid, k, upper, lower, count, spent)
    edges = [abs(x) for x in (*window(upper), *window(lower)) if math.isfinite(x)]
    margin = _MARGIN * max(1.0, *edges) + ERROR_STEP
    # Start from every combination of as many leading resistors as stay few (sampling them all at
    # once is cheaper than bisecting them, and leaves fewer corners per box); bisect the rest.
    lead = 0
    while lead < k - 2 and n ** (lead + 1) <= _OUTER_LIMIT:
        lead += 1
    starts = np.stack(np.unravel_index(np.arange(n**lead), (n,) * lead), axis=1) if lead else \
        np.empty((1, 0), dtype=np.intp)
    lo = np.column_stack([starts, np.zeros((len(starts), k - 1 - lead), dtype=np.intp)])
    hi = np.column_stack([starts, np.full((len(starts), k - 1 - lead), n - 1)])
    branching = _Branching(evaluate, grid, k, pool)
    try:
        if seeds is not None and len(seeds):
            pool.offer(np.asarray(seeds, dtype=float), evaluate)
        while (miss := branching.run(lo.astype(np.intp), hi.astype(np.intp), margin)) is not None:
            # A prediction missed the model (rounding, over very wide ranges): evaluate everything
            # where that fits in the budget left; otherwise search again with a margin of at least
            # four times the miss (the pool keeps the combinations evaluated so far).
            if n**k <= spent.left():
                return _exhaustive(evaluate, grid, k, upper, lower, count, spent)
            margin = max(2 * margin, 8 * miss)
    except _OutOfBudget:
        return pool.found(proven=False)
    return pool.found()
