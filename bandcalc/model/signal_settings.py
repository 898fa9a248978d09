"""The design's signal settings: the noise and hum the signal brings, how fast it moves through the
points, and what the designer asks of the stage against them.

The design file's optional ``signal`` section::

    "signal": {"noise": 0.02, "noise_bandwidth": "1k", "hum": 0.005, "hum_frequency": 50,
               "hum_harmonics": {"3": 0.001}, "slope": 0.5, "crossings_per_second": 0.001,
               "false_edges_per_year": 1, "delay_budget": 0.5}

Amounts of the signal (``noise`` RMS, ``hum`` and its harmonics peak, ``slope`` per second) are in
the design's unit (:attr:`~bandcalc.model.design.Design.unit`: volts, or a front end's watched
quantity); the rest in SI units.  Every key is optional; the signal check and the false-edge
prediction (:mod:`bandcalc.signal_check.noise`) read them.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any

from bandcalc.errors import DesignError
from bandcalc.model.units import UnitError, parse_quantity
from bandcalc.model.validation import AMOUNT, DELAY, HERTZ, PER_YEAR, not_negative, positive, section, within

__all__ = ["HUM_MAINS", "SignalSettings", "signal_settings_from_dict", "signal_settings_to_dict"]

HUM_MAINS = (50.0, 60.0)
"""Mains frequencies (Hz) a hum may have."""

# key -> unit symbol accepted after an SI prefix ("" for the design's own unit: no symbol)
_UNITS = {"noise": "", "noise_bandwidth": "Hz", "hum": "", "hum_frequency": "Hz", "slope": "",
          "crossings_per_second": "", "false_edges_per_year": "", "delay_budget": "s"}


@dataclass(frozen=True)
class SignalSettings:
    """What the signal brings and what is asked of the stage; ``None`` where not given."""

    noise: float | None = None
    noise_bandwidth: float | None = None
    hum: float | None = None
    hum_frequency: float = 50.0
    hum_harmonics: tuple[tuple[int, float], ...] = ()
    slope: float | None = None
    crossings_per_second: float | None = None
    false_edges_per_year: float | None = None
    delay_budget: float | None = None

    def __post_init__(self) -> None:
        for key in ("noise", "hum"):
            if getattr(self, key) is not None:
                within(getattr(self, key), f"signal.{key}", 0.0, AMOUNT, "")
        if self.noise_bandwidth is not None:
            positive(self.noise_bandwidth, "signal.noise_bandwidth")
            within(self.noise_bandwidth, "signal.noise_bandwidth", 0.0, HERTZ, "Hz")
        if self.slope is not None:
            positive(self.slope, "signal.slope")
            within(self.slope, "signal.slope", 0.0, AMOUNT * HERTZ, "")
        if self.crossings_per_second is not None:
            within(self.crossings_per_second, "signal.crossings_per_second", 0.0, HERTZ, "")
        if self.false_edges_per_year is not None:
            within(self.false_edges_per_year, "signal.false_edges_per_year", 0.0, PER_YEAR, "")
        if self.delay_budget is not None:  # in seconds, not kiloseconds, in the message
            not_negative(self.delay_budget, "signal.delay_budget")
            if self.delay_budget > DELAY:
                raise DesignError(f"signal.delay_budget: must be from 0 s to {DELAY:g} s (an hour), "
                                  f"got {self.delay_budget:g} s")
        if self.hum_frequency not in HUM_MAINS:
            raise DesignError(f"signal.hum_frequency: {self.hum_frequency!r} Hz is not a mains frequency; "
                              "allowed: 50, 60")
        for order, amplitude in self.hum_harmonics:
            within(amplitude, f"signal.hum_harmonics.{order}", 0.0, AMOUNT, "")

def _harmonics_from(data: Any) -> tuple[tuple[int, float], ...]:
    if not isinstance(data, dict):
        raise DesignError('signal.hum_harmonics: must be an object of order to amplitude, e.g. {"3": 0.001}')
    out = []
    for key, raw in data.items():
        where = f"signal.hum_harmonics.{key}"
        if not (isinstance(key, str) and key.isdigit() and 2 <= int(key) <= 40):
            raise DesignError(f"{where}: a harmonic order is a whole number from 2 to 40")
        try:
            out.append((int(key), parse_quantity(raw, "", where)))
        except UnitError as exc:
            raise DesignError(str(exc)) from None
    return tuple(sorted(out))


def signal_settings_from_dict(data: Any) -> SignalSettings:
    """The ``signal`` section read and checked; errors name the key."""
    allowed = tuple(f.name for f in fields(SignalSettings))
    data = section(data, "signal", allowed)
    values: dict[str, Any] = {}
    for key, raw in data.items():
        if key == "hum_harmonics":
            values[key] = _harmonics_from(raw)
            continue
        if raw is None:
            continue
        try:
            values[key] = parse_quantity(raw, _UNITS[key], f"signal.{key}")
        except UnitError as exc:
            raise DesignError(str(exc)) from None
    return SignalSettings(**values)


def signal_settings_to_dict(settings: SignalSettings) -> dict:
    """The design-file shape of the settings (keys not given left out)."""
    out: dict[str, Any] = {}
    for f in fields(settings):
        value = getattr(settings, f.name)
        if f.name == "hum_harmonics":
            if value:
                out[f.name] = {str(k): a for k, a in value}
        elif value is not None and not (f.name == "hum_frequency" and value == 50.0):
            out[f.name] = value
    return out
