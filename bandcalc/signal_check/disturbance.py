"""What disturbs the input: random noise given by its spectrum, and mains hum as a sine.

**Noise** is Gaussian and stationary, given by its RMS and its bandwidth: flat from 0 to the
bandwidth and nothing above (:class:`NoiseSpectrum`).  Behind the input filter (a first-order
RC low-pass with its pole at ``pole`` Hz) the spectrum is the flat one times
|H(f)|^2 = 1 / (1 + (f / pole)^2).  What the false-edge rates need are its first two even
moments, in angular frequency:

    m0 = integral of S(f) |H(f)|^2 df                 (the variance at the stage)
    m2 = integral of (2 pi f)^2 S(f) |H(f)|^2 df      (the variance of its slope)

With S = rms^2 / B on 0 <= f <= B (first principles, elementary integrals):

    no filter:  m0 = rms^2,                   m2 = rms^2 (2 pi B)^2 / 3
    filter fc:  m0 = rms^2 fc atan(B/fc) / B, m2 = rms^2 (2 pi)^2 fc^2 (B - fc atan(B/fc)) / B

**Hum** is a deterministic sine at the mains frequency, with optional harmonics
(:class:`Hum`): it is not Gaussian, and a sine of amplitude A spans 2 A, where a Gaussian of the
same RMS would be taken to span 6.6 x A / sqrt(2) = 4.67 A.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.validation import choice, real

__all__ = ["HUM_FREQUENCIES", "MAX_HARMONIC", "Hum", "NoiseSpectrum"]

HUM_FREQUENCIES = (50, 60)
"""Mains frequencies, Hz, allowed for the hum."""

MAX_HARMONIC = 40
"""Highest harmonic order of the hum that may be given."""


def _x_minus_atan(x: float) -> float:
    """x - atan(x), without losing digits for small x (its series there)."""
    if x < 1e-2:
        x2 = x * x
        return x * x2 * (1.0 / 3.0 - x2 * (1.0 / 5.0 - x2 * (1.0 / 7.0 - x2 / 9.0)))
    return x - math.atan(x)


@dataclass(frozen=True)
class NoiseSpectrum:
    """Gaussian noise, flat from 0 to ``bandwidth`` Hz, ``rms`` at the source; optionally behind
    a first-order low-pass with its pole at ``pole`` Hz (None: no filter).

    ``rms`` is in the signal's unit (volts, or a front end's watched quantity); 0 means no noise.
    """

    rms: float
    bandwidth: float
    pole: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "rms", real("noise_rms", self.rms, low=0.0))
        object.__setattr__(self, "bandwidth", real("noise_bandwidth", self.bandwidth, low=0.0,
                                                   low_open=True, unit="Hz"))
        if self.pole is not None:
            object.__setattr__(self, "pole", real("filter pole", self.pole, low=0.0, low_open=True,
                                                  unit="Hz"))

    def filtered(self, pole: float | None) -> NoiseSpectrum:
        """The same noise behind a first-order low-pass with its pole at ``pole`` Hz."""
        return NoiseSpectrum(self.rms, self.bandwidth, pole)

    @property
    def m0(self) -> float:
        """Variance at the stage (after the filter), unit^2."""
        if self.pole is None:
            return self.rms**2
        x = self.bandwidth / self.pole
        return self.rms**2 * math.atan(x) / x

    @property
    def m2(self) -> float:
        """Variance of the slope at the stage, (unit/s)^2: the second moment in rad/s."""
        b = self.bandwidth
        if self.pole is None:
            return self.rms**2 * (2.0 * math.pi * b) ** 2 / 3.0
        fc = self.pole
        return self.rms**2 * (2.0 * math.pi) ** 2 * fc**3 * _x_minus_atan(b / fc) / b

    @property
    def rms_at_stage(self) -> float:
        """RMS after the filter, in the signal's unit."""
        return math.sqrt(self.m0)

    @property
    def slope_rms(self) -> float:
        """RMS of the noise's slope after the filter, unit/s (sqrt(m2))."""
        return math.sqrt(self.m2)

    @property
    def zero_crossing_frequency(self) -> float:
        """sqrt(m2 / m0) / (2 pi), Hz: the rate at which the noise crosses its mean upward (Rice)."""
        return math.sqrt(self.m2 / self.m0) / (2.0 * math.pi) if self.m0 > 0 else 0.0

    def gain(self, frequency: np.ndarray | float) -> np.ndarray:
        """The filter's |H| at ``frequency`` (Hz); 1 without a filter."""
        f = np.asarray(frequency, dtype=np.float64)
        return np.ones_like(f) if self.pole is None else 1.0 / np.sqrt(1.0 + (f / self.pole) ** 2)

    def phase(self, frequency: np.ndarray | float) -> np.ndarray:
        """The filter's phase shift at ``frequency`` (Hz), radians (0 or negative)."""
        f = np.asarray(frequency, dtype=np.float64)
        return np.zeros_like(f) if self.pole is None else -np.arctan(f / self.pole)


def _harmonics(harmonics: Mapping[int, float] | None, fundamental: float) -> tuple[tuple[int, float], ...]:
    out = []
    for order, amplitude in sorted((harmonics or {}).items()):
        if isinstance(order, bool) or not isinstance(order, int) or not 2 <= order <= MAX_HARMONIC:
            raise BandcalcError(f"hum harmonic order must be a whole number from 2 to {MAX_HARMONIC}, "
                                f"got {order!r}")
        a = real(f"hum harmonic {order} amplitude", amplitude, low=0.0)
        if a > 0.0:
            out.append((order, a))
    return tuple(out)


@dataclass(frozen=True)
class Hum:
    """Mains hum: ``amplitude`` (peak) at ``frequency`` (50 or 60 Hz), plus harmonics
    ``{order: peak amplitude}``, all sines in phase at t = 0 (sin(k w t)); in the signal's unit.

    ``phases`` shifts each component (radians, fundamental first, then the harmonics in order):
    what the input filter does to them.
    """

    amplitude: float = 0.0
    frequency: float = 50.0
    harmonics: tuple[tuple[int, float], ...] = ()
    phases: tuple[float, ...] | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "amplitude", real("hum_amplitude", self.amplitude, low=0.0))
        freq = self.frequency
        if isinstance(freq, float) and freq.is_integer():
            freq = int(freq)
        object.__setattr__(self, "frequency", float(choice("hum_frequency", freq, HUM_FREQUENCIES)))
        harmonics = self.harmonics
        if not isinstance(harmonics, Mapping):
            harmonics = dict(harmonics)
        object.__setattr__(self, "harmonics", _harmonics(harmonics, self.frequency))

    @property
    def components(self) -> tuple[tuple[float, float, float], ...]:
        """(frequency Hz, peak amplitude, phase rad) of each sine, the fundamental first."""
        parts = [(self.frequency, self.amplitude)] + [(k * self.frequency, a) for k, a in self.harmonics]
        phases = self.phases or (0.0,) * len(parts)
        return tuple((f, a, p) for (f, a), p in zip(parts, phases, strict=True) if a > 0.0)

    @property
    def present(self) -> bool:
        return bool(self.components)

    @property
    def peak(self) -> float:
        """Sum of the amplitudes: a bound on how far the hum moves the input either way."""
        return sum(a for _, a, _ in self.components)

    @property
    def highest_frequency(self) -> float:
        """Frequency of the highest component, Hz (0 without hum)."""
        return max((f for f, _, _ in self.components), default=0.0)

    def at(self, t: np.ndarray) -> np.ndarray:
        """The hum at times ``t`` (s)."""
        t = np.asarray(t, dtype=np.float64)
        out = np.zeros_like(t)
        for f, a, p in self.components:
            out += a * np.sin(2.0 * math.pi * f * t + p)
        return out

    def slope_at(self, t: np.ndarray) -> np.ndarray:
        """The hum's slope at times ``t`` (unit/s)."""
        t = np.asarray(t, dtype=np.float64)
        out = np.zeros_like(t)
        for f, a, p in self.components:
            out += 2.0 * math.pi * f * a * np.cos(2.0 * math.pi * f * t + p)
        return out

    def filtered(self, noise: NoiseSpectrum) -> Hum:
        """The hum behind the same filter as ``noise``: each component scaled by |H| and shifted."""
        if noise.pole is None:
            return self
        freqs = [self.frequency] + [k * self.frequency for k, _ in self.harmonics]
        gains = noise.gain(np.array(freqs))
        phases = noise.phase(np.array(freqs))
        return Hum(float(self.amplitude * gains[0]), self.frequency,
                   tuple((k, float(a * g)) for (k, a), g in zip(self.harmonics, gains[1:], strict=True)),
                   tuple(float(p) for p in phases))

    def span(self) -> float:
        """Peak-to-peak of the hum over one period, in the signal's unit."""
        if not self.present:
            return 0.0
        t = np.arange(4096) / (4096 * self.frequency)
        h = self.at(t)
        return float(h.max() - h.min())
