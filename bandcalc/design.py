"""The design: what a comparator stage is made of, validated when built, read from and written to JSON.

A design is the single record the user edits: stage kind, supply, reference, resistor network,
output stage, comparator data and signal source.  Everything is in SI units (volts, ohms,
amperes, seconds, farads).  The JSON file mirrors these classes section by section.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .tolerances import ToleranceError, Tolerances, tolerances_from_dict, tolerances_to_dict
from .units import UnitError, parse_quantity, parse_resistance

if TYPE_CHECKING:
    from .frontend import FrontEnd

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
    "OpenDrain",
    "PushPull",
    "Resistors",
    "Source",
    "Supply",
    "design_from_dict",
    "design_to_dict",
    "load_design",
    "save_design",
]

FORMAT = 1
STAGES = ("non-inverting", "inverting")
LEG_KEYS = ("to_positive", "to_negative", "to_ground", "to_reference")
RESISTOR_KEYS = ("input", "feedback") + LEG_KEYS


class DesignError(ValueError):
    """A design that cannot be built; the message names the key and what is allowed."""


def _finite(value: float, key: str) -> None:
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise DesignError(f"{key}: must be a finite number, got {value!r}")


def _positive(value: float, key: str) -> None:
    _finite(value, key)
    if value <= 0:
        raise DesignError(f"{key}: must be greater than zero, got {value!r}")


def _not_negative(value: float, key: str) -> None:
    _finite(value, key)
    if value < 0:
        raise DesignError(f"{key}: must be zero or more, got {value!r}")


@dataclass(frozen=True)
class Supply:
    """Rails in volts; single supply has ``negative == 0``."""

    positive: float
    negative: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.positive, "supply.positive")
        _finite(self.negative, "supply.negative")
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
        _finite(self.volts, "reference.volts")


@dataclass(frozen=True)
class DividerReference:
    """A resistive divider across the rails: ``top`` to the positive rail, ``bottom`` to the negative."""

    top: float
    bottom: float

    def __post_init__(self) -> None:
        _positive(self.top, "reference.divider.top")
        _positive(self.bottom, "reference.divider.bottom")


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
                _positive(value, f"resistors.{key}")

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
            _not_negative(getattr(self, key), f"output.{key}")


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
        _positive(self.pullup, "output.pullup")
        if self.pullup_volts is not None:
            _finite(self.pullup_volts, "output.pullup_volts")
        if self.low_volts is not None:
            _finite(self.low_volts, "output.low_volts")
        _not_negative(self.load_capacitance, "output.load_capacitance")


@dataclass(frozen=True)
class Comparator:
    """The comparator's input errors, optional common-mode input range and propagation delay.

    The stage switches where V+ - V- = offset; ``bias_current`` flows into each input pin.
    """

    offset: float = 0.0
    bias_current: float = 0.0
    common_mode_low: float | None = None
    common_mode_high: float | None = None
    delay: float = 0.0

    def __post_init__(self) -> None:
        _finite(self.offset, "comparator.offset")
        _finite(self.bias_current, "comparator.bias_current")
        _not_negative(self.delay, "comparator.delay")
        for key in ("common_mode_low", "common_mode_high"):
            if getattr(self, key) is not None:
                _finite(getattr(self, key), f"comparator.{key}")
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
        _not_negative(self.resistance, "source.resistance")
        for key in ("low", "high"):
            if getattr(self, key) is not None:
                _finite(getattr(self, key), f"source.{key}")
        if self.low is not None and self.high is not None and self.low >= self.high:
            raise DesignError("source: low must be below high")


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
    front_end: FrontEnd | None = None  # bandcalc.frontend: divider or sensor ahead of the signal
    name: str = ""
    notes: str = ""
    tolerances: Tolerances | None = None  # spread of the parts; None: see bandcalc.spread
    protective: bool | None = None  # guards people or property; None: judged from name and notes

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

    def signal_range(self) -> tuple[float, float]:
        """The lowest and highest signal the source can reach, volts (default: the rails)."""
        low = self.supply.negative if self.source.low is None else self.source.low
        high = self.supply.positive if self.source.high is None else self.source.high
        return low, high


# --- JSON ------------------------------------------------------------------------------------

_TOP_KEYS = ("format", "name", "notes", "stage", "supply", "reference", "resistors", "output",
             "comparator", "source", "tolerances", "front_end", "protective")
_UNITS = {"volts": "V", "offset": "V", "bias_current": "A", "delay": "s", "load_capacitance": "F",
          "high_drop": "V", "low_drop": "V", "pullup_volts": "V", "low_volts": "V",
          "positive": "V", "negative": "V", "common_mode_low": "V", "common_mode_high": "V",
          "low": "V", "high": "V"}
_OHM_KEYS = {"resistance", "pullup", "top", "bottom", *RESISTOR_KEYS}


def _section(data: Any, key: str, allowed: tuple[str, ...], required: tuple[str, ...] = ()) -> dict:
    if not isinstance(data, dict):
        raise DesignError(f"{key}: must be an object with keys {', '.join(allowed)}")
    unknown = [k for k in data if k not in allowed]
    if unknown:
        raise DesignError(f"{key}.{unknown[0]}: unknown key; allowed: {', '.join(allowed)}")
    missing = [k for k in required if k not in data]
    if missing:
        raise DesignError(f"{key}.{missing[0]}: missing; required: {', '.join(required)}")
    return data


def _values(data: dict, key: str) -> dict[str, float | None]:
    """Read each entry of a section as a number (resistances in either notation)."""
    out: dict[str, float | None] = {}
    for name, raw in data.items():
        where = f"{key}.{name}"
        if raw is None:
            out[name] = None
            continue
        try:
            if name in _OHM_KEYS:
                out[name] = parse_resistance(raw, where)
            else:
                out[name] = parse_quantity(raw, _UNITS.get(name, ""), where)
        except UnitError as exc:
            raise DesignError(str(exc)) from None
    return out


def _reference_from(data: Any) -> FixedReference | DividerReference | None:
    if data is None:
        return None
    data = _section(data, "reference", ("volts", "divider"))
    if len(data) != 1:
        raise DesignError('reference: give exactly one of {"volts": V} or '
                          '{"divider": {"top": R, "bottom": R}}')
    if "volts" in data:
        return FixedReference(**_values(data, "reference"))
    div = _section(data["divider"], "reference.divider", ("top", "bottom"), ("top", "bottom"))
    return DividerReference(**_values(div, "reference.divider"))


def _output_from(data: Any) -> PushPull | OpenDrain:
    if data is None:
        return PushPull()
    kinds = ("push-pull", "open-drain")
    if not isinstance(data, dict) or data.get("kind") not in kinds:
        got = data.get("kind") if isinstance(data, dict) else data
        raise DesignError(f"output.kind: {got!r} is not an output kind; allowed: {', '.join(kinds)}")
    body = {k: v for k, v in data.items() if k != "kind"}
    if data["kind"] == "push-pull":
        allowed = ("kind", "high_drop", "low_drop", "resistance", "load_capacitance")
        _section(data, "output", allowed)
        return PushPull(**_values(body, "output"))
    allowed = ("kind", "pullup", "pullup_volts", "low_volts", "load_capacitance")
    _section(data, "output", allowed, ("pullup",))
    return OpenDrain(**_values(body, "output"))


def _plain_section(cls: type, data: Any, key: str, required: tuple[str, ...] = ()) -> Any:
    allowed = tuple(f.name for f in fields(cls))
    if data is None and not required:
        return cls()
    return cls(**_values(_section(data, key, allowed, required), key))


def _front_end_from(data: Any) -> FrontEnd | None:
    from .frontend import front_end_from_dict  # here: bandcalc.frontend builds on this module

    return front_end_from_dict(data)


def design_from_dict(data: Any) -> Design:
    """Build a validated Design from the JSON shape; raise DesignError naming the key at fault."""
    data = _section(data, "design", _TOP_KEYS, ("format", "stage", "supply", "resistors"))
    if data["format"] != FORMAT:
        raise DesignError(f"format: {data['format']!r} is not a design file format this version reads; "
                          f"allowed: {FORMAT}")
    for key in ("name", "notes"):
        if not isinstance(data.get(key, ""), str):
            raise DesignError(f"{key}: must be text")
    if data.get("protective") not in (None, True, False):
        raise DesignError("protective: must be true or false (or left out)")
    resistors = _section(data["resistors"], "resistors", RESISTOR_KEYS, ("feedback",))
    return Design(
        stage=data["stage"],
        supply=_plain_section(Supply, data["supply"], "supply", ("positive",)),
        resistors=Resistors(**_values(resistors, "resistors")),
        output=_output_from(data.get("output")),
        reference=_reference_from(data.get("reference")),
        comparator=_plain_section(Comparator, data.get("comparator"), "comparator"),
        source=_plain_section(Source, data.get("source"), "source"),
        front_end=_front_end_from(data.get("front_end")),
        name=data.get("name", ""),
        notes=data.get("notes", ""),
        protective=data.get("protective"),
        tolerances=_tolerances_from(data.get("tolerances")),
    )


def _tolerances_from(data: Any) -> Tolerances | None:
    try:
        return None if data is None else tolerances_from_dict(data, RESISTOR_KEYS)
    except ToleranceError as exc:
        raise DesignError(str(exc)) from None


def _dropping_none(obj: Any) -> dict:
    return {f.name: getattr(obj, f.name) for f in fields(obj) if getattr(obj, f.name) is not None}


def design_to_dict(design: Design) -> dict:
    """The JSON shape of a design; ``design_from_dict(design_to_dict(d)) == d``."""
    out: dict[str, Any] = {"format": FORMAT, "name": design.name, "notes": design.notes}
    if design.protective is not None:
        out["protective"] = design.protective
    out.update({"stage": design.stage, "supply": _dropping_none(design.supply)})
    if isinstance(design.reference, FixedReference):
        out["reference"] = {"volts": design.reference.volts}
    elif isinstance(design.reference, DividerReference):
        out["reference"] = {"divider": _dropping_none(design.reference)}
    out["resistors"] = design.resistors.present()
    out["output"] = {"kind": design.output.kind, **_dropping_none(design.output)}
    out["comparator"] = _dropping_none(design.comparator)
    out["source"] = _dropping_none(design.source)
    if design.tolerances is not None:
        out["tolerances"] = tolerances_to_dict(design.tolerances)
    if design.front_end is not None:
        out["front_end"] = design.front_end.to_dict()
    return out


def load_design(path: str | Path) -> Design:
    """Read a design file; errors name the file and the key at fault."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise DesignError(f"{path}: cannot read the file ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise DesignError(f"{path}: not a UTF-8 text file") from None
    return design_from_json(text, str(path))


def design_from_json(text: str, where: str = "design") -> Design:
    """Parse JSON text into a Design; errors start with ``where``."""
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise DesignError(f"{where}: not valid JSON (line {exc.lineno}, "
                          f"column {exc.colno}: {exc.msg})") from None
    try:
        return design_from_dict(data)
    except DesignError as exc:
        raise DesignError(f"{where}: {exc}") from None
    except TypeError as exc:  # a wrong field reaching a dataclass constructor
        raise DesignError(f"{where}: {exc}") from None


def design_to_json(design: Design) -> str:
    return json.dumps(design_to_dict(design), indent=2, ensure_ascii=False) + "\n"


def save_design(design: Design, path: str | Path) -> None:
    Path(path).write_text(design_to_json(design), encoding="utf-8")


__all__ += ["design_from_json", "design_to_json"]
