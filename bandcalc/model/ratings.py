"""Resistor ratings: the working voltage and power each resistor of a design may take.

The ``"ratings"`` section of a design file: the package ``size`` of every resistor (default
:data:`DEFAULT_SIZE`), and for some resistors (``parts``, keyed like the tolerances section:
``"input"``, ``"reference.top"``, ``"front_end.top"``) a size of their own or their own
``working_voltage`` (V) and ``power`` (W) from the data sheet.  A size stands for the usual
figures of its package (:data:`PACKAGES`); a figure given for a part wins over its size's.

Power is judged derated: a resistor should be rated for at least :data:`DERATING` times the most
it dissipates (common practice); the findings and the design summary use the same rule, through
:func:`power_needed`.  The working voltage is a limit of the part as it is (no derating).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from bandcalc.errors import DesignError
from bandcalc.model.parts import TOLERANCED
from bandcalc.model.units import UnitError, parse_quantity
from bandcalc.model.validation import positive, section

if TYPE_CHECKING:
    from bandcalc.model.design import Design

__all__ = [
    "DEFAULT_SIZE",
    "DERATING",
    "PACKAGES",
    "PartRating",
    "Rating",
    "Ratings",
    "power_needed",
    "rating_of",
    "ratings_from_dict",
    "ratings_to_dict",
    "series_count",
    "size_for",
]

# Usual maximum working voltage (V) and power rating at 70 C (W) of common resistor packages:
# thick-film chip resistors by EIA size, and axial metal-film resistors by body size.  Typical
# data-sheet figures, from memory; parts differ (high-voltage and anti-surge series go well
# above these): give the part's own figures in the ratings section where they matter.
PACKAGES: dict[str, tuple[float, float]] = {
    "0402": (50.0, 0.0625),
    "0603": (75.0, 0.1),
    "0805": (150.0, 0.125),
    "1206": (200.0, 0.25),
    "1210": (200.0, 0.5),
    "2010": (200.0, 0.75),
    "2512": (200.0, 1.0),
    "axial-0207": (250.0, 0.25),
    "axial-0414": (350.0, 0.5),
}
#: The size every resistor has where the design does not say: small chip resistors (common practice).
DEFAULT_SIZE = "0603"
#: A resistor is rated for at least twice the most it dissipates (common practice).
DERATING = 2.0
_PART_KEYS = ("size", "working_voltage", "power")


def _size_checked(size: Any, where: str) -> str:
    if not isinstance(size, str) or size not in PACKAGES:
        raise DesignError(f"{where}: {size!r} is not a size bandcalc knows; allowed: {', '.join(PACKAGES)} "
                          f"(or give working_voltage and power for the part)")
    return size


@dataclass(frozen=True)
class PartRating:
    """One resistor's own rating: a size, and/or its working voltage (V) and power (W)."""

    size: str | None = None
    working_voltage: float | None = None
    power: float | None = None

    def check(self, where: str) -> None:
        if self.size is not None:
            _size_checked(self.size, f"{where}.size")
        for key in ("working_voltage", "power"):
            if getattr(self, key) is not None:
                positive(getattr(self, key), f"{where}.{key}")


@dataclass(frozen=True)
class Ratings:
    """The ratings section: a size for every resistor and ratings of some by key."""

    size: str = DEFAULT_SIZE
    parts: tuple[tuple[str, PartRating], ...] = ()

    def __post_init__(self) -> None:
        _size_checked(self.size, "ratings.size")
        for key, rating in self.parts:
            if key not in TOLERANCED:
                raise DesignError(f"ratings.parts.{key}: not a resistor position; "
                                  f"allowed: {', '.join(TOLERANCED)}")
            rating.check(f"ratings.parts.{key}")
        object.__setattr__(self, "parts", tuple(sorted(self.parts)))

    def part(self, key: str) -> PartRating:
        return dict(self.parts).get(key, PartRating())


@dataclass(frozen=True)
class Rating:
    """What a resistor may take: working voltage (V), power (W), and where the figures come from."""

    volts: float
    watts: float
    size: str | None  # the package the figures come from, None where both are given for the part
    why: str  # "0603, the default size (typical figures, from memory)", "given for this part", ...


def rating_of(design: Design, key: str) -> Rating:
    """The working voltage and power rating of the resistor ``key`` ("input", "front_end.top")."""
    ratings = design.ratings if design.ratings is not None else Ratings()
    own = ratings.part(key)
    size = own.size or ratings.size
    volts, watts = PACKAGES[size]
    given = [k.replace("_", " ") for k in ("working_voltage", "power") if getattr(own, k) is not None]
    if len(given) == 2:
        return Rating(own.working_voltage, own.power, None, "given for this part")  # type: ignore[arg-type]
    if own.size is not None:
        why = f"{size}, given for this part"
    elif design.ratings is not None and design.ratings.size != DEFAULT_SIZE:
        why = f"{size}, the design's size"
    else:
        why = f"{size}, the default size"
    why += " (typical figures, from memory)"
    if given:
        why += f"; {given[0]} given for this part"
    return Rating(own.working_voltage or volts, own.power or watts, size, why)


def power_needed(watts: float) -> float:
    """The power rating a resistor dissipating ``watts`` needs: :data:`DERATING` times it."""
    return watts * DERATING


def series_count(volts: float, rating: float) -> int:
    """How many equal resistors in series share ``volts`` within a working voltage of ``rating``."""
    return max(1, math.ceil(volts / rating - 1e-12))


def size_for(volts: float, watts: float) -> str | None:
    """The smallest package (by power) whose usual ratings take ``volts`` and, derated, ``watts``."""
    fits = [(w, size) for size, (v, w) in PACKAGES.items() if v >= volts and w >= power_needed(watts)]
    return min(fits)[1] if fits else None


# --- the design-file section ---------------------------------------------------------------------

def _number(raw: Any, unit: str, where: str) -> float:
    try:
        return parse_quantity(raw, unit, where)
    except UnitError as exc:
        raise DesignError(str(exc)) from None


def ratings_from_dict(data: Any) -> Ratings:
    """Build Ratings from the JSON shape; raise DesignError naming the key at fault."""
    data = section(data, "ratings", ("size", "parts"))
    parts = section(data.get("parts", {}), "ratings.parts", TOLERANCED)
    built = []
    for key, raw in parts.items():
        where = f"ratings.parts.{key}"
        body = section(raw, where, _PART_KEYS)
        values = {k: _number(body[k], unit, f"{where}.{k}") for k, unit in
                  (("working_voltage", "V"), ("power", "W")) if body.get(k) is not None}
        built.append((key, PartRating(size=body.get("size"), **values)))
    return Ratings(size=data.get("size", DEFAULT_SIZE), parts=tuple(built))


def ratings_to_dict(ratings: Ratings) -> dict:
    """The JSON shape; ``ratings_from_dict(ratings_to_dict(r)) == r``."""
    out: dict[str, Any] = {"size": ratings.size}
    if ratings.parts:
        out["parts"] = {key: {k: getattr(r, k) for k in _PART_KEYS if getattr(r, k) is not None}
                        for key, r in ratings.parts}
    return out
