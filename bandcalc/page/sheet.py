"""The design sheet put together: sidebar controls, the live view, the panels, the address."""

from __future__ import annotations

import streamlit as st

from .. import __version__
from . import state
from .controls import render_controls
from .design_file import render_design_file
from .panels import Sheet, render_panels
from .results import render_results

__all__ = ["main"]

_SHOW = {"error": st.error, "warning": st.warning, "info": st.info, "success": st.success}


def main() -> None:
    """Draw the whole page for the current design."""
    st.set_page_config(page_title="bandcalc · comparator stage with hysteresis", layout="wide",
                       initial_sidebar_state="expanded")
    try:
        design = state.current_design()
    except ValueError as exc:
        st.error(str(exc))
        st.stop()
    with st.sidebar:
        st.header("Design")
        render_design_file(design)
        st.header("Stage")
        render_controls(design)
        st.caption(f"bandcalc {__version__}")
    st.title(design.name or "Comparator stage with hysteresis")
    for kind, text in state.take_messages():
        _SHOW[kind](text)
    analysis = render_results(design)
    if analysis is not None:
        render_panels(Sheet(design=design, analysis=analysis))
    state.write_address(design)
