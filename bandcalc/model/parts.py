"""Every part of a design by its design-file path: one table of names, values read and written by path,
and the tolerance each resistor gets.

A path names a value the way the design's sections do: ``"resistors.feedback"``,
``"supply.positive"``, ``"reference.top"`` (a divider reference), ``"output.pullup"``,
``"front_end.fixed"``, ``"front_end.steinhart_hart[1]"`` (one element of a list).  A resistor's
*key* is its path without ``"resistors."`` (``"feedback"``, ``"reference.top"``): the key that
outputs (power, currents, fit positions) and the tolerances section use.

:data:`PARTS` is the one table of the resistors people see: designator on the schematic, the
name the page and summary use, a short column label, the position phrase of the component
table, and, for a leg on the + pin, what its far end joins.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

from bandcalc.errors import DesignError
from bandcalc.model.design import Design, DividerReference, FixedReference, OpenDrain
from bandcalc.model.front_end import front_end_of
from bandcalc.model.standard_values import TOLERANCE, EseriesError, nearest

if TYPE_CHECKING:
    from bandcalc.model.tolerances import Tolerances

__all__ = [
    "PARTS",
    "TOLERANCED",
    "Part",
    "PartTolerance",
    "parameters",
    "part",
    "resistors_of",
    "series_tolerance",
    "tolerance_of",
    "value_at",
    "with_value",
    "with_values",
]


@dataclass(frozen=True)
class Part:
    """A resistor position: its path, the names people use for it, and where it sits."""

    path: str  # design-file path, "resistors.feedback"
    designator: str  # on the schematic and in the summary's component table, "Rfb"
    name: str  # for people, "Feedback resistor"
    label: str  # short column heading, "Feedback"
    position: str  # where it sits, "output to the + pin"; "{pin}" stands for the input's pin
    far_end: str = ""  # a + pin leg: what its far end joins, "the positive rail"
    bought: bool = True  # a part on the board (not a source's or sensor's own resistance)

    @property
    def key(self) -> str:
        """The key in outputs and in the tolerances section: the path without "resistors."."""
        return self.path.removeprefix("resistors.")


PARTS: tuple[Part, ...] = (
    Part("source.resistance", "Rsrc", "Source resistance", "Source", "in series with the signal",
         bought=False),
    Part("filter.resistance", "Rflt", "Input filter resistor", "Filter", "in series with the signal, "
         "ahead of the filter capacitor"),
    Part("resistors.input", "Rin", "Input resistor", "Input", "signal to the {pin} pin"),
    Part("resistors.feedback", "Rfb", "Feedback resistor", "Feedback", "output to the + pin"),
    Part("resistors.to_positive", "Rup", "Resistor to the positive rail", "To + rail",
         "+ pin to the positive rail", "the positive rail"),
    Part("resistors.to_negative", "Rdn", "Resistor to the negative rail", "To − rail",
         "+ pin to the negative rail", "the negative rail"),
    Part("resistors.to_ground", "Rgnd", "Resistor to ground", "To ground", "+ pin to ground", "ground"),
    Part("resistors.to_reference", "Rref", "Resistor to the reference", "To reference",
         "+ pin to the reference", "the reference"),
    Part("reference.top", "Rtop", "Divider, upper resistor", "Divider top",
         "reference divider, positive rail side"),
    Part("reference.bottom", "Rbot", "Divider, lower resistor", "Divider bottom",
         "reference divider, negative rail side"),
    Part("output.pullup", "Rpu", "Pull-up resistor", "Pull-up", "output pull-up"),
    Part("front_end.top", "Rd1", "Sense divider, upper resistor", "Sense top",
         "sense divider, from the measured voltage"),
    Part("front_end.bottom", "Rd2", "Sense divider, lower resistor", "Sense bottom",
         "sense divider, to ground"),
    Part("front_end.fixed", "Rfix", "Thermistor's fixed resistor", "Fixed",
         "thermistor divider, fixed resistor"),
    Part("front_end.resistance", "Rsen", "Sensor output resistance", "Sensor", "sensor output", bought=False),
    Part("load.resistance", "RL", "Load on the output", "Load", "output to the load's voltage", bought=False),
)
_BY_PATH = {p.path: p for p in PARTS}
#: Keys of the resistors that take a tolerance (the keys of the tolerances section).
TOLERANCED = tuple(p.key for p in PARTS if p.bought)


def part(key: str) -> Part:
    """The table row of a resistor by key ("feedback", "reference.top") or path ("resistors.feedback")."""
    found = _BY_PATH.get(key) or _BY_PATH.get(f"resistors.{key}")
    if found is None:
        raise DesignError(f"{key}: not a resistor position; allowed: {', '.join(p.key for p in PARTS)}")
    return found


def resistors_of(design: Design) -> dict[str, float]:
    """Every resistor the design has (ohms) by key: the stage's, an input filter's, a reference
    divider, a pull-up, then the front end's; in that order."""
    values = dict(design.resistors.present())
    if design.filter is not None and design.filter.resistance > 0:  # 0 ohm: the capacitor alone
        values["filter.resistance"] = design.filter.resistance
    if isinstance(design.reference, DividerReference):
        values["reference.top"], values["reference.bottom"] = design.reference.top, design.reference.bottom
    if isinstance(design.output, OpenDrain):
        values["output.pullup"] = design.output.pullup
    values.update(front_end_of(design).resistors())
    return values


def parameters(design: Design) -> dict[str, float]:
    """Every numeric value the model reads, flat, keyed by path: the stage's and its front end's.

    ``output.pullup_volts`` and ``output.low_volts`` appear only when set, so that by default
    they follow their rail when ``supply.*`` is varied; ``load.resistance`` and ``load.volts`` only
    where the output drives a resistive load.
    """
    p: dict[str, float] = {
        "supply.positive": design.supply.positive,
        "supply.negative": design.supply.negative,
        "comparator.offset": design.comparator.offset,
        "comparator.bias_current": design.comparator.bias_current,
        "comparator.offset_current": design.comparator.offset_current or 0.0,
        "comparator.hysteresis": design.comparator.hysteresis or 0.0,
        "source.resistance": design.source.resistance,
    }
    p.update({f"resistors.{k}": v for k, v in design.resistors.present().items()})
    if design.filter is not None:
        p["filter.resistance"] = design.filter.resistance
    ref = design.reference
    if isinstance(ref, FixedReference):
        p["reference.volts"] = ref.volts
    elif isinstance(ref, DividerReference):
        p["reference.top"] = ref.top
        p["reference.bottom"] = ref.bottom
    out = design.output
    if isinstance(out, OpenDrain):
        p["output.pullup"] = out.pullup
        if out.pullup_volts is not None:
            p["output.pullup_volts"] = out.pullup_volts
        if out.low_volts is not None:
            p["output.low_volts"] = out.low_volts
    else:
        p["output.high_drop"] = out.high_drop
        p["output.low_drop"] = out.low_drop
        p["output.resistance"] = out.resistance
    load = design.load
    if load is not None and load.resistance is not None:
        p["load.resistance"] = load.resistance
        p["load.volts"] = load.volts
    p.update(front_end_of(design).parameters())
    return p


# --- reading and writing by path -----------------------------------------------------------------

_INDEXED = re.compile(r"^(?P<name>\w+)\[(?P<index>\d)\]$")


def _section_and_name(design: Design, path: str) -> tuple[Any, str, int | None]:
    """The section object, the field name and, for "name[i]", the index into a tuple field."""
    section, _, name = path.partition(".")
    obj = getattr(design, section, None)
    indexed = _INDEXED.match(name)
    index = int(indexed["index"]) if indexed else None
    name = indexed["name"] if indexed else name
    if obj is None or not name or not hasattr(obj, name):
        raise DesignError(f"{path}: not a value of this design")
    value = getattr(obj, name)
    if index is not None and not (isinstance(value, tuple) and index < len(value)):
        raise DesignError(f"{path}: not a value of this design")
    return obj, name, index


def value_at(design: Design, path: str) -> Any:
    """The value at a design-file path such as "resistors.feedback", "reference.top" or
    "front_end.steinhart_hart[1]" (one element of a list in the file)."""
    obj, name, index = _section_and_name(design, path)
    value = getattr(obj, name)
    return value if index is None else value[index]


def with_value(design: Design, path: str, value: Any) -> Design:
    """The design with one value changed, validated.

    Parameters
    ----------
    design : Design
    path : str
        Section and field: "resistors.feedback", "supply.positive", "reference.volts",
        "reference.top", "output.pullup", "comparator.offset", ...; "name" and "notes" take text.
    value
        The new value in SI units (``None`` empties an optional field), or text for "name"/"notes".
    """
    if path in ("name", "notes"):
        if not isinstance(value, str):
            raise DesignError(f"{path}: must be text")
        return replace(design, **{path: value})
    obj, name, index = _section_and_name(design, path)  # raises for a path this design does not have
    if index is not None:
        value = tuple(value if i == index else v for i, v in enumerate(getattr(obj, name)))
    section = path.partition(".")[0]
    try:
        return replace(design, **{section: replace(obj, **{name: value})})
    except TypeError as exc:
        raise DesignError(f"{path}: {exc}") from None


def with_values(design: Design, values: dict[str, Any]) -> Design:
    """The design with several values changed by path (one after the other, each validated).

    ``"reference.volts"`` on a design whose reference is a divider (or none) puts a fixed
    reference of that voltage in its place.
    """
    for path, value in values.items():
        if path == "reference.volts" and not isinstance(design.reference, FixedReference):
            design = replace(design, reference=FixedReference(value))
        else:
            design = with_value(design, path, value)
    return design


# --- the tolerance a resistor gets -----------------------------------------------------------------

_PRECISION_PERCENT = 1.0
_PRECISION_SERIES = ("E24", "E48", "E96", "E192")
_MATCH_RTOL = 1e-9


def series_tolerance(ohms: float) -> tuple[float, str | None]:
    """Default tolerance (percent) of a resistor, from the series its value belongs to.

    The coarsest series from E24 upward that holds the value gives the tolerance: E24 5 %,
    E48 2 %, E96 1 %, E192 0.5 % (IEC 60063 usual tolerances, common practice).  E3 to E12 are
    skipped: their values are all in E24, and parts are rarely bought at 10 % or worse today.
    A value in none of these series implies a precision part: 1 % (common practice).

    Returns
    -------
    (percent, series name or None)
    """
    for key in _PRECISION_SERIES:
        try:
            hit = math.isclose(float(nearest(key, ohms)), ohms, rel_tol=_MATCH_RTOL)
        except EseriesError:
            return _PRECISION_PERCENT, None
        if hit:
            return 100.0 * TOLERANCE[key], key
    return _PRECISION_PERCENT, None


@dataclass(frozen=True)
class PartTolerance:
    """A resistor's tolerance (percent, +/-) and why it has it.

    ``given`` is "part" (the tolerances section names this resistor), "all" (the section's one
    figure for every resistor) or None (the default: the usual tolerance of the series its value
    belongs to, :func:`series_tolerance`).
    """

    percent: float
    series: str | None  # the series the value belongs to, None if none of E24..E192
    given: str | None

    @property
    def why(self) -> str:
        """Plain words: "given for this resistor", "usual for E24", "in no series: a precision part"."""
        if self.given == "part":
            return "given for this resistor"
        if self.given == "all":
            return "given for every resistor"
        return f"usual for {self.series}" if self.series else "in no series: a precision part"


def tolerance_of(design: Design, key: str, tolerances: Tolerances | None = None) -> PartTolerance:
    """The tolerance a resistor takes, by key ("feedback", "reference.top", "front_end.fixed").

    From ``tolerances`` where given, else from the design's own tolerances section.
    """
    ohms = resistors_of(design).get(key)
    if ohms is None:
        raise DesignError(f"{key}: not a resistor of this design; it has {', '.join(resistors_of(design))}")
    default, series = series_tolerance(ohms)
    tol = tolerances if tolerances is not None else design.tolerances
    if tol is not None and dict(tol.resistors.parts).get(key) is not None:
        return PartTolerance(dict(tol.resistors.parts)[key], series, "part")
    if tol is not None and tol.resistors.get(key) is not None:
        return PartTolerance(tol.resistors.get(key), series, "all")
    return PartTolerance(default, series, None)

