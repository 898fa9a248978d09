"""Benchmark: a failure probability near one part per million, against plain sampling.

Run:  python benchmarks/bench_rare.py
The sump demo with 12 varied factors (its resistors, their own temperature coefficients, the
rail, the reference and its drift box, the offset and its drift, the bias current, the output's
high and low drops within data-sheet limits) over 0 to 50 C, its lower window widened so that
about one build in a million fails.  Prints, measured side by side in one run: the importance-
sampling estimate, its 95 % interval and the time it took; the time per build of plain Monte
Carlo over the range (measured on 200,000 builds); the builds plain sampling would need for the
same +/-10 % at 95 % (1.96^2 (1 - p) / (0.1^2 p), the normal approximation to the binomial) and
the time that would take; and the ratio.  Goal: +/-10 % (95 %) in under 1 s.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

from timing import best_of, timed  # the benchmarks' shared timer (this folder)

from bandcalc.model.design_file import load_design
from bandcalc.model.tolerances import Limits, OutputLimits
from bandcalc.spread.factors import VariedModel
from bandcalc.spread.propagation import monte_carlo
from bandcalc.spread.rare_failures import Z95, failure_probability

DEMO = Path(__file__).parent.parent / "demo_data" / "sump_level_switch.json"
WINDOWS = Limits(upper=(3.0, 3.25), lower=(1.742, 1.998), hysteresis=(1.0, None))


def main() -> None:
    sump = load_design(DEMO)
    tol = dataclasses.replace(sump.tolerances, limits=WINDOWS,
                              output=OutputLimits(high_drop=(0.0, 0.2), low_drop=(0.0, 0.2)))
    design = dataclasses.replace(sump, tolerances=tol)
    model = VariedModel(design, None)
    low, high = model.temperature
    print(f"design: {design.name}, {len(model.factors)} varied factors, each build over {low:g} to "
          f"{high:g} C")
    windows = tol.limits.windows()
    elapsed, f = timed(lambda: failure_probability(model, windows, 0, 1, seed=1, cannot_fail=False), 3)
    half = 0.5 * (f.high - f.low)
    print(f"importance sampling: p = {f.probability:.3e} (95 % interval {f.low:.3e} to {f.high:.3e}, "
          f"+/-{100 * half / f.probability:.1f} %), {f.samples:,} weighted builds, {elapsed * 1e3:.0f} ms "
          f"(goal: +/-10 % in under 1000 ms)")
    n = 200_000
    plain = dataclasses.replace(design, tolerances=dataclasses.replace(tol, limits=Limits()))
    per_build = best_of(lambda: monte_carlo(plain, samples=n, seed=2), 2) / n
    need = Z95**2 * (1 - f.probability) / (0.1**2 * f.probability)
    print(f"plain sampling: {per_build * 1e9:.0f} ns per build over the range (measured on {n:,}); "
          f"+/-10 % at this p needs {need:,.0f} builds, {need * per_build:,.0f} s")
    print(f"speed-up of importance sampling at equal precision: {need * per_build / elapsed:,.0f}x")
    print(f"machine load while running (1-minute average): {os.getloadavg()[0]:.1f} "
          f"on {os.cpu_count()} cores")


if __name__ == "__main__":
    main()
