"""First-order linear recursions without a per-sample loop: the RC low-pass and the two-state chain.

Both the input filter (a first-order RC low-pass ahead of the stage) and the expected state of
the stage under noise (:mod:`bandcalc.signal_check.false_edges`) are recursions of one form,

    y[0] = u[0],    y[n] = exp(-d[n]) * y[n-1] + u[n]   (n >= 1, d[n] >= 0),

solved here in blocks with numpy: within a block, y = exp(-E) * cumsum(u * exp(E)) with E the
running sum of d from the block's start, and the blocks joined by the same recursion over their
last values (one level down, so the work stays proportional to the length).  A block ends before
E would pass :data:`_BLOCK_SPAN`, so exp(E) stays inside the floating-point range; a single step
with d above :data:`_RESET` is taken as a full reset (exp(-_RESET) is below 1e-21, under the
rounding of a double).
"""

from __future__ import annotations

import math

import numpy as np

from bandcalc.errors import BandcalcError

__all__ = ["decaying_sum", "low_pass"]

_RESET = 50.0  # a step decaying by more than e^-50 (2e-22) forgets the past
_BLOCK_SPAN = 300.0  # e^300 = 2e130: inside the range of a double, with room for the inputs


def decaying_sum(decay: np.ndarray | float, u: np.ndarray) -> np.ndarray:
    """Solve y[n] = exp(-decay[n]) y[n-1] + u[n], y[0] = u[0] (``decay[0]`` is not used).

    Parameters
    ----------
    decay : numpy.ndarray or float
        Decay exponent of each step, at least 0 (a step of length dt through a time constant
        tau has decay dt / tau); one number for equal steps.
    u : numpy.ndarray
        What each step adds.

    Returns
    -------
    numpy.ndarray
        y, float64, as long as ``u``.
    """
    u = np.asarray(u, dtype=np.float64)
    n = u.size
    if n == 0:
        return u.copy()
    if np.ndim(decay) == 0:
        return _equal_steps(min(float(decay), _RESET), u)
    d = np.minimum(np.asarray(decay, dtype=np.float64), _RESET)
    top = float(d[1:].max()) if n > 1 else 0.0
    length = min(n, int(_BLOCK_SPAN / top) if top > 0 else n)
    rows = -(-n // length)
    pad = rows * length - n
    d = np.concatenate((d, np.zeros(pad))).reshape(rows, length)
    first = d[1:, 0].copy()  # the step from each block's last value into the next block
    d[:, 0] = 0.0  # each block's exponent counts from its own first sample
    e = np.cumsum(d, axis=1)
    w = np.concatenate((u, np.zeros(pad))).reshape(rows, length)
    inside = np.exp(-e) * np.cumsum(w * np.exp(e), axis=1)  # each block from rest
    if rows > 1:
        ends = decaying_sum(np.concatenate(([0.0], first + e[1:, -1])), inside[:, -1])
        inside[1:] += np.exp(-(e[1:] + first[:, None])) * ends[:-1, None]
    return inside.reshape(-1)[:n]


def _equal_steps(r: float, u: np.ndarray) -> np.ndarray:
    """:func:`decaying_sum` with every step decaying by the same ``r`` (even sampling)."""
    n = u.size
    length = min(n, int(_BLOCK_SPAN / r) if r > 0 else n)
    rows = -(-n // length)
    w = np.zeros(rows * length)
    w[:n] = u
    w = w.reshape(rows, length)
    e = r * np.arange(length)
    w *= np.exp(e)
    np.cumsum(w, axis=1, out=w)
    w *= np.exp(-e)
    if rows > 1:  # join the blocks through their last values, one level down
        ends = _equal_steps(min(r * length, _RESET), w[:, -1].copy())
        w[1:] += np.exp(-(e + r))[None, :] * ends[:-1, None]
    return w.reshape(-1)[:n]


def low_pass(t: np.ndarray, x: np.ndarray, tau: float, start: float | None = None) -> np.ndarray:
    """The samples ``x`` at times ``t`` through a first-order low-pass of time constant ``tau`` (s).

    Exact for an input that runs straight from each sample to the next (as the edge times of the
    signal check assume); the filter starts settled at ``start`` (default: the first sample, as if
    the signal had been there a long time).  ``tau`` = 0 returns the input.

    The step from sample n-1 to n, of length dt, with a = exp(-dt / tau) and the input's slope
    s = (x[n] - x[n-1]) / dt, is the RC response to a ramp (first principles):

        y[n] = a y[n-1] + x[n] - a x[n-1] - s tau (1 - a)
             = a y[n-1] + (1 - a) x[n-1] + (1 - (1 - a) tau / dt) (x[n] - x[n-1]).
    """
    if not (np.isfinite(tau) and tau >= 0.0):
        raise BandcalcError(f"the filter's time constant must be a finite number of at least 0 s, "
                            f"got {tau!r}")
    x = np.asarray(x, dtype=np.float64)
    if tau == 0.0 or x.size < 2:
        return x.copy()
    first = x[0] if start is None else float(start)
    t = np.asarray(t, dtype=np.float64)
    dt = np.diff(t)
    if dt.max() - dt.min() <= 1e-9 * dt.mean():  # even sampling: one step for all
        r = float(dt.mean()) / tau
        one_minus_a = -math.expm1(-r)
        g = r * (0.5 - r * (1.0 / 6.0 - r / 24.0)) if r < 1e-3 else 1.0 - one_minus_a / r
        u = np.empty_like(x)
        u[0] = first
        np.multiply(x[:-1], one_minus_a - g, out=u[1:])
        u[1:] += g * x[1:]
        return decaying_sum(r, u)
    r = dt / tau
    one_minus_a = -np.expm1(-r)
    # g = 1 - (1 - a) / r, by its series where r is small (the difference would lose digits).
    small = r < 1e-3
    g = np.where(small, r * (0.5 - r * (1.0 / 6.0 - r / 24.0)), 1.0 - one_minus_a / np.where(small, 1.0, r))
    u = np.empty_like(x)
    u[0] = first
    u[1:] = one_minus_a * x[:-1] + g * np.diff(x)
    return decaying_sum(np.concatenate(([0.0], r)), u)
