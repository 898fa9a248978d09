"""The standard normal distribution for numpy arrays: density, tail and distribution function.

numpy has no error function, and scipy is not a runtime dependency, so the complementary error
function comes from the Chebyshev fit ``erfcc`` of W. H. Press, S. A. Teukolsky, W. T. Vetterling
and B. P. Flannery, *Numerical Recipes in C*, 2nd ed. (1992), section 6.2: a fractional error
below 1.2e-7 everywhere (the tests compare it with scipy.special.erfc).
"""

from __future__ import annotations

import numpy as np

__all__ = ["erfc", "normal_cdf", "normal_pdf", "normal_sf"]

_SQRT_HALF = 0.7071067811865476
_INV_SQRT_2PI = 0.3989422804014327
# Numerical Recipes in C, 2nd ed., section 6.2, erfcc: the polynomial in t = 1 / (1 + z / 2).
_COEFFS = (-1.26551223, 1.00002368, 0.37409196, 0.09678418, -0.18628806,
           0.27886807, -1.13520398, 1.48851587, -0.82215223, 0.17087277)


def erfc(x: np.ndarray | float) -> np.ndarray:
    """Complementary error function, fractional error below 1.2e-7 (Numerical Recipes' erfcc)."""
    x = np.asarray(x, dtype=np.float64)
    z = np.abs(x)
    t = 1.0 / (1.0 + 0.5 * z)
    poly = np.full_like(z, _COEFFS[-1])
    for c in _COEFFS[-2::-1]:
        poly = poly * t + c
    with np.errstate(under="ignore"):
        ans = t * np.exp(-z * z + poly)
    return np.where(x >= 0.0, ans, 2.0 - ans)


def normal_pdf(z: np.ndarray | float) -> np.ndarray:
    """Standard normal density."""
    z = np.asarray(z, dtype=np.float64)
    with np.errstate(under="ignore"):
        return _INV_SQRT_2PI * np.exp(-0.5 * z * z)


def normal_sf(z: np.ndarray | float) -> np.ndarray:
    """Upper tail Q(z) = P(Z > z) of the standard normal, accurate far into the tail."""
    return 0.5 * erfc(np.asarray(z, dtype=np.float64) * _SQRT_HALF)


def normal_cdf(z: np.ndarray | float) -> np.ndarray:
    """Distribution function P(Z <= z) of the standard normal."""
    return normal_sf(-np.asarray(z, dtype=np.float64))
