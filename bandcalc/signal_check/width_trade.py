"""Trade-off between hysteresis and delay: one waveform, many widths.

Wider hysteresis swallows more noise but switches later. The sweep runs the
same input through switching points centre +/- width / 2 for each width and
finds the narrowest width that gives exactly one edge per transition of the
noise-free signal, with the delay that width costs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.validation import real
from bandcalc.signal_check.edges import (
    centre_crossings,
    edge_delays,
    find_edges,
    input_edges,
    missed_transitions,
    output_rise_time,
    run_points,
)
from bandcalc.signal_check.noise import noise_level
from bandcalc.signal_check.waveform import Waveform

__all__ = ["MAX_WIDTHS", "Sweep", "hysteresis_sweep", "sweep_design"]

MAX_WIDTHS = 1000
"""Most widths one sweep may try (each costs a run over the whole waveform)."""


@dataclass(frozen=True, eq=False)
class Sweep:
    """Result of :func:`hysteresis_sweep`; arrays run parallel to ``widths``.

    Attributes
    ----------
    centre : float
        Centre of the switching points, in V.
    widths : numpy.ndarray
        Hysteresis widths tried, in V, as given.
    edge_counts : numpy.ndarray of int
        Output edges of the input for each width.
    clean_edge_counts : numpy.ndarray of int or None
        Edges of the noise-free signal for each width.
    missed_counts : numpy.ndarray of int or None
        Centre crossings of the noise-free signal it does not answer (points
        beyond the swing), see :func:`bandcalc.signal_check.edges.missed_transitions`.
    clean_crossing_count : int or None
        Centre crossings of the noise-free signal: the transitions wanted.
    mean_delays, max_delays : numpy.ndarray
        Mean and largest edge delay after the clean centre crossing, in s
        (NaN without a noise-free signal or without edges).
    """

    centre: float
    widths: np.ndarray
    edge_counts: np.ndarray
    clean_edge_counts: np.ndarray | None
    missed_counts: np.ndarray | None
    clean_crossing_count: int | None
    mean_delays: np.ndarray
    max_delays: np.ndarray

    @property
    def clean_switching(self) -> np.ndarray:
        """Per width, True where it gives one edge per wanted transition, no more.

        That is: as many edges as the noise-free signal gives (no chatter) and
        no missed transition. All False without a noise-free signal, where
        this cannot be judged.
        """
        if self.clean_edge_counts is None:
            return np.zeros(self.widths.size, dtype=bool)
        return (self.edge_counts == self.clean_edge_counts) & (self.missed_counts == 0)

    @property
    def best_index(self) -> int | None:
        """Index of the narrowest clean-switching width, or None."""
        ok = np.flatnonzero(self.clean_switching)
        if ok.size == 0:
            return None
        return int(ok[np.argmin(self.widths[ok])])

    @property
    def best_width(self) -> float | None:
        """Narrowest width giving one edge per transition, in V, or None."""
        i = self.best_index
        return None if i is None else float(self.widths[i])

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


def hysteresis_sweep(wave: Waveform, centre: float, widths: object, *,
                     inverting: bool = False, delay: float = 0.0,
                     rise_time: float = 0.0) -> Sweep:
    """Run ``wave`` through points ``centre +/- width / 2`` for each width.

    Parameters
    ----------
    wave : Waveform
        The input; delays and the best width need ``wave.clean``.
    centre : float
        Centre of the switching points, in V.
    widths : array_like
        Hysteresis widths to try, in V, each at least 0, up to ``MAX_WIDTHS``.
    inverting, delay, rise_time
        As for :func:`bandcalc.signal_check.edges.run_stage`.

    Returns
    -------
    Sweep
    """
    centre = real("centre", centre, unit="V")
    w = _widths(widths)
    delay = real("delay", delay, low=0.0, unit="s")
    rise_time = real("rise_time", rise_time, low=0.0, unit="s")
    counts = np.zeros(w.size, dtype=np.int64)
    mean_delays = np.full(w.size, np.nan)
    max_delays = np.full(w.size, np.nan)
    clean_counts = missed = crossings = None
    if wave.clean is not None:
        clean_counts = np.zeros(w.size, dtype=np.int64)
        missed = np.zeros(w.size, dtype=np.int64)
        cross_t, cross_d = centre_crossings(wave, centre)
        crossings = int(cross_t.size)
    for i, width in enumerate(w):
        upper, lower = centre + 0.5 * width, centre - 0.5 * width
        run = input_edges(wave, upper, lower)
        counts[i] = run.index.size
        if clean_counts is None:
            continue
        clean_switch = find_edges(wave.t, wave.clean, upper, lower).switch_times
        clean_counts[i] = clean_switch.size
        missed[i] = missed_transitions(cross_t, clean_switch)
        if run.index.size:
            d = edge_delays(run.times(bool(inverting), delay, rise_time), run.direction,
                            cross_t, cross_d)
            if np.isfinite(d).any():
                mean_delays[i] = np.nanmean(d)
                max_delays[i] = np.nanmax(d)
    return Sweep(centre=centre, widths=w, edge_counts=counts, clean_edge_counts=clean_counts,
                 missed_counts=missed, clean_crossing_count=crossings, mean_delays=mean_delays,
                 max_delays=max_delays)


def sweep_design(design: Design, wave: Waveform, widths: object | None = None) -> Sweep:
    """Sweep the hysteresis width about the design's own centre (see ``edges.run_points``).

    Default widths: 81 steps from 0 to twice the larger of the design's hysteresis and the
    noise's peak-to-peak (6.6 x RMS, see :mod:`bandcalc.signal_check.noise`).
    """
    upper, lower, inverting = run_points(design)
    if widths is None:
        top = 2.0 * max(upper - lower, noise_level(wave).peak_to_peak, 1e-6)
        widths = np.linspace(0.0, top, 81)
    return hysteresis_sweep(wave, 0.5 * (upper + lower), widths, inverting=inverting,
                            delay=design.comparator.delay, rise_time=output_rise_time(design))
