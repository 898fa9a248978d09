"""The stage over the whole range its input reaches, not only at its two switching points.

What fails in the field often happens away from the points: a pin driven past a rail by a signal
that reaches 12 V on a 5 V part, a pin outside the common-mode range where some comparators
reverse their output, an output level the receiving logic does not read, a resistor across
hundreds of volts, a stage that powers up inside its band.  This module finds them.

Where the pins go
-----------------
The comparator's output is high while V+ - V- is above its offset and low while it is below,
whatever the stage's kind; so at any input value the states the network can hold are the ones
whose own solution agrees with them (both inside the band, one outside).  Within one state every
node voltage is a monotonic function of the input (affine in the signal; a ratio of affine
functions of a thermistor's divider fraction), so its extremes over the range lie at the ends of
the range where the state holds: the ends of the input's range and the switching points.
:func:`samples` solves the network there, in each state that holds, and every check takes the
extremes of those samples: exact, not sampled on a grid.

A pin more than :data:`RAIL_MARGIN` beyond a rail is taken as held at the rail by its input
clamp (the diode's own drop neglected, which overstates the current a little): the clamp then
carries (V_open - V_rail) / R, V_open being the pin's voltage without the clamp and R the
network's Thevenin resistance at the pin (:func:`bandcalc.model.network.pin_resistances`), each
pin on its own.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from bandcalc.model.design import Design
from bandcalc.model.findings import Finding
from bandcalc.model.network import node_voltages, pin_resistances
from bandcalc.model.parts import parameters, part, resistors_of
from bandcalc.model.points import DesignPoints, input_range, stage_design, volts_for
from bandcalc.model.ratings import power_needed, rating_of, series_count, size_for
from bandcalc.model.units import format_si, format_value
from bandcalc.model.units import format_volts as _v

__all__ = ["INPUT_CURRENT_LIMIT", "RAIL_MARGIN", "Sample", "range_findings", "rating_findings", "rest_band",
           "samples"]

# Comparator data sheets commonly allow 1 mA to 10 mA, some 50 mA, through the input protection as
# an absolute maximum (from memory); 1 mA is the cautious default: give the part's own figure as
# comparator.input_current_limit.
INPUT_CURRENT_LIMIT = 1e-3
# Data sheets commonly allow an input up to 0.3 V beyond either rail as an absolute maximum, about
# where the input clamps start to conduct (from memory); closer than that a pin counts as at the
# rail (a bias current's microvolts past a rail the signal only reaches are not an overdrive).
RAIL_MARGIN = 0.3
_STATES = ("high", "low")


@dataclass(frozen=True)
class Sample:
    """The network at one input value in one output state that holds there."""

    at: float  # the input, in the design's unit
    point: str | None  # "upper" / "lower" at a switching point in the state the stage reaches it in
    # (the other state there, just after the switch, has None)
    state: str
    plus: float
    minus: float
    output: float
    plus_ohms: float  # Thevenin resistance the network presents to the + pin
    minus_ohms: float  # ... and to the - pin

    def pin(self, name: str) -> tuple[float, float]:
        """(volts, ohms) of the "+" or "-" pin."""
        return (self.plus, self.plus_ohms) if name == "+" else (self.minus, self.minus_ohms)


def samples(design: Design, points: DesignPoints) -> list[Sample]:
    """The network at the ends of the input's range and at the switching points inside it, in each
    output state that holds there (both at a switching point: the one the stage arrives in, and
    the one it switches to)."""
    low, high = input_range(design)
    # Each switching point in the design's unit's words ("upper" where the input rises through
    # it), with the state in which the stage arrives there.
    up, down = ("high", "low") if design.inverting else ("low", "high")
    where: list[tuple[float, str | None, str | None]] = [(low, None, None), (high, None, None)]
    for stage_point, x, state in (("upper", float(points.at_stage_upper), up),
                                  ("lower", float(points.at_stage_lower), down)):
        if math.isfinite(x) and low <= x <= high:
            name = stage_point if points.rises else {"upper": "lower", "lower": "upper"}[stage_point]
            where.append((x, name, state))
    offset = design.comparator.offset
    slack = 1e-9 * max(1.0, design.supply.span)
    out = []
    for x, name, arriving in where:
        stage = stage_design(design, x)
        p = parameters(stage)
        signal = float(volts_for(design, x)[0])
        for state in _STATES:
            nodes = node_voltages(stage, p, signal, state)
            above = float(nodes.plus) - float(nodes.minus) - offset
            if name is None and (above < -slack if state == "high" else above > slack):
                continue  # this state does not hold at this input
            r_plus, r_minus = pin_resistances(stage, p, state)
            out.append(Sample(x, name if state == arriving else None, state, float(nodes.plus),
                              float(nodes.minus), float(nodes.output), float(r_plus), float(r_minus)))
    return out


class _Where:
    """Words for where along the input's range something happens."""

    def __init__(self, design: Design) -> None:
        self.unit = design.unit

    def __call__(self, s: Sample) -> str:
        return f"with the input at {format_value(s.at, self.unit, 4)}"

    @staticmethod
    def point(name: str | None, what: str) -> str:
        return f" At the {name} switching point {what}." if name else ""


def _outside(volts: float, side: str, bound: float) -> bool:
    return volts > bound if side == "high" else volts < bound


def _clamp(design: Design, pin: str, side: str, s: Sample, point: str | None, where: _Where) -> Finding:
    volts, ohms = s.pin(pin)
    rail = "positive" if side == "high" else "negative"
    rail_volts = design.supply.positive if side == "high" else design.supply.negative
    over = abs(volts - rail_volts)
    given = design.comparator.input_current_limit
    limit = INPUT_CURRENT_LIMIT if given is None else given
    current = over / ohms if ohms > 0 else math.inf
    needed = over / limit
    text = (f"Input beyond a rail: the {pin} pin would reach {_v(volts)} {where(s)}, {_v(over)} beyond the "
            f"{rail} rail ({_v(rail_volts)}), where its input clamp holds it")
    if ohms <= 0:
        text += ("; nothing in the network limits the clamp current (no resistance ahead of the pin), "
                 "only what drives the pin does: keep that node inside the rails.")
    else:
        text += f": the clamp would carry about {format_si(current, 'A')} through {format_si(ohms, 'Ohm')}, "
        if current <= limit:
            text += f"within the {format_si(limit, 'A')} limit"
        else:
            text += (f"over the {format_si(limit, 'A')} limit: {format_si(needed - ohms, 'Ohm')} more in "
                     f"series ({format_si(needed, 'Ohm')} in all) would hold it there, or an external clamp "
                     f"can take the current")
        text += (" (comparator.input_current_limit)." if given is not None else " (a cautious default, "
                 "from memory: give the part's figure as comparator.input_current_limit).")
    text += (" Beyond a rail the pin is outside its common-mode range, where some comparators reverse "
             "their output (phase reversal); check the part's data sheet.")
    text += where.point(point, "the pin is beyond the rail too, so the stage cannot switch there")
    return Finding("input_beyond_rail", text, {
        "pin": pin, "rail": rail, "rail_volts": rail_volts, "volts": volts, "at": s.at, "unit": where.unit,
        "series_resistance": ohms, "clamp_current": current, "current_limit": limit,
        "added_resistance": max(0.0, needed - ohms), "switching_point": point})


def _common_mode(pin: str, side: str, s: Sample, limit: float, point: str | None, where: _Where) -> Finding:
    volts = s.pin(pin)[0]
    bound = f"down to {_v(limit)}" if side == "low" else f"up to {_v(limit)}"
    text = (f"Common-mode range: the {pin} pin reaches {_v(volts)} {where(s)}, "
            f"{'below' if side == 'low' else 'above'} the comparator's common-mode input range ({bound}). "
            f"Outside that range some comparators reverse their output (phase reversal) or switch late: "
            f"check the part's data sheet, or keep the pin inside the range (a divider or a clamp).")
    text += where.point(point, "the pin is outside it too, so that point is not guaranteed")
    return Finding("common_mode", text, {"pin": pin, "side": side, "volts": volts, "limit": limit,
                                         "at": s.at, "unit": where.unit, "switching_point": point})


def _pins(design: Design, found: list[Sample], where: _Where) -> list[Finding]:
    """Each pin past a rail, else outside the common-mode range, on either side, over the range;
    naming a switching point where the pin is outside there too."""
    cm = design.comparator
    bounds = (("high", design.supply.positive, cm.common_mode_high),
              ("low", design.supply.negative, cm.common_mode_low))
    out = []
    for pin in ("+", "-"):
        for side, rail, cm_limit in bounds:
            pick = max if side == "high" else min
            s = pick(found, key=lambda x: x.pin(pin)[0])  # noqa: B023 (used at once)
            volts = s.pin(pin)[0]
            past_rail = rail + (RAIL_MARGIN if side == "high" else -RAIL_MARGIN)
            clamped = _outside(volts, side, past_rail)
            limit = past_rail if clamped else cm_limit
            if limit is None or not _outside(volts, side, limit):
                continue
            point = next((x.point for x in found if x.point and _outside(x.pin(pin)[0], side, limit)), None)
            out.append(_clamp(design, pin, side, s, point, where) if clamped
                       else _common_mode(pin, side, s, limit, point, where))
    return out


def _differential(design: Design, found: list[Sample], where: _Where) -> list[Finding]:
    limit = design.comparator.differential_max
    if limit is None:
        return []
    s = max(found, key=lambda s: abs(s.plus - s.minus))
    diff = s.plus - s.minus
    if abs(diff) <= limit:
        return []
    text = (f"Differential input: the pins differ by up to {_v(abs(diff))} {where(s)} (+ pin {_v(s.plus)}, "
            f"- pin {_v(s.minus)}), beyond the {_v(limit)} the comparator takes between its inputs "
            f"(comparator.differential_max). "
            f"Some parts have diodes across their inputs that then conduct and load the network; limit the "
            f"difference (series resistance and a clamp) or choose a part that takes it.")
    return [Finding("differential_input", text,
                    {"volts": diff, "limit": limit, "at": s.at, "unit": where.unit})]


# Per output state: how a level misses, what the receiving input does with the threshold, the
# load's key for it, and what helps.
_LEVELS = {
    "high": ("falls to", "below", "needs to read a high", "logic_high_min",
             "A stronger pull-up, a lighter load or a buffer raises it."),
    "low": ("rises to", "above", "still reads as low", "logic_low_max",
            "An output that sinks closer to its rail, a lighter load or a buffer lowers it."),
}


def _logic_levels(design: Design, found: list[Sample], where: _Where) -> list[Finding]:
    """Each output level at its worst over the range against the receiving input's threshold."""
    load = design.load
    out: list[Finding] = []
    for state, (moves, side, reads, key, helps) in _LEVELS.items():
        threshold = None if load is None else getattr(load, key)
        reached = [s for s in found if s.state == state]
        if threshold is None or not reached:
            continue
        s = (min if state == "high" else max)(reached, key=lambda x: x.output)
        margin = s.output - threshold if state == "high" else threshold - s.output
        if margin < 0:
            out.append(Finding("logic_levels", (
                f"Logic levels: the output's {state} level {moves} {_v(s.output)} {where(s)}, {side} the "
                f"{_v(threshold)} the receiving input {reads} (load.{key}): short by {_v(-margin)}. {helps}"),
                {"output_state": state, "volts": s.output, "threshold": threshold, "margin": margin,
                 "at": s.at, "unit": where.unit}))
    return out


def rest_band(design: Design, points: DesignPoints) -> tuple[float, float] | None:
    """The part of the band (between the points, in the design's unit) the input can rest in, or
    None where it cannot (no band, or the band beyond the input's range).  A point that no input
    value reaches (NaN) leaves the band open on its side: the stage latches there."""
    upper, lower = float(points.upper), float(points.lower)
    if upper <= lower:  # no band (NaN compares false: the band is open on that side)
        return None
    low, high = input_range(design)
    inside = (max(low, lower) if math.isfinite(lower) else low,
              min(high, upper) if math.isfinite(upper) else high)
    return inside if inside[1] > inside[0] else None


def _power_up(design: Design, points: DesignPoints) -> list[Finding]:
    band = rest_band(design, points)
    if band is None:
        return []
    unit = design.unit
    text = (f"Power-up: the input can rest between {format_value(band[0], unit, 4)} and "
            f"{format_value(band[1], unit, 4)}, inside the band, where either output state holds. Which "
            f"one the stage starts in is not set by the network but by how the comparator and its supply "
            f"come up. Where it matters, force it: a small capacitor from one input to a rail that holds "
            f"that pin to one side while the supply rises, a power-on reset that holds the load or the "
            f"receiving logic "
            f"in its safe state until the supply has settled, or logic that ignores the output until then.")
    return [Finding("power_up", text, {"low": band[0], "high": band[1], "unit": unit}, level="note")]


def range_findings(design: Design, points: DesignPoints) -> list[Finding]:
    """Pins against the rails and the common-mode range, the differential input and the output
    levels against the receiving logic, over the whole range; and the power-up note."""
    found = samples(design, points)
    where = _Where(design)
    if not found:
        return _power_up(design, points)
    return (_pins(design, found, where) + _differential(design, found, where)
            + _logic_levels(design, found, where) + _power_up(design, points))


def rating_findings(design: Design, power: dict[str, float]) -> list[Finding]:
    """Each resistor's worst voltage and power over the range (from its worst power, ``power``)
    against its working voltage and its derated power rating (:mod:`bandcalc.model.ratings`)."""
    ohms = resistors_of(design)
    out = []
    for key, watts in power.items():
        if key not in ohms:
            continue
        rating, row = rating_of(design, key), part(key)
        name = f"{row.name} ({key}, {row.designator})"
        volts = math.sqrt(watts * ohms[key])
        if volts > rating.volts:
            n = series_count(volts, rating.volts)
            out.append(Finding("working_voltage", (
                f"Working voltage: the {name[0].lower() + name[1:]} sees up to {_v(volts)} over the input's "
                f"range, above the {_v(rating.volts)} working voltage it is taken to have ({rating.why}). "
                f"{n} in series would share it ({_v(volts / n)} each), or use a part rated for it and give "
                f"its figure as ratings.parts.{key}.working_voltage; across such voltages a small part's "
                f"own length is short for creepage."),
                {"part": key, "volts": volts, "rating": rating.volts, "in_series": n, "size": rating.size}))
        needed = power_needed(watts)
        if needed > rating.watts:
            bigger = size_for(volts, watts)
            fix = (f"a {bigger} would do (ratings.parts.{key}.size)" if bigger
                   else "use a power resistor, or share it between parts in series")
            out.append(Finding("power", (
                f"Power: the {name[0].lower() + name[1:]} dissipates up to {format_si(watts, 'W')} over the "
                f"input's range; derated twice (common practice) it needs {format_si(needed, 'W')}, above "
                f"the {format_si(rating.watts, 'W')} it is taken to have ({rating.why}): {fix}."),
                {"part": key, "watts": watts, "needed": needed, "rating": rating.watts, "size": rating.size,
                 "suggested_size": bigger}))
    return out
