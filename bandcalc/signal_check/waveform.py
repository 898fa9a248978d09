"""Sampled input waveforms: a validated container and a synthetic signal generator.

A :class:`Waveform` holds sample times (seconds) and input voltages (volts). A
synthetic waveform also keeps its noise-free signal in ``clean``; the signal
check uses it to count the edges the stage should give and to measure how late
each output edge comes.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.validation import choice, real, whole

__all__ = ["HUM_FREQUENCIES", "MAX_SAMPLES", "SHAPES", "Waveform", "synthesize"]

MAX_SAMPLES = 10_000_000
"""Largest number of samples a waveform may hold (memory and run-time bound)."""

SHAPES = ("sine", "triangle", "ramp", "steps")
"""Synthetic signal shapes understood by :func:`synthesize`."""

HUM_FREQUENCIES = (50, 60)
"""Mains frequencies, Hz, allowed for the hum component."""


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


_SETTINGS = ("shape", "offset", "amplitude", "frequency", "duration", "sample_rate", "noise_rms",
             "hum_amplitude", "hum_frequency", "seed")


def synthesize(shape: str, offset: float, amplitude: float, frequency: float,
               duration: float, sample_rate: float, noise_rms: float = 0.0,
               hum_amplitude: float = 0.0, hum_frequency: float = 50.0,
               seed: int | None = None, *, names: Mapping[str, str] | None = None,
               unit: str = "V") -> Waveform:
    """Build a synthetic input: a shape plus Gaussian noise and mains hum.

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
        Samples per second, in Hz, above 0; samples fall at t = k / sample_rate
        for 0 <= t <= duration, at most ``MAX_SAMPLES`` of them.
    noise_rms : float
        RMS of white Gaussian noise added to every sample, in V, at least 0.
    hum_amplitude : float
        Peak amplitude of a mains-hum sine added to the signal, in V, at least 0.
    hum_frequency : {50, 60}
        Mains frequency of the hum, in Hz.
    seed : int or None
        Passed to ``numpy.random.default_rng``; a fixed value repeats the noise.
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
    hum_amplitude = real(named["hum_amplitude"], hum_amplitude, low=0.0, unit=unit)
    hum_frequency = float(choice(named["hum_frequency"], hum_frequency, HUM_FREQUENCIES))
    if seed is not None:
        seed = whole(named["seed"], seed)
    nyquist = sample_rate / 2.0
    if shape != "ramp" and frequency >= nyquist:
        raise BandcalcError(
            f"{named['frequency']} must be below {named['sample_rate']} / 2 = {nyquist:g} Hz (Nyquist), "
            f"got {frequency:g} Hz"
        )
    if hum_amplitude > 0.0 and hum_frequency >= nyquist:
        raise BandcalcError(
            f"{named['hum_frequency']} {hum_frequency:g} Hz needs {named['sample_rate']} above "
            f"{2 * hum_frequency:g} Hz, got {sample_rate:g} Hz"
        )
    # The small relative margin keeps t = duration when duration * rate is whole.
    product = duration * sample_rate
    if product >= MAX_SAMPLES:
        n = MAX_SAMPLES + 1
    else:
        n = int(np.floor(product * (1.0 + 1e-12))) + 1
    if n > MAX_SAMPLES:
        raise BandcalcError(
            f"{named['duration']} x {named['sample_rate']} gives more than {MAX_SAMPLES:,} samples; "
            "shorten the duration or lower the sample rate"
        )
    if n < 2:
        raise BandcalcError(
            f"{named['duration']} x {named['sample_rate']} gives {n} sample; at least 2 are needed "
            "(lengthen the duration or raise the sample rate)"
        )

    t = np.arange(n, dtype=np.float64) / sample_rate
    clean = offset + amplitude * _shape(shape, frequency * t, t, duration)
    v = clean.copy()
    if hum_amplitude > 0.0:
        v += hum_amplitude * np.sin(2.0 * np.pi * hum_frequency * t)
    if noise_rms > 0.0:
        v += np.random.default_rng(seed).normal(0.0, noise_rms, n)
    return Waveform(t=t, v=v, clean=clean)
