"""Tolerances: how far each part of a design may stray, the temperature range it works over, and the
windows a build must meet.

The ``"tolerances"`` section of a design file, validated when built.  Units are those of the
file: percent for resistors, a fixed reference and the supply rails; volts for the comparator's
offset; amperes for its bias and offset currents; degrees Celsius for the temperature range;
ppm/K for resistor temperature coefficients and reference drift; volts per kelvin for offset
drift; volts and ohms for the output's and the comparator's data-sheet limits.

This module reads and writes the section only; :mod:`bandcalc.spread` turns it into varied
parameters of the stage model.  It imports nothing from the design module, so that the design
module can import it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from bandcalc.errors import BandcalcError
from bandcalc.model.parts import TOLERANCED
from bandcalc.model.units import UnitError, parse_quantity
from bandcalc.model.validation import AMPS, CELSIUS, OHMS, VOLTS

__all__ = [
    "DISTRIBUTIONS",
    "MAX_MOVE",
    "MAX_OFFSET_DRIFT",
    "MAX_PERCENT",
    "MAX_PPM_PER_K",
    "NOMINAL_CELSIUS",
    "OUTPUT_LIMITS",
    "Limits",
    "OutputLimits",
    "PerResistor",
    "ResistorNetwork",
    "ToleranceError",
    "Tolerances",
    "tolerances_from_dict",
    "tolerances_to_dict",
]

#: How Monte Carlo reads a tolerance: "normal" (the tolerance is 3 sigma, tails beyond it kept),
#: "screened" (the same normal cut at the tolerance: parts screened to it) or "uniform".
DISTRIBUTIONS = ("normal", "screened", "uniform")
#: Part values are given at 25 degrees Celsius (the datasheet convention, common practice).
NOMINAL_CELSIUS = 25.0
#: Largest percent tolerance taken; beyond it a normal draw at 3 sigma could make a part negative.
MAX_PERCENT = 50.0
#: Largest temperature coefficient taken, ppm/K: a bound on a resistor's own coefficient, a
#: network's common one and its tracking, and a fixed reference's drift.  Film and wirewound
#: resistors stay within some hundreds, carbon-film ones reach about -1500 ppm/K (from memory) and
#: a fixed reference stays within some tens (common practice); anything beyond this is a sensor or
#: a slip of the finger.  A thermistor is a front end, not a resistor with a tempco.
MAX_PPM_PER_K = 5000.0
#: Largest offset drift taken, volts per kelvin: comparators drift some microvolts per kelvin
#: (common practice).
MAX_OFFSET_DRIFT = 1.0
#: Largest move over the temperature range the linear laws are taken for: a resistor's
#: tempco x (T - 25 C) and a reference's drift x (high - low) (our bound: beyond it a linear
#: coefficient no longer describes the part, and well before it could take a part to zero).
MAX_MOVE = 0.25


class ToleranceError(BandcalcError):
    """A tolerances section that cannot be used; the message names the key and what is allowed."""


def _number(value: Any, where: str, unit: str = "") -> float:
    try:
        return parse_quantity(value, unit, where)
    except UnitError as exc:
        raise ToleranceError(str(exc)) from None


def _check(value: float, where: str, low: float | None = None, high: float | None = None,
           unit: str = "") -> None:
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise ToleranceError(f"{where}: must be a finite number, got {value!r}")
    if (low is not None and value < low) or (high is not None and value > high):
        span = (f"from {low:g} to {high:g}" if high is not None else f"{low:g} or more")
        raise ToleranceError(f"{where}: must be {span}{unit and ' ' + unit}, got {value!r}")


@dataclass(frozen=True)
class PerResistor:
    """One value for every resistor (``default``) with exceptions for some (``parts``).

    ``default`` None means "not given": resistors then take the default of the quantity
    (their series' tolerance, or a zero temperature coefficient).
    """

    default: float | None = None
    parts: tuple[tuple[str, float], ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "parts", tuple(sorted((str(k), v) for k, v in self.parts)))

    def get(self, name: str) -> float | None:
        """The value for resistor ``name`` (e.g. "feedback", "reference.top"), else the default."""
        return dict(self.parts).get(name, self.default)

    def named(self, where: str) -> list[tuple[str, float]]:
        """Each value given with the key it sits at in the file ("tolerances.resistors.feedback")."""
        out = [] if self.default is None else [(f"{where}.default" if self.parts else where, self.default)]
        return out + [(f"{where}.{name}", value) for name, value in self.parts]

    def check(self, where: str, low: float | None, high: float | None, unit: str) -> None:
        for key, value in self.named(where):
            _check(value, key, low, high, unit)


@dataclass(frozen=True)
class Limits:
    """Windows (volts) a build must meet; ``None`` for an open side or an unchecked quantity."""

    upper: tuple[float | None, float | None] | None = None
    lower: tuple[float | None, float | None] | None = None
    hysteresis: tuple[float | None, float | None] | None = None

    def __post_init__(self) -> None:
        for key in ("upper", "lower", "hysteresis"):
            window = getattr(self, key)
            if window is None:
                continue
            where = f"tolerances.limits.{key}"
            if len(window) != 2 or all(v is None for v in window):
                raise ToleranceError(f"{where}: give [lowest, highest] in volts; one side may be null")
            for v in window:
                if v is not None:
                    _check(v, where)
            if None not in window and window[0] >= window[1]:
                raise ToleranceError(f"{where}: the lowest value ({window[0]:g} V) must be below the "
                                     f"highest ({window[1]:g} V)")
            object.__setattr__(self, key, tuple(None if v is None else float(v) for v in window))

    def windows(self) -> dict[str, tuple[float, float]]:
        """The given windows with open sides as -inf / +inf."""
        out = {}
        for key in ("upper", "lower", "hysteresis"):
            window = getattr(self, key)
            if window is not None:
                lo, hi = window
                out[key] = (-math.inf if lo is None else lo, math.inf if hi is None else hi)
        return out


@dataclass(frozen=True)
class ResistorNetwork:
    """Resistors in one package (a network or array) whose temperature coefficients track.

    Each member's coefficient is the network's common one, within +/- ``tempco`` ppm/K, plus its
    own share within +/- ``tracking``/2, so that any two members differ by at most ``tracking``
    ppm/K (the "TCR tracking" of a network's data sheet).
    """

    name: str
    resistors: tuple[str, ...]
    tempco: float = 0.0
    tracking: float = 0.0

    def __post_init__(self) -> None:
        where = f"tolerances.resistor_networks.{self.name}"
        if not isinstance(self.name, str) or not self.name.strip():
            raise ToleranceError("tolerances.resistor_networks: give each network a name, such as \"RN1\"")
        object.__setattr__(self, "resistors", tuple(self.resistors))
        if len(self.resistors) < 2:
            raise ToleranceError(f"{where}.resistors: give two or more resistors")
        if len(set(self.resistors)) != len(self.resistors):
            raise ToleranceError(f"{where}.resistors: each resistor once")
        for key in ("tempco", "tracking"):
            _check(getattr(self, key), f"{where}.{key}", 0.0, MAX_PPM_PER_K, "ppm/K")
            object.__setattr__(self, key, float(getattr(self, key)))


#: Output limits a tolerances section may give, with their unit and least and greatest allowed
#: value (the bounds of the design's own values, :mod:`bandcalc.model.validation`).
OUTPUT_LIMITS = {"high_drop": ("V", 0.0, VOLTS), "low_drop": ("V", 0.0, VOLTS),
                 "resistance": ("ohm", 0.0, OHMS[1]),
                 "low_volts": ("V", -VOLTS, VOLTS), "pullup_volts": ("V", -VOLTS, VOLTS)}


@dataclass(frozen=True)
class OutputLimits:
    """The output stage's data-sheet limits, each (least, greatest) or None (not given).

    Push-pull: ``high_drop``, ``low_drop`` (V) and ``resistance`` (ohm); open-drain: ``low_volts``,
    the level of the pulled-down output, and ``pullup_volts`` (V).  A build draws each between its
    limits like a tolerance about their middle.
    """

    high_drop: tuple[float, float] | None = None
    low_drop: tuple[float, float] | None = None
    resistance: tuple[float, float] | None = None
    low_volts: tuple[float, float] | None = None
    pullup_volts: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        for key, (unit, least, greatest) in OUTPUT_LIMITS.items():
            pair = getattr(self, key)
            if pair is not None:
                object.__setattr__(self, key, _limit_pair(pair, f"tolerances.output.{key}", unit, least,
                                                          greatest))

    def given(self) -> dict[str, tuple[float, float]]:
        """The limits given, by key."""
        return {k: getattr(self, k) for k in OUTPUT_LIMITS if getattr(self, k) is not None}


def _limit_pair(pair: Sequence[float], where: str, unit: str, least: float,
                greatest: float) -> tuple[float, float]:
    """A (least, greatest) pair of numbers from ``least`` to ``greatest``, the first not above the second."""
    if len(pair) != 2:
        raise ToleranceError(f"{where}: give [least, greatest] in {unit}")
    for v in pair:
        _check(v, where, least, greatest, unit)
    if pair[0] > pair[1]:
        raise ToleranceError(f"{where}: the least value ({pair[0]:g}) must not be above the greatest "
                             f"({pair[1]:g})")
    return float(pair[0]), float(pair[1])


@dataclass(frozen=True)
class Tolerances:
    """How far the parts may stray, as in the design file (percent, volts, amperes, Celsius, ppm/K).

    Parameters
    ----------
    resistors : PerResistor
        Percent, +/-; a resistor with none given takes the usual tolerance of its value's series
        (:func:`bandcalc.model.parts.series_tolerance`).
    reference : float
        Percent, +/-, of a fixed-volts reference (a divider reference follows its rail).
    supply : float
        Percent, +/-, of each non-zero rail on its own, and of a pull-up voltage or output low
        level given apart from the rails.
    offset : float
        Volts, +/-, about the comparator's nominal offset.
    bias_current : float
        Amperes, +/-, about the comparator's nominal bias current.
    offset_current : float
        Amperes, +/-, about the comparator's nominal offset current (+ pin less - pin).
    temperature : (low, high) or None
        Operating range in degrees Celsius: every build must meet the windows at every
        temperature of it.  Part values are at 25 C.
    resistor_tempco : PerResistor
        ppm/K, a bound: each resistor's own coefficient lies within +/- it, independently of the
        others'.  Default 0 (none).
    resistor_networks : tuple of ResistorNetwork
        Resistors in one package whose coefficients track; their bounds replace ``resistor_tempco``.
    reference_drift : float
        ppm/K of a fixed reference by the box method: over the range the reference stays within
        V25 +/- drift x V25 x (high - low), with no shape assumed.
    offset_drift : float
        Volts per kelvin, +/-, of the comparator's offset: a bound.
    output : OutputLimits
        The output stage's data-sheet limits (levels, output resistance).
    comparator_hysteresis : (least, greatest) or None
        Volts: the data-sheet limits of the hysteresis built into the comparator.
    distribution : "normal", "screened" or "uniform"
        How Monte Carlo reads a tolerance: 3 sigma of a normal distribution, the same normal cut
        at the tolerance, or the bounds of a uniform one.
    limits : Limits
        Windows for the yield.
    """

    resistors: PerResistor = field(default_factory=PerResistor)
    reference: float = 0.0
    supply: float = 0.0
    offset: float = 0.0
    bias_current: float = 0.0
    temperature: tuple[float, float] | None = None
    resistor_tempco: PerResistor = field(default_factory=PerResistor)
    reference_drift: float = 0.0
    offset_drift: float = 0.0
    distribution: str = "normal"
    limits: Limits = field(default_factory=Limits)
    offset_current: float = 0.0
    resistor_networks: tuple[ResistorNetwork, ...] = ()
    output: OutputLimits = field(default_factory=OutputLimits)
    comparator_hysteresis: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        self.resistors.check("tolerances.resistors", 0.0, MAX_PERCENT, "percent")
        self.resistor_tempco.check("tolerances.resistor_tempco", 0.0, MAX_PPM_PER_K, "ppm/K")
        for key in ("reference", "supply"):
            _check(getattr(self, key), f"tolerances.{key}", 0.0, MAX_PERCENT, "percent")
        for key, unit, high in (("offset", "V", VOLTS), ("bias_current", "A", AMPS),
                                ("offset_current", "A", AMPS),
                                ("reference_drift", "ppm/K", MAX_PPM_PER_K),
                                ("offset_drift", "V/K", MAX_OFFSET_DRIFT)):
            _check(getattr(self, key), f"tolerances.{key}", 0.0, high, unit)
        if self.distribution not in DISTRIBUTIONS:
            raise ToleranceError(f"tolerances.distribution: {self.distribution!r} is not a distribution; "
                                 f"allowed: {', '.join(DISTRIBUTIONS)}")
        if self.comparator_hysteresis is not None:
            object.__setattr__(self, "comparator_hysteresis", _limit_pair(
                self.comparator_hysteresis, "tolerances.comparator_hysteresis", "volts", 0.0, VOLTS))
        self._check_networks()
        if self.temperature is not None:
            where = "tolerances.temperature"
            if len(self.temperature) != 2:
                raise ToleranceError(f"{where}: give [lowest, highest] in degrees Celsius")
            for v in self.temperature:
                _check(v, where, *CELSIUS, "degrees C")
            if self.temperature[0] >= self.temperature[1]:
                raise ToleranceError(f"{where}: the lowest temperature must be below the highest")
            object.__setattr__(self, "temperature", tuple(float(v) for v in self.temperature))
            self._check_moves()

    def _check_networks(self) -> None:
        object.__setattr__(self, "resistor_networks", tuple(self.resistor_networks))
        seen: dict[str, str] = {}
        for net in self.resistor_networks:
            for name in net.resistors:
                if name in seen:
                    raise ToleranceError(f"tolerances.resistor_networks.{net.name}: {name} is already in "
                                         f"network {seen[name]}")
                seen[name] = net.name
        for name, _ in self.resistor_tempco.parts:
            if name in seen:
                raise ToleranceError(f"tolerances.resistor_tempco.{name}: {name} is in network {seen[name]}, "
                                     "whose tempco and tracking apply; give it in one place")

    def network_of(self, name: str) -> ResistorNetwork | None:
        """The network resistor ``name`` belongs to, if any."""
        return next((n for n in self.resistor_networks if name in n.resistors), None)

    def _check_moves(self) -> None:
        """Refuse coefficients the linear laws cannot carry over this range (:data:`MAX_MOVE`).

        Over the range a resistor is R25 (1 + alpha (T - 25 C)) with |alpha| at most its bound, and a
        fixed reference stays within V25 (1 +/- drift (high - low)) (:mod:`bandcalc.spread.factors`);
        a move of at most :data:`MAX_MOVE` also keeps every part well away from zero, as a tolerance
        of at most :data:`MAX_PERCENT` does at 25 C.
        """
        low, high = self.temperature  # type: ignore[misc]
        span, reach = f"{low:g} to {high:g} °C", max(abs(low - NOMINAL_CELSIUS), abs(high - NOMINAL_CELSIUS))
        bounds = [(key, v) for key, v in self.resistor_tempco.named("tolerances.resistor_tempco") if v]
        bounds += [(f"tolerances.resistor_networks.{n.name}", n.tempco + 0.5 * n.tracking)
                   for n in self.resistor_networks]
        for where, ppm in bounds:
            if ppm * 1e-6 * reach > MAX_MOVE:
                raise ToleranceError(f"{where}: {ppm:g} ppm/K over {span} moves a resistor by up to "
                                     f"{100 * ppm * 1e-6 * reach:.3g} %, beyond the {100 * MAX_MOVE:g} % a "
                                     "linear coefficient describes; check that the unit is ppm/K")
        box = self.reference_drift * 1e-6 * (high - low)
        if box > MAX_MOVE:
            raise ToleranceError(f"tolerances.reference_drift: {self.reference_drift:g} ppm/K over {span} "
                                 f"moves the reference by up to {100 * box:.3g} %, beyond the "
                                 f"{100 * MAX_MOVE:g} % a drift coefficient describes; check that the unit "
                                 "is ppm/K")


# --- JSON ------------------------------------------------------------------------------------

_KEYS = ("distribution", "resistors", "reference", "supply", "offset", "bias_current", "offset_current",
         "temperature", "resistor_tempco", "resistor_networks", "reference_drift", "offset_drift", "output",
         "comparator_hysteresis", "limits")
_UNITS = {"offset": "V", "bias_current": "A", "offset_current": "A"}
_NETWORK_KEYS = ("resistors", "tempco", "tracking")


def _object(data: Any, where: str, allowed: Sequence[str]) -> dict:
    if not isinstance(data, dict):
        raise ToleranceError(f"{where}: must be an object with keys {', '.join(allowed)}")
    unknown = [k for k in data if k not in allowed]
    if unknown:
        raise ToleranceError(f"{where}.{unknown[0]}: unknown key; allowed: {', '.join(allowed)}")
    return data


def _per_resistor(data: Any, where: str, names: Sequence[str]) -> PerResistor:
    if not isinstance(data, dict):
        return PerResistor(default=_number(data, where))
    data = _object(data, where, ("default", *names))
    parts = tuple((k, _number(v, f"{where}.{k}")) for k, v in data.items()
                  if k != "default" and v is not None)
    default = _number(data["default"], f"{where}.default") if data.get("default") is not None else None
    return PerResistor(default=default, parts=parts)


def _pair(data: Any, where: str, unit: str, open_ends: bool, symbol: str = "") -> tuple:
    """[low, high] in ``unit`` (words, for messages); ``symbol`` is the unit a value may carry ("V")."""
    if not isinstance(data, (list, tuple)) or len(data) != 2:
        raise ToleranceError(f"{where}: give [lowest, highest] in {unit}"
                             + ("; one side may be null" if open_ends else ""))
    if not open_ends and None in data:
        raise ToleranceError(f"{where}: give both ends in {unit}")
    return tuple(None if v is None else _number(v, where, symbol) for v in data)


def _networks(data: Any, where: str, names: Sequence[str]) -> tuple[ResistorNetwork, ...]:
    if not isinstance(data, dict):
        raise ToleranceError(f'{where}: must be an object of networks by name, such as '
                             '{"RN1": {"resistors": ["input", "feedback"], "tempco": 25, "tracking": 5}}')
    out = []
    for name, raw in data.items():
        at = f"{where}.{name}"
        body = _object(raw, at, _NETWORK_KEYS)
        members = body.get("resistors")
        if not isinstance(members, list) or not all(isinstance(m, str) for m in members):
            raise ToleranceError(f"{at}.resistors: give the resistors' names as a list, such as "
                                 '["input", "feedback"]')
        for m in members:
            if m not in names:
                raise ToleranceError(f"{at}.resistors: {m!r} is not a resistor; allowed: {', '.join(names)}")
        values = {k: _number(body[k], f"{at}.{k}") for k in ("tempco", "tracking") if body.get(k) is not None}
        out.append(ResistorNetwork(name, tuple(members), **values))
    return tuple(out)


def _output(data: Any, where: str) -> OutputLimits:
    data = _object(data, where, tuple(OUTPUT_LIMITS))
    out = {}
    for key, raw in data.items():
        if raw is None:  # left out, as elsewhere in the design file
            continue
        volts = OUTPUT_LIMITS[key][0] == "V"
        if not isinstance(raw, (list, tuple)) or len(raw) != 2:
            raise ToleranceError(f"{where}.{key}: give [least, greatest] in {'volts' if volts else 'ohm'}")
        out[key] = tuple(_number(v, f"{where}.{key}", "V" if volts else "") for v in raw)
    return OutputLimits(**out)


def tolerances_from_dict(data: Any, resistor_keys: Sequence[str]) -> Tolerances:
    """Build Tolerances from the JSON shape; ``resistor_keys`` are the resistors section's keys.

    Raises ToleranceError naming the key at fault and what is allowed.
    """
    data = _object(data, "tolerances", _KEYS)
    names = (*resistor_keys, *(k for k in TOLERANCED if k not in resistor_keys))
    kwargs: dict[str, Any] = {}
    for key, raw in data.items():
        where = f"tolerances.{key}"
        if raw is None:  # left out, as elsewhere in the design file
            continue
        if key in ("resistors", "resistor_tempco"):
            kwargs[key] = _per_resistor(raw, where, names)
        elif key == "resistor_networks":
            kwargs[key] = _networks(raw, where, names)
        elif key == "output":
            kwargs[key] = _output(raw, where)
        elif key == "temperature":
            kwargs[key] = _pair(raw, where, "degrees Celsius", open_ends=False)
        elif key == "comparator_hysteresis":
            kwargs[key] = _pair(raw, where, "volts", open_ends=False, symbol="V")
        elif key == "limits":
            windows = _object(raw, where, ("upper", "lower", "hysteresis"))
            kwargs[key] = Limits(**{k: _pair(v, f"{where}.{k}", "volts", open_ends=True)
                                    for k, v in windows.items()})
        elif key == "distribution":
            kwargs[key] = raw
        else:
            kwargs[key] = _number(raw, where, _UNITS.get(key, ""))
    return Tolerances(**kwargs)


def _per_resistor_dict(per: PerResistor) -> float | dict:
    if not per.parts and per.default is not None:
        return per.default
    return {**({"default": per.default} if per.default is not None else {}), **dict(per.parts)}


def tolerances_to_dict(tol: Tolerances) -> dict:
    """The JSON shape; ``tolerances_from_dict(tolerances_to_dict(t), keys) == t``."""
    out: dict[str, Any] = {"distribution": tol.distribution}
    for key in ("resistors", "resistor_tempco"):
        per = getattr(tol, key)
        if per.default is not None or per.parts:
            out[key] = _per_resistor_dict(per)
    if tol.resistor_networks:
        out["resistor_networks"] = {n.name: {"resistors": list(n.resistors), "tempco": n.tempco,
                                             "tracking": n.tracking} for n in tol.resistor_networks}
    for key in ("reference", "supply", "offset", "bias_current", "reference_drift", "offset_drift"):
        out[key] = getattr(tol, key)
    if tol.offset_current:
        out["offset_current"] = tol.offset_current
    if tol.temperature is not None:
        out["temperature"] = list(tol.temperature)
    if tol.output.given():
        out["output"] = {k: list(v) for k, v in tol.output.given().items()}
    if tol.comparator_hysteresis is not None:
        out["comparator_hysteresis"] = list(tol.comparator_hysteresis)
    windows = {k: list(getattr(tol.limits, k)) for k in ("upper", "lower", "hysteresis")
               if getattr(tol.limits, k) is not None}
    if windows:
        out["limits"] = windows
    return out
