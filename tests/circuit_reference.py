"""An independent solver for tests: the stage written as a netlist and solved by lcapy.

lcapy (PyPI) is a general-purpose linear circuit analysis library: netlist in, node
voltages out (modified nodal analysis with sympy).  The netlist below is built from the
design file's shape directly, without any of bandcalc's network code, so agreement is an
outside check of the summing-node solution.
"""

from __future__ import annotations

import sympy

from bandcalc.model.design import Design, DividerReference, FixedReference, OpenDrain


def netlist(design: Design, state: str, capacitor: bool = False) -> tuple[str, str]:
    """SPICE-like lcapy netlist of the stage (signal = symbol ``vs``) and the - pin's node name.

    An input filter's resistor is in it; its capacitor (on node ``f``) only with ``capacitor``
    (at DC it carries no current).
    """
    d, r = design, design.resistors
    lines = [f"Vpos vp 0 {d.supply.positive!r}", f"Vneg vn 0 {d.supply.negative!r}", "Vs s 0 vs"]
    sig = "s"
    if d.source.resistance > 0:
        lines.append(f"Rsrc s sx {d.source.resistance!r}")
        sig = "sx"
    if d.filter is not None:  # the input filter: its resistor in series, its capacitor to ground
        lines.append(f"Rflt {sig} f {d.filter.resistance!r}" if d.filter.resistance > 0 else f"W {sig} f")
        if capacitor:
            lines.append(f"Cflt f 0 {d.filter.capacitance!r}")
        sig = "f"
    if isinstance(d.reference, FixedReference):
        lines.append(f"Vref ref 0 {d.reference.volts!r}")
    elif isinstance(d.reference, DividerReference):
        lines += [f"Rtop vp ref {d.reference.top!r}", f"Rbot ref vn {d.reference.bottom!r}"]
    if d.inverting:
        minus = "m"
        if r.input is not None:
            lines.append(f"Rin {sig} m {r.input!r}")
        else:
            minus = sig
    else:
        minus = "ref"
        lines.append(f"Rin {sig} p {r.input!r}")
    legs = (("to_positive", "vp"), ("to_negative", "vn"), ("to_ground", "0"), ("to_reference", "ref"))
    for key, node in legs:
        if getattr(r, key) is not None:
            lines.append(f"R_{key} p {node} {getattr(r, key)!r}")
    out = d.output
    if isinstance(out, OpenDrain):
        vpu = d.supply.positive if out.pullup_volts is None else out.pullup_volts
        vlow = d.supply.negative if out.low_volts is None else out.low_volts
        lines += [f"Vpu pu 0 {vpu!r}", f"Rpu pu o {out.pullup!r}"]
        if state == "low":
            lines.append(f"Vlow o 0 {vlow!r}")
    else:
        level = d.supply.positive - out.high_drop if state == "high" else d.supply.negative + out.low_drop
        if out.resistance > 0:
            lines += [f"Vdrv drv 0 {level!r}", f"Rout drv o {out.resistance!r}"]
        else:
            lines.append(f"Vdrv o 0 {level!r}")
    lines.append(f"Rfb o p {r.feedback!r}")
    if d.load is not None and d.load.resistance is not None:  # the load: output to its own voltage
        lines += [f"Vload lv 0 {d.load.volts!r}", f"Rload o lv {d.load.resistance!r}"]
    ib = d.comparator.bias_current
    if ib:
        # lcapy's "I a b x" drives x into node a (checked: 1 mA into 1 kOhm gives +1 V), so the
        # bias current drawn by a pin is a source from the pin's node to ground written "I 0 pin".
        lines += [f"Ibp 0 p {ib!r}", f"Ibm 0 {minus} {ib!r}"]
    return "\n".join(lines), minus


def output_at(design: Design, state: str, signal: float) -> float:
    """The output node's voltage (the level the loaded output reaches) at a signal, in ``state``."""
    from lcapy import Circuit

    text, _ = netlist(design, state)
    out = Circuit(text)["o"].V.dc.sympy
    return float(out.subs({s: sympy.Rational(repr(signal)) for s in out.free_symbols if s.name == "vs"}))


def pin_resistances(design: Design, state: str) -> tuple[float, float]:
    """Resistance (ohms) the network presents to the + pin and to the - pin, every source at rest
    (lcapy's impedance between the node and ground)."""
    from lcapy import Circuit

    text, minus = netlist(design, state)
    cct = Circuit(text)
    return tuple(float(cct.impedance(node, 0).sympy) for node in ("p", minus))  # type: ignore[return-value]


def switching_point(design: Design, state: str) -> float:
    """The signal (open-circuit volts) where V+ - V- = offset with the output in ``state``."""
    from lcapy import Circuit

    text, minus = netlist(design, state)
    cct = Circuit(text)
    diff = cct["p"].V.dc.sympy - cct[minus].V.dc.sympy
    vs = sympy.Symbol("vs", real=True)
    diff = diff.subs({s: vs for s in diff.free_symbols if s.name == "vs"})
    (root,) = sympy.solve(sympy.Eq(diff, sympy.Rational(repr(design.comparator.offset))), vs)
    return float(root)


def filter_pole(design: Design, state: str) -> float:
    """The pole (Hz) of the filter capacitor's node, output in ``state``: the pole of the impedance
    lcapy finds between that node and ground, every source set to zero (the signal's source
    shorted, as a small-signal view asks)."""
    import math

    from lcapy import Circuit

    text, _ = netlist(design, state, capacitor=True)
    text = "\n".join("W s 0" if line.startswith("Vs ") else line for line in text.splitlines())
    z = Circuit(text).impedance("f", 0)
    (pole,) = (float(sympy.sympify(str(k))) for k in z.poles())
    return -pole / (2 * math.pi)
