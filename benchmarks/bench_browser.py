"""Benchmark: bandcalc's page in a real browser against a bare page, side by side in one run.

Run:  python benchmarks/bench_browser.py [rounds] [--elements N]

Starts two servers the same way (``python -m streamlit run`` with the page's own settings, from
this checkout, on two free ports on 127.0.0.1): bandcalc's design sheet (``app.py``) and a bare
page with one slider and one Plotly chart (``benchmarks/bare_page.py``).  Debian's Chromium,
driven by Playwright, then takes turns between the two pages, each round in alternating order:

- first paint: from navigation to the first Plotly chart drawn with its traces, in a new tab of
  a warm browser (the browser's time since the navigation started).  bandcalc draws its results
  first and the controls and panels in a second run (bandcalc.page.opening); so that the rest
  stays in view, the same navigation is also timed to bandcalc's page drawn whole ("whole page
  opened": its last element, the quick curve's figures, in the page and no element still shown as
  a placeholder while its code loads), against the bare page's
  first paint;
- slider keypress: one ArrowRight on the sidebar's slider (bandcalc's feedback resistor, the bare
  page's gain) to the chart drawn anew, each press a value not seen before (nothing cached).
  bandcalc's chart follows in the browser from figures sent ahead (bandcalc.page.quick_curve);
  so the round trip stays in view, the same press is also timed to bandcalc's figures above
  the chart showing the new design ("whole page"), against the bare page's chart.

Prints the medians and their ratios (bandcalc / bare).  Goal: both ratios at most 1.2.  With
``--elements N`` two more pages join the rounds: the bare page with N plain elements more (text
boxes and captions that never change), rerun whole on each slider move, and the same page with
its slider and chart in a fragment, so that a move reruns just them, as bandcalc's moves rerun
only the parts that follow the design.  Their ratios to the bare page are what Streamlit's own
drawing of N more elements costs on this machine, rerun and not rerun.  Needs /usr/bin/chromium
and Playwright for Python; browsers are never downloaded.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from contextlib import AbstractContextManager, ExitStack
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # this checkout's bandcalc, in this script and in both servers
sys.path.insert(0, str(ROOT / "tests"))

from serving import free_port, serving  # noqa: E402

from bandcalc.cli.page_server import streamlit_arguments  # noqa: E402

CHROMIUM = Path("/usr/bin/chromium")
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]
GOAL = 1.2
WAIT_MS = 60_000
VIEWPORT = {"width": 1440, "height": 900}
# The first chart's drawing: every path and text of its SVG, to see when it is drawn anew.
_CHART = """() => {
  const plot = document.querySelector('.js-plotly-plot');
  if (!plot || !plot.querySelector('.scatterlayer .trace')) return null;
  return Array.from(plot.querySelectorAll('path, text'),
                    e => e.getAttribute('d') || e.textContent).join('|');
}"""
# Streamlit draws an element whose code is still loading (a slider, at first) as a grey placeholder.
_SKELETON = "[data-testid='stSkeleton']"
_DRAWN = f"() => ({_CHART})() !== null ? performance.now() : false"
_REDRAWN = f"""before => {{
  const now = ({_CHART})();
  return now !== null && now !== before ? performance.now() - window.__pressed : false;
}}"""
# The first figure's value (bandcalc's upper switching point): when it changes, the round trip is done.
_FIGURE = "() => document.querySelector(\"[data-testid='stMetricValue']\")?.textContent ?? null"
_REFIGURED = f"""before => {{
  const now = ({_FIGURE})();
  return now !== before ? performance.now() - window.__pressed : false;
}}"""
_MARK_PRESS = """() => document.addEventListener('keydown', () => { window.__pressed = performance.now(); },
                                                 {capture: true})"""


@dataclass(frozen=True)
class Target:
    """A page under test: its script, the name of its slider, its server's environment."""

    name: str
    script: str
    slider: str
    env: tuple[tuple[str, str], ...] = ()
    whole: str | None = None  # CSS selector of the element the page draws last, if not the chart


@dataclass
class Timings:
    first_paint: list[float] = field(default_factory=list)  # ms
    opened: list[float] = field(default_factory=list)  # ms, to the page drawn whole (bandcalc only)
    keypress: list[float] = field(default_factory=list)  # ms
    whole_page: list[float] = field(default_factory=list)  # ms, to the figures changed (bandcalc only)


OURS = Target("bandcalc", "app.py", "Feedback resistor", whole=".st-key-quick-curve")
BARE = Target("bare page", "benchmarks/bare_page.py", "Gain")


def padded(elements: int, fragment: bool = False) -> Target:
    """The bare page with ``elements`` plain elements more; with ``fragment``, its slider and chart
    a fragment of their own."""
    name = f"bare page + {elements} elements{', fragment' if fragment else ''}"
    return Target(name, BARE.script, BARE.slider,
                  (("BARE_PAGE_ELEMENTS", str(elements)), ("BARE_PAGE_FRAGMENT", "1" if fragment else "0")))


def _served(target: Target) -> AbstractContextManager[str]:
    """``python -m streamlit run`` of the target's script with the page's settings on a free port
    (the tests' own server starter); its address."""
    port = free_port()
    return serving([sys.executable, "-m", "streamlit", *streamlit_arguments(target.script, port)], port, ROOT,
                   {**os.environ, "PYTHONPATH": str(ROOT), **dict(target.env)})


def _whole(target: Target) -> str:
    """A function for the page: the time once the page is drawn whole, else false."""
    if target.whole is None:
        return _DRAWN
    return (f"() => document.querySelector({target.whole!r}) && !document.querySelector({_SKELETON!r})"
            f" && ({_DRAWN})()")


def _settle(page, target: Target) -> None:
    """Wait until the page is drawn whole, its chart too, and its script's run has ended."""
    page.wait_for_function(_whole(target), polling="raf", timeout=WAIT_MS)
    page.wait_for_function("() => document.querySelector(\"[data-testid='stApp']\")"
                           "?.getAttribute('data-test-script-state') === 'notRunning'", timeout=WAIT_MS)
    time.sleep(0.3)


def _first_paint(context, url: str, target: Target) -> tuple[float, float]:
    """ms from navigation to the first chart drawn, in a new tab, and to the page drawn whole."""
    page = context.new_page()
    try:
        page.goto(url, wait_until="commit")
        drawn = float(page.wait_for_function(_DRAWN, polling="raf", timeout=WAIT_MS).json_value())
        whole = page.wait_for_function(_whole(target), polling="raf", timeout=WAIT_MS)
        return drawn, float(whole.json_value())
    finally:
        _settle(page, target)
        page.close()


def _keypress(page, target: Target) -> tuple[float, float]:
    """ms from an ArrowRight on the slider to the chart drawn anew, and to the first figure changed
    (the chart again where the page has no figures)."""
    _settle(page, target)
    before, figure = page.evaluate(_CHART), page.evaluate(_FIGURE)
    page.get_by_role("slider", name=target.slider).focus()
    page.keyboard.press("ArrowRight")
    chart = float(page.wait_for_function(_REDRAWN, arg=before, polling="raf", timeout=WAIT_MS).json_value())
    if figure is None:
        return chart, chart
    whole = page.wait_for_function(_REFIGURED, arg=figure, polling="raf", timeout=WAIT_MS)
    return chart, float(whole.json_value())


def measure(targets: tuple[Target, ...], rounds: int) -> dict[str, Timings]:
    """Both timings of each target, ``rounds`` times, the targets taking turns in an order that
    turns round each round."""
    from playwright.sync_api import sync_playwright

    timings = {t.name: Timings() for t in targets}
    with ExitStack() as stack:
        urls = {t.name: stack.enter_context(_served(t)) for t in targets}
        p = stack.enter_context(sync_playwright())
        browser = p.chromium.launch(executable_path=str(CHROMIUM), args=FLAGS)
        stack.callback(browser.close)
        contexts, pages = {}, {}
        for t in targets:  # a warm-up visit each: servers' first run, the browser's cache
            contexts[t.name] = browser.new_context(viewport=VIEWPORT)
            _first_paint(contexts[t.name], urls[t.name], t)
            pages[t.name] = contexts[t.name].new_page()
            pages[t.name].goto(urls[t.name])
            pages[t.name].evaluate(_MARK_PRESS)
            _keypress(pages[t.name], t)
        for i in range(rounds):
            order = targets if i % 2 == 0 else targets[::-1]
            for t in order:
                drawn, whole = _first_paint(contexts[t.name], urls[t.name], t)
                timings[t.name].first_paint.append(drawn)
                timings[t.name].opened.append(whole)
            for t in order:
                chart, whole = _keypress(pages[t.name], t)
                timings[t.name].keypress.append(chart)
                timings[t.name].whole_page.append(whole)
    return timings


def _line(what: str, ours: list[float], bare: list[float], name: str = "bandcalc",
          goal: bool = True) -> float:
    ratio = statistics.median(ours) / statistics.median(bare)
    verdict = f"  {'met' if ratio <= GOAL else 'NOT met'}" if name == "bandcalc" and goal else ""
    print(f"  {what:<19}{name} median {statistics.median(ours):7.1f} ms (min {min(ours):6.1f})   "
          f"bare page median {statistics.median(bare):7.1f} ms (min {min(bare):6.1f})   "
          f"ratio {ratio:4.2f}{verdict}")
    return ratio


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("rounds", nargs="?", type=int, default=15)
    parser.add_argument("--elements", type=int, default=0, metavar="N",
                        help="also measure the bare page with N plain elements more, rerun and not rerun")
    args = parser.parse_args()
    if not CHROMIUM.exists():
        raise SystemExit("bench_browser needs Debian's chromium at /usr/bin/chromium "
                         "(apt-get install chromium)")
    more = {}
    if args.elements > 0:
        more = {padded(args.elements): "rerun with the slider",
                padded(args.elements, fragment=True): "not rerun: slider and chart a fragment"}
    targets = (OURS, BARE, *more)
    timings = measure(targets, args.rounds)
    ours, bare = timings[OURS.name], timings[BARE.name]
    print(f"bandcalc page against a bare page (one slider, one Plotly chart), Chromium, {args.rounds} rounds "
          f"interleaved, load average {os.getloadavg()[0]:.2f}; goal: ratio at most {GOAL}")
    _line("first paint", ours.first_paint, bare.first_paint)
    _line("whole page opened", ours.opened, bare.first_paint, goal=False)
    _line("slider keypress", ours.keypress, bare.keypress)
    _line("whole page", ours.whole_page, bare.keypress, goal=False)
    print("  (whole page opened: the same navigation to bandcalc's page drawn whole, controls and panels; "
          "whole page: the same press to bandcalc's figures changed, the round trip; no goal)")
    for target, what in more.items():
        print(f"Streamlit's own cost of {args.elements} more elements, unchanged, on the bare page ({what}):")
        _line("first paint", timings[target.name].first_paint, bare.first_paint, f"bare + {args.elements}")
        _line("slider keypress", timings[target.name].keypress, bare.keypress, f"bare + {args.elements}")


if __name__ == "__main__":
    main()
