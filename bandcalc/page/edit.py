"""Edits the page's controls make to a design: pure functions, no Streamlit.

Every edit returns a new, validated :class:`~bandcalc.model.design.Design` or raises
:class:`~bandcalc.model.design.DesignError` naming what is wrong; the caller keeps the old design.
Where a change of topology needs a part that was not there (a non-inverting stage needs an
input resistor and a reference), the edit fits a stated starting value.
"""

from __future__ import annotations

import math
from dataclasses import replace

from bandcalc.errors import DesignError
from bandcalc.model.design import (
    LEG_KEYS,
    STAGES,
    Design,
    DividerReference,
    FixedReference,
    InputFilter,
    Load,
    OpenDrain,
    PushPull,
    divider_thevenin,
)
from bandcalc.model.front_end import BETA_PAIR, DividerFrontEnd, LinearFrontEnd, ThermistorFrontEnd
from bandcalc.model.ratings import PACKAGES, Ratings
from bandcalc.model.standard_values import SERIES, EseriesError, nearest, series_values
from bandcalc.model.thermistor import beta_between, beta_to_steinhart_hart
from bandcalc.model.units import format_code

__all__ = [
    "DECADES_BELOW",
    "DECADES_ABOVE",
    "EXCITATION_KINDS",
    "FILTER_KINDS",
    "FRONT_END_KINDS",
    "OUTPUT_KINDS",
    "REFERENCE_KINDS",
    "SLIDER_DIGITS",
    "STARTING_OHMS",
    "THERMISTOR_MODELS",
    "beta_temperature",
    "excitation_kind",
    "filter_kind",
    "front_end_kind",
    "in_series",
    "reference_kind",
    "slider_options",
    "thermistor_model",
    "with_beta_temperature",
    "with_excitation",
    "with_filter",
    "with_front_end",
    "with_legs",
    "with_load_value",
    "with_output",
    "with_protective",
    "with_resistor_size",
    "with_reference",
    "with_stage",
    "with_thermistor_model",
]

# A part the user switches on starts at this value (a middle-of-the-road choice, common practice).
STARTING_OHMS = 100e3
REFERENCE_KINDS = ("none", "fixed", "divider")
OUTPUT_KINDS = ("push-pull", "open-drain")
# The resistor sliders span the decade holding the value, one below and one above.
DECADES_BELOW, DECADES_ABOVE = 1, 2
#: Significant digits of the resistor sliders' labels, in the IEC 60062 code ("4k75").
SLIDER_DIGITS = 4
FRONT_END_KINDS = ("none", "divider", "thermistor", "linear")
THERMISTOR_MODELS = ("beta", "steinhart_hart")
EXCITATION_KINDS = ("positive", "reference", "volts")
FILTER_KINDS = ("none", "rc")
# An input filter switched on starts as 10 kOhm and 100 nF: a 1 ms time constant (our choice).
STARTING_FILTER = InputFilter(10e3, 100e-9)


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
            volts = divider_thevenin(ref.top, ref.bottom, design.supply.positive, design.supply.negative)[0]
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


def filter_kind(design: Design) -> str:
    """ "rc" where the design has an input filter, else "none"."""
    return "none" if design.filter is None else "rc"


def with_filter(design: Design, kind: str) -> Design:
    """Add an input filter (:data:`STARTING_FILTER`) or take it away."""
    if kind not in FILTER_KINDS:
        raise DesignError(f"filter: {kind!r} is not a filter kind; allowed: {', '.join(FILTER_KINDS)}")
    if kind == filter_kind(design):
        return design
    return replace(design, filter=STARTING_FILTER if kind == "rc" else None)


def slider_options(series: str, ohms: float) -> tuple[float, ...]:
    """Standard values of ``series`` across the decades around ``ohms``, with ``ohms`` itself.

    A value that is not in the series is kept exactly and sits among its neighbours, so the
    slider can show it.  Beyond the series tables (yocto to yotta ohm) the value stands alone.
    Each option reads differently in the slider's labels (:data:`SLIDER_DIGITS` digits of the
    IEC 60062 code): Streamlit tells a slider's options apart by their labels, so a neighbour
    that reads like the value itself ("4k7" for 4699.6 ohm) would take its place on the next run.
    """
    if series not in SERIES:
        raise DesignError(f"series: {series!r} is not a standard series; allowed: {', '.join(SERIES)}")
    decade = math.floor(math.log10(ohms))
    try:
        low = 10.0 ** (decade - DECADES_BELOW)
        high = 10.0 ** (decade + DECADES_ABOVE) * 0.9999
        values = [float(v) for v in series_values(series, low, high)]
    except (EseriesError, OverflowError):
        values = []
    labelled = {format_code(ohms, SLIDER_DIGITS): float(ohms)}  # the value keeps its own label
    for value in values:
        labelled.setdefault(format_code(value, SLIDER_DIGITS), value)
    return tuple(sorted(labelled.values()))


def in_series(series: str, ohms: float) -> bool:
    """Whether ``ohms`` is a value of ``series`` (never beyond the series tables)."""
    try:
        return series_values(series, ohms, ohms).size > 0
    except EseriesError:
        return False


def front_end_kind(design: Design) -> str:
    """"none", "divider", "thermistor" or "linear"."""
    return "none" if design.front_end is None else design.front_end.kind


def with_front_end(design: Design, kind: str) -> Design:
    """Put a front end of ``kind`` ahead of the stage ("none" takes it away).

    The watched range then comes from the front end, so ``source.low`` / ``source.high`` are
    cleared.  Starting values: a 100k / 100k sense divider (as other new parts, 100 kOhm); a
    10 kOhm NTC with Beta 3950 K under a 10 kOhm fixed resistor from the positive rail (the
    commonest probe, common practice); a sensor of 10 mV per degree Celsius (a common kind of
    temperature sensor).  Change them to your parts.
    """
    if kind not in FRONT_END_KINDS:
        raise DesignError(f"front_end.kind: {kind!r} is not a front-end kind; "
                          f"allowed: {', '.join(FRONT_END_KINDS)}")
    if kind == front_end_kind(design):
        return design
    source = replace(design.source, low=None, high=None)
    if kind == "none":
        return replace(design, front_end=None, source=source)
    front_end = {
        "divider": lambda: DividerFrontEnd(top=STARTING_OHMS, bottom=STARTING_OHMS),
        "thermistor": lambda: ThermistorFrontEnd(fixed=10e3, r25=10e3, beta=3950.0),
        "linear": lambda: LinearFrontEnd(volts_per_unit=0.01, unit="C"),
    }[kind]()
    return replace(design, front_end=front_end, source=source)


def _thermistor(design: Design) -> ThermistorFrontEnd:
    if not isinstance(design.front_end, ThermistorFrontEnd):
        raise DesignError("front_end: this design has no thermistor front end")
    return design.front_end


def thermistor_model(design: Design) -> str:
    """"beta" or "steinhart_hart"."""
    return "beta" if _thermistor(design).steinhart_hart is None else "steinhart_hart"


def with_thermistor_model(design: Design, model: str) -> Design:
    """Describe the thermistor by Beta or by Steinhart-Hart coefficients, keeping its curve.

    Beta to Steinhart-Hart is exact: A = 1/298.15 K - ln(R25)/B, B' = 1/B, C = 0.  Back to Beta
    takes R25 and the Beta between 25 C and 50 C of the coefficients' curve (B25/50, as data
    sheets commonly state it).  The Beta tolerance applies to the Beta model only.
    """
    if model not in THERMISTOR_MODELS:
        raise DesignError(f"front_end: {model!r} is not a thermistor model; "
                          f"allowed: {', '.join(THERMISTOR_MODELS)}")
    fe = _thermistor(design)
    if model == thermistor_model(design):
        return design
    if model == "steinhart_hart":
        coefficients = beta_to_steinhart_hart(float(fe.r25), float(fe.beta))  # type: ignore[arg-type]
        new = replace(fe, r25=None, beta=None, beta_tolerance=None, beta_temperatures=None,
                      steinhart_hart=coefficients)
    else:
        assert fe.steinhart_hart is not None
        new = replace(fe, steinhart_hart=None, r25=fe.nominal_r25, beta=beta_between(fe.steinhart_hart))
    return replace(design, front_end=new)


def excitation_kind(design: Design) -> str:
    """How the thermistor divider is fed: "positive" (rail), "reference" or "volts" (its own)."""
    excitation = _thermistor(design).excitation
    return excitation if isinstance(excitation, str) else "volts"


def with_excitation(design: Design, kind: str) -> Design:
    """Feed the thermistor divider from the positive rail, the fixed reference, or a voltage of
    its own (starting at the positive rail's)."""
    if kind not in EXCITATION_KINDS:
        raise DesignError(f"front_end.excitation: {kind!r} is not allowed; "
                          f"allowed: {', '.join(EXCITATION_KINDS)}")
    if kind == excitation_kind(design):
        return design
    value: str | float = design.supply.positive if kind == "volts" else kind
    return replace(design, front_end=replace(_thermistor(design), excitation=value))


def beta_temperature(design: Design, index: int) -> float | None:
    """The first (0) or second (1) temperature the thermistor's Beta was measured between, C; None
    where the pair is not given (B25/50 assumed)."""
    pair = _thermistor(design).beta_temperatures
    return None if pair is None else pair[index]


def with_beta_temperature(design: Design, index: int, celsius: float | None) -> Design:
    """Set one of the Beta's two temperatures; a blank one takes B25/50's, and with both blank the
    pair is no longer given."""
    fe = _thermistor(design)
    pair = [beta_temperature(design, i) for i in (0, 1)]
    pair[index] = celsius
    other = 1 - index
    if celsius is None and pair[other] == BETA_PAIR[other]:  # what is left is only the assumed pair
        pair[other] = None
    given = None if pair == [None, None] else \
        tuple(BETA_PAIR[i] if v is None else v for i, v in enumerate(pair))
    return replace(design, front_end=replace(fe, beta_temperatures=given))


def with_protective(design: Design, guards: bool) -> Design:
    """Say whether the stage guards people or property (saved as ``protective``, so the words of its
    name and notes no longer decide)."""
    if not isinstance(guards, bool):
        raise DesignError(f"protective: must be true or false, got {guards!r}")
    return replace(design, protective=guards)


_LOAD_FIELDS = ("resistance", "volts", "logic_low_max", "logic_high_min")


def with_load_value(design: Design, name: str, value: float | None) -> Design:
    """Set one value of the ``load`` section (``None`` empties an optional one), making the section
    where there is none and dropping it when it no longer holds a resistance or a threshold."""
    if name not in _LOAD_FIELDS:
        raise DesignError(f"load.{name}: not a value of the load; allowed: {', '.join(_LOAD_FIELDS)}")
    if name == "volts" and value is None:
        value = 0.0  # blank: ground
    load = replace(design.load or Load(), **{name: value})
    if load.resistance is None and load.logic_low_max is None and load.logic_high_min is None:
        return replace(design, load=None)
    return replace(design, load=load)


def with_resistor_size(design: Design, size: str) -> Design:
    """Give every resistor the package ``size`` (``ratings.size``), keeping any part's own rating."""
    if size not in PACKAGES:
        raise DesignError(f"ratings.size: {size!r} is not a size bandcalc knows; "
                          f"allowed: {', '.join(PACKAGES)}")
    return replace(design, ratings=replace(design.ratings or Ratings(), size=size))
