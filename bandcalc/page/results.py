"""What is always in view: the switching-point figures, findings and cautions, the transfer curve
and the schematic of the current stage."""

from __future__ import annotations

import streamlit as st

from ..analysis import Analysis
from ..design import Design
from ..units import format_si
from .compute import analysis_of, guarded, schematic_of, transfer_figure_of

__all__ = ["FIGURES", "render_figures", "render_results", "render_views"]

# (label on the page, attribute of Analysis, what it means)
FIGURES = (
    ("Upper switching point", "upper", "Input voltage at which a rising input switches the output"),
    ("Lower switching point", "lower", "Input voltage at which a falling input switches it back"),
    ("Hysteresis", "hysteresis", "Upper minus lower switching point"),
    ("Centre", "centre", "Halfway between the switching points"),
    ("Output high", "output_high", "Output level reached when high, with the network's load"),
    ("Output low", "output_low", "Output level reached when low, with the network's load"),
)


def render_figures(analysis: Analysis) -> None:
    """The six figures, then the findings and cautions."""
    for column, (label, attr, meaning) in zip(st.columns(len(FIGURES)), FIGURES, strict=True):
        column.metric(label, format_si(getattr(analysis, attr), "V", 4), help=meaning)
    for line in analysis.cautions:
        st.error(line, icon=":material/warning:")
    for line in analysis.findings:
        st.warning(line, icon=":material/info:")
    if not analysis.findings and not analysis.cautions:
        st.caption("No findings: both points are reachable, inside the rails and the given ranges.")


def render_views(design: Design) -> None:
    """Transfer curve and schematic side by side."""
    chart, drawing = st.columns([3, 2], gap="medium")
    with chart:
        figure = guarded("Transfer curve", transfer_figure_of, design)
        if figure is not None:
            st.plotly_chart(figure, key="transfer", config={"displaylogo": False})
    with drawing:
        svg = guarded("Schematic", schematic_of, design)
        if svg is not None:
            st.image(svg, caption="The stage as designed", width="stretch")


def render_results(design: Design) -> Analysis | None:
    """Figures, findings and views; returns the analysis (``None`` if it failed, with a message shown)."""
    analysis = guarded("Analysis", analysis_of, design)
    if analysis is None:
        return None
    render_figures(analysis)
    render_views(design)
    return analysis

