"""Argument checks shared by the signal modules.

Each check returns the value as a plain ``float`` (or ``int``) and raises a
``ValueError`` that names the argument, the allowed range and what was given.
"""

from __future__ import annotations

import math
from numbers import Integral, Real

__all__ = ["choice", "real", "whole"]


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
    return "a finite number"


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
    if isinstance(value, bool) or not isinstance(value, Real):
        # ValueError, not TypeError: every bad input of bandcalc is a ValueError.
        raise ValueError(f"{name} must be a number {allowed}, got {value!r}")  # noqa: TRY004
    x = float(value)
    if not math.isfinite(x):
        raise ValueError(f"{name} must be a finite number {allowed}, got {x!r}")
    too_low = low is not None and (x <= low if low_open else x < low)
    too_high = high is not None and (x >= high if high_open else x > high)
    if too_low or too_high:
        raise ValueError(f"{name} must be {allowed}, got {x:g}")
    return x


def whole(name: str, value: object, *, low: int = 0) -> int:
    """Return ``value`` as an int of at least ``low``; booleans are refused."""
    if isinstance(value, bool) or not isinstance(value, Integral) or value < low:
        raise ValueError(f"{name} must be a whole number of at least {low}, got {value!r}")
    return int(value)


def choice(name: str, value: object, allowed: tuple) -> object:
    """Return ``value`` if it is one of ``allowed``, else raise naming the choices."""
    if value not in allowed:
        names = ", ".join(repr(a) for a in allowed)
        raise ValueError(f"{name} must be one of {names}, got {value!r}")
    return value
