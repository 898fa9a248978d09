"""Time the signal check side by side with a plain per-sample Python loop.

Run: ``python benchmarks/bench_signal.py``. Prints best-of-N wall times
(time.perf_counter) for

1. the vectorized switching core (:func:`bandcalc.signal_check.edges.switch_states`) on
   1,000,000 noisy samples, against the per-sample loop
   (:func:`bandcalc.signal_check.loop_reference.switch_loop`) on the same samples;
2. reading a 1,000,000-row CSV and running the stage
   (``recording.read_waveform_csv`` + ``edges.run_stage`` of :mod:`bandcalc.signal_check`),
   against the standard-library csv module feeding the same loop;
3. 1,000,000 samples of band-limited noise generated (``waveform.band_limited_noise``), passed
   through a first-order filter (``first_order.low_pass``) and run through the points
   (``edges.find_edges``), against the same filter as a per-sample Python loop feeding the
   per-sample switching loop, on the same noise.

Targets: 1 under 3 ms, 2 under 0.5 s, 3 under 100 ms. The machine is shared, so the ratios,
measured in the same run, say more than the absolute times.
"""

from __future__ import annotations

import csv
import io
import math
import sys
from pathlib import Path

import numpy as np

# Time the package of this checkout, not whichever copy happens to be installed.
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from timing import best_of  # the benchmarks' shared timer (this folder)

from bandcalc.signal_check.edges import find_edges, run_stage, switch_states
from bandcalc.signal_check.first_order import low_pass
from bandcalc.signal_check.loop_reference import switch_loop
from bandcalc.signal_check.recording import read_waveform_csv
from bandcalc.signal_check.waveform import band_limited_noise, synthesize

SAMPLES = 1_000_000
UPPER, LOWER = 1.05, 0.95



def loop_from_csv(data: bytes) -> int:
    """Baseline: csv module, float() per field, then the per-sample loop."""
    t, v = [], []
    for row in csv.reader(io.StringIO(data.decode())):
        t.append(float(row[0]))
        v.append(float(row[1]))
    return len(switch_loop(t, v, UPPER, LOWER)[1])


RATE, BANDWIDTH, TAU = 1e6, 20e3, 20e-6


def noise_ours(t: np.ndarray) -> int:
    """Generate band-limited noise, filter it, run it: the package's way."""
    v = 1.0 + band_limited_noise(t.size, RATE, 0.05, BANDWIDTH, np.random.default_rng(7))
    return find_edges(t, low_pass(t, v, TAU), UPPER, LOWER).index.size


def noise_loop(t: list[float], v: list[float]) -> int:
    """Baseline: the same first-order filter, one sample at a time, then the per-sample loop."""
    a = math.exp(-(t[1] - t[0]) / TAU)
    g = 1.0 - (1.0 - a) * TAU / (t[1] - t[0])
    y, out = v[0], [v[0]]
    for previous, x in zip(v[:-1], v[1:], strict=True):
        y = a * y + (1.0 - a) * previous + g * (x - previous)
        out.append(y)
    return len(switch_loop(t, out, UPPER, LOWER)[1])


def main() -> None:
    wave = synthesize("sine", 1.0, 0.5, 50, 1.0, SAMPLES - 1, noise_rms=0.01, seed=1)
    v = np.array(wave.v)
    t_list, v_list = wave.t.tolist(), wave.v.tolist()
    assert switch_states(v, UPPER, LOWER).tolist() == switch_loop(t_list, v_list, UPPER,
                                                                  LOWER)[0]

    core = best_of(lambda: switch_states(v, UPPER, LOWER), 30)
    loop = best_of(lambda: switch_loop(t_list, v_list, UPPER, LOWER), 3)
    print(f"switching core, {SAMPLES:,} samples (target < 3 ms)")
    print(f"  vectorized      {core * 1e3:8.2f} ms")
    print(f"  per-sample loop {loop * 1e3:8.2f} ms")
    print(f"  loop / vectorized = {loop / core:.1f}x")

    buf = io.StringIO()
    np.savetxt(buf, np.column_stack([wave.t, wave.v]), delimiter=",", fmt="%.9g")
    data = ("time_s,volts\n" + buf.getvalue()).encode()
    got = run_stage(read_waveform_csv(data), UPPER, LOWER).edge_count
    assert got == loop_from_csv(data.split(b"\n", 1)[1])

    read = best_of(lambda: read_waveform_csv(data), 5)
    recorded = read_waveform_csv(data)
    run = best_of(lambda: run_stage(recorded, UPPER, LOWER), 5)
    both = best_of(lambda: run_stage(read_waveform_csv(data), UPPER, LOWER), 5)
    plain = best_of(lambda: loop_from_csv(data.split(b"\n", 1)[1]), 2)
    print(f"CSV read + run, {SAMPLES:,} rows, {len(data) / 1e6:.1f} MB (target < 0.5 s)")
    print(f"  read_waveform_csv          {read * 1e3:8.1f} ms")
    print(f"  run_stage                  {run * 1e3:8.1f} ms")
    print(f"  read + run                 {both * 1e3:8.1f} ms")
    print(f"  csv module + per-sample loop {plain * 1e3:6.1f} ms")
    print(f"  plain / ours = {plain / both:.1f}x   ({got} edges either way)")

    t = np.arange(SAMPLES) / RATE
    noisy = 1.0 + band_limited_noise(SAMPLES, RATE, 0.05, BANDWIDTH, np.random.default_rng(7))
    ours_edges = noise_ours(t)
    assert ours_edges == noise_loop(t.tolist(), noisy.tolist())
    ours = best_of(lambda: noise_ours(t), 7)
    generate = best_of(lambda: band_limited_noise(SAMPLES, RATE, 0.05, BANDWIDTH,
                                                  np.random.default_rng(7)), 7)
    filtered = best_of(lambda: low_pass(t, noisy, TAU), 7)
    loop = best_of(lambda: noise_loop(t.tolist(), noisy.tolist()), 2)
    print(f"band-limited noise, {SAMPLES:,} samples: generated, filtered and run (target < 100 ms)")
    print(f"  generate             {generate * 1e3:8.2f} ms")
    print(f"  filter               {filtered * 1e3:8.2f} ms")
    print(f"  generate+filter+run  {ours * 1e3:8.2f} ms")
    print(f"  per-sample loops     {loop * 1e3:8.2f} ms (filter and switching, on the same noise)")
    print(f"  loops / ours = {loop / ours:.1f}x   ({ours_edges} edges either way)")


if __name__ == "__main__":
    main()
