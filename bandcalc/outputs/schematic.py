"""A schematic of the current stage as SVG text, drawn with schemdraw's SVG canvas.

The comparator sits in the middle with its - input above the + input; a load on the output hangs
from the output terminal down to its voltage (or ground).  The - input's wiring
runs to the left above the comparator (the reference in a non-inverting stage, the signal in
an inverting one); the + pin's summing node runs to the left below it, with each leg hanging
down from it, and the feedback resistor runs underneath from the output back to the + pin.
Rails are open terminals marked with their voltage; a reference that two places use is drawn
once and named "REF" where it is reached again.  A front end (:mod:`bandcalc.model.front_end`) is drawn
ahead of the signal's input: the sense divider, the thermistor with its fixed resistor and
excitation, or the sensor as a controlled source behind its output resistance.  Values are
written in the IEC 60062 code ("4k7", "1M5") and volts with SI prefixes.

The drawing depends only on which parts are fitted, so it is made once per topology with a
placeholder in every value label (:func:`stage_template`, cached) and the values are written in
afterwards: a slider move costs a text substitution, not a new drawing.
"""

from __future__ import annotations

from functools import lru_cache
from html import escape

import schemdraw
import schemdraw.elements as elm
from schemdraw.util import Point

from bandcalc.model.design import Design, FixedReference, OpenDrain
from bandcalc.model.front_end import LinearFrontEnd, ThermistorFrontEnd
from bandcalc.model.parts import PARTS, part, resistors_of
from bandcalc.model.units import format_code, format_si, format_value

__all__ = ["stage_labels", "stage_svg", "stage_template"]

# Every value label the drawing can hold, in a fixed order (a placeholder's number is its index).
_SLOTS = (*(p.path for p in PARTS), "supply.positive", "supply.negative", "reference.volts",
          "output.pullup_volts", "front_end.thermistor", "front_end.excitation", "front_end.sensor",
          "load.volts", "filter.capacitance")
# Placeholders for the longer labels are longer, so the drawing leaves room for them.
_WIDTH = {"front_end.thermistor": 14, "front_end.sensor": 14}
_INK = "#1d2433"
_VALUE = "#2f6f4e"
_MINUS_Y = 2.2   # height of the - input's wiring above the comparator's axis
_PLUS_Y = -2.6   # height of the + pin's summing node and of the feedback path
_LEG_STEP = 3.0  # horizontal spacing of the legs on the + node
_FRONT_END_DROP = 2.6  # length of the front end's element from its node to ground
_LOAD_DROP = 2.0  # length of the load from the output terminal down to its voltage


def _v(volts: float) -> str:
    return format_si(volts, "V", 4)


def stage_labels(design: Design) -> dict[str, str]:
    """The value label of every part and rail the schematic shows, keyed by design-file path."""
    vp, vn = design.supply.positive, design.supply.negative
    ohms = {part(k).path: v for k, v in resistors_of(design).items()}
    if design.source.resistance > 0:
        ohms["source.resistance"] = design.source.resistance
    labels = {"supply.positive": _v(vp), "supply.negative": _v(vn)}
    if isinstance(design.reference, FixedReference):
        labels["reference.volts"] = _v(design.reference.volts)
    if isinstance(design.output, OpenDrain):
        labels["output.pullup_volts"] = _v(vp if design.output.pullup_volts is None
                                           else design.output.pullup_volts)
    load = design.load
    if load is not None and load.resistance is not None:
        ohms["load.resistance"] = load.resistance
        if load.volts != 0:  # a load to ground is drawn to a ground symbol
            labels["load.volts"] = _v(load.volts)
    ohms.update(_front_end_labels(design, labels))
    if design.filter is not None:
        labels["filter.capacitance"] = f"Cflt {format_si(design.filter.capacitance, 'F')}"
    labels.update({path: f"{part(path).designator} {format_code(value)}" for path, value in ohms.items()})
    return labels


def _front_end_labels(design: Design, labels: dict[str, str]) -> dict[str, float]:
    """Write the front end's non-resistor labels into ``labels``; return a sensor's own resistance."""
    fe = design.front_end
    if isinstance(fe, ThermistorFrontEnd):
        model = f"B {fe.beta:g} K" if fe.steinhart_hart is None else "S-H"
        labels["front_end.thermistor"] = f"NTC {format_code(fe.nominal_r25)}, {model}"
        labels["front_end.excitation"] = {"positive": _v(design.supply.positive), "reference": "REF"}.get(
            fe.excitation) or _v(float(fe.excitation))  # type: ignore[arg-type]
        return {}
    if isinstance(fe, LinearFrontEnd):
        per = format_value(fe.volts_per_unit, "V", 3)
        offset = f" {'+' if fe.offset >= 0 else '-'} {_v(abs(fe.offset))}" if fe.offset else ""
        labels["front_end.sensor"] = f"{per}/{fe.unit}{offset}"
        return {"front_end.resistance": fe.resistance} if fe.resistance > 0 else {}
    return {}


def _layout(design: Design) -> str:
    """What the front end's drawing depends on besides its labels: its kind and position."""
    fe = design.front_end
    if fe is None:
        return ""
    return f"thermistor-{fe.position}" if isinstance(fe, ThermistorFrontEnd) else fe.kind


def _slot(path: str) -> str:
    """The placeholder drawn where ``path``'s label goes: about as wide as a real label."""
    return f"#{_SLOTS.index(path):02d}" + "_" * _WIDTH.get(path, 5)


def _value(element: elm.Element, path: str, loc: str | None = None) -> elm.Element:
    return element.label(_slot(path), loc=loc, color=_VALUE)


def _rail(d: schemdraw.Drawing, at: Point, path: str, loc: str = "left") -> None:
    d.add(_value(elm.Dot(open=True).at(at), path, loc))


def _reference(d: schemdraw.Drawing, slots: frozenset[str], at: Point, down_room: float) -> None:
    """The reference node at ``at`` (its wire arrives from the right), drawn to the left/down."""
    d.add(elm.Dot().at(at).label("REF", loc="top", color=_INK))
    if "reference.volts" in slots:
        src = d.add(_value(elm.SourceV().at(at).down().length(min(2.0, down_room)).reverse(),
                           "reference.volts", "top"))
        d.add(elm.Ground().at(src.end))
    elif "reference.top" in slots:
        top = d.add(_value(elm.Resistor().at(at).left(), "reference.top"))
        _rail(d, top.end, "supply.positive")
        bottom = d.add(_value(elm.Resistor().at(at).down().length(min(3.0, down_room)),
                              "reference.bottom", "top"))
        _rail(d, bottom.end, "supply.negative", loc="bottom")


def _front_end(d: schemdraw.Drawing, slots: frozenset[str], layout: str, at: Point) -> None:
    """The front end, its node at ``at`` (the wire arrives from the right), drawn to the left/down."""
    if layout == "linear":  # the sensor: a source controlled by the watched quantity
        if "front_end.resistance" in slots:
            at = d.add(_value(elm.Resistor().at(at).left(), "front_end.resistance")).end
        sensor = d.add(_value(elm.SourceControlledV().at(at).down().length(_FRONT_END_DROP).reverse(),
                              "front_end.sensor", "bottom"))
        d.add(elm.Ground().at(sensor.end))
        return
    d.add(elm.Dot().at(at))
    if layout == "divider":
        upper, lower = (elm.Resistor(), "front_end.top"), (elm.Resistor(), "front_end.bottom")
    elif layout == "thermistor-top":
        upper, lower = (elm.Thermistor(), "front_end.thermistor"), (elm.Resistor(), "front_end.fixed")
    else:
        upper, lower = (elm.Resistor(), "front_end.fixed"), (elm.Thermistor(), "front_end.thermistor")
    top = d.add(_value(upper[0].at(at).left(), upper[1]))
    if layout == "divider":  # the measured voltage comes in here
        d.add(elm.Dot(open=True).at(top.end).label("IN", loc="left", color=_INK))
    else:
        _rail(d, top.end, "front_end.excitation")
    bottom = d.add(_value(lower[0].at(at).down().length(_FRONT_END_DROP), lower[1], "top"))
    d.add(elm.Ground().at(bottom.end))


def _signal(d: schemdraw.Drawing, slots: frozenset[str], start: Point, layout: str = "") -> None:
    """From ``start`` leftwards: the input resistor, an input filter (its capacitor from the node to
    ground, its resistor), the source resistance, then the input terminal or the front end."""
    here = start
    for path in ("resistors.input", "filter.capacitance", "filter.resistance", "source.resistance"):
        if path == "filter.capacitance" and path in slots:
            here = d.add(elm.Line().at(here).left().length(1.0)).end
            d.add(elm.Dot().at(here))
            cap = d.add(_value(elm.Capacitor().at(here).down().length(_FRONT_END_DROP), path, "bottom"))
            d.add(elm.Ground().at(cap.end))
        elif path in slots:
            here = d.add(_value(elm.Resistor().at(here).left(), path)).end
    if not layout:
        d.add(elm.Dot(open=True).at(here).label("IN", loc="left", color=_INK))
        return
    here = d.add(elm.Line().at(here).left().length(1.5)).end
    _front_end(d, slots, layout, here)


def _legs(d: schemdraw.Drawing, stage: str, slots: frozenset[str], node: Point) -> Point:
    """Legs hanging from the + node, leftwards from ``node``; returns the node's left end."""
    x = node.x
    ends = (("to_positive", "supply.positive"), ("to_negative", "supply.negative"), ("to_ground", None),
            ("to_reference", "REF"))
    for key, far in ends:
        if f"resistors.{key}" not in slots:
            continue
        x -= _LEG_STEP
        d.add(elm.Line().at((x + _LEG_STEP, node.y)).to((x, node.y)))
        d.add(elm.Dot().at((x, node.y)))
        leg = d.add(_value(elm.Resistor().at((x, node.y)).down(), f"resistors.{key}", "bottom"))
        if far is None:
            d.add(elm.Ground().at(leg.end))
        elif far == "REF" and stage == "inverting":
            _reference(d, slots, leg.end, down_room=2.0)
        elif far == "REF":
            d.add(elm.Dot(open=True).at(leg.end).label("REF", loc="bottom", color=_INK))
        else:
            _rail(d, leg.end, far, loc="bottom")
    return Point((x, node.y))


@lru_cache(maxsize=64)
def stage_template(stage: str, slots: frozenset[str], layout: str = "") -> str:
    """The SVG of one topology (``layout``: the front end's, see :func:`_layout`) with a placeholder
    in each value label."""
    d = schemdraw.Drawing(canvas="svg", show=False)
    d.config(fontsize=12, color=_INK, lw=1.6)
    op = d.add(elm.Opamp(leads=True))
    # Comparator supply pins.
    d.add(elm.Line().at(op.vd).up().length(0.6))
    d.add(_value(elm.Dot(open=True), "supply.positive", "right"))
    d.add(elm.Line().at(op.vs).down().length(0.6))
    d.add(_value(elm.Dot(open=True), "supply.negative", "right"))
    # Output node, output terminal and (open drain) the pull-up.
    out_node = d.add(elm.Line().at(op.out).right().length(1.0)).end
    d.add(elm.Dot().at(out_node))
    terminal = d.add(elm.Line().at(out_node).right().length(1.0)).end
    d.add(elm.Dot(open=True).label("OUT", loc="right", color=_INK))
    if "load.resistance" in slots:  # what the output drives, down to its voltage or ground
        load = d.add(_value(elm.Resistor().at(terminal).down().length(_LOAD_DROP), "load.resistance",
                            "bottom"))
        if "load.volts" in slots:
            _rail(d, load.end, "load.volts", loc="right")
        else:
            d.add(elm.Ground().at(load.end))
    if "output.pullup" in slots:
        pullup = d.add(_value(elm.Resistor().at(out_node).up(), "output.pullup", "bottom"))
        _rail(d, pullup.end, "output.pullup_volts", loc="right")
    # - input wiring, above.
    d.add(elm.Line().at(op.in1).left().length(0.8))
    minus = d.add(elm.Line().up().toy(_MINUS_Y)).end
    # + input wiring and the feedback path, below.
    d.add(elm.Line().at(op.in2).left().length(0.8))
    plus = d.add(elm.Line().down().toy(_PLUS_Y)).end
    d.add(elm.Dot().at(plus))
    d.add(elm.Line().at(out_node).down().toy(_PLUS_Y))
    d.add(_value(elm.Resistor().endpoints((out_node.x, _PLUS_Y), plus), "resistors.feedback", "bottom"))
    left_of_legs = _legs(d, stage, slots, plus)
    if stage == "inverting":
        _signal(d, slots, minus, layout)
    else:
        wire = d.add(elm.Line().at(minus).left().length(2.5)).end
        _reference(d, slots, wire, down_room=_MINUS_Y - _PLUS_Y - 1.6)
        _signal(d, slots, left_of_legs, layout)
    return d.get_imagedata("svg").decode("utf-8")


def stage_svg(design: Design) -> str:
    """SVG text of the design's stage, every part labelled with its value.

    Parameters
    ----------
    design : Design

    Returns
    -------
    str
        A complete ``<svg>`` document (text drawn as SVG text, so values are searchable).
    """
    labels = stage_labels(design)
    svg = stage_template(design.stage, frozenset(labels), _layout(design))
    for path, text in labels.items():
        svg = svg.replace(_slot(path), escape(text))
    return svg
