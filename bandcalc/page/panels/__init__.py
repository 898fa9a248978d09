"""Panels below the live view, one module each, shown as tabs.

A panel is a module with

    TITLE = "Name on its tab"
    def render(sheet: Sheet) -> None: ...

listed in :data:`PANELS`.  Only the open tab's panel runs, inside its own ``st.fragment``: a
widget inside a panel reruns just that panel, and a slider move in the sidebar reruns it with the
other parts that follow the design (:mod:`bandcalc.page.follow`), not the closed panels at all.
A panel reads the design from the ``Sheet`` it is given, which is the current one in each of
these reruns.  Wrap expensive package calls in ``st.cache_data`` (keyed by the design and
the panel's own settings) and guard them with :func:`bandcalc.page.compute.guarded`.  To change
the design from a panel (say, apply a candidate), call
:func:`bandcalc.page.state.apply_design` after a button press; a panel's own controls that edit
the design (the spread panel's tolerances) use :func:`bandcalc.page.state.edit` in callbacks as
the sidebar does: a refused edit's message shows in the panel's own rerun, and an edit that
changes the design reruns the whole page, so that everything outside the panel (the Save button's
file, the live view, the address) shows it too.
Results of long runs go to :mod:`bandcalc.page.runs`, where the summary finds them.

A panel may also define ``run_requested(sheet)``: work a button of the panel asked for, run in the
page's full run ahead of the panel and outside its fragment.  A Stop button drawn there ends the
work at its next Streamlit call (a progress update), as any widget outside a fragment does; one
inside the fragment could not, since a fragment's rerun waits for the run in progress.
"""

from __future__ import annotations

from dataclasses import dataclass
from types import ModuleType

import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.operating import Analysis
from bandcalc.page import follow, state
from bandcalc.page.compute import analysis_of, guarded
from bandcalc.page.panels import currents, fit, signal_check, spread, summary

__all__ = ["PANELS", "Sheet", "render_panels"]

PANELS: tuple[ModuleType, ...] = (currents, fit, spread, signal_check, summary)
_TAB_KEY = "page.panel"


@dataclass(frozen=True)
class Sheet:
    """What a panel gets: the current design and its analysis."""

    design: Design
    analysis: Analysis


@follow.part("panel")
def _panel(panel: ModuleType, sheet: Sheet) -> None:
    design = state.begin_run()
    if design is not follow.drawn_design():
        # The panel's own controls changed the design (a tolerance): the page outside the panel
        # shows it too (the Save button's file, the live view, the address), so the whole page runs
        # again; its messages wait in the queue for the top of the page.
        st.rerun(scope="app")
    if design is not sheet.design:  # rerun with the parts that follow the design, after a slider
        analysis = guarded("Analysis", analysis_of, design)
        if analysis is None:
            return
        sheet = Sheet(design=design, analysis=analysis)
    state.show_messages()
    guarded(panel.TITLE, panel.render, sheet)


def render_panels(sheet: Sheet) -> None:
    """One tab per panel; only the open one runs."""
    if not PANELS:
        return
    tabs = st.tabs([panel.TITLE for panel in PANELS], key=_TAB_KEY, on_change="rerun")
    for tab, panel in zip(tabs, PANELS, strict=True):
        if tab.open:
            with tab:
                if hasattr(panel, "run_requested"):
                    guarded(panel.TITLE, panel.run_requested, sheet)
                _panel(panel, sheet)
