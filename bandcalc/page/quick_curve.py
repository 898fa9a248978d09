"""The transfer curve redrawn in the browser the moment a resistor slider moves.

A slider move goes to the server and back before the page shows the new design: a few tenths of a
second, most of it Streamlit's front end redrawing the page (benchmarks/bench_browser.py).  To keep
the curve under the user's hand, each run also sends the browser the chart's figure for the values
next to each resistor slider's own (:data:`REACH` steps each way, and its own), worked out by the
same code as the chart itself.  A small script in the page watches the sliders: when one shows a
value whose figure it holds, it redraws the chart with that figure at once, keeping the chart's
look (Streamlit's theme).  The run that follows draws the same figure again, with the figures and
panels; a value beyond the reach waits for that run, as every move did before.  Where the browser
offers no Plotly to draw with, the script does nothing and the page works as before.  The script
marks the chart with the value it drew (``data-quick-curve``), which the browser tests read.

What the browser gets, as JSON: ``{"chart": class, "at": {class: label}, "sliders": {class: {label:
figure}}}``, where a class is the one Streamlit gives an element's box for its key (``st-key-`` and
the key, anything but letters, digits, ``_`` and ``-`` turned to ``-``), a label is a value as its
slider shows it, ``at`` holds each slider's value in the design the figures were worked out for
(a figure is drawn only while every other slider still shows its value there), and a figure is
the chart's traces and, of its layout, what differs among the figures of its slider, laid over
the chart's own layout (which carries the theme).
"""

from __future__ import annotations

import json
import logging
import re
from collections.abc import Callable

import plotly.utils
import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.parts import value_at, with_value
from bandcalc.model.units import format_code
from bandcalc.page.edit import SLIDER_DIGITS, slider_options

__all__ = ["REACH", "begin_page", "box_class", "figures_near", "render", "varying", "watch"]

log = logging.getLogger("bandcalc.page")
Spec = Callable[[Design], dict]  # a design's chart specification

REACH = 2  # slider steps each way worked out ahead: a few key presses, a short drag
_WATCHED = "page.quick.sliders"  # {design-file path: (slider key, series)} drawn in the last full run

_SCRIPT = """
// One watcher for the page, however often the figures arrive: it holds the latest.
const quick = window.bandcalcQuickCurve || (window.bandcalcQuickCurve = { held: null, watcher: null });
const plain = (v) => v !== null && typeof v === "object" && !Array.isArray(v);
const merged = (old, patch) => {
  const out = { ...old };
  for (const [key, value] of Object.entries(patch)) {
    if (value === null) delete out[key];
    else out[key] = plain(value) && plain(old[key]) ? merged(old[key], value) : value;
  }
  return out;
};
const shown = (name) =>
  document.querySelector("." + name + " input[type=range]")?.getAttribute("aria-valuetext");

function redraw(slider) {
  const held = quick.held;
  const box = held && slider.closest('[class*="st-key-"]');
  const name = box && Object.keys(held.sliders).find((n) => box.classList.contains(n));
  if (!name) return;
  // Only while every other slider shows the value the figures were worked out for.
  if (Object.entries(held.at).some(([other, label]) => other !== name && shown(other) !== label)) return;
  const label = slider.getAttribute("aria-valuetext");
  const figure = held.sliders[name][label];
  const chart = document.querySelector("." + held.chart + " .js-plotly-plot");
  const plotly = window.Plotly;
  if (!figure || !chart || !plotly || typeof plotly.react !== "function") return;
  Promise.resolve(plotly.react(chart, figure.data, merged(chart.layout, figure.layout)))
    .then(() => { chart.dataset.quickCurve = label; }, () => {});
}

export default function (component) {
  quick.held = JSON.parse(component.data);
  if (!quick.watcher) {
    quick.watcher = new MutationObserver((records) => {
      // A move comes as several records for one slider (its raw value, then its label): draw once.
      const moved = new Set(records.filter((r) => r.oldValue !== r.target.getAttribute("aria-valuetext"))
                                   .map((r) => r.target));
      for (const t of moved) if (t instanceof HTMLInputElement && t.type === "range") redraw(t);
    });
    quick.watcher.observe(document.body, { subtree: true, attributes: true, attributeOldValue: true,
                                           attributeFilter: ["aria-valuetext"] });
  }
  return () => { quick.watcher?.disconnect(); quick.watcher = null; quick.held = null; };
}
"""
_COMPONENT = st.components.v2.component("bandcalc.quick_curve", js=_SCRIPT)


def box_class(key: str) -> str:
    """The class Streamlit gives the box of the element keyed ``key``."""
    return "st-key-" + re.sub(r"[^a-zA-Z0-9_-]", "-", key.strip())


def begin_page() -> None:
    """At the start of a full run of the page: no slider drawn yet."""
    st.session_state[_WATCHED] = {}


def watch(path: str, slider_key: str, series: str) -> None:
    """Note the slider keyed ``slider_key`` over ``series``, for the resistor at ``path``, as drawn."""
    st.session_state.setdefault(_WATCHED, {})[path] = (slider_key, series)


def figures_near(design: Design, path: str, series: str, spec_of: Spec) -> dict[str, dict]:
    """The chart's figure for each slider value within :data:`REACH` steps of the resistor's at
    ``path`` (its own included), by the value's label on the slider.  A value whose chart cannot be
    drawn (the design refuses it) is left out: the page's own run says why, if the user goes there."""
    ohms = float(value_at(design, path))
    options = slider_options(series, ohms)
    here = options.index(ohms)
    specs = {}
    for value in options[max(0, here - REACH):here + REACH + 1]:
        try:
            specs[format_code(value, SLIDER_DIGITS)] = spec_of(with_value(design, path, value))
        except ValueError:
            continue
    layouts = varying([spec["layout"] for spec in specs.values()])
    return {label: {"data": spec["data"], "layout": layout}
            for (label, spec), layout in zip(specs.items(), layouts, strict=True)}


def varying(layouts: list[dict]) -> list[dict]:
    """Each layout cut to what differs among them (nested dicts by their keys, anything else whole;
    ``None`` where a layout lacks a key others have).  What all share is left to the chart as drawn,
    which Streamlit's theme has dressed (its title, say)."""
    out: list[dict] = [{} for _ in layouts]
    for key in dict.fromkeys(k for layout in layouts for k in layout):
        values = [layout.get(key) for layout in layouts]
        if all(isinstance(v, dict) for v in values):
            for cut, inner in zip(out, varying(values), strict=True):
                if inner:
                    cut[key] = inner
        elif len({_json(v) for v in values}) > 1:
            for cut, value in zip(out, values, strict=True):
                cut[key] = value
    return out


def _json(value: object) -> str:
    return json.dumps(value, cls=plotly.utils.PlotlyJSONEncoder, sort_keys=True)


def render(design: Design, spec_of: Spec, chart_key: str) -> None:
    """Send the browser, with the script that draws them, the figures near every slider drawn in the
    last full run, for the chart keyed ``chart_key``.  Nothing shows on the page; where the figures
    cannot be worked out, the browser gets none and the sliders work as without them."""
    sliders, at = {}, {}
    for path, (slider_key, series) in st.session_state.get(_WATCHED, {}).items():
        try:
            at[box_class(slider_key)] = format_code(float(value_at(design, path)), SLIDER_DIGITS)
            sliders[box_class(slider_key)] = figures_near(design, path, series, spec_of)
        except ValueError:  # no slider for this value (its control says why)
            continue
        except Exception:  # a help for the eye, never a reason to break the page
            log.exception("the figures near the slider of %s failed", path)
    held = {"chart": box_class(chart_key), "at": at, "sliders": sliders}
    _COMPONENT(data=json.dumps(held, cls=plotly.utils.PlotlyJSONEncoder), key="quick-curve", height=0)
