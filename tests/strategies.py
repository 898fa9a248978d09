"""Hypothesis strategies the tests share: stage designs of every kind, front ends, resistances.

Import them from here (tests/ is on sys.path through conftest): ``from strategies import designs``.
"""

from __future__ import annotations

import json
from typing import Any

from hypothesis import strategies as st

from bandcalc.demos import demo_paths
from bandcalc.model.design import (
    Comparator,
    Design,
    DividerReference,
    FixedReference,
    InputFilter,
    Load,
    OpenDrain,
    PushPull,
    Resistors,
    Source,
    Supply,
)
from bandcalc.model.front_end import DividerFrontEnd, LinearFrontEnd, ThermistorFrontEnd

__all__ = ["designs", "designs_with_filters", "designs_with_front_ends", "designs_with_loads", "front_ends",
           "hostile_design_files", "ohms", "three_resistor_stages"]

# Resistances from 1 kOhm to 1 MOhm, rounded to four significant figures as a part value is written.
ohms = st.floats(1e3, 1e6).map(lambda x: float(f"{x:.4g}"))


@st.composite
def designs(draw):
    """Stages of every kind: single or dual supply, either stage, a fixed or divider reference, any
    set of legs on the + pin, an open-drain or push-pull output, offset, bias and source resistance."""
    dual = draw(st.booleans())
    vp = draw(st.floats(3.0, 15.0))
    vn = -draw(st.floats(3.0, 15.0)) if dual else 0.0
    stage = draw(st.sampled_from(["non-inverting", "inverting"]))
    use_divider = draw(st.booleans())
    reference = (DividerReference(draw(ohms), draw(ohms)) if use_divider
                 else FixedReference(draw(st.floats(vn + 0.5, vp - 0.5))))
    legs = {k: draw(st.none() | ohms) for k in ("to_positive", "to_negative", "to_ground", "to_reference")}
    inp = draw(ohms) if stage == "non-inverting" else draw(st.none() | ohms)
    res = Resistors(feedback=draw(st.floats(1e4, 1e7)), input=inp, **legs)
    if draw(st.booleans()):
        output = OpenDrain(pullup=draw(ohms) / 100, pullup_volts=draw(st.none() | st.floats(2.0, 15.0)),
                           low_volts=draw(st.none() | st.just(0.0)))
        if output.pullup_volts is not None and output.pullup_volts <= (vn if output.low_volts is None else 0):
            output = OpenDrain(pullup=output.pullup)
    else:
        output = PushPull(draw(st.floats(0, 1.5)), draw(st.floats(0, 1.5)), draw(st.floats(0, 500)))
    comp = Comparator(offset=draw(st.floats(-5e-3, 5e-3)), bias_current=draw(st.floats(0, 1e-6)))
    src = Source(resistance=draw(st.floats(0, 1e4)))
    return Design(stage=stage, supply=Supply(vp, vn), resistors=res, output=output, reference=reference,
                  comparator=comp, source=src)


@st.composite
def front_ends(draw, design):
    """A divider, thermistor or linear-sensor front end for ``design`` (a thermistor excited from
    the reference only where the design has a positive fixed reference)."""
    kind = draw(st.sampled_from(["divider", "thermistor", "linear"]))
    if kind == "divider":
        return DividerFrontEnd(draw(ohms), draw(ohms))
    if kind == "linear":
        sign = draw(st.sampled_from([1.0, -1.0]))
        return LinearFrontEnd(volts_per_unit=sign * draw(st.floats(1e-3, 1.0)), unit="kPa",
                              offset=draw(st.floats(-1.0, 1.0)), resistance=draw(st.floats(0.0, 1e4)))
    excitations = ["positive", draw(st.floats(1.0, 10.0))]
    if isinstance(design.reference, FixedReference) and design.reference.volts > 0:
        excitations.append("reference")
    return ThermistorFrontEnd(fixed=draw(ohms), r25=draw(ohms), beta=draw(st.floats(2500.0, 5000.0)),
                              position=draw(st.sampled_from(["top", "bottom"])),
                              excitation=draw(st.sampled_from(excitations)))


@st.composite
def designs_with_front_ends(draw):
    """A stage from :func:`designs` with a front end from :func:`front_ends`."""
    design = draw(designs())
    return Design(**{**design.__dict__, "front_end": draw(front_ends(design))})


@st.composite
def designs_with_loads(draw):
    """A stage from :func:`designs` whose output drives a resistive load (100 Ohm to 1 MOhm) to a
    voltage between the rails or beyond them."""
    design = draw(designs())
    vn, vp = design.supply.negative, design.supply.positive
    load = Load(resistance=draw(st.floats(100.0, 1e6)), volts=draw(st.floats(vn - 5.0, vp + 5.0)))
    return Design(**{**design.__dict__, "load": load})


@st.composite
def designs_with_filters(draw):
    """A stage from :func:`designs` or :func:`designs_with_front_ends` behind an RC input filter (0 Ohm
    to 1 MOhm, 1 nF to 10 uF: time constants from nanoseconds to seconds)."""
    design = draw(st.one_of(designs(), designs_with_front_ends()))
    flt = InputFilter(resistance=draw(st.one_of(st.just(0.0), st.floats(10.0, 1e6))),
                      capacitance=draw(st.floats(1e-9, 1e-5)))
    return Design(**{**design.__dict__, "filter": flt})


def three_resistor_stages():
    """Three-resistor stages of either kind on 5 V (resistor values fixed), with any output,
    offset, bias and, non-inverting, source resistance."""
    output = st.one_of(st.builds(PushPull, st.floats(0, 1.5), st.floats(0, 1.5), st.floats(0, 100)),
                       st.builds(OpenDrain, st.floats(1e3, 47e3)))
    comparator = st.builds(Comparator, offset=st.floats(-5e-3, 5e-3), bias_current=st.floats(0, 2e-7))
    non_inverting = st.builds(
        lambda out, comp, rs, ref: Design(stage="non-inverting", supply=Supply(5.0), output=out,
                                          reference=FixedReference(ref), comparator=comp,
                                          source=Source(resistance=rs),
                                          resistors=Resistors(input=1e4, feedback=1e5, to_ground=1e4)),
        output, comparator, st.floats(0, 5e3), st.floats(0.5, 4.0))
    inverting = st.builds(
        lambda out, comp: Design(stage="inverting", supply=Supply(5.0), output=out, comparator=comp,
                                 resistors=Resistors(to_positive=1e4, to_ground=1e4, feedback=1e5)),
        output, comparator)
    return st.one_of(non_inverting, inverting)


# --- design files as a careless or hostile user writes them ---------------------------------------

# Numbers no part has, and the edges of a float: the largest and smallest, an integer no float
# holds, infinities and NaN (which Python's json writes and reads, though JSON has neither).
EXTREME_NUMBERS = (0, -1, 1e308, -1e308, 1e-308, 5e-324, 1e23, -1e23, 1e15, 3e-12, 10**400, -(10**400),
                   float("nan"), float("inf"), float("-inf"))
# Text a value may hold: codes and prefixes, a lone surrogate, a terminal escape, a number as text.
ODD_TEXT = ("4k7", "1e400", "nan", "-0", "1M5", "\ud800", "\x1b[2J", "", " ", "1e-400", "0x10", "true")

_leaves = (st.none() | st.booleans() | st.integers() | st.floats(allow_nan=True, allow_infinity=True)
           | st.text(max_size=12) | st.sampled_from(ODD_TEXT) | st.sampled_from(EXTREME_NUMBERS))
#: Anything JSON holds, nested a little: what replaces a value or a whole section.
junk = st.recursive(_leaves, lambda inner: st.lists(inner, max_size=3)
                    | st.dictionaries(st.text(max_size=6), inner, max_size=3), max_leaves=6)


def _paths(data: Any, prefix: tuple = ()) -> list[tuple]:
    """Every path (keys and indexes) to a value inside ``data``, sections and their entries."""
    items = data.items() if isinstance(data, dict) else enumerate(data) if isinstance(data, list) else ()
    out = []
    for key, value in items:
        out.append((*prefix, key))
        out += _paths(value, (*prefix, key))
    return out


# Numbers at and near the edges of what a design file takes (bandcalc.model.validation's bounds), and
# factors a value may be scaled by: designs that are accepted but odd.
EDGE_NUMBERS = (0.0, 1e-3, 1e12, 99_999.0, -99_999.0, 1e-12, 1e-9, 0.999, 1.0, -1.0, 1e6, 2e4, 100.0,
                -273.0, 499.0, 5e-324, 1e-300)
SCALES = (0.0, -1.0, 1e-6, 1e-3, 0.5, 2.0, 1e3, 1e6)


def _numbers(data: Any) -> list[tuple]:
    """Paths of the values written as numbers inside ``data``: numbers (not booleans) and text that
    starts with a digit ("4k7", "150k")."""
    out = []
    for path in _paths(data):
        value = data
        for key in path:
            value = value[key]
        if (isinstance(value, (int, float)) and not isinstance(value, bool) and abs(value) < 1e300) or (
                isinstance(value, str) and value[:1].isdigit()):
            out.append(path)
    return out


@st.composite
def hostile_design_files(draw) -> str:
    """A shipped demo's design file, as JSON text, after one to three edits: a number moved to an
    edge or scaled; a value (or a whole section) replaced by an extreme number, null, text, a
    boolean or nested junk; a key deleted; an unknown key added."""
    data = json.loads(demo_paths()[draw(st.sampled_from(sorted(demo_paths())))].read_text())
    for _ in range(draw(st.sampled_from((1, 1, 2, 3)))):
        numbers = _numbers(data)
        action = draw(st.sampled_from(("number", "number", "number", "replace", "replace", "delete", "add")))
        path = draw(st.sampled_from(numbers if action == "number" and numbers else _paths(data)))
        parent = data
        for key in path[:-1]:
            parent = parent[key]
        if action == "number" and numbers:
            old = parent[path[-1]]
            scaled = (st.sampled_from(SCALES).map(lambda k, old=old: k * old) if not isinstance(old, str)
                      else st.nothing())
            parent[path[-1]] = draw(st.sampled_from(EDGE_NUMBERS) | scaled)
        elif action in ("number", "replace"):
            parent[path[-1]] = draw(st.sampled_from(EXTREME_NUMBERS) | junk)
        elif action == "delete":
            del parent[path[-1]]
        elif isinstance(parent, dict):
            parent[draw(st.text(max_size=8))] = draw(junk)
    return json.dumps(data)
