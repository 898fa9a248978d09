"""The design summary: one Markdown document a designer files with the schematic.

``design_summary`` builds it from a design and whatever analyses were run.  Every text the
user typed is escaped, so a name or a note can neither inject HTML nor break a table; the
design file itself closes the document in a fenced ``json`` block, so the summary alone
rebuilds the design.
"""

from __future__ import annotations

import datetime as _dt
import json
import re
from dataclasses import dataclass

from . import __version__
from .analysis import Analysis, analyze
from .design import Design, DividerReference, FixedReference, OpenDrain, design_to_dict
from .units import format_code, format_si

__all__ = [
    "SummaryInputs",
    "component_rows",
    "design_from_summary",
    "design_summary",
    "escape_text",
    "stage_in_words",
]

# Standard power ratings of common resistor packages (W), smallest first (common practice).
POWER_RATINGS = ((0.0625, "1/16 W"), (0.1, "1/10 W"), (0.125, "1/8 W"), (0.25, "1/4 W"),
                 (0.5, "1/2 W"), (1.0, "1 W"), (2.0, "2 W"))
# Choose a rating at least twice the worst dissipation (common practice derating).
DERATING = 2.0

_POSITION = {
    "input": "signal to the {pin} pin",
    "feedback": "output to the + pin",
    "to_positive": "+ pin to the positive rail",
    "to_negative": "+ pin to the negative rail",
    "to_ground": "+ pin to ground",
    "to_reference": "+ pin to the reference",
    "reference.top": "reference divider, positive rail side",
    "reference.bottom": "reference divider, negative rail side",
    "output.pullup": "output pull-up",
}

# Characters that can open markup anywhere in a line (GFM tables and strikethrough included);
# < > & become entities instead, so no HTML can pass.
_MD_INLINE = re.compile(r"([\\`*_\[\]|~#])")
# Line starts that open a block: list items, headings, quotes, rules, setext underlines.
_MD_LINE_START = re.compile(r"^([-+=]|\d+(?=[.)]))")


def escape_text(text: str) -> str:
    """Escape user text for CommonMark: HTML characters become entities, markup is escaped.

    Line breaks survive as hard breaks.  Only user text goes through here; bandcalc's own
    sentences are written to be valid Markdown as they stand.
    """
    out = []
    for line in str(text).splitlines() or [""]:
        line = line.strip().replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        line = _MD_INLINE.sub(r"\\\1", line)
        out.append(_MD_LINE_START.sub(r"\\\1", line) if not line[:1].isdigit() else
                   re.sub(r"^(\d+)([.)])", r"\1\\\2", line))
    return "  \n".join(out)


def _v(x: float) -> str:
    return format_si(x, "V", 4)


def _ohm(x: float) -> str:
    return f"{format_si(x, 'Ohm')} ({format_code(x)})"


@dataclass(frozen=True)
class SummaryInputs:
    """Optional analyses to include; each may be None (its section then says it was not run)."""

    spread: object | None = None
    fit: object | None = None
    signal: object | None = None


def _series_of(ohms: float) -> str:
    from .eseries import SERIES

    for name in ("E24", "E48", "E96", "E192"):
        if any(abs(ohms - m * 10.0**e) <= 1e-9 * ohms for m in SERIES[name] for e in range(-1, 10)):
            return name
    return "none"


def _rating(watts: float) -> str:
    need = watts * DERATING
    for watts_rated, label in POWER_RATINGS:
        if watts_rated >= need:
            return label
    return "above 2 W: use a power resistor"


def component_rows(a: Analysis) -> list[dict[str, str]]:
    """One row per resistor: designator, position, value, series, tolerance, power."""
    d = a.design
    values = dict(d.resistors.present())
    if isinstance(d.reference, DividerReference):
        values["reference.top"], values["reference.bottom"] = d.reference.top, d.reference.bottom
    if isinstance(d.output, OpenDrain):
        values["output.pullup"] = d.output.pullup
    tolerances = _tolerances(d)
    rows = []
    for i, (key, ohms) in enumerate(values.items(), start=1):
        series = _series_of(ohms)
        rows.append({
            "designator": f"R{i}",
            "position": _POSITION[key].format(pin="-" if d.inverting else "+"),
            "key": key,
            "value": _ohm(ohms),
            "series": series,
            "tolerance": tolerances.get(key, "not given"),
            "power": f"{format_si(a.power.get(key, 0.0), 'W')} (rate {_rating(a.power.get(key, 0.0))})",
        })
    return rows


def _tolerances(d: Design) -> dict[str, str]:
    """Tolerance text per resistor key, from the design's tolerances when it has them."""
    tol = getattr(d, "tolerances", None)
    if tol is None or not hasattr(tol, "resistor_percent"):
        return {}
    return {key: f"{tol.resistor_percent(key, ohms):g} %" for key, ohms in d.resistors.present().items()}


def stage_in_words(d: Design) -> str:
    """A sentence or two describing the stage, for people."""
    r = d.resistors
    supply = (f"a single {_v(d.supply.positive)} supply" if d.supply.negative == 0
              else f"rails of {_v(d.supply.negative)} and {_v(d.supply.positive)}")
    parts = [f"{d.stage.capitalize()} comparator stage on {supply}."]
    if d.inverting:
        via = f" through {_ohm(r.input)}" if r.input is not None else ""
        parts.append(f"The signal drives the - pin{via}; the + pin sets the switching points.")
    else:
        parts.append(f"The signal reaches the + pin through {_ohm(r.input)}; "
                     "the reference sits on the - pin.")
    parts.append(f"Feedback of {_ohm(r.feedback)} runs from the output to the + pin.")
    legs = [f"{_POSITION[k][len('+ pin '):]} ({_ohm(getattr(r, k))})"
            for k in ("to_positive", "to_negative", "to_ground", "to_reference") if getattr(r, k) is not None]
    if legs:
        parts.append("Further legs from the + pin: " + "; ".join(legs) + ".")
    if isinstance(d.reference, FixedReference):
        parts.append(f"Reference: a fixed {_v(d.reference.volts)}.")
    elif isinstance(d.reference, DividerReference):
        parts.append(f"Reference: a divider of {_ohm(d.reference.top)} over {_ohm(d.reference.bottom)} "
                     f"across the rails.")
    out = d.output
    if isinstance(out, OpenDrain):
        pu = "the positive rail" if out.pullup_volts is None else _v(out.pullup_volts)
        low = "the negative rail" if out.low_volts is None else _v(out.low_volts)
        parts.append(f"Open-drain output, pulled up by {_ohm(out.pullup)} to {pu}; low level {low}.")
    else:
        parts.append(f"Push-pull output, {_v(out.high_drop)} below the positive rail when high, "
                     f"{_v(out.low_drop)} above the negative rail when low, "
                     f"{format_si(out.resistance, 'Ohm')} output resistance.")
    c = d.comparator
    parts.append(f"Comparator: offset {_v(c.offset)}, bias current {format_si(c.bias_current, 'A')} "
                 f"into each pin, propagation delay {format_si(c.delay, 's')}; "
                 f"source resistance {format_si(d.source.resistance, 'Ohm')}.")
    return " ".join(parts)


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    lines = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    return lines


def _signal_section(run) -> list[str]:
    """Table and findings of a signal run (bandcalc.signal.SignalRun)."""
    import numpy as np

    delays = run.edge_delays
    finite = delays[np.isfinite(delays)] if delays is not None else np.array([])
    t = lambda x: format_si(x, "s")  # noqa: E731
    clean = "not known (recorded signal)" if run.clean_edge_count is None else str(run.clean_edge_count)
    rows = [
        ["Signal", f"{len(run.wave)} samples over {t(run.wave.duration)}"],
        ["Output edges", str(run.edge_count)],
        ["Edges of the noise-free signal", clean],
        ["Edge delay after the centre crossing, mean / max",
         f"{t(finite.mean())} / {t(finite.max())}" if finite.size else "not known"],
        ["Time the output is high", f"{100 * run.output_high_fraction:.1f} %"],
        ["Noise", f"{_v(run.noise.rms)} RMS, about {_v(run.noise.peak_to_peak)} peak-to-peak"],
    ]
    return _table(["Quantity", "Value"], rows) + [""] + [f"- {f}" for f in run.findings]


def _fence(text: str) -> str:
    longest = max((len(m) for m in re.findall(r"`+", text)), default=0)
    return "`" * max(3, longest + 1)


ASSUMPTIONS = (
    "The comparator is ideal apart from the offset, bias current and output levels given: "
    "infinite gain, no input current other than the bias current, no internal hysteresis.",
    "Each output state is a Thevenin source: push-pull level behind its output resistance, or the "
    "pull-up for an open-drain output high and an ideal sink at the low level.",
    "Switching points are in volts of the signal source's open-circuit voltage.",
    "Resistor power is the largest over the signal's range in either output state (conservative); "
    "ratings are chosen at twice that (common practice).",
)


def design_summary(design: Design, inputs: SummaryInputs | None = None, *,
                   today: _dt.date | None = None) -> str:
    """The design summary as CommonMark text.

    Parameters
    ----------
    design : Design
    inputs : SummaryInputs, optional
        Results of the spread, fit and signal analyses, where they were run.
    today : date, optional
        The date printed in the footer (default: today).
    """
    inputs = inputs or SummaryInputs()
    a = analyze(design)
    d = design
    title = " ".join(d.name.split()) or "Unnamed design"  # a heading is one line
    md: list[str] = [f"# {escape_text(title)}", ""]
    md += ["## Purpose and notes", "", escape_text(d.notes) if d.notes.strip() else "_No notes given._", ""]
    md += ["## The stage", "", stage_in_words(d), ""]
    md += ["## Components", ""]
    md += _table(["Designator", "Position", "Value", "Series", "Tolerance", "Power (worst)"],
                  [[r["designator"], r["position"], r["value"], r["series"], r["tolerance"], r["power"]]
                  for r in component_rows(a)])
    md += ["", "## Switching points", ""]
    md += _table(["Quantity", "Nominal"], [
        ["Upper switching point (rising signal)", _v(a.upper)],
        ["Lower switching point (falling signal)", _v(a.lower)],
        ["Hysteresis", _v(a.hysteresis)],
        ["Centre", _v(a.centre)],
        ["Output level reached, high", _v(a.output_high)],
        ["Output level reached, low", _v(a.output_low)],
        ["Largest current from the positive rail", format_si(a.network_current, "A")],
    ])
    if inputs.signal is not None:
        md += ["", "## Noise and delay", ""] + _signal_section(inputs.signal)
    md += ["", "## Findings", ""]
    md += [f"- {f}" for f in a.findings] or ["No findings: the checks found nothing to report."]
    md += ["", "## Assumptions", ""] + [f"- {x}" for x in ASSUMPTIONS]
    if a.cautions:
        md += ["", "## Cautions", ""] + [f"> **Caution.** {c}" for c in a.cautions]
    date = (today or _dt.date.today()).isoformat()
    md += ["", "---", "", f"Made with bandcalc {__version__} on {date}.", ""]
    body = json.dumps(design_to_dict(d), indent=2, ensure_ascii=False)
    fence = _fence(body)
    md += ["## Design file", "", f"{fence}json", body, fence, ""]
    return "\n".join(md)


_JSON_BLOCK = re.compile(r"^## Design file\n\n(?P<fence>`{3,})json\n(?P<body>.*?)\n(?P=fence)$", re.S | re.M)


def design_from_summary(text: str) -> Design:
    """Rebuild the design from a summary's closing ``json`` block."""
    from .design import DesignError, design_from_json

    m = _JSON_BLOCK.search(text)
    if m is None:
        raise DesignError("summary: no '## Design file' section with a json block was found")
    return design_from_json(m["body"], "summary design file")
