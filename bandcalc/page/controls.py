"""The sidebar controls that edit the stage: one small function per section of the design.

Each function reads the current design, draws its widgets and changes the design only through
callbacks (:mod:`bandcalc.page.state`), so the design stays the single source of truth.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import streamlit as st

from ..design import LEG_KEYS, STAGES, Design, OpenDrain
from ..eseries import SERIES
from . import state
from .edit import (
    OUTPUT_KINDS,
    STARTING_OHMS,
    reference_kind,
    with_legs,
    with_output,
    with_reference,
    with_stage,
    with_value,
)
from .inputs import quantity_field, resistor_control

__all__ = ["SECTION_PREFIX", "SERIES_KEY", "render_controls"]

SERIES_KEY = "page.series"
SECTION_PREFIX = "page.section."
_STAGE_NAMES = {"non-inverting": "Non-inverting: signal to the + pin",
                "inverting": "Inverting: signal to the − pin"}
_LEG_NAMES = {"to_positive": "the positive rail", "to_negative": "the negative rail",
              "to_ground": "ground", "to_reference": "the reference"}
_REFERENCE_NAMES = {"none": "None", "fixed": "Fixed voltage", "divider": "Divider across the rails"}
_OUTPUT_NAMES = {"push-pull": "Push-pull", "open-drain": "Open-drain / open-collector"}


def _chosen(key: str, change: Callable[[Design, Any], Design], label: str) -> None:
    state.edit(lambda d: change(d, st.session_state[key]), label)


def _choice(widget: Callable[..., Any], label: str, key: str, current: Any,
            change: Callable[[Design, Any], Design], **kwargs: Any) -> None:
    """A selection widget whose value comes from the design and whose change edits it."""
    key = state.INPUT_PREFIX + key
    st.session_state.setdefault(key, current)
    widget(label, key=key, on_change=_chosen, args=(key, change, label), **kwargs)


def _stage_and_supply(design: Design) -> None:
    _choice(st.radio, "Stage", "stage", design.stage, with_stage, options=STAGES,
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
        _choice(st.toggle, "Input resistor in series with the − pin", "resistors.input.fitted",
                design.resistors.input is not None, _input_fitted)
    if design.resistors.input is not None:
        resistor_control("Input resistor", "resistors.input", design, series,
                         help="From the signal to the + pin" if not design.inverting
                         else "From the signal to the − pin")
    fitted = [k for k in LEG_KEYS if getattr(design.resistors, k) is not None]
    _choice(st.multiselect, "Resistors from the + pin to…", "resistors.legs", fitted, _fitted_legs,
            options=LEG_KEYS, format_func=_LEG_NAMES.get)
    for key in fitted:
        resistor_control(f"Resistor to {_LEG_NAMES[key]}", f"resistors.{key}", design, series)


def _reference(design: Design, series: str) -> None:
    kinds = ("fixed", "divider") if not design.inverting else ("none", "fixed", "divider")
    _choice(st.radio, "Reference", "reference.kind", reference_kind(design), with_reference,
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
    _choice(st.radio, "Output stage", "output.kind", design.output.kind, with_output,
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
    quantity_field("Input bias current", "comparator.bias_current", design, "A",
                   help="Flows into each input pin")
    quantity_field("Propagation delay", "comparator.delay", design, "s")
    quantity_field("Common-mode range, low end", "comparator.common_mode_low", design, "V",
                   optional=True, blank="blank: no limit given")
    quantity_field("Common-mode range, high end", "comparator.common_mode_high", design, "V",
                   optional=True, blank="blank: no limit given")


def _source(design: Design) -> None:
    quantity_field("Source resistance", "source.resistance", design, "Ohm",
                   help="In series with the signal (sensor or divider output resistance)")
    quantity_field("Lowest signal", "source.low", design, "V", optional=True,
                   blank="blank: the negative rail")
    quantity_field("Highest signal", "source.high", design, "V", optional=True,
                   blank="blank: the positive rail")


def render_controls(design: Design) -> None:
    """All stage controls, in sections; draw inside the sidebar."""
    st.session_state.setdefault(SERIES_KEY, "E24")
    series = st.selectbox("Standard series for the sliders", tuple(SERIES), key=SERIES_KEY,
                          help="IEC 60063; a typed value outside the series is kept exactly")
    sections: tuple[tuple[str, str, bool, Callable[[], None]], ...] = (
        ("stage", "Stage and supply", True, lambda: _stage_and_supply(design)),
        ("resistors", "Resistors", True, lambda: _resistors(design, series)),
        ("reference", "Reference", True, lambda: _reference(design, series)),
        ("output", "Output stage", False, lambda: _output(design, series)),
        ("comparator", "Comparator", False, lambda: _comparator(design)),
        ("source", "Signal source", False, lambda: _source(design)),
    )
    # Only open sections draw their controls: fewer widgets make each slider move faster, and
    # a control drawn again starts from the design, so nothing is lost while a section is shut.
    for name, title, expanded, draw in sections:
        box = st.expander(title, expanded=expanded, key=SECTION_PREFIX + name, on_change="rerun")
        if box.open:
            with box:
                draw()
