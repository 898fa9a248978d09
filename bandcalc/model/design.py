"""The design: what a comparator stage is made of, validated when built.

A design is the single record the user edits: stage kind, supply, reference, resistor network,
output stage, comparator data and signal source.  Everything is in SI units (volts, ohms,
amperes, seconds, farads).  The JSON file (:mod:`bandcalc.model.design_file`) mirrors these
classes section by section.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from bandcalc.errors import DesignError
from bandcalc.model.validation import finite, not_negative, positive

if TYPE_CHECKING:
    from bandcalc.model.front_end import FrontEnd
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
        finite(self.positive, "supply.positive")
        finite(self.negative, "supply.negative")
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
        finite(self.volts, "reference.volts")


@dataclass(frozen=True)
class DividerReference:
    """A resistive divider across the rails: ``top`` to the positive rail, ``bottom`` to the negative."""

    top: float
    bottom: float

    def __post_init__(self) -> None:
        positive(self.top, "reference.divider.top")
        positive(self.bottom, "reference.divider.bottom")


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
        for key in RESISTOR_KEYS:
            value = getattr(self, key)
            if value is not None:
                positive(value, f"resistors.{key}")

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
        for key in ("high_drop", "low_drop", "resistance", "load_capacitance"):
            not_negative(getattr(self, key), f"output.{key}")


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
        positive(self.pullup, "output.pullup")
        if self.pullup_volts is not None:
            finite(self.pullup_volts, "output.pullup_volts")
        if self.low_volts is not None:
            finite(self.low_volts, "output.low_volts")
        not_negative(self.load_capacitance, "output.load_capacitance")


@dataclass(frozen=True)
class Comparator:
    """The comparator's input errors, optional common-mode input range and its timing.

    The stage switches where V+ - V- = offset; ``bias_current`` flows into each input pin.
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
    delay_overdrive: float | None = None
    slew_rate: float | None = None
    recovery: float | None = None

    def __post_init__(self) -> None:
        finite(self.offset, "comparator.offset")
        finite(self.bias_current, "comparator.bias_current")
        not_negative(self.delay, "comparator.delay")
        for key in ("delay_overdrive", "slew_rate"):
            if getattr(self, key) is not None:
                positive(getattr(self, key), f"comparator.{key}")
        if self.recovery is not None:
            not_negative(self.recovery, "comparator.recovery")
        for key in ("common_mode_low", "common_mode_high"):
            if getattr(self, key) is not None:
                finite(getattr(self, key), f"comparator.{key}")
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
        not_negative(self.resistance, "source.resistance")
        for key in ("low", "high"):
            if getattr(self, key) is not None:
                finite(getattr(self, key), f"source.{key}")
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
        not_negative(self.resistance, "filter.resistance")
        positive(self.capacitance, "filter.capacitance")


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

    def __post_init__(self) -> None:
        if self.stage not in STAGES:
            raise DesignError(f"stage: {self.stage!r} is not a stage kind; allowed: {', '.join(STAGES)}")
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
