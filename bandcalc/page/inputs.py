"""The two kinds of value control on the page.

- :func:`resistor_control`: a slider over standard values of the chosen series, across the
  decades around the part's value, and a box to type an exact value in either notation
  ("4k7" or "4.7k").  A typed value that is not in the series is kept exactly and shown.
- :func:`quantity_field`: a box for a voltage, current, time, capacitance or resistance that is
  not a standard part, read with SI prefixes ("2 mV", "100n", "-12"), or a value in another unit
  (degrees C, kelvin, ppm/K, percent, a sensor's own unit), read as a number with the unit optional.
- :func:`choice_control`: a radio, toggle or select whose value comes from the design.

Each control is keyed by its design-file path (``in.<path>.slider``, ``in.<path>.text``,
``in.<path>``) and edits the design through :func:`bandcalc.page.state.edit`.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, NoReturn

import streamlit as st

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.parts import value_at, with_value
from bandcalc.model.units import (
    SI_UNITS,
    UnitError,
    format_code,
    format_value,
    parse_quantity,
    parse_resistance,
    symbol,
)
from bandcalc.page import follow, quick_curve, state
from bandcalc.page.edit import SLIDER_DIGITS, in_series, slider_options
from bandcalc.page.literal import literal

__all__ = ["choice_control", "quantity_field", "read_value", "resistor_control", "shown", "unit_label",
           "value_field"]


def shown(value: float | None, unit: str) -> str:
    """A value as the page writes it in a box: ohms in the IEC 60062 code, volts and the like with
    SI prefixes, other units as plain figures ("25 C", "3950 K"), bare numbers to 7 digits."""
    if value is None:
        return ""
    if unit == "Ohm":
        return format_code(value, 4) if value > 0 else "0"
    if not unit:
        return f"{value:.7g}"
    return format_value(value, unit, 6)


def read_value(text: str, unit: str, what: str) -> float:
    """Read a typed value in ``unit``: ohms in either notation, SI units with prefixes, other units
    as a number (SI prefixes allowed) with the unit itself optional ("25", "25 C", "100 ppm/K").

    Raises
    ------
    UnitError
        Naming ``what`` and the text.
    """
    if unit == "Ohm":
        return parse_resistance(text, what)
    if unit in SI_UNITS:
        return parse_quantity(text, unit, what)
    body = str(text).strip()
    for suffix in (f"°{unit}", unit):
        if unit and body.endswith(suffix):
            body = body[:-len(suffix)]
            break
    try:
        return parse_quantity(body, "", what)
    except UnitError:
        in_unit = f" in {symbol(unit)}" if unit else ""
        raise UnitError(f"{what}: cannot read {text!r}; write a number{in_unit}, "
                        f"optionally with an SI prefix (e.g. 2.5, 50m, 1.5k)") from None


def _chosen(key: str, change: Callable[[Design, Any], Design], label: str, controls: str,
            current: Any) -> None:
    value = st.session_state[key]
    state.edit(lambda d: change(d, value), label, controls=controls, restore=(key, current))


def choice_control(widget: Callable[..., Any], label: str, key: str, current: Any,
                   change: Callable[[Design, Any], Design], *, controls: str = state.INPUT_PREFIX,
                   **kwargs: Any) -> None:
    """A selection widget (``st.radio``, ``st.toggle``, ...) whose value comes from the design and
    whose change edits it through ``change(design, value)``; keyed ``in.<key>``.  ``controls``:
    the controls that start again after the change (see :func:`bandcalc.page.state.replace_design`).
    A choice the design refuses is named in a message, and the widget shows ``current`` again."""
    key = state.INPUT_PREFIX + key
    st.session_state.setdefault(key, current)
    widget(label, key=key, on_change=_chosen, args=(key, change, label, controls, current), **kwargs)


def unit_label(label: str, unit: str) -> str:
    """A box's label with its unit in brackets, "Load resistance (Ω)"; a count, with no unit, none."""
    shown_unit = literal(symbol(unit))
    return f"{label} ({shown_unit})" if shown_unit else label


def _control_key(path: str) -> str:
    return f"control.{path}"


def _followed(went_in: bool, path: str) -> NoReturn:
    """After an edit of the resistor at ``path`` (from its control, a fragment of its own): rerun
    the control and the parts of the page that follow the design; or, if the edit was refused,
    the whole page, at whose top the message says why."""
    if went_in:
        follow.rerun(_control_key(path))
    st.rerun()


def _slid(path: str, label: str, key: str) -> None:
    ohms = float(st.session_state[key])
    _followed(state.edit(lambda d: with_value(d, path, ohms), label, path, controls=_own(path)), path)


def _typed(path: str, label: str, key: str) -> None:
    old = value_at(state.current_design(), path)
    try:
        ohms = parse_resistance(st.session_state[key], f"{label} ({path})")
    except ValueError as exc:
        state.say("error", f"{exc}. The design keeps {shown(old, 'Ohm')}.")
        st.session_state[key] = shown(old, "Ohm")
        st.rerun()
    _followed(state.edit(lambda d: with_value(d, path, ohms), label, path, kept=shown(old, "Ohm"),
                         controls=_own(path), restore=(key, shown(old, "Ohm"))), path)


def _own(path: str) -> str:
    """The keys of the resistor control at ``path``: its slider and its box."""
    return f"{state.INPUT_PREFIX}{path}."


def resistor_control(label: str, path: str, design: Design, series: str, help: str | None = None) -> None:
    """Slider over standard values plus a typed exact value, for the resistor at ``path``.

    A fragment of its own: a move of the slider, or a value typed in the box, reruns just this
    control and the parts of the page that follow the design (:mod:`bandcalc.page.follow`).
    """
    quick_curve.watch(path, _slider_key(path), series)
    st.fragment(_resistor, key=_control_key(path))(label, path, series, help)


def _slider_key(path: str) -> str:
    return f"{state.INPUT_PREFIX}{path}.slider"


def _resistor(label: str, path: str, series: str, help: str | None) -> None:
    design = state.begin_run()  # the current design, also in this control's own rerun
    ohms = float(value_at(design, path))
    slider_key, text_key = _slider_key(path), f"{state.INPUT_PREFIX}{path}.text"
    st.session_state.setdefault(slider_key, ohms)
    st.session_state.setdefault(text_key, shown(ohms, "Ohm"))
    st.select_slider(label, options=slider_options(series, ohms), key=slider_key, help=help,
                     format_func=lambda v: format_code(v, SLIDER_DIGITS), on_change=_slid,
                     args=(path, label, slider_key))
    st.text_input(f"{label}, exact value", key=text_key, label_visibility="collapsed",
                  placeholder="type a value: 4k7 or 4.7k", on_change=_typed, args=(path, label, text_key))
    if not in_series(series, ohms):  # all its digits: 4699.6 ohm reads "4k7" on the slider
        st.caption(f"{format_code(ohms, 7)} is not an {series} value; it is kept exactly as typed.")


def _entered(key: str, label: str, where: str, unit: str, optional: bool,
             get: Callable[[Design], float | None], change: Callable[[Design, float | None], Design],
             controls: str) -> None:
    old = get(state.current_design())
    text = str(st.session_state[key]).strip()
    what = f"{label} ({where})"
    try:
        if not text:
            if not optional:
                raise BandcalcError(f"{what}: needs a value")
            value = None
        else:
            value = read_value(text, unit, what)
    except ValueError as exc:
        state.say("error", f"{exc}. The design keeps {shown(old, unit) or 'no value'}.")
        st.session_state[key] = shown(old, unit)
        return
    state.edit(lambda d: change(d, value), label, where, kept=shown(old, unit) or "no value",
               controls=controls, restore=(key, shown(old, unit)))


def value_field(label: str, key: str, design: Design, unit: str, get: Callable[[Design], float | None],
                change: Callable[[Design, float | None], Design], *, where: str, optional: bool = False,
                blank: str = "", help: str | None = None, controls: str = state.INPUT_PREFIX) -> None:
    """A typed value of the design read by ``get`` and written by ``change(design, value)``.

    Keyed ``in.<key>``; ``where`` names the value in messages (its design-file path).  ``optional``
    fields may be left blank (``None``; ``blank`` says what a blank means).  ``controls``: the
    controls that start again after a change (see :func:`bandcalc.page.state.replace_design`).
    """
    key = f"{state.INPUT_PREFIX}{key}"
    st.session_state.setdefault(key, shown(get(design), unit))
    st.text_input(unit_label(label, unit), key=key, placeholder=blank or None, help=help,
                  on_change=_entered, args=(key, label, where, unit, optional, get, change, controls))


def quantity_field(label: str, path: str, design: Design, unit: str, *, optional: bool = False,
                   blank: str = "", help: str | None = None) -> None:
    """A typed value with SI prefixes for ``path``; ``optional`` fields may be left blank (``blank`` says
    what a blank means)."""
    value_field(label, path, design, unit, lambda d: value_at(d, path), lambda d, v: with_value(d, path, v),
                where=path, optional=optional, blank=blank, help=help)
