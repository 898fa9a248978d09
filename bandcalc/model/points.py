"""Switching points in the watched quantity: the stage solved with its front end ahead of it.

How the points are solved
-------------------------
Each front end (:mod:`bandcalc.model.front_end`) has a coordinate t in which its Thevenin voltage and
resistance are both affine: the watched value itself for the divider and the linear sensor, and
the divider fraction u = R_t / (R_t + R_fixed) for the thermistor (V_th = V_e u or V_e (1 - u),
R_th = R_fixed u).  With a fixed resistance (divider, linear sensor) the stage's switching
condition V+ - V- - offset is affine in t, so each point is exact from the stage's own line
(one pass, :func:`bandcalc.model.network.difference_line`).  With the thermistor, whose Thevenin
resistance moves with temperature, the condition is a bilinear (Moebius) function of u: every
node voltage of a linear network is a ratio of two affine functions of any one element's value
(the bilinear theorem of network functions), and here the signal and its series resistance move
together along one line.  So
each point is exact from three evaluations of the one general solution
(:func:`bandcalc.model.network.node_voltages`) at u = 0, 1/2 and 1, then mapped back to a temperature
by the thermistor's model.  No iteration and no bracket (the tests check it against scipy's
bracketed root finder and against lcapy), and it vectorizes like the stage model.

For fit, spread and page
------------------------
* ``network.switching_points(design)`` knows nothing of the front end: on a design with a front
  end it gives the bare stage.  Use :func:`stage_design` (the stage with the front end folded
  into ``source.resistance``) or the calls below.
* Fit: :func:`stage_targets` turns targets in the watched quantity into the stage's targets: the
  upper point in volts with its own total source resistance, and the lower point with its own.
  Divider and linear front ends: both resistances are equal and fixed, so fit
  ``stage_design(design)`` to those volts as usual.  Thermistor: evaluate candidates' upper
  point with ``{"source.resistance": t.upper_resistance}`` and their lower point with
  ``{"source.resistance": t.lower_resistance}``; exact, since at a target temperature the source
  is known.  :func:`volts_for` gives the source at any single watched value.
* Spread: :func:`watched_points` takes the same array overrides as ``switching_points`` plus the
  front end's own parameters (``front_end.r25``, ``front_end.beta``, ``front_end.fixed``,
  ``front_end.top``, ...; :func:`all_parameters` lists them);
  :func:`bandcalc.model.front_end.front_end_tolerances` gives the front end's tolerances as fractions
  keyed the same way.  It returns the points in volts too (``stage_upper``, ``stage_lower``).
* Page: plot against :func:`watched_at` (source volts -> watched value) and label with
  :func:`format_value`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from bandcalc.errors import DesignError
from bandcalc.model.design import Design, Source
from bandcalc.model.front_end import DividerFrontEnd, FrontEnd, ThermistorFrontEnd
from bandcalc.model.network import difference_line, node_voltages, parameters

__all__ = [
    "StageTargets",
    "WatchedPoints",
    "all_parameters",
    "front_end_power",
    "stage_design",
    "stage_targets",
    "volts_for",
    "watched_at",
    "watched_points",
    "watched_range",
]

ArrayLike = float | np.ndarray


def _front_end(design: Design) -> FrontEnd:
    if design.front_end is None:
        raise DesignError("front_end: this design has no front end")
    return design.front_end


def all_parameters(design: Design) -> dict[str, float]:
    """:func:`bandcalc.model.network.parameters` plus the front end's own (``front_end.*``), if any."""
    extra = design.front_end.parameters() if design.front_end is not None else {}
    return {**parameters(design), **extra}


def _merged(design: Design, values: Mapping[str, ArrayLike] | None) -> dict[str, ArrayLike]:
    p: dict[str, ArrayLike] = dict(all_parameters(design))
    if values:
        unknown = sorted(set(values) - set(p) - {"output.pullup_volts", "output.low_volts"})
        if unknown:
            raise KeyError(f"unknown parameter {unknown[0]!r}; this design has: {', '.join(sorted(p))}")
        p.update({k: np.asarray(v, dtype=float) for k, v in values.items()})
    return p


def _source(fe: FrontEnd, p: Mapping[str, ArrayLike], t: ArrayLike) -> tuple[ArrayLike, ArrayLike]:
    v0, v1, r0, r1 = fe.ends(p)
    return v0 + (v1 - v0) * t, p["source.resistance"] + r0 + (r1 - r0) * t


def volts_for(design: Design, x: ArrayLike, values: Mapping[str, ArrayLike] | None = None
              ) -> tuple[ArrayLike, ArrayLike]:
    """The stage's source at watched value ``x``: open-circuit volts and total series ohms.

    The ohms include ``source.resistance``: pass them as the ``"source.resistance"`` override of
    ``network.switching_points`` to evaluate the stage at that watched value.
    """
    fe = _front_end(design)
    p = _merged(design, values)
    return _source(fe, p, fe.coordinate(p, x))


def watched_at(design: Design, volts: ArrayLike, values: Mapping[str, ArrayLike] | None = None) -> ArrayLike:
    """The watched value at which the front end's open-circuit voltage is ``volts`` (NaN if none)."""
    fe = _front_end(design)
    p = _merged(design, values)
    v0, v1, _, _ = fe.ends(p)
    with np.errstate(divide="ignore", invalid="ignore"):
        return fe.watched(p, (np.asarray(volts, dtype=float) - v0) / (v1 - v0))


def watched_range(design: Design) -> tuple[float, float]:
    """The range the watched quantity reaches: front_end.low / high, else what maps to the rails
    (divider, linear) or :data:`THERMISTOR_RANGE`."""
    fe = _front_end(design)
    if isinstance(fe, ThermistorFrontEnd):
        return fe.temperatures()
    rails = sorted(float(v) for v in watched_at(design, np.array([design.supply.negative,
                                                                   design.supply.positive])))
    return (rails[0] if fe.low is None else fe.low, rails[1] if fe.high is None else fe.high)


def _root(design: Design, fe: FrontEnd, p: Mapping[str, ArrayLike], state: str) -> ArrayLike:
    """Coordinate t where the stage switches in ``state``: the zero of a Moebius function of t."""
    q = dict(p)

    def residual(t: float) -> ArrayLike:
        signal, q["source.resistance"] = _source(fe, p, t)
        return node_voltages(design, q, signal, state).difference - p["comparator.offset"]

    # As numpy values, so that a degenerate case (a residual that does not move) divides to inf
    # or NaN, "no watched value switches it", where Python floats would raise.
    if fe.affine:  # a fixed source resistance: the stage's own straight line in the signal
        v0, v1, r0, _ = fe.ends(p)
        q["source.resistance"] = p["source.resistance"] + r0
        at_zero, slope = difference_line(design, q, state)
        with np.errstate(divide="ignore", invalid="ignore"):
            span = np.asarray(slope * (v1 - v0), dtype=float)  # 0 where the front end never moves
            return (p["comparator.offset"] - at_zero - slope * v0) / span
    d0, d1 = np.asarray(residual(0.0), dtype=float), np.asarray(residual(1.0), dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        # d(t) = (d0 + b t) / (1 + c t) through three samples; the root is t = -d0 / b.
        dh = np.asarray(residual(0.5), dtype=float)
        c = (2.0 * dh - d0 - d1) / (d1 - dh)
        return -d0 / (d1 * (1.0 + c) - d0)


@dataclass(frozen=True)
class WatchedPoints:
    """Switching points in the watched quantity (its ``unit``) and in volts of the stage's source.

    ``at_stage_upper`` is the watched value where the stage reaches its upper point (the source
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

    @property
    def hysteresis(self) -> ArrayLike:
        return self.upper - self.lower

    @property
    def centre(self) -> ArrayLike:
        return 0.5 * (self.upper + self.lower)


def watched_points(design: Design, values: Mapping[str, ArrayLike] | None = None) -> WatchedPoints:
    """Both switching points in the watched quantity; array overrides broadcast as in the stage model.

    Parameters
    ----------
    design : Design
        A design with a front end.
    values : mapping of parameter name to float or array, optional
        Overrides named as in :func:`all_parameters` (stage and ``front_end.*`` parameters).
    """
    fe = _front_end(design)
    p = _merged(design, values)
    v0, v1, _, _ = fe.ends(p)
    upper_state, lower_state = ("high", "low") if design.inverting else ("low", "high")
    t_up, t_low = _root(design, fe, p, upper_state), _root(design, fe, p, lower_state)
    return WatchedPoints(at_stage_upper=fe.watched(p, t_up), at_stage_lower=fe.watched(p, t_low),
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
    """Turn watched targets (upper above lower, in the front end's unit) into the stage's targets.

    The resistances are the total ``source.resistance`` the stage sees at each point.
    """
    if not _front_end(design).rises:
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
    ends = sorted(float(v) for v in volts_for(design, np.array(watched_range(design)))[0])
    return replace(design, front_end=None, source=Source(resistance=float(ohms), low=ends[0], high=ends[1]))


def front_end_power(design: Design, x: float, state: str) -> dict[str, float]:
    """Power (W) in each front-end part at watched value ``x`` with the output in ``state``.

    Keyed ``front_end.top`` / ``front_end.bottom`` (divider) or ``front_end.fixed`` /
    ``front_end.thermistor``; the stage's own draw on the front end's node is included.
    """
    fe = _front_end(design)
    stage = stage_design(design, x)
    volts, total = volts_for(design, x)
    volts = float(volts)
    if design.inverting:
        drawn = design.comparator.bias_current
    else:
        plus = float(node_voltages(stage, parameters(stage), volts, state).plus)
        drawn = (volts - plus) / (float(total) + design.resistors.input)
    node = volts - drawn * (float(total) - design.source.resistance)
    if isinstance(fe, DividerFrontEnd):
        return {"front_end.top": (x - node) ** 2 / fe.top, "front_end.bottom": node**2 / fe.bottom}
    if isinstance(fe, ThermistorFrontEnd):
        p = all_parameters(design)
        excitation = float(fe.excitation_volts(p))
        r_t = float(fe.resistance(p, x))
        bottom = fe.position == "bottom"
        across_t, across_f = (node, excitation - node) if bottom else (excitation - node, node)
        return {"front_end.fixed": across_f**2 / fe.fixed, "front_end.thermistor": across_t**2 / r_t}
    return {}
