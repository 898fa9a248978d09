"""The design sheet put together: sidebar controls, the live view, the panels, the address, and
the figures the browser draws at once when a resistor slider moves (:mod:`bandcalc.page.quick_curve`).

A session's first run draws only the top of the page and the live view; the rest follows in a run
of its own once the browser has drawn the curve (:mod:`bandcalc.page.opening`).

The live view is a part that follows the design (:mod:`bandcalc.page.follow`), rerun with the
other such parts after a slider move instead of the whole page.
"""

from __future__ import annotations

import logging
from collections.abc import Iterator
from contextlib import contextmanager

import streamlit as st

from bandcalc import __version__
from bandcalc.model.design import Design
from bandcalc.model.operating import Analysis
from bandcalc.page import follow, opening, quick_curve, state
from bandcalc.page.compute import analysis_of, transfer_spec_of
from bandcalc.page.controls import render_controls
from bandcalc.page.literal import literal
from bandcalc.page.panels import Sheet, render_panels
from bandcalc.page.results import CHART_KEY, axis_choice, render_results
from bandcalc.page.whole_design import render_design_file

__all__ = ["main"]

log = logging.getLogger("bandcalc.page")

_SIDEBAR_TOP = "Stage"  # the sidebar's first heading, drawn by the results-first run too


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
    if opening.results_first(lambda: _curve_drawable(design)):
        _results_first(design)
        return
    # The sidebar first.  Drawn after the live view, its controls came back blank in the browser
    # after a panel's edit reran the page on a loaded machine (2 runs in 6; none in 12 with the
    # sidebar first), and the next rerun sent the blanks back as edits (tests/test_browser.py: the
    # spread panel's edit, then a slider).
    # The stage's controls lead, the resistor sliders first: at 1440x900 the design-file block
    # above them pushed every slider below the fold.
    with st.sidebar:
        st.header(_SIDEBAR_TOP)
        render_controls(design)
        st.header("Design")
        render_design_file(design)
        st.caption(f"bandcalc {__version__}")
    _top(design)
    analysis = _live()
    if analysis is not None:
        render_panels(Sheet(design=design, analysis=analysis))
        _quick_curve()


def _curve_drawable(design: Design) -> bool:
    """Whether the live view will draw the transfer curve (both calls are cached for it)."""
    try:
        analysis_of(design)
        transfer_spec_of(design, *axis_choice(design))
    except Exception:  # the live view says why, with the controls beside it to mend the design
        return False
    return True


def _results_first(design: Design) -> None:
    """A session's first run: the top of the page and the live view, with the script that asks for
    the rest once the curve is drawn (:mod:`bandcalc.page.opening`)."""
    with st.sidebar:
        st.header(_SIDEBAR_TOP)  # it stays in place as the rest of the sidebar comes in
    _top(design, keep_messages=True)  # shown again, in the same place, by the run that follows
    _live()
    opening.ask_for_the_rest(quick_curve.box_class(CHART_KEY))


def _top(design: Design, keep_messages: bool = False) -> None:
    """The page's title and the messages queued for its top."""
    st.title(literal(design.name) or "Comparator stage with hysteresis")
    state.show_messages(keep=keep_messages)
