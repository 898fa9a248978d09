"""The sidebar controls that edit the stage: one small function per section of the design.

Each function reads the current design, draws its widgets and changes the design only through
callbacks (:mod:`bandcalc.page.state`), so the design stays the single source of truth.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import streamlit as st

from bandcalc.model.design import LEG_KEYS, STAGES, Design, OpenDrain
from bandcalc.model.front_end import BETA_PAIR, POSITIONS, THERMISTOR_RANGE, ThermistorFrontEnd
from bandcalc.model.input_filter import filter_pole
from bandcalc.model.parts import part, value_at, with_value
from bandcalc.model.range_checks import INPUT_CURRENT_LIMIT
from bandcalc.model.ratings import DEFAULT_SIZE, PACKAGES
from bandcalc.model.standard_values import SERIES
from bandcalc.model.units import format_si, symbol
from bandcalc.page import follow, state
from bandcalc.page.edit import (
    EXCITATION_KINDS,
    FILTER_KINDS,
    FRONT_END_KINDS,
    OUTPUT_KINDS,
    STARTING_OHMS,
    THERMISTOR_MODELS,
    beta_temperature,
    excitation_kind,
    filter_kind,
    front_end_kind,
    reference_kind,
    thermistor_model,
    with_beta_temperature,
    with_excitation,
    with_filter,
    with_front_end,
    with_legs,
    with_load_value,
    with_output,
    with_reference,
    with_resistor_size,
    with_stage,
    with_thermistor_model,
)
from bandcalc.page.inputs import choice_control, quantity_field, resistor_control, value_field
from bandcalc.page.literal import literal

__all__ = ["SECTION_PREFIX", "SERIES_KEY", "render_controls"]

SERIES_KEY = "page.series"
SECTION_PREFIX = "page.section."
_STAGE_NAMES = {"non-inverting": "Non-inverting: signal to the + pin",
                "inverting": "Inverting: signal to the − pin"}
_REFERENCE_NAMES = {"none": "None", "fixed": "Fixed voltage", "divider": "Divider across the rails"}
_OUTPUT_NAMES = {"push-pull": "Push-pull", "open-drain": "Open-drain / open-collector"}
_FRONT_END_NAMES = {"none": "Nothing: the signal drives the stage", "divider": "Sense divider from a voltage",
                    "thermistor": "NTC thermistor divider", "linear": "Sensor with a linear output"}
_MODEL_NAMES = {"beta": "Beta", "steinhart_hart": "Steinhart-Hart"}
_POSITION_NAMES = {"bottom": "To ground (input falls as it warms)",
                   "top": "From the excitation (input rises as it warms)"}
_FILTER_NAMES = {"none": "None", "rc": "RC low-pass"}
_EXCITATION_NAMES = {"positive": "Positive rail", "reference": "Fixed reference",
                     "volts": "A voltage of its own"}


def _stage_and_supply(design: Design) -> None:
    choice_control(st.radio, "Stage", "stage", design.stage, with_stage, options=STAGES,
            format_func=_STAGE_NAMES.get)
    quantity_field("Positive rail", "supply.positive", design, "V")
    quantity_field("Negative rail", "supply.negative", design, "V", help="0 V for a single supply")


def _fitted_legs(d: Design, names: Sequence[str]) -> Design:
    return with_legs(d, set(names))


def _input_fitted(d: Design, fitted: bool) -> Design:
    return with_value(d, "resistors.input", (d.resistors.input or STARTING_OHMS) if fitted else None)


def _resistors(design: Design, series: str) -> None:
    resistor_control("Feedback resistor", "resistors.feedback", design, series,
                     help="From the output back to the + pin")
    if design.inverting:
        choice_control(st.toggle, "Input resistor in series with the − pin", "resistors.input.fitted",
                design.resistors.input is not None, _input_fitted)
    if design.resistors.input is not None:
        resistor_control("Input resistor", "resistors.input", design, series,
                         help="From the signal to the + pin" if not design.inverting
                         else "From the signal to the − pin")
    fitted = [k for k in LEG_KEYS if getattr(design.resistors, k) is not None]
    choice_control(st.multiselect, "Resistors from the + pin to…", "resistors.legs", fitted, _fitted_legs,
            options=LEG_KEYS, format_func=lambda key: part(key).far_end)
    for key in fitted:
        resistor_control(part(key).name, part(key).path, design, series)
    size = design.ratings.size if design.ratings is not None else DEFAULT_SIZE
    choice_control(st.selectbox, "Resistor size", "ratings.size", size, with_resistor_size,
                   options=tuple(PACKAGES), format_func=_size_name,
                   help="Sets each resistor's working voltage and power rating (typical figures, from "
                        "memory); a part's own rating goes in the design file's ratings section")


def _size_name(size: str) -> str:
    volts, watts = PACKAGES[size]
    return f"{size}: {format_si(volts, 'V')}, {format_si(watts, 'W')}"


def _reference(design: Design, series: str) -> None:
    kinds = ("fixed", "divider") if not design.inverting else ("none", "fixed", "divider")
    choice_control(st.radio, "Reference", "reference.kind", reference_kind(design), with_reference,
            options=kinds, format_func=_REFERENCE_NAMES.get, horizontal=True,
            help="On the − pin of a non-inverting stage; reached through the resistor to the reference")
    kind = reference_kind(design)
    if kind == "fixed":
        quantity_field("Reference voltage", "reference.volts", design, "V")
    elif kind == "divider":
        resistor_control("Divider, upper resistor", "reference.top", design, series,
                         help="From the positive rail to the reference node")
        resistor_control("Divider, lower resistor", "reference.bottom", design, series,
                         help="From the reference node to the negative rail")


def _output(design: Design, series: str) -> None:
    choice_control(st.radio, "Output stage", "output.kind", design.output.kind, with_output,
            options=OUTPUT_KINDS, format_func=_OUTPUT_NAMES.get, horizontal=True)
    if isinstance(design.output, OpenDrain):
        resistor_control("Pull-up resistor", "output.pullup", design, series)
        quantity_field("Pull-up supply", "output.pullup_volts", design, "V", optional=True,
                       blank="blank: the positive rail")
        quantity_field("Low level", "output.low_volts", design, "V", optional=True,
                       blank="blank: the negative rail")
    else:
        quantity_field("Drop from the positive rail when high", "output.high_drop", design, "V")
        quantity_field("Lift from the negative rail when low", "output.low_drop", design, "V")
        quantity_field("Output resistance", "output.resistance", design, "Ohm")
    quantity_field("Load capacitance", "output.load_capacitance", design, "F")


def _comparator(design: Design) -> None:
    quantity_field("Input offset voltage", "comparator.offset", design, "V",
                   help="The stage switches where V+ − V− equals this")
    quantity_field("Hysteresis built in", "comparator.hysteresis", design, "V", optional=True,
                   blank="blank: none",
                   help="Some comparators switch at offset ± half of a few mV of their own; it adds to the "
                        "network's")
    quantity_field("Input bias current", "comparator.bias_current", design, "A",
                   help="Flows into each input pin")
    quantity_field("Input offset current", "comparator.offset_current", design, "A", optional=True,
                   blank="blank: 0", help="The + pin's current less the − pin's")
    quantity_field("Propagation delay", "comparator.delay", design, "s")
    quantity_field("Delay stated at an overdrive of", "comparator.delay_overdrive", design, "V",
                   optional=True, blank="blank: not stated", help="The data sheet's overdrive for that delay")
    quantity_field("Slew rate (an op-amp as comparator)", "comparator.slew_rate", design, "V/s",
                   optional=True, blank="blank: not limited",
                   help="For an op-amp used as a comparator: its data sheet's slew rate. Blank for a "
                        "comparator")
    quantity_field("Saturation recovery", "comparator.recovery", design, "s", optional=True,
                   blank="blank: none")
    quantity_field("Common-mode range, low end", "comparator.common_mode_low", design, "V",
                   optional=True, blank="blank: no limit given")
    quantity_field("Common-mode range, high end", "comparator.common_mode_high", design, "V",
                   optional=True, blank="blank: no limit given")
    quantity_field("Input current limit", "comparator.input_current_limit", design, "A", optional=True,
                   blank=f"blank: {format_si(INPUT_CURRENT_LIMIT, 'A')}, a cautious default",
                   help="The most the input protection may carry when a pin is driven past a rail")
    quantity_field("Largest differential input", "comparator.differential_max", design, "V", optional=True,
                   blank="blank: not checked", help="The largest V+ − V− the part takes")


def _load_field(label: str, name: str, design: Design, *, blank: str, help: str) -> None:
    unit = "Ohm" if name == "resistance" else "V"
    value_field(label, f"load.{name}", design, unit,
                lambda d: None if d.load is None else getattr(d.load, name),
                lambda d, v: with_load_value(d, name, v), where=f"load.{name}", optional=True, blank=blank,
                help=help)


def _load(design: Design) -> None:
    _load_field("Load resistance", "resistance", design, blank="blank: no load",
                help="A DC load from the output to a voltage; it moves the output levels and the points")
    if design.load is not None and design.load.resistance is not None:
        _load_field("Load returns to", "volts", design, blank="blank: 0 V (ground)",
                    help="The voltage at the far end of the load")
    _load_field("Receiving input: highest low", "logic_low_max", design, blank="blank: not checked",
                help="The highest voltage the receiving input still reads as low (its data sheet's V_IL max)")
    _load_field("Receiving input: lowest high", "logic_high_min", design, blank="blank: not checked",
                help="The lowest voltage the receiving input reads as high (its data sheet's V_IH min)")


def _source(design: Design) -> None:
    if design.front_end is not None:
        quantity_field("Resistance between the front end and the stage", "source.resistance", design, "Ohm",
                       help="A protection or filter resistor; the front end's own resistance is added to it")
        st.caption("With a front end, its watched range sets the signal's range (Front end section).")
        return
    quantity_field("Source resistance", "source.resistance", design, "Ohm",
                   help="In series with the signal (sensor or divider output resistance)")
    quantity_field("Lowest signal", "source.low", design, "V", optional=True,
                   blank="blank: the negative rail")
    quantity_field("Highest signal", "source.high", design, "V", optional=True,
                   blank="blank: the positive rail")


def _filter(design: Design) -> None:
    choice_control(st.radio, "Input filter", "filter.kind", filter_kind(design), with_filter,
                   options=FILTER_KINDS, format_func=_FILTER_NAMES.get, horizontal=True,
                   help="A resistor in series after the source, a capacitor from the stage's input to ground")
    if design.filter is None:
        return
    quantity_field("Filter resistor (Rflt)", "filter.resistance", design, "Ohm",
                   help="Adds to the source's resistance at DC: the switching points move with it")
    quantity_field("Filter capacitor (Cflt)", "filter.capacitance", design, "F")
    _pole()


@follow.part("filter-pole")
def _pole() -> None:
    """The input filter's pole, which moves with the resistors that load the capacitor."""
    design = state.begin_run()
    if design.filter is None:  # taken out since this section was drawn: the next full run drops it
        return
    pole = filter_pole(design)
    st.caption(f"Pole {format_si(pole.pole_upper, 'Hz')} at the upper point, "
               f"{format_si(pole.pole_lower, 'Hz')} at the lower: the capacitor with everything that "
               "drives it (source, filter resistor, the stage's loading).")


def _unit_entered(key: str) -> None:
    old, unit = value_at(state.current_design(), "front_end.unit"), st.session_state[key].strip()
    state.edit(lambda d: with_value(d, "front_end.unit", unit), "Watched unit", "front_end.unit",
               kept=repr(old), restore=(key, old))


def _watched_range(design: Design, unit: str, low: str, high: str) -> None:
    for label, key, default in (("Lowest", "low", low), ("Highest", "high", high)):
        quantity_field(f"{label} watched value", f"front_end.{key}", design, unit, optional=True,
                       blank=f"blank: {default}")


def _thermistor(design: Design, fe: ThermistorFrontEnd, series: str) -> None:
    choice_control(st.radio, "Thermistor described by", "front_end.model", thermistor_model(design),
            with_thermistor_model, options=THERMISTOR_MODELS, format_func=_MODEL_NAMES.get, horizontal=True)
    if fe.steinhart_hart is None:
        quantity_field("Resistance at 25 °C", "front_end.r25", design, "Ohm")
        quantity_field("Beta", "front_end.beta", design, "K", help="R = R25 exp(B (1/T − 1/298.15 K))")
        quantity_field("Beta tolerance", "front_end.beta_tolerance", design, "%", optional=True,
                       blank="blank: exact")
        for i, end in enumerate(("from", "to")):
            value_field(f"Beta measured {end}", f"front_end.beta_temperatures.{end}", design, "C",
                        lambda d, i=i: beta_temperature(d, i),
                        lambda d, v, i=i: with_beta_temperature(d, i, v),
                        where="front_end.beta_temperatures", optional=True,
                        blank=f"blank: {BETA_PAIR[i]:g} °C (B{BETA_PAIR[0]:g}/{BETA_PAIR[1]:g} assumed)",
                        help="The two temperatures the data sheet's Beta was measured between "
                             "(B25/50, B25/85)")
    else:
        for i, name in enumerate("ABC"):
            quantity_field(f"Coefficient {name}", f"front_end.steinhart_hart[{i}]", design, "",
                           help="1/T = A + B ln R + C (ln R)³, T in kelvin, R in ohms")
    quantity_field("Resistance tolerance at 25 °C", "front_end.r25_tolerance", design, "%", optional=True,
                   blank="blank: exact")
    resistor_control("Fixed resistor", "front_end.fixed", design, series,
                     help="The other half of the thermistor's divider")
    choice_control(st.radio, "Thermistor connects the node", "front_end.position", fe.position,
            lambda d, v: with_value(d, "front_end.position", v), options=POSITIONS,
            format_func=_POSITION_NAMES.get)
    choice_control(st.radio, "Divider fed from", "front_end.excitation.kind", excitation_kind(design),
            with_excitation, options=EXCITATION_KINDS, format_func=_EXCITATION_NAMES.get, horizontal=True)
    if excitation_kind(design) == "volts":
        quantity_field("Excitation voltage", "front_end.excitation", design, "V")
    quantity_field("Dissipation constant", "front_end.dissipation_constant", design, "W/K",
                   help="Self-heating: the part's own figure from its data sheet (1.5 mW/K if not given)")
    _watched_range(design, "C", *(f"{t:g} °C" for t in THERMISTOR_RANGE))


def _front_end(design: Design, series: str) -> None:
    choice_control(st.radio, "Ahead of the stage", "front_end.kind", front_end_kind(design), with_front_end,
            options=FRONT_END_KINDS, format_func=_FRONT_END_NAMES.get,
            help="The switching points are then also shown in the quantity you watch")
    fe = design.front_end
    if fe is None:
        return
    if fe.kind == "divider":
        resistor_control("Sense divider, upper resistor (Rd1)", "front_end.top", design, series,
                         help="From the watched voltage to the stage's input")
        resistor_control("Sense divider, lower resistor (Rd2)", "front_end.bottom", design, series,
                         help="From the stage's input to ground")
        _watched_range(design, "V", "what maps to the negative rail", "what maps to the positive rail")
    elif isinstance(fe, ThermistorFrontEnd):
        _thermistor(design, fe, series)
    else:
        key = state.INPUT_PREFIX + "front_end.unit"
        st.session_state.setdefault(key, fe.unit)
        st.text_input("Watched unit", key=key, on_change=_unit_entered, args=(key,),
                      help="The sensor's quantity: C, kPa, %RH, ...")
        quantity_field(f"Output per {literal(symbol(fe.unit))}", "front_end.volts_per_unit", design, "V")
        quantity_field(f"Output at 0 {literal(symbol(fe.unit))}", "front_end.offset", design, "V")
        quantity_field("Sensor output resistance", "front_end.resistance", design, "Ohm")
        quantity_field("Offset accuracy, ±", "front_end.offset_tolerance", design, "V", optional=True,
                       blank="blank: exact", help="The sensor's offset error, as its data sheet states it")
        quantity_field("Span accuracy, ±", "front_end.span_tolerance", design, "%", optional=True,
                       blank="blank: exact", help="The error of its slope, as its data sheet states it")
        _watched_range(design, fe.unit, "what maps to the negative rail", "what maps to the positive rail")


def render_controls(design: Design) -> None:
    """All stage controls, in sections; draw inside the sidebar."""
    st.session_state.setdefault(SERIES_KEY, "E24")
    series = st.selectbox("Standard series for the sliders", tuple(SERIES), key=SERIES_KEY,
                          help="IEC 60063; a typed value outside the series is kept exactly")
    sections: tuple[tuple[str, str, bool, Callable[[], None]], ...] = (
        ("resistors", "Resistors", True, lambda: _resistors(design, series)),
        ("stage", "Stage and supply", True, lambda: _stage_and_supply(design)),
        ("reference", "Reference", True, lambda: _reference(design, series)),
        ("output", "Output stage", False, lambda: _output(design, series)),
        ("load", "Output load and receiving logic", False, lambda: _load(design)),
        ("comparator", "Comparator", False, lambda: _comparator(design)),
        ("source", "Signal source", False, lambda: _source(design)),
        ("filter", "Input filter", False, lambda: _filter(design)),
        ("front_end", "Front end: divider or sensor", False, lambda: _front_end(design, series)),
    )
    # Only open sections draw their controls: fewer widgets make each slider move faster, and
    # a control drawn again starts from the design, so nothing is lost while a section is shut.
    for name, title, expanded, draw in sections:
        box = st.expander(title, expanded=expanded, key=SECTION_PREFIX + name, on_change="rerun")
        if box.open:
            with box:
                draw()
