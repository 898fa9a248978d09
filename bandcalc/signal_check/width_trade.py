"""Trade-off between hysteresis and delay: one signal, many widths, several noise draws.

Wider hysteresis swallows more noise but switches later. The sweep runs the
same input through switching points centre +/- width / 2 for each width and
finds the narrowest width that gives exactly one edge per transition of the
noise-free signal, with the delay that width costs.  One noise draw decides
that width by chance, so a synthetic signal is run with several seeds: the
sweep reports each run's narrowest clean width (their spread) and, beside
them, the extra edges Rice's formula predicts for each width
(:mod:`bandcalc.signal_check.false_edges`), which no draw decides.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.validation import real, whole
from bandcalc.signal_check.disturbance import NoiseSpectrum
from bandcalc.signal_check.edges import (
    edge_delays,
    find_edges,
    input_edges,
    missed_transitions,
    run_points,
    stage_input,
)
from bandcalc.signal_check.false_edges import extra_edges_per_crossing
from bandcalc.signal_check.noise import (
    PEAK_TO_PEAK_PER_RMS,
    Disturbance,
    SlowPart,
    disturbance_of,
    given_disturbance,
)
from bandcalc.signal_check.output_timing import output_timing
from bandcalc.signal_check.waveform import SyntheticSignal, Waveform

__all__ = ["DEFAULT_SEEDS", "MAX_SEEDS", "MAX_SWEPT_SAMPLES", "MAX_WIDTHS", "Sweep", "hysteresis_sweep",
           "sweep_design"]

MAX_WIDTHS = 1000
"""Most widths one sweep may try (each costs a run over the whole waveform)."""

DEFAULT_SEEDS = 5
"""Noise draws a synthetic signal's sweep runs by default (odd, so the median is one of them)."""

MAX_SEEDS = 50
"""Most noise draws one sweep may run."""

MAX_SWEPT_SAMPLES = 20_000_000
"""Most samples over all of a sweep's noise draws (each runs through every width): a bound on time."""


@dataclass(frozen=True, eq=False)
class Sweep:
    """Result of :func:`hysteresis_sweep`; arrays run parallel to ``widths`` (``run_*``: one row a run).

    Attributes
    ----------
    centre : float
        Centre of the switching points, in V.
    widths : numpy.ndarray
        Hysteresis widths tried, in V, as given.
    run_edge_counts : numpy.ndarray of int, runs x widths
        Output edges of each run's input for each width.
    clean_edge_counts : numpy.ndarray of int or None
        Edges of the noise-free signal for each width.
    missed_counts : numpy.ndarray of int or None
        Centre crossings of the noise-free signal it does not answer (points
        beyond the swing), see :func:`bandcalc.signal_check.edges.missed_transitions`.
    clean_crossing_count : int or None
        Centre crossings of the noise-free signal: the transitions wanted.
    run_mean_delays, run_max_delays : numpy.ndarray, runs x widths
        Mean and largest edge delay after the clean centre crossing, in s
        (NaN without a noise-free signal or without edges).
    predicted_extra : numpy.ndarray or None
        Extra edges over the record that Rice's formula predicts for each width (None where the
        noise-free signal, and so its slope, is not known).
    """

    centre: float
    widths: np.ndarray
    run_edge_counts: np.ndarray
    clean_edge_counts: np.ndarray | None
    missed_counts: np.ndarray | None
    clean_crossing_count: int | None
    run_mean_delays: np.ndarray
    run_max_delays: np.ndarray
    predicted_extra: np.ndarray | None = None

    @property
    def runs(self) -> int:
        return int(self.run_edge_counts.shape[0])

    @property
    def edge_counts(self) -> np.ndarray:
        """Per width, the median over the runs of the output edges."""
        return np.median(self.run_edge_counts, axis=0).astype(np.int64)

    @property
    def mean_delays(self) -> np.ndarray:
        """Per width, the mean edge delay over all runs, s (NaN where none is known)."""
        return _all_nan_quiet(np.nanmean, self.run_mean_delays)

    @property
    def max_delays(self) -> np.ndarray:
        """Per width, the largest edge delay of any run, s (NaN where none is known)."""
        return _all_nan_quiet(np.nanmax, self.run_max_delays)

    @property
    def run_clean(self) -> np.ndarray:
        """runs x widths: True where that run gives one edge per wanted transition, no more."""
        if self.clean_edge_counts is None:
            return np.zeros(self.run_edge_counts.shape, dtype=bool)
        return (self.run_edge_counts == self.clean_edge_counts) & (self.missed_counts == 0)

    @property
    def clean_switching(self) -> np.ndarray:
        """Per width, True where every run gives one edge per wanted transition, no more.

        That is: as many edges as the noise-free signal gives (no chatter) and
        no missed transition. All False without a noise-free signal, where
        this cannot be judged.
        """
        return self.run_clean.all(axis=0)

    @property
    def best_index(self) -> int | None:
        """Index of the narrowest width clean in every run, or None."""
        ok = np.flatnonzero(self.clean_switching)
        if ok.size == 0:
            return None
        return int(ok[np.argmin(self.widths[ok])])

    @property
    def best_width(self) -> float | None:
        """Narrowest width giving one edge per transition in every run, in V, or None."""
        i = self.best_index
        return None if i is None else float(self.widths[i])

    @property
    def run_best_widths(self) -> list[float | None]:
        """Each run's own narrowest clean width (their spread shows what one noise draw decides)."""
        out = []
        for row in self.run_clean:
            ok = np.flatnonzero(row)
            out.append(float(self.widths[ok].min()) if ok.size else None)
        return out

    @property
    def predicted_best_width(self) -> float | None:
        """Narrowest width whose predicted extra edges over the record are below one half, or None."""
        if self.predicted_extra is None or self.clean_edge_counts is None:
            return None
        ok = np.flatnonzero((self.predicted_extra < 0.5) & (self.missed_counts == 0))
        return float(self.widths[ok].min()) if ok.size else None

    @property
    def best_mean_delay(self) -> float | None:
        """Mean edge delay at :attr:`best_width`, in s, or None (no such width, or no edge there)."""
        return self._at_best(self.mean_delays)

    @property
    def best_max_delay(self) -> float | None:
        """Largest edge delay at :attr:`best_width`, in s, or None (as :attr:`best_mean_delay`)."""
        return self._at_best(self.max_delays)

    def _at_best(self, delays: np.ndarray) -> float | None:
        i = self.best_index
        return None if i is None or np.isnan(delays[i]) else float(delays[i])


def _all_nan_quiet(reduce, values: np.ndarray) -> np.ndarray:
    """``reduce`` over runs, NaN (without numpy's warning) for a width no run gives an edge at."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return reduce(values, axis=0)


def _widths(widths: object) -> np.ndarray:
    try:
        w = np.array(widths, dtype=np.float64)  # a copy: the result must not change later
    except (TypeError, ValueError) as exc:
        raise BandcalcError(f"widths must be numbers in V: {exc}") from None
    if w.ndim != 1 or not 1 <= w.size <= MAX_WIDTHS:
        raise BandcalcError(f"widths must be a list of 1 to {MAX_WIDTHS} values, got shape "
                         f"{w.shape}")
    if not np.isfinite(w).all() or (w < 0).any():
        raise BandcalcError("widths must be finite and at least 0 V")
    return w


def hysteresis_sweep(waves: Waveform | Sequence[Waveform], centre: float, widths: object, *,
                     inverting: bool = False, delay: float = 0.0, rise_time: float = 0.0,
                     fall_time: float = 0.0, wanted: np.ndarray | None = None) -> Sweep:
    """Run each wave through points ``centre +/- width / 2`` for each width.

    Parameters
    ----------
    waves : Waveform or sequence of Waveform
        The input, or several noise draws of it (same times and noise-free signal); delays and
        the best width need ``clean``.
    centre : float
        Centre of the switching points, in V.
    widths : array_like
        Hysteresis widths to try, in V, each at least 0, up to ``MAX_WIDTHS``.
    inverting, delay, rise_time, fall_time, wanted
        As for :func:`bandcalc.signal_check.edges.run_stage`.

    Returns
    -------
    Sweep
    """
    waves = [waves] if isinstance(waves, Waveform) else list(waves)
    centre = real("centre", centre, unit="V")
    w = _widths(widths)
    delay = real("delay", delay, low=0.0, unit="s")
    rise_time = real("rise_time", rise_time, low=0.0, unit="s")
    fall_time = real("fall_time", fall_time, low=0.0, unit="s")
    first = waves[0]
    counts = np.zeros((len(waves), w.size), dtype=np.int64)
    mean_delays = np.full(counts.shape, np.nan)
    max_delays = np.full(counts.shape, np.nan)
    clean_counts = missed = crossings = None
    if first.clean is not None:
        clean_counts = np.zeros(w.size, dtype=np.int64)
        missed = np.zeros(w.size, dtype=np.int64)
        ideal = find_edges(first.t, first.clean if wanted is None else wanted, centre, centre)
        cross_t, cross_d = ideal.switch_times, ideal.direction
        crossings = int(cross_t.size)
        for i, width in enumerate(w):
            clean_switch = find_edges(first.t, first.clean, centre + 0.5 * width,
                                      centre - 0.5 * width).switch_times
            clean_counts[i] = clean_switch.size
            missed[i] = missed_transitions(cross_t, clean_switch)
    for r, wave in enumerate(waves):
        for i, width in enumerate(w):
            run = input_edges(wave, centre + 0.5 * width, centre - 0.5 * width)
            counts[r, i] = run.index.size
            if clean_counts is None or not run.index.size:
                continue
            d = edge_delays(run.times(bool(inverting), delay, rise_time, fall_time), run.direction,
                            cross_t, cross_d)
            if np.isfinite(d).any():
                mean_delays[r, i] = np.nanmean(d)
                max_delays[r, i] = np.nanmax(d)
    return Sweep(centre=centre, widths=w, run_edge_counts=counts, clean_edge_counts=clean_counts,
                 missed_counts=missed, clean_crossing_count=crossings, run_mean_delays=mean_delays,
                 run_max_delays=max_delays)


def _predicted(wave: Waveform, centre: float, widths: np.ndarray, disturbance: Disturbance,
               pole: float | None) -> np.ndarray | None:
    """Extra edges Rice's formula predicts over the record for each width: each wanted crossing
    upward costs the extra edges at the upper point, each downward one those at the lower."""
    if wave.clean is None:
        return None
    ideal = find_edges(wave.t, wave.clean, centre, centre)
    ups, downs = int((ideal.direction > 0).sum()), int((ideal.direction < 0).sum())
    noise: NoiseSpectrum = disturbance.noise.filtered(pole)
    hum = disturbance.hum.filtered(noise)
    out = np.zeros(widths.size)
    for sign, count in ((1.0, ups), (-1.0, downs)):
        if count == 0:
            continue
        levels = centre + sign * 0.5 * widths
        slow = SlowPart(wave.t, wave.clean, 0.0)
        slopes = np.array([slow.crossings(x)[0] or np.nan for x in levels])
        known = np.isfinite(slopes) & (widths > 0)
        if known.any():
            out[known] += count * extra_edges_per_crossing(noise, widths[known], slopes[known], hum)
        out[~known & (widths == 0)] = np.inf if noise.m0 > 0 else 0.0
    return out


def sweep_design(design: Design, signal: Waveform | SyntheticSignal, widths: object | None = None, *,
                 seeds: int = DEFAULT_SEEDS, disturbance: Disturbance | None = None) -> Sweep:
    """Sweep the hysteresis width about the design's own centre (see ``edges.run_points``).

    ``signal`` is a waveform (one run), or a synthetic signal, run with ``seeds`` noise draws (its
    own seed and the next ones).  The input passes the design's filter; the predicted extra edges
    use ``disturbance`` (default: the synthetic signal's own noise and hum, or read from the
    waveform).  Default widths: 81 steps from 0 to twice the larger of the design's hysteresis and
    the noise's peak-to-peak at the stage (6.6 x RMS, common practice) plus the hum's span.
    """
    upper, lower, inverting = run_points(design)
    if isinstance(signal, SyntheticSignal):
        seeds = whole("seeds", seeds, low=1)
        if seeds > MAX_SEEDS:
            raise BandcalcError(f"seeds must be a whole number from 1 to {MAX_SEEDS}, got {seeds}")
        first = 0 if signal.seed is None else signal.seed
        draws = seeds if signal.noise_rms > 0 else 1
        samples = int(signal.duration * signal.rate_used) + 1
        if draws * samples > MAX_SWEPT_SAMPLES:
            raise BandcalcError(
                f"the sweep would run {draws} noise draws of {samples:,} samples, more than "
                f"{MAX_SWEPT_SAMPLES:,} in all; {max(1, MAX_SWEPT_SAMPLES // samples)} draw(s) fit: lower "
                "the seeds or shorten the record")
        waves = [signal.with_seed(first + i).make() for i in range(draws)]
        if disturbance is None:
            disturbance = given_disturbance(signal)
    else:
        waves = [signal]
        disturbance = disturbance_of(signal) if disturbance is None else disturbance
    staged = [stage_input(design, wave) for wave in waves]
    pole = staged[0][1]
    waves_at_stage = [s[0] for s in staged]
    at_stage = disturbance.noise.filtered(None if pole is None else pole.pole)
    if widths is None:
        hum_span = disturbance.hum.filtered(at_stage).span()
        top = 2.0 * max(upper - lower, PEAK_TO_PEAK_PER_RMS * at_stage.rms_at_stage + hum_span, 1e-6)
        widths = np.linspace(0.0, top, 81)
    timing = output_timing(design)
    centre = 0.5 * (upper + lower)
    sweep = hysteresis_sweep(waves_at_stage, centre, widths, inverting=inverting, delay=timing.delay,
                             rise_time=timing.rise, fall_time=timing.fall, wanted=waves[0].clean)
    predicted = _predicted(waves_at_stage[0], centre, sweep.widths, disturbance,
                           None if pole is None else pole.pole)
    return Sweep(**{**sweep.__dict__, "predicted_extra": predicted})
