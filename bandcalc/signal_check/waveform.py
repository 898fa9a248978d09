"""Sampled input waveforms: a validated container and a synthetic signal generator.

A :class:`Waveform` holds sample times (seconds) and input voltages (volts). A
synthetic waveform also keeps its noise-free signal in ``clean``; the signal
check uses it to count the edges the stage should give and to measure how late
each output edge comes.

Synthetic noise is Gaussian with a flat spectrum from 0 to its bandwidth and
nothing above (:class:`~bandcalc.signal_check.disturbance.NoiseSpectrum`),
made in the frequency domain: random Fourier coefficients up to the bandwidth,
one inverse FFT.  So the noise does not depend on the sample rate; the rate
only has to resolve it: a record is sampled at least :data:`OVERSAMPLE` times
the noise bandwidth (faster than asked where needed), so that the crossings
between samples, which the edge run finds by straight lines between samples,
are all seen.  Hum is a sine with optional harmonics, not noise.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.validation import choice, real, whole
from bandcalc.signal_check.disturbance import HUM_FREQUENCIES, Hum

__all__ = [
    "DEFAULT_NOISE_BANDWIDTH",
    "HUM_FREQUENCIES",
    "MAX_SAMPLES",
    "OVERSAMPLE",
    "SHAPES",
    "SyntheticSignal",
    "Waveform",
    "band_limited_noise",
    "sample_rate_for",
    "synthesize",
]

MAX_SAMPLES = 10_000_000
"""Largest number of samples a waveform may hold (memory and run-time bound)."""

SHAPES = ("sine", "triangle", "ramp", "steps")
"""Synthetic signal shapes understood by :func:`synthesize`."""

DEFAULT_NOISE_BANDWIDTH = 10e3
"""Noise bandwidth, Hz, taken where none is given (our choice: a typical bandwidth of a sensor
line and its wiring; give the real one)."""

OVERSAMPLE = 10
"""Samples per second per hertz of noise bandwidth, at least (our choice: the tests show the
extra edges of a run independent of the rate from here on)."""


def _trace(name: str, values: object, n: int | None = None) -> np.ndarray:
    """Return a read-only 1-D float64 view of ``values``, checked for finiteness."""
    try:
        a = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise BandcalcError(f"{name} must be an array of numbers: {exc}") from None
    if a.ndim != 1:
        raise BandcalcError(f"{name} must be one-dimensional, got shape {a.shape}")
    if n is None and not 2 <= a.size <= MAX_SAMPLES:
        raise BandcalcError(f"{name} must hold 2 to {MAX_SAMPLES:,} samples, got {a.size:,}")
    if n is not None and a.size != n:
        raise BandcalcError(f"{name} must hold as many samples as t ({n:,}), got {a.size:,}")
    bad = ~np.isfinite(a)
    if bad.any():
        i = int(np.argmax(bad))
        raise BandcalcError(f"{name}[{i}] is {float(a[i])!r}; every sample must be a finite number")
    view = a.view()
    view.flags.writeable = False
    return view


@dataclass(frozen=True, eq=False)
class Waveform:
    """A sampled input voltage.

    Parameters
    ----------
    t : array_like
        Sample times, in s, strictly increasing; sampling may be uneven.
    v : array_like
        Input voltage at each sample, in V.
    clean : array_like or None
        The noise-free input at each sample, in V, when known (synthetic
        signals); ``None`` for a recorded waveform.

    The arrays are stored as read-only float64 views.
    """

    t: np.ndarray
    v: np.ndarray
    clean: np.ndarray | None = None

    def __post_init__(self) -> None:
        t = _trace("t", self.t)
        later = t[1:] > t[:-1]
        if not later.all():
            i = int(np.argmin(later)) + 1
            raise BandcalcError(
                f"t must increase strictly: t[{i}] = {t[i]:g} s is not after "
                f"t[{i - 1}] = {t[i - 1]:g} s"
            )
        object.__setattr__(self, "t", t)
        object.__setattr__(self, "v", _trace("v", self.v, t.size))
        if self.clean is not None:
            object.__setattr__(self, "clean", _trace("clean", self.clean, t.size))

    def __len__(self) -> int:
        return int(self.t.size)

    @property
    def duration(self) -> float:
        """Time from the first to the last sample, in s."""
        return float(self.t[-1] - self.t[0])


def _shape(shape: str, phase: np.ndarray, t: np.ndarray, duration: float) -> np.ndarray:
    """Unit-amplitude shape (-1..+1) for the cycle phase ``phase`` = f*t."""
    if shape == "sine":
        return np.sin(2.0 * np.pi * phase)
    if shape == "triangle":
        # Same timing as the sine: 0 at phase 0, +1 at 1/4, -1 at 3/4.
        return 1.0 - 4.0 * np.abs(np.mod(phase + 0.25, 1.0) - 0.5)
    if shape == "steps":
        return np.where(np.mod(phase, 1.0) < 0.5, 1.0, -1.0)
    # "ramp": one slow rise over the whole record.
    return 2.0 * t / duration - 1.0


def sample_rate_for(sample_rate: float, noise_rms: float, noise_bandwidth: float) -> float:
    """The sample rate a synthetic record uses: the one asked for, raised to ``OVERSAMPLE`` x the
    noise bandwidth where noise is added."""
    return max(sample_rate, OVERSAMPLE * noise_bandwidth) if noise_rms > 0.0 else sample_rate


def _fast_length(n: int) -> int:
    """The smallest m >= n whose prime factors are 2, 3 and 5 (a fast FFT length)."""
    best = 1 << (n - 1).bit_length()
    p5 = 1
    while p5 < best:
        p35 = p5
        while p35 < best:
            best = min(best, p35 << (-(-n // p35) - 1).bit_length())  # p35 x the power of 2 reaching n
            p35 *= 3
        p5 *= 5
    return best


def band_limited_noise(n: int, sample_rate: float, rms: float, bandwidth: float,
                       rng: np.random.Generator) -> np.ndarray:
    """``n`` samples of Gaussian noise with a flat spectrum from 0 to ``bandwidth`` Hz, nothing above.

    Random Fourier coefficients (independent normal real and imaginary parts) fill the bins
    0 < f <= bandwidth of a record of a fast FFT length m >= n; one inverse FFT, the first n
    samples kept.  Each of K bins contributes 4 c^2 / m^2 to a sample's variance, so
    c = rms m / (2 sqrt(K)) gives the variance rms^2 exactly in expectation (first principles).
    """
    m = _fast_length(n)
    bins = min(int(np.floor(bandwidth * m / sample_rate * (1.0 + 1e-12))), (m - 1) // 2)
    if bins < 1:
        raise BandcalcError(
            f"noise_bandwidth {bandwidth:g} Hz is narrower than one frequency step of the record "
            f"({sample_rate / m:g} Hz); lengthen the duration to at least {1.0 / bandwidth:g} s")
    spectrum = np.zeros(m // 2 + 1, dtype=np.complex128)
    scale = rms * m / (2.0 * np.sqrt(bins))
    coeffs = rng.standard_normal((2, bins))
    spectrum[1:bins + 1].real = coeffs[0] * scale
    spectrum[1:bins + 1].imag = coeffs[1] * scale
    return np.fft.irfft(spectrum, m)[:n]


@dataclass(frozen=True)
class SyntheticSignal:
    """What :func:`synthesize` builds, kept so that the same signal can be made with other seeds
    (the width sweep runs several).  Fields as the arguments of :func:`synthesize` (``names`` as
    pairs, so that the signal stays hashable)."""

    shape: str
    offset: float
    amplitude: float
    frequency: float
    duration: float
    sample_rate: float
    noise_rms: float = 0.0
    hum_amplitude: float = 0.0
    hum_frequency: float = 50.0
    seed: int | None = None
    noise_bandwidth: float | None = None
    hum_harmonics: tuple[tuple[int, float], ...] = ()
    names: tuple[tuple[str, str], ...] = ()
    unit: str = "V"

    @property
    def bandwidth(self) -> float:
        """The noise bandwidth used, Hz (the default where none is given)."""
        return DEFAULT_NOISE_BANDWIDTH if self.noise_bandwidth is None else self.noise_bandwidth

    @property
    def hum(self) -> Hum:
        return Hum(self.hum_amplitude, self.hum_frequency, self.hum_harmonics)

    @property
    def rate_used(self) -> float:
        """Samples per second of the record: see :func:`sample_rate_for`."""
        return sample_rate_for(self.sample_rate, self.noise_rms, self.bandwidth)

    def with_seed(self, seed: int | None) -> SyntheticSignal:
        return replace(self, seed=seed)

    def make(self) -> Waveform:
        """The waveform (see :func:`synthesize`)."""
        return synthesize(self.shape, self.offset, self.amplitude, self.frequency, self.duration,
                          self.sample_rate, self.noise_rms, self.hum_amplitude, self.hum_frequency,
                          self.seed, noise_bandwidth=self.noise_bandwidth,
                          hum_harmonics=dict(self.hum_harmonics), names=dict(self.names), unit=self.unit)


_SETTINGS = ("shape", "offset", "amplitude", "frequency", "duration", "sample_rate", "noise_rms",
             "hum_amplitude", "hum_frequency", "seed", "noise_bandwidth")
def synthesize(shape: str, offset: float, amplitude: float, frequency: float,
               duration: float, sample_rate: float, noise_rms: float = 0.0,
               hum_amplitude: float = 0.0, hum_frequency: float = 50.0,
               seed: int | None = None, *, noise_bandwidth: float | None = None,
               hum_harmonics: dict[int, float] | None = None, names: Mapping[str, str] | None = None,
               unit: str = "V") -> Waveform:
    """Build a synthetic input: a shape plus band-limited Gaussian noise and mains hum.

    Parameters
    ----------
    shape : {"sine", "triangle", "ramp", "steps"}
        ``"sine"`` and ``"triangle"`` start at ``offset`` and rise first.
        ``"steps"`` is a square wave, ``offset + amplitude`` for the first half
        of each period and ``offset - amplitude`` for the second.
        ``"ramp"`` is a single straight rise from ``offset - amplitude`` at
        t = 0 to ``offset + amplitude`` at t = ``duration`` (a slowly moving
        level such as a battery or temperature); ``frequency`` is not used.
    offset : float
        Centre of the signal, in V.
    amplitude : float
        Peak deviation from ``offset``, in V, at least 0.
    frequency : float
        Repetition frequency, in Hz, above 0 and below ``sample_rate / 2``
        (Nyquist) for the periodic shapes.
    duration : float
        Record length, in s, above 0.
    sample_rate : float
        Samples per second, in Hz, above 0; raised to ``OVERSAMPLE`` x the noise bandwidth where
        noise is added (:func:`sample_rate_for`).  Samples fall at t = k / rate for
        0 <= t <= duration, at most ``MAX_SAMPLES`` of them.
    noise_rms : float
        RMS of the Gaussian noise, in V, at least 0.
    hum_amplitude : float
        Peak amplitude of a mains-hum sine added to the signal, in V, at least 0.
    hum_frequency : {50, 60}
        Mains frequency of the hum, in Hz.
    seed : int or None
        Passed to ``numpy.random.default_rng``; a fixed value repeats the noise.
    noise_bandwidth : float, optional
        Hz: the noise is flat from 0 to here and nothing above (default
        ``DEFAULT_NOISE_BANDWIDTH``).
    hum_harmonics : dict of int to float, optional
        Peak amplitude (V) of hum harmonics by order (2 to 40), in phase with the fundamental.
    names : mapping, optional
        What the caller's user calls a setting, by parameter name, for the messages (the command
        line passes ``{"sample_rate": "--rate", ...}``); the parameter names by default.
    unit : str
        The signal's unit in the messages: "V", or a front end's watched unit ("C").

    Returns
    -------
    Waveform
        ``v`` with noise and hum, ``clean`` without them.
    """
    named = {key: key for key in _SETTINGS} | dict(names or {})
    choice(named["shape"], shape, SHAPES)
    offset = real(named["offset"], offset, unit=unit)
    amplitude = real(named["amplitude"], amplitude, low=0.0, unit=unit)
    frequency = real(named["frequency"], frequency, low=0.0, low_open=True, unit="Hz")
    duration = real(named["duration"], duration, low=0.0, low_open=True, unit="s")
    sample_rate = real(named["sample_rate"], sample_rate, low=0.0, low_open=True, unit="Hz")
    noise_rms = real(named["noise_rms"], noise_rms, low=0.0, unit=unit)
    bandwidth = DEFAULT_NOISE_BANDWIDTH if noise_bandwidth is None else real(
        named["noise_bandwidth"], noise_bandwidth, low=0.0, low_open=True, unit="Hz")
    hum_amplitude = real(named["hum_amplitude"], hum_amplitude, low=0.0, unit=unit)
    hum_frequency = float(choice(named["hum_frequency"], hum_frequency, HUM_FREQUENCIES))
    hum = Hum(hum_amplitude, hum_frequency, tuple((hum_harmonics or {}).items()))
    if seed is not None:
        seed = whole(named["seed"], seed)
    nyquist = sample_rate / 2.0
    if shape != "ramp" and frequency >= nyquist:
        raise BandcalcError(
            f"{named['frequency']} must be below {named['sample_rate']} / 2 = {nyquist:g} Hz (Nyquist), "
            f"got {frequency:g} Hz"
        )
    if hum.present and hum.highest_frequency >= nyquist:
        top = hum.highest_frequency
        what = (f"{named['hum_frequency']} {hum.frequency:g} Hz" if top == hum.frequency else
                f"hum at {top:g} Hz (a harmonic of {named['hum_frequency']} {hum.frequency:g} Hz)")
        raise BandcalcError(f"{what} needs {named['sample_rate']} above {2 * top:g} Hz, "
                            f"got {sample_rate:g} Hz")
    rate = sample_rate_for(sample_rate, noise_rms, bandwidth)
    # The small relative margin keeps t = duration when duration * rate is whole.
    product = duration * rate
    raised = "" if rate == sample_rate else (
        f" (the rate is raised to {rate:g} Hz, {OVERSAMPLE} x the noise bandwidth of {bandwidth:g} Hz, "
        "so that the noise is resolved; lower the noise bandwidth or shorten the duration)")
    if product >= MAX_SAMPLES:
        n = MAX_SAMPLES + 1
    else:
        n = int(np.floor(product * (1.0 + 1e-12))) + 1
    if n > MAX_SAMPLES:
        raise BandcalcError(
            f"{named['duration']} x {named['sample_rate']} gives more than {MAX_SAMPLES:,} samples{raised}; "
            "shorten the duration or lower the sample rate"
        )
    if n < 2:
        raise BandcalcError(
            f"{named['duration']} x {named['sample_rate']} gives {n} sample; at least 2 are needed "
            "(lengthen the duration or raise the sample rate)"
        )

    t = np.arange(n, dtype=np.float64) / rate
    clean = offset + amplitude * _shape(shape, frequency * t, t, duration)
    v = clean + hum.at(t) if hum.present else clean.copy()
    if noise_rms > 0.0:
        v += band_limited_noise(n, rate, noise_rms, bandwidth, np.random.default_rng(seed))
    return Waveform(t=t, v=v, clean=clean)
