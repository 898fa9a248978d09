"""Noise on the input and whether the hysteresis swallows it.

The check compares the hysteresis width with the noise peak-to-peak, taken as
6.6 x RMS: for Gaussian noise +/-3 sigma holds 99.73 % of samples
(standard normal table), and designers take peak-to-peak as 6 to 6.6 x RMS
(common practice, no single source); 6.6 is the cautious end.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bandcalc.model.units import format_value
from bandcalc.model.validation import real
from bandcalc.signal_check.waveform import Waveform

__all__ = [
    "NORMAL_UPPER_QUARTILE",
    "PEAK_TO_PEAK_PER_RMS",
    "NoiseLevel",
    "estimate_noise_rms",
    "hysteresis_noise_finding",
    "noise_level",
]

PEAK_TO_PEAK_PER_RMS = 6.6
"""Peak-to-peak noise per volt RMS (common practice: 6 to 6.6)."""

NORMAL_UPPER_QUARTILE = 0.6744897501960817
"""Phi^-1(0.75), the standard normal upper quartile (standard normal table)."""


def estimate_noise_rms(v: np.ndarray) -> float:
    """Estimate the RMS of white noise on a sampled signal, in V.

    Method: the difference of neighbouring samples removes a signal that moves
    little from one sample to the next and leaves the difference of two
    independent noise samples, of RMS sqrt(2) x sigma. Its median absolute
    value divided by the normal upper quartile 0.6745 gives that RMS robustly:
    the few large differences at steps or edges of the signal do not count
    (median absolute deviation, as used for the finest wavelet scale by
    Donoho and Johnstone, 1994).

    Limits: hum and other slow disturbances are not seen, noise filtered
    before sampling (correlated from sample to sample) reads low, and noise
    below one ADC step reads as zero.

    Parameters
    ----------
    v : numpy.ndarray
        Sampled voltages, in V, at least 2.

    Returns
    -------
    float
        Estimated noise RMS, in V.
    """
    d = np.abs(np.diff(np.asarray(v, dtype=np.float64)))
    return float(np.median(d) / (NORMAL_UPPER_QUARTILE * np.sqrt(2.0)))


@dataclass(frozen=True)
class NoiseLevel:
    """Noise on an input, in V RMS, and how it was obtained."""

    rms: float
    source: str

    @property
    def peak_to_peak(self) -> float:
        """Peak-to-peak noise taken as ``PEAK_TO_PEAK_PER_RMS`` x RMS, in V."""
        return PEAK_TO_PEAK_PER_RMS * self.rms


def noise_level(wave: Waveform, rms: float | None = None) -> NoiseLevel:
    """Noise on ``wave``: given, measured against its clean signal, or estimated.

    Parameters
    ----------
    wave : Waveform
        The input.
    rms : float, optional
        Known noise RMS, in V; overrides measuring.

    Returns
    -------
    NoiseLevel
        With ``rms`` given: that value. With ``wave.clean``: the standard
        deviation of ``v - clean`` (random noise plus hum). Otherwise
        :func:`estimate_noise_rms`.
    """
    if rms is not None:
        return NoiseLevel(real("noise_rms", rms, low=0.0, unit="V"), "given")
    if wave.clean is not None:
        return NoiseLevel(float(np.std(wave.v - wave.clean)),
                          "measured against the noise-free signal")
    return NoiseLevel(estimate_noise_rms(wave.v),
                      "estimated from sample-to-sample differences")


def hysteresis_noise_finding(width: float, noise: NoiseLevel, unit: str = "V") -> str:
    """One sentence comparing the hysteresis ``width`` with the noise, both in ``unit``."""

    def _v(x: float) -> str:
        return format_value(x, unit, 3)

    if noise.rms == 0.0:
        return (f"No noise found on the input ({noise.source}); a hysteresis of "
                f"{_v(width)} gives one edge per crossing.")
    pp = noise.peak_to_peak
    about = (f"about {_v(pp)} peak-to-peak ({PEAK_TO_PEAK_PER_RMS:g} x "
             f"{_v(noise.rms)} RMS, {noise.source})")
    if width > pp:
        return (f"The hysteresis of {_v(width)} is wider than the noise, "
                f"{about}: noise should add no edges.")
    return (f"The hysteresis of {_v(width)} is narrower than the noise, "
            f"{about}: expect extra edges near each crossing; widen it to more "
            f"than {_v(pp)}.")
