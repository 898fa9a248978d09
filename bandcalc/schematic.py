"""A schematic of the current stage as SVG text, drawn with schemdraw's SVG canvas.

The comparator sits in the middle with its - input above the + input.  The - input's wiring
runs to the left above the comparator (the reference in a non-inverting stage, the signal in
an inverting one); the + pin's summing node runs to the left below it, with each leg hanging
down from it, and the feedback resistor runs underneath from the output back to the + pin.
Rails are open terminals marked with their voltage; a reference that two places use is drawn
once and named "REF" where it is reached again.  Values are written in the IEC 60062 code
("4k7", "1M5") and volts with SI prefixes.
"""

from __future__ import annotations

import schemdraw
import schemdraw.elements as elm
from schemdraw.util import Point

from .design import Design, DividerReference, FixedReference, OpenDrain
from .units import format_code, format_si

__all__ = ["DESIGNATORS", "stage_svg"]

# Short names printed beside each part, keyed by design-file path.
DESIGNATORS = {
    "source.resistance": "Rsrc",
    "resistors.input": "Rin",
    "resistors.feedback": "Rfb",
    "resistors.to_positive": "Rup",
    "resistors.to_negative": "Rdn",
    "resistors.to_ground": "Rgnd",
    "resistors.to_reference": "Rref",
    "reference.top": "Rtop",
    "reference.bottom": "Rbot",
    "output.pullup": "Rpu",
}
_INK = "#1d2433"
_VALUE = "#2f6f4e"
_MINUS_Y = 2.2   # height of the - input's wiring above the comparator's axis
_PLUS_Y = -2.6   # height of the + pin's summing node and of the feedback path
_LEG_STEP = 3.0  # horizontal spacing of the legs on the + node


def _v(volts: float) -> str:
    return format_si(volts, "V", 4)


def _part(path: str, ohms: float) -> str:
    return f"{DESIGNATORS[path]} {format_code(ohms)}"


def _rail(d: schemdraw.Drawing, at: Point, text: str, loc: str = "left") -> None:
    d.add(elm.Dot(open=True).at(at).label(text, loc=loc, color=_VALUE))


def _reference(d: schemdraw.Drawing, design: Design, at: Point, down_room: float) -> None:
    """The reference node at ``at`` (its wire arrives from the right), drawn to the left/down."""
    ref = design.reference
    d.add(elm.Dot().at(at).label("REF", loc="top", color=_INK))
    if isinstance(ref, FixedReference):
        src = d.add(elm.SourceV().at(at).down().length(min(2.0, down_room)).reverse()
                    .label(_v(ref.volts), loc="top", color=_VALUE))
        d.add(elm.Ground().at(src.end))
    elif isinstance(ref, DividerReference):
        top = d.add(elm.Resistor().at(at).left().label(_part("reference.top", ref.top), color=_VALUE))
        _rail(d, top.end, _v(design.supply.positive))
        bottom = d.add(elm.Resistor().at(at).down().length(min(3.0, down_room))
                       .label(_part("reference.bottom", ref.bottom), loc="top", color=_VALUE))
        _rail(d, bottom.end, _v(design.supply.negative), loc="bottom")


def _signal(d: schemdraw.Drawing, design: Design, start: Point) -> None:
    """From ``start`` leftwards: the input resistor, the source resistance, the input terminal."""
    here = start
    if design.resistors.input is not None:
        here = d.add(elm.Resistor().at(here).left()
                     .label(_part("resistors.input", design.resistors.input), color=_VALUE)).end
    if design.source.resistance > 0:
        here = d.add(elm.Resistor().at(here).left()
                     .label(_part("source.resistance", design.source.resistance), color=_VALUE)).end
    d.add(elm.Dot(open=True).at(here).label("IN", loc="left", color=_INK))


def _legs(d: schemdraw.Drawing, design: Design, node: Point) -> Point:
    """Legs hanging from the + node, leftwards from ``node``; returns the node's left end."""
    r, vp, vn = design.resistors, design.supply.positive, design.supply.negative
    x = node.x
    ends = (("to_positive", _v(vp)), ("to_negative", _v(vn)), ("to_ground", None), ("to_reference", "REF"))
    for key, far in ends:
        ohms = getattr(r, key)
        if ohms is None:
            continue
        x -= _LEG_STEP
        d.add(elm.Line().at((x + _LEG_STEP, node.y)).to((x, node.y)))
        d.add(elm.Dot().at((x, node.y)))
        leg = d.add(elm.Resistor().at((x, node.y)).down().label(_part(f"resistors.{key}", ohms),
                                                                  loc="bottom", color=_VALUE))
        if far is None:
            d.add(elm.Ground().at(leg.end))
        elif key == "to_reference" and design.inverting:
            _reference(d, design, leg.end, down_room=2.0)
        else:
            _rail(d, leg.end, far, loc="bottom")
    return Point((x, node.y))


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
    d = schemdraw.Drawing(canvas="svg", show=False)
    d.config(fontsize=12, color=_INK, lw=1.6)
    op = d.add(elm.Opamp(leads=True))
    # Comparator supply pins.
    d.add(elm.Line().at(op.vd).up().length(0.6))
    d.add(elm.Dot(open=True).label(_v(design.supply.positive), loc="right", color=_VALUE))
    d.add(elm.Line().at(op.vs).down().length(0.6))
    d.add(elm.Dot(open=True).label(_v(design.supply.negative), loc="right", color=_VALUE))
    # Output node, output terminal and (open drain) the pull-up.
    out_node = d.add(elm.Line().at(op.out).right().length(1.0)).end
    d.add(elm.Dot().at(out_node))
    d.add(elm.Line().at(out_node).right().length(1.0))
    d.add(elm.Dot(open=True).label("OUT", loc="right", color=_INK))
    if isinstance(design.output, OpenDrain):
        pu = design.output
        pullup = d.add(elm.Resistor().at(out_node).up().label(_part("output.pullup", pu.pullup),
                                                               loc="bottom", color=_VALUE))
        volts = design.supply.positive if pu.pullup_volts is None else pu.pullup_volts
        _rail(d, pullup.end, _v(volts), loc="right")
    # - input wiring, above.
    d.add(elm.Line().at(op.in1).left().length(0.8))
    minus = d.add(elm.Line().up().toy(_MINUS_Y)).end
    # + input wiring and the feedback path, below.
    d.add(elm.Line().at(op.in2).left().length(0.8))
    plus = d.add(elm.Line().down().toy(_PLUS_Y)).end
    d.add(elm.Dot().at(plus))
    d.add(elm.Line().at(out_node).down().toy(_PLUS_Y))
    d.add(elm.Resistor().endpoints((out_node.x, _PLUS_Y), plus)
          .label(_part("resistors.feedback", design.resistors.feedback), loc="bottom", color=_VALUE))
    left_of_legs = _legs(d, design, plus)
    if design.inverting:
        _signal(d, design, minus)
    else:
        wire = d.add(elm.Line().at(minus).left().length(2.5)).end
        _reference(d, design, wire, down_room=_MINUS_Y - _PLUS_Y - 1.6)
        _signal(d, design, left_of_legs)
    return d.get_imagedata("svg").decode("utf-8")
