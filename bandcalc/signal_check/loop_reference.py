"""The switching rule written sample by sample, as plainly as possible.

Not used by the package: it is the readable definition that the vectorized
core in :mod:`bandcalc.signal_check.edges` is tested against, and the baseline its
benchmark is timed against.
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["switch_loop"]


def switch_loop(t: Sequence[float], v: Sequence[float], upper: float,
                lower: float) -> tuple[list[bool], list[tuple[int, int, float]]]:
    """Run the two-point rule one sample at a time.

    Returns
    -------
    states : list of bool
        Per sample, True in the input-high state.
    edges : list of (index, direction, time)
        Sample index after the change, +1/-1, and the instant the input
        passed the point (linear interpolation between the two samples).
    """
    def reaches_low(x: float) -> bool:
        return x < lower if upper == lower else x <= lower

    first = v[0]
    if first >= upper:
        high = True
    elif reaches_low(first):
        high = False
    else:
        high = first >= (upper + lower) / 2
    states = [high]
    edges = []
    for k in range(1, len(v)):
        x = v[k]
        if not high and x >= upper:
            high = True
            point, direction = upper, 1
        elif high and reaches_low(x):
            high = False
            point, direction = lower, -1
        else:
            states.append(high)
            continue
        frac = (point - v[k - 1]) / (x - v[k - 1])
        edges.append((k, direction, t[k - 1] + frac * (t[k] - t[k - 1])))
        states.append(high)
    return states, edges
