"""One general solution for every stage: the + pin as a summing node of Thevenin legs.

Every resistor on the + pin is a leg to a potential: the signal (non-inverting stage), the
output (feedback), a rail, ground or the reference.  Where the far end of a leg is itself a
node with a resistance of its own (the output behind its pull-up or output resistance, and any
load it drives; a reference divider), that node is replaced by its Thevenin equivalent, so the + pin is solved
by Millman's theorem with the current drawn by the pin:

    V+ = (sum(V_k / R_k) - I_plus) / sum(1 / R_k)

and the far node's own voltage follows from the leg current.  The pins draw the bias current
plus and minus half the offset current: I_plus = I_b + I_os / 2, I_minus = I_b - I_os / 2.
Because every node voltage is linear in the signal, one pass gives V+ - V- = a * V_signal + b
(the signal leg enters Millman's sum as a slope, :func:`difference_line`), and
V_switch = (threshold - b) / a is exact, the threshold being the offset -/+ half any hysteresis
built into the comparator (:func:`threshold`).

All parameters may be numpy arrays: they broadcast, so a million variants cost one call.
Parameters are named by their design-file path ("resistors.feedback", "supply.positive", ...).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import DesignError
from bandcalc.model.design import Design, DividerReference, FixedReference, OpenDrain, divider_thevenin
from bandcalc.model.parts import parameters

__all__ = [
    "Nodes",
    "Points",
    "TwoPoints",
    "difference_line",
    "input_load",
    "minus_pin_current",
    "node_voltages",
    "pin_resistances",
    "plus_pin_current",
    "signal_path",
    "switching_points",
    "threshold",
]

ArrayLike = float | np.ndarray
STATES = ("high", "low")


def plus_pin_current(p: Mapping[str, ArrayLike]) -> ArrayLike:
    """Current into the + pin (A): the bias current plus half the offset current."""
    return p["comparator.bias_current"] + 0.5 * p.get("comparator.offset_current", 0.0)


def minus_pin_current(p: Mapping[str, ArrayLike]) -> ArrayLike:
    """Current into the - pin (A): the bias current less half the offset current."""
    return p["comparator.bias_current"] - 0.5 * p.get("comparator.offset_current", 0.0)


def threshold(p: Mapping[str, ArrayLike], state: str) -> ArrayLike:
    """V+ - V- at which the comparator leaves ``state``: offset + hysteresis/2 while its output is
    low, offset - hysteresis/2 while it is high (the trip points of a part with hysteresis built in)."""
    half = 0.5 * p.get("comparator.hysteresis", 0.0)
    return p["comparator.offset"] + (half if state == "low" else -half)


def _output_stage(design: Design, p: Mapping[str, ArrayLike], state: str) -> tuple[ArrayLike, ArrayLike]:
    """Thevenin equivalent (volts, ohms) of the output stage alone in one state."""
    if isinstance(design.output, OpenDrain):
        if state == "high":
            return p.get("output.pullup_volts", p["supply.positive"]), p["output.pullup"]
        return p.get("output.low_volts", p["supply.negative"]), 0.0
    if state == "high":
        return p["supply.positive"] - p["output.high_drop"], p["output.resistance"]
    return p["supply.negative"] + p["output.low_drop"], p["output.resistance"]


def _driver(design: Design, p: Mapping[str, ArrayLike], state: str) -> tuple[ArrayLike, ArrayLike]:
    """Thevenin equivalent (volts, ohms) of the output node, without the feedback leg.

    A load (``load.resistance`` to ``load.volts``) is a second Thevenin source on the node, in
    parallel with the output stage: V = (V_o R_L + V_L R_o) / (R_o + R_L), R = R_o R_L / (R_o + R_L),
    which also holds for a stiff output (R_o = 0: the load changes nothing).
    """
    volts, ohms = _output_stage(design, p, state)
    if "load.resistance" not in p:
        return volts, ohms
    r_load, v_load = p["load.resistance"], p["load.volts"]
    return (volts * r_load + v_load * ohms) / (ohms + r_load), ohms * r_load / (ohms + r_load)


def _reference(design: Design, p: Mapping[str, ArrayLike]) -> tuple[ArrayLike, ArrayLike]:
    """Thevenin equivalent (volts, ohms) of the reference node, without the to_reference leg.

    In the non-inverting stage the - pin sits on this node and draws its bias current from it.
    """
    if isinstance(design.reference, DividerReference):
        volts, ohms = divider_thevenin(p["reference.top"], p["reference.bottom"],
                                       p["supply.positive"], p["supply.negative"])
    elif isinstance(design.reference, FixedReference):
        volts, ohms = p["reference.volts"], 0.0
    else:
        return 0.0, 0.0
    if not design.inverting:
        volts = volts - minus_pin_current(p) * ohms
    return volts, ohms


def _far_node(v_th: ArrayLike, r_th: ArrayLike, v_hub: ArrayLike, r_leg: ArrayLike) -> ArrayLike:
    """Voltage of a Thevenin node (v_th, r_th) joined to the hub at v_hub through r_leg."""
    return v_th + (v_hub - v_th) * r_th / (r_th + r_leg)


@dataclass(frozen=True)
class Nodes:
    """Node voltages (volts) of one output state at one signal value."""

    plus: ArrayLike
    minus: ArrayLike
    output: ArrayLike
    reference: ArrayLike

    @property
    def difference(self) -> ArrayLike:
        return self.plus - self.minus


def signal_path(p: Mapping[str, ArrayLike]) -> ArrayLike:
    """Ohms in series from the signal's open-circuit voltage to its pin: the source's (with a front
    end, what :mod:`bandcalc.model.points` passes as ``source.resistance``), an input filter's
    resistor, and the input resistor.  The one place where the filter's resistor enters at DC."""
    return p["source.resistance"] + p.get("filter.resistance", 0.0) + p.get("resistors.input", 0.0)


@dataclass(frozen=True)
class _PlusNode:
    """The + node of one output state, solved once: V+ = plus0 + slope x signal."""

    plus0: ArrayLike  # V+ with the signal at 0 V
    slope: ArrayLike  # dV+ / dV_signal: the signal leg's share of the node's conductance
    v_ref: ArrayLike
    r_ref: ArrayLike
    v_drv: ArrayLike
    r_drv: ArrayLike
    signal_path: ArrayLike  # ohms from the signal's source to its pin
    others: ArrayLike  # ohms from the + pin to its other legs' Thevenin sources, in parallel
    ohms: ArrayLike  # the + node's Thevenin resistance: 1 / (sum of its legs' conductances)


def _plus_node(design: Design, p: Mapping[str, ArrayLike], state: str) -> _PlusNode:
    """Millman at the + pin with every leg but the signal's value (which enters as the slope)."""
    v_ref, r_ref = _reference(design, p)
    v_drv, r_drv = _driver(design, p, state)
    legs: list[tuple[ArrayLike, ArrayLike]] = [(v_drv, r_drv + p["resistors.feedback"])]
    fixed = {"to_positive": p["supply.positive"], "to_negative": p["supply.negative"], "to_ground": 0.0}
    for key, volts in fixed.items():
        if f"resistors.{key}" in p:
            legs.append((volts, p[f"resistors.{key}"]))
    if "resistors.to_reference" in p:
        legs.append((v_ref, r_ref + p["resistors.to_reference"]))
    path = signal_path(p)
    g_signal = 0.0 if design.inverting else 1.0 / path
    g_others = sum(1.0 / r for _, r in legs)
    total_g = g_others + g_signal
    plus0 = (sum(v / r for v, r in legs) - plus_pin_current(p)) / total_g
    return _PlusNode(plus0, g_signal / total_g, v_ref, r_ref, v_drv, r_drv, path, 1.0 / g_others,
                     1.0 / total_g)


def input_load(design: Design, p: Mapping[str, ArrayLike], state: str) -> ArrayLike:
    """Ohms the stage puts from its input node (behind the source and an input filter's resistor)
    to its Thevenin sources, in one output state: the input resistor and the + pin's other legs
    in parallel for the non-inverting stage; infinite for the inverting stage, whose - pin draws
    only its bias current."""
    if design.inverting:
        return np.inf
    return p.get("resistors.input", 0.0) + _plus_node(design, p, state).others


def _ref_share(p: Mapping[str, ArrayLike], n: _PlusNode) -> ArrayLike:
    """How much of a change of V+ reaches the reference node through the to_reference leg."""
    return n.r_ref / (n.r_ref + p["resistors.to_reference"]) if "resistors.to_reference" in p else 0.0


def node_voltages(design: Design, p: Mapping[str, ArrayLike], signal: ArrayLike, state: str) -> Nodes:
    """Solve the network for one output state ("high" or "low") at a signal's open-circuit voltage."""
    n = _plus_node(design, p, state)
    plus = n.plus0 + n.slope * signal
    output = _far_node(n.v_drv, n.r_drv, plus, p["resistors.feedback"])
    reference = n.v_ref + (plus - n.v_ref) * _ref_share(p, n)
    if design.inverting:
        minus = signal - minus_pin_current(p) * n.signal_path
    else:
        minus = reference
    return Nodes(plus=plus, minus=minus, output=output, reference=reference)


def _parallel(a: ArrayLike, b: ArrayLike) -> ArrayLike:
    return a * b / (a + b)


def pin_resistances(design: Design, p: Mapping[str, ArrayLike], state: str) -> tuple[ArrayLike, ArrayLike]:
    """Thevenin resistance (ohms) the network presents to the + pin and to the - pin in one state.

    A pin forced to a voltage V (by its input clamp at a rail) draws (V_open - V) / R from the
    network, V_open being its voltage from :func:`node_voltages`.  The + pin sees its node's legs
    in parallel; the - pin sees the signal's path (inverting stage) or the reference node, which in
    parallel with its own resistance reaches the + node through the to_reference leg.
    """
    n = _plus_node(design, p, state)
    if design.inverting:
        return n.ohms, n.signal_path
    if "resistors.to_reference" not in p:
        return n.ohms, n.r_ref
    leg = n.r_ref + p["resistors.to_reference"]
    rest = 1.0 / (1.0 / n.ohms - 1.0 / leg)  # the + node without the leg to the reference
    return n.ohms, _parallel(n.r_ref, p["resistors.to_reference"] + rest)


def difference_line(design: Design, p: Mapping[str, ArrayLike], state: str) -> tuple[ArrayLike, ArrayLike]:
    """V+ - V- with the signal at 0 V, and its change per volt of signal, for one output state.

    Every node voltage is linear in the signal, so these two numbers place the switching point;
    one pass through the network gives both.
    """
    n = _plus_node(design, p, state)
    if design.inverting:  # the signal drives the - pin directly
        return n.plus0 + minus_pin_current(p) * n.signal_path, n.slope - 1.0
    share = _ref_share(p, n)
    minus0 = n.v_ref + (n.plus0 - n.v_ref) * share
    return n.plus0 - minus0, n.slope * (1.0 - share)


class TwoPoints:
    """What follows from an upper and a lower switching point, for every class that holds both."""

    upper: ArrayLike
    lower: ArrayLike

    @property
    def hysteresis(self) -> ArrayLike:
        return self.upper - self.lower

    @property
    def centre(self) -> ArrayLike:
        return 0.5 * (self.upper + self.lower)


@dataclass(frozen=True)
class Points(TwoPoints):
    """Switching points (volts of the signal's open-circuit voltage) and the nodes at each.

    ``at_upper`` holds the node voltages just before the stage switches at the upper point
    (rising signal), ``at_lower`` those just before it switches at the lower point.
    """

    upper: ArrayLike
    lower: ArrayLike
    at_upper: Nodes
    at_lower: Nodes


def _crossing(design: Design, p: Mapping[str, ArrayLike], state: str) -> tuple[ArrayLike, Nodes]:
    at_zero, slope = difference_line(design, p, state)
    point = (threshold(p, state) - at_zero) / slope
    return point, node_voltages(design, p, point, state)


def switching_points(design: Design, values: Mapping[str, ArrayLike] | None = None) -> Points:
    """Both switching points of a design, with any parameters overridden by (array) values.

    Parameters
    ----------
    design : Design
        Gives the topology and the default value of every parameter.
    values : mapping of parameter name to float or array, optional
        Overrides, named as in :func:`bandcalc.model.parts.parameters`; arrays broadcast against each other.

    Returns
    -------
    Points
        A non-inverting stage reaches its upper point with the output low, an inverting stage
        with the output high.
    """
    p = parameters(design)
    if values:
        unknown = sorted(set(values) - set(p) - {"output.pullup_volts", "output.low_volts"})
        if unknown:
            raise DesignError(f"{unknown[0]}: not a parameter of this design; it has {', '.join(sorted(p))}")
        p.update({k: np.asarray(v, dtype=float) for k, v in values.items()})
    upper_state, lower_state = ("high", "low") if design.inverting else ("low", "high")
    upper, at_upper = _crossing(design, p, upper_state)
    lower, at_lower = _crossing(design, p, lower_state)
    return Points(upper=upper, lower=lower, at_upper=at_upper, at_lower=at_lower)
