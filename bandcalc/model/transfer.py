"""The transfer curve of a stage: output voltage against input voltage on both branches.

A comparator stage with hysteresis has two branches.  While the input rises, the output stays
in its starting state (low for a non-inverting stage, high for an inverting one) up to the
upper switching point and then jumps; while the input falls, it keeps the switched state down
to the lower switching point and jumps back.  Between the points the two branches differ: that
is the hysteresis band.

The output level on each branch is the level the network model reaches (the output node's
voltage, with the feedback and any pull-up or output resistance loading it), so it may slope
slightly with the input.  This module only computes arrays; :mod:`bandcalc.outputs.plots` draws them.

With a front end ahead of the stage (:mod:`bandcalc.model.front_end`) the curve runs over the watched
range: against the front end's open-circuit voltage at the stage, or (``watched=True``) against
the watched quantity itself.  At each input the stage sees the front end's Thevenin equivalent,
whose resistance may move with the watched value (a thermistor), so the levels and both points
agree with :func:`bandcalc.model.operating.analyze`.  Where the stage's input falls as the watched
quantity rises (a thermistor at the bottom of its divider), the watched curve starts in the
stage's switched state.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.network import TwoPoints, node_voltages
from bandcalc.model.parts import parameters
from bandcalc.model.points import design_points, input_range, volts_for

__all__ = ["TransferCurve", "transfer_curve"]


@dataclass(frozen=True)
class TransferCurve(TwoPoints):
    """Output (volts) against input on both branches; the input in volts or the watched quantity.

    ``signal`` is ascending and holds each switching point twice, so a branch's jump is a
    vertical step between two samples at the same input.  ``rising[i]`` is the output while
    the input rises through ``signal[i]``, ``falling[i]`` while it falls through it.
    """

    signal: NDArray[np.float64]
    rising: NDArray[np.float64]
    falling: NDArray[np.float64]
    upper: float
    lower: float
    at_upper: tuple[float, float]  # output just before and just after the switch at the upper point
    at_lower: tuple[float, float]  # output just before and just after the switch at the lower point
    start_state: str  # output state of the rising branch below the upper point: "low" or "high"
    inverting: bool
    unit: str = "V"  # unit of ``signal``, ``upper`` and ``lower``: volts, or the watched quantity's
    watched: bool = False  # True: ``signal`` is the watched quantity (battery volts, degrees C, ...)

    @property
    def switched_state(self) -> str:
        return "high" if self.start_state == "low" else "low"

    def level_at(self, branch: str, signal: float) -> float:
        """Output (V) on ``branch`` ("rising" or "falling") at an input value, by interpolation.

        At a switching point itself the branch jumps; use ``at_upper``/``at_lower`` there.
        """
        if branch not in ("rising", "falling"):
            raise BandcalcError(f"branch: {branch!r} is not a branch; allowed: rising, falling")
        return float(np.interp(signal, self.signal, getattr(self, branch)))


def _grid(low: float, high: float, points: tuple[float, float], samples: int,
          margin: float) -> NDArray[np.float64]:
    """Evenly spaced inputs over [low, high] widened to hold the points, plus a margin; each point twice."""
    finite = [v for v in points if np.isfinite(v)]
    lo, hi = min([low, *finite]), max([high, *finite])
    pad = margin * (hi - lo)
    base = np.linspace(lo - pad, hi + pad, samples)
    return np.sort(np.concatenate([base, np.repeat(finite, 2)]))


def _curve(signal: NDArray[np.float64], level: dict[str, NDArray[np.float64]], upper: float, lower: float,
           start: str, inverting: bool, unit: str = "V", watched: bool = False) -> TransferCurve:
    """Both branches from the output level in each state along an ascending input."""
    switched = "high" if start == "low" else "low"
    # Rising: the start state up to and including the first copy of the upper point.
    rising_switched = signal > upper
    if np.isfinite(upper):
        rising_switched[np.searchsorted(signal, upper, side="right") - 1] = True
    # Falling (read right to left): the switched state down to the last copy of the lower point.
    falling_back = signal < lower
    if np.isfinite(lower):
        falling_back[np.searchsorted(signal, lower, side="left")] = True
    rising = np.where(rising_switched, level[switched], level[start])
    falling = np.where(falling_back, level[start], level[switched])

    def jump(point: float, before: str, after: str) -> tuple[float, float]:
        if not np.isfinite(point):
            return math.nan, math.nan
        i = int(np.searchsorted(signal, point, side="left"))
        return float(level[before][i]), float(level[after][i])

    return TransferCurve(signal=signal, rising=rising, falling=falling, upper=upper, lower=lower,
                         at_upper=jump(upper, start, switched), at_lower=jump(lower, switched, start),
                         start_state=start, inverting=inverting, unit=unit, watched=watched)


def transfer_curve(design: Design, samples: int = 201, margin: float = 0.05, *,
                   watched: bool = False) -> TransferCurve:
    """Both branches of a design's transfer curve.

    Parameters
    ----------
    design : Design
    samples : int
        Evenly spaced input values over the range the input reaches (widened to hold both
        switching points) plus ``margin`` of that width on each side.  Each switching point is
        added twice.
    margin : float
        Fraction of the swept width added on each side.
    watched : bool
        Against the design's input in its unit (a front end's watched quantity); else against
        the stage's input, volts.  Without a front end the two are the same.

    Returns
    -------
    TransferCurve
    """
    if samples < 2:
        raise BandcalcError(f"samples: need at least 2, got {samples}")
    fe = front_end_of(design)
    pts = design_points(design)
    stage_start = "high" if design.inverting else "low"
    x = _grid(*input_range(design), (float(pts.upper), float(pts.lower)), samples, margin)
    volts, ohms = volts_for(design, x)
    p = dict(parameters(design), **{"source.resistance": ohms})
    level = {state: np.broadcast_to(node_voltages(design, p, volts, state).output, x.shape)
             for state in ("high", "low")}
    if watched:
        start = stage_start if fe.rises else ("low" if stage_start == "high" else "high")
        return _curve(x, level, float(pts.upper), float(pts.lower), start, design.inverting, fe.unit, True)
    # Against the stage's input: the same samples in volts, ascending; the points where the
    # input reaches them, through the same function, so they match samples exactly.
    volts = np.asarray(volts, dtype=float)
    if not fe.rises:
        volts, level = volts[::-1], {k: v[::-1] for k, v in level.items()}
    ends = volts_for(design, np.array([float(pts.at_stage_upper), float(pts.at_stage_lower)]))[0]
    return _curve(volts, level, float(ends[0]), float(ends[1]), stage_start, design.inverting)
