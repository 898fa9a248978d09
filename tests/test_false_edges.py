"""False-edge predictions: Rice's formula against long simulations of band-limited noise (made here
with numpy's FFT, independently of bandcalc's generator), the spectral moments against numerical
integration, the normal tail against scipy."""

import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from bandcalc.signal_check.disturbance import Hum, NoiseSpectrum
from bandcalc.signal_check.edges import find_edges
from bandcalc.signal_check.false_edges import (
    crossing_rate,
    extra_edges_per_crossing,
    parked_rate,
)
from bandcalc.signal_check.normal import erfc, normal_cdf, normal_sf


def band_noise(n, rate, bandwidth, rms, seed, pole=None):
    """White Gaussian noise, its FFT cut at ``bandwidth`` and scaled to ``rms`` (before a first-order
    filter H = 1 / (1 + j f / pole), applied to the same spectrum where given)."""
    rng = np.random.default_rng(seed)
    spectrum = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / rate)
    spectrum[(f > bandwidth) | (f == 0)] = 0.0
    x = np.fft.irfft(spectrum, n)
    x *= rms / x.std()
    if pole is not None:
        x = np.fft.irfft(np.fft.rfft(x) / (1 + 1j * f / pole), n)
    return x


def downward_crossings(x, level):
    return int(np.count_nonzero((x[:-1] > level) & (x[1:] <= level)))


def test_erfc_matches_scipy_within_the_published_error():
    # Numerical Recipes in C, 2nd ed., section 6.2: fractional error below 1.2e-7 everywhere.
    x = np.linspace(-6, 26, 20001)
    assert np.max(np.abs(erfc(x) / special.erfc(x) - 1)) < 1.2e-7
    z = np.linspace(-8, 8, 1001)
    np.testing.assert_allclose(normal_cdf(z), stats.norm.cdf(z), rtol=2e-7, atol=1e-15)
    np.testing.assert_allclose(normal_sf(z), stats.norm.sf(z), rtol=2e-7)


@pytest.mark.parametrize("pole", [None, 30.0, 1e3, 1e6])
def test_moments_match_numerical_integration(pole):
    # m0 and m2 of a flat spectrum to B behind |H|^2 = 1 / (1 + (f / fc)^2), by scipy's quad.
    noise = NoiseSpectrum(0.05, 2e3, pole)
    gain = (lambda f: 1.0) if pole is None else (lambda f: 1 / (1 + (f / pole) ** 2))
    density = 0.05**2 / 2e3
    m0 = integrate.quad(lambda f: density * gain(f), 0, 2e3)[0]
    m2 = integrate.quad(lambda f: (2 * math.pi * f) ** 2 * density * gain(f), 0, 2e3)[0]
    assert noise.m0 == pytest.approx(m0, rel=1e-9)
    assert noise.m2 == pytest.approx(m2, rel=1e-7)


@pytest.mark.parametrize("pole", [None, 400.0])
@pytest.mark.parametrize("distance", [0.0, 1.0, 2.0])
def test_rice_rate_matches_a_long_simulation(pole, distance):
    # Rice (Bell System Technical Journal 23, 1944, and 24, 1945): crossings of a level h from the
    # mean, one direction, sqrt(m2/m0)/(2 pi) exp(-h^2 / (2 m0)) per second.  4 M samples at 40 x
    # the bandwidth: about 1,000 to 20,000 crossings, a statistical error of 1 to 3 %.
    rate, bandwidth, rms, seconds = 40e3, 1e3, 1.0, 100.0
    n = int(rate * seconds)
    x = band_noise(n, rate, bandwidth, rms, seed=11, pole=pole)
    noise = NoiseSpectrum(rms, bandwidth, pole)
    level = -distance * noise.rms_at_stage
    counted = downward_crossings(x, level) / seconds
    predicted = float(crossing_rate(noise, abs(level)))
    assert counted == pytest.approx(predicted, rel=4 * (1 / math.sqrt(predicted * seconds)) + 0.01)
    assert float(parked_rate(noise, abs(level))) == pytest.approx(predicted)


def test_parked_rate_with_hum_matches_a_simulation():
    # Rice's argument about a moving mean (here the hum): the mean rate over a hum period.
    rate, bandwidth, rms, seconds = 40e3, 2e3, 0.1, 100.0
    n = int(rate * seconds)
    t = np.arange(n) / rate
    hum = Hum(0.15, 50, {3: 0.03})
    x = band_noise(n, rate, bandwidth, rms, seed=5) + hum.at(t)
    h = 0.35  # about 3,400 crossings: a statistical error under 2 %
    counted = downward_crossings(x, -h) / seconds
    predicted = float(parked_rate(NoiseSpectrum(rms, bandwidth), h, hum))
    assert predicted > 10 * float(crossing_rate(NoiseSpectrum(rms, bandwidth), h))  # hum matters
    assert counted == pytest.approx(predicted, rel=0.06)


def test_hum_alone_crosses_once_a_cycle_when_it_spans_the_hysteresis():
    # A sine of amplitude 0.4 about the upper point reaches 0.4 below it: past a lower point
    # 0.3 below, once each cycle (50 per second); not past one 0.5 below.
    quiet = NoiseSpectrum(0.0, 1e3)
    rates = parked_rate(quiet, np.array([0.3, 0.5]), Hum(0.4, 50))
    assert rates[0] == pytest.approx(50.0, rel=1e-3)
    assert rates[1] == pytest.approx(0.0, abs=1e-9)


def simulated_passages(h, slope, rms, bandwidth, rate, passages, seed):
    """Mean extra edges of ramps through a band of width h centred on 0, noise added."""
    span = h + 16 * rms
    n = int(span / slope * rate)
    t = np.arange(n) / rate
    noise = band_noise(n * passages, rate, bandwidth, rms, seed).reshape(passages, n)
    extra = 0
    for row in noise:
        v = -0.5 * span + slope * t + row
        extra += find_edges(t, v, 0.5 * h, -0.5 * h, start_level=-math.inf).index.size - 1
    return extra / passages


@pytest.mark.parametrize(("h", "slope", "passages"), [(0.3, 5.0, 40), (0.4, 10.0, 200), (0.2, 100.0, 300)])
def test_extra_edges_per_crossing_match_simulated_passages(h, slope, passages):
    # The two-state process built on Rice's crossing intensities (docs/methods.md) against ramps
    # through the band with band-limited noise added; within 25 % where several extra edges come
    # per passage (the statistical error of the simulation is a few percent).
    rms, bandwidth = 0.1, 1e3
    predicted = float(extra_edges_per_crossing(NoiseSpectrum(rms, bandwidth), h, slope)[0])
    counted = simulated_passages(h, slope, rms, bandwidth, 40e3, passages, seed=int(100 * h + slope))
    assert counted == pytest.approx(predicted, rel=0.25)


def test_fast_passage_reduces_to_the_single_excursion_form():
    # Where the signal crosses the band in much less than the noise's correlation time and the
    # hysteresis is wide, only one excursion counts: 2 Q(h/sigma) (phi(r)/r - Q(r)), r = k / sigma'
    # (docs/methods.md: the integral of Rice's downward intensity after the switch).
    noise = NoiseSpectrum(0.1, 1e3)
    h, k = 0.6, 2e3
    r = k / noise.slope_rms
    single = 2 * stats.norm.sf(h / 0.1) * (stats.norm.pdf(r) / r - stats.norm.sf(r))
    assert float(extra_edges_per_crossing(noise, h, k)[0]) == pytest.approx(single, rel=0.02)


def test_no_noise_no_extra_edges():
    assert extra_edges_per_crossing(NoiseSpectrum(0.0, 1e3), 0.1, 1.0)[0] == 0.0
    with pytest.raises(ValueError, match="slope"):
        extra_edges_per_crossing(NoiseSpectrum(0.1, 1e3), 0.1, 0.0)
