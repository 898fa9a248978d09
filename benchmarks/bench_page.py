"""Benchmark: the page's rerun after a resistor slider move, against a full first run.

Run:  python benchmarks/bench_page.py [moves]
Drives the page headless with Streamlit's AppTest.  The script is wrapped so that the time of
the page's own code on the server (``bandcalc.page.sheet.main``) is measured inside the run;
AppTest's round trip (widget states in, element tree out) is printed beside it.  Target: a
slider move reruns in under 100 ms on the server.  Printed side by side in one run, with the
ratio to the first run of a session, because the machines are shared and noisy.  Then the same
slider moves with each panel's tab open (the open panel reruns with the page; the spread and the
signal check only run on their buttons, so a slider move shows their prompt, not a new run).
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
    """(server seconds, AppTest round-trip seconds) of one run."""
    started = time.perf_counter()
    at.run()
    if at.exception:
        raise SystemExit(f"the page failed: {at.exception[0].message}")
    return at.session_state["bench.seconds"], time.perf_counter() - started


def _ms(seconds: list[float]) -> str:
    return (f"median {1e3 * statistics.median(seconds):6.1f} ms, min {1e3 * min(seconds):6.1f}, "
            f"max {1e3 * max(seconds):6.1f}")


def main(moves: int = 30) -> None:
    cold_server, cold_trip = _run(AppTest.from_string(WRAPPER, default_timeout=60))
    warm = [_run(AppTest.from_string(WRAPPER, default_timeout=60)) for _ in range(3)]
    at = AppTest.from_string(WRAPPER, default_timeout=60)
    _run(at)
    # Step the sump demo's feedback resistor up through E24 from 39k: a new design each move
    # (nothing cached), then back down over the same values (all cached).
    options = slider_options("E24", 39e3)
    steps = options[options.index(39e3) + 1:][:moves]
    fresh, again = [], []
    for ohms in steps:
        at.select_slider(key=SLIDER).set_value(ohms)
        fresh.append(_run(at))
    for ohms in reversed(steps[:-1]):
        at.select_slider(key=SLIDER).set_value(ohms)
        again.append(_run(at))
    print("bandcalc page: slider move against a full run (AppTest, this machine)")
    print(f"  first run of a session, cold caches  server {1e3 * cold_server:7.1f} ms, "
          f"round trip {1e3 * cold_trip:7.1f} ms")
    print(f"  first run of a session, warm caches  server {_ms([w[0] for w in warm])}")
    print(f"  slider move, new value               server {_ms([f[0] for f in fresh])}")
    print(f"                                       round trip {_ms([f[1] for f in fresh])}")
    print(f"  slider move, value seen before       server {_ms([a[0] for a in again])}")
    median = statistics.median(f[0] for f in fresh)
    print(f"  slider move / warm full run          {median / statistics.median(w[0] for w in warm):.2f}")
    print(f"  target: slider move under {TARGET_MS:.0f} ms on the server: "
          f"{'met' if 1e3 * median < TARGET_MS else 'NOT met'} (median {1e3 * median:.1f} ms)")
    # A design with a front end (sense divider): the figures and the curve in battery volts.
    solar = load_design(ROOT / "demo_data" / "solar_battery_disconnect.json")
    at = AppTest.from_string(WRAPPER, default_timeout=60)
    at.query_params[PARAM] = design_to_address(solar)
    _run(at)
    options = slider_options("E24", solar.resistors.feedback)
    watched = []
    for ohms in options[options.index(solar.resistors.feedback) + 1:][:moves]:
        at.select_slider(key=SLIDER).set_value(ohms)
        watched.append(_run(at)[0])
    print(f"  slider move, new value, front end    server {_ms(watched)}")
    print("  slider move, new value, with a panel open:")
    for panel in PANELS:
        at = AppTest.from_string(WRAPPER, default_timeout=60)
        at.session_state["page.panel"] = panel.TITLE
        _run(at)
        moved = []
        for ohms in steps[: max(5, moves // 3)]:
            at.select_slider(key=SLIDER).set_value(ohms)
            moved.append(_run(at)[0])
        panel_median = statistics.median(moved)
        print(f"    {panel.TITLE:<33}server {_ms(moved)}  "
              f"{'met' if 1e3 * panel_median < TARGET_MS else 'NOT met'}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 30)
