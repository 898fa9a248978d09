"""A finding: one thing the checks found about a design, as a sentence with the numbers behind it.

Programs read findings by ``kind``; people read the ``message``, which already holds the numbers in
readable units.  ``values`` holds the same numbers in SI units (and the names that place them: the
pin, the part, the rail), under keys that depend on the kind.  ``level`` is ``"warning"`` for a
problem to look at and ``"note"`` for a fact worth knowing that needs no change (the power-up note).

Kinds (``analyze --json`` writes them as they are; other programs may rely on these names):

``input_beyond_rail``   an input pin driven past a supply rail somewhere in the input's range
``common_mode``         an input pin outside the comparator's common-mode input range
``differential_input``  the difference between the pins beyond the comparator's given maximum
``working_voltage``     a resistor's voltage above its working-voltage rating
``power``               a resistor's power, derated, above its power rating
``logic_levels``        an output level that misses the receiving input's threshold
``power_up``            the input can rest inside the band, where the first state is not set
``no_hysteresis``, ``latches``, ``weak_pullup``, ``high_value``, ``self_heating``
                        the switching points and the network themselves
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from bandcalc.errors import BandcalcError

__all__ = ["KINDS", "LEVELS", "Finding", "finding_to_dict"]

KINDS = ("input_beyond_rail", "common_mode", "differential_input", "working_voltage", "power",
         "logic_levels", "power_up", "no_hysteresis", "latches", "weak_pullup", "high_value",
         "self_heating")
LEVELS = ("warning", "note")
_RESERVED = ("kind", "level", "message")


@dataclass(frozen=True)
class Finding:
    """One finding: its kind, the sentence people read, and the numbers behind it (SI units)."""

    kind: str
    message: str
    values: dict[str, Any] = field(default_factory=dict)
    level: str = "warning"

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise BandcalcError(f"finding kind {self.kind!r}; allowed: {', '.join(KINDS)}")
        if self.level not in LEVELS:
            raise BandcalcError(f"finding level {self.level!r}; allowed: {', '.join(LEVELS)}")
        clash = sorted(set(self.values) & set(_RESERVED))
        if clash:
            raise BandcalcError(f"finding values: {clash[0]!r} is a reserved key")

    def __str__(self) -> str:
        return self.message


def _plain(value: Any) -> Any:
    """A value as strict JSON holds it: a number that is not finite becomes null."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def finding_to_dict(f: Finding) -> dict[str, Any]:
    """``{"kind", "level", "message", ...the numbers}``: strict-JSON ready (no NaN or infinity)."""
    return {"kind": f.kind, "level": f.level, "message": f.message,
            **{k: _plain(v) for k, v in f.values.items()}}
