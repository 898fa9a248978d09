"""Tests of the hysteresis-against-delay sweep."""

import math

import numpy as np
import pytest

from bandcalc.signal_check.edges import run_stage
from bandcalc.signal_check.noise import PEAK_TO_PEAK_PER_RMS
from bandcalc.signal_check.waveform import Waveform, synthesize
from bandcalc.signal_check.width_trade import MAX_WIDTHS, hysteresis_sweep


def test_clean_sine_delays_follow_asin():
    # Points c +/- w/2 on a sine of amplitude A: every edge lags the centre crossing by
    # asin(w / (2 A)) / (2 pi f) (plain trigonometry), plus the propagation delay.
    a, f, tpd = 1.0, 100.0, 1e-6
    widths = np.array([0.0, 0.2, 0.5, 1.0, 1.9])
    wave = synthesize("sine", 0.5, a, f, 0.05, 1e6)
    sweep = hysteresis_sweep(wave, 0.5, widths, delay=tpd)
    expected = np.arcsin(widths / (2 * a)) / (2 * math.pi * f) + tpd
    np.testing.assert_allclose(sweep.mean_delays, expected, rtol=0, atol=1e-9)
    np.testing.assert_allclose(sweep.max_delays, expected, rtol=0, atol=1e-9)
    assert sweep.clean_switching.all()
    assert sweep.best_width == 0.0
    assert sweep.best_mean_delay == pytest.approx(tpd, abs=1e-9)


def test_noisy_sine_needs_about_the_noise_peak_to_peak():
    rms = 0.01
    wave = synthesize("sine", 1.0, 0.5, 50, 0.2, 1e5, noise_rms=rms, seed=8)
    widths = np.linspace(0.0, 0.12, 49)
    sweep = hysteresis_sweep(wave, 1.0, widths, rise_time=1e-6)
    best = sweep.best_index
    assert best is not None
    # Rule of thumb: hysteresis above 6.6 x RMS (common practice) is enough; narrower may be.
    assert 0 < sweep.best_width <= PEAK_TO_PEAK_PER_RMS * rms
    assert not sweep.clean_switching[:best].any()
    assert (sweep.edge_counts[:best] > sweep.clean_crossing_count).all()
    # The sweep agrees with a single run at the chosen width.
    w = sweep.best_width
    run = run_stage(wave, 1.0 + w / 2, 1.0 - w / 2, rise_time=1e-6)
    assert run.edge_count == run.clean_crossing_count == sweep.clean_crossing_count == 19
    assert sweep.best_mean_delay == pytest.approx(np.mean(run.edge_delays), abs=1e-15)
    assert sweep.best_max_delay == pytest.approx(np.max(run.edge_delays), abs=1e-15)


def test_widths_beyond_the_swing_do_not_qualify():
    # 5 periods: 10 centre crossings, the last one on the final sample, too late for an
    # edge through any point off the centre; it is not counted as missed.
    wave = synthesize("triangle", 0.0, 1.0, 10, 0.5, 1e4)
    sweep = hysteresis_sweep(wave, 0.0, [2.5, 0.5, 1.0])
    assert sweep.clean_crossing_count == 10
    np.testing.assert_array_equal(sweep.clean_edge_counts, [0, 9, 9])
    np.testing.assert_array_equal(sweep.missed_counts, [9, 0, 0])
    np.testing.assert_array_equal(sweep.clean_switching, [False, True, True])
    assert sweep.best_width == 0.5  # narrowest of the unsorted list
    assert np.isnan(sweep.mean_delays[0])
    # Triangle: slope 4 A f, so the delay is (w / 2) / (4 A f).
    assert sweep.mean_delays[1] == pytest.approx(0.25 / 40, abs=1e-9)


def test_recorded_input_gives_counts_only():
    noisy = synthesize("sine", 0, 1, 10, 0.5, 1e4, noise_rms=0.05, seed=1)
    recorded = Waveform(noisy.t, noisy.v)
    sweep = hysteresis_sweep(recorded, 0.0, [0.0, 0.5])
    assert sweep.clean_edge_counts is None and sweep.best_index is None
    assert not sweep.clean_switching.any() and np.isnan(sweep.mean_delays).all()
    assert sweep.edge_counts[1] == run_stage(recorded, 0.25, -0.25).edge_count


@pytest.mark.parametrize(
    ("widths", "message"),
    [
        ([], "widths must be a list of 1 to"),
        ([[0.1]], "widths must be a list of 1 to"),
        ([0.1, -0.1], "widths must be finite and at least 0 V"),
        ([math.nan], "widths must be finite"),
        (["a"], "widths must be numbers in V"),
        (np.zeros(MAX_WIDTHS + 1), f"1 to {MAX_WIDTHS} values"),
    ],
)
def test_bad_widths(widths, message):
    wave = synthesize("sine", 0, 1, 10, 0.1, 1e3)
    with pytest.raises(ValueError, match=message):
        hysteresis_sweep(wave, 0.0, widths)
