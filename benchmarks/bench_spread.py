"""Benchmark: Monte Carlo spread of a design against a per-sample loop of the scalar model.

Run:  python benchmarks/bench_spread.py
Prints the time of a full Monte Carlo run (sampling, the vectorized model, statistics,
histograms and yield) at 100,000 and 1,000,000 samples, the per-sample time of a loop that
calls the scalar model once per sample (measured over a few thousand samples and scaled), and
the ratio of the two, measured side by side in one run.  Targets: 100,000 samples under 50 ms,
1,000,000 under 0.5 s.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
from timing import best_of  # the benchmarks' shared timer (this folder)

from bandcalc.model.design_file import load_design
from bandcalc.spread.factors import VariedModel
from bandcalc.spread.propagation import monte_carlo, worst_case

DEMO = Path(__file__).parent.parent / "demo_data" / "solar_battery_disconnect.json"


def scalar_loop_time(model: VariedModel, loop_n: int) -> float:
    """Seconds per sample of a Python loop with one scalar model call per sample (draws made first)."""
    rng = np.random.default_rng(2)
    drawn = {f.name: f.draw(rng, loop_n) for f in model.factors}
    rows = [{k: float(v[i]) for k, v in drawn.items()} for i in range(loop_n)]
    return best_of(lambda: [model.evaluate(row, 1) for row in rows], 3) / loop_n


def main(loop_n: int = 2_000) -> None:
    design = load_design(DEMO)
    model = VariedModel(design, None)
    k = len(model.factors)
    print(f"design: {design.name} ({design.stage}, {design.output.kind}), {k} varied factors")
    per_loop = scalar_loop_time(model, loop_n)
    print(f"scalar loop: {per_loop * 1e6:.1f} µs per sample (over {loop_n:,} samples)")
    for n, target, repeats in ((100_000, 0.05, 7), (1_000_000, 0.5, 3)):
        t = best_of(lambda n=n: monte_carlo(design, samples=n, seed=1), repeats)
        print(f"Monte Carlo {n:>9,} samples: {t * 1e3:7.1f} ms (target < {target * 1e3:.0f} ms); "
              f"the loop would take {per_loop * n:6.1f} s; speed-up {per_loop * n / t:,.0f}x")
    t = best_of(lambda: worst_case(design), 5)
    print(f"worst case over all {2**k:,} corners: {t * 1e3:.1f} ms")
    print(f"machine load while running (1-minute average): {os.getloadavg()[0]:.1f} "
          f"on {os.cpu_count()} cores")


if __name__ == "__main__":
    main()
