"""The narrowest hysteresis that keeps false edges under a target, and the filter that costs least delay.

False edges per second, for hysteresis h (Rice's formula, :mod:`bandcalc.signal_check.false_edges`):

    F(h) = 2 max(parked down, parked up) + crossings per second x extra edges per crossing

The first term is the input parked at a point all the time between crossings (the worst case):
each false switching there comes back at once, two edges.  The second is the signal passing the
points, at its slope there, as often as it does.  F falls as h grows, so the narrowest h with
F(h) <= target is found by bisection.

A first-order filter of time constant tau ahead of the stage lowers the noise (and the hum) the
stage sees, so a narrower h meets the target, but a ramp through it lags by tau (first principles).
With the signal moving at slope k, an edge comes h / (2 k) after the centre crossing plus tau:
the table over time constants gives, for each, the narrowest h and that delay, and marks the pair
with the least delay.  The delay leaves out the comparator's own delay and the output's
transition, which do not depend on the choice.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.validation import real
from bandcalc.signal_check.disturbance import Hum, NoiseSpectrum
from bandcalc.signal_check.false_edges import SECONDS_PER_YEAR, extra_edges_per_crossing, parked_rate
from bandcalc.signal_check.noise import FalseEdgeCheck

__all__ = [
    "FilterTable",
    "false_edge_rate",
    "filter_table",
    "filter_table_for",
    "filter_table_to_dict",
    "narrowest_hysteresis",
]

_LOWEST = 1e-4  # the narrowest hysteresis tried, in noise RMS
_PRECISION = 1.01  # the bisection stops within 1 %
_STEPS = (1.0, 2.0, 5.0)  # time constants in 1-2-5 steps
_MOST_ROWS = 16


def false_edge_rate(noise: NoiseSpectrum, hum: Hum, hysteresis: np.ndarray | float, slope: float,
                    crossings_per_second: float) -> np.ndarray:
    """False edges per second for each hysteresis (noise and hum as at the stage): see the module."""
    h = np.atleast_1d(np.asarray(hysteresis, dtype=np.float64))
    parked = np.maximum(parked_rate(noise, h, hum), parked_rate(noise, h, hum, upward=True))
    out = 2.0 * parked
    if crossings_per_second > 0:
        out = out + crossings_per_second * extra_edges_per_crossing(noise, h, slope, hum)
    return out


def narrowest_hysteresis(noise: NoiseSpectrum, hum: Hum, slope: float, crossings_per_second: float,
                         target_per_second: float) -> float:
    """The narrowest hysteresis (signal's unit) with no more false edges per second than the target,
    to within 1 % (bisection on its logarithm; the rate falls as it grows)."""
    if noise.m0 == 0.0 and not hum.present:
        return 0.0

    def meets(h: float) -> bool:
        return bool(false_edge_rate(noise, hum, h, slope, crossings_per_second)[0] <= target_per_second)

    sigma = noise.rms_at_stage
    low, high = _LOWEST * (sigma or hum.peak), 40.0 * sigma + 2.0 * hum.peak  # e^-800 a second parked
    if not meets(high):
        raise BandcalcError("no hysteresis meets the false-edge target within 40 x the noise's RMS plus "
                            "the hum; check the target")
    if meets(low):
        return low
    while high > _PRECISION * low:
        middle = math.sqrt(low * high)
        low, high = (low, middle) if meets(middle) else (middle, high)
    return high


@dataclass(frozen=True)
class FilterTable:
    """Per filter time constant (``time_constants``, s; 0 = no filter): the noise's RMS at the
    stage, the narrowest hysteresis meeting the target and the delay at the points it costs.

    ``target_per_year``: false edges a year allowed; ``slope``: the signal's slope at the points
    (unit/s); ``crossings_per_second``; ``delay_budget`` (s, None if not given); ``unit``.
    """

    time_constants: np.ndarray
    noise_rms: np.ndarray
    hysteresis: np.ndarray
    delays: np.ndarray
    target_per_year: float
    slope: float
    crossings_per_second: float
    delay_budget: float | None
    unit: str

    @property
    def poles(self) -> np.ndarray:
        """Hz, infinite where there is no filter."""
        with np.errstate(divide="ignore"):
            return 1.0 / (2.0 * math.pi * self.time_constants)

    @property
    def best_index(self) -> int:
        """The row with the least delay."""
        return int(np.argmin(self.delays))

    @property
    def within_budget(self) -> np.ndarray:
        """Per row, True where its delay is within the budget (all True without one)."""
        if self.delay_budget is None:
            return np.ones(self.delays.size, dtype=bool)
        return self.delays <= self.delay_budget


def _time_constants(bandwidth: float, longest: float) -> np.ndarray:
    """0, then 1-2-5 steps from a pole at 10 x the noise's bandwidth up to ``longest``."""
    shortest = 1.0 / (2.0 * math.pi * 10.0 * bandwidth)
    out = [0.0]
    decade = 10.0 ** math.floor(math.log10(shortest))
    while len(out) < _MOST_ROWS:
        for step in _STEPS:
            tau = step * decade
            if shortest <= tau <= longest and len(out) < _MOST_ROWS:
                out.append(tau)
        decade *= 10.0
        if decade > longest:
            break
    return np.array(out)


def filter_table(noise: NoiseSpectrum, hum: Hum, slope: float, *, crossings_per_second: float = 0.0,
                 false_edges_per_year: float = 1.0, delay_budget: float | None = None,
                 time_constants: np.ndarray | None = None, unit: str = "V") -> FilterTable:
    """The narrowest hysteresis and its delay for each filter time constant (see the module).

    Parameters
    ----------
    noise, hum
        At the signal's source (ahead of any filter).
    slope : float
        The signal's slope at the points, unit/s, above 0.
    crossings_per_second : float
        How often the signal passes through the points (each passage once), at least 0.
    false_edges_per_year : float
        The target, above 0.
    delay_budget : float, optional
        Seconds allowed from the centre crossing to the switching; rows within it are marked.
    time_constants : array, optional
        Seconds (0: no filter); default 0 and 1-2-5 steps up to the delay without a filter.
    """
    slope = real("slope", slope, low=0.0, low_open=True)
    crossings = real("crossings_per_second", crossings_per_second, low=0.0)
    target = real("false_edges_per_year", false_edges_per_year, low=0.0, low_open=True) / SECONDS_PER_YEAR
    budget = None if delay_budget is None else real("delay_budget", delay_budget, low=0.0, unit="s")
    if time_constants is None:
        plain = narrowest_hysteresis(noise, hum, slope, crossings, target)
        time_constants = _time_constants(noise.bandwidth, plain / (2.0 * slope))
    taus = np.asarray(time_constants, dtype=np.float64)
    rms, widths = np.empty(taus.size), np.empty(taus.size)
    for i, tau in enumerate(taus):
        at_stage = noise.filtered(None if tau == 0 else 1.0 / (2.0 * math.pi * tau))
        rms[i] = at_stage.rms_at_stage
        widths[i] = narrowest_hysteresis(at_stage, hum.filtered(at_stage), slope, crossings, target)
    return FilterTable(time_constants=taus, noise_rms=rms, hysteresis=widths,
                       delays=widths / (2.0 * slope) + taus, target_per_year=false_edges_per_year,
                       slope=slope, crossings_per_second=crossings, delay_budget=budget, unit=unit)


def filter_table_for(check: FalseEdgeCheck, false_edges_per_year: float, delay_budget: float | None = None,
                     *, slope: float | None = None, crossings_per_second: float = 0.0) -> FilterTable:
    """The table for the signal a check was made on: its noise and hum at the source, the slower of
    its slopes at the points and how often it passes them; where the signal does not pass the
    points, ``slope`` and ``crossings_per_second`` as given (a design's signal settings)."""
    if check.slope is not None:
        slope, crossings_per_second = check.slope, check.crossings_per_second
    if slope is None:
        raise BandcalcError("the signal does not pass the switching points at the stage, so its slope there "
                            "is not known; run a signal that passes them, or give signal.slope in the design")
    return filter_table(check.source.noise, check.source.hum, slope,
                        crossings_per_second=crossings_per_second, false_edges_per_year=false_edges_per_year,
                        delay_budget=delay_budget, unit=check.unit)


def filter_table_to_dict(table: FilterTable) -> dict:
    """JSON-ready (strict: no infinity; a row without a filter has ``pole`` null)."""
    rows = [{"time_constant": float(tau), "pole": None if tau == 0 else float(pole),
             "noise_rms_at_stage": float(rms), "hysteresis": float(h), "delay": float(d),
             "within_budget": bool(ok)}
            for tau, pole, rms, h, d, ok in zip(table.time_constants, table.poles, table.noise_rms,
                                                table.hysteresis, table.delays, table.within_budget,
                                                strict=True)]
    return {"unit": table.unit, "false_edges_per_year": table.target_per_year, "slope": table.slope,
            "crossings_per_second": table.crossings_per_second, "delay_budget": table.delay_budget,
            "rows": rows, "least_delay": table.best_index}
