"""Noise and hum read from a spectrum: Welch's density against scipy, and estimates of signals whose
noise and hum are known."""

import math

import numpy as np
import pytest
from scipy import signal

from bandcalc.signal_check.disturbance import NoiseSpectrum
from bandcalc.signal_check.first_order import low_pass
from bandcalc.signal_check.spectrum import estimate_noise, welch_density
from bandcalc.signal_check.waveform import Waveform, synthesize


@pytest.mark.parametrize("segment", [256, 4096])
def test_welch_density_matches_scipy(segment):
    # scipy.signal.welch with a Hann window, half-overlapping segments and a straight line taken
    # out of each (PyPI reference library).
    rng = np.random.default_rng(2)
    x = np.cumsum(rng.normal(size=50_000)) * 1e-3 + rng.normal(size=50_000)
    f, ours = welch_density(x, 20e3, segment)
    f_ref, ref = signal.welch(x, 20e3, window="hann", nperseg=segment, noverlap=segment // 2,
                              detrend="linear")
    np.testing.assert_allclose(f, f_ref)
    np.testing.assert_allclose(ours, ref, rtol=1e-9, atol=1e-12 * ref.max())


@pytest.mark.parametrize(("mains", "harmonics"), [(50, {3: 0.004}), (60, {2: 0.006, 5: 0.003})])
def test_a_recording_gives_its_noise_and_hum_apart(mains, harmonics):
    wave = synthesize("sine", 2.0, 1.0, 1.0, 4.0, 50e3, noise_rms=0.02, noise_bandwidth=1e3, seed=3,
                      hum_amplitude=0.01, hum_frequency=mains, hum_harmonics=harmonics)
    est = estimate_noise(Waveform(wave.t, wave.v))
    assert est.noise.rms == pytest.approx(0.02, rel=0.06)
    assert est.noise.bandwidth == pytest.approx(1e3, rel=0.1)
    assert est.hum.frequency == mains
    assert est.hum.amplitude == pytest.approx(0.01, rel=0.1)
    assert dict(est.hum.harmonics) == pytest.approx(harmonics, rel=0.15)


def test_noise_behind_one_pole_has_the_bandwidth_of_equal_crossings():
    # Flat noise to 20 kHz behind a pole at 500 Hz: the effective bandwidth is the flat one with the
    # same m0 and m2, sqrt(3 m2 / m0) / (2 pi), from the moments of that spectrum.
    wave = synthesize("sine", 0.0, 0.0, 1.0, 4.0, 200e3, noise_rms=0.05, noise_bandwidth=20e3, seed=4)
    y = low_pass(wave.t, wave.v, 1 / (2 * math.pi * 500))
    est = estimate_noise(Waveform(wave.t, y))
    model = NoiseSpectrum(0.05, 20e3, 500.0)
    assert est.noise.rms == pytest.approx(model.rms_at_stage, rel=0.05)
    assert est.noise.bandwidth == pytest.approx(math.sqrt(3 * model.m2 / model.m0) / (2 * math.pi), rel=0.1)


def test_uneven_sampling_is_read_on_an_even_grid_and_short_records_are_said():
    wave = synthesize("sine", 0.0, 0.0, 1.0, 2.0, 20e3, noise_rms=0.01, noise_bandwidth=500.0, seed=6)
    jitter = np.random.default_rng(1).uniform(-0.2, 0.2, len(wave)) / 20e3
    jitter[0] = 0.0
    est = estimate_noise(Waveform(wave.t + jitter, wave.v))
    assert est.noise.rms == pytest.approx(0.01, rel=0.1)
    short = estimate_noise(Waveform(np.arange(50) * 1e-3, np.zeros(50)))
    assert short.noise.rms == 0.0 and "too few" in short.notes[0]
    brief = estimate_noise(Waveform(np.arange(2000) * 1e-5, np.random.default_rng(2).normal(size=2000)))
    assert any("too short to tell hum from noise" in n for n in brief.notes)
