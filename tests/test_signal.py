"""Tests of the switching run: agreement with a per-sample loop, delays, noise checks."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from bandcalc.signal_check.edges import (
    edge_delays,
    find_edges,
    missed_transitions,
    run_stage,
    switch_states,
)
from bandcalc.signal_check.loop_reference import switch_loop
from bandcalc.signal_check.noise import PEAK_TO_PEAK_PER_RMS, disturbance_of
from bandcalc.signal_check.spectrum import estimate_noise
from bandcalc.signal_check.waveform import Waveform, synthesize


def assert_matches_loop(v, upper, lower):
    t = np.arange(v.size, dtype=float) * 1e-3
    states, edges = switch_loop(t.tolist(), v.tolist(), upper, lower)
    assert switch_states(v, upper, lower).tolist() == states
    found = find_edges(t, v, upper, lower)
    assert found.index.tolist() == [e[0] for e in edges]
    assert found.direction.tolist() == [e[1] for e in edges]
    np.testing.assert_allclose(found.switch_times, [e[2] for e in edges], rtol=0, atol=1e-15)


# --- agreement with the plain per-sample loop --------------------------------------------

@settings(max_examples=300, deadline=None)
@given(
    v=arrays(np.float64, st.integers(1, 60), elements=st.integers(-4, 4).map(float)),
    lower=st.integers(-3, 3),
    width=st.integers(0, 4),
)
def test_matches_loop_on_small_integer_signals(v, lower, width):
    # Small integers make samples land exactly on the points and the centre.
    assert_matches_loop(v, float(lower + width), float(lower))


@pytest.mark.parametrize("case", range(40))
def test_matches_loop_on_random_noisy_signals(case):
    rng = np.random.default_rng(1000 + case)
    n = int(rng.integers(2, 5000))
    v = np.sin(np.linspace(0, rng.uniform(1, 40), n)) + rng.normal(0, rng.uniform(0, 0.5), n)
    width = rng.choice([0.0, rng.uniform(0, 0.3), rng.uniform(0, 2.5)])
    centre = rng.uniform(-0.5, 0.5)
    assert_matches_loop(v, centre + width / 2, centre - width / 2)


@pytest.mark.parametrize(
    ("first", "high"),
    [(0.9, True), (0.55, True), (0.5, True), (0.45, False), (0.1, False)],
)
def test_start_state_from_first_sample(first, high):
    # Points 0.2 and 0.8, centre 0.5: at or above the centre starts input-high.
    assert bool(switch_states(np.array([first, 0.5]), 0.8, 0.2)[0]) is high


def test_upper_below_lower_is_refused():
    with pytest.raises(ValueError, match=r"upper \(0.1 V\) must be at or above lower"):
        switch_states(np.zeros(3), 0.1, 0.2)


@pytest.mark.parametrize(("key", "value"), [("delay", -1e-9), ("rise_time", math.inf)])
def test_run_arguments_are_checked(key, value):
    wave = synthesize("sine", 0, 1, 10, 0.1, 1000)
    with pytest.raises(ValueError, match=key):
        run_stage(wave, 0.1, -0.1, **{key: value})


# --- analytic delays --------------------------------------------------------------------

@pytest.mark.parametrize("inverting", [False, True])
def test_clean_sine_delay_is_asin_over_omega(inverting):
    # Output edge lags the centre crossing by asin((V_point - c) / A) / (2 pi f) (plain
    # trigonometry: the sine reaches c + A sin(2 pi f t)). Propagation delay on every edge, the
    # rise time on rising output edges, the fall time on falling ones.
    a, c, f = 0.5, 1.2, 1e3
    upper, lower = 1.35, 1.05
    wave = synthesize("sine", c, a, f, 5e-3, 2e6)
    tpd, rise, fall = 200e-9, 140e-9, 30e-9
    run = run_stage(wave, upper, lower, inverting=inverting, delay=tpd, rise_time=rise, fall_time=fall)
    lag = math.asin((upper - c) / a) / (2 * math.pi * f)
    rising_output = (run.edge_directions > 0) != inverting
    expected = lag + tpd + np.where(rising_output, rise, fall)
    assert run.edge_count == run.clean_crossing_count == 10
    np.testing.assert_allclose(run.edge_delays, expected, rtol=0, atol=2e-9)
    # The edges themselves: the sine crosses c upwards at k / f, downwards at (k + 1/2) / f.
    crossings = np.arange(10) / (2 * f)
    np.testing.assert_allclose(run.edge_times, crossings + expected, rtol=0, atol=2e-9)


def test_delay_is_counted_from_the_centre_of_the_points():
    # With points not centred on the sine, the reference is the stage's own centre m:
    # lag = [asin((V_point - c)/A) - asin((m - c)/A)] / (2 pi f) rising, mirrored falling.
    a, c, f = 1.0, 0.0, 50.0
    upper, lower = 0.6, 0.2
    m = (upper + lower) / 2
    wave = synthesize("sine", c, a, f, 0.1, 1e6)
    run = run_stage(wave, upper, lower)
    w = 2 * math.pi * f
    up = (math.asin(upper - c) - math.asin(m - c)) / w
    down = (math.asin(m - c) - math.asin(lower - c)) / w
    expected = np.where(run.edge_directions > 0, up, down)
    np.testing.assert_allclose(run.edge_delays, expected, rtol=0, atol=1e-9)


def test_clean_ramp_delay_is_distance_over_slope():
    # Straight rise from 0 V to 2 V over 10 ms: slope 200 V/s, centre 1 V crossed at 5 ms.
    wave = synthesize("ramp", 1.0, 1.0, 1.0, 10e-3, 1e5)
    slope = 2.0 / 10e-3
    run = run_stage(wave, 1.3, 0.7, delay=1e-6)
    assert run.edge_directions.tolist() == [1]
    assert run.edge_delays[0] == pytest.approx(0.3 / slope + 1e-6, abs=1e-12)
    assert run.edge_times[0] == pytest.approx(5e-3 + 0.3 / slope + 1e-6, abs=1e-12)


def test_steps_switch_once_per_step_within_a_sample():
    # 10 periods at 100 Hz: 20 steps, the last one at the final sample.
    wave = synthesize("steps", 0.0, 1.0, 100.0, 0.1, 1e5)
    run = run_stage(wave, 0.3, -0.3)
    assert run.edge_count == run.clean_crossing_count == 20
    assert np.all((run.edge_delays >= 0) & (run.edge_delays < 1e-5))


def test_inverting_output_is_the_inverse_trace():
    wave = synthesize("sine", 0, 1, 50, 0.1, 1e4, noise_rms=0.05, seed=2)
    plain = run_stage(wave, 0.2, -0.2)
    inv = run_stage(wave, 0.2, -0.2, inverting=True)
    assert np.array_equal(inv.output_high, ~plain.output_high)
    assert np.array_equal(inv.edge_times, plain.edge_times)
    assert np.array_equal(inv.output_rising, ~plain.output_rising)
    assert inv.output_high_fraction == pytest.approx(1 - plain.output_high_fraction)


def test_duty_cycle_of_symmetric_points_on_a_sine():
    # 10 periods starting at the centre (input-high from t = 0): high for half of each
    # period, plus the lag before the first rising edge would have come.
    wave = synthesize("sine", 2.0, 1.0, 100, 0.1, 1e5)
    run = run_stage(wave, 2.4, 1.6)
    lag = math.asin(0.4) / (2 * math.pi * 100)
    assert run.input_high_fraction == pytest.approx(0.5 + lag / 0.1, abs=1e-6)


def test_duty_cycle_of_a_centred_sine_with_one_point_offset():
    # Ideal comparator at V on a sine: high while sin > V/A, for
    # 1/2 - asin(V/A)/pi of the period (sine geometry).
    wave = synthesize("sine", 0.0, 1.0, 100, 0.1, 1e5)
    run = run_stage(wave, 0.5, 0.5)
    assert run.input_high_fraction == pytest.approx(0.5 - math.asin(0.5) / math.pi, abs=1e-5)


# --- hysteresis against noise -----------------------------------------------------------

@pytest.mark.parametrize("case", range(5))
def test_one_edge_per_crossing_when_hysteresis_exceeds_noise(case):
    rms = 0.01
    width = 1.2 * PEAK_TO_PEAK_PER_RMS * rms
    wave = synthesize("sine", 1.0, 0.5, 50, 0.2, 2e5, noise_rms=rms, seed=case)
    run = run_stage(wave, 1.0 + width / 2, 1.0 - width / 2)
    assert run.edge_count == run.clean_crossing_count == run.clean_edge_count == 19
    assert run.extra_edges == 0 and run.missed_count == 0
    np.testing.assert_array_equal(run.edge_directions[:2], [-1, 1])
    assert run.findings == ()


def test_narrow_hysteresis_chatters_and_says_so():
    wave = synthesize("sine", 1.0, 0.5, 50, 0.2, 2e5, noise_rms=0.01, seed=7)
    run = run_stage(wave, 1.005, 0.995)
    assert run.extra_edges > 0
    assert f"Noise adds {run.extra_edges} edge" in run.findings[0]


def test_points_beyond_the_swing_are_reported():
    wave = synthesize("sine", 0.0, 1.0, 50, 0.1, 1e4)
    run = run_stage(wave, 1.5, -0.2)
    assert run.edge_count == 0
    # 10 crossings of the centre 0.65 V; the last one, at the end of the record, cannot
    # be judged, so 9 count as missed.
    assert (run.clean_crossing_count, run.missed_count) == (10, 9)
    assert run.findings[-1] == ("The stage misses 9 of the 10 centre crossing(s) of the "
                                "noise-free signal: a switching point lies beyond the "
                                "signal's swing.")


def test_edge_delay_is_from_the_nearest_crossing_in_the_same_direction():
    cross_t = np.array([1.0, 2.0, 3.0, 4.0])
    cross_d = np.array([1, -1, 1, -1])
    times = np.array([1.1, 1.95, 3.2, 5.0, 0.5])
    directions = np.array([1, -1, 1, 1, -1])
    # 1.95 falls before the downward crossing at 2 (noise switched early): negative.
    np.testing.assert_allclose(edge_delays(times, directions, cross_t, cross_d),
                               [0.1, -0.05, 0.2, 2.0, -1.5])
    assert np.isnan(edge_delays(times, directions, cross_t[:1], cross_d[:1])[1])


@pytest.mark.parametrize(
    ("switches", "missed"),
    [([1.1, 2.1, 3.1, 4.1], 0), ([1.1, 2.1, 3.1], 0), ([1.1, 2.1], 1), ([], 3), ([4.0], 3)],
)
def test_missed_transitions_spares_the_last_open_crossing(switches, missed):
    crossings = np.array([1.0, 2.0, 3.0, 4.0])
    assert missed_transitions(crossings, np.array(switches)) == missed


def test_recorded_signal_has_no_delays_and_an_estimated_noise():
    clean = synthesize("sine", 0, 1, 5, 1.0, 1e5, noise_rms=0.02, seed=3)
    recorded = Waveform(clean.t, clean.v)
    run = run_stage(recorded, 0.2, -0.2)
    assert run.edge_delays is None and run.clean_edge_count is None
    assert run.extra_edges is None
    assert run.noise.source == "estimated from the recording's spectrum, hum apart"
    assert run.noise.rms == pytest.approx(0.02, rel=0.05)


@pytest.mark.parametrize("rms", [1e-3, 0.05])
def test_white_noise_on_a_slow_signal_reads_its_rms_and_the_whole_band(rms):
    # White noise sampled at 1 MS/s fills the band to 500 kHz: the estimate says it may reach
    # beyond what the recording shows.
    rng = np.random.default_rng(11)
    t = np.arange(1_000_000) / 1e6
    v = 3.0 * np.sin(2 * np.pi * 10 * t) + rng.normal(0, rms, t.size)
    est = estimate_noise(Waveform(t, v))
    assert est.noise.rms == pytest.approx(rms, rel=0.02)
    assert est.noise.bandwidth == pytest.approx(500e3, rel=0.05)
    assert any("wider than the recording shows" in n for n in est.notes)


def test_noise_is_measured_hum_apart():
    wave = synthesize("triangle", 0, 1, 10, 1.0, 1e4, noise_rms=0.03, noise_bandwidth=1e3, seed=5,
                      hum_amplitude=0.05)
    found = disturbance_of(wave)
    assert found.source == "measured against the noise-free signal, hum apart"
    assert found.noise.rms == pytest.approx(0.03, rel=0.05)
    assert found.noise.bandwidth == pytest.approx(1e3, rel=0.1)
    assert found.hum.amplitude == pytest.approx(0.05, rel=0.05)
