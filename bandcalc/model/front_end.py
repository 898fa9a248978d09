"""Front ends: the divider or sensor ahead of the stage, so switching points read in the watched quantity.

A designer states "disconnect below 11.6 V of battery" or "fan on at 32 C", not comparator-pin
volts.  A front end maps the watched quantity x (in its own unit: V, C, kPa, ...) to the source
the stage sees: an open-circuit voltage behind a resistance (its Thevenin equivalent).  That
resistance is in series with ``source.resistance`` (whatever lies between the front end and the
stage: a protection or filter resistor), so the stage's signal leg is
``source.resistance + R_th(x)``.

``DividerFrontEnd``     measured voltage -> ``top`` -> node -> ``bottom`` -> ground (0 V).
``ThermistorFrontEnd``  an NTC thermistor and a ``fixed`` resistor in a divider between an
                        excitation (the positive rail, the fixed reference, or a voltage) and
                        ground; Beta model or Steinhart-Hart coefficients.
``LinearFrontEnd``      a sensor with a linear output, ``offset + volts_per_unit * x`` behind
                        ``resistance`` (e.g. a pressure sensor on a fixed supply).

Watched values are in the front end's ``unit``; temperatures in degrees Celsius, as the trade
states them and as the design file stores them; the thermistor models themselves take kelvin.
Each front end describes itself to the solver (:mod:`bandcalc.model.points`) by a coordinate t in
which its Thevenin voltage and resistance are both affine: ``ends(p)`` gives (V, R) at t = 0
and t = 1, ``coordinate`` maps x to t and ``watched`` maps t back.  This module holds the
parts, their models and their design-file section; :mod:`bandcalc.model.points` solves the stage.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import MISSING, dataclass, fields
from typing import Any, ClassVar

import numpy as np

from bandcalc.errors import DesignError
from bandcalc.model.design import Design, FixedReference
from bandcalc.model.thermistor import (
    KELVIN_AT_0C,
    KELVIN_AT_25C,
    beta_resistance,
    beta_temperature,
    steinhart_hart_resistance,
    steinhart_hart_temperature,
)
from bandcalc.model.units import UnitError, format_value, parse_quantity, parse_resistance
from bandcalc.model.validation import (
    CELSIUS,
    OHMS,
    VOLTS,
    finite,
    positive,
    resistance,
    section,
    text,
    voltage,
    within,
)

__all__ = [
    "BETA_PAIR",
    "DISSIPATION_CONSTANT",
    "EXCITATIONS",
    "POSITIONS",
    "SELF_HEATING_LIMIT",
    "THERMISTOR_RANGE",
    "DirectInput",
    "DividerFrontEnd",
    "FrontEnd",
    "LinearFrontEnd",
    "ThermistorFrontEnd",
    "front_end_from_dict",
    "front_end_of",
    "front_end_tolerances",
]

ArrayLike = float | np.ndarray

# Dissipation constant of a small epoxy-bead NTC probe in still air: data sheets commonly list
# about 1 to 2 mW/K (typical data-sheet value, from memory); give the part's own figure.
DISSIPATION_CONSTANT = 1.5e-3
# Our choice: flag self-heating above a tenth of a kelvin, well inside the +/-0.2 K to +/-1 K
# interchangeability that NTC probes are commonly sold with (common practice).
SELF_HEATING_LIMIT = 0.1
# Default watched range of a thermistor, C: the -55 to +150 C that NTC parts are commonly
# rated over (common practice); give front_end.low / high for the application's own range.
THERMISTOR_RANGE = (-55.0, 150.0)
# A Beta without its pair is taken as measured between 25 C and 50 C (B25/50), the pair NTC data
# sheets most often state (common practice); B25/85 is the other usual one.
BETA_PAIR = (25.0, 50.0)
# NTC thermistors have Betas of about 2,000 to 5,000 K (common practice); 100 K to 20,000 K
# refuses only slips of the finger (1.3e7 for 3950).
BETA = (100.0, 20e3)
# Dissipation constants run from about 1 mW/K (a bead in still air) to some tens of mW/K (a probe
# in a liquid; common practice); 1 uW/K to 10 W/K refuses only slips of the finger.
DISSIPATION = (1e-6, 10.0)
# A linear sensor's output moves by microvolts (a thermocouple, tens of uV/K) to volts per unit
# of what it watches (common practice); 1 nV to 1 MV per unit refuses only slips of the finger.
VOLTS_PER_UNIT = (1e-9, 1e6)
# Where in the watched range a thermistor's curve is checked when the design is built (0: low end).
_CURVE_GRID = np.linspace(0.0, 1.0, 9)


# --- the front ends -----------------------------------------------------------------------------

def _percent(value: float | None, key: str) -> None:
    """A tolerance in percent, from 0 to below 100 (None: not given)."""
    if value is not None:
        finite(value, key)
        if not 0 <= value < 100:
            raise DesignError(f"{key}: a percentage from 0 to below 100, got {value!r}")


def _range_checked(low: float | None, high: float | None, bounds: tuple[float, float] | None = None,
                   unit: str = "") -> None:
    for key, value in (("low", low), ("high", high)):
        if value is not None:
            finite(value, f"front_end.{key}")
            if bounds is not None:
                within(value, f"front_end.{key}", *bounds, unit)
    if low is not None and high is not None and low >= high:
        raise DesignError(f"front_end: low ({low}) must be below high ({high})")


class _Base:
    """What every front end shares: its file shape and the checks against the stage."""

    quantity: ClassVar[str] = "the watched quantity"  # what the design's points are a value of
    kind: ClassVar[str]
    affine: ClassVar[bool]
    low: float | None
    high: float | None

    def to_dict(self) -> dict:
        """The design-file shape of the front end (None fields left out)."""
        out: dict[str, Any] = {"kind": self.kind}
        for f in fields(self):  # type: ignore[arg-type]
            value = getattr(self, f.name)
            if value is not None:
                out[f.name] = list(value) if isinstance(value, tuple) else value
        return out

    def resistors(self) -> dict[str, float]:
        """The front end's fixed resistors (ohms), keyed by parameter name."""
        return {}

    def check_stage(self, design: Design) -> None:
        """Refuse a stage that does not fit this front end; called when the Design is built."""
        for key in ("low", "high"):
            if getattr(design.source, key) is not None:
                raise DesignError(f"source.{key}: with a front end, give the range of the watched "
                                  f"quantity as front_end.low / front_end.high instead")
        total = design.source.resistance + self.series_ohms()
        if total > OHMS[1]:
            raise DesignError(f"source.resistance: {format_value(design.source.resistance, 'Ohm')} plus the "
                              f"front end's own up to {format_value(self.series_ohms(), 'Ohm')} puts "
                              f"{format_value(total, 'Ohm')} ahead of the stage, where a part has at most "
                              f"{format_value(OHMS[1], 'Ohm')}")
        from bandcalc.model.points import range_volts  # the points read the whole design

        range_volts(design)  # a range the stage can be analysed over, refused now if not


@dataclass(frozen=True)
class DividerFrontEnd(_Base):
    """A measured voltage through ``top`` (ohms) to the stage, ``bottom`` (ohms) to ground.

    ``low`` / ``high``: the range the measured voltage reaches (V; default: what maps to the rails).
    """

    top: float
    bottom: float
    low: float | None = None
    high: float | None = None

    kind: ClassVar[str] = "divider"
    unit: ClassVar[str] = "V"
    rises: ClassVar[bool] = True
    affine: ClassVar[bool] = True  # fixed resistance: the switching condition is affine in x

    def __post_init__(self) -> None:
        resistance(self.top, "front_end.top")
        resistance(self.bottom, "front_end.bottom")
        _range_checked(self.low, self.high, (-VOLTS, VOLTS), "V")

    def parameters(self) -> dict[str, float]:
        return {"front_end.top": self.top, "front_end.bottom": self.bottom}

    def resistors(self) -> dict[str, float]:
        return self.parameters()

    def series_ohms(self) -> float:
        return self.top * self.bottom / (self.top + self.bottom)

    def ends(self, p: Mapping[str, ArrayLike]) -> tuple[ArrayLike, ...]:
        """(V0, V1, R0, R1): the Thevenin equivalent at coordinate 0 and 1 (here, volts watched)."""
        top, bottom = p["front_end.top"], p["front_end.bottom"]
        return 0.0, bottom / (top + bottom), top * bottom / (top + bottom), top * bottom / (top + bottom)

    def coordinate(self, p: Mapping[str, ArrayLike], x: ArrayLike) -> ArrayLike:
        return np.asarray(x, dtype=float)

    def watched(self, p: Mapping[str, ArrayLike], t: ArrayLike) -> ArrayLike:
        return np.asarray(t, dtype=float)


@dataclass(frozen=True)
class LinearFrontEnd(_Base):
    """A sensor whose output is ``offset + volts_per_unit * x`` volts behind ``resistance`` ohms.

    ``offset_tolerance`` (V, +/-) and ``span_tolerance`` (percent of ``volts_per_unit``, +/-) are
    the sensor's accuracy as its data sheet states it; the spread varies both.
    """

    volts_per_unit: float
    unit: str
    offset: float = 0.0
    resistance: float = 0.0
    low: float | None = None
    high: float | None = None
    offset_tolerance: float | None = None
    span_tolerance: float | None = None

    kind: ClassVar[str] = "linear"
    affine: ClassVar[bool] = True

    def __post_init__(self) -> None:
        finite(self.volts_per_unit, "front_end.volts_per_unit")
        if self.volts_per_unit == 0:
            raise DesignError("front_end.volts_per_unit: must not be zero")
        if not VOLTS_PER_UNIT[0] <= abs(self.volts_per_unit) <= VOLTS_PER_UNIT[1]:
            low, high = (format_value(v, "V") for v in VOLTS_PER_UNIT)
            raise DesignError(f"front_end.volts_per_unit: must be from {low} to {high} per unit, "
                              f"either sign, got {self.volts_per_unit:g}")
        voltage(self.offset, "front_end.offset")
        resistance(self.resistance, "front_end.resistance", zero=True)
        text(self.unit, "front_end.unit")
        if not self.unit.strip():
            raise DesignError("front_end.unit: give the watched quantity's unit as text, e.g. \"kPa\"")
        if self.offset_tolerance is not None:
            voltage(self.offset_tolerance, "front_end.offset_tolerance", low=0.0)
        _percent(self.span_tolerance, "front_end.span_tolerance")
        _range_checked(self.low, self.high)
        for key in ("low", "high"):
            x = getattr(self, key)
            volts = None if x is None else self.offset + self.volts_per_unit * x
            if volts is not None and not -VOLTS <= volts <= VOLTS:
                span = f"{format_value(-VOLTS, 'V')} to {format_value(VOLTS, 'V')}"
                raise DesignError(f"front_end.{key}: the sensor would give {format_value(volts, 'V')} there; "
                                  f"it must stay from {span}")

    @property
    def rises(self) -> bool:
        return self.volts_per_unit > 0

    def parameters(self) -> dict[str, float]:
        return {"front_end.volts_per_unit": self.volts_per_unit, "front_end.offset": self.offset,
                "front_end.resistance": self.resistance}

    def series_ohms(self) -> float:
        return self.resistance

    def ends(self, p: Mapping[str, ArrayLike]) -> tuple[ArrayLike, ...]:
        off, r = p["front_end.offset"], p["front_end.resistance"]
        return off, off + p["front_end.volts_per_unit"], r, r

    def coordinate(self, p: Mapping[str, ArrayLike], x: ArrayLike) -> ArrayLike:
        return np.asarray(x, dtype=float)

    def watched(self, p: Mapping[str, ArrayLike], t: ArrayLike) -> ArrayLike:
        return np.asarray(t, dtype=float)


POSITIONS = ("bottom", "top")
EXCITATIONS = ("positive", "reference")


@dataclass(frozen=True)
class ThermistorFrontEnd(_Base):
    """An NTC thermistor and a ``fixed`` resistor (ohms) in a divider from an excitation to ground.

    Give ``r25`` (ohms) and ``beta`` (K), or ``steinhart_hart`` (A, B, C with R in ohms, T in
    kelvin).  ``position``: where the thermistor sits ("bottom": node to ground, so the voltage
    falls as the temperature rises; "top": excitation to node).  ``excitation``: "positive" (the
    positive rail), "reference" (``reference.volts``) or a voltage.  ``dissipation_constant``
    (W/K) sizes the self-heating; ``r25_tolerance`` and ``beta_tolerance`` are percent; ``low``
    and ``high`` the temperature range watched, C.  ``beta_temperatures`` (C, C) are the two
    temperatures the Beta was measured between, as the data sheet states it (B25/50, B25/85);
    None: 25 C and 50 C, :data:`BETA_PAIR`, assumed.
    """

    fixed: float
    r25: float | None = None
    beta: float | None = None
    steinhart_hart: tuple[float, float, float] | None = None
    position: str = "bottom"
    excitation: str | float = "positive"
    dissipation_constant: float = DISSIPATION_CONSTANT
    r25_tolerance: float | None = None
    beta_tolerance: float | None = None
    low: float | None = None
    high: float | None = None
    beta_temperatures: tuple[float, float] | None = None

    kind: ClassVar[str] = "thermistor"
    unit: ClassVar[str] = "C"
    affine: ClassVar[bool] = False  # its resistance moves with temperature

    def __post_init__(self) -> None:
        resistance(self.fixed, "front_end.fixed")
        if self.steinhart_hart is None:
            if self.r25 is None or self.beta is None:
                raise DesignError("front_end: give the thermistor as r25 and beta, "
                                  "or as steinhart_hart [A, B, C]")
            resistance(self.r25, "front_end.r25")
            within(self.beta, "front_end.beta", *BETA, "K")
        else:
            if self.r25 is not None or self.beta is not None or self.beta_tolerance is not None:
                raise DesignError("front_end.steinhart_hart: give either steinhart_hart or r25 and beta "
                                  "(with beta_tolerance), not both")
            sh = self.steinhart_hart
            if not isinstance(sh, (tuple, list)) or len(sh) != 3:
                raise DesignError("front_end.steinhart_hart: give three coefficients [A, B, C]")
            for name, value in zip("ABC", sh, strict=True):
                finite(value, f"front_end.steinhart_hart {name}")
            if not (sh[1] > 0 and sh[2] >= 0):
                raise DesignError("front_end.steinhart_hart: an NTC thermistor needs B > 0 and C >= 0")
            object.__setattr__(self, "steinhart_hart", tuple(float(v) for v in sh))
        if self.position not in POSITIONS:
            raise DesignError(f"front_end.position: {self.position!r} is not a position; "
                              f"allowed: {', '.join(POSITIONS)}")
        if isinstance(self.excitation, str):
            if self.excitation not in EXCITATIONS:
                raise DesignError(f"front_end.excitation: {self.excitation!r} is not allowed; give "
                                  f"\"positive\", \"reference\" or a voltage")
        else:
            voltage(self.excitation, "front_end.excitation", low=0.0)
            if self.excitation == 0:
                raise DesignError("front_end.excitation: must be greater than zero, got 0")
        positive(self.dissipation_constant, "front_end.dissipation_constant")
        within(self.dissipation_constant, "front_end.dissipation_constant", *DISSIPATION, "W/K")
        for key in ("r25_tolerance", "beta_tolerance"):
            _percent(getattr(self, key), f"front_end.{key}")
        if self.beta_temperatures is not None:
            self._check_beta_temperatures()
        _range_checked(self.low, self.high)  # finite numbers first, then the bounds of a temperature
        if self.low is not None and self.low <= -KELVIN_AT_0C:
            raise DesignError(f"front_end.low: {self.low} °C is not above absolute zero")
        _range_checked(self.low, self.high, CELSIUS, "C")
        low, high = self.temperatures()
        if low >= high:
            raise DesignError(f"front_end: low ({low} °C) must be below high ({high} °C)")
        self._check_curve(low, high)

    def _check_curve(self, low: float, high: float) -> None:
        """Refuse a curve that gives no part's resistance over the watched range, or does not fall
        as the temperature rises; name the coefficients, the Beta, or the end of the range.

        Both models fall monotonically for B > 0 (and C >= 0), so the ends of the range bound the
        resistance; the points between catch a curve the arithmetic cannot follow.
        """
        celsius = np.concatenate(([25.0, 50.0], low + (high - low) * _CURVE_GRID))
        with np.errstate(all="ignore"):
            kelvin = celsius + KELVIN_AT_0C
            ohms = (beta_resistance(self.r25, self.beta, kelvin) if self.steinhart_hart is None
                    else steinhart_hart_resistance(self.steinhart_hart, kelvin))
            beta = float(np.log(ohms[0] / ohms[1]) / (1 / KELVIN_AT_25C - 1 / kelvin[1]))  # B25/50
        at25, curve, celsius = float(ohms[0]), ohms[2:], celsius[2:]
        bad = ~(np.isfinite(curve) & (curve >= OHMS[0]) & (curve <= OHMS[1]))
        allowed = lambda: f"a part has {format_value(OHMS[0], 'Ohm')} to {format_value(OHMS[1], 'Ohm')}"  # noqa: E731
        if self.steinhart_hart is not None:
            if not OHMS[0] <= at25 <= OHMS[1]:  # NaN fails too
                raise DesignError(f"front_end.steinhart_hart: these coefficients give {_ohms(at25)} at "
                                  f"25 °C, where {allowed()}; check each exponent (a 10 kΩ part has A about "
                                  "1e-3, B about 2e-4, C about 1e-7)")
            if bad.any() or not (np.diff(curve) < 0).all():
                where = (f"{_ohms(curve[bad][0])} at {celsius[bad][0]:g} °C, where {allowed()}" if bad.any()
                         else "a resistance that does not fall as the temperature rises")
                raise DesignError(f"front_end.steinhart_hart: over the watched range {low:g} °C to "
                                  f"{high:g} °C these coefficients give {where}; check the coefficients, or "
                                  "front_end.low / front_end.high")
            if not BETA[0] <= beta <= BETA[1]:  # NaN fails too
                raise DesignError("front_end.steinhart_hart: these coefficients give a Beta (25 °C to "
                                  f"50 °C) of {beta:.3g} K, where NTC parts have {BETA[0]:g} K to "
                                  f"{BETA[1]:g} K; check each exponent")
            return
        if not bad.any():
            return
        at = float(celsius[bad][0])
        end = "low" if at == low else "high"
        if getattr(self, end) is not None:
            raise DesignError(f"front_end.{end}: at {at:g} °C the thermistor's resistance would be "
                              f"{_ohms(curve[bad][0])}, where {allowed()}; "
                              f"narrow the watched range or check r25 and beta")
        raise DesignError(f"front_end: over the default watched range {THERMISTOR_RANGE[0]:g} °C to "
                          f"{THERMISTOR_RANGE[1]:g} °C the thermistor's resistance would reach "
                          f"{_ohms(curve[bad][0])} (at {at:g} °C), where {allowed()}; give front_end.low / "
                          "front_end.high, or check r25 and beta")

    def _check_beta_temperatures(self) -> None:
        where, pair = "front_end.beta_temperatures", self.beta_temperatures
        if self.beta is None:
            raise DesignError(f"{where}: only with beta (Steinhart-Hart coefficients need no pair)")
        if not isinstance(pair, (tuple, list)) or len(pair) != 2:
            raise DesignError(f"{where}: give the two temperatures in C the Beta was measured between, "
                              "such as [25, 50] or [25, 85]")
        for value in pair:
            finite(value, where)
            if value <= -KELVIN_AT_0C:
                raise DesignError(f"{where}: {value} °C is not above absolute zero")
            within(value, where, *CELSIUS, "C")
        if pair[0] >= pair[1]:
            raise DesignError(f"{where}: the first temperature must be below the second, got {list(pair)}")
        object.__setattr__(self, "beta_temperatures", (float(pair[0]), float(pair[1])))

    @property
    def beta_pair(self) -> tuple[float, float]:
        """The temperatures (C) the Beta was measured between: as given, else :data:`BETA_PAIR`."""
        return BETA_PAIR if self.beta_temperatures is None else self.beta_temperatures

    def temperatures(self) -> tuple[float, float]:
        """The watched range, C (defaults: :data:`THERMISTOR_RANGE`)."""
        return (THERMISTOR_RANGE[0] if self.low is None else self.low,
                THERMISTOR_RANGE[1] if self.high is None else self.high)

    def check_stage(self, design: Design) -> None:
        if self.excitation == "reference" and not isinstance(design.reference, FixedReference):
            raise DesignError('front_end.excitation: "reference" needs a fixed reference (reference.volts); '
                              "a divider reference would be loaded by the thermistor divider")
        super().check_stage(design)  # last: its range check computes the divider's output

    @property
    def rises(self) -> bool:
        return self.position == "top"

    def series_ohms(self) -> float:
        return self.fixed  # the divider's Thevenin resistance, R_fixed R_t / (R_fixed + R_t), below it

    def resistors(self) -> dict[str, float]:
        return {"front_end.fixed": self.fixed}

    @property
    def nominal_r25(self) -> float:
        """Resistance at 25 C, ohms (from the coefficients for Steinhart-Hart)."""
        if self.steinhart_hart is None:
            return float(self.r25)  # type: ignore[arg-type]
        return float(steinhart_hart_resistance(self.steinhart_hart, KELVIN_AT_25C))

    def parameters(self) -> dict[str, float]:
        p = {"front_end.r25": self.nominal_r25, "front_end.fixed": self.fixed}
        if self.beta is not None:
            p["front_end.beta"] = self.beta
        if not isinstance(self.excitation, str):
            p["front_end.excitation"] = self.excitation
        return p

    def resistance(self, p: Mapping[str, ArrayLike], celsius: ArrayLike) -> ArrayLike:
        """Thermistor resistance, ohms; a Steinhart-Hart curve is scaled by front_end.r25 / nominal."""
        kelvin = np.asarray(celsius, dtype=float) + KELVIN_AT_0C
        if self.steinhart_hart is None:
            return beta_resistance(p["front_end.r25"], p["front_end.beta"], kelvin)
        scale = p["front_end.r25"] / self.nominal_r25
        return steinhart_hart_resistance(self.steinhart_hart, kelvin) * scale

    def temperature(self, p: Mapping[str, ArrayLike], ohms: ArrayLike) -> ArrayLike:
        """Inverse of :meth:`resistance`: C (NaN where no temperature gives ``ohms``)."""
        if self.steinhart_hart is None:
            kelvin = beta_temperature(p["front_end.r25"], p["front_end.beta"], ohms)
        else:
            scale = p["front_end.r25"] / self.nominal_r25
            kelvin = steinhart_hart_temperature(self.steinhart_hart, ohms / scale)
        return kelvin - KELVIN_AT_0C

    def excitation_volts(self, p: Mapping[str, ArrayLike]) -> ArrayLike:
        if self.excitation == "positive":
            return p["supply.positive"]
        if self.excitation == "reference":
            return p["reference.volts"]
        return p["front_end.excitation"]

    def ends(self, p: Mapping[str, ArrayLike]) -> tuple[ArrayLike, ...]:
        """(V0, V1, R0, R1) over u = R_t / (R_t + R_fixed): u = 0 is a shorted, u = 1 an open thermistor."""
        volts = self.excitation_volts(p)
        v0, v1 = (0.0, volts) if self.position == "bottom" else (volts, 0.0)
        return v0, v1, 0.0, p["front_end.fixed"]

    def coordinate(self, p: Mapping[str, ArrayLike], x: ArrayLike) -> ArrayLike:
        r = self.resistance(p, x)
        return r / (r + p["front_end.fixed"])

    def watched(self, p: Mapping[str, ArrayLike], t: ArrayLike) -> ArrayLike:
        t = np.asarray(t, dtype=float)
        inside = (t > 0) & (t < 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            ohms = np.where(inside, p["front_end.fixed"] * t / (1.0 - t), 1.0)
            return np.where(inside, self.temperature(p, ohms), np.nan)


def _ohms(x: float) -> str:
    """A resistance for a message about an implausible one (no SI prefix: it may be 1e-30)."""
    if math.isfinite(x):
        return f"{x:.3g} Ω"
    return "more than 1e308 Ω" if x > 0 else "no resistance at all (the formula has no answer)"


FrontEnd = DividerFrontEnd | ThermistorFrontEnd | LinearFrontEnd


@dataclass(frozen=True)
class DirectInput(_Base):
    """No front end: the signal drives the stage itself, so the design's input is the stage's volts.

    Not a design-file section: :func:`front_end_of` stands it in for a design without a front end,
    so every analysis takes one path.  ``low`` / ``high`` are ``source.low`` / ``source.high``.
    """

    low: float | None = None
    high: float | None = None

    kind: ClassVar[str] = "none"
    unit: ClassVar[str] = "V"
    quantity: ClassVar[str] = "the stage's input"
    rises: ClassVar[bool] = True
    affine: ClassVar[bool] = True

    def parameters(self) -> dict[str, float]:
        return {}

    def series_ohms(self) -> float:
        return 0.0

    def ends(self, p: Mapping[str, ArrayLike]) -> tuple[ArrayLike, ...]:
        return 0.0, 1.0, 0.0, 0.0

    def coordinate(self, p: Mapping[str, ArrayLike], x: ArrayLike) -> ArrayLike:
        return np.asarray(x, dtype=float)

    def watched(self, p: Mapping[str, ArrayLike], t: ArrayLike) -> ArrayLike:
        return np.asarray(t, dtype=float)


def front_end_of(design: Design) -> FrontEnd | DirectInput:
    """What lies ahead of the stage: the design's front end, or :class:`DirectInput` without one."""
    if design.front_end is not None:
        return design.front_end
    return DirectInput(design.source.low, design.source.high)

_CLASSES: dict[str, type] = {c.kind: c for c in (DividerFrontEnd, ThermistorFrontEnd, LinearFrontEnd)}
_OHMS = ("top", "bottom", "fixed", "r25", "resistance")
_READ_UNITS = {"beta": "K", "offset": "V", "excitation": "V", "dissipation_constant": "",
               "offset_tolerance": "V"}


def _read(key: str, raw: Any, unit: str) -> Any:
    where = f"front_end.{key}"
    if key in ("position", "unit") or (key == "excitation" and raw in EXCITATIONS):
        if not isinstance(raw, str):
            raise DesignError(f"{where}: must be text")
        return raw
    if key == "steinhart_hart":
        if not isinstance(raw, list) or len(raw) != 3:
            raise DesignError(f"{where}: give three coefficients [A, B, C]")
        return tuple(_read(f"steinhart_hart[{i}]", v, "") for i, v in enumerate(raw))
    if key == "beta_temperatures":
        if not isinstance(raw, list) or len(raw) != 2:
            raise DesignError(f"{where}: give the two temperatures in C the Beta was measured between, "
                              "such as [25, 50] or [25, 85]")
        return tuple(_read(f"beta_temperatures[{i}]", v, "C") for i, v in enumerate(raw))
    try:
        if key in _OHMS:
            return parse_resistance(raw, where)
        if key in ("low", "high") or key.startswith("beta_temperatures["):
            return parse_quantity(raw, unit, where)
        return parse_quantity(raw, _READ_UNITS.get(key, ""), where)
    except UnitError as exc:
        if key == "excitation":
            raise DesignError(f'{where}: {raw!r} is not allowed; give "positive", "reference" or a voltage') \
                from None
        raise DesignError(str(exc)) from None


def front_end_from_dict(data: Any) -> FrontEnd | None:
    """Build a front end from its design-file section; DesignError names the key at fault."""
    if data is None:
        return None
    if not isinstance(data, dict):
        raise DesignError('front_end: must be an object such as {"kind": "divider", "top": R, "bottom": R}; '
                          f"kinds: {', '.join(_CLASSES)}")
    kind = data.get("kind")
    if kind not in _CLASSES:
        raise DesignError(f"front_end.kind: {kind!r} is not a front-end kind; allowed: {', '.join(_CLASSES)}")
    cls = _CLASSES[kind]
    allowed = ("kind",) + tuple(f.name for f in fields(cls))
    required = ("kind",) + tuple(f.name for f in fields(cls) if f.default is MISSING)
    section(data, "front_end", allowed, required)
    unit = cls.unit if isinstance(getattr(cls, "unit", None), str) else ""
    return cls(**{k: _read(k, v, unit) for k, v in data.items() if k != "kind" and v is not None})


def front_end_tolerances(front_end: FrontEnd | DirectInput) -> dict[str, tuple[float, float, str]]:
    """The front end's own tolerances: for each varied parameter (by name) its least and greatest
    value and where they come from ("1 %", "+/-10 mV"): a thermistor's R25 and Beta, a linear
    sensor's offset and span."""
    out: dict[str, tuple[float, float, str]] = {}

    def relative(key: str, nominal: float, percent: float | None) -> None:
        if percent:
            half = abs(nominal) * percent / 100.0
            out[key] = (nominal - half, nominal + half, f"{percent:g} %")

    if isinstance(front_end, ThermistorFrontEnd):
        relative("front_end.r25", front_end.nominal_r25, front_end.r25_tolerance)
        if front_end.beta is not None:
            relative("front_end.beta", front_end.beta, front_end.beta_tolerance)
    elif isinstance(front_end, LinearFrontEnd):
        if front_end.offset_tolerance:
            half = front_end.offset_tolerance
            out["front_end.offset"] = (front_end.offset - half, front_end.offset + half, f"+/-{half:g} V")
        relative("front_end.volts_per_unit", front_end.volts_per_unit, front_end.span_tolerance)
    return out
