"""Benchmark: fitting for what the builds do (``fit --by margin`` and ``--by yield``) against
exhaustive search.

Run:  python benchmarks/bench_fit_yield.py
The stage: the three-resistor battery watch of bench_fit.py with 1 % resistors, a 2 % rail and
windows about its 12.7 V / 11.5 V points.  Prints

- ``--by margin`` over E96 from 1 kOhm to 10 MOhm (about 57 million combinations): its time, and
  the time of computing every combination's worst case with the same corner model, measured on a
  random sample in the same run and scaled to all of them (doing them all takes hours); the ratio;
- ``--by margin`` over E12 from 1 kOhm to 1 MOhm (50,653 combinations) against every combination's
  worst case, both timed in full, and whether both find the same best margins;
- ``--by yield`` (10,000 builds per finalist) over E96: its time, and per finalist.
Targets: margin under 1 s, yield under 5 s.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np
from bench_fit import THREE  # the nominal benchmark's stage (this folder)
from timing import timed  # the benchmarks' shared timer (this folder)

from bandcalc.fit.margin import CornerModel, margins
from bandcalc.fit.robust import YIELD_BUILDS
from bandcalc.fit.selection import fit
from bandcalc.model.standard_values import series_values
from bandcalc.model.tolerances import Limits, PerResistor, Tolerances

WINDOWS = {"upper": (12.4, 13.0), "lower": (11.2, 11.8)}
DESIGN = dataclasses.replace(THREE, tolerances=Tolerances(
    resistors=PerResistor(1.0), supply=2.0, limits=Limits(**WINDOWS)))
SAMPLE = 200_000


def every_margin(result, grid: np.ndarray, rows: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Worst-case margins of every combination (or of the flat indices ``rows``) of the fitted values."""
    params = [f"resistors.{p}" for p in result.fitted]
    corners = CornerModel(result.design, params)
    k = len(params)
    index = np.arange(len(grid) ** k) if rows is None else rows
    values = np.stack([grid[i] for i in np.unravel_index(index, (len(grid),) * k)], axis=1)
    out = np.empty(len(values))
    for start in range(0, len(values), 1 << 16):
        v = values[start:start + (1 << 16)]
        out[start:start + len(v)] = margins(corners.extremes(v, corners.percents(v)), WINDOWS)
    return out, values


def main() -> None:
    print(f"design: {DESIGN.name} with 1 % resistors and a 2 % rail; windows upper 12.4 V to 13.0 V, "
          "lower 11.2 V to 11.8 V")
    run = lambda series, high, by="margin": fit(DESIGN, None, None, by=by, series=series,  # noqa: E731
                                                min_ohms=1e3, max_ohms=high, count=5)
    margin_time, r = timed(lambda: run("E96", 10e6), 3)
    grid = series_values("E96", 1e3, 10e6)
    total = len(grid) ** 3
    rows = np.random.default_rng(1).choice(total, SAMPLE, replace=False)
    t0 = time.perf_counter()
    every_margin(r, grid, rows)
    per = (time.perf_counter() - t0) / SAMPLE
    print(f"--by margin, E96 1 kOhm to 10 MOhm ({len(grid)} values, {total:,} combinations): "
          f"{margin_time * 1e3:.0f} ms (target: < 1 s), proven: {'yes' if r.stopped is None else 'NO'}")
    print(f"  every combination's worst case: {per * 1e6:.2f} µs each (measured on {SAMPLE:,} of them), "
          f"{per * total / 60:,.0f} min for all; speed-up {per * total / margin_time:,.0f}x")
    for c in r.candidates[:3]:
        shown = ", ".join(f"{p} {c.resistors[p]:g}" for p in r.fitted)
        print(f"  {shown}: margin {c.margin * 1e3:.2f} mV")

    small_time, small = timed(lambda: run("E12", 1e6), 3)
    grid = series_values("E12", 1e3, 1e6)
    t0 = time.perf_counter()
    everything, _ = every_margin(small, grid)
    full_time = time.perf_counter() - t0
    best = np.sort(everything)[::-1][:5]
    same = np.allclose([c.margin for c in small.candidates], best, rtol=0, atol=1e-12)
    print(f"--by margin, E12 1 kOhm to 1 MOhm ({len(grid) ** 3:,} combinations): {small_time * 1e3:.0f} ms; "
          f"every combination's worst case: {full_time:.2f} s; speed-up {full_time / small_time:,.0f}x; "
          f"same 5 best margins: {'yes' if same else 'NO'}")

    yield_time, y = timed(lambda: run("E96", 10e6, "yield"), 1)
    finalists = sum(1 for line in y.notes if "Yields are drawn" in line) and int(
        next(line for line in y.notes if "Yields are drawn" in line).split()[5])
    print(f"--by yield, E96, {YIELD_BUILDS:,} builds per finalist, {finalists} finalists: {yield_time:.2f} s "
          f"(target: < 5 s), {yield_time / finalists * 1e3:.0f} ms per finalist")
    for c in y.candidates[:3]:
        b = c.build_yield
        print(f"  yield {100 * b.fraction:.2f} % ({100 * b.low:.2f} to {100 * b.high:.2f}), margin "
              f"{c.margin * 1e3:.2f} mV, not told apart from {list(c.not_told_apart)}")


if __name__ == "__main__":
    main()
