"""Benchmark: fitting three resistors over E96 from 1 kOhm to 10 MOhm, against exhaustive search.

Run:  python benchmarks/bench_fit.py
Prints the time of the whole fit and of its search for the best standard values, the time of
evaluating every combination with the same model (about 57 million, in blocks), the ratio of
the two measured side by side in one run, and whether both found the same best candidates.

Then the bounded runs: fits that are refused at once (too many free values for the series, a
candidate count out of range) and fits whose search reaches its budget or spans very wide
ranges, each with its time, the combinations checked, whether the ranking is proven, and its
time as a multiple of the three-resistor fit above (target: every one within a few seconds).
"""

from __future__ import annotations

import dataclasses
import time
from pathlib import Path

import numpy as np
from timing import timed  # the benchmarks' shared timer (this folder)

from bandcalc.fit import grid_search as search
from bandcalc.fit.selection import (  # the fit's own model call, so both rank by the same numbers
    FitError,
    _evaluator,
    fit,
)
from bandcalc.model.design import DividerReference
from bandcalc.model.design_file import design_from_dict, load_design
from bandcalc.model.parts import with_values
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
SUMP = load_design(Path(__file__).parent.parent / "demo_data" / "sump_level_switch.json")
TWO_LEGS = with_values(SUMP, {"resistors.to_ground": 100e3, "resistors.to_positive": 100e3})
# (what, design, fit's keyword arguments); targets 3 V and 2 V on the sump stage.
BOUNDED = [
    ("five free values over E24 (refused)",
     with_values(TWO_LEGS, {"resistors.to_negative": 1e6}), {}),
    ("six free values, divider reference (refused)",
     dataclasses.replace(TWO_LEGS, reference=DividerReference(10e3, 10e3)), {}),
    ("--count 1000000000 (refused)", SUMP, {"count": 10**9}),
    ("four free values over E24 (finishes)", TWO_LEGS, {}),
    ("four free values over E48 (reaches the budget)", TWO_LEGS, {"series": "E48"}),
    ("five free values over E12 (reaches the budget)", with_values(TWO_LEGS, {"resistors.to_negative": 1e6}),
     {"series": "E12"}),
    ("E96 from 1 Ohm to 1 TOhm", SUMP, {"series": "E96", "min_ohms": 1.0, "max_ohms": 1e12}),
    ("E192 from 1 Ohm to 10 GOhm", SUMP, {"series": "E192", "min_ohms": 1.0, "max_ohms": 1e10}),
    ("E192 from 1 mOhm to 1 POhm", SUMP, {"series": "E192", "min_ohms": 1e-3, "max_ohms": 1e15}),
]


def bounded(reference: float) -> None:
    """Each bounded run once: its time, the combinations checked, and whether it is proven."""
    print(f"bounded runs (sump stage, 3 V / 2 V; budget {search.BUDGET:,} combinations checked):")
    for what, design, kwargs in BOUNDED:
        start = time.perf_counter()
        try:
            r = fit(design, 3.0, 2.0, **kwargs)
            outcome = (f"{r.checked:,} checked, {'proven' if r.stopped is None else 'NOT proven'}, "
                       f"best {r.candidates[0].worst_error * 1e3:.3g} mV")
        except FitError as exc:
            outcome = f"refused: {str(exc)[:60]}..."
        took = time.perf_counter() - start
        shown = f"{took * 1e3:.1f} ms" if took < 0.1 else f"{took:.2f} s"
        print(f"  {what}: {shown} ({took / reference:.2g}x the fit above); {outcome}")


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
    bounded(fit_time)


if __name__ == "__main__":
    main()
