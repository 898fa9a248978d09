"""IEC 60063 preferred numbers: the E3 to E192 series of standard part values.

The tables are written out as data, as the standard prints them, rather than computed:
E3 to E24 depart from the rounded geometric series 10**(i/n) in several places (E24 at
2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2) and E192 has 9.20 where the series gives
9.19.

Values are in ohms. Every standard value returned here is the float nearest to its
decimal spelling, so ``4.7 kOhm`` compares exactly equal to ``4700.0`` and ``8.66 kOhm``
to ``8660.0``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from functools import cache
from types import MappingProxyType

import numpy as np
from numpy.typing import ArrayLike, NDArray

from bandcalc.errors import BandcalcError

__all__ = [
    "SERIES",
    "TOLERANCE",
    "EseriesError",
    "nearest",
    "next_above",
    "next_below",
    "series_of",
    "series_values",
]


class EseriesError(BandcalcError):
    """A series name or a value that the E-series lookups cannot use."""


_E3 = (1.0, 2.2, 4.7)

_E6 = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)

_E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)

_E24 = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)  # fmt: skip

_E48 = (
    1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69,
    1.78, 1.87, 1.96, 2.05, 2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01,
    3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42, 4.64, 4.87, 5.11, 5.36,
    5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53,
)  # fmt: skip

_E96 = (
    1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30,
    1.33, 1.37, 1.40, 1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74,
    1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21, 2.26, 2.32,
    2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
    3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
    4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49,
    5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32,
    7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76,
)  # fmt: skip

_E192 = (
    1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14,
    1.15, 1.17, 1.18, 1.20, 1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32,
    1.33, 1.35, 1.37, 1.38, 1.40, 1.42, 1.43, 1.45, 1.47, 1.49, 1.50, 1.52,
    1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69, 1.72, 1.74, 1.76,
    1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03,
    2.05, 2.08, 2.10, 2.13, 2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34,
    2.37, 2.40, 2.43, 2.46, 2.49, 2.52, 2.55, 2.58, 2.61, 2.64, 2.67, 2.71,
    2.74, 2.77, 2.80, 2.84, 2.87, 2.91, 2.94, 2.98, 3.01, 3.05, 3.09, 3.12,
    3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48, 3.52, 3.57, 3.61,
    3.65, 3.70, 3.74, 3.79, 3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17,
    4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59, 4.64, 4.70, 4.75, 4.81,
    4.87, 4.93, 4.99, 5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56,
    5.62, 5.69, 5.76, 5.83, 5.90, 5.97, 6.04, 6.12, 6.19, 6.26, 6.34, 6.42,
    6.49, 6.57, 6.65, 6.73, 6.81, 6.90, 6.98, 7.06, 7.15, 7.23, 7.32, 7.41,
    7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16, 8.25, 8.35, 8.45, 8.56,
    8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88,
)  # fmt: skip

#: Mantissas in [1, 10) of each series, coarsest first (IEC 60063).
SERIES: Mapping[str, tuple[float, ...]] = MappingProxyType(
    {
        "E3": _E3,
        "E6": _E6,
        "E12": _E12,
        "E24": _E24,
        "E48": _E48,
        "E96": _E96,
        "E192": _E192,
    }
)

#: Usual tolerance of parts sold in each series, as a fraction. E6 to E192 as commonly
#: quoted with the standard (common practice). Sources quote E3 differently (20 % or
#: more); we take 40 % as the ``eseries`` package 1.2.1 does (``eseries.tolerance``).
TOLERANCE: Mapping[str, float] = MappingProxyType(
    {
        "E3": 0.40,
        "E6": 0.20,
        "E12": 0.10,
        "E24": 0.05,
        "E48": 0.02,
        "E96": 0.01,
        "E192": 0.005,
    }
)

# Significant digits printed by the standard: two up to E24, three from E48 on.
_DIGITS: Mapping[str, int] = MappingProxyType(
    {name: 2 if len(mantissas) <= 24 else 3 for name, mantissas in SERIES.items()}
)

# Supported values: the span of the SI prefixes, yocto to yotta. The lookup table covers
# one decade more on each side so that every supported value has a neighbour both ways.
_MIN_VALUE = 1e-24
_MAX_VALUE = 1e24
_FIRST_DECADE = -25
_LAST_DECADE = 24

# A value within this relative distance of a standard value counts as that value, so the
# rounding of unit arithmetic (8.2 / 1000 * 1e6 gives 8199.999999999998) does not hide
# a standard part.
_MATCH_RTOL = 1e-9


def _canonical(name: str) -> str:
    """Return the key in SERIES for `name`, ignoring case and surrounding blanks."""
    allowed = ", ".join(SERIES)
    if not isinstance(name, str):
        raise EseriesError(
            f"series name must be text such as 'E24'; got {name!r}; allowed: {allowed}"
        )
    key = name.strip().upper()
    if key not in SERIES:
        raise EseriesError(f"unknown series {name!r}; allowed: {allowed}")
    return key


@cache
def _ladder(key: str) -> NDArray[np.float64]:
    """All values of series `key` over the supported decades, ascending and read-only.

    Each value is parsed from its decimal spelling (e.g. "866e1"), so it is the float
    nearest to the printed value and compares equal to a literal such as 8660.0.
    """
    digits = _DIGITS[key]
    codes = [round(m * 10 ** (digits - 1)) for m in SERIES[key]]
    values = [
        float(f"{code}e{decade - digits + 1}")
        for decade in range(_FIRST_DECADE, _LAST_DECADE + 1)
        for code in codes
    ]
    ladder = np.array(values, dtype=np.float64)
    ladder.flags.writeable = False
    return ladder


def _checked(
    value: ArrayLike, what: str = "value", scalar: bool = False
) -> NDArray[np.float64]:
    """Return `value` as a float array, or raise EseriesError naming the bad entry.

    Text, booleans, complex numbers and None are refused rather than coerced.
    """
    try:
        raw = np.asarray(value)
        if value is None or raw.dtype.kind not in "iufO":
            raise TypeError
        array = raw.astype(np.float64)
    except (TypeError, ValueError):
        raise EseriesError(f"{what} must be a number in ohms; got {value!r}") from None
    if scalar and array.ndim:
        raise EseriesError(f"{what} must be a single number; got shape {array.shape}")
    bad = ~np.isfinite(array) | (array <= 0)
    out = (array < _MIN_VALUE) | (array > _MAX_VALUE)
    for mask, problem in (
        (bad, "must be a positive, finite number of ohms"),
        (out, f"must lie between {_MIN_VALUE:g} and {_MAX_VALUE:g} ohm"),
    ):
        if np.any(mask):
            flat = int(np.flatnonzero(mask)[0])
            where = ""
            if array.ndim == 1:
                where = f" (at index {flat})"
            elif array.ndim > 1:
                index = tuple(int(i) for i in np.unravel_index(flat, array.shape))
                where = f" (at index {index})"
            got = float(array.flat[flat])
            raise EseriesError(f"{what} {problem}; got {got!r}{where}")
    return array


def _result(
    values: NDArray[np.float64], like: NDArray[np.float64]
) -> float | NDArray[np.float64]:
    """A plain float for a scalar query, else an array of the query's shape."""
    if like.ndim == 0:
        return float(values)
    return values.reshape(like.shape)


def series_values(name: str, low: float, high: float) -> NDArray[np.float64]:
    """Every standard value of a series between two bounds, across decades.

    Parameters
    ----------
    name : str
        Series name such as "E24" (any case).
    low, high : float
        Inclusive bounds, in ohms, with ``low <= high``.

    Returns
    -------
    numpy.ndarray
        The values in ohms, ascending; empty if none lies between the bounds.
    """
    ladder = _ladder(_canonical(name))
    lo = float(_checked(low, "low", scalar=True))
    hi = float(_checked(high, "high", scalar=True))
    if lo > hi:
        raise EseriesError(f"low ({lo:g} ohm) must not exceed high ({hi:g} ohm)")
    start = np.searchsorted(ladder, lo, side="left")
    stop = np.searchsorted(ladder, hi, side="right")
    return ladder[start:stop].copy()


def next_above(name: str, value: ArrayLike) -> float | NDArray[np.float64]:
    """The smallest standard value at or above `value`.

    Parameters
    ----------
    name : str
        Series name such as "E12" (any case).
    value : float or array_like
        Target value(s) in ohms.

    Returns
    -------
    float or numpy.ndarray
        Standard value(s) in ohms, shaped like `value`.
    """
    ladder = _ladder(_canonical(name))
    array = _checked(value)
    return _result(ladder[np.searchsorted(ladder, array, side="left")], array)


def next_below(name: str, value: ArrayLike) -> float | NDArray[np.float64]:
    """The largest standard value at or below `value`.

    Parameters
    ----------
    name : str
        Series name such as "E12" (any case).
    value : float or array_like
        Target value(s) in ohms.

    Returns
    -------
    float or numpy.ndarray
        Standard value(s) in ohms, shaped like `value`.
    """
    ladder = _ladder(_canonical(name))
    array = _checked(value)
    return _result(ladder[np.searchsorted(ladder, array, side="right") - 1], array)


def nearest(name: str, value: ArrayLike) -> float | NDArray[np.float64]:
    """The standard value closest to `value`.

    Closest means the smallest difference in ohms, which is also the smallest error
    relative to the target. An exact tie goes to the lower value.

    Parameters
    ----------
    name : str
        Series name such as "E24" (any case).
    value : float or array_like
        Target value(s) in ohms.

    Returns
    -------
    float or numpy.ndarray
        Standard value(s) in ohms, shaped like `value`.
    """
    ladder = _ladder(_canonical(name))
    array = _checked(value)
    below = ladder[np.searchsorted(ladder, array, side="right") - 1]
    above = ladder[np.searchsorted(ladder, array, side="left")]
    return _result(np.where(array - below <= above - array, below, above), array)


def series_of(value: float) -> str | None:
    """The first series, from E3 to E192, that holds `value`.

    Parameters
    ----------
    value : float
        A resistance in ohms. A value within a relative 1e-9 of a standard value
        counts as that value.

    Returns
    -------
    str or None
        The series name, or None if `value` is in no series.
    """
    target = float(_checked(value, scalar=True))
    for key in SERIES:
        if math.isclose(float(nearest(key, target)), target, rel_tol=_MATCH_RTOL):
            return key
    return None
