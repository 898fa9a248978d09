"""A new tab's page in two runs: the results first, then the controls and the panels.

Opening the page, the browser spends most of its time drawing Streamlit's elements, about 10 ms
each, and the transfer curve waits behind all of them: Plotly, which draws it, is loaded only
once the chart's turn comes (benchmarks/bench_browser.py).  So a session's first run draws only
the title, the messages and the live view (figures, findings, transfer curve, schematic), with a
small script that tells the server once the curve is drawn; that report reruns the whole page,
which adds the sidebar's controls and the panels around what is already there.  The whole page
is complete no later than when it came in one run (the server's second run overlaps the
browser's drawing of the curve); the curve and the switching points show about a second sooner.

Where the first run has no curve to wait for (the analysis or the chart failed: the user needs
the controls to mend the design), the page is drawn whole at once.  Where the report does not
come (a browser without the script's support), the script asks for the rest after
:data:`WAIT_MS` anyway.  A page run with no browser behind it (Streamlit's AppTest) gets no
report: set ``st.session_state[OPENED] = True`` before its first run for the whole page.
"""

from __future__ import annotations

import json
from collections.abc import Callable

import streamlit as st

__all__ = ["OPENED", "WAIT_MS", "ask_for_the_rest", "results_first"]

OPENED = "page.opened"  # True once this session's page has been drawn whole
WAIT_MS = 4000  # the longest the script waits for the curve before it asks for the rest

_SCRIPT = """
export default function (component) {
  const { setTriggerValue, data } = component;
  const { chart, wait } = JSON.parse(data);
  let asked = false, watcher = null, timer = null;
  const ask = () => {
    if (asked) return;
    asked = true;
    watcher?.disconnect();
    clearTimeout(timer);
    setTriggerValue("drawn", true);
  };
  const drawn = () => document.querySelector("." + chart + " .js-plotly-plot .scatterlayer .trace") !== null;
  if (!document.querySelector("." + chart) || drawn()) {
    ask();  // no curve to wait for, or already drawn
  } else {
    watcher = new MutationObserver(() => { if (drawn()) ask(); });
    watcher.observe(document.body, { subtree: true, childList: true });
    timer = setTimeout(ask, wait);
  }
  return () => { watcher?.disconnect(); clearTimeout(timer); };
}
"""
_COMPONENT = st.components.v2.component("bandcalc.opening", js=_SCRIPT)


def results_first(curve: Callable[[], bool]) -> bool:
    """Whether this run draws only the results: a session's first, where ``curve()`` says the live
    view will draw the curve.  Any other run draws the whole page, and so does every run after it."""
    if st.session_state.get(OPENED) or not curve():
        _open()
        return False
    return True


def _open() -> None:
    """From here on, every run of this session draws the whole page."""
    st.session_state[OPENED] = True


def ask_for_the_rest(chart_class: str) -> None:
    """Draw the script that reruns the whole page once the chart in the box of class ``chart_class``
    is drawn (or at once where there is no such box); nothing shows on the page."""
    _COMPONENT(data=json.dumps({"chart": chart_class, "wait": WAIT_MS}), key="page-opening", height=0,
               on_drawn_change=_open)
