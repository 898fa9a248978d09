"""Edits the page's controls make to a design: pure functions, no Streamlit.

Every edit returns a new, validated :class:`~bandcalc.design.Design` or raises
:class:`~bandcalc.design.DesignError` naming what is wrong; the caller keeps the old design.
Where a change of topology needs a part that was not there (a non-inverting stage needs an
input resistor and a reference), the edit fits a stated starting value.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from ..design import (
    LEG_KEYS,
    STAGES,
    Design,
    DesignError,
    DividerReference,
    FixedReference,
    OpenDrain,
    PushPull,
)
from ..eseries import SERIES, nearest, series_values

__all__ = [
    "DECADES_BELOW",
    "DECADES_ABOVE",
    "OUTPUT_KINDS",
    "REFERENCE_KINDS",
    "STARTING_OHMS",
    "reference_kind",
    "slider_options",
    "value_at",
    "with_legs",
    "with_output",
    "with_reference",
    "with_stage",
    "with_value",
]

# A part the user switches on starts at this value (a middle-of-the-road choice, common practice).
STARTING_OHMS = 100e3
REFERENCE_KINDS = ("none", "fixed", "divider")
OUTPUT_KINDS = ("push-pull", "open-drain")
# The resistor sliders span the decade holding the value, one below and one above.
DECADES_BELOW, DECADES_ABOVE = 1, 2


def value_at(design: Design, path: str) -> Any:
    """The value at a design-file path such as "resistors.feedback" or "reference.top"."""
    section, _, name = path.partition(".")
    part = getattr(design, section, None)
    if part is None or not name or not hasattr(part, name):
        raise DesignError(f"{path}: not a value of this design")
    return getattr(part, name)


def with_value(design: Design, path: str, value: Any) -> Design:
    """The design with one value changed, validated.

    Parameters
    ----------
    design : Design
    path : str
        Section and field, as in the design file: "resistors.feedback", "supply.positive",
        "reference.volts", "reference.top", "output.pullup", "comparator.offset", ...
    value
        The new value in SI units (``None`` empties an optional field), or text for "name"/"notes".
    """
    if path in ("name", "notes"):
        if not isinstance(value, str):
            raise DesignError(f"{path}: must be text")
        return replace(design, **{path: value})
    value_at(design, path)  # raises for a path this design does not have
    section, _, name = path.partition(".")
    try:
        return replace(design, **{section: replace(getattr(design, section), **{name: value})})
    except TypeError as exc:
        raise DesignError(f"{path}: {exc}") from None


def _mid_supply(design: Design) -> float:
    return 0.5 * (design.supply.positive + design.supply.negative)


def with_stage(design: Design, stage: str) -> Design:
    """Switch between the non-inverting and the inverting stage.

    A non-inverting stage needs an input resistor and a reference on the - pin: missing ones
    start at 100 kOhm and at mid-supply.
    """
    if stage not in STAGES:
        raise DesignError(f"stage: {stage!r} is not a stage kind; allowed: {', '.join(STAGES)}")
    if stage == "non-inverting":
        resistors = design.resistors
        if resistors.input is None:
            resistors = replace(resistors, input=STARTING_OHMS)
        reference = design.reference or FixedReference(_mid_supply(design))
        return replace(design, stage=stage, resistors=resistors, reference=reference)
    return replace(design, stage=stage)


def with_legs(design: Design, legs: set[str] | list[str] | tuple[str, ...]) -> Design:
    """Fit exactly the named legs on the + pin; a new leg starts at 100 kOhm.

    A leg to the reference brings a mid-supply fixed reference with it if there is none.
    """
    unknown = sorted(set(legs) - set(LEG_KEYS))
    if unknown:
        raise DesignError(f"resistors.{unknown[0]}: not a leg; allowed: {', '.join(LEG_KEYS)}")
    changes = {key: (getattr(design.resistors, key) or STARTING_OHMS) if key in legs else None
               for key in LEG_KEYS}
    reference = design.reference
    if "to_reference" in legs and reference is None:
        reference = FixedReference(_mid_supply(design))
    return replace(design, resistors=replace(design.resistors, **changes), reference=reference)


def reference_kind(design: Design) -> str:
    """"none", "fixed" or "divider"."""
    if isinstance(design.reference, DividerReference):
        return "divider"
    return "fixed" if isinstance(design.reference, FixedReference) else "none"


def with_reference(design: Design, kind: str) -> Design:
    """Change the kind of reference.

    A fixed reference starts at the divider's open-circuit voltage (or mid-supply); a divider
    starts as two 10 kOhm resistors across the rails.
    """
    if kind not in REFERENCE_KINDS:
        raise DesignError(f"reference: {kind!r} is not a reference kind; "
                          f"allowed: {', '.join(REFERENCE_KINDS)}")
    if kind == reference_kind(design):
        return design
    if kind == "none":
        return replace(design, reference=None)
    if kind == "fixed":
        volts = _mid_supply(design)
        if isinstance(design.reference, DividerReference):
            ref = design.reference
            volts = design.supply.negative + design.supply.span * ref.bottom / (ref.top + ref.bottom)
        return replace(design, reference=FixedReference(volts))
    return replace(design, reference=DividerReference(top=10e3, bottom=10e3))


def with_output(design: Design, kind: str) -> Design:
    """Change the output stage; the load capacitance is kept.

    An open-drain output starts with a pull-up of about a twentieth of the feedback resistor
    (E12, between 1 kOhm and 10 kOhm), well under the tenth that keeps its high level close to
    the pull-up supply (common practice).
    """
    if kind not in OUTPUT_KINDS:
        raise DesignError(f"output.kind: {kind!r} is not an output kind; allowed: {', '.join(OUTPUT_KINDS)}")
    if kind == design.output.kind:
        return design
    cap = design.output.load_capacitance
    if kind == "push-pull":
        return replace(design, output=PushPull(load_capacitance=cap))
    pullup = float(nearest("E12", min(10e3, max(1e3, design.resistors.feedback / 20))))
    return replace(design, output=OpenDrain(pullup=pullup, load_capacitance=cap))


def slider_options(series: str, ohms: float) -> tuple[float, ...]:
    """Standard values of ``series`` across the decades around ``ohms``, with ``ohms`` itself.

    A value that is not in the series is kept exactly and sits among its neighbours, so the
    slider can show it.
    """
    if series not in SERIES:
        raise DesignError(f"series: {series!r} is not a standard series; allowed: {', '.join(SERIES)}")
    decade = math.floor(math.log10(ohms))
    low = 10.0 ** (decade - DECADES_BELOW)
    high = 10.0 ** (decade + DECADES_ABOVE) * 0.9999
    values = [float(v) for v in series_values(series, low, high)]
    if ohms not in values:
        values = sorted([*values, float(ohms)])
    return tuple(values)
