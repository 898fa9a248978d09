"""The benchmarks' shared timer: best of several runs, as wall time."""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any


def best_of(fn: Callable[[], Any], repeats: int) -> float:
    """Shortest wall time (s) of ``repeats`` calls of ``fn()``; the least disturbed by other load."""
    return timed(fn, repeats)[0]


def timed(fn: Callable[[], Any], repeats: int) -> tuple[float, Any]:
    """Shortest wall time (s) of ``repeats`` calls of ``fn()`` and the last call's result."""
    best, out = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - start)
    return best, out


def best_cpu_of(fn: Callable[[], Any], repeats: int) -> float:
    """Shortest processor time (s) this process spent in ``repeats`` calls of ``fn()``: on a machine
    shared with other work, closer than wall time to what the call costs on an idle one."""
    best = float("inf")
    for _ in range(repeats):
        start = time.process_time()
        fn()
        best = min(best, time.process_time() - start)
    return best
