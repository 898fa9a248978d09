"""Tests of the Waveform container and the synthetic signal generator."""

import math

import numpy as np
import pytest
from scipy import stats

from bandcalc.signal_check import waveform
from bandcalc.signal_check.waveform import Waveform, synthesize


def test_waveform_arrays_are_read_only_float_views():
    t = [0.0, 1.0, 2.5]
    w = Waveform(t, np.array([1, 2, 3]))
    assert w.v.dtype == np.float64 and len(w) == 3 and w.duration == 2.5
    with pytest.raises(ValueError):
        w.v[0] = 5.0
    # The caller's own array stays writable.
    mine = np.array([0.0, 1.0])
    Waveform(mine, mine)
    mine[0] = -1.0


@pytest.mark.parametrize(
    ("t", "v", "clean", "message"),
    [
        ([0, 1, 1], [0, 0, 0], None, r"t must increase strictly: t\[2\] = 1 s is not after t\[1\]"),
        ([0, 2, 1], [0, 0, 0], None, r"t\[2\] = 1 s is not after t\[1\] = 2 s"),
        ([0], [0], None, "t must hold 2 to 10,000,000 samples, got 1"),
        ([0, 1], [0, 1, 2], None, r"v must hold as many samples as t \(2\), got 3"),
        ([0, 1], [0, math.nan], None, r"v\[1\] is nan; every sample must be a finite number"),
        ([0, math.inf], [0, 1], None, r"t\[1\] is inf"),
        ([0, 1], [0, 1], [0], r"clean must hold as many samples as t \(2\), got 1"),
        ([[0, 1]], [0, 1], None, "t must be one-dimensional"),
        (["a", "b"], [0, 1], None, "t must be an array of numbers"),
    ],
)
def test_waveform_refuses_bad_arrays(t, v, clean, message):
    with pytest.raises(ValueError, match=message):
        Waveform(t, v, clean)


def test_sample_times_and_count():
    w = synthesize("sine", 0, 1, 10, 0.5, 1000)
    assert len(w) == 501
    assert w.t[-1] == pytest.approx(0.5)
    np.testing.assert_allclose(np.diff(w.t), 1e-3)


@pytest.mark.parametrize(
    ("shape", "expected"),
    [
        # Samples at quarter periods of a 1 Hz shape, offset 2 V, amplitude 0.5 V.
        ("sine", [2.0, 2.5, 2.0, 1.5, 2.0]),
        ("triangle", [2.0, 2.5, 2.0, 1.5, 2.0]),
        ("steps", [2.5, 2.5, 1.5, 1.5, 2.5]),
        # Ramp from offset - amplitude at t = 0 to offset + amplitude at t = duration.
        ("ramp", [1.5, 1.75, 2.0, 2.25, 2.5]),
    ],
)
def test_shapes_at_quarter_periods(shape, expected):
    w = synthesize(shape, 2.0, 0.5, 1.0, 1.0, 4)
    np.testing.assert_allclose(w.clean, expected, atol=1e-12)
    np.testing.assert_array_equal(w.v, w.clean)


def test_triangle_is_straight_between_peaks():
    w = synthesize("triangle", 0.0, 1.0, 1.0, 0.25, 1000)
    np.testing.assert_allclose(w.clean, 4.0 * w.t, atol=1e-12)


def test_noise_rms_and_three_sigma_coverage():
    rms, bandwidth = 0.02, 10e3
    w = synthesize("sine", 1.0, 0.5, 50, 1.0, 1e6, noise_rms=rms, noise_bandwidth=bandwidth, seed=42)
    noise = w.v - w.clean
    # The noise is made of K = B x T independent Fourier terms: its variance over one record has a
    # relative standard error of 1 / sqrt(K) (a chi-square with 2 K degrees of freedom, first
    # principles), its RMS half that: 0.5 % here.
    k = bandwidth * w.duration
    assert np.sqrt(np.mean(noise**2)) == pytest.approx(rms, rel=5 / (2 * math.sqrt(k)))
    # +/-3 sigma holds 99.73 % of a normal distribution: standard normal table,
    # Phi(3.00) = 0.99865, so 2 x 0.99865 - 1 = 0.9973 (e.g. NIST/SEMATECH e-Handbook of
    # Statistical Methods, table of the normal distribution; value from memory), checked
    # against scipy.stats.norm.  Neighbouring samples are correlated: about 2 B T independent ones.
    p = stats.norm.cdf(3) - stats.norm.cdf(-3)
    assert p == pytest.approx(0.9973, abs=5e-5)
    inside = np.mean(np.abs(noise) <= 3 * rms)
    assert inside == pytest.approx(p, abs=6 * math.sqrt(p * (1 - p) / (2 * k)) + 5e-4)
    # And the generated noise passes a normality test at the 1 % level (every 50th sample:
    # farther apart than the noise's correlation time).
    assert stats.kstest(noise[::50] / noise.std(), "norm").pvalue > 0.01


def test_noise_is_flat_to_its_bandwidth_and_nothing_above():
    w = synthesize("sine", 0.0, 0.0, 1.0, 0.5, 200e3, noise_rms=0.1, noise_bandwidth=5e3, seed=4)
    power = np.abs(np.fft.rfft(w.v)) ** 2
    f = np.fft.rfftfreq(len(w), 1 / 200e3)
    assert power[f > 5.2e3].sum() < 1e-3 * power.sum()  # only the edge's leakage above
    band = power[(f > 100) & (f < 4.9e3)]
    halves = band[: band.size // 2].mean(), band[band.size // 2:].mean()
    assert halves[0] == pytest.approx(halves[1], rel=0.1)  # flat


def test_noise_crosses_its_mean_as_rice_says():
    # Rice (Bell System Technical Journal, 1944-45): flat noise to B crosses its mean upward
    # B / sqrt(3) times a second (m2 / m0 = (2 pi B)^2 / 3).
    bandwidth = 1e3
    w = synthesize("sine", 0.0, 0.0, 1.0, 20.0, 50e3, noise_rms=1.0, noise_bandwidth=bandwidth, seed=9)
    ups = np.count_nonzero((w.v[:-1] < 0) & (w.v[1:] >= 0)) / w.duration
    assert ups == pytest.approx(bandwidth / math.sqrt(3), rel=0.03)


def test_the_rate_is_raised_to_resolve_the_noise():
    w = synthesize("sine", 0.0, 1.0, 10.0, 0.1, 1e3, noise_rms=0.01, noise_bandwidth=2e3)
    assert 1 / (w.t[1] - w.t[0]) == pytest.approx(waveform.OVERSAMPLE * 2e3)
    quiet = synthesize("sine", 0.0, 1.0, 10.0, 0.1, 1e3, noise_bandwidth=2e3)
    assert len(quiet) == 101  # no noise, no need
    with pytest.raises(ValueError, match=r"more than 10,000,000 samples \(the rate is raised to 2e\+07 Hz"):
        synthesize("sine", 0.0, 1.0, 10.0, 1.0, 1e3, noise_rms=0.01, noise_bandwidth=2e6)
    with pytest.raises(ValueError, match="noise_bandwidth 0.5 Hz is narrower than one frequency step"):
        synthesize("sine", 0.0, 1.0, 10.0, 0.1, 1e3, noise_rms=0.01, noise_bandwidth=0.5)


def test_hum_harmonics_are_in_phase_with_the_fundamental():
    w = synthesize("ramp", 0, 1, 1, 0.1, 1e4, hum_amplitude=0.05, hum_frequency=60,
                   hum_harmonics={3: 0.01, 2: 0.02})
    t = w.t
    expected = (0.05 * np.sin(2 * np.pi * 60 * t) + 0.02 * np.sin(2 * np.pi * 120 * t)
                + 0.01 * np.sin(2 * np.pi * 180 * t))
    np.testing.assert_allclose(w.v - w.clean, expected, atol=1e-12)
    with pytest.raises(ValueError, match="hum harmonic order must be a whole number from 2 to 40"):
        synthesize("ramp", 0, 1, 1, 0.1, 1e4, hum_amplitude=0.05, hum_harmonics={1: 0.01})
    harmonic = r"hum at 2000 Hz \(a harmonic of hum_frequency 50 Hz\) needs sample_rate above 4000 Hz"
    with pytest.raises(ValueError, match=harmonic):
        synthesize("ramp", 0, 1, 1, 0.1, 3e3, hum_amplitude=0.05, hum_harmonics={40: 0.01})


def test_noise_repeats_for_the_same_generator_state():
    a = synthesize("sine", 0, 1, 10, 0.1, 1e4, noise_rms=0.1, seed=5)
    b = synthesize("sine", 0, 1, 10, 0.1, 1e4, noise_rms=0.1, seed=5)
    c = synthesize("sine", 0, 1, 10, 0.1, 1e4, noise_rms=0.1, seed=6)
    np.testing.assert_array_equal(a.v, b.v)
    assert not np.array_equal(a.v, c.v)


@pytest.mark.parametrize("mains", [50, 60])
def test_hum_is_a_mains_sine_outside_the_clean_signal(mains):
    w = synthesize("ramp", 0, 1, 1, 0.1, 1e4, hum_amplitude=0.05, hum_frequency=mains)
    np.testing.assert_allclose(w.v - w.clean, 0.05 * np.sin(2 * np.pi * mains * w.t),
                               atol=1e-12)


GOOD = {"shape": "sine", "offset": 0.0, "amplitude": 1.0, "frequency": 10.0,
        "duration": 1.0, "sample_rate": 1000.0}


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"shape": "saw"}, "shape must be one of 'sine', 'triangle', 'ramp', 'steps', got 'saw'"),
        ({"offset": math.nan}, "offset must be a finite number, got nan"),  # said once
        ({"amplitude": -1}, "amplitude must be at least 0 V, got -1"),
        ({"frequency": 0}, "frequency must be greater than 0 Hz, got 0"),
        ({"frequency": 500}, r"frequency must be below sample_rate / 2 = 500 Hz \(Nyquist\)"),
        ({"duration": -1}, "duration must be greater than 0 s"),
        ({"sample_rate": "fast"}, "sample_rate must be a number greater than 0 Hz, got 'fast'"),
        ({"noise_rms": -0.1}, "noise_rms must be at least 0 V"),
        ({"hum_amplitude": math.inf}, "hum_amplitude must be a finite number at least 0 V, got inf"),
        ({"hum_frequency": 55}, "hum_frequency must be one of 50, 60, got 55"),
        ({"hum_amplitude": 0.1, "sample_rate": 100, "frequency": 1},
         "hum_frequency 50 Hz needs sample_rate above 100 Hz"),
        ({"seed": -3}, "seed must be a whole number of at least 0"),
        ({"seed": 1.5}, "seed must be a whole number"),
        ({"duration": 100.0, "sample_rate": 1e6}, "more than 10,000,000 samples"),
        ({"duration": 1e-4}, "gives 1 sample; at least 2 are needed"),
        ({"amplitude": True}, "amplitude must be a number"),
    ],
)
def test_synthesize_names_the_bad_argument(change, message):
    with pytest.raises(ValueError, match=message):
        synthesize(**{**GOOD, **change})


def test_ramp_ignores_frequency_and_nyquist():
    w = synthesize(**{**GOOD, "shape": "ramp", "frequency": 1e6})
    assert w.clean[0] == -1.0 and w.clean[-1] == 1.0


def test_sample_cap_is_the_module_limit():
    assert waveform.MAX_SAMPLES == 10_000_000
    w = synthesize("sine", 0, 1, 1, 9.9999, 1e6)  # 9,999,901 samples: allowed
    assert len(w) == 9_999_901
