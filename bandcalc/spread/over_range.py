"""Each build over the whole operating temperature range: its least and greatest points, and where.

A build passes only if every window holds at every temperature of the range, with the reference
at either edge of its drift box, so what decides it are its extremes over the range.  The points
move smoothly with temperature (each resistor linearly, the offset linearly, the rest through
the network), but not always monotonically: two resistors with opposite coefficients, or a drift
against them, can turn a point inside the range.  They are found this way, for many builds in
one vectorized pass:

1. Each build is evaluated at the five Chebyshev points of the range (its ends, its middle and
   two between), with the reference at both edges of its box (at every temperature: the box
   method assumes no shape, and each point is monotonic in the reference).
2. The polynomial through the five samples follows the build's curve; where its derivative
   changes sign inside the range (a cubic: exactly decided from its values at the ends and at its
   own turning points, each root then found by bisection), the model is evaluated at that
   temperature, so an extreme inside the range takes the model's own value.
3. The polynomial's last Chebyshev coefficient bounds how far it can stray from the curve (for a
   smooth curve the coefficients fall off geometrically and the error is below the last one kept;
   L. N. Trefethen, *Approximation Theory and Approximation Practice*, SIAM 2013, from memory).
   Where it exceeds :data:`CHECK` of the quantity's size, that build is evaluated instead at
   :data:`DENSE` temperatures, each extreme polished by the parabola through the model at it and a
   small step either side.  With the coefficients of
   real parts (100 ppm/K over -40 to 85 C) the coefficient is near 1e-10 of the value.

The tests compare the result with a 2001-point temperature grid, evaluated build by build.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import chebyshev

from bandcalc.spread.factors import QUANTITIES, VariedModel

__all__ = ["CHECK", "DENSE", "NODES", "RangeExtremes", "over_range"]

#: Temperatures each build is evaluated at: the Chebyshev-Lobatto points of the range.
NODES = 5
#: Largest last Chebyshev coefficient, relative to the quantity's size, taken as exact enough.
CHECK = 1e-9
#: Temperatures a build is evaluated at where the five do not follow it closely enough.
DENSE = 65
_X = -np.cos(np.pi * np.arange(NODES) / (NODES - 1))  # ascending, -1 ... 1
# @ samples -> the interpolating polynomial's derivative, coefficients of x^0 ... x^3
_DERIVATIVE = np.linalg.inv(np.vander(_X, NODES, increasing=True))[1:] * np.arange(1, NODES)[:, None]
_LAST = np.linalg.inv(chebyshev.chebvander(_X, NODES - 1))[-1]  # @ samples -> the last Chebyshev coefficient


def _combine(matrix: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """``matrix @ rows`` for a small matrix and long rows, without the BLAS library: its threads make
    this shape of product hundreds of times slower on a busy machine."""
    return np.einsum("...i,in->...n", matrix, rows)


def _temperatures(model: VariedModel) -> np.ndarray:
    if not model.moves:
        return np.array([model.middle])
    low, high = model.temperature  # type: ignore[misc]
    return 0.5 * (low + high) + 0.5 * (high - low) * _X


def _edges(model: VariedModel) -> np.ndarray:
    return np.array([-1.0, 1.0]) if model.box else np.array([0.0])


class _Extremes:
    """Running least and greatest of one quantity per build, with the temperature and edge of each
    (worked out only when asked for: most uses need the values alone)."""

    def __init__(self, q: np.ndarray, celsius: np.ndarray, edges: np.ndarray, moves: bool) -> None:
        k, e, n = q.shape
        self._stack = q.reshape(k * e, n)  # row = temperature * edges + edge
        self._at = celsius if moves else np.full(celsius.size, np.nan)
        self._edges = edges
        self.low, self.high = np.min(self._stack, axis=0), np.max(self._stack, axis=0)
        self._where: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        self._later: list[tuple[str, np.ndarray, np.ndarray, np.ndarray]] = []

    def where(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """Temperature and edge of each build's least ("low") or greatest ("high") value."""
        if name not in self._where:
            # Reductions across the rows run along the builds; a NaN is the least and the greatest
            # (the build fails), and its temperature is then the last one's.
            best, rows = getattr(self, name), self._stack.shape[0]
            row = np.full(best.size, rows - 1)
            for i in range(rows - 2, -1, -1):
                row = np.where(self._stack[i] == best, i, row)
            e = self._edges.size
            self._where[name] = (self._at[row // e], self._edges[row % e])
            for which, r, t, edge in self._later:
                if which == name:
                    self._where[name][0][r], self._where[name][1][r] = t, edge
        return self._where[name]

    def offer(self, rows: np.ndarray, values: np.ndarray, celsius: np.ndarray, edge: np.ndarray) -> None:
        """Take ``values`` of builds ``rows`` at ``celsius`` and ``edge`` where they go beyond (a build may
        come several times: its furthest value counts)."""
        for name, beyond in (("low", np.less), ("high", np.greater)):
            best = getattr(self, name)
            take = beyond(values, best[rows])
            if not take.any():
                continue
            r, v, t, e = rows[take], values[take], celsius[take], edge[take]
            order = np.lexsort((-v if name == "low" else v, r))  # by build, its furthest value last
            r, v, t, e = r[order], v[order], t[order], e[order]
            last = np.append(r[1:] != r[:-1], True)
            best[r[last]] = v[last]
            if name in self._where:
                self._where[name][0][r[last]], self._where[name][1][r[last]] = t[last], e[last]
            else:
                self._later.append((name, r[last], t[last], e[last]))


@dataclass(frozen=True)
class RangeExtremes:
    """Per build (arrays of shape (n,)): the least and greatest value of each quantity over the range
    and the reference's box, the temperature (C) and box edge (-1, 0, +1) of each (:meth:`where`),
    and the value at the middle of the range with the reference at V25.  Temperatures are NaN where
    nothing moves with temperature.  ``ends_least`` / ``ends_greatest`` (shape (n, 2)) hold each
    quantity's least and greatest over the box at the range's lowest and highest temperature."""

    lowest: dict[str, np.ndarray]
    highest: dict[str, np.ndarray]
    middle: dict[str, np.ndarray]
    ends_least: dict[str, np.ndarray]
    ends_greatest: dict[str, np.ndarray]
    found: dict[str, _Extremes]

    def where(self, quantity: str, least: bool) -> tuple[np.ndarray, np.ndarray]:
        """The temperature (C) and reference edge of each build's least (or greatest) ``quantity``."""
        return self.found[quantity].where("low" if least else "high")

    @property
    def invalid(self) -> np.ndarray:
        """Builds with a point that does not exist somewhere in the range (NaN)."""
        return ~np.isfinite(self.lowest["hysteresis"]) | ~np.isfinite(self.highest["hysteresis"])


def _vertex(x0: np.ndarray, x1: np.ndarray, x2: np.ndarray, y0: np.ndarray, y1: np.ndarray,
            y2: np.ndarray) -> np.ndarray:
    """The abscissa of the vertex of the parabola through three points (x1 where they lie on a line)."""
    a, b = (x1 - x0) * (y1 - y2), (x1 - x2) * (y1 - y0)
    with np.errstate(divide="ignore", invalid="ignore"):
        shift = 0.5 * ((x1 - x0) * a - (x1 - x2) * b) / (a - b)
    return np.where(np.isfinite(shift), x1 - shift, x1)


def _grid_turns(curves: np.ndarray, grid: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
    """Every row's least and greatest on ``grid``, refined by the parabola through it and its
    neighbours (an extreme at an end may still turn within the first step), clipped to the grid."""
    out = []
    rows = np.arange(curves.shape[0])
    for pick in (np.argmin, np.argmax):
        j = np.clip(pick(curves, axis=1), 1, grid.size - 2)
        y = curves[rows[:, None], j[:, None] + np.arange(-1, 2)]
        at = _vertex(grid[j - 1], grid[j], grid[j + 1], y[:, 0], y[:, 1], y[:, 2])
        out.append((rows, np.clip(at, grid[0], grid[-1])))
    return out


def _cubic(d: np.ndarray, x: np.ndarray) -> np.ndarray:
    return d[0] + x * (d[1] + x * (d[2] + x * d[3]))


def _turning_points(d: np.ndarray, tiny: float) -> tuple[np.ndarray, np.ndarray]:
    """Where a cubic derivative (coefficients x^0 ... x^3 as rows, shape (4, m)) changes sign inside
    [-1, 1]: the columns and the points, one pair per sign change."""
    spread = np.abs(d[1]) + np.abs(d[2]) + np.abs(d[3])
    rows = np.flatnonzero((np.abs(d[0]) <= spread) & (np.abs(d[0]) + spread > tiny))
    if rows.size == 0:
        return rows, np.empty(0)
    d = d[:, rows]
    # Between the ends and the cubic's own turning points it is monotonic: a sign change there
    # holds one root, found by bisection.
    a, b, c = 3.0 * d[3], 2.0 * d[2], d[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        root = np.sqrt(np.maximum(b * b - 4 * a * c, 0.0))
        inner = np.stack([np.where(a != 0, (-b - root) / (2 * a), np.where(b != 0, -c / b, 2.0)),
                          np.where(a != 0, (-b + root) / (2 * a), 2.0)])
    inner = np.where(np.isfinite(inner) & (np.abs(inner) < 1.0), inner, 1.0)
    knots = np.sort(np.vstack([-np.ones(rows.size), inner, np.ones(rows.size)]), axis=0)
    cols, points = [], []
    for i in range(3):
        lo, hi = knots[i], knots[i + 1]
        f_lo, f_hi = _cubic(d, lo), _cubic(d, hi)
        change = (f_lo * f_hi < 0) & (hi > lo)
        if not change.any():
            continue
        lo, hi, f_lo, dd = lo[change], hi[change], f_lo[change], d[:, change]
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            same = _cubic(dd, mid) * f_lo > 0
            lo, hi = np.where(same, mid, lo), np.where(same, hi, mid)
        cols.append(rows[change])
        points.append(0.5 * (lo + hi))
    if not cols:
        return np.empty(0, dtype=np.intp), np.empty(0)
    return np.concatenate(cols), np.concatenate(points)


def _polish(model: VariedModel, x: Mapping[str, np.ndarray], found: dict[str, _Extremes],
            asks: list[tuple[str, np.ndarray, np.ndarray, np.ndarray]], step: float) -> None:
    """Each turning point asked for (quantity, builds, temperature, edge): the model at it and ``step``
    either side, then at the vertex of the parabola through those three: the extreme to the model's
    own precision."""
    low, high = model.temperature  # type: ignore[misc]
    rows = np.concatenate([a[1] for a in asks])
    at = np.concatenate([a[2] for a in asks])
    edge = np.concatenate([a[3] for a in asks])
    which = np.concatenate([np.full(a[1].size, QUANTITIES.index(a[0])) for a in asks])
    sub = {k: v[rows] for k, v in x.items()}
    near = np.clip(at[None, :] + step * np.array([-1.0, 0.0, 1.0])[:, None], low, high)
    values = model.points(sub, near, edge)
    best = np.empty(rows.size)
    for i, name in enumerate(QUANTITIES):
        v = np.broadcast_to(values[name], near.shape)
        for j in range(3):
            found[name].offer(rows, v[j], near[j], edge)
        mine = which == i
        t, y = near[:, mine], v[:, mine]
        vertex = _vertex(t[0], t[1], t[2], y[0], y[1], y[2])
        best[mine] = np.clip(np.where(np.abs(vertex - t[1]) <= 2 * step, vertex, t[1]), low, high)
    again = model.points(sub, best, edge)
    for name in QUANTITIES:
        found[name].offer(rows, np.broadcast_to(again[name], rows.shape), best, edge)


def _refine(model: VariedModel, x: Mapping[str, np.ndarray], q: Mapping[str, np.ndarray], edges: np.ndarray,
            found: dict[str, _Extremes]) -> None:
    """Turning points inside the range (step 2) and the builds the five points do not follow (step 3)."""
    low, high = model.temperature  # type: ignore[misc]
    _, e, n = q["upper"].shape
    asks: list[tuple[str, np.ndarray, np.ndarray, np.ndarray]] = []
    dense: list[np.ndarray] = []  # columns (edge * n + build) to sample densely
    for name in QUANTITIES:
        samples = q[name].reshape(NODES, e * n)
        size = float(np.nanmax(np.abs(samples[NODES // 2]), initial=0.0))
        rough = np.abs(_combine(_LAST, samples)) > CHECK * size  # False where a sample is not finite
        dense.append(np.flatnonzero(rough))
        flat, at = _turning_points(_combine(_DERIVATIVE, samples), 1e-14 * size)
        keep = ~rough[flat]
        if keep.any():
            flat, at = flat[keep], at[keep]
            asks.append((name, flat % n, 0.5 * (low + high) + 0.5 * (high - low) * at, edges[flat // n]))
    if asks:  # the polynomial's turning points, where the model is evaluated
        rows = np.concatenate([a[1] for a in asks])
        at = np.concatenate([a[2] for a in asks])
        edge = np.concatenate([a[3] for a in asks])
        values = model.points({k: v[rows] for k, v in x.items()}, at, edge)
        for name in QUANTITIES:
            found[name].offer(rows, np.broadcast_to(values[name], rows.shape), at, edge)
    rough_rows = np.unique(np.concatenate(dense))
    if rough_rows.size:
        _dense(model, x, rough_rows % n, edges[rough_rows // n], found)


def _dense(model: VariedModel, x: Mapping[str, np.ndarray], builds: np.ndarray, edge: np.ndarray,
           found: dict[str, _Extremes]) -> None:
    """Builds evaluated at :data:`DENSE` temperatures, their turning points polished."""
    low, high = model.temperature  # type: ignore[misc]
    grid = np.linspace(low, high, DENSE)
    sub = {k: v[builds][:, None] for k, v in x.items()}
    values = model.points(sub, grid[None, :], edge[:, None])
    asks = []
    for name in QUANTITIES:
        curves = np.broadcast_to(values[name], (builds.size, DENSE))
        found[name].offer(builds, curves.min(axis=1), grid[np.argmin(curves, axis=1)], edge)
        found[name].offer(builds, curves.max(axis=1), grid[np.argmax(curves, axis=1)], edge)
        asks += [(name, builds[rows], at, edge[rows]) for rows, at in _grid_turns(curves, grid)]
    _polish(model, x, found, asks, (grid[1] - grid[0]) / 8)


def over_range(model: VariedModel, x: Mapping[str, np.ndarray], n: int) -> RangeExtremes:
    """Each of ``n`` builds (factor values, arrays of shape (n,)) over the range and the reference's box."""
    celsius, edges = _temperatures(model), _edges(model)
    flat = {k: np.broadcast_to(np.asarray(v, dtype=float), (n,)) for k, v in x.items()}
    # Laid out (temperature, edge, build): each temperature's and edge's values lie together.
    raw = model.points(flat, celsius[:, None, None], edges[None, :, None])
    shape = (celsius.size, edges.size, n)
    q = {name: np.ascontiguousarray(np.broadcast_to(raw[name], shape)) for name in QUANTITIES}
    found = {name: _Extremes(q[name], celsius, edges, model.moves) for name in QUANTITIES}
    if model.moves:
        _refine(model, flat, q, edges, found)
    if not model.box:
        middle = {k: v[celsius.size // 2, 0] for k, v in q.items()}
    elif model.linear_in_reference:  # the points are linear in the reference: V25 is the edges' mean
        middle = {k: 0.5 * (v[celsius.size // 2, 0] + v[celsius.size // 2, 1]) for k, v in q.items()}
    else:  # the middle of the range with the reference at V25, apart from the box's edges
        middle = {k: np.broadcast_to(v, (n,)) for k, v in model.points(flat, model.middle).items()}
    ends = [0, celsius.size - 1]
    return RangeExtremes(
        lowest={k: f.low for k, f in found.items()}, highest={k: f.high for k, f in found.items()},
        middle=middle, found=found,
        ends_least={k: v[ends].min(axis=1).T for k, v in q.items()},
        ends_greatest={k: v[ends].max(axis=1).T for k, v in q.items()})
