"""The design sheet put together: sidebar controls, the live view, the panels, the address."""

from __future__ import annotations

import logging

import streamlit as st

from bandcalc import __version__
from bandcalc.page import state
from bandcalc.page.controls import render_controls
from bandcalc.page.literal import literal
from bandcalc.page.panels import Sheet, render_panels
from bandcalc.page.results import render_results
from bandcalc.page.whole_design import render_design_file

__all__ = ["main"]

log = logging.getLogger("bandcalc.page")


def main() -> None:
    """Draw the whole page for the current design; no error reaches the browser as a traceback."""
    st.set_page_config(page_title="bandcalc · comparator stage with hysteresis", layout="wide",
                       initial_sidebar_state="expanded")
    try:
        _sheet()
    except ValueError as exc:
        st.error(literal(str(exc)))
    except Exception:  # Streamlit's own stop/rerun signals are BaseExceptions and pass through
        log.exception("the page failed")
        st.error("The page ran into an internal error (logged on the server). Your design is kept in "
                 "the page address; reload the page, or open a demo design.")


def _sheet() -> None:
    design = state.begin_run()
    st.title(literal(design.name) or "Comparator stage with hysteresis")
    state.show_messages()
    analysis = render_results(design)
    with st.sidebar:
        st.header("Design")
        render_design_file(design)
        st.header("Stage")
        render_controls(design)
        st.caption(f"bandcalc {__version__}")
    if analysis is not None:
        render_panels(Sheet(design=design, analysis=analysis))
    state.write_address(design)
