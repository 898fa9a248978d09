"""Tolerance grades a fitted resistor may be bought in, their relative costs, and the choices they make.

A grade is a tolerance, percent (+/-).  Its cost is relative: only the order and the ratios of
the costs matter, summed over the fitted parts.  Written ``5,1,0.5,0.1`` (each grade at its
default cost, :data:`DEFAULT_COSTS`) or with costs, ``5:1,1:1.2,0.1:5`` (``percent:cost``).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.tolerances import MAX_PERCENT

__all__ = ["DEFAULT_COSTS", "DEFAULT_GRADES", "GradeError", "Grades", "choices", "parse_grades"]

#: Relative cost of a resistor by tolerance grade (percent): typical of the trade for general-purpose
#: chip and film resistors, from memory (thick film at 5 % and 1 % cost about the same; 0.5 % and
#: tighter are thin film, costing several times more).  Give your own as ``percent:cost``.
DEFAULT_COSTS = MappingProxyType({20.0: 1.0, 10.0: 1.0, 5.0: 1.0, 2.0: 1.1, 1.0: 1.2, 0.5: 2.0, 0.25: 3.0,
                                  0.1: 5.0, 0.05: 10.0, 0.02: 20.0, 0.01: 30.0})
#: The grades offered where none are given (the page's starting choice).
DEFAULT_GRADES = "5,1,0.5,0.1"
_MAX_GRADES = 8


class GradeError(BandcalcError):
    """Grades that cannot be used; the message names what is wrong."""


@dataclass(frozen=True)
class Grades:
    """Tolerance grades (percent), loosest first, and the relative cost of each."""

    percents: tuple[float, ...]
    costs: tuple[float, ...]

    def __post_init__(self) -> None:
        if not self.percents or len(self.percents) != len(self.costs):
            raise GradeError("grades: give one or more grades, each with a cost")
        order = sorted(range(len(self.percents)), key=lambda i: -self.percents[i])
        object.__setattr__(self, "percents", tuple(float(self.percents[i]) for i in order))
        object.__setattr__(self, "costs", tuple(float(self.costs[i]) for i in order))

    @property
    def tightest(self) -> float:
        return self.percents[-1]

    def text(self) -> str:
        """As the option takes them: ``5:1,1:1.2``."""
        return ",".join(f"{p:g}:{c:g}" for p, c in zip(self.percents, self.costs, strict=True))


def _number(text: str, what: str, name: str) -> float:
    try:
        value = float(text.strip().removesuffix("%"))
    except ValueError:
        raise GradeError(f"{name}: {what} {text.strip()!r} is not a number") from None
    if not math.isfinite(value):
        raise GradeError(f"{name}: {what} {text.strip()!r} is not a finite number")
    return value


def parse_grades(text: str, name: str = "--grades") -> Grades:
    """Grades from ``5,1,0.5,0.1`` or ``5:1,1:1.2,0.1:5`` (percent, or percent:relative cost)."""
    items = [item for item in str(text).split(",")]
    if not str(text).strip() or any(not item.strip() for item in items):
        raise GradeError(f"{name}: write grades in percent separated by commas, such as {DEFAULT_GRADES}, "
                         f"each with a cost if you like (5:1,1:1.2,0.1:5); got {text!r}")
    if len(items) > _MAX_GRADES:
        raise GradeError(f"{name}: at most {_MAX_GRADES} grades, got {len(items)}")
    percents, costs = [], []
    for item in items:
        grade, sep, cost = item.partition(":")
        percent = _number(grade, "grade", name)
        if not 0 < percent <= MAX_PERCENT:
            raise GradeError(f"{name}: a grade must be above 0 and at most {MAX_PERCENT:g} %, "
                             f"got {grade.strip()!r}")
        if percent in percents:
            raise GradeError(f"{name}: grade {percent:g} % is given twice")
        if sep:
            value = _number(cost, f"the cost of {percent:g} %", name)
            if value <= 0:
                raise GradeError(f"{name}: the cost of {percent:g} % must be above 0, got {cost.strip()!r}")
        elif percent in DEFAULT_COSTS:
            value = DEFAULT_COSTS[percent]
        else:
            known = ", ".join(f"{p:g}" for p in DEFAULT_COSTS)
            raise GradeError(f"{name}: no default cost for a {percent:g} % grade (defaults for {known}); "
                             f"give one as {percent:g}:COST")
        percents.append(percent)
        costs.append(value)
    return Grades(tuple(percents), tuple(costs))


def choices(grades: Grades, parts: int) -> tuple[np.ndarray, np.ndarray]:
    """Every assignment of a grade to each of ``parts`` parts, cheapest first (equal costs: looser
    first): percents (a, parts) and the total cost of each (a,)."""
    index = np.array(list(itertools.product(range(len(grades.percents)), repeat=parts)), dtype=int)
    index = index.reshape(-1, parts)
    percents = np.array(grades.percents)[index]
    cost = np.array(grades.costs)[index].sum(axis=1)
    order = np.lexsort((-percents.sum(axis=1), np.round(cost, 9)))
    return percents[order], cost[order]
