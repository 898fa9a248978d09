"""Benchmark: the page's rerun after a resistor slider move, against a full run of the page.

Run:  python benchmarks/bench_page.py [moves]
Drives the page headless with Streamlit's AppTest.  A slider move reruns only the parts of the
page that follow the design (``bandcalc.page.follow``); its time is AppTest's round trip (widget
states in, the callback, the parts' runs, element tree out: the server's whole work and a little
of AppTest's own).  Beside it, a full run of the page on the same design, measured the same way,
and the page's own code in a full run (``bandcalc.page.sheet.main``, timed inside the run).
Target: a slider move in under 100 ms.  Printed side by side in one run, with ratios, because
the machines are shared and noisy.  Then the same slider moves with each panel's tab open (the
open panel reruns with the parts; the spread and the signal check only run on their buttons, so
a slider move shows their prompt, not a new run).
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

from streamlit.testing.v1 import AppTest

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # this checkout's bandcalc, also inside the page's script

from bandcalc.model.design_file import load_design  # noqa: E402
from bandcalc.page.address import PARAM, design_to_address  # noqa: E402
from bandcalc.page.edit import slider_options  # noqa: E402
from bandcalc.page.panels import PANELS  # noqa: E402

TARGET_MS = 100.0
WRAPPER = f"""
import sys, time
sys.path.insert(0, {str(ROOT)!r})
import streamlit as st
from bandcalc.page.sheet import main
started = time.perf_counter()
main()
st.session_state["bench.seconds"] = time.perf_counter() - started
"""
SLIDER = "in.resistors.feedback.slider"


def _run(at: AppTest) -> tuple[float, float]:
    """(server seconds, AppTest round-trip seconds) of one full run."""
    started = time.perf_counter()
    at.run()
    if at.exception:
        raise SystemExit(f"the page failed: {at.exception[0].message}")
    if not at.title:
        raise SystemExit("expected a full run of the page")
    return at.session_state["bench.seconds"], time.perf_counter() - started


def _move(at: AppTest, ohms: float) -> float:
    """AppTest round-trip seconds of a slider move to ``ohms``, which reruns only the parts of the
    page that follow the design; the full run after it (unmeasured) brings the whole tree back."""
    at.select_slider(key=SLIDER).set_value(ohms)
    started = time.perf_counter()
    at.run()
    seconds = time.perf_counter() - started
    if at.exception:
        raise SystemExit(f"the page failed: {at.exception[0].message}")
    if at.title:
        raise SystemExit("a slider move reran the whole page")
    at.run()
    return seconds


def _ms(seconds: list[float]) -> str:
    return (f"median {1e3 * statistics.median(seconds):6.1f} ms, min {1e3 * min(seconds):6.1f}, "
            f"max {1e3 * max(seconds):6.1f}")


def main(moves: int = 30) -> None:
    cold_server, cold_trip = _run(AppTest.from_string(WRAPPER, default_timeout=60))
    warm = [_run(AppTest.from_string(WRAPPER, default_timeout=60)) for _ in range(3)]
    at = AppTest.from_string(WRAPPER, default_timeout=60)
    _run(at)
    # Step the sump demo's feedback resistor up through E24 from 39k: a new design each move
    # (nothing cached), then back down over the same values (all cached); between moves, a full
    # run of the page on the design just reached (its analysis cached), measured the same way.
    options = slider_options("E24", 39e3)
    steps = options[options.index(39e3) + 1:][:moves]
    fresh, full, again = [], [], []
    for ohms in steps:
        fresh.append(_move(at, ohms))
        full.append(_run(at))
    for ohms in reversed(steps[:-1]):
        again.append(_move(at, ohms))
    print("bandcalc page: slider move against a full run (AppTest, this machine)")
    print(f"  first run of a session, cold caches  server {1e3 * cold_server:7.1f} ms, "
          f"round trip {1e3 * cold_trip:7.1f} ms")
    print(f"  first run of a session, warm caches  server {_ms([w[0] for w in warm])}")
    print(f"  full run, design analysed before     server {_ms([f[0] for f in full])}")
    print(f"                                       round trip {_ms([f[1] for f in full])}")
    print(f"  slider move, new value               round trip {_ms(fresh)}")
    print(f"  slider move, value seen before       round trip {_ms(again)}")
    median = statistics.median(fresh)
    print(f"  slider move (new value) / full run (analysed before), round trips: "
          f"{median / statistics.median(f[1] for f in full):.2f}")
    print(f"  target: slider move under {TARGET_MS:.0f} ms: "
          f"{'met' if 1e3 * median < TARGET_MS else 'NOT met'} (median {1e3 * median:.1f} ms)")
    # A design with a front end (sense divider): the figures and the curve in battery volts.
    solar = load_design(ROOT / "demo_data" / "solar_battery_disconnect.json")
    at = AppTest.from_string(WRAPPER, default_timeout=60)
    at.query_params[PARAM] = design_to_address(solar)
    _run(at)
    options = slider_options("E24", solar.resistors.feedback)
    watched = [_move(at, ohms) for ohms in options[options.index(solar.resistors.feedback) + 1:][:moves]]
    print(f"  slider move, new value, front end    round trip {_ms(watched)}")
    print("  slider move, new value, with a panel open:")
    for panel in PANELS:
        at = AppTest.from_string(WRAPPER, default_timeout=60)
        at.session_state["page.panel"] = panel.TITLE
        _run(at)
        moved = [_move(at, ohms) for ohms in steps[: max(5, moves // 3)]]
        panel_median = statistics.median(moved)
        print(f"    {panel.TITLE:<33}round trip {_ms(moved)}  "
              f"{'met' if 1e3 * panel_median < TARGET_MS else 'NOT met'}")

if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 30)
