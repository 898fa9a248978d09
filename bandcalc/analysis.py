"""Analysis of one design: switching points, levels, currents, power and plain-sentence findings."""

from __future__ import annotations

from dataclasses import dataclass, replace

from .design import Design, DividerReference, OpenDrain
from .network import Nodes, node_voltages, parameters, switching_points
from .units import format_si

__all__ = [
    "HAZARD_VOLTS",
    "LEAKAGE_OHMS",
    "Analysis",
    "OperatingPoint",
    "analysis_to_dict",
    "analyze",
    "branch_currents",
]

# Above about 1 Mohm, board leakage and bias current start to matter (common practice).
LEAKAGE_OHMS = 1e6
# A pull-up well under a tenth of the feedback resistor keeps the high level close to the
# pull-up voltage (common practice).
PULLUP_RATIO = 0.1
# Small chip resistors (0603) are commonly rated 0.1 W (common practice; check the part).
POWER_LIMIT = 0.1
# Voltages above about 50 V call for the usual cautions (DOMAIN.md; extra-low-voltage limits
# in IEC 61140 are 50 V a.c. / 120 V d.c. ripple-free: 50 V is the conservative figure).
HAZARD_VOLTS = 50.0


def _v(x: float) -> str:
    return format_si(x, "V", 4)


def branch_currents(design: Design, nodes: Nodes, signal: float, state: str) -> dict[str, float]:
    """Current (A) through each resistor of the network, keyed by design-file position.

    Signs follow the listed direction: input from the signal to the + pin, feedback from the
    output to the + pin, legs from their far end to the + pin, divider from the positive rail
    down, pull-up from its supply into the output.
    """
    p = parameters(design)
    r = design.resistors
    vp, vn = design.supply.positive, design.supply.negative
    plus = float(nodes.plus)
    cur: dict[str, float] = {}
    if r.input is not None:
        cur["input"] = ((signal - plus) / (r.input + design.source.resistance) if not design.inverting
                        else -design.comparator.bias_current)
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
    return cur


def _ohms(design: Design) -> dict[str, float]:
    ohms = dict(design.resistors.present())
    if isinstance(design.reference, DividerReference):
        ohms["reference.top"] = design.reference.top
        ohms["reference.bottom"] = design.reference.bottom
    if isinstance(design.output, OpenDrain):
        ohms["output.pullup"] = design.output.pullup
    return ohms


def _rail_currents(design: Design, cur: dict[str, float]) -> dict[str, float]:
    """Current (A) flowing out of each rail into the network (negative: the rail sinks it)."""
    pullup_on_rail = isinstance(design.output, OpenDrain) and design.output.pullup_volts is None
    pos = cur.get("to_positive", 0.0) + cur.get("reference.top", 0.0)
    pos += cur.get("output.pullup", 0.0) if pullup_on_rail else 0.0
    neg = cur.get("to_negative", 0.0) - cur.get("reference.bottom", 0.0)
    out = {"positive": pos, "negative": neg}
    if "output.pullup" in cur and not pullup_on_rail:
        out["pullup_supply"] = cur["output.pullup"]
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
class Analysis:
    """Everything bandcalc tells about one design, in SI units."""

    design: Design
    upper: float
    lower: float
    output_high: float
    output_low: float
    at_upper: OperatingPoint
    at_lower: OperatingPoint
    power: dict[str, float]
    findings: tuple[str, ...]
    cautions: tuple[str, ...]

    @property
    def hysteresis(self) -> float:
        return self.upper - self.lower

    @property
    def centre(self) -> float:
        return 0.5 * (self.upper + self.lower)

    @property
    def network_current(self) -> float:
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
    ohms = _ohms(design)
    worst = dict.fromkeys(ohms, 0.0)
    for signal in design.signal_range():
        for state in ("high", "low"):
            nodes = node_voltages(design, p, signal, state)
            for key, amps in branch_currents(design, nodes, signal, state).items():
                worst[key] = max(worst[key], amps * amps * ohms[key])
    return worst


def _findings(design: Design, a: Analysis) -> list[str]:
    out: list[str] = []
    low, high = design.signal_range()
    if a.hysteresis <= 1e-12 * max(1.0, design.supply.span):
        out.append(f"No hysteresis: the upper point ({_v(a.upper)}) is not above the lower point "
                   f"({_v(a.lower)}); the output levels must differ and the feedback must reach the + pin.")
    up_state, low_state = a.at_upper.state, a.at_lower.state
    if a.upper > high:
        out.append(f"Latches: the upper switching point {_v(a.upper)} is above the highest signal the "
                   f"stage can see ({_v(high)}); a rising signal never switches it, so the output stays "
                   f"{up_state}.")
    if a.lower < low:
        out.append(f"Latches: the lower switching point {_v(a.lower)} is below the lowest signal the "
                   f"stage can see ({_v(low)}); once switched, a falling signal never switches it back, "
                   f"so the output stays {low_state}.")
    rails = (design.supply.negative, design.supply.positive)
    cm = design.comparator
    for name, op in (("upper", a.at_upper), ("lower", a.at_lower)):
        for pin, volts in (("+", op.plus), ("-", op.minus)):
            if not rails[0] <= volts <= rails[1]:
                out.append(f"At the {name} point the {pin} pin would sit at {_v(volts)}, beyond the rails "
                           f"({_v(rails[0])} to {_v(rails[1])}); the input protection clamps it and the "
                           f"stage cannot switch there.")
            elif ((cm.common_mode_low is not None and volts < cm.common_mode_low)
                  or (cm.common_mode_high is not None and volts > cm.common_mode_high)):
                lo = _v(cm.common_mode_low) if cm.common_mode_low is not None else "the negative rail"
                hi = _v(cm.common_mode_high) if cm.common_mode_high is not None else "the positive rail"
                out.append(f"At the {name} point the {pin} pin sits at {_v(volts)}, outside the comparator's "
                           f"common-mode input range ({lo} to {hi}); the switching point is not guaranteed.")
    if isinstance(design.output, OpenDrain):
        pu = design.output
        pu_volts = design.supply.positive if pu.pullup_volts is None else pu.pullup_volts
        if pu.pullup > PULLUP_RATIO * design.resistors.feedback:
            out.append(f"Weak pull-up: {format_si(pu.pullup, 'Ohm')} is more than a tenth of the feedback "
                       f"resistor ({format_si(design.resistors.feedback, 'Ohm')}); the output only reaches "
                       f"{_v(a.output_high)} of the {_v(pu_volts)} pull-up supply when high, and that level "
                       f"moves with the feedback load.")
    for key, ohms in _ohms(design).items():
        if ohms > LEAKAGE_OHMS:
            out.append(f"High value: {key} is {format_si(ohms, 'Ohm')}, above 1 MOhm; board leakage and "
                       f"bias current start to move the switching points (clean, coated boards help).")
    for key, watts in a.power.items():
        if watts > POWER_LIMIT:
            out.append(f"Power: {key} dissipates up to {format_si(watts, 'W')} over the signal range; "
                       f"small chip resistors are commonly rated 0.1 W: check the part's rating.")
    return out


def _cautions(design: Design) -> list[str]:
    levels = [design.supply.positive, design.supply.negative, *design.signal_range()]
    if isinstance(design.output, OpenDrain) and design.output.pullup_volts is not None:
        levels.append(design.output.pullup_volts)
    top = max(abs(v) for v in levels)
    if top <= HAZARD_VOLTS:
        return []
    return [f"Hazardous voltage: this design works with up to {_v(top)}. bandcalc is a design aid, not "
            f"a safety-rated protection; follow local codes and licensed practice, and use certified "
            f"protective parts where a standard requires them."]


def analyze(design: Design) -> Analysis:
    """Analyse one design at its nominal values."""
    pts = switching_points(design)
    upper, lower = float(pts.upper), float(pts.lower)
    at_upper = _operating_point(design, upper, "high" if design.inverting else "low", pts.at_upper)
    at_lower = _operating_point(design, lower, "low" if design.inverting else "high", pts.at_lower)
    by_state = {at_upper.state: at_upper.output, at_lower.state: at_lower.output}
    partial = Analysis(design=design, upper=upper, lower=lower, output_high=by_state["high"],
                       output_low=by_state["low"], at_upper=at_upper, at_lower=at_lower,
                       power=_worst_power(design), findings=(), cautions=())
    return replace(partial, findings=tuple(_findings(design, partial)), cautions=tuple(_cautions(design)))


def analysis_to_dict(a: Analysis) -> dict:
    """Plain JSON-ready numbers (SI units) of an analysis."""

    def point(op: OperatingPoint) -> dict:
        return {"signal": op.signal, "output_state": op.state, "plus_pin": op.plus, "minus_pin": op.minus,
                "output": op.output, "currents": op.currents, "rail_currents": op.rails}

    return {"name": a.design.name, "stage": a.design.stage, "upper": a.upper, "lower": a.lower,
            "hysteresis": a.hysteresis, "centre": a.centre, "output_high": a.output_high,
            "output_low": a.output_low, "at_upper": point(a.at_upper), "at_lower": point(a.at_lower),
            "power": a.power, "warnings": list(a.findings), "cautions": list(a.cautions)}
