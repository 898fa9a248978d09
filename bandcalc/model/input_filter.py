"""The input filter's pole: its capacitor and the whole resistance that drives it.

The filter (the design's ``filter`` section, :class:`~bandcalc.model.design.InputFilter`) is a
resistor in series after the source and a capacitor from the stage's input node to ground.  At
DC the resistor adds to the source's resistance (:func:`bandcalc.model.network.signal_path`), so
the switching points move through the one stage model.  For the pole, the capacitor sees the
Thevenin resistance of everything else at its node (first principles: a single capacitor in a
linear resistive network gives one pole at 1 / (2 pi R C), R the resistance across its terminals
with the sources set to zero):

    R = (source + front end + filter resistor) in parallel with the stage's input network

The stage's input network is the input resistor plus the + pin's other legs in parallel (the
non-inverting stage, :func:`bandcalc.model.network.input_load`); the inverting stage's - pin draws
only its bias current, so there the source side alone drives the capacitor.  Both depend a little
on the output state (its level sits behind its own resistance) and, with a thermistor, on the
temperature, so the pole is given at each switching point, in the state the stage holds there
once it has switched.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bandcalc.model.design import Design
from bandcalc.model.network import input_load
from bandcalc.model.parts import parameters
from bandcalc.model.points import design_points, volts_for

__all__ = ["FilterPole", "filter_pole"]


@dataclass(frozen=True)
class FilterPole:
    """The input filter's pole at each switching point.

    ``resistance_upper`` / ``resistance_lower``: ohms driving the capacitor at the stage's upper /
    lower point (after switching there); ``capacitance`` in farads.
    """

    capacitance: float
    resistance_upper: float
    resistance_lower: float

    @property
    def pole_upper(self) -> float:
        """Hz, at the stage's upper point."""
        return 1.0 / (2.0 * math.pi * self.resistance_upper * self.capacitance)

    @property
    def pole_lower(self) -> float:
        """Hz, at the stage's lower point."""
        return 1.0 / (2.0 * math.pi * self.resistance_lower * self.capacitance)

    @property
    def time_constant(self) -> float:
        """s: the mean of the two points' R C (they differ only through the stage's loading in
        each state and a thermistor's resistance)."""
        return 0.5 * (self.resistance_upper + self.resistance_lower) * self.capacitance

    @property
    def pole(self) -> float:
        """Hz: 1 / (2 pi x :attr:`time_constant`), the pole the signal check filters with."""
        return 1.0 / (2.0 * math.pi * self.time_constant)


def _driving(design: Design, x: float, state: str) -> float:
    series = float(volts_for(design, x)[1]) + design.filter.resistance
    load = float(input_load(design, parameters(design), state))
    return series if math.isinf(load) else series * load / (series + load)


def filter_pole(design: Design) -> FilterPole | None:
    """The pole of the design's input filter at each switching point; None without a filter.

    Each point in the state the stage holds once it has switched there (a non-inverting stage is
    high above its upper point, low below its lower point; an inverting one the other way round).
    """
    if design.filter is None:
        return None
    pts = design_points(design)
    after_upper, after_lower = ("low", "high") if design.inverting else ("high", "low")
    at_upper, at_lower = (float(np.asarray(pts.at_stage_upper)), float(np.asarray(pts.at_stage_lower)))
    return FilterPole(capacitance=design.filter.capacitance,
                      resistance_upper=_driving(design, at_upper, after_upper),
                      resistance_lower=_driving(design, at_lower, after_lower))
