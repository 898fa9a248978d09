"""Edits the spread panel makes to the design's ``tolerances`` section: pure functions, no Streamlit.

Tolerances are part of the design, so an edit here lives in the page address and the saved file
like any other.  Each edit returns a new design or raises a ``ValueError`` naming the key
(``tolerances.supply``, ``tolerances.limits.upper``, ...) and what is allowed; the caller keeps the
old design.  Units are those of the design file: percent, volts, amperes, degrees Celsius, ppm/K,
V/K, ohms; windows in volts or, with a front end, in the watched quantity.
"""

from __future__ import annotations

from dataclasses import replace

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design, OpenDrain
from bandcalc.model.parts import parameters, resistors_of, tolerance_of
from bandcalc.model.tolerances import (
    NOMINAL_CELSIUS,
    OUTPUT_LIMITS,
    PerResistor,
    ResistorNetwork,
    Tolerances,
)

__all__ = [
    "LIMIT_KEYS",
    "PLAIN_KEYS",
    "WINDOW_KEYS",
    "limit_end",
    "limit_keys",
    "resistor_rows",
    "temperature_end",
    "tolerance_value",
    "tolerances_of",
    "window_end",
    "with_limit_end",
    "with_network",
    "with_part_tolerance",
    "with_temperature_end",
    "with_tolerance",
    "with_window_end",
    "without_network",
    "without_tolerances",
]

#: Keys holding one number; a blank (None) means 0 (exact), except ``resistors`` and
#: ``resistor_tempco``, where it means "not given" (the series' tolerance, no coefficient).
PLAIN_KEYS = ("resistors", "reference", "supply", "offset", "bias_current", "offset_current",
              "resistor_tempco", "reference_drift", "offset_drift")
#: Data-sheet limits, [least, greatest]: the output's (``output.<key>``) and the comparator's hysteresis.
LIMIT_KEYS = (*(f"output.{k}" for k in OUTPUT_LIMITS), "comparator_hysteresis")
WINDOW_KEYS = ("upper", "lower", "hysteresis")
_PER_RESISTOR = ("resistors", "resistor_tempco")
_ENDS = ("low", "high")


def tolerances_of(design: Design) -> Tolerances:
    """The design's tolerances section, or the empty one (series tolerances, everything else exact)."""
    return design.tolerances if design.tolerances is not None else Tolerances()


def _with(design: Design, **changes: object) -> Design:
    return replace(design, tolerances=replace(tolerances_of(design), **changes))


def without_tolerances(design: Design) -> Design:
    """The design without a tolerances section."""
    return replace(design, tolerances=None)


def _key(key: str, allowed: tuple[str, ...]) -> None:
    if key not in allowed:
        raise BandcalcError(f"tolerances.{key}: unknown key; allowed: {', '.join(allowed)}")


def tolerance_value(design: Design, key: str) -> float | None:
    """A one-number entry: for ``resistors`` / ``resistor_tempco`` the value every resistor takes."""
    _key(key, PLAIN_KEYS)
    tol = tolerances_of(design)
    return getattr(tol, key).default if key in _PER_RESISTOR else getattr(tol, key)


def with_tolerance(design: Design, key: str, value: float | str | None) -> Design:
    """Set a one-number entry (``PLAIN_KEYS``) or ``distribution``."""
    if key == "distribution":
        return _with(design, distribution=value)
    _key(key, PLAIN_KEYS)
    if key in _PER_RESISTOR:
        return _with(design, **{key: replace(getattr(tolerances_of(design), key), default=value)})
    return _with(design, **{key: 0.0 if value is None else value})


def with_part_tolerance(design: Design, key: str, part: str, value: float | None) -> Design:
    """Set ``resistors`` or ``resistor_tempco`` for one resistor (``None``: it takes the default)."""
    _key(key, _PER_RESISTOR)
    per = getattr(tolerances_of(design), key)
    parts = {k: v for k, v in per.parts if k != part}
    if value is not None:
        parts[part] = value
    return _with(design, **{key: PerResistor(default=per.default, parts=tuple(parts.items()))})


def temperature_end(design: Design, end: str) -> float | None:
    """The lowest ("low") or highest ("high") temperature, C; None without a range."""
    _key(end, _ENDS)
    span = tolerances_of(design).temperature
    return None if span is None else span[_ENDS.index(end)]


def with_temperature_end(design: Design, end: str, celsius: float | None) -> Design:
    """Set one end of the temperature range; a blank end is 25 C (the parts' nominal temperature),
    and where that leaves only 25 C there is no range."""
    _key(end, _ENDS)
    ends = [temperature_end(design, e) for e in _ENDS]
    ends[_ENDS.index(end)] = celsius
    filled = tuple(NOMINAL_CELSIUS if v is None else v for v in ends)
    if filled == (NOMINAL_CELSIUS, NOMINAL_CELSIUS) and None in ends:  # nothing left but 25 C
        return _with(design, temperature=None)
    return _with(design, temperature=filled)


def window_end(design: Design, quantity: str, end: str) -> float | None:
    """One side of a window a build must meet; None where open."""
    _key(quantity, WINDOW_KEYS)
    _key(end, _ENDS)
    window = getattr(tolerances_of(design).limits, quantity)
    return None if window is None else window[_ENDS.index(end)]


def with_window_end(design: Design, quantity: str, end: str, value: float | None) -> Design:
    """Set one side of a window (None: open); with both sides open there is no window."""
    _key(quantity, WINDOW_KEYS)
    _key(end, _ENDS)
    sides = [window_end(design, quantity, e) for e in _ENDS]
    sides[_ENDS.index(end)] = value
    window = None if sides == [None, None] else tuple(sides)
    return _with(design, limits=replace(tolerances_of(design).limits, **{quantity: window}))


def limit_keys(design: Design) -> tuple[str, ...]:
    """The data-sheet limits this design's output takes, and the comparator's hysteresis."""
    own = ("low_volts", "pullup_volts") if isinstance(design.output, OpenDrain) else \
        ("high_drop", "low_drop", "resistance")
    return (*(f"output.{k}" for k in own), "comparator_hysteresis")


def _limits(design: Design, key: str) -> tuple[float, float] | None:
    tol = tolerances_of(design)
    if key == "comparator_hysteresis":
        return tol.comparator_hysteresis
    return getattr(tol.output, key.removeprefix("output."))


def _nominal(design: Design, key: str) -> float:
    """The design's own value of a limited quantity (an open-drain level follows its rail)."""
    p = parameters(design)
    if key == "comparator_hysteresis":
        return p["comparator.hysteresis"]
    if key in p:
        return p[key]
    return p["supply.negative" if key == "output.low_volts" else "supply.positive"]


def limit_end(design: Design, key: str, end: str) -> float | None:
    """The least ("low") or greatest ("high") data-sheet value of ``key`` (:data:`LIMIT_KEYS`)."""
    _key(key, LIMIT_KEYS)
    _key(end, _ENDS)
    pair = _limits(design, key)
    return None if pair is None else pair[_ENDS.index(end)]


def with_limit_end(design: Design, key: str, end: str, value: float | None) -> Design:
    """Set one end of a data-sheet limit; a blank end takes the design's own value, and where both
    are blank (or at the design's own value) there is no limit."""
    _key(key, LIMIT_KEYS)
    _key(end, _ENDS)
    own = _nominal(design, key)
    ends = [None if v == own else v for v in (limit_end(design, key, e) for e in _ENDS)]
    ends[_ENDS.index(end)] = value
    pair = None if ends == [None, None] else tuple(own if v is None else v for v in ends)
    if key == "comparator_hysteresis":
        return _with(design, comparator_hysteresis=pair)
    return _with(design, output=replace(tolerances_of(design).output, **{key.removeprefix("output."): pair}))


def with_network(design: Design, name: str, resistors: tuple[str, ...], tempco: float | None,
                 tracking: float | None) -> Design:
    """Add resistor network ``name`` (or replace it): its members' coefficients track (blank bounds: 0);
    the members' own ``resistor_tempco`` entries give way to it."""
    name = name.strip()
    if not name:
        raise BandcalcError("tolerances.resistor_networks: give the network a name, such as \"RN1\"")
    missing = [r for r in resistors if r not in resistors_of(design)]
    if missing:
        raise BandcalcError(f"tolerances.resistor_networks.{name}.resistors: this design has no {missing[0]} "
                            f"resistor; it has {', '.join(resistors_of(design))}")
    tol = tolerances_of(design)
    network = ResistorNetwork(name, tuple(resistors), tempco or 0.0, tracking or 0.0)
    # A resistor moves into this network from any other; a network left with one member goes.
    others = [tuple(r for r in n.resistors if r not in resistors) for n in tol.resistor_networks
              if n.name != name]
    others = tuple(replace(n, resistors=kept) for n, kept in zip(
        (n for n in tol.resistor_networks if n.name != name), others, strict=True) if len(kept) >= 2)
    tempco_parts = tuple((k, v) for k, v in tol.resistor_tempco.parts if k not in resistors)
    return _with(design, resistor_networks=(*others, network),
                 resistor_tempco=replace(tol.resistor_tempco, parts=tempco_parts))


def without_network(design: Design, name: str) -> Design:
    """The design without resistor network ``name``: its members take ``resistor_tempco`` again."""
    tol = tolerances_of(design)
    return _with(design, resistor_networks=tuple(n for n in tol.resistor_networks if n.name != name))


def resistor_rows(design: Design) -> list[dict[str, object]]:
    """Every resistor that can be varied: its tolerances-section name, value, the tolerance (percent)
    and temperature coefficient bound (ppm/K) it takes, whether each was given or is a default, and
    the network it belongs to (None: its coefficient is its own)."""
    tol = tolerances_of(design)
    rows = []
    for name, ohms in resistors_of(design).items():
        t = tolerance_of(design, name)
        net = tol.network_of(name)
        rows.append({"name": name, "ohms": ohms, "percent": t.percent, "origin": t.why,
                     "tempco": (tol.resistor_tempco.get(name) or 0.0) if net is None else net.tempco,
                     "network": None if net is None else net.name,
                     "own_percent": dict(tol.resistors.parts).get(name),
                     "own_tempco": dict(tol.resistor_tempco.parts).get(name)})
    return rows
