"""Benchmark: one vectorized call for 1,000,000 design variants against the scalar path in a loop.

Run:  python benchmarks/bench_model.py
Prints the time of the vectorized call, the per-variant time of a loop of scalar calls
(measured on a sample and scaled), and the ratio of the two, measured side by side in one run.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from timing import best_of  # the benchmarks' shared timer (this folder)

from bandcalc.model.design_file import load_design
from bandcalc.model.network import switching_points
from bandcalc.model.parts import parameters

DEMO = Path(__file__).parent.parent / "demo_data" / "solar_battery_disconnect.json"



def main(n: int = 1_000_000, loop_n: int = 2_000) -> None:
    design = load_design(DEMO)
    rng = np.random.default_rng(1)
    nominal = parameters(design)
    keys = [k for k in nominal if k.startswith("resistors.")] + ["output.pullup", "reference.volts"]
    values = {k: nominal[k] * rng.normal(1.0, 0.01, n) for k in keys}
    values["comparator.offset"] = rng.normal(0.0, 1e-3, n)

    vector = best_of(lambda: switching_points(design, values), 5)
    scalar_values = [{k: float(v[i]) for k, v in values.items()} for i in range(loop_n)]
    loop = best_of(lambda: [switching_points(design, sv) for sv in scalar_values], 3)
    per_vector, per_loop = vector / n, loop / loop_n
    print(f"design: {design.name} ({design.stage}, {design.output.kind})")
    print(f"vectorized: {n:,} variants in {vector * 1e3:.1f} ms ({per_vector * 1e9:.0f} ns per variant)")
    print(f"scalar loop: {per_loop * 1e6:.1f} µs per variant (over {loop_n:,} variants)")
    print(f"speed-up per variant: {per_loop / per_vector:,.0f}x  (target: >= 100x, and < 500 ms for 1M)")


if __name__ == "__main__":
    main()
