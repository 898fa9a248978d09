"""Rank standard-value candidates by what their builds will do: margin, yield, grades and cost.

Three rankings beside the nominal one (:mod:`bandcalc.fit.selection` builds the candidates):

- ``margin``: the worst-case margin over the tolerance box and the temperature range, larger
  first, ties to the lower network current; the best over every combination of standard values
  (:func:`bandcalc.fit.margin.best_by_margin`);
- ``yield``: the share of builds inside every window at every temperature, from
  :data:`YIELD_BUILDS` builds per candidate (the spread's Monte Carlo, the same builds for every
  candidate), for the candidates of largest margin; candidates whose 95 % intervals overlap are
  not told apart;
- with grades: for each candidate the cheapest grade per fitted part that keeps the margin
  positive (or the yield at least the least asked for), ranked by cost, then margin (or yield).
  The candidates graded are those of largest margin with every fitted part at the tightest grade
  (the most any grade can give).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from bandcalc.fit.grades import Grades, choices
from bandcalc.fit.grid_search import ERROR_STEP, Evaluate, Progress
from bandcalc.fit.margin import BUILD_BUDGET, CornerModel, MarginError, MarginSearch, best_by_margin, margins
from bandcalc.model.design import Design
from bandcalc.spread.propagation import DEFAULT_SEED, Yield, build_yield

__all__ = ["PROBES", "RANKINGS", "YIELD_BUILDS", "YIELD_RUNS", "Ranked", "not_told_apart", "rank"]

#: The rankings a fit offers; "nominal" is the fit's own (:func:`bandcalc.fit.selection.fit`).
RANKINGS = ("nominal", "margin", "yield")
#: Builds each candidate's yield is drawn from (seed :data:`bandcalc.spread.propagation.DEFAULT_SEED`).
YIELD_BUILDS = 10_000
#: Yield runs (of YIELD_BUILDS builds each) one fit makes at most: a few seconds of work.
YIELD_RUNS = 60


@dataclass(frozen=True)
class Ranked:
    """Candidates best first: values, each fitted part's tolerance, margin and, where asked, yield
    and cost; with what the search did."""

    found: MarginSearch  # rows as ranked here
    cost: np.ndarray | None  # relative cost of the grades chosen; NaN where no grade does
    yields: tuple[Yield | None, ...] | None
    apart: tuple[tuple[int, ...], ...]  # per candidate: ranks (1-based) whose yield it is not told apart from
    proven: bool
    why_not: str | None
    notes: tuple[str, ...]


def not_told_apart(yields: tuple[Yield | None, ...]) -> tuple[tuple[int, ...], ...]:
    """For each candidate, the ranks (1-based) of the others whose 95 % intervals overlap its own."""
    out = []
    for i, a in enumerate(yields):
        out.append(tuple(j + 1 for j, b in enumerate(yields) if j != i and a is not None and b is not None
                         and a.low <= b.high and b.low <= a.high))
    return tuple(out)


def _take(found: MarginSearch, rows: np.ndarray, margin: np.ndarray | None = None,
          percents: np.ndarray | None = None) -> MarginSearch:
    """The search's candidates ``rows`` in that order, with new margins and tolerances if given."""
    pick = lambda a: a[rows]  # noqa: E731
    return MarginSearch(values=pick(found.values),
                        percents=pick(found.percents if percents is None else percents),
                        margin=pick(found.margin if margin is None else margin), upper=pick(found.upper),
                        lower=pick(found.lower), current=pick(found.current),
                        extremes={q: tuple(pick(a) for a in v) for q, v in found.extremes.items()},
                        lacking=tuple(found.lacking[i] for i in rows), checked=found.checked,
                        builds=found.builds, proven=found.proven, why_not=found.why_not)


def _steps(x: np.ndarray) -> np.ndarray:
    """Values in steps of ERROR_STEP for ranking; NaN as the worst."""
    return np.where(np.isnan(x), -np.inf, np.floor(x / ERROR_STEP))


def _cost_key(cost: np.ndarray) -> np.ndarray:
    """Costs for ranking, cheapest first; NaN (no grade will do, or none chosen) last."""
    return np.where(np.isnan(cost), np.inf, np.round(cost, 9))


#: Corners a grade choice is first bounded with (see :func:`_graded`).
PROBES = 64


def _probe_corners(corners: CornerModel, values: np.ndarray, grades: Grades, windows: Mapping) -> np.ndarray:
    """Corners that were worst for some candidate with every part at the tightest and at the
    loosest grade (at most :data:`PROBES`, the most often worst first)."""
    seen: dict[int, int] = {}
    for percent in (min(grades.percents), max(grades.percents)):
        e = corners.extremes(values, np.full_like(values, percent, dtype=float))
        for q in windows:
            for c in np.concatenate([e[q][2], e[q][3]]):
                seen[int(c)] = seen.get(int(c), 0) + 1
    return np.array(sorted(seen, key=lambda c: -seen[c])[:PROBES], dtype=np.intp)


def _graded(corners: CornerModel, found: MarginSearch, windows: Mapping, grades: Grades
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
    """Each candidate's cheapest grades keeping the margin positive: percents (m, k), cost and margin
    (NaN cost where even the tightest grades do not; those keep the tightest), and whether every
    candidate was graded within the build budget.

    Any corner is a build, so a choice's margin over a few corners bounds its margin from above: a
    choice whose bound is not positive cannot do.  The corners worst at the tightest and the loosest
    grade bound every choice; then, cheapest first, the choices whose bound is positive are
    computed over every corner until one cost's choices hold one that does (among those, the largest
    margin).  The same answer as computing every choice in full, mostly for one choice's corners.
    """
    m, k = found.values.shape
    table, cost = choices(grades, k)
    a = len(table)
    probes = _probe_corners(corners, found.values, grades, windows)
    values, percents = np.repeat(found.values, a, axis=0), np.tile(table, (m, 1))
    bound = margins(corners.extremes(values, percents, corners.corners[probes]), windows).reshape(m, a)
    spent = (2 + a) * m * len(probes)
    chosen, cost_of, margin = found.percents.copy(), np.full(m, np.nan), found.margin.copy()
    complete = True
    for i in range(m):
        open_ = bound[i] > 0  # NaN (a corner without a point): cannot do
        while open_.any():
            cheapest = cost[open_].min()
            group = np.flatnonzero(open_ & (np.abs(cost - cheapest) < 1e-9))
            if spent + len(group) * len(corners.corners) > BUILD_BUDGET:
                complete = False
                break
            rows = np.repeat(found.values[i:i + 1], len(group), axis=0)
            full = margins(corners.extremes(rows, table[group]), windows)
            spent += len(group) * len(corners.corners)
            if (full > 0).any():
                best = group[int(np.argmax(np.where(full > 0, full, -np.inf)))]
                chosen[i], cost_of[i], margin[i] = table[best], cost[best], full[group == best][0]
                break
            open_[group] = False
        if not complete:
            break
    return chosen, cost_of, margin, complete


def rank(by: str, corners: CornerModel, evaluate: Evaluate, grid: np.ndarray, windows: Mapping, count: int, *,
         budget: int, design_of: Callable[[np.ndarray, np.ndarray], Design], progress: Progress | None = None,
         seeds: np.ndarray | None = None, grades: Grades | None = None, min_yield: float = 0.99) -> Ranked:
    """Rank by ``"margin"`` or ``"yield"``, with ``grades`` if given.

    ``design_of(values, percents)`` gives a candidate's design (its values, each fitted part at its
    tolerance, the windows in its tolerances section) for the yield.
    """
    k = len(corners.params)
    pool = max(2 * count, 10) if by == "yield" else count if grades is None else max(4 * count, 20)
    if grades is not None:  # each choice is bounded over up to PROBES corners first (see _graded)
        per = len(grades.percents) ** k * min(PROBES, len(corners.corners))
        if pool * per > BUILD_BUDGET:
            raise MarginError(f"{len(grades.percents)} grades for {k} fitted parts make "
                              f"{len(grades.percents) ** k:,} choices per candidate, each bounded over up to "
                              f"{min(PROBES, len(corners.corners)):,} corners of the tolerance box: too "
                              f"many to compare {pool} candidates within seconds; give fewer grades, or hold "
                              "a value")
    found = best_by_margin(corners, evaluate, grid, windows, pool, budget=budget, progress=progress,
                           seeds=seeds, percent=None if grades is None else grades.tightest)
    notes: list[str] = []
    proven, why = found.proven, found.why_not
    cost = None
    if grades is not None and by == "margin":
        percents, cost, margin, complete = _graded(corners, found, windows, grades)
        order = np.lexsort((found.current, -_steps(margin), _cost_key(cost)))[:count]
        notes.append(f"Grades are chosen for the {len(found.values)} candidates of largest margin with every "
                     f"fitted part at {grades.tightest:g} %, the tightest grade offered.")
        if not complete:
            proven, why = False, (f"the grades reached the limit of {BUILD_BUDGET:,} corner builds before "
                                  "every candidate was graded; those not graded show no cost")
        return Ranked(_take(found, order, margin, percents), cost[order], None, (), proven, why, tuple(notes))
    if by == "margin":
        return Ranked(found, None, None, (), proven, why, ())
    # by yield
    runs = 0
    yields: list[Yield | None] = []
    percents = found.percents.copy()
    cost_of = np.full(len(found.values), np.nan)
    table, table_cost = (choices(grades, k) if grades is not None else (None, None))
    for i, values in enumerate(found.values):
        if runs >= YIELD_RUNS:
            proven, why = False, (f"the yields reached their limit of {YIELD_RUNS} runs of {YIELD_BUILDS:,} "
                                  "builds; the candidates are the best of those run")
            yields.append(None)
            continue
        if table is None:
            yields.append(build_yield(design_of(values, found.percents[i]), samples=YIELD_BUILDS,
                                      seed=DEFAULT_SEED))
            runs += 1
            continue
        got = None
        for choice, c in zip(table, table_cost, strict=True):
            if runs >= YIELD_RUNS:
                break
            y = build_yield(design_of(values, choice), samples=YIELD_BUILDS, seed=DEFAULT_SEED)
            runs += 1
            if y.fraction >= min_yield:
                got, percents[i], cost_of[i] = y, choice, c
                break
        yields.append(got)
    margin = found.margin
    if grades is not None:  # the margins of the grades chosen
        margin = margins(corners.extremes(found.values, percents), windows)
    fraction = np.array([math.nan if y is None else y.fraction for y in yields])
    order = np.lexsort((found.current, -_steps(margin), -np.where(np.isnan(fraction), -1.0, fraction),
                        _cost_key(cost_of)))[:count]
    ranked_yields = tuple(yields[i] for i in order)
    if grades is not None:
        notes.append(f"Grades are chosen for the {len(found.values)} candidates of largest margin with every "
                     f"fitted part at {grades.tightest:g} %: for each, the cheapest whose yield is at least "
                     f"{100 * min_yield:g} %.")
    else:
        notes.append(f"Yields are drawn for the {len(found.values)} candidates of largest margin.")
    return Ranked(_take(found, order, margin, percents), None if grades is None else cost_of[order],
                  ranked_yields, not_told_apart(ranked_yields), proven, why, tuple(notes))
