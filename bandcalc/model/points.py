"""The design's switching points in its own unit, through whatever lies ahead of the stage.

One path for every design: the points in the design's unit (:attr:`Design.unit`: the watched
quantity of a front end, or the stage's input volts without one), with the stage's volts
alongside, from :func:`design_points`.  A design without a front end goes through the same
path with :class:`~bandcalc.model.front_end.DirectInput` ahead of it, whose watched value is
the signal's own volts.

How the points are solved
-------------------------
Each front end (:mod:`bandcalc.model.front_end`) has a coordinate t in which its Thevenin voltage
and resistance are both affine: the watched value itself for the direct input, the divider and
the linear sensor, and the divider fraction u = R_t / (R_t + R_fixed) for the thermistor
(V_th = V_e u or V_e (1 - u), R_th = R_fixed u).  With a fixed resistance the stage's switching
condition V+ - V- - offset is affine in t, so each point is exact from the stage's own line
(one pass, :func:`bandcalc.model.network.difference_line`).  With the thermistor, whose Thevenin
resistance moves with temperature, the condition is a bilinear (Moebius) function of u: every
node voltage of a linear network is a ratio of two affine functions of any one element's value
(the bilinear theorem of network functions), and here the signal and its series resistance move
together along one line.  So each point is exact from three evaluations of the one general
solution (:func:`bandcalc.model.network.node_voltages`) at u = 0, 1/2 and 1, then mapped back to a
temperature by the thermistor's model.  No iteration and no bracket (the tests check it against
scipy's bracketed root finder and against lcapy), and it vectorizes like the stage model.

For fit, spread and page
------------------------
* :func:`design_points` takes array overrides named by path (stage and ``front_end.*``
  parameters, :func:`bandcalc.model.parts.parameters`) that broadcast.
* :func:`stage_design` is the stage alone as it sees the front end at one input value (the front
  end folded into ``source.resistance``); :func:`stage_targets` turns targets in the design's unit
  into the stage's targets, each point in volts with its own total source resistance.
* :func:`volts_for` gives the stage's source at any input value, :func:`input_at` the inverse,
  :func:`input_range` the range the input reaches.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from bandcalc.errors import DesignError
from bandcalc.model.design import Design, Source
from bandcalc.model.front_end import DirectInput, DividerFrontEnd, FrontEnd, ThermistorFrontEnd, front_end_of
from bandcalc.model.network import (
    TwoPoints,
    difference_line,
    minus_pin_current,
    node_voltages,
    signal_path,
    threshold,
)
from bandcalc.model.parts import parameters
from bandcalc.model.units import format_value, symbol

__all__ = [
    "DesignPoints",
    "StageTargets",
    "design_points",
    "front_end_power",
    "input_at",
    "input_range",
    "pin_margin",
    "range_volts",
    "stage_design",
    "stage_targets",
    "volts_for",
]

ArrayLike = float | np.ndarray


Ahead = FrontEnd | DirectInput


def _merged(design: Design, values: Mapping[str, ArrayLike] | None) -> dict[str, ArrayLike]:
    p: dict[str, ArrayLike] = dict(parameters(design))
    if values:
        unknown = sorted(set(values) - set(p) - {"output.pullup_volts", "output.low_volts"})
        if unknown:
            raise DesignError(f"{unknown[0]}: not a parameter of this design; it has {', '.join(sorted(p))}")
        p.update({k: np.asarray(v, dtype=float) for k, v in values.items()})
    return p


def _source(fe: Ahead, p: Mapping[str, ArrayLike], t: ArrayLike) -> tuple[ArrayLike, ArrayLike]:
    v0, v1, r0, r1 = fe.ends(p)
    return v0 + (v1 - v0) * t, p["source.resistance"] + r0 + (r1 - r0) * t


def volts_for(design: Design, x: ArrayLike, values: Mapping[str, ArrayLike] | None = None
              ) -> tuple[ArrayLike, ArrayLike]:
    """The stage's source at watched value ``x``: open-circuit volts and total series ohms.

    The ohms include ``source.resistance``: pass them as the ``"source.resistance"`` override of
    ``network.switching_points`` to evaluate the stage at that watched value.
    """
    fe = front_end_of(design)
    p = _merged(design, values)
    return _source(fe, p, fe.coordinate(p, x))


def input_at(design: Design, volts: ArrayLike, values: Mapping[str, ArrayLike] | None = None) -> ArrayLike:
    """The input value (design's unit) at which the stage's source voltage is ``volts`` (NaN if none)."""
    fe = front_end_of(design)
    p = _merged(design, values)
    v0, v1, _, _ = fe.ends(p)
    with np.errstate(divide="ignore", invalid="ignore"):
        return fe.watched(p, (np.asarray(volts, dtype=float) - v0) / (v1 - v0))


def input_range(design: Design) -> tuple[float, float]:
    """The range the design's input reaches, in its unit: ``front_end.low`` / ``high`` (without a
    front end ``source.low`` / ``high``), else what maps to the rails, or a thermistor's
    :data:`~bandcalc.model.front_end.THERMISTOR_RANGE`."""
    fe = front_end_of(design)
    if isinstance(fe, ThermistorFrontEnd):
        return fe.temperatures()
    rails = sorted(float(v) for v in input_at(design, np.array([design.supply.negative,
                                                                   design.supply.positive])))
    ends = (rails[0] if fe.low is None else fe.low, rails[1] if fe.high is None else fe.high)
    for key, end in zip(("low", "high"), ends, strict=True):
        if not np.isfinite(end):  # not given, and the output (nearly) never moves
            raise DesignError(f"front_end.{key}: not given, and no finite value brings the front end's "
                              f"output to a rail (it hardly moves with the watched value); give "
                              f"front_end.{key} or check the front end's values")
    return ends


def _margin(design: Design, fe: Ahead, p: Mapping[str, ArrayLike], t: ArrayLike, state: str) -> ArrayLike:
    """V+ - V- less the switching threshold (the offset, and half a built-in hysteresis) with the
    front end at coordinate ``t`` and the output in ``state``."""
    q = dict(p)
    signal, q["source.resistance"] = _source(fe, p, t)
    return node_voltages(design, q, signal, state).difference - threshold(p, state)


def pin_margin(design: Design, x: ArrayLike, state: str,
               values: Mapping[str, ArrayLike] | None = None) -> ArrayLike:
    """How far past its switching condition the comparator sits, volts at its pins (V+ - V- less
    the offset), with the input at ``x`` in the design's unit and the output in ``state``: 0 at a
    switching point; its size beyond a point is the comparator's input overdrive there."""
    fe = front_end_of(design)
    p = _merged(design, values)
    return _margin(design, fe, p, fe.coordinate(p, x), state)


def _root(design: Design, fe: Ahead, p: Mapping[str, ArrayLike], state: str) -> ArrayLike:
    """Coordinate t where the stage switches in ``state``: the zero of a Moebius function of t."""
    q = dict(p)

    def residual(t: float) -> ArrayLike:
        return _margin(design, fe, p, t, state)

    # As numpy values, so that a degenerate case (a residual that does not move) divides to inf
    # or NaN, "no watched value switches it", where Python floats would raise.
    if fe.affine:  # a fixed source resistance: the stage's own straight line in the signal
        v0, v1, r0, _ = fe.ends(p)
        q["source.resistance"] = p["source.resistance"] + r0
        at_zero, slope = difference_line(design, q, state)
        with np.errstate(divide="ignore", invalid="ignore"):
            span = np.asarray(slope * (v1 - v0), dtype=float)  # 0 where the front end never moves
            return (threshold(p, state) - at_zero - slope * v0) / span
    d0, d1 = np.asarray(residual(0.0), dtype=float), np.asarray(residual(1.0), dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        # d(t) = (d0 + b t) / (1 + c t) through three samples; the root is t = -d0 / b.
        dh = np.asarray(residual(0.5), dtype=float)
        c = (2.0 * dh - d0 - d1) / (d1 - dh)
        return -d0 / (d1 * (1.0 + c) - d0)


@dataclass(frozen=True)
class DesignPoints(TwoPoints):
    """Switching points in the design's unit (``unit``) and in volts of the stage's source.

    ``at_stage_upper`` is the input value where the stage reaches its upper point (the source
    voltage rising through ``stage_upper`` volts), ``at_stage_lower`` likewise.  ``rises`` says
    whether the source voltage rises with the watched quantity; where it falls (a thermistor on
    the bottom) the stage's upper point is the *lower* watched point.  ``upper`` and ``lower``
    are the watched points ordered that way.  NaN where no watched value switches the stage.
    """

    at_stage_upper: ArrayLike
    at_stage_lower: ArrayLike
    stage_upper: ArrayLike
    stage_lower: ArrayLike
    rises: bool
    unit: str

    @property
    def upper(self) -> ArrayLike:
        return self.at_stage_upper if self.rises else self.at_stage_lower

    @property
    def lower(self) -> ArrayLike:
        return self.at_stage_lower if self.rises else self.at_stage_upper


def design_points(design: Design, values: Mapping[str, ArrayLike] | None = None) -> DesignPoints:
    """Both switching points in the design's unit, with the stage's volts; overrides broadcast.

    Parameters
    ----------
    design : Design
        Any design; without a front end its unit is the stage's input volts.
    values : mapping of parameter name to float or array, optional
        Overrides named as in :func:`bandcalc.model.parts.parameters` (stage and ``front_end.*``).
    """
    fe = front_end_of(design)
    p = _merged(design, values)
    v0, v1, _, _ = fe.ends(p)
    upper_state, lower_state = ("high", "low") if design.inverting else ("low", "high")
    # A root at infinity (a front end whose output does not move) is no switching value either.
    t_up, t_low = (np.where(np.isfinite(t), t, np.nan) for t in (_root(design, fe, p, upper_state),
                                                                  _root(design, fe, p, lower_state)))
    return DesignPoints(at_stage_upper=fe.watched(p, t_up), at_stage_lower=fe.watched(p, t_low),
                        stage_upper=v0 + (v1 - v0) * t_up, stage_lower=v0 + (v1 - v0) * t_low,
                        rises=fe.rises, unit=fe.unit)


@dataclass(frozen=True)
class StageTargets:
    """The stage's targets for watched targets: each point in volts with its own source ohms."""

    upper: ArrayLike
    lower: ArrayLike
    upper_resistance: ArrayLike
    lower_resistance: ArrayLike


def stage_targets(design: Design, upper: ArrayLike, lower: ArrayLike,
                  values: Mapping[str, ArrayLike] | None = None) -> StageTargets:
    """Turn targets in the design's unit (upper above lower) into the stage's targets.

    The resistances are the total ``source.resistance`` the stage sees at each point.
    """
    if not front_end_of(design).rises:
        upper, lower = lower, upper
    v_up, r_up = volts_for(design, upper, values)
    v_low, r_low = volts_for(design, lower, values)
    return StageTargets(upper=v_up, lower=v_low, upper_resistance=r_up, lower_resistance=r_low)


def stage_design(design: Design, x: float | None = None) -> Design:
    """The stage alone as it sees the front end at watched value ``x`` (scalar).

    The front end's Thevenin resistance is added to ``source.resistance`` and the watched range
    becomes the source's volts range; ``x`` matters only for a thermistor (whose resistance moves
    with temperature).  A design without a front end is returned as it is.
    """
    fe = design.front_end
    if fe is None:
        return design
    if x is None:
        if isinstance(fe, ThermistorFrontEnd):
            raise DesignError("front_end: a thermistor's stage depends on the temperature; give x")
        x = 0.0
    _, ohms = volts_for(design, x)
    ends = sorted(range_volts(design))
    return replace(design, front_end=None, source=Source(resistance=float(ohms), low=ends[0], high=ends[1]))


def range_volts(design: Design) -> list[float]:
    """The stage's source volts at the two ends of the watched range (a design with a front end),
    refused by the front end's own key where the range is not one the stage can be analysed over:
    ends the wrong way round, an output that overflows a float or does not move between them."""
    fe = design.front_end
    rng = input_range(design)
    if not rng[0] < rng[1]:  # one end given, the other what maps to a rail
        given, other = ("high", "low") if fe.high is not None else ("low", "high")
        rail = "negative" if other == "low" else "positive"
        raise DesignError(f"front_end.{given}: {format_value(getattr(fe, given), fe.unit)} is not "
                          f"{'above' if given == 'high' else 'below'} the {other} end of the range, "
                          f"{format_value(rng[0 if other == 'low' else 1], fe.unit)} (what brings the front "
                          f"end's output to the {rail} rail); give front_end.{other}")
    with np.errstate(over="ignore", invalid="ignore"):
        volts = [float(v) for v in volts_for(design, np.array(rng))[0]]
    for key, x, v in zip(("low", "high"), rng, volts, strict=True):
        if not np.isfinite(v):
            given = getattr(fe, key, None) is not None
            where = (f"front_end.{key}" if given else
                     f"the default {'lowest' if key == 'low' else 'highest'} value; set front_end.{key} "
                     "to the range the design needs")
            raise DesignError(f"front_end: at {x:g} {symbol(fe.unit)} ({where}) the front end's output "
                              "cannot be computed (it overflows); narrow the range or check the front "
                              "end's values")
    if volts[0] == volts[1]:
        raise DesignError(f"front_end: its output is {volts[0]:.6g} V at both {rng[0]:g} and {rng[1]:g} "
                          f"{symbol(fe.unit)} (it hardly moves with the watched value); check the front "
                          "end's values")
    return volts


def front_end_power(design: Design, x: float, state: str) -> dict[str, float]:
    """Power (W) in each front-end part at watched value ``x`` with the output in ``state``.

    Keyed ``front_end.top`` / ``front_end.bottom`` (divider) or ``front_end.fixed`` /
    ``front_end.thermistor``; the stage's own draw on the front end's node is included.
    """
    fe = front_end_of(design)
    stage = stage_design(design, x)
    volts, total = volts_for(design, x)
    volts = float(volts)
    if design.inverting:
        drawn = float(minus_pin_current(parameters(design)))
    else:
        plus = float(node_voltages(stage, parameters(stage), volts, state).plus)
        drawn = (volts - plus) / float(signal_path(parameters(stage)))
    node = volts - drawn * (float(total) - design.source.resistance)
    if isinstance(fe, DividerFrontEnd):
        return {"front_end.top": (x - node) ** 2 / fe.top, "front_end.bottom": node**2 / fe.bottom}
    if isinstance(fe, ThermistorFrontEnd):
        p = parameters(design)
        excitation = float(fe.excitation_volts(p))
        r_t = float(fe.resistance(p, x))
        bottom = fe.position == "bottom"
        across_t, across_f = (node, excitation - node) if bottom else (excitation - node, node)
        return {"front_end.fixed": across_f**2 / fe.fixed, "front_end.thermistor": across_t**2 / r_t}
    return {}
