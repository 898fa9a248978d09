"""Plotly figures drawn from bandcalc's results; the only module that imports Plotly.

Each function takes a result object computed elsewhere in the package and returns a
``plotly.graph_objects.Figure``; nothing here calculates circuit values.

Plotly reads chart text as a little HTML (``<b>``, ``<br>``, ``<a href=...>``); text a user wrote
(a watched unit, a title passed in) goes through :func:`_text` first, so it is drawn as written.
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping

import numpy as np
import plotly.graph_objects as go

from bandcalc.model.transfer import TransferCurve
from bandcalc.model.units import format_value, symbol
from bandcalc.signal_check.edges import SignalRun
from bandcalc.signal_check.width_trade import Sweep
from bandcalc.spread.propagation import Sensitivity, Summary

__all__ = [
    "DISPLAY_POINTS",
    "PALETTE",
    "as_figure",
    "display_index",
    "histogram_spec",
    "sensitivity_spec",
    "signal_spec",
    "tradeoff_spec",
    "transfer_figure",
    "transfer_spec",
]

#: Samples of a waveform drawn at most; longer records are thinned for display (edges stay exact).
DISPLAY_POINTS = 20_000

# bandcalc's own colours: the rising branch in pine green, the falling branch in brick red,
# the hysteresis band in pale sand, the switching points in ink blue.
PALETTE = {
    "rising": "#2f6f4e",
    "falling": "#b5472f",
    "band": "rgba(214, 182, 110, 0.28)",
    "band_edge": "#a8843a",
    "point": "#24345c",
    "grid": "#e3e0d8",
    "window": "rgba(47, 111, 78, 0.12)",
    "clean": "#8c8a83",
}
_QUANTITY_NAMES = {"upper": "Upper point", "lower": "Lower point", "hysteresis": "Hysteresis"}
_QUANTITY_COLOURS = {"upper": PALETTE["rising"], "lower": PALETTE["falling"],
                     "hysteresis": PALETTE["band_edge"]}


def _text(text: str) -> str:
    """User text for Plotly's chart text: its HTML characters as entities (which Plotly decodes)."""
    return html.escape(text, quote=False)


def _view(curve: TransferCurve) -> tuple[float, float]:
    """Input range first shown: the band with room either side, within the swept range."""
    lo, hi = float(curve.signal[0]), float(curve.signal[-1])
    width = curve.hysteresis
    if not (math.isfinite(width) and width > 0):
        return lo, hi
    return max(lo, curve.lower - 1.5 * width), min(hi, curve.upper + 1.5 * width)


def _direction_traces(curve: TransferCurve) -> list[dict]:
    """Arrows along each branch inside the band and along each jump: one trace per branch, each
    arrow a short segment with an arrowhead marker at its head.  Drawn as traces, not as layout
    annotations: a Plotly annotation with an arrow costs the browser several times more to redraw
    on each slider move (measured: benchmarks/bench_browser.py)."""
    up, low, width = curve.upper, curve.lower, curve.hysteresis
    if not (math.isfinite(width) and width > 0):
        return []
    mid, step = low + 0.5 * width, 0.18 * width
    start, switched = curve.level_at("rising", mid), curve.level_at("falling", mid)
    (up_from, up_to), (low_from, low_to) = curve.at_upper, curve.at_lower
    up_a, up_b = (up_from + f * (up_to - up_from) for f in (0.15, 0.4))
    low_a, low_b = (low_from + f * (low_to - low_from) for f in (0.6, 0.85))
    arrows = {
        "rising": [((mid - step, start), (mid + step, start)), ((up, up_a), (up, up_b))],
        "falling": [((mid + step, switched), (mid - step, switched)), ((low, low_a), (low, low_b))],
    }
    traces = []
    for branch, segments in arrows.items():
        x: list[float | None] = []
        y: list[float | None] = []
        for (tail_x, tail_y), (head_x, head_y) in segments:
            x += [tail_x, head_x, None]
            y += [tail_y, head_y, None]
        traces.append({"type": "scatter", "x": x, "y": y, "name": f"Direction, {branch} input",
                       "mode": "lines+markers", "showlegend": False, "hoverinfo": "skip",
                       "line": {"color": PALETTE[branch], "width": 2},
                       "marker": {"symbol": "arrow", "angleref": "previous", "color": PALETTE[branch],
                                  "size": [0, 16, 0] * len(segments)}})
    return traces


def _x(curve: TransferCurve, value: float) -> str:
    return format_value(value, _text(curve.unit), 4)


def _band(curve: TransferCurve) -> tuple[list[dict], list[dict]]:
    """The shaded hysteresis band and its label (shapes, annotations)."""
    if not (math.isfinite(curve.hysteresis) and curve.hysteresis > 0):
        return [], []
    shape = {"type": "rect", "xref": "x", "yref": "paper", "x0": curve.lower, "x1": curve.upper,
             "y0": 0, "y1": 1, "fillcolor": PALETTE["band"], "layer": "below", "name": "Hysteresis band",
             "line": {"color": PALETTE["band_edge"], "width": 1, "dash": "dot"}}
    label = {"x": 0.5 * (curve.lower + curve.upper), "y": 1, "xref": "x", "yref": "paper",
             "yanchor": "bottom", "showarrow": False, "font": {"size": 12},
             "text": f"Hysteresis {_x(curve, curve.hysteresis)}"}
    return [shape], [label]


def transfer_spec(curve: TransferCurve, title: str | None = None, x_title: str | None = None) -> dict:
    """The transfer-curve figure as a plain Plotly specification (``{"data": [...], "layout": {...}}``).

    Traces, in order: "Rising input", "Falling input", "Switching points", then (where the band has
    a width) the direction arrows "Direction, rising input" and "Direction, falling input", two
    arrows each: along the branch inside the band and along its jump.  The band is
    ``layout.shapes[0]``, its label the only annotation.  The input
    axis reads ``x_title`` (default "Input (V)", or "Watched quantity (unit)" for a watched curve).
    """
    unit = _text(symbol(curve.unit))
    x_title = _text(x_title) if x_title else f"{'Watched quantity' if curve.watched else 'Input'} ({unit})"
    heights = [0.5 * sum(curve.at_upper), 0.5 * sum(curve.at_lower)]
    points = {"type": "scatter", "x": [curve.upper, curve.lower], "y": heights, "name": "Switching points",
              "mode": "markers+text",
              "text": [f"Upper {_x(curve, curve.upper)}", f"Lower {_x(curve, curve.lower)}"],
              "textposition": ["middle right", "middle left"],
              "textfont": {"color": PALETTE["point"], "size": 13},
              "marker": {"symbol": ["hexagon", "hexagon-open"], "size": 13, "color": PALETTE["point"],
                         "line": {"width": 2, "color": PALETTE["point"]}},
              "hovertemplate": "%{text}<extra></extra>"}
    data = [
        {"type": "scatter", "x": curve.signal, "y": curve.rising, "name": "Rising input", "mode": "lines",
         "line": {"color": PALETTE["rising"], "width": 3},
         "hovertemplate": f"in %{{x:.4g}} {unit}<br>out %{{y:.4g}} V<extra>rising</extra>"},
        {"type": "scatter", "x": curve.signal, "y": curve.falling, "name": "Falling input", "mode": "lines",
         "line": {"color": PALETTE["falling"], "width": 2, "dash": "dash"},
         "hovertemplate": f"in %{{x:.4g}} {unit}<br>out %{{y:.4g}} V<extra>falling</extra>"},
        points,
        *_direction_traces(curve),
    ]
    shapes, labels = _band(curve)
    layout = {
        "title": {"text": _text(title or "")},
        "margin": {"l": 60, "r": 20, "t": 50 if title else 36, "b": 50}, "height": 420,
        "plot_bgcolor": "white", "legend": {"orientation": "h", "y": -0.2, "x": 0},
        # Tick labels are never hidden for reaching past the chart (the margins hold them): Plotly's
        # check measures every label, forcing a layout of the whole page, about 30 ms of a slider
        # move's 240 in the browser (benchmarks/bench_browser.py, side by side).
        "xaxis": {"title": {"text": x_title}, "range": list(_view(curve)), "gridcolor": PALETTE["grid"],
                  "zeroline": False, "ticklabeloverflow": "allow"},
        "yaxis": {"title": {"text": "Output (V)"}, "gridcolor": PALETTE["grid"], "zeroline": False,
                  "ticklabeloverflow": "allow"},
        "shapes": shapes,
        "annotations": labels,
    }
    return {"data": data, "layout": layout}


def transfer_figure(curve: TransferCurve, title: str | None = None, validate: bool = True) -> go.Figure:
    """Output against input with both branches, the switching points and the hysteresis band.

    Parameters
    ----------
    curve : TransferCurve
        From :func:`bandcalc.model.transfer.transfer_curve`.
    title : str, optional
    validate : bool
        Check the specification against Plotly's schema (about 70 ms).  The page passes False:
        the same specification is checked in the tests, and a slider move must stay fast.

    Returns
    -------
    plotly.graph_objects.Figure
    """
    return as_figure(transfer_spec(curve, title), validate)


def as_figure(spec: dict, validate: bool = True) -> go.Figure:
    """A Plotly figure from a specification; ``validate=False`` skips Plotly's schema check."""
    return go.Figure(spec) if validate else go.Figure(spec, _validate=False)


def _axis(title: str, **extra: object) -> dict:
    return {"title": {"text": title}, "gridcolor": PALETTE["grid"], **extra}


# --- spread --------------------------------------------------------------------------------------

def _vline(x: float, colour: str, dash: str, name: str) -> dict:
    return {"type": "line", "xref": "x", "yref": "paper", "x0": x, "x1": x, "y0": 0, "y1": 1, "name": name,
            "line": {"color": colour, "width": 2, "dash": dash}}


def histogram_spec(summary: Summary, title: str, unit: str, *, window: tuple[float, float] | None = None,
                   nominal: float | None = None, extremes: tuple[float, float] | None = None,
                   greatest: Summary | None = None) -> dict:
    """A Monte Carlo histogram of one quantity as a Plotly specification.

    Trace "Builds" (bars: bin centres, counts); with ``greatest`` given, ``summary`` holds each build's
    least value over the temperature range and ``greatest`` its greatest, drawn as two overlaid traces
    "Least over the range" and "Greatest over the range".  Shapes, in order: the window a build must
    meet (named "Window", open sides drawn to the edge of the view), the nominal value and the worst
    case's least and greatest value (named "Nominal", "Worst case, least", "Worst case, greatest").
    """
    title, unit = _text(title), _text(symbol(unit))
    shown = [(summary, "Builds", PALETTE["rising"])] if greatest is None else \
        [(summary, "Least over the range", PALETTE["point"]), (greatest, "Greatest over the range",
                                                                PALETTE["falling"])]
    marks = [v for v in (nominal, *(extremes or ()), *(window or ())) if v is not None and math.isfinite(v)]
    lo = min([float(s.edges[0]) for s, _, _ in shown] + marks)
    hi = max([float(s.edges[-1]) for s, _, _ in shown] + marks)
    pad = 0.06 * (hi - lo) or 1e-9
    view = [lo - pad, hi + pad]
    shapes = []
    if window is not None:
        shapes.append({"type": "rect", "xref": "x", "yref": "paper", "y0": 0, "y1": 1, "layer": "below",
                       "x0": max(window[0], view[0]), "x1": min(window[1], view[1]), "name": "Window",
                       "fillcolor": PALETTE["window"], "line": {"width": 0}})
    if nominal is not None:
        shapes.append(_vline(nominal, PALETTE["point"], "solid", "Nominal"))
    if extremes is not None:
        shapes += [_vline(extremes[0], PALETTE["falling"], "dash", "Worst case, least"),
                   _vline(extremes[1], PALETTE["falling"], "dash", "Worst case, greatest")]
    bars = []
    for s, name, colour in shown:
        edges, counts = np.asarray(s.edges), np.asarray(s.counts)
        bars.append({"type": "bar", "x": 0.5 * (edges[:-1] + edges[1:]), "y": counts, "width": np.diff(edges),
                     "name": name, "opacity": 1.0 if greatest is None else 0.6,
                     "marker": {"color": colour, "line": {"width": 0}},
                     "hovertemplate": f"%{{x:.5g}} {unit}<br>%{{y}} builds<extra>{name}</extra>"})
    layout = {"title": {"text": title}, "height": 300, "bargap": 0, "barmode": "overlay",
              "showlegend": greatest is not None, "legend": {"orientation": "h", "y": -0.3},
              "margin": {"l": 50, "r": 10, "t": 40, "b": 45}, "plot_bgcolor": "white", "shapes": shapes,
              "xaxis": _axis(unit, range=view), "yaxis": _axis("Builds")}
    return {"data": bars, "layout": layout}


def sensitivity_spec(sens: Sensitivity, labels: Mapping[str, str], top: int = 12) -> dict:
    """Each factor's share of each quantity's variance (percent), as grouped horizontal bars.

    Factors are ranked by their largest share over the three quantities, at most ``top`` of them,
    the largest at the top.  Traces: "Hysteresis", "Lower point", "Upper point" (so that the upper
    point's bar is the top one of each group).
    """
    shares = {q: {sh.factor: sh.share for sh in getattr(sens, q)} for q in _QUANTITY_NAMES}
    factors = sorted(shares["upper"], key=lambda f: -max(shares[q].get(f, 0.0) for q in shares))[:top]
    factors.reverse()  # Plotly draws the first category at the bottom
    names = [_text(labels.get(f, f)) for f in factors]
    # Within a group Plotly stacks the first trace lowest: list them bottom up, the legend top down.
    data = [{"type": "bar", "orientation": "h", "name": _QUANTITY_NAMES[q], "y": names,
             "x": [100.0 * shares[q].get(f, 0.0) for f in factors], "marker": {"color": _QUANTITY_COLOURS[q]},
             "hovertemplate": "%{y}: %{x:.1f} %<extra>" + _QUANTITY_NAMES[q] + "</extra>"}
            for q in reversed(_QUANTITY_NAMES)]
    layout = {"barmode": "group", "height": 120 + 48 * len(factors), "plot_bgcolor": "white",
              "margin": {"l": 10, "r": 10, "t": 30, "b": 45},
              "legend": {"orientation": "h", "y": 1.02, "yanchor": "bottom", "x": 0,
                         "traceorder": "reversed"},
              "xaxis": _axis("Share of the variance (%)", rangemode="tozero"),
              "yaxis": {"automargin": True}}
    return {"data": data, "layout": layout}


# --- signal check --------------------------------------------------------------------------------

def display_index(values: np.ndarray, max_points: int = DISPLAY_POINTS) -> np.ndarray:
    """Indices of the samples to draw: all of them up to ``max_points``, else the least and greatest
    sample of each of ``max_points // 2`` equal runs (so spikes and noise peaks stay visible), with
    the first and last sample."""
    n = values.size
    if n <= max_points:
        return np.arange(n)
    runs = max_points // 2
    size = -(-n // runs)
    blocks = np.pad(values, (0, runs * size - n), mode="edge").reshape(runs, size)
    start = np.arange(runs) * size
    picked = np.concatenate([[0, n - 1], start + blocks.argmin(axis=1), start + blocks.argmax(axis=1)])
    return np.unique(np.minimum(picked, n - 1))


def signal_spec(run: SignalRun, output_levels: tuple[float, float], unit: str,
                max_points: int = DISPLAY_POINTS) -> dict:
    """The signal check over time: input, both points and the output with its edges.

    Top: "Input" (thinned to ``max_points`` for display, see :func:`display_index`), "Noise-free
    input" where known, "Upper point", "Lower point".  Bottom (``yaxis2``, volts): "Output", a step
    through the exact edge times, and markers "Rising edges" / "Falling edges" at those times.
    ``output_levels`` is (low, high), volts.
    """
    t, v = run.wave.t, run.wave.v
    unit = _text(symbol(unit))
    index = display_index(v, max_points)
    span = [float(t[0]), float(t[-1])]
    line = {"type": "scattergl" if index.size > 5000 else "scatter", "mode": "lines"}
    data = [{**line, "x": t[index], "y": v[index], "name": "Input", "line": {"color": PALETTE["point"],
                                                                            "width": 1}}]
    if run.wave.clean is not None:
        data.append({**line, "x": t[index], "y": run.wave.clean[index], "name": "Noise-free input",
                     "line": {"color": PALETTE["clean"], "width": 1, "dash": "dot"}})
    for name, level, colour in (("Upper point", run.upper, PALETTE["rising"]),
                                ("Lower point", run.lower, PALETTE["falling"])):
        data.append({"type": "scatter", "mode": "lines", "x": span, "y": [level, level], "name": name,
                     "line": {"color": colour, "width": 2, "dash": "dash"},
                     "hovertemplate": f"{name} {format_value(level, unit, 4)}<extra></extra>"})
    low, high = output_levels
    times, rising = run.edge_times, run.output_rising
    start_high = bool(run.output_high[0])
    after = np.where(rising, high, low)
    before = np.concatenate([[high if start_high else low], after[:-1]]) if times.size else np.array([])
    step_x = np.concatenate([[span[0]], np.repeat(times, 2), [max(span[1], float(times[-1]) if times.size
                                                                    else span[1])]])
    step_y = np.concatenate([[high if start_high else low], np.column_stack([before, after]).ravel(),
                             [after[-1] if times.size else (high if start_high else low)]])
    data.append({"type": "scatter", "mode": "lines", "x": step_x, "y": step_y, "name": "Output",
                 "yaxis": "y2", "line": {"color": PALETTE["band_edge"], "width": 2}})
    for name, mask, shape in (("Rising edges", rising, "triangle-up"), ("Falling edges", ~rising,
                                                                       "triangle-down")):
        data.append({"type": "scatter", "mode": "markers", "x": times[mask], "y": after[mask], "name": name,
                     "yaxis": "y2", "marker": {"symbol": shape, "size": 9, "color": PALETTE["point"]},
                     "hovertemplate": "edge at %{x:.6~s}s<extra></extra>"})
    layout = {"height": 460, "plot_bgcolor": "white", "margin": {"l": 60, "r": 20, "t": 20, "b": 50},
              "legend": {"orientation": "h", "y": -0.16, "x": 0},
              "xaxis": _axis("Time", anchor="y2", tickformat=".3~s", ticksuffix="s", range=span),
              "yaxis": _axis(f"Input ({unit})", domain=[0.36, 1.0]),
              "yaxis2": _axis("Output (V)", domain=[0.0, 0.26])}
    return {"data": data, "layout": layout}


def tradeoff_spec(sweep: Sweep, unit: str, width: float | None = None) -> dict:
    """Output edges and delay against hysteresis width (from ``width_trade.sweep_design``).

    Traces: "Output edges" (the median over the noise draws), with "Fewest" and "Most" of any draw
    where there are several, "Edges of the noise-free signal" and "Predicted edges (Rice)" (where
    known), then on ``yaxis2`` (seconds) "Mean delay" and "Largest delay" (where known: they need the
    noise-free signal).  Shapes: the narrowest width with one clean edge per crossing in every draw
    ("Narrowest clean width", where there is one), the prediction's ("Predicted", where there is
    one) and the design's own ``width``.
    """
    w, unit = sweep.widths, _text(symbol(unit))
    data = []
    if sweep.runs > 1:
        for name, values in (("Fewest", sweep.run_edge_counts.min(axis=0)),
                             ("Most", sweep.run_edge_counts.max(axis=0))):
            trace = {"type": "scatter", "mode": "lines", "x": w, "y": values, "name": f"{name} (any draw)",
                     "line": {"color": PALETTE["band_edge"], "width": 0}}
            if name == "Most":  # shade between the fewest and the most
                trace.update(fill="tonexty", fillcolor=PALETTE["band"])
            data.append(trace)
    data.append({"type": "scatter", "mode": "lines+markers", "x": w, "y": sweep.edge_counts,
                 "name": "Output edges", "line": {"color": PALETTE["point"], "width": 2},
                 "marker": {"size": 4}})
    if sweep.clean_edge_counts is not None:
        data.append({"type": "scatter", "mode": "lines", "x": w, "y": sweep.clean_edge_counts,
                     "name": "Edges of the noise-free signal",
                     "line": {"color": PALETTE["clean"], "dash": "dot"}})
        if sweep.predicted_extra is not None:
            predicted = np.where(np.isfinite(sweep.predicted_extra),
                                 sweep.clean_edge_counts + sweep.predicted_extra, np.nan)
            data.append({"type": "scatter", "mode": "lines", "x": w, "y": predicted,
                         "name": "Predicted edges (Rice)",
                         "line": {"color": PALETTE["rising"], "dash": "dash"}})
    delays = bool(np.isfinite(sweep.mean_delays).any())  # none without a noise-free signal
    for name, values, dash in (("Mean delay", sweep.mean_delays, "solid"),
                               ("Largest delay", sweep.max_delays, "dash")):
        if delays:
            data.append({"type": "scatter", "mode": "lines", "x": w, "y": values, "name": name, "yaxis": "y2",
                         "line": {"color": PALETTE["falling"], "dash": dash, "width": 2}})
    shapes, notes = [], []
    marks = (("Narrowest clean width", sweep.best_width, "solid"),
             ("Predicted", sweep.predicted_best_width, "dash"), ("This design", width, "dot"))
    for name, x, dash in marks:
        if x is None or not math.isfinite(x):
            continue
        shapes.append(_vline(x, PALETTE["rising"], dash, name))
        notes.append({"x": x, "y": 1, "xref": "x", "yref": "paper", "yanchor": "bottom", "showarrow": False,
                      "text": f"{name}: {format_value(x, unit, 3)}", "font": {"color": PALETTE["rising"]},
                      "xanchor": "left" if name == "This design" else "right"})
    layout = {"height": 380, "plot_bgcolor": "white", "margin": {"l": 60, "r": 60, "t": 40, "b": 50},
              "legend": {"orientation": "h", "y": -0.22, "x": 0}, "shapes": shapes, "annotations": notes,
              "xaxis": _axis(f"Hysteresis width ({unit})"),
              "yaxis": _axis("Output edges", rangemode="tozero")}
    if delays:
        layout["yaxis2"] = _axis("Delay", overlaying="y", side="right", tickformat=".3~s", ticksuffix="s",
                                 rangemode="tozero", showgrid=False)
    return {"data": data, "layout": layout}
