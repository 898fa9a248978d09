"""The transfer curve of a stage: output voltage against input voltage on both branches.

A comparator stage with hysteresis has two branches.  While the input rises, the output stays
in its starting state (low for a non-inverting stage, high for an inverting one) up to the
upper switching point and then jumps; while the input falls, it keeps the switched state down
to the lower switching point and jumps back.  Between the points the two branches differ: that
is the hysteresis band.

The output level on each branch is the level the network model reaches (the output node's
voltage, with the feedback and any pull-up or output resistance loading it), so it may slope
slightly with the input.  This module only computes arrays; :mod:`bandcalc.plots` draws them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .design import Design
from .network import node_voltages, parameters, switching_points

__all__ = ["TransferCurve", "transfer_curve"]


@dataclass(frozen=True)
class TransferCurve:
    """Output against input on both branches, volts.

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

    @property
    def hysteresis(self) -> float:
        return self.upper - self.lower

    @property
    def switched_state(self) -> str:
        return "high" if self.start_state == "low" else "low"

    def level_at(self, branch: str, signal: float) -> float:
        """Output (V) on ``branch`` ("rising" or "falling") at an input value, by interpolation.

        At a switching point itself the branch jumps; use ``at_upper``/``at_lower`` there.
        """
        if branch not in ("rising", "falling"):
            raise ValueError(f"branch: {branch!r} is not a branch; allowed: rising, falling")
        return float(np.interp(signal, self.signal, getattr(self, branch)))


def _sweep(design: Design, upper: float, lower: float, samples: int, margin: float) -> NDArray[np.float64]:
    low, high = design.signal_range()
    finite = [v for v in (upper, lower) if np.isfinite(v)]
    lo, hi = min([low, *finite]), max([high, *finite])
    pad = margin * (hi - lo)
    base = np.linspace(lo - pad, hi + pad, samples)
    return np.sort(np.concatenate([base, np.repeat(finite, 2)]))


def transfer_curve(design: Design, samples: int = 201, margin: float = 0.05) -> TransferCurve:
    """Both branches of a design's transfer curve.

    Parameters
    ----------
    design : Design
    samples : int
        Evenly spaced input values, volts, over the signal's range (widened to hold both
        switching points) plus ``margin`` of that width on each side.  Each switching point
        is added twice.
    margin : float
        Fraction of the swept width added on each side.

    Returns
    -------
    TransferCurve
    """
    if samples < 2:
        raise ValueError(f"samples: need at least 2, got {samples}")
    pts = switching_points(design)
    upper, lower = float(pts.upper), float(pts.lower)
    signal = _sweep(design, upper, lower, samples, margin)
    p = parameters(design)
    level = {state: np.broadcast_to(node_voltages(design, p, signal, state).output, signal.shape)
             for state in ("high", "low")}
    start = "high" if design.inverting else "low"
    switched = "low" if design.inverting else "high"
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
    ends = np.array([upper, lower])
    out = {state: np.broadcast_to(node_voltages(design, p, ends, state).output, ends.shape)
           for state in ("high", "low")}
    return TransferCurve(signal=signal, rising=rising, falling=falling, upper=upper, lower=lower,
                         at_upper=(float(out[start][0]), float(out[switched][0])),
                         at_lower=(float(out[switched][1]), float(out[start][1])),
                         start_state=start, inverting=design.inverting)
