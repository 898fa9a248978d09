"""Benchmark: fitting three resistors over E96 from 1 kOhm to 10 MOhm, against exhaustive search.

Run:  python benchmarks/bench_fit.py
Prints the time of the whole fit and of its search for the best standard values, the time of
evaluating every combination with the same model (about 57 million, in blocks), the ratio of
the two measured side by side in one run, and whether both found the same best candidates.
"""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
from timing import timed  # the benchmarks' shared timer (this folder)

from bandcalc.fit import grid_search as search
from bandcalc.fit.selection import (  # the fit's own model call, so both rank by the same numbers
    _evaluator,
    fit,
)
from bandcalc.model.design_file import design_from_dict, load_design
from bandcalc.model.standard_values import series_values

# A three-resistor stage (input, leg to ground, feedback; open-drain, offset, bias and source
# resistance included): a 12 V battery watch straight into the + pin, 5 V comparator.
THREE = design_from_dict({
    "format": 1, "name": "Battery watch, three resistors", "stage": "non-inverting",
    "supply": {"positive": 5.0}, "reference": {"volts": 2.495},
    "resistors": {"input": "150k", "to_ground": "39k", "feedback": "620k"},
    "output": {"kind": "open-drain", "pullup": "10k"},
    "comparator": {"offset": 0.001, "bias_current": 2.5e-8}, "source": {"resistance": 0.05, "high": 16.0},
})
FRONT_END_DEMO = Path(__file__).parent.parent / "demo_data" / "solar_battery_disconnect.json"
UPPER, LOWER, SERIES, LOW, HIGH, COUNT = 12.7, 11.5, "E96", 1e3, 10e6, 5


def main() -> None:
    design = THREE
    result = fit(design, UPPER, LOWER, series=SERIES, min_ohms=LOW, max_ohms=HIGH, count=COUNT)
    params = [f"resistors.{p}" for p in result.fitted]
    grid = series_values(SERIES, LOW, HIGH)
    evaluate = _evaluator(result.design, params)

    fit_time, _ = timed(lambda: fit(design, UPPER, LOWER, series=SERIES, min_ohms=LOW, max_ohms=HIGH,
                                      count=COUNT), 7)
    search_time, found = timed(lambda: search.search(evaluate, grid, 3, UPPER, LOWER, COUNT), 7)
    t0 = time.perf_counter()
    every = search.exhaustive(evaluate, grid, 3, UPPER, LOWER, COUNT)
    full_time = time.perf_counter() - t0

    same = np.array_equal(found.values, every.values)
    demo = load_design(FRONT_END_DEMO)
    watched_time, watched = timed(lambda: fit(demo, UPPER, LOWER, series=SERIES, count=COUNT), 3)
    print(f"design: {design.name} ({design.stage}, {design.output.kind}); targets {UPPER} V / {LOWER} V")
    print(f"fitting {', '.join(result.fitted)} from {SERIES}, {LOW:g} to {HIGH:g} ohm: {len(grid)} values, "
          f"{len(grid) ** 3:,} combinations")
    print(f"fit (exact solution, search, candidates): {fit_time * 1e3:.1f} ms  (target: < 50 ms)")
    print(f"search alone: {search_time * 1e3:.1f} ms, {found.evaluations:,} model evaluations")
    print(f"exhaustive search: {full_time:.2f} s, {every.evaluations:,} model evaluations")
    print(f"speed-up: fit {full_time / fit_time:,.0f}x, search {full_time / search_time:,.0f}x  "
          f"(target: >= 50x)")
    print(f"same {COUNT} best candidates as exhaustive search: {'yes' if same else 'NO'}")
    for values, u, l in zip(found.values, found.upper, found.lower, strict=True):  # noqa: E741
        shown = ", ".join(f"{p} {v:g}" for p, v in zip(result.fitted, values, strict=True))
        print(f"  {shown}: {u:.4f} V / {l:.4f} V")
    print(f"for information: {demo.name} (sense-divider front end, two stage resistors, so the fit "
          f"adds a leg; targets in battery volts): {watched_time * 1e3:.1f} ms, fitted "
          f"{', '.join(watched.fitted)}")


if __name__ == "__main__":
    main()
