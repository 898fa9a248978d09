"""Tolerances: how far each part of a design may stray, over temperature, and the windows a build must meet.

The ``"tolerances"`` section of a design file, validated when built.  Units are those of the
file: percent for resistors, a fixed reference and the supply rails; volts for the comparator's
offset; amperes for its bias current; degrees Celsius for the temperature range; ppm/K for
resistor temperature coefficients and reference drift; volts per kelvin for offset drift.

This module reads and writes the section only; :mod:`bandcalc.spread.propagation` turns it into varied
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
from bandcalc.model.validation import AMPS, CELSIUS, VOLTS

__all__ = [
    "DISTRIBUTIONS",
    "MAX_PERCENT",
    "NOMINAL_CELSIUS",
    "Limits",
    "PerResistor",
    "ToleranceError",
    "Tolerances",
    "tolerances_from_dict",
    "tolerances_to_dict",
]

DISTRIBUTIONS = ("normal", "uniform")
#: Part values are given at 25 degrees Celsius (the datasheet convention, common practice).
NOMINAL_CELSIUS = 25.0
#: Largest percent tolerance taken; beyond it a normal draw at 3 sigma could make a part negative.
MAX_PERCENT = 50.0
#: Largest temperature coefficient taken, ppm/K, either sign: film and wirewound resistors stay
#: within some hundreds and a fixed reference within some tens (common practice); 1 %/K refuses
#: only slips of the finger.  A thermistor is a front end, not a resistor with a tempco.
MAX_PPM_PER_K = 10_000.0
#: Largest offset drift taken, volts per kelvin: comparators drift some microvolts per kelvin
#: (common practice).
MAX_OFFSET_DRIFT = 1.0
#: A part value that is in no series from E24 up is taken as a precision part (common practice).


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
    temperature : (low, high) or None
        Operating range in degrees Celsius; part values are at 25 C.
    resistor_tempco : PerResistor
        ppm/K, signed: resistors of one kind drift together, so this is the coefficient they
        share (give a resistor of another kind its own value).  Default 0.
    reference_drift : float
        ppm/K, +/-, of a fixed reference: a bound, the sign is unknown.
    offset_drift : float
        Volts per kelvin, +/-, of the comparator's offset: a bound.
    distribution : "normal" or "uniform"
        How Monte Carlo reads a tolerance: 3 sigma of a normal distribution, or the bounds of a
        uniform one.  The temperature is always drawn uniform over its range.
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

    def __post_init__(self) -> None:
        self.resistors.check("tolerances.resistors", 0.0, MAX_PERCENT, "percent")
        self.resistor_tempco.check("tolerances.resistor_tempco", -MAX_PPM_PER_K, MAX_PPM_PER_K, "ppm/K")
        for key in ("reference", "supply"):
            _check(getattr(self, key), f"tolerances.{key}", 0.0, MAX_PERCENT, "percent")
        for key, unit, high in (("offset", "V", VOLTS), ("bias_current", "A", AMPS),
                                ("reference_drift", "ppm/K", MAX_PPM_PER_K),
                                ("offset_drift", "V/K", MAX_OFFSET_DRIFT)):
            _check(getattr(self, key), f"tolerances.{key}", 0.0, high, unit)
        if self.distribution not in DISTRIBUTIONS:
            raise ToleranceError(f"tolerances.distribution: {self.distribution!r} is not a distribution; "
                                 f"allowed: {', '.join(DISTRIBUTIONS)}")
        if self.temperature is not None:
            where = "tolerances.temperature"
            if len(self.temperature) != 2:
                raise ToleranceError(f"{where}: give [lowest, highest] in degrees Celsius")
            for v in self.temperature:
                _check(v, where, *CELSIUS, "degrees C")
            if self.temperature[0] >= self.temperature[1]:
                raise ToleranceError(f"{where}: the lowest temperature must be below the highest")
            object.__setattr__(self, "temperature", tuple(float(v) for v in self.temperature))
            self._check_drifts_keep_parts_positive()

    def _check_drifts_keep_parts_positive(self) -> None:
        """Refuse a drift that takes a part to zero or below somewhere in the temperature range.

        Over temperature a resistor is R25 (1 + tempco (T - 25 C)) and a fixed reference
        V25 (1 +/- drift (T - 25 C)) (:mod:`bandcalc.spread.factors`); a tolerance of at most
        :data:`MAX_PERCENT` never makes the part's value at 25 C zero, so the factor decides.
        """
        low, high = self.temperature  # type: ignore[misc]
        span = f"over {low:g} to {high:g} C"
        for key, ppm in self.resistor_tempco.named("tolerances.resistor_tempco"):
            at = min((low, high), key=lambda t: 1 + ppm * 1e-6 * (t - NOMINAL_CELSIUS))
            factor = 1 + ppm * 1e-6 * (at - NOMINAL_CELSIUS)
            if factor <= 0:
                raise ToleranceError(f"{key}: {ppm:g} ppm/K {span} takes a resistor to {100 * factor:.4g} "
                                     f"% of its value at {at:g} C, and no resistor goes to zero or below; "
                                     "check the sign and that the unit is ppm/K")
        at = max((low, high), key=lambda t: abs(t - NOMINAL_CELSIUS))
        factor = 1 - self.reference_drift * 1e-6 * abs(at - NOMINAL_CELSIUS)
        if factor <= 0:
            raise ToleranceError(f"tolerances.reference_drift: {self.reference_drift:g} ppm/K {span} takes "
                                 f"the reference to {100 * factor:.4g} % of its value at {at:g} C; a "
                                 "reference drifts far less: check that the unit is ppm/K")


# --- JSON ------------------------------------------------------------------------------------

_KEYS = ("distribution", "resistors", "reference", "supply", "offset", "bias_current", "temperature",
         "resistor_tempco", "reference_drift", "offset_drift", "limits")
_UNITS = {"offset": "V", "bias_current": "A"}


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


def _pair(data: Any, where: str, unit: str, open_ends: bool) -> tuple:
    if not isinstance(data, (list, tuple)) or len(data) != 2:
        raise ToleranceError(f"{where}: give [lowest, highest] in {unit}"
                             + ("; one side may be null" if open_ends else ""))
    if not open_ends and None in data:
        raise ToleranceError(f"{where}: give both ends in {unit}")
    return tuple(None if v is None else _number(v, where) for v in data)


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
        elif key == "temperature":
            kwargs[key] = _pair(raw, where, "degrees Celsius", open_ends=False)
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
    for key in ("reference", "supply", "offset", "bias_current", "reference_drift", "offset_drift"):
        out[key] = getattr(tol, key)
    if tol.temperature is not None:
        out["temperature"] = list(tol.temperature)
    windows = {k: list(getattr(tol.limits, k)) for k in ("upper", "lower", "hysteresis")
               if getattr(tol.limits, k) is not None}
    if windows:
        out["limits"] = windows
    return out
