"""The noise and the hum on a sampled signal, from its spectrum (numpy only).

The power spectral density comes from Welch's method (P. D. Welch, "The use of fast Fourier
transform for the estimation of power spectra", *IEEE Transactions on Audio and
Electroacoustics* 15 (1967) 70-73; journal details from memory): segments of a power-of-two
length overlapping by half, each with its straight-line trend removed and a Hann window, their
periodograms averaged; one-sided, in unit^2/Hz.  The tests compare it with scipy.signal.welch.

From the density:

* **Hum lines** at the mains frequency and its harmonics: the power in the few bins about each
  line above the local floor (the larger median of the bins on either side); a line counts where
  it at least doubles the power of its bins.  The mains frequency, 50 or 60 Hz, is the one with
  more line power.  A line's amplitude is sqrt(2 P).
* **Noise**: the density with the hum lines and any other narrow lines (the signal's own
  harmonics) taken out by a running median across frequency; at the lowest frequencies, up to
  where the floor stops falling by more than half an octave, the signal's slow movement leaks
  through the window and hides the noise, which is taken flat from there down to 0 Hz.  Its
  integral is the noise power m0 (RMS its root); its **effective bandwidth** is that of flat
  noise with the same m0 and the same second moment m2 = integral of (2 pi f)^2 S(f) df, so
  the same rate of crossings by Rice's formula: B = sqrt(3 m2 / m0) / (2 pi).  That is what the
  false-edge model takes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from bandcalc.errors import BandcalcError
from bandcalc.signal_check.disturbance import HUM_FREQUENCIES, MAX_HARMONIC, Hum, NoiseSpectrum
from bandcalc.signal_check.waveform import Waveform

__all__ = ["MIN_SEGMENTS", "NoiseEstimate", "estimate_noise", "even_samples", "welch_density"]

MIN_SEGMENTS = 8
"""Welch segments at least (half-overlapping): the density's scatter is then about 1 / sqrt(8)."""

_MAX_SEGMENT = 1 << 16
_LINE_HALF_WIDTH = 2  # bins either side of a hum line (a Hann window spreads a line over 4 bins)
_FLOOR_GAP = (4, 16)  # bins beside a line that give its local floor
_LINE_RATIO = 1.0  # a line counts where it doubles the power of its bins (our choice)
_SMOOTH_HALF = 8  # running median across 17 bins: lines narrower than 8 bins drop out
_LOW_BINS = 4  # the lowest bins hold the signal's slow movement and the window's leakage
_SHORTEST = 256  # samples a record needs for its spectrum: 8 segments of 64


def even_samples(wave: Waveform, values: np.ndarray | None = None) -> tuple[float, np.ndarray]:
    """Sample rate and values on an even grid: as recorded where sampling is even (within 1 %),
    else interpolated on straight lines at the median rate."""
    x = wave.v if values is None else values
    dt = np.diff(wave.t)
    step = float(np.median(dt))
    if dt.max() <= 1.01 * step and dt.min() >= 0.99 * step:
        return 1.0 / float(dt.mean()), np.asarray(x, dtype=np.float64)
    grid = wave.t[0] + step * np.arange(int(wave.duration / step) + 1)
    return 1.0 / step, np.interp(grid, wave.t, x)


def welch_density(x: np.ndarray, rate: float, segment: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """One-sided power spectral density by Welch's method: (frequencies Hz, density unit^2/Hz).

    ``segment`` samples per segment (default: the largest power of two giving at least
    :data:`MIN_SEGMENTS` half-overlapping segments, at most 65,536).
    """
    x = np.asarray(x, dtype=np.float64)
    if segment is None:
        segment = min(_MAX_SEGMENT, 1 << max(3, int(math.log2(max(2 * x.size // (MIN_SEGMENTS + 1), 8)))))
    if x.size < segment:
        raise BandcalcError(f"the record has {x.size} samples; the spectrum needs at least {segment}")
    step = segment // 2
    starts = np.arange(0, x.size - segment + 1, step)
    pieces = sliding_window_view(x, segment)[starts]
    k = np.arange(segment) - 0.5 * (segment - 1)
    slope = (pieces * k).sum(axis=1) / (k * k).sum()
    pieces = pieces - pieces.mean(axis=1, keepdims=True) - slope[:, None] * k
    window = np.hanning(segment + 1)[:-1]  # periodic Hann
    spectra = np.abs(np.fft.rfft(pieces * window, axis=1)) ** 2
    density = spectra.mean(axis=0) / (rate * (window**2).sum())
    density[1:-1] *= 2.0  # one-sided: the negative frequencies folded in (not at 0 or Nyquist)
    return np.fft.rfftfreq(segment, 1.0 / rate), density


@dataclass(frozen=True)
class NoiseEstimate:
    """Noise and hum read from a spectrum.

    ``noise`` (RMS and effective bandwidth), ``hum`` (amplitude of each line found), the density's
    frequency step ``resolution`` (Hz) and ``notes`` (plain sentences on what limits the estimate).
    """

    noise: NoiseSpectrum
    hum: Hum
    resolution: float
    notes: tuple[str, ...]


def _line_power(f: np.ndarray, density: np.ndarray, line: float) -> tuple[float, float]:
    """(power in the bins about ``line`` above the local floor, the floor's power there).

    The floor is the larger of the medians of the bins on either side, so that the edge of a
    band (density falling steeply) is not taken for a line.
    """
    df = f[1] - f[0]
    centre = int(round(line / df))
    lo, hi = centre - _LINE_HALF_WIDTH, centre + _LINE_HALF_WIDTH + 1
    near, far = _FLOOR_GAP
    sides = [density[max(1, centre - far):max(1, centre - near)], density[centre + near + 1:centre + far + 1]]
    sides = [side for side in sides if side.size >= 3]
    if lo < 1 or hi > f.size or not sides:
        return 0.0, 0.0
    level = max(float(np.median(side)) for side in sides)
    floor = level * df * (hi - lo)
    return max(float(density[lo:hi].sum()) * df - floor, 0.0), floor


def _hum_lines(f: np.ndarray, density: np.ndarray) -> tuple[float, dict[int, float]]:
    """The mains frequency with more line power and the power of each line that counts, by order."""
    best: tuple[float, float, dict[int, float]] = (0.0, 50.0, {})
    for mains in HUM_FREQUENCIES:
        lines = {}
        for order in range(1, MAX_HARMONIC + 1):
            if order * mains + (_LINE_HALF_WIDTH + 1) * (f[1] - f[0]) >= f[-1]:
                break
            power, floor = _line_power(f, density, order * mains)
            if power > _LINE_RATIO * floor:
                lines[order] = power
        total = sum(lines.values())
        if total > best[0]:
            best = (total, float(mains), lines)
    return best[1], best[2]


def _lowest_flat_bin(floor: np.ndarray) -> int:
    """The first bin, from :data:`_LOW_BINS` up, where the floor falls by less than half over the
    next octave: below it the signal's slow movement leaks through the window (falling by 18 dB
    or more an octave) and hides the noise, which is taken as flat there."""
    top = max(_LOW_BINS + 1, floor.size // 4)
    for i in range(_LOW_BINS, min(top, floor.size)):
        if floor[i] <= 2.0 * floor[min(2 * i, floor.size - 1)]:
            return i
    return min(_LOW_BINS, floor.size - 1)


def estimate_noise(wave: Waveform, values: np.ndarray | None = None) -> NoiseEstimate:
    """The noise (RMS, effective bandwidth) and the hum on ``wave`` (or on ``values`` sampled at its
    times, such as a synthetic signal less its noise-free part), from its spectrum."""
    rate, x = even_samples(wave, values)
    if x.size < _SHORTEST:
        return NoiseEstimate(NoiseSpectrum(0.0, rate / 2.0), Hum(), rate, (
            f"The record has {x.size} samples, too few to read its noise from its spectrum "
            f"(at least {_SHORTEST}); taken as none.",))
    f, density = welch_density(x, rate)
    df = float(f[1])
    notes = []
    finest = HUM_FREQUENCIES[0] / 4  # a step of a quarter of the mains frequency separates its lines
    if df > finest:
        shortest = (MIN_SEGMENTS + 1) / 2 / finest  # that many half-overlapping segments of 1 / step
        notes.append(f"The record is too short to tell hum from noise: the spectrum's step is {df:.3g} Hz; "
                     f"a record of at least {shortest:.2g} s separates mains lines.")
    mains, lines = _hum_lines(f, density)
    cleaned = density.copy()
    for order in lines:
        centre = int(round(order * mains / df))
        cleaned[centre - _LINE_HALF_WIDTH:centre + _LINE_HALF_WIDTH + 1] = np.nan
    padded = np.pad(cleaned, _SMOOTH_HALF, mode="edge")
    with np.errstate(all="ignore"):
        floor = np.nanmedian(sliding_window_view(padded, 2 * _SMOOTH_HALF + 1), axis=1)
    floor = np.nan_to_num(floor)
    low = _lowest_flat_bin(floor)
    floor[:low] = floor[low]  # flat below the lowest bins the estimate trusts
    power = float(floor.sum()) * df
    slope_power = float(((2.0 * math.pi * f) ** 2 * floor).sum()) * df
    # Flat noise to B has m2 / m0 = (2 pi B)^2 / 3: the bandwidth with the same crossing rate.
    bandwidth = math.sqrt(3.0 * slope_power / power) / (2.0 * math.pi) if power > 0 else rate / 2.0
    harmonics = {k: math.sqrt(2.0 * p) for k, p in lines.items() if k > 1}
    hum = Hum(math.sqrt(2.0 * lines.get(1, 0.0)), mains, harmonics)
    if bandwidth > 0.4 * rate:
        notes.append(f"The noise reaches the top of the spectrum ({rate / 2:.3g} Hz): it may be wider than "
                     "the recording shows; sample faster to see all of it.")
    return NoiseEstimate(NoiseSpectrum(math.sqrt(power), min(bandwidth, rate / 2.0)), hum, df, tuple(notes))
