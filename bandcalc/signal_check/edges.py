"""Run a sampled input through a stage with two switching points.

Rules: the stage switches to the input-high state when the input reaches the
upper point (v >= upper) and back to the input-low state when it reaches the
lower point (v <= lower); between them it keeps its state. It starts in the
state its first sample implies: at or above the centre (upper + lower) / 2 it
is input-high. For a synthetic input the noise-free first sample decides when
the first sample lies between the points, so the noisy and the noise-free
runs start alike and differ only by what the noise does. With both points
equal (no hysteresis) a sample at the point counts as high. An inverting
stage drives its output low in the input-high state; its edges fall at the
same times.

Edge times are interpolated linearly between the two samples that straddle
the switching point, then the comparator's propagation delay is added to every
edge, and the output's time to reach the receiving input's threshold to rising
and falling output edges (:mod:`bandcalc.signal_check.output_timing`).

A design's run (:func:`run_design`) first passes the input through the design's
input filter (:func:`bandcalc.signal_check.first_order.low_pass`, at the
filter's pole), and predicts false edges from the noise's spectrum by Rice's
formula (:func:`bandcalc.signal_check.noise.false_edge_check`) beside the
edges the run counts.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.input_filter import FilterPole, filter_pole
from bandcalc.model.network import TwoPoints
from bandcalc.model.points import design_points
from bandcalc.model.validation import real
from bandcalc.signal_check.first_order import low_pass
from bandcalc.signal_check.noise import (
    Disturbance,
    FalseEdgeCheck,
    NoiseLevel,
    disturbance_of,
    false_edge_check,
    slow_part,
)
from bandcalc.signal_check.output_timing import OutputTiming, output_timing
from bandcalc.signal_check.waveform import Waveform

__all__ = [
    "Edges",
    "SignalRun",
    "centre_crossings",
    "edge_delays",
    "find_edges",
    "input_edges",
    "missed_transitions",
    "run_points",
    "run_design",
    "stage_input",
    "run_stage",
    "switch_states",
    "switching_edges",
]


def _points(upper: float, lower: float) -> tuple[float, float]:
    upper = real("upper", upper, unit="V")
    lower = real("lower", lower, unit="V")
    if upper < lower:
        raise BandcalcError(
            f"upper ({upper:g} V) must be at or above lower ({lower:g} V); "
            "a stage with hysteresis needs upper > lower"
        )
    return upper, lower


def switching_edges(v: np.ndarray, upper: float, lower: float,
                    start_level: float | None = None) -> tuple[bool, np.ndarray, np.ndarray]:
    """Find where the stage changes state, without a per-sample loop.

    Only entries into the "at or above upper" or "at or below lower" bands
    can change the state; an entry changes it when it differs from the
    previous entry (or from the start state).

    Parameters
    ----------
    v : numpy.ndarray
        Input samples, in V.
    upper, lower : float
        Switching points, in V, ``upper >= lower`` (not checked here).
    start_level : float, optional
        Level, in V, that decides the start state when the first sample lies
        between the points (default: the first sample). A run of a noisy
        input passes its noise-free first sample, so noise at t = 0 does not
        decide the state the stage was in.

    Returns
    -------
    start_high : bool
        State at the first sample (True = input-high).
    index : numpy.ndarray of int
        Sample index k of each edge: the state changes between k-1 and k.
    direction : numpy.ndarray of int8
        +1 for a change to input-high, -1 for a change to input-low.
    """
    high = v >= upper
    low = v < lower if upper == lower else v <= lower
    band = high.view(np.int8) - low.view(np.int8)
    entry = (band[1:] != band[:-1]) & (band[1:] != 0)
    index = np.flatnonzero(entry) + 1
    kind = band[index]
    level = v[0] if start_level is None else start_level
    start_high = bool(high[0] or (not low[0] and level >= 0.5 * (upper + lower)))
    previous = np.empty_like(kind)
    if kind.size:
        previous[0] = 1 if start_high else -1
        previous[1:] = kind[:-1]
    change = kind != previous
    return start_high, index[change], kind[change]


def _trace(n: int, start_high: bool, index: np.ndarray) -> np.ndarray:
    """Per-sample state (True = input-high) from the start state and edges."""
    bounds = np.concatenate(([0], index, [n]))
    values = np.ones(index.size + 1, dtype=bool)
    values[1::2] = False
    if not start_high:
        values = ~values
    return np.repeat(values, np.diff(bounds))


def switch_states(v: np.ndarray, upper: float, lower: float) -> np.ndarray:
    """State per sample, True = input-high (the vectorized switching core).

    Arguments as for :func:`switching_edges`; the points are checked here.
    """
    v = np.asarray(v, dtype=np.float64)
    upper, lower = _points(upper, lower)
    start_high, index, _ = switching_edges(v, upper, lower)
    return _trace(v.size, start_high, index)


def _cross_times(t: np.ndarray, v: np.ndarray, index: np.ndarray,
                 level: np.ndarray | float) -> np.ndarray:
    """Time where v passes ``level`` between samples index-1 and index."""
    t0, v0 = t[index - 1], v[index - 1]
    frac = (level - v0) / (v[index] - v0)
    return t0 + frac * (t[index] - t0)


def centre_crossings(wave: Waveform, centre: float) -> tuple[np.ndarray, np.ndarray]:
    """Times and directions (+1 up, -1 down) where the clean signal crosses ``centre``.

    These are the transitions the designer wants from the stage: an ideal
    comparator at the centre fed the noise-free signal.
    """
    if wave.clean is None:
        raise BandcalcError("the centre crossings need the noise-free signal (wave.clean)")
    ideal = find_edges(wave.t, wave.clean, centre, centre)
    return ideal.switch_times, ideal.direction


def missed_transitions(cross_times: np.ndarray, clean_switch_times: np.ndarray) -> int:
    """Centre crossings of the clean signal that the stage does not answer.

    The noise-free run switches at most once between two centre crossings,
    after the first; a crossing without a switch before the next one is
    missed (a point beyond the swing). A last crossing still unanswered when
    the record ends is not counted: the record is too short to tell.

    Parameters
    ----------
    cross_times : numpy.ndarray
        Centre crossings of the clean signal, s (:func:`centre_crossings`).
    clean_switch_times : numpy.ndarray
        Switching instants of the clean signal through the points, s.
    """
    n = cross_times.size
    if n == 0:
        return 0
    last_answered = clean_switch_times.size > 0 and clean_switch_times[-1] >= cross_times[-1]
    return int(n - clean_switch_times.size - (0 if last_answered else 1))


def edge_delays(times: np.ndarray, directions: np.ndarray, cross_times: np.ndarray,
                cross_directions: np.ndarray) -> np.ndarray:
    """Delay of each edge after the nearest clean crossing in the same direction, in s.

    The nearest crossing, before or after, is used, so an edge that noise
    triggered early shows a negative delay; NaN where the clean signal never
    crosses in that direction.
    """
    delays = np.full(times.size, np.nan)
    for d in (1, -1):
        ref = cross_times[cross_directions == d]
        mine = directions == d
        if ref.size == 0 or not mine.any():
            continue
        e = times[mine]
        pos = np.searchsorted(ref, e)
        before = ref[np.maximum(pos - 1, 0)]
        after = ref[np.minimum(pos, ref.size - 1)]
        nearest = np.where(np.abs(e - before) <= np.abs(after - e), before, after)
        delays[mine] = e - nearest
    return delays


@dataclass(frozen=True, eq=False)
class Edges:
    """Edges of one run: start state, sample index, direction, switching instant."""

    start_high: bool
    index: np.ndarray
    direction: np.ndarray
    switch_times: np.ndarray

    def times(self, inverting: bool, delay: float, rise_time: float, fall_time: float = 0.0) -> np.ndarray:
        """Output edge times: switching instant + delay + rise time (rising) or fall time (falling)."""
        rising = (self.direction > 0) != inverting
        return self.switch_times + delay + np.where(rising, rise_time, fall_time)


def find_edges(t: np.ndarray, v: np.ndarray, upper: float, lower: float,
               start_level: float | None = None) -> Edges:
    """Edges of ``v`` sampled at ``t`` through points ``upper >= lower`` (V).

    Like :func:`switching_edges`, plus each switching instant interpolated
    linearly between the two samples that straddle the point.
    """
    start_high, index, direction = switching_edges(v, upper, lower, start_level)
    level = np.where(direction > 0, upper, lower)
    return Edges(start_high, index, direction, _cross_times(t, v, index, level))


def input_edges(wave: Waveform, upper: float, lower: float) -> Edges:
    """Edges of ``wave.v`` through ``upper >= lower`` (V), points not checked.

    The start state follows the noise-free first sample when ``wave.clean``
    is known (see :func:`switching_edges`), else the first sample.
    """
    start_level = None if wave.clean is None else float(wave.clean[0])
    return find_edges(wave.t, wave.v, upper, lower, start_level)


def _high_fraction(t: np.ndarray, start_high: bool, switch_times: np.ndarray) -> float:
    """Fraction of [t0, t_end] spent input-high, from the switching instants."""
    bounds = np.concatenate(([t[0]], switch_times, [t[-1]]))
    spans = np.diff(bounds)
    high = spans[0::2].sum() if start_high else spans[1::2].sum()
    return float(high / (t[-1] - t[0]))


@dataclass(frozen=True, eq=False)
class SignalRun(TwoPoints):
    """Result of :func:`run_stage`.

    Attributes
    ----------
    wave : Waveform
        The input.
    upper, lower : float
        Switching points, in V.
    inverting : bool
        True when the output is low in the input-high state.
    delay, rise_time, fall_time : float
        Propagation delay added to every edge, and the time the output takes to reach the
        receiving threshold on rising / falling edges, in s.
    state : numpy.ndarray of bool
        Per sample, True in the input-high state.
    edge_times : numpy.ndarray
        Output edge times, in s, delay and rise time included.
    edge_directions : numpy.ndarray of int8
        +1 where the stage turns input-high, -1 where it turns input-low.
    clean_edge_count : int or None
        Edges the noise-free signal gives through the same points.
    clean_crossing_count : int or None
        Centre crossings of the noise-free signal (transitions wanted).
    missed_count : int or None
        Of those, the ones the noise-free run does not answer, see
        :func:`missed_transitions`.
    edge_delays : numpy.ndarray or None
        Per edge, s after the nearest clean centre crossing in its direction.
    input_high_fraction : float
        Fraction of the record spent in the input-high state.
    noise : NoiseLevel
        Random noise RMS on the input (hum apart) and how it was obtained.
    findings : tuple of str
        Plain sentences: extra and missed edges; from :func:`run_design` also the false edges
        predicted, the hum and the output's timing.
    check : FalseEdgeCheck or None
        False edges predicted by Rice's formula (:func:`run_design` only).
    pole : FilterPole or None
        The design's input filter, through which ``wave`` has passed (:func:`run_design` only).
    """

    wave: Waveform
    upper: float
    lower: float
    inverting: bool
    delay: float
    rise_time: float
    state: np.ndarray
    edge_times: np.ndarray
    edge_directions: np.ndarray
    clean_edge_count: int | None
    clean_crossing_count: int | None
    missed_count: int | None
    edge_delays: np.ndarray | None
    input_high_fraction: float
    noise: NoiseLevel
    findings: tuple[str, ...]
    fall_time: float = 0.0
    check: FalseEdgeCheck | None = None
    pole: FilterPole | None = None

    @property
    def output_high(self) -> np.ndarray:
        """Per sample, True where the output is high (before delays)."""
        return ~self.state if self.inverting else self.state

    @property
    def output_high_fraction(self) -> float:
        """Output duty cycle: fraction of the record with the output high."""
        f = self.input_high_fraction
        return 1.0 - f if self.inverting else f

    @property
    def output_rising(self) -> np.ndarray:
        """Per edge, True where the output rises."""
        return (self.edge_directions > 0) != self.inverting

    @property
    def edge_count(self) -> int:
        """Number of output edges."""
        return int(self.edge_times.size)

    @property
    def extra_edges(self) -> int | None:
        """Edges beyond those of the noise-free signal (chatter), or None."""
        if self.clean_edge_count is None:
            return None
        return self.edge_count - self.clean_edge_count

    def _known_delays(self) -> np.ndarray:
        d = self.edge_delays
        return d[np.isfinite(d)] if d is not None else np.empty(0)

    @property
    def delay_mean(self) -> float | None:
        """Mean edge delay (s) after the noise-free centre crossing; None where not known."""
        d = self._known_delays()
        return float(d.mean()) if d.size else None

    @property
    def delay_max(self) -> float | None:
        """Largest edge delay (s); None where not known (a recorded signal, or no edges)."""
        d = self._known_delays()
        return float(d.max()) if d.size else None


def run_stage(wave: Waveform, upper: float, lower: float, *, inverting: bool = False,
              delay: float = 0.0, rise_time: float = 0.0, fall_time: float = 0.0,
              noise: NoiseLevel | None = None, wanted: np.ndarray | None = None) -> SignalRun:
    """Run ``wave`` through a stage switching at ``upper`` and ``lower``.

    Parameters
    ----------
    wave : Waveform
        Input samples (as they reach the stage).
    upper, lower : float
        Switching points, in V, ``upper >= lower``.
    inverting : bool
        Output low in the input-high state.
    delay : float
        Comparator propagation delay added to every edge, in s, at least 0.
    rise_time, fall_time : float
        Added to rising / falling output edges, in s, at least 0: the time the output takes to
        reach the receiving threshold (:func:`bandcalc.signal_check.output_timing.output_timing`).
    noise : NoiseLevel, optional
        The random noise on the input, where known; else measured from the spectrum
        (:func:`bandcalc.signal_check.noise.disturbance_of`).
    wanted : numpy.ndarray, optional
        The noise-free signal whose centre crossings are the transitions wanted and whose delays
        are measured (default ``wave.clean``); a design's run passes the signal ahead of its
        input filter, so the filter's lag counts as delay.

    Returns
    -------
    SignalRun
    """
    upper, lower = _points(upper, lower)
    delay = real("delay", delay, low=0.0, unit="s")
    rise_time = real("rise_time", rise_time, low=0.0, unit="s")
    fall_time = real("fall_time", fall_time, low=0.0, unit="s")
    inverting = bool(inverting)
    noisy = input_edges(wave, upper, lower)
    times = noisy.times(inverting, delay, rise_time, fall_time)
    noise = disturbance_of(wave).level if noise is None else noise
    findings = []
    clean_edges = clean_crossings = missed = delays = None
    if wave.clean is not None:
        clean_switch = find_edges(wave.t, wave.clean, upper, lower).switch_times
        clean_edges = clean_switch.size
        centre = 0.5 * (upper + lower)
        ideal = find_edges(wave.t, wave.clean if wanted is None else wanted, centre, centre)
        cross_t, cross_d = ideal.switch_times, ideal.direction
        clean_crossings = cross_t.size
        missed = missed_transitions(cross_t, clean_switch)
        delays = edge_delays(times, noisy.direction, cross_t, cross_d)
        extra = times.size - clean_edges
        if extra > 0:
            findings.append(f"Noise adds {extra} edge(s) to the {clean_edges} the "
                            "noise-free signal gives (chatter).")
        if missed > 0:
            findings.append(
                f"The stage misses {missed} of the {clean_crossings} centre crossing(s) of "
                "the noise-free signal: a switching point lies beyond the signal's swing.")
    return SignalRun(
        wave=wave, upper=upper, lower=lower, inverting=inverting, delay=delay,
        rise_time=rise_time, fall_time=fall_time,
        state=_trace(wave.v.size, noisy.start_high, noisy.index),
        edge_times=times, edge_directions=noisy.direction,
        clean_edge_count=clean_edges, clean_crossing_count=clean_crossings,
        missed_count=missed, edge_delays=delays,
        input_high_fraction=_high_fraction(wave.t, noisy.start_high, noisy.switch_times),
        noise=noise, findings=tuple(findings),
    )


def run_points(design: Design) -> tuple[float, float, bool]:
    """Upper and lower points and the inverting flag for a signal run of a design.

    The signal is in the design's unit (the stage's volts, or a front end's watched quantity:
    battery volts, degrees C, kPa); where the stage's source voltage falls as it rises (a
    thermistor on the bottom of its divider) the output sense flips.
    """
    pts = design_points(design)
    return float(pts.upper), float(pts.lower), design.inverting != (not pts.rises)


def stage_input(design: Design, wave: Waveform) -> tuple[Waveform, FilterPole | None]:
    """``wave`` as it reaches the stage: through the design's input filter at its pole (the mean
    time constant of its two points, :class:`~bandcalc.model.input_filter.FilterPole`), noise-free
    twin included; unchanged without a filter.  The filter starts settled at the noise-free
    signal's first value, or a recording's mean over its first time constant (one noisy sample
    would start it off by the whole noise)."""
    pole = filter_pole(design)
    if pole is None:
        return wave, None
    tau = pole.time_constant
    if wave.clean is None:
        first = float(wave.v[: max(1, int(np.searchsorted(wave.t, wave.t[0] + tau)))].mean())
        return Waveform(wave.t, low_pass(wave.t, wave.v, tau, first)), pole
    clean = low_pass(wave.t, wave.clean, tau)
    return Waveform(wave.t, low_pass(wave.t, wave.v, tau, float(wave.clean[0])), clean), pole


def run_design(design: Design, wave: Waveform, *, disturbance: Disturbance | None = None) -> SignalRun:
    """Run ``wave`` (at the signal's source) through a design (points: :func:`run_points`).

    The input passes the design's input filter (:func:`stage_input`); the comparator's delay and
    the output's time to the receiving threshold are added
    (:func:`bandcalc.signal_check.output_timing.output_timing`); false edges are predicted from
    ``disturbance`` (the noise and hum at the source; default: read from the signal's spectrum)
    by Rice's formula, with the signal's slope where it crosses each point.
    """
    upper, lower, inverting = run_points(design)
    if not upper > lower:
        raise BandcalcError("signal: the design has no hysteresis (upper point not above lower, or a "
                         "point the watched quantity cannot reach); fix the stage first")
    disturbance = disturbance_of(wave) if disturbance is None else disturbance
    staged, pole = stage_input(design, wave)
    slow = slow_part(staged, disturbance)
    passes = slow.crossings(0.5 * (upper + lower))[1] / wave.duration
    check = false_edge_check(disturbance, upper, lower, pole=None if pole is None else pole.pole,
                             slope_upper=slow.crossings(upper)[0], slope_lower=slow.crossings(lower)[0],
                             crossings_per_second=passes, unit=design.unit)
    timing: OutputTiming = output_timing(design, (float(slow.x.min()), float(slow.x.max())))
    run = run_stage(staged, upper, lower, inverting=inverting, delay=timing.delay, rise_time=timing.rise,
                    fall_time=timing.fall, noise=disturbance.level, wanted=wave.clean)
    return replace(run, findings=run.findings + check.findings + timing.findings, check=check, pole=pole)
