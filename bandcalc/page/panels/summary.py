"""Panel: the design summary (Markdown), previewed and offered for download, with the netlist beside it.

The summary includes whatever the session has run for the current design: the spread and the
signal check (:mod:`bandcalc.page.runs`), and the fit that still holds for it
(:func:`bandcalc.page.panels.fit.latest_fit`, which keeps it after one of its candidates is
applied).  The stage's SPICE netlist (:mod:`bandcalc.outputs.netlist`, the sweep bench) is offered
beside it.  Saving and opening the design file stay in the sidebar.
"""

from __future__ import annotations

import streamlit as st

from bandcalc.outputs.summary import SummaryInputs, design_summary
from bandcalc.page import runs
from bandcalc.page.compute import guarded, netlist_of
from bandcalc.page.panels.fit import latest_fit
from bandcalc.page.whole_design import file_name

TITLE = "Summary"

__all__ = ["TITLE", "render", "summary_inputs"]


def summary_inputs(design) -> tuple[SummaryInputs, list[str]]:
    """The runs kept for ``design``, and a phrase for each one included."""
    spread = runs.latest("spread", design)
    signal = runs.latest("signal", design)
    fit = latest_fit(design)
    included = []
    if spread is not None:
        included.append(f"the spread ({spread.monte_carlo.samples:,} builds)")
    if signal is not None:
        included.append(f"the signal check ({signal.described})")
    if fit is not None:
        included.append("the fit")
    return SummaryInputs(spread=spread, signal=None if signal is None else signal.run, fit=fit), included


def render(sheet) -> None:
    """Download buttons (the summary, the netlist) and a preview of the summary."""
    design = sheet.design
    inputs, included = summary_inputs(design)
    text = design_summary(design, inputs)
    left, middle, right = st.columns([2, 1, 1], vertical_alignment="center")
    left.caption(("Includes " + " and ".join(included) + " of this design." if included else
                  "Run the spread or the signal check of this design to include them.")
                 + " Save or open the design file in the sidebar; the summary's last section is that file.")
    middle.download_button("Download the summary", data=text, file_name=file_name(design, ".md"),
                           mime="text/markdown", on_click="ignore", icon=":material/download:",
                           width="stretch", help="The summary as a Markdown file")
    spice = guarded("The netlist", netlist_of, design)
    if spice is not None:
        right.download_button("Download the netlist", data=spice, file_name=file_name(design, ".cir"),
                              mime="text/plain", on_click="ignore", icon=":material/download:",
                              width="stretch", help="The stage as a SPICE netlist with a bench that "
                                                    "measures both points: ngspice -b prints upper and lower")
    with st.container(border=True):
        st.markdown(text)
