"""NTC thermistor physics: the Beta model and the Steinhart-Hart equation, and one from the other.

Temperatures in kelvin, resistances in ohms; every function takes numpy arrays.

- Beta model: R(T) = R25 exp(B (1/T - 1/298.15 K)), with B measured between two stated
  temperatures (thermistor data sheets state B25/50 or B25/85).
- Steinhart-Hart: 1/T = A + B ln R + C (ln R)^3 (J. S. Steinhart and S. R. Hart, "Calibration
  curves for thermistors", Deep-Sea Research 15, 1968).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "BETA_PAIR_KELVIN",
    "KELVIN_AT_0C",
    "KELVIN_AT_25C",
    "beta_between",
    "beta_resistance",
    "beta_temperature",
    "beta_to_steinhart_hart",
    "steinhart_hart_resistance",
    "steinhart_hart_temperature",
]

ArrayLike = float | np.ndarray

KELVIN_AT_0C = 273.15
KELVIN_AT_25C = 298.15
# A Beta is commonly stated between 25 C and 50 C on NTC data sheets (B25/50, common practice).
BETA_PAIR_KELVIN = (KELVIN_AT_25C, KELVIN_AT_25C + 25.0)


def beta_resistance(r25: ArrayLike, beta: ArrayLike, kelvin: ArrayLike) -> ArrayLike:
    """Beta model: R(T) = R25 exp(B (1/T - 1/298.15 K)), ohms."""
    return r25 * np.exp(beta * (1.0 / np.asarray(kelvin, dtype=float) - 1.0 / KELVIN_AT_25C))


def beta_temperature(r25: ArrayLike, beta: ArrayLike, ohms: ArrayLike) -> ArrayLike:
    """Inverse of :func:`beta_resistance`: temperature in kelvin (NaN where there is none)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        inverse = 1.0 / KELVIN_AT_25C + np.log(np.asarray(ohms, dtype=float) / r25) / beta
        return np.where(inverse > 0, 1.0 / inverse, np.nan)


def steinhart_hart_temperature(coefficients: tuple[float, float, float], ohms: ArrayLike) -> ArrayLike:
    """Steinhart-Hart: 1/T = A + B ln R + C (ln R)^3; temperature in kelvin."""
    a, b, c = coefficients
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.log(np.asarray(ohms, dtype=float))
        inverse = a + b * y + c * y**3
        return np.where(inverse > 0, 1.0 / inverse, np.nan)


def steinhart_hart_resistance(coefficients: tuple[float, float, float], kelvin: ArrayLike) -> ArrayLike:
    """Inverse of :func:`steinhart_hart_temperature`: resistance in ohms at ``kelvin``.

    Solves C y^3 + B y + (A - 1/T) = 0 for y = ln R by Cardano's formula (one real root for
    B > 0, C >= 0), then one Newton step to recover the digits the formula loses.
    """
    a, b, c = coefficients
    g = a - 1.0 / np.asarray(kelvin, dtype=float)
    if c == 0:
        return np.exp(-g / b)
    p, q = b / c, g / c
    root = np.sqrt(0.25 * q * q + p**3 / 27.0)
    y = np.cbrt(-0.5 * q + root) + np.cbrt(-0.5 * q - root)
    y = y - (c * y**3 + b * y + g) / (3.0 * c * y * y + b)
    return np.exp(y)


def beta_to_steinhart_hart(r25: float, beta: float) -> tuple[float, float, float]:
    """The Steinhart-Hart coefficients of a Beta curve, exactly: A = 1/298.15 K - ln(R25)/B, 1/B, 0."""
    return (1.0 / KELVIN_AT_25C - math.log(r25) / beta, 1.0 / beta, 0.0)


def beta_between(coefficients: tuple[float, float, float],
                 kelvin: tuple[float, float] = BETA_PAIR_KELVIN) -> float:
    """The Beta of a Steinhart-Hart curve between two temperatures (default 25 C and 50 C):
    B = ln(R1 / R2) / (1/T1 - 1/T2)."""
    r1, r2 = (float(steinhart_hart_resistance(coefficients, k)) for k in kelvin)
    return math.log(r1 / r2) / (1.0 / kelvin[0] - 1.0 / kelvin[1])
