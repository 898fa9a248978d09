"""What is always in view: the switching-point figures, findings and cautions, the transfer curve
and the schematic of the current stage.

With a front end the switching points, hysteresis and centre are shown in the watched quantity
(battery volts, degrees C, ...) with the stage's own input volts beneath each, and the transfer
curve can be drawn against either.
"""

from __future__ import annotations

import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.front_end import ThermistorFrontEnd
from bandcalc.model.operating import Analysis
from bandcalc.model.units import format_si, format_value, symbol
from bandcalc.page import follow
from bandcalc.page.compute import analysis_of, guarded, schematic_of, transfer_figure_of
from bandcalc.page.literal import literal

__all__ = ["AXIS_KEY", "CHART_KEY", "FIGURES", "FIGURE_WIDTH", "axis_choice", "figure_texts",
           "render_figures", "render_results", "render_views", "watched_name"]

AXIS_KEY = "page.transfer.axis"
CHART_KEY = "transfer"  # the live chart's key
# Each figure's width in pixels: room for its whole label ("Upper switching point" and its help
# mark), four to a row beside the open sidebar in a window 1440 pixels wide; six columns sharing
# the row cut that label short.  One wrapping row holds them: fewer elements for each rerun.
FIGURE_WIDTH = 220

# (label on the page, attribute of Analysis, what it means)
FIGURES = (
    ("Upper switching point", "upper", "Input voltage at which a rising input switches the output"),
    ("Lower switching point", "lower", "Input voltage at which a falling input switches it back"),
    ("Hysteresis", "hysteresis", "Upper minus lower switching point"),
    ("Centre", "centre", "Halfway between the switching points"),
    ("Output high", "output_high", "Output level reached when high, with the network's load"),
    ("Output low", "output_low", "Output level reached when low, with the network's load"),
)


_WATCHED_MEANING = {
    "upper": "Value of the watched quantity at which, rising, it switches the output",
    "lower": "Value of the watched quantity at which, falling, it switches the output back",
    "hysteresis": "Upper minus lower switching point, in the watched quantity",
    "centre": "Halfway between the switching points, in the watched quantity",
}


def watched_name(design: Design) -> str:
    """What the front end watches, for axis titles: "Temperature", "Watched voltage", ..."""
    if isinstance(design.front_end, ThermistorFrontEnd):
        return "Temperature"
    return "Watched voltage" if design.front_end is not None and design.front_end.unit == "V" \
        else "Watched quantity"


def figure_texts(analysis: Analysis) -> list[tuple[str, str, str | None, str]]:
    """(label, value shown, the stage's volts beneath it or None, meaning) for each figure; the
    watched unit is shown as text (:func:`bandcalc.page.literal.literal`)."""
    a, w, unit = analysis, analysis.points, literal(analysis.points.unit)
    out = []
    for label, attr, meaning in FIGURES:
        volts = format_si(getattr(a, attr), "V", 4)
        if a.design.front_end is None or attr.startswith("output"):  # the stage's own volts
            out.append((label, volts, None, meaning))
            continue
        value = {"upper": w.upper, "lower": w.lower, "hysteresis": w.hysteresis, "centre": w.centre}[attr]
        # Where the stage's input falls as the watched quantity rises (a thermistor at the bottom),
        # the watched upper point is where the stage reaches its lower point, and the other way round.
        stage = {"upper": a.upper if w.rises else a.lower, "lower": a.lower if w.rises else a.upper}.get(
            attr, getattr(a, attr))
        out.append((label, format_value(float(value), unit, 4), f"{format_si(stage, 'V', 4)} at the stage",
                    _WATCHED_MEANING[attr]))
    return out


def render_figures(analysis: Analysis) -> None:
    """The six figures side by side, wrapping into rows at :data:`FIGURE_WIDTH` pixels each, then the
    cautions, the findings (each sentence holds its numbers) and, quieter, the notes."""
    with st.container(horizontal=True, gap="medium"):
        for label, value, stage, meaning in figure_texts(analysis):
            if stage is None:
                st.metric(label, value, help=meaning, width=FIGURE_WIDTH)
                continue
            with st.container(width=FIGURE_WIDTH, gap=None):
                st.metric(label, value, help=meaning)
                st.caption(stage)
    if analysis.design.front_end is not None:
        w, unit = analysis.points, literal(analysis.design.unit)
        st.caption(f"Switching points in the watched quantity ({symbol(unit)}), through the front end; "
                   f"beneath each, the stage's input in volts. The output turns {analysis.rising_output} "
                   f"as the watched quantity rises through {format_value(float(w.upper), unit, 4)}.")
    for line in analysis.cautions:
        st.error(literal(line), icon=":material/warning:")
    problems = [f for f in analysis.findings if f.level == "warning"]
    for f in problems:
        st.warning(literal(f.message), icon=":material/info:")
    if not problems and not analysis.cautions:
        st.caption("No findings: both points are reachable; over the input's whole range the pins stay "
                   "inside the rails and the given ranges, and every part within its rating.")
    for f in analysis.findings:
        if f.level == "note":
            st.caption(f":material/info: {literal(f.message)}")


def _axis_names(design: Design) -> dict[str, str]:
    return {"watched": f"{watched_name(design)} ({symbol(design.unit)})",
            "stage": "Stage input, open-circuit (V)"}


def axis_choice(design: Design) -> tuple[bool, str | None]:
    """The transfer curve's axis as last chosen: (against the watched quantity, axis title)."""
    if design.front_end is None:
        return False, None
    choice = st.session_state.get(AXIS_KEY, "watched")
    return choice == "watched", _axis_names(design)[choice]  # chart text: outputs/plots.py escapes it


def _axis(design: Design) -> tuple[bool, str | None]:
    """With a front end, a choice of axis for the transfer curve: (watched, axis title)."""
    if design.front_end is None:
        return False, None
    names = _axis_names(design)
    st.session_state.setdefault(AXIS_KEY, "watched")
    # A choice reruns every part that follows the design, not just the live view: the quick curve's
    # figures (bandcalc.page.quick_curve) are drawn against the axis chosen too.
    st.radio("Plot against", tuple(names), key=AXIS_KEY, format_func=lambda k: literal(names[k]),
             horizontal=True, label_visibility="collapsed", on_change=follow.rerun)
    return axis_choice(design)


def render_views(design: Design) -> None:
    """Transfer curve and schematic side by side."""
    chart, drawing = st.columns([3, 2], gap="medium")
    with chart:
        watched, x_title = _axis(design)
        figure = guarded("Transfer curve", transfer_figure_of, design, watched, x_title)
        if figure is not None:
            st.plotly_chart(figure, key=CHART_KEY, config={"displaylogo": False})
    with drawing:
        svg = guarded("Schematic", schematic_of, design)
        if svg is not None:
            st.image(svg, caption="The stage as designed", width="stretch")


def render_results(design: Design) -> Analysis | None:
    """Figures, findings and views; returns the analysis (``None`` if it failed, with a message shown)."""
    analysis = guarded("Analysis", analysis_of, design)
    if analysis is None:
        return None
    figures = st.container()
    render_views(design)
    with figures:
        render_figures(analysis)
    return analysis

