"""Panel: pin voltages, resistor currents and power at both switching points."""

from __future__ import annotations

import streamlit as st

from bandcalc.model.operating import OperatingPoint
from bandcalc.model.units import format_si, format_value
from bandcalc.page.names import part_name

TITLE = "Currents and power"

__all__ = ["TITLE", "render"]

_RAILS = {"positive": "From the positive rail", "negative": "From the negative rail",
          "pullup_supply": "From the pull-up supply", "load_supply": "From the load's voltage"}


def _amps(amps: float | None) -> str:
    return "—" if amps is None else format_si(amps, "A")  # a front end's parts: power only


def _at(op: OperatingPoint, watched: float | None = None, unit: str | None = None) -> str:
    where = "" if watched is None else f" ({format_value(watched, unit, 4)} watched)"
    return f"{format_si(op.signal, 'V', 4)} in{where}, output {op.state} before switching"


def render(sheet) -> None:
    """Tables of the network just before each switch, and the worst power in each resistor."""
    a = sheet.analysis
    up, low = a.at_upper, a.at_lower
    w = a.points
    if a.design.front_end is None:
        st.caption(f"At the upper point: {_at(up)}. At the lower point: {_at(low)}.")
    else:  # the stage's own points; with a falling front end its upper point is the lower watched one
        st.caption(f"At the stage's upper point: {_at(up, float(w.at_stage_upper), w.unit)}. At its lower "
                   f"point: {_at(low, float(w.at_stage_lower), w.unit)}.")
    pins = {
        "Node": ["Plus pin (+)", "Minus pin (−)", "Output"],
        "At the upper point": [format_si(v, "V", 4) for v in (up.plus, up.minus, up.output)],
        "At the lower point": [format_si(v, "V", 4) for v in (low.plus, low.minus, low.output)],
    }
    st.table(pins, hide_index=True)
    parts = list(a.power)
    st.table({
        "Part": [part_name(k) for k in parts],
        "Current at the upper point": [_amps(up.currents.get(k)) for k in parts],
        "Current at the lower point": [_amps(low.currents.get(k)) for k in parts],
        "Largest power over the signal range": [format_si(a.power[k], "W") for k in parts],
    }, hide_index=True)
    rails = [k for k in _RAILS if k in up.rails or k in low.rails]
    st.table({
        "Supply": [_RAILS[k] for k in rails],
        "At the upper point": [format_si(up.rails.get(k, 0.0), "A") for k in rails],
        "At the lower point": [format_si(low.rails.get(k, 0.0), "A") for k in rails],
    }, hide_index=True)
    st.caption("Currents flow from the signal, the output or the rail towards the + pin; a negative "
               "current flows the other way. Power is the largest over the signal's range in either "
               "output state; a front end's parts show their power only.")
