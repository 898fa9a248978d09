"""The worst-case margin of standard-value candidates, and the search for the largest.

The margin of a candidate (a set of fitted resistor values, each with its tolerance) is the
smallest distance between a window edge and the worst-case extreme of that quantity: the least
and the greatest value of the upper point, the lower point and (where a window is given) the
hysteresis over every corner of the tolerance box and the whole temperature range.  Positive
when every build is inside every window; in the design's unit.  The worst case is the spread's
own (:func:`bandcalc.spread.propagation.worst_case`): the same factors (:class:`VariedModel`), the
same corners, each corner taken over the range by :func:`bandcalc.spread.over_range.over_range`;
here many candidates' corners go through one model call.

Where the margin may be found.  The nominal build (every factor at the middle of its range) is
inside the box, so its points lie between the worst-case extremes and the *nominal margin* (the
same distances for the nominal points) is never below the margin.  The search
(:func:`best_by_margin`) therefore takes the candidates of largest nominal margin from the exact
standard-value search (:func:`bandcalc.fit.grid_search.search` over windows), computes their
margins, and is done once the last of them has a nominal margin below the margin of the
``count``-th best: no other combination can rank in.  Otherwise it takes four times as many and
goes again.  Among those taken, the corners that were worst for candidates already computed
bound the margin of the others from above (any corner is a build of the box): a candidate whose
bound is below the ``count``-th best margin so far is not computed in full.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.fit.grid_search import ERROR_STEP, Evaluate, Progress, outside, search
from bandcalc.model.design import Design
from bandcalc.model.parts import part, series_tolerance
from bandcalc.model.tolerances import Tolerances
from bandcalc.spread.factors import QUANTITIES, VariedModel
from bandcalc.spread.over_range import over_range
from bandcalc.spread.propagation import CHUNK

__all__ = ["BUILD_BUDGET", "CornerModel", "MarginError", "MarginSearch", "best_by_margin", "margins"]

#: Corner builds (each taken over the temperature range) a margin search evaluates at most: about a
#: second or two of work on one core (benchmarks/bench_fit_yield.py prints the time of such runs).
BUILD_BUDGET = 3_000_000
#: Candidates taken at first, at least, from the standard-value search; four times as many each round.
_FIRST = 32
#: Most candidates taken from the standard-value search in one round.
_MOST = 1 << 16


class MarginError(BandcalcError):
    """A margin ranking that cannot be answered within seconds; the message says why."""


Windows = Mapping[str, tuple[float, float]]
"""Windows by quantity ("upper", "lower", optionally "hysteresis"), design's unit; -inf / inf open."""


class CornerModel:
    """The tolerance box of a design whose fitted resistors take candidate values and tolerances.

    Every factor of the spread's model (:class:`VariedModel`) of ``design`` is kept except the
    fitted resistors' own values, which take each candidate's value and tolerance instead; a
    fitted resistor with no tolerance given takes the usual one of the series its value belongs
    to, as the spread does (:func:`bandcalc.model.parts.tolerance_of`).
    """

    def __init__(self, design: Design, params: Sequence[str], tolerances: Tolerances | None = None) -> None:
        self.model = VariedModel(design, tolerances)
        self.params = list(params)
        self.others = [f for f in self.model.factors if f.name not in self.params]
        given = self.model.tolerances.resistors
        self.given = [given.get(part(p).key) for p in self.params]
        self.size = len(self.others) + len(self.params)
        self.corners = ((np.arange(2**self.size)[:, None] >> np.arange(self.size)) & 1) * 2.0 - 1.0

    def percents(self, values: np.ndarray) -> np.ndarray:
        """Each candidate's tolerance (percent) per fitted position, shape as ``values`` (m, k)."""
        out = np.empty_like(values, dtype=float)
        for j, given in enumerate(self.given):
            if given is not None:
                out[:, j] = given
                continue
            unique, inverse = np.unique(values[:, j], return_inverse=True)
            out[:, j] = np.array([series_tolerance(float(v))[0] for v in unique])[inverse]
        return out

    def builds(self, values: np.ndarray, percents: np.ndarray, z: np.ndarray) -> dict[str, np.ndarray]:
        """Factor values of builds: row i is candidate ``values[i]`` at unit variables ``z[i]``."""
        x = {f.name: f.at(z[:, i]) for i, f in enumerate(self.others)}
        base = len(self.others)
        for j, path in enumerate(self.params):
            x[path] = values[:, j] * (1.0 + 0.01 * percents[:, j] * z[:, base + j])
        return x

    def extremes(self, values: np.ndarray, percents: np.ndarray, corners: np.ndarray | None = None
                 ) -> dict[str, tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]:
        """Per quantity: each candidate's least and greatest over ``corners`` (default: every corner)
        and the whole range, and the index of the corner of each.  NaN where a corner has no point."""
        corners = self.corners if corners is None else corners
        c, m = len(corners), len(values)
        out = {q: tuple(np.empty(m) for _ in range(2)) + tuple(np.zeros(m, dtype=np.intp) for _ in range(2))
               for q in QUANTITIES}
        per = max(1, CHUNK // c)
        for start in range(0, m, per):
            stop = min(m, start + per)
            rows = stop - start
            z = np.tile(corners, (rows, 1))
            r = over_range(self.model, self.builds(np.repeat(values[start:stop], c, axis=0),
                                                   np.repeat(percents[start:stop], c, axis=0), z), rows * c)
            for q in QUANTITIES:
                least, greatest = r.lowest[q].reshape(rows, c), r.highest[q].reshape(rows, c)
                lo, hi, at_lo, at_hi = out[q]
                with np.errstate(invalid="ignore"):
                    lo[start:stop], hi[start:stop] = least.min(axis=1), greatest.max(axis=1)
                at_lo[start:stop] = np.argmin(np.where(np.isnan(least), -np.inf, least), axis=1)
                at_hi[start:stop] = np.argmax(np.where(np.isnan(greatest), np.inf, greatest), axis=1)
        return out


def margins(extremes: Mapping[str, tuple[np.ndarray, ...]], windows: Windows) -> np.ndarray:
    """The smallest distance of each candidate's extremes inside its windows (negative: outside);
    NaN where some corner has no such point."""
    out = None
    for q, (lo, hi) in windows.items():
        least, greatest = extremes[q][:2]
        with np.errstate(invalid="ignore"):
            m = np.minimum(least - lo, hi - greatest)
        out = m if out is None else np.minimum(out, m)
    return out


def _order(margin: np.ndarray, current: np.ndarray) -> np.ndarray:
    """Larger margin first in steps of ERROR_STEP (no finite margin last), then lower current."""
    key = np.where(np.isnan(margin), np.inf, -np.floor(margin / ERROR_STEP))
    return np.lexsort((current, key))


@dataclass(frozen=True)
class MarginSearch:
    """The best candidates by margin, best first, with what was done to find them."""

    values: np.ndarray  # (count, k) ohms
    percents: np.ndarray  # (count, k) each fitted resistor's tolerance
    margin: np.ndarray  # design's unit; NaN where a corner has no point
    upper: np.ndarray  # nominal points, design's unit
    lower: np.ndarray
    current: np.ndarray
    extremes: dict[str, tuple[np.ndarray, np.ndarray]]  # least, greatest per quantity
    lacking: tuple[str | None, ...]  # per candidate: the quantity a corner has no point of, or None
    checked: int  # combinations the standard-value search checked
    builds: int  # corner builds evaluated over the range
    proven: bool
    why_not: str | None  # why not proven


def best_by_margin(corners: CornerModel, evaluate: Evaluate, grid: np.ndarray, windows: Windows, count: int,
                   *, budget: int, progress: Progress | None = None, seeds: np.ndarray | None = None,
                   percent: float | None = None, build_budget: int = BUILD_BUDGET) -> MarginSearch:
    """The ``count`` candidates of largest margin over every combination of grid values.

    Parameters
    ----------
    corners : CornerModel
        The design's tolerance box with the fitted positions (its ``params``, the columns of values).
    evaluate : callable
        values (m, k) -> nominal (upper, lower, current), design's unit and amperes.
    windows : mapping
        "upper" and "lower" (and optionally "hysteresis") windows, design's unit.
    budget : int
        Combinations the standard-value search may check (:func:`bandcalc.fit.grid_search.search`).
    percent : float, optional
        One tolerance for every fitted resistor instead of the design's (a grade).
    build_budget : int
        Corner builds the margins may take; a search that would need more stops, not proven.
    """
    k, n = len(corners.params), len(grid)
    size = len(corners.corners)
    if size * count > build_budget:
        raise MarginError(f"{corners.size} quantities vary ({size:,} corners of the tolerance box per "
                          f"candidate), too many to rank {count} candidates by their worst case within "
                          f"seconds; set small tolerances to 0 or give fewer of them")
    total = n**k
    want = min(total, max(_FIRST, 4 * count))
    spent = checked = 0

    def note(done: int) -> None:
        if progress is not None:
            progress(min(done, build_budget), build_budget)

    memo: dict[bytes, tuple] = {}  # candidates computed in full: margin, extremes, worst corners
    probes: list[int] = []  # corners that were worst for some candidate computed, latest last
    stopped = None

    def compute(values: np.ndarray, pct: np.ndarray) -> None:
        """Candidates in full (every corner), into ``memo``; their worst corners become probes."""
        nonlocal spent, probes
        e = corners.extremes(values, pct)
        spent += len(values) * size
        m = margins(e, windows)
        for j, row in enumerate(values):
            memo[row.tobytes()] = (m[j], {q: (e[q][0][j], e[q][1][j]) for q in QUANTITIES})
        worst = [int(c) for q in windows for c in np.concatenate([e[q][2], e[q][3]])]
        probes = list(dict.fromkeys(probes + worst))[-16:]
        note(spent)

    while True:
        found = search(evaluate, grid, k, windows["upper"], windows["lower"], want, budget=budget,
                       progress=progress, seeds=seeds)
        checked += found.checked
        values = found.values
        nominal = -outside(found.upper, found.lower, windows["upper"], windows["lower"])
        pct = np.full_like(values, percent) if percent is not None else corners.percents(values)
        key = values.__getitem__  # a candidate's row; memo keys are its bytes
        bound = nominal.copy()  # an upper bound of each margin; the margin itself once computed
        done = np.array([key(i).tobytes() in memo for i in range(len(values))], dtype=bool)
        bound[done] = [memo[key(i).tobytes()][0] for i in np.flatnonzero(done)]
        bounded = 0  # probes already applied to every candidate
        while stopped is None:
            kth = _kth(bound[done], count)
            open_ = np.flatnonzero(~done & ~(bound < kth - ERROR_STEP))  # NaN bound stays open
            if not len(open_):
                break
            if probes and math.isfinite(kth) and bounded < len(probes):
                probe = np.array(probes[bounded:])
                if spent + len(open_) * len(probe) > build_budget:
                    stopped = "limit"
                    break
                b = margins(corners.extremes(values[open_], pct[open_], corners.corners[probe]), windows)
                spent += len(open_) * len(probe)
                bounded = len(probes)
                bound[open_] = np.fmin(bound[open_], b)
                continue
            # the most promising first (a NaN bound: a corner without a point, computed too)
            rows = open_[np.argsort(-np.nan_to_num(bound[open_], nan=np.inf), kind="stable")][:max(count, 8)]
            if spent + len(rows) * size > build_budget:
                stopped = "limit"
                break
            compute(values[rows], pct[rows])
            bound[rows] = [memo[key(i).tobytes()][0] for i in rows]
            done[rows] = True
            bounded = min(bounded, len(probes))
        kth = _kth(bound[done], count)
        rest = nominal[-1] if len(nominal) else -math.inf
        proven = found.proven and stopped is None and (len(values) >= total or rest < kth - ERROR_STEP)
        if proven or not found.proven or stopped or want >= min(total, _MOST) or len(values) < want:
            break
        want = min(total, _MOST, 4 * want)
    pick = np.flatnonzero(done)
    margin = np.full(len(values), np.nan)
    margin[pick] = [memo[key(i).tobytes()][0] for i in pick]
    order = pick[_order(margin[pick], found.current[pick])][:count]
    why = None
    if not proven:
        why = (f"the margins reached their limit of {build_budget:,} corner builds; the candidates are the "
               "best of those computed") if stopped else (
            "the standard-value search reached its limit" if not found.proven else
            "every candidate taken could still be beaten by one not taken")
    ext = {q: tuple(np.array([memo[key(i).tobytes()][1][q][side] for i in order]) for side in range(2))
           for q in QUANTITIES}
    lacking = tuple(next((q for q in ("upper", "lower", "hysteresis") if q in windows and (
        np.isnan(ext[q][0][j]) or np.isnan(ext[q][1][j]))), None) for j in range(len(order)))
    return MarginSearch(values=values[order], percents=pct[order], margin=margin[order],
                        upper=found.upper[order], lower=found.lower[order], current=found.current[order],
                        extremes=ext, lacking=lacking, checked=checked, builds=spent, proven=proven,
                        why_not=why)


def _kth(margin: np.ndarray, count: int) -> float:
    """The count-th best finite margin so far (-inf while there are fewer)."""
    finite = margin[np.isfinite(margin)]
    if len(finite) < count:
        return -math.inf
    return float(np.sort(finite)[::-1][count - 1])

