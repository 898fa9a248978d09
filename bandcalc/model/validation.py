"""Checks of values a user gives, each raising an error that names the key and what is allowed.

Two families: checks of design-file values (``finite``, ``positive``, ``not_negative``,
``section``), which raise :class:`~bandcalc.errors.DesignError` naming the design-file key; and
checks of function arguments (``real``, ``whole``, ``choice``), which return the value as a plain
``float`` (or ``int``) and raise :class:`~bandcalc.errors.BandcalcError` naming the argument, the
allowed range and what was given.
"""

from __future__ import annotations

import math
from numbers import Integral, Real
from typing import Any

from bandcalc.errors import BandcalcError, DesignError

__all__ = ["choice", "finite", "not_negative", "positive", "real", "section", "whole"]


# --- design-file values -------------------------------------------------------------------------

def finite(value: float, key: str) -> None:
    """Refuse anything but a finite number (booleans included) at design-file ``key``."""
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise DesignError(f"{key}: must be a finite number, got {value!r}")


def positive(value: float, key: str) -> None:
    finite(value, key)
    if value <= 0:
        raise DesignError(f"{key}: must be greater than zero, got {value!r}")


def not_negative(value: float, key: str) -> None:
    finite(value, key)
    if value < 0:
        raise DesignError(f"{key}: must be zero or more, got {value!r}")


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
    return data


# --- function arguments ---------------------------------------------------------------------------


def _describe(low: float | None, high: float | None, low_open: bool, high_open: bool,
              unit: str) -> str:
    u = f" {unit}" if unit else ""
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
        raise BandcalcError(f"{name} must be a number{bounds}, got {value!r}")  # noqa: TRY004
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
