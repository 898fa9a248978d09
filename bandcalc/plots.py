"""Plotly figures drawn from bandcalc's results; the only module that imports Plotly.

Each function takes a result object computed elsewhere in the package and returns a
``plotly.graph_objects.Figure``; nothing here calculates circuit values.
"""

from __future__ import annotations

import math

import plotly.graph_objects as go

from .transfer import TransferCurve
from .units import format_value

__all__ = ["PALETTE", "as_figure", "transfer_figure", "transfer_spec"]

# bandcalc's own colours: the rising branch in pine green, the falling branch in brick red,
# the hysteresis band in pale sand, the switching points in ink blue.
PALETTE = {
    "rising": "#2f6f4e",
    "falling": "#b5472f",
    "band": "rgba(214, 182, 110, 0.28)",
    "band_edge": "#a8843a",
    "point": "#24345c",
    "grid": "#e3e0d8",
}


def _view(curve: TransferCurve) -> tuple[float, float]:
    """Input range first shown: the band with room either side, within the swept range."""
    lo, hi = float(curve.signal[0]), float(curve.signal[-1])
    width = curve.hysteresis
    if not (math.isfinite(width) and width > 0):
        return lo, hi
    return max(lo, curve.lower - 1.5 * width), min(hi, curve.upper + 1.5 * width)


def _arrow(tail: tuple[float, float], head: tuple[float, float], colour: str) -> dict:
    return {"x": head[0], "y": head[1], "ax": tail[0], "ay": tail[1], "xref": "x", "yref": "y",
            "axref": "x", "ayref": "y", "text": "", "showarrow": True, "arrowhead": 3, "arrowsize": 1.4,
            "arrowwidth": 2, "arrowcolor": colour}


def _direction_arrows(curve: TransferCurve) -> list[dict]:
    """Arrows along each branch inside the band, and along each jump."""
    up, low, width = curve.upper, curve.lower, curve.hysteresis
    if not (math.isfinite(width) and width > 0):
        return []
    mid, step = low + 0.5 * width, 0.18 * width
    start, switched = curve.level_at("rising", mid), curve.level_at("falling", mid)
    (up_from, up_to), (low_from, low_to) = curve.at_upper, curve.at_lower
    return [
        _arrow((mid - step, start), (mid + step, start), PALETTE["rising"]),
        _arrow((mid + step, switched), (mid - step, switched), PALETTE["falling"]),
        _arrow((up, up_from + 0.15 * (up_to - up_from)), (up, up_from + 0.4 * (up_to - up_from)),
               PALETTE["rising"]),
        _arrow((low, low_from + 0.6 * (low_to - low_from)), (low, low_from + 0.85 * (low_to - low_from)),
               PALETTE["falling"]),
    ]


def _x(curve: TransferCurve, value: float) -> str:
    return format_value(value, curve.unit, 4)


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

    Traces, in order: "Rising input", "Falling input", "Switching points"; the band is
    ``layout.shapes[0]``, its label the first annotation, then four direction arrows.  The input
    axis reads ``x_title`` (default "Input (V)", or "Watched quantity (unit)" for a watched curve).
    """
    unit = curve.unit
    x_title = x_title or f"{'Watched quantity' if curve.watched else 'Input'} ({unit})"
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
    ]
    shapes, labels = _band(curve)
    layout = {
        "title": {"text": title or ""},
        "margin": {"l": 60, "r": 20, "t": 50 if title else 36, "b": 50}, "height": 420,
        "plot_bgcolor": "white", "legend": {"orientation": "h", "y": -0.2, "x": 0},
        "xaxis": {"title": {"text": x_title}, "range": list(_view(curve)), "gridcolor": PALETTE["grid"],
                  "zeroline": False},
        "yaxis": {"title": {"text": "Output (V)"}, "gridcolor": PALETTE["grid"], "zeroline": False},
        "shapes": shapes,
        "annotations": labels + _direction_arrows(curve),
    }
    return {"data": data, "layout": layout}


def transfer_figure(curve: TransferCurve, title: str | None = None, validate: bool = True) -> go.Figure:
    """Output against input with both branches, the switching points and the hysteresis band.

    Parameters
    ----------
    curve : TransferCurve
        From :func:`bandcalc.transfer.transfer_curve`.
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
