"""Benchmark: watched switching points of a thermistor front end, vectorized, against a root finder.

Run:  python benchmarks/bench_watched.py
Times one ``design_points`` call over 1,000,000 variants of the greenhouse thermostat (R25,
Beta, fixed resistor, stage resistors), and, side by side in the same run, a scalar bracketed
root solve (scipy's brentq on temperature, the stage re-evaluated at each trial's Thevenin
resistance) over a sample of the same variants; prints both per variant, their ratio, and the
largest difference between the two answers on the sample.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy.optimize import brentq
from timing import best_of  # the benchmarks' shared timer (this folder)

from bandcalc.model.design_file import load_design
from bandcalc.model.network import switching_points
from bandcalc.model.parts import parameters
from bandcalc.model.points import design_points, volts_for

DEMO = Path(__file__).parent.parent / "demo_data" / "greenhouse_fan_thermostat.json"



def bracketed(design, values: dict[str, float]) -> float:
    """The stage's upper point in C by brentq over -55..150 C (scalar)."""

    def gap(celsius: float) -> float:
        volts, ohms = volts_for(design, celsius, values)
        stage = {k: v for k, v in values.items() if not k.startswith("front_end.")}
        point = switching_points(design, {**stage, "source.resistance": ohms}).upper
        return float(volts) - float(point)

    return brentq(gap, -55.0, 150.0, xtol=1e-9)


def main(n: int = 1_000_000, loop_n: int = 200) -> None:
    design = load_design(DEMO)
    rng = np.random.default_rng(1)
    nominal = parameters(design)
    keys = ["front_end.r25", "front_end.beta", "front_end.fixed",
            "resistors.to_positive", "resistors.to_ground", "resistors.feedback"]
    values = {k: nominal[k] * rng.normal(1.0, 0.01, n) for k in keys}

    vector = best_of(lambda: design_points(design, values), 3)
    sample = [{k: float(v[i]) for k, v in values.items()} for i in range(loop_n)]
    loop = best_of(lambda: [bracketed(design, s) for s in sample], 1)
    fast = design_points(design, {k: v[:loop_n] for k, v in values.items()}).at_stage_upper
    slow = np.array([bracketed(design, s) for s in sample])
    per_vector, per_loop = vector / n, loop / loop_n
    print(f"design: {design.name} (thermistor front end, {design.stage} stage)")
    print(f"vectorized: {n:,} variants in {vector * 1e3:.0f} ms ({per_vector * 1e9:.0f} ns per variant)")
    print(f"bracketed scalar solve: {per_loop * 1e3:.2f} ms per variant (over {loop_n} variants)")
    print(f"speed-up per variant: {per_loop / per_vector:,.0f}x")
    print(f"largest difference on the sample: {np.max(np.abs(fast - slow)):.1e} K")


if __name__ == "__main__":
    main()
