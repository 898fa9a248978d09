"""The design sheet put together: sidebar controls, the live view, the panels, the address, and
the figures the browser draws at once when a resistor slider moves (:mod:`bandcalc.page.quick_curve`).

The live view is a part that follows the design (:mod:`bandcalc.page.follow`), rerun with the
other such parts after a slider move instead of the whole page.
"""

from __future__ import annotations

import logging
from collections.abc import Iterator
from contextlib import contextmanager

import streamlit as st

from bandcalc import __version__
from bandcalc.model.operating import Analysis
from bandcalc.page import follow, quick_curve, state
from bandcalc.page.compute import transfer_spec_of
from bandcalc.page.controls import render_controls
from bandcalc.page.literal import literal
from bandcalc.page.panels import Sheet, render_panels
from bandcalc.page.results import CHART_KEY, axis_choice, render_results
from bandcalc.page.whole_design import render_design_file

__all__ = ["main"]

log = logging.getLogger("bandcalc.page")


def main() -> None:
    """Draw the whole page for the current design; no error reaches the browser as a traceback."""
    st.set_page_config(page_title="bandcalc · comparator stage with hysteresis", layout="wide",
                       initial_sidebar_state="expanded")
    with _shielded():
        _sheet()


@contextmanager
def _shielded() -> Iterator[None]:
    """A message instead of a traceback, for the whole page or a part rerun on its own."""
    try:
        yield
    except ValueError as exc:
        st.error(literal(str(exc)))
    except Exception:  # Streamlit's own stop/rerun signals are BaseExceptions and pass through
        log.exception("the page failed")
        st.error("The page ran into an internal error (logged on the server). Your design is kept in "
                 "the page address; reload the page, or open a demo design.")


@follow.part("live", first=True)
def _live() -> Analysis | None:
    """The live view and the address; the analysis (``None`` if it failed, with a message shown)."""
    with _shielded():
        design = state.begin_run()
        analysis = render_results(design)
        state.write_address(design)
        return analysis
    return None


@follow.part("quick-curve")
def _quick_curve() -> None:
    """The live chart's figures near each slider's value, for the browser to draw at once: only for
    values the page would take (``state.admit``, whose analysis is then cached for the move)."""
    with _shielded():
        design = state.begin_run()
        watched, x_title = axis_choice(design)
        quick_curve.render(design, lambda d: transfer_spec_of(state.admit(d), watched, x_title), CHART_KEY)


def _sheet() -> None:
    design = state.begin_run()
    follow.begin_page(design)
    quick_curve.begin_page()
    # The sidebar first.  Drawn after the live view, its controls came back blank in the browser
    # after a panel's edit reran the page on a loaded machine (2 runs in 6; none in 12 with the
    # sidebar first), and the next rerun sent the blanks back as edits (tests/test_browser.py: the
    # spread panel's edit, then a slider).
    with st.sidebar:
        st.header("Design")
        render_design_file(design)
        st.header("Stage")
        render_controls(design)
        st.caption(f"bandcalc {__version__}")
    st.title(literal(design.name) or "Comparator stage with hysteresis")
    state.show_messages()
    analysis = _live()
    if analysis is not None:
        render_panels(Sheet(design=design, analysis=analysis))
        _quick_curve()
