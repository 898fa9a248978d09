"""From a recording to a design, in one flow.

Given a design (the stage as drawn: kind, supply, reference, which resistors), a recorded signal,
where the switching should be (the centre of the two points, or one of them), a target for false
edges and, optionally, a delay budget:

1. read the noise (RMS, effective bandwidth) and the hum (mains lines) from the recording's
   spectrum (:mod:`bandcalc.signal_check.spectrum`);
2. read the signal's slope where it crosses the wanted level, and how often it does, from the
   recording without its noise and hum (:func:`bandcalc.signal_check.noise.slow_part`);
3. for each filter time constant (or none, if a filter is not allowed), the narrowest hysteresis
   meeting the target and the delay it costs (:mod:`bandcalc.signal_check.hysteresis_choice`);
   the pair with the least delay is chosen, and refused where even that exceeds the budget;
4. a filter of that time constant: a capacitor from the E6 series and a resistor from E24 that,
   with the source and the stage's loading, give it (first principles: R C, the R that drives C);
5. the points for that hysteresis about the centre (or from the given point), fitted with
   standard values by the existing fit (:func:`bandcalc.fit.selection.fit`), the filter's resistor
   in place, so that its DC share of the source resistance is in the fit;
6. the false edges of the result checked again with its own pole and points.

The resulting design carries the noise, hum, slope and target in its ``signal`` section, and
each step in plain words at the end of its notes, so that its summary explains how it was made.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.fit.selection import FitResult, apply_candidate, fit
from bandcalc.model.design import Design, InputFilter
from bandcalc.model.input_filter import filter_pole
from bandcalc.model.network import input_load
from bandcalc.model.parts import parameters
from bandcalc.model.points import volts_for
from bandcalc.model.signal_settings import SignalSettings
from bandcalc.model.standard_values import nearest
from bandcalc.model.units import format_code, format_interval, format_si, format_value
from bandcalc.model.validation import real
from bandcalc.signal_check.hysteresis_choice import FilterTable, filter_table
from bandcalc.signal_check.noise import (
    Disturbance,
    FalseEdgeCheck,
    disturbance_of,
    false_edge_check,
    slow_part,
)
from bandcalc.signal_check.waveform import Waveform

__all__ = ["RecordingDesign", "design_from_recording"]

_FILTER_OHMS = 4.7e3  # the filter resistor aimed at before rounding the capacitor (our choice)
_CAPACITOR_SERIES = "E6"


@dataclass(frozen=True)
class RecordingDesign:
    """The result of :func:`design_from_recording`: the design, each step in words, and the figures
    behind them (the recording's disturbance, the slope and crossing rate, the table, the fit, the
    final check)."""

    design: Design
    steps: tuple[str, ...]
    disturbance: Disturbance
    slope: float
    crossings_per_second: float
    table: FilterTable
    chosen: int
    fit: FitResult
    check: FalseEdgeCheck


def _level(centre: float | None, upper: float | None, lower: float | None) -> tuple[str, float]:
    given = [(name, value) for name, value in (("centre", centre), ("upper", upper), ("lower", lower))
             if value is not None]
    if len(given) != 1:
        raise BandcalcError("give exactly one of the centre, the upper point or the lower point wanted")
    name, value = given[0]
    return name, real(name, value)


def _filter_parts(design: Design, tau: float, at: float) -> InputFilter:
    """A capacitor (E6) and resistor (E24) giving time constant ``tau`` with the source's resistance
    at watched value ``at`` and the stage's loading (the non-inverting stage's input network)."""
    source = float(volts_for(design, at)[1])
    load = float(input_load(design, parameters(design), "high"))
    c = float(nearest(_CAPACITOR_SERIES, tau / (source + _FILTER_OHMS)))
    drive = tau / c  # the resistance that must drive C
    series = drive if math.isinf(load) else (drive * load / (load - drive) if load > drive else math.inf)
    if not math.isfinite(series) or series - source < 0:
        raise BandcalcError(f"no filter resistor gives a time constant of {format_si(tau, 's')} here: the "
                            f"source ({format_si(source, 'Ohm')}) and the stage's loading leave no room")
    r = float(nearest("E24", series - source)) if series - source > 1.0 else 0.0
    return InputFilter(r, c)


def _steps_text(steps: list[str]) -> str:
    return "\n".join(f"{i}. {s}" for i, s in enumerate(steps, 1))


def design_from_recording(design: Design, wave: Waveform, *, centre: float | None = None,
                          upper: float | None = None, lower: float | None = None,
                          false_edges_per_year: float = 1.0, delay_budget: float | None = None,
                          allow_filter: bool = True, series: str = "E24", name: str = "",
                          min_ohms: float = 1e3, max_ohms: float = 10e6) -> RecordingDesign:
    """Choose the hysteresis (and a filter) for a recorded signal and fit standard values.

    Parameters
    ----------
    design : Design
        The stage as drawn; its resistor values are only a starting point for the fit.
    wave : Waveform
        The recording, in the design's unit (volts, or a front end's watched quantity).
    centre, upper, lower : float
        Exactly one: the centre of the two points wanted, or one point (the other follows from the
        hysteresis chosen).
    false_edges_per_year : float
        The target, above 0 (see :mod:`bandcalc.signal_check.hysteresis_choice`).
    delay_budget : float, optional
        Seconds allowed from the signal crossing the centre to the switching; refused where even
        the least delay exceeds it.
    allow_filter : bool
        Whether an input filter may be added (the design's own filter is replaced).
    series, min_ohms, max_ohms
        As for :func:`bandcalc.fit.selection.fit`.
    name : str
        The new design's name (default: the old one's, "from" the recording).
    """
    where, level = _level(centre, upper, lower)
    unit = design.unit
    v = lambda x: format_value(x, unit, 4)  # noqa: E731
    recording = Waveform(wave.t, wave.v)
    disturbance = disturbance_of(recording)
    noise, hum = disturbance.noise, disturbance.hum
    steps = [f"Read the recording ({len(wave):,} samples over {format_si(wave.duration, 's')}): noise "
             f"{v(noise.rms)} RMS with an effective bandwidth of {format_si(noise.bandwidth, 'Hz')} "
             f"(flat noise with the same crossings), hum {v(hum.amplitude)} at {hum.frequency:g} Hz"
             + "".join(f", {v(a)} at harmonic {k}" for k, a in hum.harmonics) + ", from its spectrum."]
    steps += list(disturbance.notes)
    slow = slow_part(recording, disturbance)
    slope, count = slow.crossings(level)
    if slope is None:
        raise BandcalcError(f"the recording never passes the {where} wanted, {v(level)}, by more than its "
                            f"noise (it runs from {v(float(slow.x.min()))} to {v(float(slow.x.max()))}); "
                            "give a level it passes")
    crossings = count / wave.duration
    steps.append(f"The signal passes {v(level)} at {format_value(slope, unit + '/s', 3)} (median of "
                 f"{count} passage(s), {crossings * 3600:.3g} an hour).")
    table = filter_table(noise, hum, slope, crossings_per_second=crossings,
                         false_edges_per_year=false_edges_per_year, delay_budget=delay_budget, unit=unit,
                         time_constants=None if allow_filter else np.array([0.0]))
    best = table.best_index
    h, tau, delay = (float(x[best]) for x in (table.hysteresis, table.time_constants, table.delays))
    if delay_budget is not None and delay > delay_budget:
        raise BandcalcError(f"no hysteresis{' and filter' if allow_filter else ''} keeps false edges to "
                            f"{false_edges_per_year:g} a year within the delay budget of "
                            f"{format_si(delay_budget, 's')}: the least delay is {format_si(delay, 's')} "
                            f"(hysteresis {v(h)}" + (f", filter {format_si(tau, 's')})" if tau else ")"))
    plain_h, plain_delay = float(table.hysteresis[0]), float(table.delays[0])
    steps.append(f"For at most {false_edges_per_year:g} false edge(s) a year, the narrowest hysteresis is "
                 f"{v(plain_h)} without a filter (delay {format_si(plain_delay, 's')})"
                 + (f"; over {table.time_constants.size - 1} filter time constants the least delay, "
                    f"{format_si(delay, 's')}, comes with {format_si(tau, 's')} and {v(h)}." if allow_filter
                    else "; no filter allowed."))
    points = {"centre": (level + 0.5 * h, level - 0.5 * h), "upper": (level, level - h),
              "lower": (level + h, level)}[where]
    staged = replace(design, filter=None)
    if tau > 0:
        staged = replace(staged, filter=_filter_parts(staged, tau, 0.5 * sum(points)))
    result = fit(staged, *points, series=series, min_ohms=min_ohms, max_ohms=max_ohms)
    if result.problems:
        raise BandcalcError("the fit cannot place the points " + f"{v(points[0])} and {v(points[1])}: "
                            + " ".join(result.problems))
    fitted = apply_candidate(result.design, result.candidates[0])
    if tau > 0:  # the stage's loading is now known: choose the resistor again and fit once more
        fitted = replace(fitted, filter=_filter_parts(replace(fitted, filter=None), tau, 0.5 * sum(points)))
        result = fit(fitted, *points, series=series, min_ohms=min_ohms, max_ohms=max_ohms)
        fitted = apply_candidate(result.design, result.candidates[0])
    top = result.candidates[0]
    steps.append(f"Points {v(points[0])} and {v(points[1])} fitted from {series}: "
                 + ", ".join(f"{k} {format_code(top.value(k))}" for k in result.fitted)
                 + f" (upper {v(top.upper)}, lower {v(top.lower)}).")
    pole = filter_pole(fitted)
    if pole is not None:
        resistor = format_code(fitted.filter.resistance) if fitted.filter.resistance else "no"
        capacitor = format_si(fitted.filter.capacitance, "F")
        steps.append(f"Input filter: {resistor} resistor and {capacitor} to ground; with the source "
                     f"and the stage's loading its pole is {format_si(pole.pole, 'Hz')} "
                     f"(time constant {format_si(pole.time_constant, 's')}).")
    check = false_edge_check(disturbance, top.upper, top.lower, pole=None if pole is None else pole.pole,
                             slope_upper=slope, slope_lower=slope, crossings_per_second=crossings, unit=unit)
    steps.append(f"Checked with these values: parked at a point, a false switching about once every "
                 f"{format_interval(check.mean_time_between)}; at each crossing "
                 f"{max(check.extra_upper or 0.0, check.extra_lower or 0.0):.2g} extra edges expected.")
    settings = SignalSettings(noise=noise.rms, noise_bandwidth=noise.bandwidth, hum=hum.amplitude,
                              hum_frequency=hum.frequency, hum_harmonics=hum.harmonics, slope=slope,
                              crossings_per_second=crossings, false_edges_per_year=false_edges_per_year,
                              delay_budget=delay_budget)
    notes = (design.notes.rstrip() + "\n\n" if design.notes.strip() else "") + \
        "Made from a recording:\n" + _steps_text(steps)
    made = replace(fitted, signal=settings, notes=notes,
                   name=name or (f"{design.name} (from a recording)" if design.name else "From a recording"))
    return RecordingDesign(design=made, steps=tuple(steps), disturbance=disturbance, slope=slope,
                           crossings_per_second=crossings, table=table, chosen=best, fit=result, check=check)
