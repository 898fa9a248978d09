"""The noise and hum on the input, and how often they make the stage switch when it should not.

What disturbs a signal (:class:`Disturbance`) is random noise, given by its RMS and bandwidth
(:class:`~bandcalc.signal_check.disturbance.NoiseSpectrum`), and mains hum, a sine with harmonics
(:class:`~bandcalc.signal_check.disturbance.Hum`); given, or read from the spectrum of a signal
(:func:`bandcalc.signal_check.spectrum.estimate_noise`), hum apart from noise.

:func:`false_edge_check` predicts, with the spectrum as it reaches the stage (behind the input
filter's pole), by Rice's formula (:mod:`bandcalc.signal_check.false_edges`):

* how often noise crosses the lower point while the input is parked at the upper one, and the mean
  time between those false switchings;
* the extra edges to expect each time the signal passes a point, for its slope there.

The old rule of thumb, hysteresis wider than 6.6 x RMS (Gaussian noise stays within +/-3.3
sigma 99.9 % of the time, standard normal table; designers quote 6 to 6.6, common practice),
is kept only as the figure "about ... peak-to-peak": whether noise adds edges depends on its
bandwidth and the signal's slope, which the rule does not see.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandcalc.model.units import format_interval, format_si, format_value
from bandcalc.model.validation import real
from bandcalc.signal_check.disturbance import Hum, NoiseSpectrum
from bandcalc.signal_check.false_edges import (
    SIMPLIFICATIONS,
    extra_edges_per_crossing,
    parked_rate,
)
from bandcalc.signal_check.first_order import low_pass
from bandcalc.signal_check.spectrum import estimate_noise
from bandcalc.signal_check.waveform import SyntheticSignal, Waveform

__all__ = [
    "PEAK_TO_PEAK_PER_RMS",
    "Disturbance",
    "FalseEdgeCheck",
    "NoiseLevel",
    "SlowPart",
    "disturbance_of",
    "false_edge_check",
    "given_disturbance",
    "slow_part",
]

PEAK_TO_PEAK_PER_RMS = 6.6
"""Peak-to-peak noise per volt RMS (common practice: 6 to 6.6)."""


@dataclass(frozen=True)
class NoiseLevel:
    """Random noise on an input, RMS in the signal's unit (hum apart), and how it was obtained."""

    rms: float
    source: str

    @property
    def peak_to_peak(self) -> float:
        """Peak-to-peak noise taken as ``PEAK_TO_PEAK_PER_RMS`` x RMS."""
        return PEAK_TO_PEAK_PER_RMS * self.rms


@dataclass(frozen=True)
class Disturbance:
    """Noise and hum at the signal's source (ahead of any input filter), and how they were obtained.

    ``notes``: plain sentences on what limits an estimate.
    """

    noise: NoiseSpectrum
    hum: Hum
    source: str
    notes: tuple[str, ...] = ()

    @property
    def level(self) -> NoiseLevel:
        return NoiseLevel(self.noise.rms, self.source)


def given_disturbance(signal: SyntheticSignal) -> Disturbance:
    """The noise and hum a synthetic signal is made with, as given."""
    return Disturbance(NoiseSpectrum(signal.noise_rms, signal.bandwidth), signal.hum, "given")


def disturbance_of(wave: Waveform) -> Disturbance:
    """The noise and hum on ``wave``, from the spectrum: of ``v - clean`` where the noise-free
    signal is known, else of the recording itself (the signal's slow part and narrow lines left
    out, see :mod:`bandcalc.signal_check.spectrum`)."""
    if wave.clean is not None:
        est = estimate_noise(wave, wave.v - wave.clean)
        source = "measured against the noise-free signal, hum apart"
    else:
        est = estimate_noise(wave)
        source = "estimated from the recording's spectrum, hum apart"
    return Disturbance(est.noise, est.hum, source, est.notes)


@dataclass(frozen=True, eq=False)
class SlowPart:
    """The signal without its noise and hum, sampled at ``t``: ``x``, with what is left of the noise
    and hum in it within +/- ``band`` (0 for a noise-free twin)."""

    t: np.ndarray
    x: np.ndarray
    band: float

    def crossings(self, level: float) -> tuple[float | None, int]:
        """(median slope size where it passes ``level``, unit/s, or None; how many times it passes).

        Without a band, the slope between the two samples about each crossing.  With one, each
        passage is a transit from ``level - band`` to ``level + band`` or back (what is left of the
        noise may cross ``level`` itself several times), its slope 2 band / its duration.
        """
        x, t = self.x, self.t
        if self.band == 0.0:
            above = x >= level
            at = np.flatnonzero(above[1:] != above[:-1])
            slopes = np.abs(np.diff(x)[at] / np.diff(t)[at])
        else:
            high, low = x >= level + self.band, x <= level - self.band
            ends = np.flatnonzero(high | low)  # samples outside the band, in order
            side = high[ends]
            turn = np.flatnonzero(side[1:] != side[:-1])  # last sample on one side, first on the other
            slopes = 2.0 * self.band / (t[ends[turn + 1]] - t[ends[turn]])
        slope = float(np.median(slopes)) if slopes.size else 0.0
        return (slope if slope > 0 else None), int(slopes.size)


def slow_part(wave: Waveform, disturbance: Disturbance) -> SlowPart:
    """The signal without its noise and hum: the noise-free twin where known, else the samples
    through a first-order low-pass at a tenth of the lower of the noise's bandwidth and the mains
    frequency, with a band of 4 x the noise left after it plus twice the hum left."""
    if wave.clean is not None:
        return SlowPart(wave.t, wave.clean, 0.0)
    corner = 0.1 * min(disturbance.noise.bandwidth, disturbance.hum.frequency)
    left = disturbance.noise.filtered(corner)
    band = 4.0 * left.rms_at_stage + 2.0 * disturbance.hum.filtered(left).peak
    return SlowPart(wave.t, low_pass(wave.t, wave.v, 1.0 / (2.0 * math.pi * corner)), band)


@dataclass(frozen=True)
class FalseEdgeCheck:
    """False edges predicted for a stage with points ``upper`` > ``lower``, in ``unit``.

    ``source``: the disturbance at the source; ``noise`` and ``hum``: as they reach the stage
    (behind the filter's pole, ``pole`` Hz, None without a filter).  ``parked_per_second``: false
    switchings per second with the input held at the upper point (downward crossings of the lower
    point, Rice); ``parked_upward_per_second``: held at the lower point.  ``extra_upper`` /
    ``extra_lower``: expected extra edges each time the signal passes that point at its slope
    ``slope_upper`` / ``slope_lower`` (unit/s); None where the signal does not cross it.
    ``crossings_per_second``: how often the signal passes through the points.
    """

    upper: float
    lower: float
    unit: str
    source: Disturbance
    pole: float | None
    noise: NoiseSpectrum
    hum: Hum
    parked_per_second: float
    parked_upward_per_second: float
    slope_upper: float | None
    slope_lower: float | None
    extra_upper: float | None
    extra_lower: float | None
    crossings_per_second: float = 0.0

    @property
    def slope(self) -> float | None:
        """The slower of the signal's slopes at the two points (unit/s), None if neither is known."""
        known = [k for k in (self.slope_upper, self.slope_lower) if k is not None]
        return min(known) if known else None

    @property
    def hysteresis(self) -> float:
        return self.upper - self.lower

    @property
    def mean_time_between(self) -> float:
        """Mean time (s) between false switchings parked at the upper point; inf if none come."""
        return 1.0 / self.parked_per_second if self.parked_per_second > 0 else math.inf

    @property
    def findings(self) -> tuple[str, ...]:
        """Plain sentences: the noise at the stage, the parked rate, the extra edges, the hum."""
        v = lambda x: format_value(x, self.unit, 3)  # noqa: E731
        out = []
        noise, source = self.noise, self.source.noise
        if noise.m0 == 0.0 and not self.hum.present:
            return (f"No noise or hum on the input ({self.source.source}): no false edges.",)
        filtered = "" if self.pole is None else f", {v(source.rms)} ahead of the filter's pole at " \
                                                f"{format_si(self.pole, 'Hz')}"
        out.append(f"Noise at the stage: {v(noise.rms_at_stage)} RMS{filtered}, flat to "
                   f"{format_si(source.bandwidth, 'Hz')} ({self.source.source}).")
        if self.parked_per_second > 0:
            out.append(f"Parked at the upper point, noise and hum cross the lower point "
                       f"{self.hysteresis:.3g} {self.unit} below about once every "
                       f"{format_interval(self.mean_time_between)} (Rice's formula); each such "
                       "crossing switches the stage and back: two false edges.")
        else:
            out.append(f"Parked at either point, noise and hum are not expected ever to reach the other "
                       f"point {v(self.hysteresis)} away (Rice's formula gives a rate below 1e-300 "
                       "per second).")
        for name, extra, slope in (("upper", self.extra_upper, self.slope_upper),
                                   ("lower", self.extra_lower, self.slope_lower)):
            if extra is not None:
                out.append(f"Each time the signal passes the {name} point (slope "
                           f"{format_value(slope, self.unit + '/s', 3)}), expect {extra:.3g} extra "
                           "edge(s) from noise and hum.")
        span = self.hum.span()
        if span > 0:
            verdict = ("wider than the hysteresis: the hum alone can switch the stage with the mains"
                       if span >= self.hysteresis else "inside the hysteresis")
            out.append(f"Hum spans {v(span)} peak-to-peak at the stage (a sine spans twice its "
                       f"amplitude), {verdict}.")
        return tuple(out) + self.source.notes

    @property
    def simplifications(self) -> tuple[str, ...]:
        return SIMPLIFICATIONS


def false_edge_check(disturbance: Disturbance, upper: float, lower: float, *, pole: float | None = None,
                     slope_upper: float | None = None, slope_lower: float | None = None,
                     crossings_per_second: float = 0.0, unit: str = "V") -> FalseEdgeCheck:
    """False edges for points ``upper`` > ``lower`` under ``disturbance``, behind a first-order
    filter with its pole at ``pole`` Hz (None: no filter), the signal passing the points at
    ``slope_upper`` / ``slope_lower`` (unit/s; None: not known), ``crossings_per_second`` times."""
    upper, lower = real("upper", upper), real("lower", lower, high=upper)
    noise = disturbance.noise.filtered(pole)
    hum = disturbance.hum.filtered(noise)
    h = upper - lower
    extra = {}
    for name, slope in (("upper", slope_upper), ("lower", slope_lower)):
        extra[name] = None if slope is None else float(extra_edges_per_crossing(noise, h, slope, hum)[0])
    return FalseEdgeCheck(
        upper=upper, lower=lower, unit=unit, source=disturbance, pole=pole, noise=noise, hum=hum,
        parked_per_second=float(parked_rate(noise, h, hum)),
        parked_upward_per_second=float(parked_rate(noise, h, hum, upward=True)),
        slope_upper=slope_upper, slope_lower=slope_lower,
        extra_upper=extra["upper"], extra_lower=extra["lower"],
        crossings_per_second=real("crossings_per_second", crossings_per_second, low=0.0))
