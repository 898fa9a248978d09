"""When an output edge reaches what the output drives: the comparator's delay and the output stage.

From the instant the input crosses a switching point, an output edge takes

1. the comparator's propagation delay, as its data sheet gives it (``comparator.delay``, at an
   input overdrive of ``comparator.delay_overdrive``), plus, for an op-amp used as a comparator,
   its saturation recovery (``comparator.recovery``);
2. the output's own transition up to the receiving input's threshold: by default 50 % of the
   swing between the output's two levels (the midpoint a logic input is commonly taken to switch
   at, common practice); the receiving input's data-sheet thresholds where the design's ``load``
   gives them (``logic_high_min`` for rising edges, ``logic_low_max`` for falling ones), or
   thresholds in volts given to the call (``threshold_high``, ``threshold_low``):

   * an open-drain output rises as its pull-up charges ``output.load_capacitance``,
     V(t) = V_high - (V_high - V_low) exp(-t / (R_pullup C)), so it reaches V_th after
     R C ln((V_high - V_low) / (V_high - V_th)): R C ln 2 = 0.69 R C at 50 %, not the 10-90 % time
     2.2 R C (first-order step response, first principles); it falls through its switch, taken as
     ideal;
   * a push-pull output charges the load capacitance through ``output.resistance`` both ways; a
     load capacitance without an output resistance cannot be timed (an ideal source charges it at
     once) and is reported, not used;
   * an op-amp's output moves at most at ``comparator.slew_rate``: (V_th - V_from) / slew rate,
     added to the RC time (an upper estimate: the two overlap in a real part).

Where the signal overdrives the comparator's pins less than the overdrive its delay is stated at,
the delay is longer than the data sheet's figure (comparators slow down at small overdrive, common
practice); a finding says so.  The output levels are those the stage model gives (its loads
included); the pull-up's time constant uses the pull-up alone.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from bandcalc.model.design import Design, Load, OpenDrain
from bandcalc.model.operating import analyze
from bandcalc.model.points import design_points, pin_margin
from bandcalc.model.units import format_si, format_value

__all__ = ["OutputTiming", "output_timing"]


@dataclass(frozen=True)
class OutputTiming:
    """Times (s) added to output edges after the input crosses a point, and findings.

    ``delay`` to every edge (propagation delay and recovery), ``rise`` / ``fall`` to rising /
    falling output edges (the output reaching the threshold), ``threshold_high`` /
    ``threshold_low`` the volts each edge is timed at.
    """

    delay: float
    rise: float
    fall: float
    threshold_high: float
    threshold_low: float
    findings: tuple[str, ...]


def _levels(design: Design) -> tuple[float, float]:
    """The output's low and high levels (V) as the stage model gives them at the switching points
    (:func:`bandcalc.model.operating.analyze`), loads included."""
    a = analyze(design)
    return a.output_low, a.output_high


def _rc_time(tau: float, start: float, target: float, threshold: float) -> float:
    """Time for an RC charge from ``start`` toward ``target`` to reach ``threshold``."""
    if tau == 0.0:
        return 0.0
    return tau * math.log((target - start) / (target - threshold))


def _overdrive_findings(design: Design, reach: tuple[float, float] | None) -> list[str]:
    """Where the signal overdrives the pins less than the data sheet's delay is stated at."""
    stated = design.comparator.delay_overdrive
    if stated is None or reach is None:
        return []
    pts = design_points(design)
    up_state, low_state = ("high", "low") if design.inverting else ("low", "high")
    if not pts.rises:
        up_state, low_state = low_state, up_state
    out = []
    for name, x, state, beyond in (("upper", reach[1], up_state, reach[1] - float(pts.upper)),
                                   ("lower", reach[0], low_state, float(pts.lower) - reach[0])):
        if beyond <= 0:
            continue  # the signal never passes this point: a missed crossing, reported elsewhere
        overdrive = abs(float(pin_margin(design, x, state)))
        if overdrive < stated:
            out.append(
                f"At the {name} point the signal overdrives the comparator by only "
                f"{format_si(overdrive, 'V')} at its pins (it goes {format_value(beyond, design.unit, 3)} "
                f"past the point), less than the {format_si(stated, 'V')} its "
                f"{format_si(design.comparator.delay, 's')} delay is stated at: expect a longer delay.")
    return out


def output_timing(design: Design, reach: tuple[float, float] | None = None, *,
                  threshold_low: float | None = None, threshold_high: float | None = None) -> OutputTiming:
    """Delays and transition times of the design's output edges (see the module's docstring).

    Parameters
    ----------
    design : Design
    reach : (lowest, highest) of the signal, in the design's unit, optional
        How far the signal goes; with ``comparator.delay_overdrive`` it gives the overdrive finding.
    threshold_low, threshold_high : float, optional
        Volts at which the receiving input reads low / high (default: the design's
        ``load.logic_low_max`` / ``load.logic_high_min``, else half the output's swing).
    """
    comp, out, load = design.comparator, design.output, design.load or Load()
    threshold_high = load.logic_high_min if threshold_high is None else threshold_high
    threshold_low = load.logic_low_max if threshold_low is None else threshold_low
    low, high = _levels(design)
    middle = 0.5 * (low + high)
    th_high = middle if threshold_high is None else threshold_high
    th_low = middle if threshold_low is None else threshold_low
    findings = _overdrive_findings(design, reach)
    for name, th in (("rising", th_high), ("falling", th_low)):
        if not low < th < high:
            findings.append(f"The {name} edge's threshold, {format_si(th, 'V')}, is not between the output's "
                            f"levels ({format_si(low, 'V')} and {format_si(high, 'V')}): the receiving input "
                            "may never see that edge; timed at half the swing instead.")
    th_high = th_high if low < th_high < high else middle
    th_low = th_low if low < th_low < high else middle
    if isinstance(out, OpenDrain):
        rise = _rc_time(out.pullup * out.load_capacitance, low, high, th_high)
        fall = 0.0
    else:
        tau = out.resistance * out.load_capacitance
        if out.load_capacitance > 0 and out.resistance == 0:
            findings.append(f"output.load_capacitance ({format_si(out.load_capacitance, 'F')}) is given but "
                            "output.resistance is 0 ohm: an ideal output charges it at once, so it is not "
                            "used; give the output resistance from the data sheet to time the edges.")
        rise = _rc_time(tau, low, high, th_high)
        fall = _rc_time(tau, high, low, th_low)
    if comp.slew_rate is not None:
        rise += (th_high - low) / comp.slew_rate
        fall += (high - th_low) / comp.slew_rate
    delay = comp.delay + (comp.recovery or 0.0)
    return OutputTiming(delay=delay, rise=rise, fall=fall, threshold_high=th_high, threshold_low=th_low,
                        findings=tuple(findings))
