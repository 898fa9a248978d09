"""Names the page gives the parts and varied quantities, keyed as in the design file.

Resistors take their names from the one table of parts (:data:`bandcalc.model.parts.PARTS`).
"""

from __future__ import annotations

from bandcalc.errors import DesignError
from bandcalc.model.parts import part

__all__ = ["factor_name", "part_name"]

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
    "front_end.r25": "Thermistor, resistance at 25 °C",
    "front_end.beta": "Thermistor, Beta",
}


def part_name(key: str) -> str:
    """A resistor's name with its designator on the schematic: "Feedback resistor (Rfb)"; other keys
    as they are."""
    try:
        row = part(key)
    except DesignError:
        return key
    return f"{row.name} ({row.designator})"


def factor_name(name: str) -> str:
    """A varied quantity's name (``bandcalc.spread.factors.Factor.name``) for people."""
    return _OTHERS[name] if name in _OTHERS else part_name(name)
