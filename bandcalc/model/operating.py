"""Analysis of one design: switching points, levels, currents, power, findings and cautions.

The stage is analysed as it sees its input at each switching point
(:func:`bandcalc.model.points.stage_design`: a front end folded into the source), and both points
are reported in the design's unit (:attr:`Analysis.points`) as well as in the stage's volts.
Findings (:class:`~bandcalc.model.findings.Finding`: a kind, a sentence and its numbers) cover the
points themselves and, through :mod:`bandcalc.model.range_checks`, the whole range the input
reaches; cautions are the usual words for designs that can hurt someone.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

from bandcalc.model.design import Design, DividerReference, OpenDrain
from bandcalc.model.findings import Finding, finding_to_dict
from bandcalc.model.front_end import SELF_HEATING_LIMIT, ThermistorFrontEnd
from bandcalc.model.network import (
    Nodes,
    TwoPoints,
    minus_pin_current,
    node_voltages,
    signal_path,
    switching_points,
)
from bandcalc.model.parts import parameters, resistors_of
from bandcalc.model.points import (
    DesignPoints,
    design_points,
    front_end_power,
    input_range,
    stage_design,
    volts_for,
)
from bandcalc.model.range_checks import range_findings, rating_findings, rest_band
from bandcalc.model.units import format_si, format_value
from bandcalc.model.units import format_volts as _v

__all__ = [
    "HAZARD_VOLTS",
    "LEAKAGE_OHMS",
    "Analysis",
    "OperatingPoint",
    "analysis_to_dict",
    "analyze",
    "branch_currents",
    "is_protective",
]

# Above about 1 Mohm, board leakage and bias current start to matter (common practice).
LEAKAGE_OHMS = 1e6
# A pull-up well under a tenth of the feedback resistor keeps the high level close to the
# pull-up voltage (common practice).
PULLUP_RATIO = 0.1
# Voltages above about 50 V call for the usual cautions (extra-low-voltage limits of IEC 61140 and
# IEC 60364-4-41, from memory: 50 V a.c. / 120 V ripple-free d.c.; 50 V is the conservative figure).
HAZARD_VOLTS = 50.0


def branch_currents(design: Design, nodes: Nodes, signal: float, state: str) -> dict[str, float]:
    """Current (A) through each resistor of the network, keyed by design-file position.

    Signs follow the listed direction: input from the signal to the + pin, feedback from the
    output to the + pin, legs from their far end to the + pin, divider from the positive rail
    down, pull-up from its supply into the output, load from the output into the load.
    """
    p = parameters(design)
    r = design.resistors
    vp, vn = design.supply.positive, design.supply.negative
    plus = float(nodes.plus)
    cur: dict[str, float] = {}
    drawn = (signal - plus) / signal_path(p) if not design.inverting else float(minus_pin_current(p))
    if design.filter is not None and design.filter.resistance > 0:
        cur["filter.resistance"] = drawn
    if r.input is not None:
        cur["input"] = drawn
    cur["feedback"] = (float(nodes.output) - plus) / r.feedback
    far = {"to_positive": vp, "to_negative": vn, "to_ground": 0.0, "to_reference": float(nodes.reference)}
    for key, volts in far.items():
        if getattr(r, key) is not None:
            cur[key] = (volts - plus) / getattr(r, key)
    if isinstance(design.reference, DividerReference):
        cur["reference.top"] = (vp - float(nodes.reference)) / design.reference.top
        cur["reference.bottom"] = (float(nodes.reference) - vn) / design.reference.bottom
    if isinstance(design.output, OpenDrain):
        pu_volts = p.get("output.pullup_volts", vp)
        cur["output.pullup"] = (pu_volts - float(nodes.output)) / design.output.pullup
    if "load.resistance" in p:
        cur["load.resistance"] = (float(nodes.output) - p["load.volts"]) / p["load.resistance"]
    return cur


def _rail_currents(design: Design, cur: dict[str, float]) -> dict[str, float]:
    """Current (A) flowing out of each rail into the network (negative: the rail sinks it)."""
    pullup_on_rail = isinstance(design.output, OpenDrain) and design.output.pullup_volts is None
    pos = cur.get("to_positive", 0.0) + cur.get("reference.top", 0.0)
    pos += cur.get("output.pullup", 0.0) if pullup_on_rail else 0.0
    neg = cur.get("to_negative", 0.0) - cur.get("reference.bottom", 0.0)
    out = {"positive": pos, "negative": neg}
    if "output.pullup" in cur and not pullup_on_rail:
        out["pullup_supply"] = cur["output.pullup"]
    if "load.resistance" in cur:  # the load's own voltage takes what the output drives into it
        out["load_supply"] = -cur["load.resistance"]
    return out


@dataclass(frozen=True)
class OperatingPoint:
    """The network just before the stage switches at one point."""

    signal: float
    state: str  # output state before switching: "high" or "low"
    plus: float
    minus: float
    output: float
    currents: dict[str, float]
    rails: dict[str, float]


@dataclass(frozen=True)
class Analysis(TwoPoints):
    """Everything bandcalc tells about one design, in SI units.

    ``upper`` and ``lower`` are the stage's points in volts of its source; ``points`` holds them in
    the design's unit (the watched quantity of a front end) as well.
    """

    design: Design
    upper: float
    lower: float
    output_high: float
    output_low: float
    at_upper: OperatingPoint
    at_lower: OperatingPoint
    power: dict[str, float]
    findings: tuple[Finding, ...]
    cautions: tuple[str, ...]
    points: DesignPoints  # the points in the design's unit, with the stage's volts

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings as sentences, in order."""
        return tuple(f.message for f in self.findings)

    @property
    def rising_output(self) -> str:
        """Output state once the input (in the design's unit) has risen through its upper point."""
        crossed = self.at_upper if self.points.rises else self.at_lower
        return "low" if crossed.state == "high" else "high"

    @property
    def positive_rail_current(self) -> float:
        """Largest current drawn from the positive rail at either switching point (A)."""
        return max(self.at_upper.rails["positive"], self.at_lower.rails["positive"])


def _operating_point(design: Design, signal: float, state: str, nodes: Nodes) -> OperatingPoint:
    cur = branch_currents(design, nodes, signal, state)
    return OperatingPoint(signal=signal, state=state, plus=float(nodes.plus), minus=float(nodes.minus),
                          output=float(nodes.output), currents=cur, rails=_rail_currents(design, cur))


def _worst_power(design: Design) -> dict[str, float]:
    """Largest power (W) in each resistor over the signal's range, in either output state.

    Every current is linear in the signal within a state, so the largest magnitude is at an
    end of the range; taking both states at both ends is conservative.
    """
    p = parameters(design)
    ohms = resistors_of(design)
    worst = dict.fromkeys(ohms, 0.0)
    for signal in design.signal_range():
        for state in ("high", "low"):
            nodes = node_voltages(design, p, signal, state)
            for key, amps in branch_currents(design, nodes, signal, state).items():
                if key in ohms:  # the design's own resistors (not the load it drives)
                    worst[key] = max(worst[key], amps * amps * ohms[key])
    return worst


def _findings(design: Design, a: Analysis) -> list[Finding]:
    """Findings on the switching points and the network (``design``: the stage at its upper point)."""
    out: list[Finding] = []
    if a.hysteresis <= 1e-12 * max(1.0, design.supply.span):
        out.append(Finding("no_hysteresis", (
            f"No hysteresis: the upper point ({_v(a.upper)}) is not above the lower point ({_v(a.lower)}); "
            f"the output levels must differ and the feedback must reach the + pin."),
            {"upper": a.upper, "lower": a.lower}))
    out += _latching(a)
    if isinstance(design.output, OpenDrain):
        pu = design.output
        pu_volts = design.supply.positive if pu.pullup_volts is None else pu.pullup_volts
        if pu.pullup > PULLUP_RATIO * design.resistors.feedback:
            out.append(Finding("weak_pullup", (
                f"Weak pull-up: {format_si(pu.pullup, 'Ohm')} is more than a tenth of the feedback "
                f"resistor ({format_si(design.resistors.feedback, 'Ohm')}); the output only reaches "
                f"{_v(a.output_high)} of the {_v(pu_volts)} pull-up supply when high, and that level moves "
                f"with the feedback load."),
                {"pullup": pu.pullup, "feedback": design.resistors.feedback, "output_high": a.output_high,
                 "pullup_volts": pu_volts}))
    for key, ohms in resistors_of(a.design).items():
        if ohms > LEAKAGE_OHMS:
            out.append(Finding("high_value", (
                f"High value: {key} is {format_si(ohms, 'Ohm')}, above 1 MΩ; board leakage and bias "
                f"current start to move the switching points (clean, coated boards help)."),
                {"part": key, "ohms": ohms}))
    return out


def _latching(a: Analysis) -> list[Finding]:
    """A point the input never reaches (judged in the design's unit): the stage latches."""
    w, fe = a.points, a.design.front_end
    low, high = input_range(a.design)
    fmt = lambda x: format_value(x, w.unit)  # noqa: E731
    out: list[Finding] = []
    stage_order = (a.at_upper, a.at_lower) if w.rises else (a.at_lower, a.at_upper)
    for name, x, op in zip(("upper", "lower"), (float(w.upper), float(w.lower)), stage_order, strict=True):
        at_stage = "" if w.unit == "V" and fe is None else f" ({_v(op.signal)} at the stage)"
        if math.isnan(x):
            where = (f"Latches: no value the input reaches switches the stage at its {name} point{at_stage}")
        elif x > high:
            where = (f"Latches: the {name} switching point {fmt(x)}{at_stage} is above the highest value "
                     f"the input reaches ({fmt(high)})")
        elif x < low:
            where = (f"Latches: the {name} switching point {fmt(x)}{at_stage} is below the lowest value "
                     f"the input reaches ({fmt(low)})")
        else:
            continue
        out.append(Finding("latches", f"{where}; once the output is {op.state} it stays {op.state}.",
                           {"point": name, "value": x, "unit": w.unit, "range_low": low, "range_high": high,
                            "stuck_state": op.state}))
    return out


def _self_heating(design: Design, a: Analysis) -> list[Finding]:
    """A thermistor warmed by its own current at the switching points."""
    w, fe = a.points, design.front_end
    fmt = lambda x: format_value(x, w.unit)  # noqa: E731
    out: list[Finding] = []
    if isinstance(fe, ThermistorFrontEnd):
        heat = [(front_end_power(design, float(x), op.state)["front_end.thermistor"], float(x))
                for x, op in ((w.at_stage_upper, a.at_upper), (w.at_stage_lower, a.at_lower))
                if not math.isnan(float(x))]
        watts, x = max(heat, default=(0.0, math.nan))
        rise = watts / fe.dissipation_constant
        if rise > SELF_HEATING_LIMIT:
            out.append(Finding("self_heating", (
                f"Self-heating: at its switching points the thermistor dissipates up to "
                f"{format_si(watts, 'W')} (at {fmt(x)}); with a dissipation constant of "
                f"{format_si(fe.dissipation_constant, 'W/K')} that warms it about {rise:.2g} K above "
                f"its surroundings (more than {SELF_HEATING_LIMIT} K), so the points are reached "
                f"about that much cooler. A larger fixed resistor or a lower excitation reduces it."),
                {"watts": watts, "at": x, "unit": w.unit, "rise_kelvin": rise}))
    return out


def _cautions(design: Design, points: DesignPoints) -> list[str]:
    levels = [design.supply.positive, design.supply.negative, *design.signal_range()]
    if points.unit == "V":  # the input is a voltage (a measured one, through a front end)
        levels += [*input_range(design), float(points.upper), float(points.lower)]
    if isinstance(design.output, OpenDrain) and design.output.pullup_volts is not None:
        levels.append(design.output.pullup_volts)
    if design.load is not None and design.load.resistance is not None:
        levels.append(design.load.volts)
    top = max(abs(v) for v in levels if not math.isnan(v))
    out = []
    if top > HAZARD_VOLTS:
        out.append(f"Hazardous voltage: this design works with up to {_v(top)}. {_DEFER}")
        out.append(f"Creepage and clearance: conductors on this board may differ by up to {_v(top)}. The "
                   f"spacing between them, along the board's surface and through air, and across each part "
                   f"that bridges the voltage, follows IEC 60664-1 (insulation coordination for low-voltage "
                   f"equipment; from memory) for the board's pollution degree and overvoltage category, or "
                   f"the end product's own safety standard where one applies; defer to it and to licensed "
                   f"practice. Slots, coating and parts in series lengthen the paths.")
    protective = is_protective(design)
    if protective:
        out.append("Protective function: this stage guards people or property (a disconnect, cut-off or "
                   f"alarm). {_DEFER} Test the finished circuit at its limits before relying on it.")
    band = rest_band(design, points)
    if protective and band is not None:
        out.append(f"Power-up of a protective stage: between {format_value(band[0], points.unit, 4)} and "
                   f"{format_value(band[1], points.unit, 4)} the network does not set the output's first "
                   f"state, so the stage may come up not protecting. Make the safe state the one it starts "
                   f"in (a power-on reset or a capacitor that holds one input to one side while the supply "
                   f"rises, a load that is off until told otherwise) and test power-up at both ends of the "
                   f"band.")
    return out


_DEFER = ("bandcalc is a design aid, not a safety-rated protection; follow local codes and licensed "
          "practice, and use certified protective parts where a standard requires them.")
# Words that mark a stage guarding people or property when the design does not say (common
# practice: battery protection, heater cut-off, leak and gas alarms); matching errs on the side of
# showing the caution, but only whole words count ("strip" does not hold "trip"). Hyphens and
# spaces are alike ("cut-off" is "cut off"); a plural or -ed / -ing form of a word counts too.
PROTECTIVE_WORDS = ("protect", "protection", "protective", "protector", "disconnect", "cut off",
                    "cutoff", "overvoltage", "over voltage", "undervoltage", "under voltage",
                    "overtemperature", "over temperature", "overheat", "over heat", "overcurrent",
                    "over current", "overload", "over load", "overdischarge", "over discharge",
                    "deep discharge", "short circuit", "heater", "battery", "batteries", "charger",
                    "mains", "safety", "alarm", "trip", "tripped", "tripping", "shutdown", "shut down",
                    "smoke", "gas", "leak", "leakage", "flood", "fire", "flame", "emergency",
                    "interlock", "ground fault", "earth fault", "carbon monoxide", "brownout",
                    "brown out", "watchdog", "fuse", "guard")
_PROTECTIVE = re.compile(r"\b(?:" + "|".join(re.escape(w).replace(r"\ ", " ") for w in PROTECTIVE_WORDS)
                         + r")(?:s|es|ed|d|ing)?\b")


def is_protective(design: Design) -> bool:
    """Whether the stage guards people or property: the design's ``protective`` flag, else its words
    (:data:`PROTECTIVE_WORDS`, whole words of the name and notes)."""
    if design.protective is not None:
        return design.protective
    text = " ".join(re.sub(r"[-_/]", " ", f"{design.name} {design.notes}".lower()).split())
    return _PROTECTIVE.search(text) is not None


def _stage_at(design: Design, x: float, which: str) -> Design:
    """The stage as it sees the front end at watched value x; where no watched value switches
    it (x is NaN), at the end of the watched range that comes closest."""
    if not math.isnan(x):
        return stage_design(design, x)

    def miss(end: float) -> float:
        pts = switching_points(stage_design(design, end))
        return abs(float(getattr(pts, which)) - float(volts_for(design, end)[0]))

    return stage_design(design, min(input_range(design), key=miss))


def _power(design: Design, w: DesignPoints) -> dict[str, float]:
    """Worst power in each part, a front end's own included, over the input's range and at both
    points where the input reaches them (a front end's resistance, and so the stage's, may move
    with the input)."""
    worst: dict[str, float] = {}
    low, high = input_range(design)
    xs = [low, high, *(float(x) for x in (w.at_stage_upper, w.at_stage_lower))]
    for x in (x for x in xs if low <= x <= high):
        parts = [_worst_power(stage_design(design, x))]
        parts += [front_end_power(design, x, state) for state in ("high", "low")]
        for part in parts:
            for key, watts in part.items():
                worst[key] = max(worst.get(key, 0.0), watts)
    worst.pop("front_end.thermistor", None)  # its heating is judged at the points (findings)
    return worst


def analyze(design: Design) -> Analysis:
    """Analyse one design at its nominal values, in the stage's volts and in the design's unit."""
    points = design_points(design)
    stage_up = _stage_at(design, float(points.at_stage_upper), "upper")
    stage_low = _stage_at(design, float(points.at_stage_lower), "lower")
    pts_up, pts_low = switching_points(stage_up), switching_points(stage_low)
    upper, lower = float(pts_up.upper), float(pts_low.lower)
    at_upper = _operating_point(stage_up, upper, "high" if design.inverting else "low", pts_up.at_upper)
    at_lower = _operating_point(stage_low, lower, "low" if design.inverting else "high", pts_low.at_lower)
    by_state = {at_upper.state: at_upper.output, at_lower.state: at_lower.output}
    partial = Analysis(design=design, upper=upper, lower=lower, output_high=by_state["high"],
                       output_low=by_state["low"], at_upper=at_upper, at_lower=at_lower,
                       power=_power(design, points), findings=(), cautions=(), points=points)
    findings = (_findings(stage_up, partial) + _self_heating(design, partial) + range_findings(design, points)
                + rating_findings(design, partial.power))
    return replace(partial, findings=tuple(findings), cautions=tuple(_cautions(design, points)))


def analysis_to_dict(a: Analysis) -> dict:
    """Plain JSON-ready numbers (SI units) of an analysis."""

    def point(op: OperatingPoint) -> dict:
        return {"signal": op.signal, "output_state": op.state, "plus_pin": op.plus, "minus_pin": op.minus,
                "output": op.output, "currents": op.currents, "rail_currents": op.rails}

    out = {"name": a.design.name, "stage": a.design.stage, "upper": a.upper, "lower": a.lower,
           "hysteresis": a.hysteresis, "centre": a.centre, "output_high": a.output_high,
           "output_low": a.output_low, "at_upper": point(a.at_upper), "at_lower": point(a.at_lower),
           "power": a.power, "findings": [finding_to_dict(f) for f in a.findings],
           "warnings": list(a.warnings), "cautions": list(a.cautions), "protective": is_protective(a.design)}
    if a.design.front_end is not None:  # the points in the watched quantity too, under keys of their own
        w = a.points
        finite = lambda x: float(x) if math.isfinite(x) else None  # noqa: E731
        out |= {"upper_watched": finite(w.upper), "lower_watched": finite(w.lower), "watched_unit": w.unit,
                "watched_direction": "rises" if w.rises else "falls",
                "watched_rising_output": a.rising_output}
    return out
