"""Benchmark: builds checked over the whole temperature range, against a per-build loop.

Run:  python benchmarks/bench_spread.py
Prints, measured side by side in one run: the time of a Monte Carlo run of 100,000 and 1,000,000
builds, each evaluated over the design's temperature range (five temperatures, both edges of the
reference's drift box, turning points), with statistics and histograms; the per-build time of a
loop that takes the builds one at a time through the same evaluation (measured over a few hundred
builds and scaled); their ratio; and the same 100,000-build run with the yield and the failure
probability.  Wall time and this process's processor time are both shown: on a shared machine
the second is closer to what an idle one takes.  Targets: 100,000 builds over the range under
100 ms, 1,000,000 under 1 s.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

import numpy as np
from timing import best_cpu_of, best_of  # the benchmarks' shared timers (this folder)

from bandcalc.model.design_file import load_design
from bandcalc.model.tolerances import Limits
from bandcalc.spread.factors import VariedModel
from bandcalc.spread.over_range import over_range
from bandcalc.spread.propagation import monte_carlo, worst_case

DEMO = Path(__file__).parent.parent / "demo_data" / "solar_battery_disconnect.json"


def per_build_loop_time(model: VariedModel, loop_n: int) -> float:
    """Seconds per build of a Python loop taking one build at a time over the range (draws made first)."""
    rng = np.random.default_rng(2)
    drawn = {f.name: f.draw(rng, loop_n) for f in model.factors}
    rows = [{k: v[i:i + 1] for k, v in drawn.items()} for i in range(loop_n)]
    return best_of(lambda: [over_range(model, row, 1) for row in rows], 3) / loop_n


def main(loop_n: int = 400) -> None:
    design = load_design(DEMO)
    plain = dataclasses.replace(design, tolerances=dataclasses.replace(design.tolerances, limits=Limits()))
    model = VariedModel(plain, None)
    k = len(model.factors)
    low, high = model.temperature
    print(f"design: {design.name} ({design.stage}, {design.output.kind}), {k} varied factors, "
          f"each build over {low:g} to {high:g} C")
    per_loop = per_build_loop_time(model, loop_n)
    print(f"per-build loop: {per_loop * 1e6:.0f} µs per build (over {loop_n:,} builds)")
    for n, target, repeats in ((100_000, 0.1, 5), (1_000_000, 1.0, 2)):
        t = best_of(lambda n=n: monte_carlo(plain, samples=n, seed=1), repeats)
        cpu = best_cpu_of(lambda n=n: monte_carlo(plain, samples=n, seed=1), repeats)
        print(f"Monte Carlo {n:>9,} builds over the range: {t * 1e3:7.1f} ms wall, {cpu * 1e3:7.1f} ms "
              f"processor (target < {target * 1e3:.0f} ms); the loop would take {per_loop * n:6.1f} s; "
              f"speed-up {per_loop * n / t:,.0f}x")
    t = best_of(lambda: monte_carlo(design, samples=100_000, seed=1), 3)
    print(f"the same 100,000 builds with the yield, where builds fail and the failure probability: "
          f"{t * 1e3:.1f} ms")
    t = best_of(lambda: worst_case(design), 3)
    print(f"worst case over all {2**k:,} corners, each over the range: {t * 1e3:.1f} ms")
    print(f"machine load while running (1-minute average): {os.getloadavg()[0]:.1f} "
          f"on {os.cpu_count()} cores")


if __name__ == "__main__":
    main()
