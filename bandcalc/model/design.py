"""The design: what a comparator stage is made of, validated when built.

A design is the single record the user edits: stage kind, supply, reference, resistor network,
output stage, comparator data and signal source.  Everything is in SI units (volts, ohms,
amperes, seconds, farads).  The JSON file (:mod:`bandcalc.model.design_file`) mirrors these
classes section by section.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from bandcalc.errors import DesignError, shown
from bandcalc.model.validation import (
    AMPS,
    FARADS,
    SECONDS,
    SLEW_RATE,
    positive,
    resistance,
    text,
    voltage,
    within,
)

if TYPE_CHECKING:
    from bandcalc.model.front_end import FrontEnd
    from bandcalc.model.ratings import Ratings
    from bandcalc.model.signal_settings import SignalSettings
    from bandcalc.model.tolerances import Tolerances

__all__ = [
    "FORMAT",
    "LEG_KEYS",
    "RESISTOR_KEYS",
    "STAGES",
    "Comparator",
    "Design",
    "DesignError",
    "DividerReference",
    "FixedReference",
    "InputFilter",
    "Load",
    "OpenDrain",
    "PushPull",
    "Resistors",
    "Source",
    "Supply",
    "divider_thevenin",
]

FORMAT = 1
STAGES = ("non-inverting", "inverting")
LEG_KEYS = ("to_positive", "to_negative", "to_ground", "to_reference")
RESISTOR_KEYS = ("input", "feedback") + LEG_KEYS


@dataclass(frozen=True)
class Supply:
    """Rails in volts; single supply has ``negative == 0``."""

    positive: float
    negative: float = 0.0

    def __post_init__(self) -> None:
        voltage(self.positive, "supply.positive")
        voltage(self.negative, "supply.negative")
        if self.positive <= self.negative:
            raise DesignError(f"supply: the positive rail ({self.positive} V) must be above the "
                              f"negative rail ({self.negative} V)")

    @property
    def span(self) -> float:
        return self.positive - self.negative


@dataclass(frozen=True)
class FixedReference:
    """A stiff reference voltage (shunt or band-gap reference), volts."""

    volts: float

    def __post_init__(self) -> None:
        voltage(self.volts, "reference.volts")


@dataclass(frozen=True)
class DividerReference:
    """A resistive divider across the rails: ``top`` to the positive rail, ``bottom`` to the negative."""

    top: float
    bottom: float

    def __post_init__(self) -> None:
        resistance(self.top, "reference.divider.top")
        resistance(self.bottom, "reference.divider.bottom")


def divider_thevenin(top: Any, bottom: Any, positive: Any, negative: Any) -> tuple[Any, Any]:
    """Open-circuit volts and resistance (ohms) of a divider across two rails; numbers or arrays."""
    return negative + (positive - negative) * bottom / (top + bottom), top * bottom / (top + bottom)


@dataclass(frozen=True)
class Resistors:
    """The stage's resistors in ohms; ``None`` where a position is empty."""

    feedback: float
    input: float | None = None
    to_positive: float | None = None
    to_negative: float | None = None
    to_ground: float | None = None
    to_reference: float | None = None

    def __post_init__(self) -> None:
        if self.feedback is None:
            raise DesignError("resistors.feedback: required; every stage has a feedback resistor")
        for key in RESISTOR_KEYS:
            value = getattr(self, key)
            if value is not None:
                resistance(value, f"resistors.{key}")

    def present(self) -> dict[str, float]:
        """The fitted positions and their values, in the order of RESISTOR_KEYS."""
        return {k: getattr(self, k) for k in RESISTOR_KEYS if getattr(self, k) is not None}


@dataclass(frozen=True)
class PushPull:
    """Output that drives both ways: high = positive rail - high_drop, low = negative rail + low_drop."""

    high_drop: float = 0.0
    low_drop: float = 0.0
    resistance: float = 0.0
    load_capacitance: float = 0.0

    kind = "push-pull"

    def __post_init__(self) -> None:
        for key in ("high_drop", "low_drop"):
            voltage(getattr(self, key), f"output.{key}", low=0.0)
        resistance(self.resistance, "output.resistance", zero=True)
        within(self.load_capacitance, "output.load_capacitance", 0.0, FARADS, "F")


@dataclass(frozen=True)
class OpenDrain:
    """Open-drain / open-collector output with a pull-up resistor.

    ``pullup_volts`` defaults to the positive rail and ``low_volts`` to the negative rail
    (``None`` keeps them following their rail when the rail moves).
    """

    pullup: float
    pullup_volts: float | None = None
    low_volts: float | None = None
    load_capacitance: float = 0.0

    kind = "open-drain"

    def __post_init__(self) -> None:
        resistance(self.pullup, "output.pullup")
        if self.pullup_volts is not None:
            voltage(self.pullup_volts, "output.pullup_volts")
        if self.low_volts is not None:
            voltage(self.low_volts, "output.low_volts")
        within(self.load_capacitance, "output.load_capacitance", 0.0, FARADS, "F")


@dataclass(frozen=True)
class Load:
    """What the output drives: a DC load and the receiving input's logic thresholds.

    ``resistance`` (ohms) runs from the output to ``volts`` (default 0 V, ground); it is part of the
    network, so it moves the output levels and with them the switching points.  ``logic_low_max``
    is the highest voltage the receiving input still reads as low, ``logic_high_min`` the lowest it
    reads as high (its data sheet's input thresholds).  Each is optional.
    """

    resistance: float | None = None
    volts: float = 0.0
    logic_low_max: float | None = None
    logic_high_min: float | None = None

    def __post_init__(self) -> None:
        if self.resistance is not None:
            resistance(self.resistance, "load.resistance")
        voltage(self.volts, "load.volts")
        for key in ("logic_low_max", "logic_high_min"):
            if getattr(self, key) is not None:
                voltage(getattr(self, key), f"load.{key}")
        if (self.logic_low_max is not None and self.logic_high_min is not None
                and self.logic_low_max >= self.logic_high_min):
            raise DesignError(f"load: logic_low_max ({self.logic_low_max} V) must be below "
                              f"logic_high_min ({self.logic_high_min} V)")


@dataclass(frozen=True)
class Comparator:
    """The comparator's input errors, built-in hysteresis, its input limits and its timing.

    The stage switches where V+ - V- = offset + hysteresis/2 while the output is low, and where it
    is offset - hysteresis/2 while the output is high (the trip points data sheets state for parts
    with hysteresis built in).  ``bias_current`` flows into each input pin on average;
    ``offset_current`` is the + pin's current less the - pin's (None: 0).
    ``common_mode_low`` / ``common_mode_high`` bound the input voltage range over which the part
    works as specified; ``input_current_limit`` (A) is the most its input protection may carry
    (None: :data:`bandcalc.model.range_checks.INPUT_CURRENT_LIMIT`); ``differential_max`` (V) the
    largest difference between the pins it takes (None: not checked).
    ``delay`` is the propagation delay as the data sheet gives it, at an input overdrive of
    ``delay_overdrive`` volts (None: not stated).  An op-amp used as a comparator moves its output
    at most ``slew_rate`` (V/s) and needs ``recovery`` (s) to come out of saturation (None: a
    comparator, not limited).
    """

    offset: float = 0.0
    bias_current: float = 0.0
    common_mode_low: float | None = None
    common_mode_high: float | None = None
    delay: float = 0.0
    hysteresis: float | None = None
    offset_current: float | None = None
    input_current_limit: float | None = None
    differential_max: float | None = None
    delay_overdrive: float | None = None
    slew_rate: float | None = None
    recovery: float | None = None

    def __post_init__(self) -> None:
        voltage(self.offset, "comparator.offset")
        within(self.bias_current, "comparator.bias_current", -AMPS, AMPS, "A")
        if self.hysteresis is not None:
            voltage(self.hysteresis, "comparator.hysteresis", low=0.0)
        if self.offset_current is not None:
            within(self.offset_current, "comparator.offset_current", -AMPS, AMPS, "A")
        within(self.delay, "comparator.delay", 0.0, SECONDS, "s")
        if self.input_current_limit is not None:
            within(self.input_current_limit, "comparator.input_current_limit", 1e-9, AMPS, "A")
        if self.differential_max is not None:
            voltage(self.differential_max, "comparator.differential_max", low=1e-3)
        if self.delay_overdrive is not None:
            voltage(self.delay_overdrive, "comparator.delay_overdrive", low=1e-6)
        if self.slew_rate is not None:
            within(self.slew_rate, "comparator.slew_rate", SLEW_RATE[0], SLEW_RATE[1], "V/s")
        if self.recovery is not None:
            within(self.recovery, "comparator.recovery", 0.0, SECONDS, "s")
        for key in ("common_mode_low", "common_mode_high"):
            if getattr(self, key) is not None:
                voltage(getattr(self, key), f"comparator.{key}")
        if (self.common_mode_low is not None and self.common_mode_high is not None
                and self.common_mode_low >= self.common_mode_high):
            raise DesignError("comparator: common_mode_low must be below common_mode_high")


@dataclass(frozen=True)
class Source:
    """The signal source: series resistance (ohms) and the range it can reach (volts).

    ``low``/``high`` default to the rails.
    """

    resistance: float = 0.0
    low: float | None = None
    high: float | None = None

    def __post_init__(self) -> None:
        resistance(self.resistance, "source.resistance", zero=True)
        for key in ("low", "high"):
            if getattr(self, key) is not None:
                voltage(getattr(self, key), f"source.{key}")
        if self.low is not None and self.high is not None and self.low >= self.high:
            raise DesignError("source: low must be below high")


@dataclass(frozen=True)
class InputFilter:
    """A first-order RC low-pass ahead of the stage: ``resistance`` (ohms) in series after the
    source, ``capacitance`` (farads) from the stage's input node to ground.

    At DC its resistance adds to the source's (the switching points move with it); its pole is set
    by the capacitance and the whole resistance that drives it (:mod:`bandcalc.model.input_filter`).
    """

    resistance: float
    capacitance: float

    def __post_init__(self) -> None:
        resistance(self.resistance, "filter.resistance", zero=True)
        positive(self.capacitance, "filter.capacitance")
        within(self.capacitance, "filter.capacitance", 0.0, FARADS, "F")


@dataclass(frozen=True)
class Design:
    """A complete comparator stage with hysteresis."""

    stage: str
    supply: Supply
    resistors: Resistors
    output: PushPull | OpenDrain = field(default_factory=PushPull)
    reference: FixedReference | DividerReference | None = None
    comparator: Comparator = field(default_factory=Comparator)
    source: Source = field(default_factory=Source)
    front_end: FrontEnd | None = None  # bandcalc.model.front_end: divider or sensor ahead of the signal
    name: str = ""
    notes: str = ""
    tolerances: Tolerances | None = None  # spread of the parts; None: see bandcalc.spread.propagation
    protective: bool | None = None  # guards people or property; None: judged from name and notes
    filter: InputFilter | None = None  # an RC low-pass ahead of the stage; None: none
    signal: SignalSettings | None = None  # noise, hum and slope the signal brings; None: not given
    load: Load | None = None  # what the output drives; None: nothing but the network
    ratings: Ratings | None = None  # resistor ratings (bandcalc.model.ratings); None: the default size

    def __post_init__(self) -> None:
        text(self.name, "name")
        text(self.notes, "notes")
        if not (self.protective is None or self.protective is True or self.protective is False):
            raise DesignError("protective: must be true or false (or left out), "
                              f"got {shown(self.protective)}")
        if self.stage not in STAGES:
            raise DesignError(f"stage: {shown(self.stage)} is not a stage kind; allowed: {', '.join(STAGES)}")
        if self.stage == "non-inverting" and self.resistors.input is None:
            raise DesignError("resistors.input: the non-inverting stage needs an input resistor "
                              "from the signal to the + pin")
        if self.reference is None:
            if self.stage == "non-inverting":
                raise DesignError("reference: the non-inverting stage needs a reference on the - pin; "
                                  'give {"volts": V} or {"divider": {"top": R, "bottom": R}}')
            if self.resistors.to_reference is not None:
                raise DesignError("reference: resistors.to_reference needs a reference; "
                                  'give {"volts": V} or {"divider": {"top": R, "bottom": R}}')
        if (isinstance(self.output, OpenDrain) and self.output.pullup_volts is not None
                and self.output.low_volts is not None
                and self.output.pullup_volts <= self.output.low_volts):
            raise DesignError("output: pullup_volts must be above low_volts")
        if self.front_end is not None:
            self.front_end.check_stage(self)

    @property
    def inverting(self) -> bool:
        return self.stage == "inverting"

    @property
    def unit(self) -> str:
        """The unit of the design's switching points: its front end's watched quantity ("C",
        "kPa", "V" of a measured voltage), or "V" of the stage's own input without one."""
        return "V" if self.front_end is None else self.front_end.unit

    def signal_range(self) -> tuple[float, float]:
        """The lowest and highest signal the source can reach, volts (default: the rails)."""
        low = self.supply.negative if self.source.low is None else self.source.low
        high = self.supply.positive if self.source.high is None else self.source.high
        return low, high
