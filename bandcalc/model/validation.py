"""Checks of values a user gives, each raising an error that names the key and what is allowed.

Two families: checks of design-file values (``finite``, ``positive``, ``not_negative``, ``within``,
``resistance``, ``voltage``, ``text``, ``section``), which raise
:class:`~bandcalc.errors.DesignError` naming the design-file key; and checks of function arguments
(``real``, ``whole``, ``choice``), which return the value as a plain ``float`` (or ``int``) and
raise :class:`~bandcalc.errors.BandcalcError` naming the argument, the allowed range and what was
given.

A design-file value must also be one a real part has: the bounds below refuse a typo such as
1e23 for 1e3 when the design is built, before it overflows the model.  They are generous on
purpose; each is common practice.
"""

from __future__ import annotations

import math
import re
from numbers import Integral, Real
from typing import Any

from bandcalc.errors import BandcalcError, DesignError, shown
from bandcalc.model.units import SI_UNITS, format_si, symbol

__all__ = [
    "AMOUNT",
    "AMPS",
    "CELSIUS",
    "DELAY",
    "FARADS",
    "HERTZ",
    "LONE_SURROGATE",
    "OHMS",
    "PER_YEAR",
    "SECONDS",
    "SLEW_RATE",
    "VOLTS",
    "choice",
    "finite",
    "not_negative",
    "positive",
    "real",
    "resistance",
    "section",
    "text",
    "voltage",
    "whole",
    "within",
]

# --- plausible magnitudes (common practice; generous on purpose) ----------------------------------

#: Resistances, ohms: from a milliohm current shunt to a teraohm (the largest resistors sold are of
#: the order of 100 GOhm to 1 TOhm).
OHMS = (1e-3, 1e12)
#: Voltages, +/- volts: a comparator stage runs on a few to some hundreds of volts and a sense
#: divider watches at most some kilovolts; 100 kV is beyond any of them.
VOLTS = 100e3
#: Currents, +/- amperes: comparator bias currents run from picoamperes to microamperes.
AMPS = 1.0
#: Times, seconds: comparators switch in nanoseconds to milliseconds.
SECONDS = 1.0
#: A delay a designer accepts, seconds: a slow watched quantity (a tank, a room) may be given
#: minutes to answer; an hour is beyond any stage's budget.
DELAY = 3600.0
#: Capacitances, farads: an output drives picofarads to nanofarads of load.
FARADS = 1e-3
#: Temperatures, degrees Celsius: above absolute zero, and no circuit board survives beyond some
#: hundreds of degrees (high-temperature parts are rated to about 200 to 225 C).
CELSIUS = (-273.15, 500.0)
#: Slew rates, volts per second: op-amps slew from some mV/us (micropower parts) to some kV/us
#: (the fastest); 1 V/s to 1 TV/s holds them all.
SLEW_RATE = (1.0, 1e12)
#: Frequencies and rates, per second: a comparator stage's signal, its noise bandwidth and how
#: often it crosses the points stay far below 1 GHz.
HERTZ = 1e9
#: An amount of the signal in the design's unit (volts, or a front end's watched quantity: C, kPa,
#: a measured voltage): noise, hum, a slope per second; no stage watches a span near a million.
AMOUNT = 1e6
#: A count per year (false edges a designer accepts): even one edge per nanosecond is 3e16 a year.
PER_YEAR = 1e18


# --- design-file values -------------------------------------------------------------------------

def finite(value: float, key: str) -> None:
    """Refuse anything but a finite number (booleans included) at design-file ``key``."""
    if type(value) is float and value - value == 0.0:  # the usual case, quickly: finite floats
        return
    if not isinstance(value, (int, float)) or isinstance(value, bool):
        raise DesignError(f"{key}: must be a finite number, got {shown(value)}")
    try:
        ok = math.isfinite(value)
    except OverflowError:  # an integer beyond any float
        ok = False
    if not ok:
        raise DesignError(f"{key}: must be a finite number, got {shown(value)}")


def positive(value: float, key: str) -> None:
    finite(value, key)
    if value <= 0:
        raise DesignError(f"{key}: must be greater than zero, got {value!r}")


def not_negative(value: float, key: str) -> None:
    finite(value, key)
    if value < 0:
        raise DesignError(f"{key}: must be zero or more, got {value!r}")


def within(value: float, key: str, low: float, high: float, unit: str) -> None:
    """A finite number from ``low`` to ``high`` (``unit``, shown with the bounds)."""
    finite(value, key)
    if not low <= value <= high:
        raise DesignError(f"{key}: must be from {_bound(low, unit)} to {_bound(high, unit)}, "
                          f"got {value:g}{unit and ' ' + symbol(unit)}")


def _bound(x: float, unit: str) -> str:
    """A bound as a message states it: "1 mΩ", "100 kV"; "20000 K", "-273.15 °C" without a prefix."""
    return format_si(x, unit) if unit in SI_UNITS else f"{x:g} {symbol(unit)}".strip()


def resistance(value: float, key: str, *, zero: bool = False) -> None:
    """A resistance a part has (:data:`OHMS`); ``zero`` allows 0 (a source's or sensor's own)."""
    (not_negative if zero else positive)(value, key)
    within(value, key, 0.0 if zero else OHMS[0], OHMS[1], "Ohm")


def voltage(value: float, key: str, *, low: float = -VOLTS) -> None:
    """A voltage within +/- :data:`VOLTS` (``low=0`` for a drop or an excitation)."""
    within(value, key, low, VOLTS, "V")


#: A surrogate code point: alone in a str it is no character, and has no UTF-8 form.
LONE_SURROGATE = re.compile("[\ud800-\udfff]")


def text(value: Any, key: str) -> None:
    """Text that can be shown and saved: a ``str`` without lone surrogates."""
    if not isinstance(value, str):
        raise DesignError(f"{key}: must be text")
    bad = LONE_SURROGATE.search(value)
    if bad:
        raise DesignError(f"{key}: holds a lone surrogate ({shown(bad.group())} at character "
                          f"{bad.start() + 1}), which is no character and cannot be shown or saved; "
                          "write the text again")


def section(data: Any, key: str, allowed: tuple[str, ...], required: tuple[str, ...] = ()) -> dict:
    """A design-file object at ``key`` with only ``allowed`` keys and every ``required`` one."""
    if not isinstance(data, dict):
        raise DesignError(f"{key}: must be an object with keys {', '.join(allowed)}")
    unknown = [k for k in data if k not in allowed]
    if unknown:
        raise DesignError(f"{key}.{unknown[0]}: unknown key; allowed: {', '.join(allowed)}")
    missing = [k for k in required if k not in data]
    if missing:
        raise DesignError(f"{key}.{missing[0]}: missing; required: {', '.join(required)}")
    nulls = [k for k in required if data[k] is None]
    if nulls:
        raise DesignError(f"{key}.{nulls[0]}: required, got null; required: {', '.join(required)}")
    return data


# --- function arguments ---------------------------------------------------------------------------


def _describe(low: float | None, high: float | None, low_open: bool, high_open: bool,
              unit: str) -> str:
    u = f" {symbol(unit)}" if unit else ""
    if low is not None and high is not None:
        left = "above" if low_open else "at least"
        right = "below" if high_open else "at most"
        return f"{left} {low:g}{u} and {right} {high:g}{u}"
    if low is not None:
        return f"{'greater than' if low_open else 'at least'} {low:g}{u}"
    if high is not None:
        return f"{'less than' if high_open else 'at most'} {high:g}{u}"
    return ""


def real(name: str, value: object, *, low: float | None = None, high: float | None = None,
         low_open: bool = False, high_open: bool = False, unit: str = "") -> float:
    """Return ``value`` as a finite float inside the given bounds.

    Parameters
    ----------
    name : str
        Argument name used in the message.
    value : object
        The value to check; booleans and non-numbers are refused.
    low, high : float, optional
        Bounds; ``low_open``/``high_open`` make them exclusive.
    unit : str
        Unit shown with the bounds, e.g. ``"Hz"``.
    """
    allowed = _describe(low, high, low_open, high_open, unit)
    bounds = f" {allowed}" if allowed else ""
    if isinstance(value, bool) or not isinstance(value, Real):
        # Not TypeError: every bad input of bandcalc is a BandcalcError (a ValueError).
        raise BandcalcError(f"{name} must be a number{bounds}, got {shown(value)}")  # noqa: TRY004
    x = float(value)
    if not math.isfinite(x):
        raise BandcalcError(f"{name} must be a finite number{bounds}, got {x!r}")
    too_low = low is not None and (x <= low if low_open else x < low)
    too_high = high is not None and (x >= high if high_open else x > high)
    if too_low or too_high:
        raise BandcalcError(f"{name} must be {allowed}, got {x:g}")
    return x


def whole(name: str, value: object, *, low: int = 0) -> int:
    """Return ``value`` as an int of at least ``low``; booleans are refused."""
    if isinstance(value, bool) or not isinstance(value, Integral) or value < low:
        raise BandcalcError(f"{name} must be a whole number of at least {low}, got {value!r}")
    return int(value)


def choice(name: str, value: object, allowed: tuple) -> object:
    """Return ``value`` if it is one of ``allowed``, else raise naming the choices."""
    if value not in allowed:
        names = ", ".join(repr(a) for a in allowed)
        raise BandcalcError(f"{name} must be one of {names}, got {value!r}")
    return value
