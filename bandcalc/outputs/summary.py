"""The design summary: one Markdown document a designer files with the schematic.

``design_summary`` builds it from a design and whatever analyses were run.  bandcalc writes the
markup (headings, tables, list bullets) and every piece of text inside it goes through
:func:`escape_text`: a name, a note or a unit, and any sentence of bandcalc's that shows one, can
neither inject HTML, links or images nor open a heading, break a table or open a code block.  The
design file itself closes the document in a fenced ``json`` block whose fence is longer than any
run of backticks before it, so the summary alone rebuilds the design, and
:func:`design_from_summary` reads only that closing block.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
import re
from dataclasses import dataclass

from bandcalc import __version__
from bandcalc.cli.visible_text import visible_text
from bandcalc.errors import DesignError
from bandcalc.fit.selection import builds_columns
from bandcalc.model.design import Design, DividerReference, FixedReference, OpenDrain
from bandcalc.model.design_file import design_from_json, design_to_dict
from bandcalc.model.front_end import DividerFrontEnd, LinearFrontEnd, ThermistorFrontEnd
from bandcalc.model.input_filter import filter_pole
from bandcalc.model.operating import Analysis, analyze
from bandcalc.model.parts import part, resistors_of, tolerance_of
from bandcalc.model.ratings import power_needed, rating_of, series_count, size_for
from bandcalc.model.units import (
    format_code,
    format_interval,
    format_probability,
    format_si,
    format_value,
    symbol,
)
from bandcalc.spread.propagation import failure_places

__all__ = [
    "SummaryInputs",
    "component_rows",
    "design_from_summary",
    "design_summary",
    "escape_text",
    "stage_in_words",
]

# Characters that can open markup anywhere in a line (GFM tables and strikethrough included);
# < > & become entities instead, so no HTML can pass.
_MD_INLINE = re.compile(r"([\\`*_\[\]|~#])")
# Line starts that open a block the inline escapes leave open (CommonMark 0.31, sections 4.1, 4.3,
# 5.2): a bullet or an ordered-list marker followed by a space, a rule or setext underline of
# - or = alone.  Headings (#), quotes (>), fences (` ~) and * _ are escaped inline already.
_MD_LINE_START = re.compile(r"^(?:[-+](?=\s|$)|[-=](?=[-=\s]*$)|\d{1,9}(?=[.)](?:\s|$)))")


def escape_text(text: str) -> str:
    """Escape text for CommonMark: HTML characters become entities, markup is escaped.

    Line breaks survive as hard breaks; controls and bidirectional controls show as their
    escapes (:func:`~bandcalc.cli.visible_text.visible_text`).  The result reads as the text.
    """
    out = []
    for line in str(text).splitlines() or [""]:
        line = visible_text(line.strip()).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        line = _MD_INLINE.sub(r"\\\1", line)
        marker = _MD_LINE_START.match(line)
        if marker:  # escape the bullet or rule, or the . or ) after a number (a digit cannot be)
            at = marker.end() if line[:1].isdigit() else 0
            line = f"{line[:at]}\\{line[at:]}"
        out.append(line)
    return "  \n".join(out)


def _line(text: str) -> str:
    """Text for one line of the summary (a heading, a table cell, a list item), escaped."""
    return escape_text(" ".join(str(text).split()))


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


def _power_cell(watts: float, volts: float, design: Design, key: str) -> str:
    """Worst power, what it needs derated, and whether the part's rating takes it (the findings'
    rule, :func:`bandcalc.model.ratings.power_needed`)."""
    rating, needed = rating_of(design, key), power_needed(watts)
    held = f"{format_si(rating.watts, 'W')} as {rating.size}" if rating.size else format_si(rating.watts, "W")
    if needed <= rating.watts:
        return f"{format_si(watts, 'W')}, needs {format_si(needed, 'W')} ({held}: enough)"
    bigger = size_for(volts, watts)
    return (f"{format_si(watts, 'W')}, needs {format_si(needed, 'W')} ({held}: too small; "
            f"{f'a {bigger} takes it' if bigger else 'use a power resistor'})")


def _voltage_cell(volts: float, design: Design, key: str) -> str:
    """Worst voltage across the part against its working voltage, and how many in series would do."""
    rating = rating_of(design, key)
    text = f"{_v(volts)} (rated {_v(rating.volts)})"
    if volts > rating.volts:
        text += f": too high, {series_count(volts, rating.volts)} in series"
    return text


def component_rows(a: Analysis) -> list[dict[str, str]]:
    """One row per part: designator, position, value, series, tolerance, power and voltage."""
    d = a.design
    rows = []
    for key, ohms in resistors_of(d).items():
        row, t = part(key), tolerance_of(d, key)
        watts = a.power.get(key, 0.0)
        volts = (watts * ohms) ** 0.5
        rows.append({
            "designator": row.designator,
            "position": row.position.format(pin="-" if d.inverting else "+"),
            "key": key,
            "value": _ohm(ohms),
            "series": t.series or "none",
            "tolerance": f"{t.percent:g} % ({t.why})",
            "power": _power_cell(watts, volts, d, key),
            "voltage": _voltage_cell(volts, d, key),
        })
    if d.filter is not None:
        rows.append({
            "designator": "Cflt", "position": "input filter, from the stage's input node to ground",
            "key": "filter.capacitance", "value": format_si(d.filter.capacitance, "F"),
            "series": "n/a", "tolerance": "not given", "power": "n/a",
            "voltage": "not checked: rate it for the input's highest voltage",
        })
    fe = d.front_end
    if isinstance(fe, ThermistorFrontEnd):
        pair = "B{:g}/{:g}".format(*fe.beta_pair) + ("" if fe.beta_temperatures else ", assumed")
        model = (f"Beta {fe.beta:g} K ({pair})" if fe.beta is not None else
                 "Steinhart-Hart " + ", ".join(f"{c:.6g}" for c in fe.steinhart_hart))
        tol = [f"R25 {fe.r25_tolerance:g} %" if fe.r25_tolerance is not None else "",
               f"Beta {fe.beta_tolerance:g} %" if fe.beta_tolerance is not None else ""]
        rows.append({
            "designator": "TH1", "position": f"NTC thermistor, {fe.position} of its divider",
            "key": "front_end.thermistor", "value": f"{format_si(fe.nominal_r25, 'Ohm')} at 25 °C, {model}",
            "series": "n/a", "tolerance": ", ".join(t for t in tol if t) or "not given",
            "power": "see the self-heating finding" if any(f.kind == "self_heating" for f in a.findings)
            else "negligible self-heating",
            "voltage": "n/a",
        })
    return rows


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
    legs = [f"to {part(k).far_end} ({_ohm(getattr(r, k))})"
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
        parts.append(f"Open-drain output, pulled up by {_ohm(out.pullup)} to {pu}; low level at {low}.")
    else:
        parts.append(f"Push-pull output, {_v(out.high_drop)} below the positive rail when high, "
                     f"{_v(out.low_drop)} above the negative rail when low, "
                     f"{format_si(out.resistance, 'Ohm')} output resistance.")
    parts += _front_end_words(d) + _load_words(d)
    pole = filter_pole(d)
    if pole is not None:
        resistor = f"{_ohm(d.filter.resistance)} in series and " if d.filter.resistance > 0 else ""
        capacitor = format_si(d.filter.capacitance, "F")
        parts.append(f"An input filter ({resistor}{capacitor} from the stage's input to ground) has its "
                     f"pole at {format_si(pole.pole_upper, 'Hz')} at the upper point and "
                     f"{format_si(pole.pole_lower, 'Hz')} at the lower (the capacitor with the source, the "
                     "filter's resistor and the stage's loading).")
    c = d.comparator
    own = f", hysteresis {_v(c.hysteresis)} built in" if c.hysteresis else ""
    between = (f", offset current {format_si(c.offset_current, 'A')} (+ pin less - pin)"
               if c.offset_current else "")
    parts.append(f"Comparator: offset {_v(c.offset)}{own}, bias current {format_si(c.bias_current, 'A')} "
                 f"into each pin{between}, propagation delay {format_si(c.delay, 's')}; "
                 f"source resistance {format_si(d.source.resistance, 'Ohm')}.")
    return " ".join(parts)


def _load_words(d: Design) -> list[str]:
    load = d.load
    if load is None:
        return []
    out = []
    if load.resistance is not None:
        out.append(f"The output drives a load of {_ohm(load.resistance)} to {_v(load.volts)}, solved with "
                   f"the network (it moves the output levels and the points).")
    reads = [f"reads below {_v(load.logic_low_max)} as low" if load.logic_low_max is not None else "",
             f"needs {_v(load.logic_high_min)} for a high" if load.logic_high_min is not None else ""]
    if any(reads):
        out.append(f"The receiving input {' and '.join(r for r in reads if r)}.")
    return out


def _front_end_words(d: Design) -> list[str]:
    fe = d.front_end
    if isinstance(fe, DividerFrontEnd):
        return [f"Ahead of the stage, a sense divider of {_ohm(fe.top)} over {_ohm(fe.bottom)} brings "
                f"the measured voltage down; the stage sees its Thevenin equivalent."]
    if isinstance(fe, ThermistorFrontEnd):
        exc = {"positive": "the positive rail", "reference": "the reference"}.get(fe.excitation) \
            if isinstance(fe.excitation, str) else _v(fe.excitation)
        return [f"Ahead of the stage, an NTC thermistor sits at the {fe.position} of a divider with "
                f"{_ohm(fe.fixed)}, fed from {exc}; the stage sees the divider's Thevenin equivalent."]
    if isinstance(fe, LinearFrontEnd):
        accuracy = [f"offset within +/-{_v(fe.offset_tolerance)}" if fe.offset_tolerance else "",
                    f"span within +/-{fe.span_tolerance:g} %" if fe.span_tolerance else ""]
        stated = " and ".join(a for a in accuracy if a)
        return [f"Ahead of the stage, a linear sensor gives {_v(fe.offset)} + "
                f"{_v(fe.volts_per_unit)} per {symbol(fe.unit)} behind {format_si(fe.resistance, 'Ohm')}"
                + (f", {stated}." if stated else ".")]
    return []


def _points_rows(a: Analysis, spread) -> tuple[list[str], list[list[str]]]:
    """The switching-points table: nominal, and the spread's worst case and 99.73 % range if run (over
    a temperature range: 0.135 % of builds go below the first figure somewhere in it, and 0.135 % above
    the second)."""
    w = a.points
    q = lambda x: format_value(x, w.unit, 4)  # noqa: E731
    header = ["Quantity", "Nominal"]
    if spread is not None:
        header += ["Worst case, least", "Worst case, greatest", "0.135 % of builds", "99.865 % of builds"]

    def row(label: str, key: str, nominal: float) -> list[str]:
        out = [label, q(nominal)]
        if spread is not None:
            wc, mc = getattr(spread.worst_case, key), spread.monte_carlo
            out += [q(wc.min), q(wc.max), q(mc.lowest[key].percentiles[0.135]),
                    q(mc.highest[key].percentiles[99.865])]
        return out

    blank = [""] * (len(header) - 2)
    rows = [row("Upper switching point (rising input)", "upper", float(w.upper)),
            row("Lower switching point (falling input)", "lower", float(w.lower)),
            row("Hysteresis", "hysteresis", float(w.hysteresis)),
            ["Centre", q(float(w.centre)), *blank]]
    if a.design.front_end is not None:  # the points are in the watched quantity: the stage's volts too
        rows.append(["Stage upper / lower point (volts at the stage's source)",
                     f"{_v(a.upper)} / {_v(a.lower)}", *blank])
    rows += [["Output level reached, high", _v(a.output_high), *blank],
             ["Output level reached, low", _v(a.output_low), *blank],
             ["Largest current from the positive rail", format_si(a.positive_rail_current, "A"), *blank]]
    return header, rows


_DISTRIBUTION_WORDS = {"normal": "normal, a tolerance taken as 3 sigma",
                       "screened": "normal cut at each tolerance (screened parts)",
                       "uniform": "uniform within each tolerance"}


def _spread_section(spread) -> list[str]:
    """How the spread was run, the yield, the failure probability and where builds fail, the parts
    that matter most and where the model simplifies (a ``Spread``)."""
    mc, se = spread.monte_carlo, spread.sensitivity
    kind = _DISTRIBUTION_WORDS[spread.tolerances.distribution]
    wc = spread.worst_case
    lines = [_line(f"Worst case over {wc.method} ({wc.evaluated:,} evaluations); "
                   f"Monte Carlo over {mc.samples:,} builds, {kind}, seed {mc.seed}."), ""]
    span = spread.tolerances.temperature
    lines += [_line("Temperature: " + ("none given, so every build is taken at 25 °C." if span is None else
                                       f"each build is checked over the whole range, {span[0]:g} to "
                                       f"{span[1]:g} °C; it passes only if it keeps every window at every "
                                       "temperature of it.")), ""]
    varied = ", ".join(f"{f.name} ({f.origin})" for f in spread.factors) or "nothing: every part exact"
    lines += [_line(f"Varied: {varied}."), ""]
    y = mc.build_yield
    if y is not None:
        lines += [_line(f"Yield against the limits, per build over the range: {100 * y.fraction:.3f} % of "
                        f"builds (95 % interval {100 * y.low:.3f} % to {100 * y.high:.3f} %)."), ""]
        f = y.failure
        if f is not None:
            lines += [_line(f"Failure probability: {format_probability(f.probability)} (95 % interval "
                            f"{format_probability(f.low)} to {format_probability(f.high)}); {f.method}."), ""]
        places = failure_places(spread)
        if places:
            lines += ["Where builds fail:", "", *_items(places), ""]
    rows = []
    for name in ("upper", "lower", "hysteresis"):
        top = [f"{sh.factor} {100 * sh.share:.0f} %" for sh in getattr(se, name)[:3] if sh.share >= 0.005]
        rows.append([name, ", ".join(top) or "none"])
    lines += _table(["Quantity", "Largest shares of its spread (first order)"], rows)
    lines += ["", "Where the spread's model simplifies:", "", *_items(spread.simplifications)]
    return lines


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    """A GFM table; every cell is escaped here, so callers pass plain text."""
    cells = lambda row: "| " + " | ".join(_line(c) for c in row) + " |"  # noqa: E731
    return [cells(header), "|" + "---|" * len(header), *(cells(row) for row in rows)]


def _items(texts) -> list[str]:
    """A bullet list of plain texts, each escaped."""
    return [f"- {_line(t)}" for t in texts]


def _check_rows(check) -> list[list[str]]:
    """Rows of a false-edge prediction (bandcalc.signal_check.noise.FalseEdgeCheck)."""
    v = lambda x: format_value(x, check.unit, 3)  # noqa: E731
    source = check.source.noise
    rows = [["Noise at the source", f"{v(source.rms)} RMS, flat to {format_si(source.bandwidth, 'Hz')} "
                                    f"({check.source.source})"],
            ["Noise at the stage", f"{v(check.noise.rms_at_stage)} RMS" + (
                "" if check.pole is None else f" behind the filter's pole at {format_si(check.pole, 'Hz')}")],
            ["Hum at the stage, peak-to-peak", v(check.hum.span())],
            ["Parked at a point: false switching", "never expected" if check.parked_per_second == 0 else
             f"about once every {format_interval(check.mean_time_between)} (Rice's formula)"]]
    for name, extra, slope in (("upper", check.extra_upper, check.slope_upper),
                               ("lower", check.extra_lower, check.slope_lower)):
        if extra is not None:
            rows.append([f"Extra edges per crossing of the {name} point",
                         f"{extra:.3g} at {format_value(slope, check.unit + '/s', 3)}"])
    return rows


def _signal_section(run, unit: str) -> list[str]:
    """Table and findings of a signal run (bandcalc.signal_check.edges.SignalRun) in ``unit``."""
    t = lambda x: format_si(x, "s")  # noqa: E731
    q = lambda x: format_value(x, unit, 4)  # noqa: E731
    clean = "not known (recorded signal)" if run.clean_edge_count is None else str(run.clean_edge_count)
    rows = [
        ["Signal", f"{len(run.wave)} samples over {t(run.wave.duration)}"],
        ["Output edges", str(run.edge_count)],
        ["Edges of the noise-free signal", clean],
        ["Edge delay after the centre crossing, mean / max",
         "not known" if run.delay_mean is None else f"{t(run.delay_mean)} / {t(run.delay_max)}"],
        ["Time the output is high", f"{100 * run.output_high_fraction:.1f} %"],
        ["Noise", f"{q(run.noise.rms)} RMS, about {q(run.noise.peak_to_peak)} peak-to-peak"],
    ]
    if run.check is not None:  # the prediction: the disturbance as given or estimated, at the stage
        rows += _check_rows(run.check)
    return _table(["Quantity", "Value"], rows) + [""] + _items(run.findings)


def _settings_section(d: Design) -> list[str]:
    """False edges predicted from the design's own signal settings (noise, hum, slope)."""
    given = d.signal
    if given is None or (not given.noise and not given.hum):
        return []
    from bandcalc.signal_check.disturbance import Hum, NoiseSpectrum
    from bandcalc.signal_check.noise import Disturbance, false_edge_check
    from bandcalc.signal_check.waveform import DEFAULT_NOISE_BANDWIDTH

    pts, pole = analyze(d).points, filter_pole(d)
    noise = NoiseSpectrum(given.noise or 0.0, given.noise_bandwidth or DEFAULT_NOISE_BANDWIDTH)
    hum = Hum(given.hum or 0.0, given.hum_frequency, given.hum_harmonics)
    check = false_edge_check(Disturbance(noise, hum, "the design's signal settings"), float(pts.upper),
                             float(pts.lower), pole=None if pole is None else pole.pole,
                             slope_upper=given.slope, slope_lower=given.slope,
                             crossings_per_second=given.crossings_per_second or 0.0, unit=d.unit)
    lines = _table(["Quantity", "Value"], _check_rows(check))
    if given.false_edges_per_year is not None:
        lines += ["", _line(f"Target: at most {given.false_edges_per_year:g} false edge(s) a year"
                            + (f", delay within {format_si(given.delay_budget, 's')}." if given.delay_budget
                               else "."))]
    return lines + [""] + _items(check.simplifications)


def _fit_section(result) -> list[str]:
    """Targets, the leading candidates and the exact solution of a fit (bandcalc.fit.selection.FitResult)."""
    unit = result.design.unit
    q = lambda x: format_value(x, unit, 4)  # noqa: E731

    lines = [_line(f"Targets: upper {q(result.upper)}, lower {q(result.lower)}; fitted "
                   f"{', '.join(result.fitted)} from {result.series}, {format_si(result.min_ohms, 'Ohm')} to "
                   f"{format_si(result.max_ohms, 'Ohm')}."), ""]
    extra = builds_columns(result)
    edge = lambda x: "open" if math.isinf(x) else q(x)  # noqa: E731
    if result.windows is not None:
        lines += [_line(f"Ranked by {result.by}, against the windows "
                        + "; ".join(f"{k} {edge(lo)} to {edge(hi)}" for k, (lo, hi) in result.windows.items())
                        + "; grades are each part's tolerance, percent."), ""]
    header = ["Rank", *result.fitted, "Upper", "Lower", "Worst error", "Network current",
              *(h.capitalize() for h, _ in extra)]
    rows = [[str(i), *(format_code(c.value(p)) for p in result.fitted), q(c.upper), q(c.lower),
             format_value(c.worst_error, unit, 3), format_si(c.network_current, "A"),
             *(cells[i - 1] for _, cells in extra)]
            for i, c in enumerate(result.candidates, 1)]
    lines += _table(header, rows)
    if result.exact is not None:
        exact = ", ".join(f"{p} {format_si(result.exact.value(p), 'Ohm', 4)}" for p in result.fitted)
        lines += ["", _line(f"Exact (continuous) solution: {exact}.")]
    stopped = (f"Not proven the best: {result.stopped}",) if result.stopped else ()
    lines += [""] + _items((*stopped, *result.notes, *result.problems, *result.assumptions))
    return lines


def _fence(text: str) -> str:
    longest = max((len(m) for m in re.findall(r"`+", text)), default=0)
    return "`" * max(3, longest + 1)


ASSUMPTIONS = (
    "The comparator is ideal apart from the offset, built-in hysteresis, bias and offset currents and "
    "output levels given: infinite gain, no input current other than the bias and offset currents.",
    "Each output state is a Thevenin source: push-pull level behind its output resistance, or the "
    "pull-up for an open-drain output high and an ideal sink at the low level.",
    "Switching points are in volts of the signal source's open-circuit voltage, or in the watched "
    "quantity where a front end is given (the stage then sees the front end's Thevenin equivalent).",
    "Resistor power and voltage are the largest over the signal's range in either output state "
    "(conservative); a part is rated for at least twice its power (common practice) and for its "
    "voltage as it is; sizes stand for typical data-sheet figures (from memory) unless the design gives "
    "the part's own.",
    "Pins, the difference between them and the output levels are checked over the whole range the input "
    "reaches, at its ends and at the switching points, where their extremes lie (each node voltage is "
    "monotonic in the input within one output state).",
    "A pin driven past a rail is taken as held at the rail by its input clamp, the diode's drop "
    "neglected (the clamp current is then a little overstated), each pin on its own; within 0.3 V of a "
    "rail it counts as at the rail.",
)


NETLIST_NOTE = (
    "The stage as a SPICE netlist (classic SPICE3 syntax), with a bench that sweeps the input slowly "
    "up and back and measures both points: python -m bandcalc netlist FILE -o stage.cir, then "
    "ngspice -b stage.cir prints upper and lower (and the watched points with a front end); on the page, "
    "download it beside this summary. Its resistors carry the designators above; its comparator has the "
    "offset, input currents, output levels and any hysteresis of its own given, and no propagation delay, "
    "slew limit or recovery time."
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
    md: list[str] = [f"# {_line(title)}", ""]
    md += ["## Purpose and notes", "", escape_text(d.notes) if d.notes.strip() else "_No notes given._", ""]
    md += ["## The stage", "", _line(stage_in_words(d)), ""]
    md += ["## Components", ""]
    md += _table(["Designator", "Position", "Value", "Series", "Tolerance", "Power (worst)",
                  "Voltage (worst)"],
                  [[r["designator"], r["position"], r["value"], r["series"], r["tolerance"], r["power"],
                    r["voltage"]] for r in component_rows(a)])
    md += ["", "## Switching points", ""]
    md += _table(*_points_rows(a, inputs.spread))
    if inputs.spread is not None:
        md += ["", "## Spread over tolerances and temperature", ""] + _spread_section(inputs.spread)
    if inputs.fit is not None:
        md += ["", "## Standard values fitted to the targets", ""] + _fit_section(inputs.fit)
    settings = _settings_section(d)
    if settings:
        md += ["", "## Noise and false edges expected", ""] + settings
    if inputs.signal is not None:
        md += ["", "## Noise and delay", ""] + _signal_section(inputs.signal, d.unit)
    findings_extra = list(inputs.spread.notes) if inputs.spread is not None else []
    md += ["", "## Findings", ""]
    said = [f"{'Note: ' if f.level == 'note' else ''}{f.message}" for f in a.findings]
    md += _items((*said, *findings_extra)) or ["No findings: the checks found nothing to report."]
    md += ["", "## Assumptions", ""] + _items(ASSUMPTIONS)
    md += ["", "## Checking in a circuit simulator", "", _line(NETLIST_NOTE)]
    if a.cautions:
        md += ["", "## Cautions", ""] + [f"> **Caution.** {_line(c)}" for c in a.cautions]
    date = (today or _dt.date.today()).isoformat()
    md += ["", "---", "", f"Made with bandcalc {__version__} on {date}.", ""]
    body = "\n".join(visible_text(line) for line in
                     json.dumps(design_to_dict(d), indent=2, ensure_ascii=False).split("\n"))
    prose = "\n".join(md)
    fence = _fence(prose + body)  # longer than any run of backticks in the document
    return "\n".join([prose, _CLOSING_HEADING, "", f"{fence}json", body, fence, ""])


_CLOSING_HEADING = "## Design file"
_NO_CLOSING_BLOCK = (f"summary: no closing design file block; a summary ends with its '{_CLOSING_HEADING}' "
                     "section, the design as JSON between two lines of backticks (the first followed by "
                     "'json'), with nothing after it")


def design_from_summary(text: str) -> Design:
    """Rebuild the design from a summary's closing ``json`` block.

    Only the block that closes the document counts: the last line is its closing fence, the
    nearest line above made of that fence and ``json`` opens it, under the design file heading.
    A block anywhere else (text a user typed, or pasted into an edited summary) is never read.
    """
    lines = str(text).replace("\r\n", "\n").replace("\r", "\n").rstrip().split("\n")
    fence = lines[-1]
    if not re.fullmatch("`{3,}", fence):
        raise DesignError(_NO_CLOSING_BLOCK)
    opening = next((i for i in range(len(lines) - 2, -1, -1) if lines[i] == f"{fence}json"), None)
    if opening is None or opening < 2 or lines[opening - 2:opening] != [_CLOSING_HEADING, ""]:
        raise DesignError(_NO_CLOSING_BLOCK)
    return design_from_json("\n".join(lines[opening + 1:-1]), "summary design file")
