"""The stage as a SPICE netlist with a test bench, for checking a design in a circuit simulator.

:func:`netlist` writes a self-contained netlist in the classic SPICE3 syntax (element lines,
behavioural ``B`` sources, ``PWL`` sources, ``.nodeset``, ``.tran``, ``.meas``) that ngspice reads in
batch mode: ``ngspice -b OUT.cir`` prints ``upper = ...`` and ``lower = ...``, the stage's switching
points in volts of its source's open-circuit voltage (the volts ``analyze`` reports), and with a
front end ``watched_upper`` and ``watched_lower`` in the watched quantity.

The circuit
-----------
Every resistor carries its designator from :data:`bandcalc.model.parts.PARTS` (Rin, Rfb, Rpu, ...),
so the netlist reads like the summary's component table.  The supply is two sources (nodes ``pos``
and ``neg``), the reference a source or its divider (``ref``), then the source resistance, an input
filter and the load where the design has them.  A front end sits ahead of the stage with its own
parts: a divider as its two resistors, a thermistor as a behavioural resistor whose value follows
the temperature (node ``watched`` carries degrees C as volts), a linear sensor as a source.

The comparator is a behavioural model of the design's part.  Its decision, node ``state``, is a
unit step ``u()`` of V+ - V- against the threshold of its present state: the offset, less half the
part's own hysteresis while high and plus half of it while low (none unless the design gives one),
so that both switching points come from the resistor network and the part's hysteresis alone.  The
state sets the output to one of its two levels behind its output resistance (push-pull), or sinks
the output to its low level through :data:`SINK_SIEMENS` (open drain, with the design's pull-up);
each input pin draws the bias current, less or plus half the offset current.  A step rather than
a steep smooth curve: the solver then never settles between the two states (a curve a microvolt
wide is narrower than its convergence tolerance on node voltages of volts), and holds a state from
one iteration to the next until the network moves the pins past the threshold, which is bandcalc's
model exactly.  The model has no propagation delay, slew limit or recovery time; the netlist's
header says so.

The benches
-----------
* The sweep (default): a slow triangle on the input, from the low end of the range it reaches up
  to the high end and back, in a transient run.  The source at the output's edges gives the points.
  Each time step moves the stage's source by at most :data:`STEP_VOLTS`, so each point reads within
  about half that; the triangle is slow enough that a capacitor (the input filter's, the load's)
  lags it by at most :data:`LAG_VOLTS`.
* The signal: a sampled signal (the signal check's) as a ``PWL`` source, with one ``.meas`` line per
  output edge the signal check finds, for a transient comparison of edge times.

The output's edges are where it crosses the middle of the two levels it reaches.  A run starts in
the state the signal check would start it in (``.nodeset`` on the output), so a start inside the
band is not left to the solver.  The same design always gives the same text: no date, a fixed
order and number format.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass

import numpy as np

from bandcalc import __version__
from bandcalc.cli.visible_text import visible_text
from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design, DividerReference, FixedReference, OpenDrain
from bandcalc.model.front_end import DividerFrontEnd, LinearFrontEnd, ThermistorFrontEnd
from bandcalc.model.network import minus_pin_current, plus_pin_current
from bandcalc.model.operating import Analysis, analyze
from bandcalc.model.parts import parameters, part, resistors_of
from bandcalc.model.points import input_range, volts_for
from bandcalc.model.thermistor import KELVIN_AT_0C, KELVIN_AT_25C
from bandcalc.model.units import format_si, format_value
from bandcalc.signal_check.edges import run_design, run_points
from bandcalc.signal_check.waveform import Waveform

__all__ = [
    "BENCHES",
    "LAG_VOLTS",
    "MAX_EDGE_MEASURES",
    "MAX_WAVE_SAMPLES",
    "SHORT_OHMS",
    "SINK_SIEMENS",
    "STEP_VOLTS",
    "netlist",
]

#: The benches :func:`netlist` writes: a slow triangle, or a sampled signal.
BENCHES = ("sweep", "signal")
#: Conductance (S) of an open-drain output's sink when on: 1 micro-ohm, the stiff low level of
#: bandcalc's model (a 3 A pull-up current lifts it by 3 uV).
SINK_SIEMENS = 1e6
#: A series resistance that may be zero (source, output, sensor, filter) below this (ohms) is written
#: as a short: a resistor of 1e-12 ohm leaves the circuit's matrix nearly singular, the common
#: voltage of its two nodes lost to rounding, while 1 milliohm moves no point by a microvolt.
SHORT_OHMS = 1e-3
#: Largest move (V) of the stage's source per time step of the sweep.
STEP_VOLTS = 5e-4
#: Time steps per direction of the sweep, least and most (ngspice runs the most in about a second).
_STEPS = (2_000, 200_000)
#: Most lag (V) of a capacitor's node behind the sweep, in the stage's source: a first-order lag
#: behind a ramp of slope S is tau x S, so the sweep is made slow enough that the slowest time
#: constant times its steepest slope stays below this, a tenth of :data:`STEP_VOLTS`.
LAG_VOLTS = STEP_VOLTS / 10
#: Most samples the signal bench writes.  ngspice's PWL source looks each time up from its first
#: point, so its run grows with the square of the samples: 10,000 take some seconds.
MAX_WAVE_SAMPLES = 20_000
#: Most output edges the signal bench measures (the first ones).
MAX_EDGE_MEASURES = 100
_STEPS_PER_SAMPLE = 2
_PAIRS_PER_LINE = 4
_WIDTH = 100


def _n(x: float) -> str:
    """A number as SPICE reads it: plain E notation, never a scale suffix ("1M" is milli to SPICE)."""
    return f"{float(x):.12g}"


def _comment(text: str) -> str:
    """Comment lines, wrapped; user text (a name, a unit) can neither end a line nor act on a
    terminal (:func:`visible_text` writes any control as its escape)."""
    return textwrap.fill(visible_text(" ".join(str(text).split())), _WIDTH, initial_indent="* ",
                         subsequent_indent="* ", break_long_words=False, break_on_hyphens=False)


def _v(volts: float) -> str:
    return format_si(volts, "V", 5, plain=True)


def _unit(design: Design) -> str:
    return visible_text(" ".join(design.unit.split()))


def _w(value: float, unit: str) -> str:
    """A value of the watched quantity in a comment, in ASCII ("31.8105 C")."""
    return format_value(value, unit, 6, plain=True)


def _r(key: str, a: str, b: str, ohms: float, tag: str = "") -> str:
    """A resistor line under its designator from the one table of parts (``tag`` marks a copy)."""
    return f"{part(key).designator}{tag} {a} {b} {_n(ohms)}"


def _written(ohms: float) -> bool:
    """Whether a resistance that may be zero gets an element (see :data:`SHORT_OHMS`)."""
    return ohms >= SHORT_OHMS


def _series(name: str, a: str, b: str, ohms: float) -> list[str]:
    """A resistance that may be zero, from node ``a`` to node ``b``: its element, or where it is
    not :func:`_written` nothing (zero) or a note (the caller then joins the two nodes)."""
    if _written(ohms):
        return [f"{name} {a} {b} {_n(ohms)}"]
    if ohms > 0:
        return [f"* {name} ({_n(ohms)} Ohm) is written as a short, being below {_n(SHORT_OHMS)} Ohm"]
    return []


@dataclass(frozen=True)
class _Circuit:
    """The stage's lines, the node the bench drives and the nodes the measures read."""

    lines: tuple[str, ...]
    driven: str  # the node the bench's source drives: the signal, or the watched quantity
    source: str  # the stage's source voltage, open-circuit: the volts of bandcalc's points
    watched: str | None  # the watched quantity (a front end), 1 V per unit


# --- the circuit -------------------------------------------------------------------------------

def _supply(d: Design) -> list[str]:
    lines = ["* Supply rails", f"VPOS pos 0 DC {_n(d.supply.positive)}",
             f"VNEG neg 0 DC {_n(d.supply.negative)}"]
    ref = d.reference
    if isinstance(ref, FixedReference):
        lines += ["* Reference: a fixed voltage, ideal", f"VREF ref 0 DC {_n(ref.volts)}"]
    elif isinstance(ref, DividerReference):
        lines += ["* Reference: a divider across the rails", _r("reference.top", "pos", "ref", ref.top),
                  _r("reference.bottom", "ref", "neg", ref.bottom)]
    return lines


def _thermistor_ohms(fe: ThermistorFrontEnd, celsius: str) -> str:
    """The thermistor's resistance as an expression of the temperature ``celsius`` (an expression)."""
    kelvin = f"({celsius}+{_n(KELVIN_AT_0C)})"
    if fe.steinhart_hart is None:  # Beta model: R25 exp(B (1/T - 1/298.15 K))
        return f"{_n(fe.r25)}*exp({_n(fe.beta)}*(1/{kelvin}-{_n(1 / KELVIN_AT_25C)}))"
    a, b, c = fe.steinhart_hart
    if c == 0:  # 1/T = A + B ln R
        return f"exp((1/{kelvin}-({_n(a)}))/{_n(b)})"
    # 1/T = A + B y + C y^3 with y = ln R, by Cardano's formula: with q = (A - 1/T)/C and p = B/C > 0,
    # y = cbrt(s - q/2) - cbrt(s + q/2) where s = sqrt(q^2/4 + p^3/27) > |q|/2, so both cube roots
    # are of positive numbers (pow of a negative number is not real).
    q = f"(({_n(a)}-1/{kelvin})/{_n(c)})"
    s = f"sqrt({q}*{q}/4+{_n((b / c) ** 3 / 27)})"
    third = _n(1 / 3)
    return f"exp(pow({s}-{q}/2,{third})-pow({s}+{q}/2,{third}))"


_OPEN_COPY = ("The parts ending _open are a copy of the front end with nothing connected: their node "
              "src_open is the stage's source voltage, open-circuit, in which bandcalc states its points. "
              "They are no part of the board.")


def _front_end(d: Design) -> tuple[list[str], str, str | None]:
    """The front end's lines, the node of the stage's source (open-circuit) and the watched node.

    The front end's output node is ``src``.  Where the front end has a resistance of its own, a copy
    with nothing connected (``_open`` parts) gives the open-circuit voltage the points are stated in.
    """
    fe = d.front_end
    if fe is None:
        return [], "src", None
    unit = _unit(d)
    if isinstance(fe, DividerFrontEnd):
        lines = ["* Front end: a sense divider from the measured voltage (node watched) to ground"]
        for tag in ("", "_open"):
            lines += [_r("front_end.top", "watched", f"src{tag}", fe.top, tag),
                      _r("front_end.bottom", f"src{tag}", "0", fe.bottom, tag)]
        return [*lines, _comment(_OPEN_COPY)], "src_open", "watched"
    if isinstance(fe, LinearFrontEnd):
        # The sensor's own node is its open-circuit voltage: sen, behind its resistance to src.
        emf = "sen" if _written(fe.resistance) else "src"
        lines = [_comment(f"Front end: a linear sensor, {_n(fe.offset)} V + {_n(fe.volts_per_unit)} V per "
                          f"{unit} of the watched quantity (node watched, 1 V standing for 1 {unit})"),
                 f"BSEN {emf} 0 V={_n(fe.offset)}+({_n(fe.volts_per_unit)})*v(watched)",
                 *_series(part("front_end.resistance").designator, "sen", "src", fe.resistance)]
        return lines, emf, "watched"
    assert isinstance(fe, ThermistorFrontEnd)
    excitation = ({"positive": "pos", "reference": "ref"}[fe.excitation] if isinstance(fe.excitation, str)
                  else "exc")
    model = (f"R25 {_n(fe.r25)} Ohm, Beta {_n(fe.beta)} K" if fe.steinhart_hart is None else
             "Steinhart-Hart " + ", ".join(_n(c) for c in fe.steinhart_hart))
    lines = [_comment(f"Front end: the NTC thermistor TH1 ({model}) at the {fe.position} of a divider "
                      f"with {part('front_end.fixed').designator}, fed from node {excitation}. TH1 is a "
                      "resistor whose value follows the temperature: node watched, degrees C as volts.")]
    if excitation == "exc":
        lines.append(f"VEXC exc 0 DC {_n(fe.excitation)}")
    ohms = _thermistor_ohms(fe, "v(watched)")
    for tag in ("", "_open"):
        node = f"src{tag}"
        high, low = (excitation, node) if fe.position == "top" else (node, "0")
        fixed = (node, "0") if fe.position == "top" else (excitation, node)
        lines += [f"BTH1{tag} {high} {low} I=v({high},{low})/({ohms})",
                  _r("front_end.fixed", *fixed, fe.fixed, tag)]
    return [*lines, _comment(_OPEN_COPY)], "src_open", "watched"


def _input_filter(d: Design, node: str) -> tuple[list[str], str]:
    """An input filter after the source's resistance, where the design has one: its resistor in
    series, its capacitor from the stage's input node to ground.  Returns the lines and that node."""
    flt = getattr(d, "filter", None)
    if flt is None:
        return [], node
    lines = ["* Input filter: a first-order RC low-pass",
             *_series(part("filter.resistance").designator, node, "in", flt.resistance)]
    node = "in" if _written(flt.resistance) else node
    return [*lines, f"Cflt {node} 0 {_n(flt.capacitance)}"], node


def _stage(d: Design, node: str) -> tuple[list[str], str]:
    """The stage's resistors from its input node; returns the lines and the - pin's node."""
    r = d.resistors
    lines = ["* The stage's resistors"]
    if d.inverting:
        minus = node
        if r.input is not None:
            lines.append(_r("input", node, "minus", r.input))
            minus = "minus"
    else:
        lines.append(_r("input", node, "plus", r.input))
        minus = "ref"
    lines.append(_r("feedback", "out", "plus", r.feedback))
    legs = (("to_positive", "pos"), ("to_negative", "neg"), ("to_ground", "0"), ("to_reference", "ref"))
    for key, far in legs:
        if getattr(r, key) is not None:
            lines.append(_r(key, "plus", far, getattr(r, key)))
    return lines, minus


# The state as the output and the threshold read it: a step again, so that the solver's Jacobian
# holds no term in it.  Read as a plain number, a state moving between iterations entered the
# open-drain sink's current as 1e6 x v(out) x its change, and the solver swung out of reach.
_STATE = "u(v(state)-0.5)"


def _decision(d: Design, minus: str) -> list[str]:
    """The comparator's decision as node ``state``: 1 while its output is high, 0 while low.

    A unit step of V+ - V- against the threshold of the present state (the offset, -/+ half the
    part's own hysteresis): the state feeds back into its own threshold.  It reaches ``state``
    through 1 ohm, not straight from its source, so that a ``.nodeset`` can set the state a run
    starts in (a node an ideal source drives ignores one).
    """
    c = d.comparator
    hysteresis = c.hysteresis or 0.0
    leave_low = c.offset + 0.5 * hysteresis  # the threshold while low; while high, offset - hysteresis/2
    x = f"v(plus,{minus})" if leave_low == 0 else f"v(plus,{minus})-({_n(leave_low)})"
    if hysteresis:
        x += f"+{_n(hysteresis)}*{_STATE}"
        said = (f"It turns high where v(plus) - v({minus}) rises above {_n(leave_low)} V, the offset plus "
                f"half the part's own hysteresis of {_n(hysteresis)} V, and low where it falls below "
                f"{_n(c.offset - 0.5 * hysteresis)} V.")
    else:
        said = f"It is high where v(plus) - v({minus}) is above the offset, {_n(c.offset)} V, low below."
    return [_comment(f"The decision, node state: 1 while the output is high, 0 while low. {said} RDEC is "
                     "part of the model, no part of the board."),
            f"BDEC dec 0 V=u({x})", "RDEC dec state 1"]


def _comparator(d: Design, minus: str) -> list[str]:
    out, p = d.output, parameters(d)
    lines = ["* Comparator: a behavioural model of the part", *_decision(d, minus)]
    currents = (("IBP", "plus", plus_pin_current(p)), ("IBM", minus, minus_pin_current(p)))
    if any(amps for _, _, amps in currents):
        lines.append("* The current each input draws: the bias current, and half the offset current each way")
        lines += [f"{name} {node} 0 DC {_n(amps)}" for name, node, amps in currents]
    if isinstance(out, OpenDrain):
        low = "neg" if out.low_volts is None else "low"
        pullup = "pos" if out.pullup_volts is None else "pu"
        lines.append(f"* Open-drain output: a sink to node {low} when low (1 micro-ohm); the pull-up")
        if out.low_volts is not None:
            lines.append(f"VLOW low 0 DC {_n(out.low_volts)}")
        if out.pullup_volts is not None:
            lines.append(f"VPU pu 0 DC {_n(out.pullup_volts)}")
        lines += [f"BCMP out {low} I=v(out,{low})*{_n(SINK_SIEMENS)}*(1-{_STATE})",
                  _r("output.pullup", "out", pullup, out.pullup)]
    else:
        drive = "drv" if _written(out.resistance) else "out"
        span = f"(v(pos)-v(neg)-{_n(out.high_drop + out.low_drop)})"
        lines += ["* Push-pull output: its two levels follow the rails, behind its output resistance",
                  f"BCMP {drive} 0 V=v(neg)+{_n(out.low_drop)}+{span}*{_STATE}",
                  *_series("Rout", "drv", "out", out.resistance)]
    if out.load_capacitance > 0:
        lines.append(f"CL out 0 {_n(out.load_capacitance)}")
    return lines


def _load(d: Design) -> list[str]:
    load = d.load
    if load is None or load.resistance is None:
        return []
    if load.volts == 0:
        return ["* Load on the output, to ground", _r("load.resistance", "out", "0", load.resistance)]
    return ["* Load on the output, to its own voltage", f"VLOAD lv 0 DC {_n(load.volts)}",
            _r("load.resistance", "out", "lv", load.resistance)]


def _circuit(d: Design) -> _Circuit:
    lines = _supply(d)
    fe_lines, source, watched = _front_end(d)
    lines += fe_lines
    rsrc = _series(part("source.resistance").designator, "src", "line", d.source.resistance)
    lines += ["* The signal's source resistance", *rsrc] if rsrc else []
    flt, node = _input_filter(d, "line" if _written(d.source.resistance) else "src")
    stage, minus = _stage(d, node)
    lines += flt + stage + _comparator(d, minus) + _load(d)
    driven = "src" if watched is None else watched
    return _Circuit(tuple(lines), driven=driven, source=source, watched=watched)


# --- the header ----------------------------------------------------------------------------------

def _header(d: Design, a: Analysis) -> list[str]:
    name = " ".join(d.name.split()) or "unnamed design"
    supply = (f"single {_v(d.supply.positive)} supply" if d.supply.negative == 0
              else f"rails {_v(d.supply.negative)} and {_v(d.supply.positive)}")
    lines = [_comment(f"bandcalc netlist: {name}"),
             _comment(f"Written by bandcalc {__version__}: {d.stage} stage, {supply}, {d.output.kind} "
                      "output. Classic SPICE3 syntax; run it with: ngspice -b FILE"),
             "* Units: V, Ohm, A, s, F; node 0 is ground.",
             "* Resistors carry the designators of bandcalc's summary.",
             "* bandcalc's points, in volts of the stage's source (open-circuit):",
             f"*   upper {_v(a.upper)}, lower {_v(a.lower)}"]
    if d.front_end is not None:
        w, unit = a.points, _unit(d)
        lines += ["* bandcalc's points in the watched quantity:",
                  f"*   upper {_w(w.upper, unit)}, lower {_w(w.lower, unit)}"]
    own = d.comparator.hysteresis
    lines.append(_comment(("The comparator model has the part's own hysteresis as the design gives it, "
                           f"{_n(own)} V, beside the network's" if own else
                           "The comparator model has no hysteresis of its own (both points come from the "
                           "network, as in bandcalc's model)")
                          + "; it has no propagation delay, slew limit or recovery time."))
    if d.comparator.delay > 0:
        delay = format_si(d.comparator.delay, "s", 3, plain=True)
        lines.append(_comment(f"Add the part's delay ({delay}) to edge times, as the signal check does."))
    return lines + [_comment(f"Caution: {text}") for text in a.cautions]


# --- the benches ---------------------------------------------------------------------------------

def _slowest(d: Design) -> float:
    """A bound (s) on the circuit's time constants: all its capacitance through all its resistance."""
    flt = getattr(d, "filter", None)
    farads = d.output.load_capacitance + (0.0 if flt is None else flt.capacitance)
    ohms = sum(resistors_of(d).values()) + d.source.resistance + getattr(d.output, "resistance", 0.0)
    if d.load is not None and d.load.resistance is not None:
        ohms += d.load.resistance
    if isinstance(d.front_end, LinearFrontEnd):
        ohms += d.front_end.resistance
    return farads * ohms


def _steepest(d: Design, low: float, high: float) -> float:
    """The stage's source's steepest move over the whole range (V), as if its steepest stretch held
    throughout: found on a fine grid, since a thermistor's curve is not straight."""
    x = np.linspace(low, high, 4097)
    with np.errstate(all="ignore"):
        moves = np.abs(np.diff(np.asarray(volts_for(d, x)[0], dtype=float)))
    moves = moves[np.isfinite(moves)]
    return float(moves.max()) * (x.size - 1) if moves.size else 0.0


def _timing(d: Design, low: float, high: float) -> tuple[int, float]:
    """Time steps per direction of the sweep and its half period (s).

    The steps: the stage's source moves at most STEP_VOLTS a step.  The half period: long enough
    that a capacitor lags the source by at most LAG_VOLTS (its time constant times the source's
    steepest slope), and no longer; a longer run only makes the solver take more steps after each
    edge, where it follows the capacitor's settling at the pace of its time constant.
    """
    swing = _steepest(d, low, high)
    steps = int(min(_STEPS[1], max(_STEPS[0], math.ceil(swing / STEP_VOLTS))))
    return steps, max(1.0, _slowest(d) * swing / LAG_VOLTS)


def _edge_level(d: Design, a: Analysis) -> float:
    """Where the output's edges are measured: the middle of the two levels it reaches, or where a
    point does not exist, of the levels of its output stage."""
    if math.isfinite(a.output_high) and math.isfinite(a.output_low):
        return 0.5 * (a.output_high + a.output_low)
    out, vp, vn = d.output, d.supply.positive, d.supply.negative
    if isinstance(out, OpenDrain):
        high = vp if out.pullup_volts is None else out.pullup_volts
        return 0.5 * (high + (vn if out.low_volts is None else out.low_volts))
    return 0.5 * (vp - out.high_drop + vn + out.low_drop)


def _start(a: Analysis, output_high: bool) -> str:
    """The state a run starts in, for the solver's first operating point: the decision and the
    output's level in that state (the output alone is not enough where an ideal source drives it)."""
    level = a.output_high if output_high else a.output_low
    return (f".nodeset v(state)={1 if output_high else 0} "
            f"v(out)={_n(level if math.isfinite(level) else 0.0)}")


def _measures(circuit: _Circuit, d: Design, mid: float) -> list[str]:
    """upper / lower at the output's edges into and out of the input-high state (falling and rising
    for an inverting stage); the watched points at the edges where the watched quantity passes them."""
    into, out_of = ("FALL", "RISE") if d.inverting else ("RISE", "FALL")
    when = f"WHEN v(out)={_n(mid)}"
    lines = [f".meas tran upper FIND v({circuit.source}) {when} {into}=1",
             f".meas tran lower FIND v({circuit.source}) {when} {out_of}=1"]
    if circuit.watched is not None:
        rising, falling = (into, out_of) if d.front_end.rises else (out_of, into)
        lines += [f".meas tran watched_upper FIND v({circuit.watched}) {when} {rising}=1",
                  f".meas tran watched_lower FIND v({circuit.watched}) {when} {falling}=1"]
    return lines


def _sweep(d: Design, a: Analysis, circuit: _Circuit) -> list[str]:
    low, high = input_range(d)
    steps, half = _timing(d, low, high)
    step = half / steps
    upper, lower, inverting = run_points(d)
    start_high = bool(low >= 0.5 * (upper + lower))  # the signal check's rule: at or above the centre
    unit = _unit(d)
    what = "the signal" if d.front_end is None else f"the watched quantity ({unit})"
    mid = _edge_level(d, a)
    return [
        _comment(f"Bench: a slow triangle on {what}, from {_w(low, unit)} up to {_w(high, unit)} and "
                 f"back, in {2 * steps} time steps. Each moves the stage's source by at most "
                 f"{format_si(STEP_VOLTS, 'V', 3, plain=True)}, so each point reads within about half that."),
        f"VIN {circuit.driven} 0 PWL(0 {_n(low)} {_n(half)} {_n(high)} {_n(2 * half)} {_n(low)})",
        _start(a, start_high != inverting),
        f".tran {_n(step)} {_n(2 * half)} 0 {_n(step)}",
        _comment(f"The points: the source where the output crosses {_v(mid)}, the middle of its two levels"),
        *_measures(circuit, d, mid),
    ]


def _pwl(times: np.ndarray, values: np.ndarray) -> list[str]:
    pairs = [f"{_n(t)} {_n(v)}" for t, v in zip(times, values, strict=True)]
    rows = [" ".join(pairs[i:i + _PAIRS_PER_LINE]) for i in range(0, len(pairs), _PAIRS_PER_LINE)]
    return [f"+ {row}" for row in rows[:-1]] + [f"+ {rows[-1]})"]


def _signal(d: Design, a: Analysis, circuit: _Circuit, wave: Waveform) -> list[str]:
    if len(wave) > MAX_WAVE_SAMPLES:
        raise BandcalcError(f"signal bench: the signal has {len(wave):,} samples, the netlist takes at "
                            f"most {MAX_WAVE_SAMPLES:,} (ngspice's PWL source slows with the square of its "
                            "points); shorten the signal or sample it more slowly")
    times = np.asarray(wave.t - wave.t[0], dtype=float)
    if not (np.diff([float(_n(t)) for t in times]) > 0).all():
        raise BandcalcError("signal bench: two samples lie closer in time than the netlist writes times "
                            "(12 significant figures); resample the signal")
    run = run_design(d, wave)
    step = float(np.median(np.diff(times))) / _STEPS_PER_SAMPLE
    mid = _edge_level(d, a)
    shown = min(run.edge_count, MAX_EDGE_MEASURES)
    count = f"{run.edge_count}{f'; the first {shown} are measured' if shown < run.edge_count else ''}"
    unit = _unit(d)
    lines = [_comment(f"Bench: the signal check's signal in {unit}, {len(wave):,} samples over "
                      f"{format_si(wave.duration, 's', 4, plain=True)}, as a PWL source; time 0 is its first "
                      f"sample, at {_n(wave.t[0])} s of the signal."),
             f"VIN {circuit.driven} 0 PWL(", *_pwl(times, wave.v),
             _start(a, bool(run.output_high[0])),
             f".tran {_n(step)} {_n(times[-1])} 0 {_n(step)}",
             _comment(f"The output's edges, where it crosses {_v(mid)}: the signal check finds {count}. "
                      "Its times include the part's delay and, on a rising open-drain output, the 10-90 % "
                      "rise time into the load capacitance; here the output crosses the middle after about "
                      "a third of that rise.")]
    seen = {True: 0, False: 0}
    for k in range(shown):
        rising = bool(run.output_rising[k])
        seen[rising] += 1
        at = float(run.edge_times[k] - wave.t[0])
        edge = "RISE" if rising else "FALL"
        lines += [f"* edge_{k + 1}: the output {edge.lower()}s at {_n(at)} s in the signal check",
                  f".meas tran edge_{k + 1} WHEN v(out)={_n(mid)} {edge}={seen[rising]}"]
    return lines


def netlist(design: Design, wave: Waveform | None = None) -> str:
    """The design as a SPICE netlist with its bench, as text ending in a line break.

    Parameters
    ----------
    design : Design
    wave : Waveform, optional
        A signal in the design's unit (the signal check's): the bench drives it as a PWL source and
        measures each output edge the signal check finds.  Without it, the sweep bench measures
        both points.
    """
    a = analyze(design)
    circuit = _circuit(design)
    bench = _sweep(design, a, circuit) if wave is None else _signal(design, a, circuit, wave)
    return "\n".join([*_header(design, a), *circuit.lines, *bench, ".end", ""])
