"""Names the page gives the parts and varied quantities, keyed as in the design file."""

from __future__ import annotations

from bandcalc.outputs.schematic import DESIGNATORS

__all__ = ["PART_NAMES", "factor_name", "part_name"]

#: Resistors by their key in ``Analysis.power`` and in the tolerances section.
PART_NAMES = {
    "input": "Input resistor",
    "feedback": "Feedback resistor",
    "to_positive": "Resistor to the positive rail",
    "to_negative": "Resistor to the negative rail",
    "to_ground": "Resistor to ground",
    "to_reference": "Resistor to the reference",
    "reference.top": "Divider, upper resistor",
    "reference.bottom": "Divider, lower resistor",
    "output.pullup": "Pull-up resistor",
    "front_end.top": "Sense divider, upper resistor",
    "front_end.bottom": "Sense divider, lower resistor",
    "front_end.fixed": "Thermistor's fixed resistor",
    "front_end.resistance": "Sensor output resistance",
}
_OTHERS = {
    "supply.positive": "Positive rail",
    "supply.negative": "Negative rail",
    "output.pullup_volts": "Pull-up supply",
    "output.low_volts": "Output low level",
    "reference.volts": "Reference voltage",
    "comparator.offset": "Offset voltage",
    "comparator.bias_current": "Bias current",
    "temperature": "Temperature",
    "reference.drift": "Reference drift",
    "comparator.offset_drift": "Offset drift",
    "front_end.r25": "Thermistor, resistance at 25 C",
    "front_end.beta": "Thermistor, Beta",
}


def part_name(key: str) -> str:
    """A resistor's name with its designator on the schematic: "Feedback resistor (Rfb)"."""
    path = key if "." in key else f"resistors.{key}"
    name = PART_NAMES.get(key, key)
    return f"{name} ({DESIGNATORS[path]})" if path in DESIGNATORS else name


def factor_name(name: str) -> str:
    """A varied quantity's name (``bandcalc.spread.factors.Factor.name``) for people."""
    if name.startswith("resistors."):
        return part_name(name.removeprefix("resistors."))
    return part_name(name) if name in PART_NAMES else _OTHERS.get(name, name)
