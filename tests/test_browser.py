"""The page in a real browser: Playwright for Python driving Debian's Chromium.

Starts ``streamlit run app.py`` on a free port on 127.0.0.1, then loads the page, moves a
resistor slider with the keyboard, checks that the switching-point figures and the chart
change, saves the design file, downloads the design summary (Markdown) and reads it back,
downloads the netlist beside it, and reloads to find the same design in the address.  A second
test edits a tolerance in the spread panel (which reruns on its own, as a fragment) and runs the
spread; a third stops a long fit with its Stop button.  Others reload designs as long as the page
address takes, and check that longer ones are refused before a reload could lose them.  Skipped,
with the reason, where /usr/bin/chromium or Playwright is absent; browsers are never downloaded.
"""

from __future__ import annotations

import json
import os
import socket
import sys
import time
from dataclasses import replace
from pathlib import Path
from urllib.parse import parse_qs, urlencode, urlsplit

import pytest
from page_helpers import prose
from serving import free_port, serving

from bandcalc import __version__
from bandcalc.demos import load_demo
from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.model.design_file import design_from_json, design_to_json
from bandcalc.model.operating import analyze
from bandcalc.model.parts import with_value
from bandcalc.model.units import format_code, format_si
from bandcalc.outputs.netlist import netlist
from bandcalc.outputs.summary import design_from_summary
from bandcalc.page.address import ADDRESS_MAX, PARAM, address_to_design, design_to_address
from bandcalc.page.panels import PANELS

pytestmark = pytest.mark.browser

ROOT = Path(__file__).parent.parent
CHROMIUM = Path("/usr/bin/chromium")
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]
SUMP = load_demo("sump_level_switch")  # the page's default demo

if not CHROMIUM.exists():
    pytest.skip("browser tests need Debian's chromium at /usr/bin/chromium (apt-get install chromium)",
                allow_module_level=True)
sync_api = pytest.importorskip("playwright.sync_api",
                               reason="browser tests need Playwright for Python (pip install playwright)")


@pytest.fixture(scope="module")
def server():
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    port = free_port()
    with serving([sys.executable, "-m", "streamlit", "run", "app.py", "--server.port", str(port),
                  "--server.headless", "true", "--server.address", "127.0.0.1"], port, ROOT, env) as url:
        yield url


@pytest.fixture(scope="module")
def browser():
    with sync_api.sync_playwright() as p:
        chromium = p.chromium.launch(executable_path=str(CHROMIUM), args=FLAGS)
        yield chromium
        chromium.close()


def metrics(page) -> list[str]:
    return page.locator("[data-testid='stMetricValue']").all_inner_texts()


def chart_labels(page) -> list[str]:
    return page.locator(".js-plotly-plot").first.evaluate(
        "el => Array.from(el.querySelectorAll('text')).map(t => t.textContent)")


def address(page) -> str:
    """The page's address as the browser has it now (``page.url`` is only updated while Playwright
    handles events, which a plain polling loop does not give it)."""
    return page.evaluate("() => window.location.href")


def design_in_address(url: str):
    values = parse_qs(urlsplit(url).query).get(PARAM)
    return address_to_design(values[0]) if values else None


def feedback_in_address(url: str) -> float | None:
    design = design_in_address(url)
    return None if design is None else design.resistors.feedback


def wait_for(condition, what: str, timeout: float = 20.0) -> None:
    deadline = time.monotonic() + timeout
    while not condition():
        if time.monotonic() > deadline:
            pytest.fail(f"timed out waiting for {what}")
        time.sleep(0.2)


def settle(page) -> None:
    """Wait until the page's script has finished its run (Streamlit marks the app element)."""
    time.sleep(0.3)
    app = page.locator("[data-testid='stApp']")
    wait_for(lambda: app.get_attribute("data-test-script-state") == "notRunning", "the page to settle")


def drawn_whole(page) -> None:
    """Wait until the page just opened or reloaded is drawn whole and settled: its results come
    first, then its controls and panels in a run of their own (bandcalc.page.opening), the sidebar's
    last line, the version, among them, and every element's code loaded."""
    page.wait_for_selector("[data-testid='stMetricValue']", timeout=60_000)
    page.get_by_text(f"bandcalc {__version__}", exact=True).wait_for(timeout=60_000)
    # Streamlit shows an element whose code is still loading (the sliders, at first) as a placeholder.
    page.wait_for_function("() => !document.querySelector(\"[data-testid='stSkeleton']\")", timeout=60_000)
    settle(page)


def test_slider_by_keyboard_save_and_reload(server, browser, tmp_path):
    page = browser.new_page(viewport={"width": 1500, "height": 1000})
    page.goto(server)
    drawn_whole(page)
    before = analyze(SUMP)
    upper = format_si(before.upper, "V", 4)
    wait_for(lambda: metrics(page)[:2] == [upper, format_si(before.lower, "V", 4)], "the demo's figures")
    wait_for(lambda: f"Upper {upper}" in chart_labels(page), "the chart's point labels")

    # Keyboard: focus the feedback resistor's slider and step one E24 value up (39k -> 43k).
    slider = page.get_by_role("slider", name="Feedback resistor")
    assert slider.get_attribute("aria-valuetext") == "39k"
    slider.focus()
    page.keyboard.press("ArrowRight")
    after = analyze(with_value(SUMP, "resistors.feedback", 43e3))
    moved = [format_si(after.upper, "V", 4), format_si(after.lower, "V", 4)]
    wait_for(lambda: metrics(page)[:2] == moved, "the figures to follow the slider")
    wait_for(lambda: f"Upper {moved[0]}" in chart_labels(page), "the chart to follow the slider")
    assert f"Upper {upper}" not in chart_labels(page)
    wait_for(lambda: feedback_in_address(address(page)) == 43e3, "the new design in the address")
    # The slider's own box follows it (the control reruns with the parts that follow the design).
    wait_for(lambda: page.get_by_label("Feedback resistor, exact value").input_value() == "43k",
             "the exact-value box to follow the slider")

    # Save the design file and read it back.
    with page.expect_download() as download:
        page.get_by_role("button", name="Save the design file").click()
    saved = tmp_path / "saved.json"
    download.value.save_as(saved)
    assert design_from_json(saved.read_text()).resistors.feedback == 43e3
    assert json.loads(saved.read_text())["name"] == "Sump level switch"

    # Download the summary (Markdown) and read it: the design's name, its switching point as the
    # figures show it, and the design file at its end rebuilds the design on the page.
    page.get_by_role("tab", name="Summary").click()
    settle(page)
    summary_button = page.get_by_role("button", name="Download the summary")
    summary_button.wait_for(timeout=30_000)
    with page.expect_download() as download:
        summary_button.click()
    assert download.value.suggested_filename == "sump-level-switch.md"
    summary = tmp_path / "summary.md"
    download.value.save_as(summary)
    text = summary.read_text(encoding="utf-8")
    assert text.startswith("# Sump level switch\n") and moved[0] in text
    assert design_from_summary(text) == with_value(SUMP, "resistors.feedback", 43e3)

    # The netlist beside it: named after the design, the sweep bench of the design on the page.
    with page.expect_download() as download:
        page.get_by_role("button", name="Download the netlist").click()
    assert download.value.suggested_filename == "sump-level-switch.cir"
    spice = tmp_path / "stage.cir"
    download.value.save_as(spice)
    assert spice.read_text(encoding="utf-8") == netlist(with_value(SUMP, "resistors.feedback", 43e3))

    # Reload: the address brings back the same design.
    page.reload()
    drawn_whole(page)
    wait_for(lambda: metrics(page)[:2] == moved, "the same figures after a reload")
    assert page.get_by_role("slider", name="Feedback resistor").get_attribute("aria-valuetext") == "43k"
    page.close()


# The transfer curve as drawn: each trace's points (as Plotly holds them, decoded), the band and
# its label, the view, and every text of the chart; not its pixels, as Plotly may settle its
# automatic margins a pixel apart.
_DRAWING = """() => {
  const chart = document.querySelector('.st-key-transfer .js-plotly-plot');
  const traces = Array.from(chart._fullData, t => [t.name, Array.from(t.x ?? []), Array.from(t.y ?? [])]);
  const texts = Array.from(chart.querySelectorAll('text'), e => e.textContent);
  const l = chart.layout;
  return JSON.stringify([traces, l.shapes, l.annotations, l.xaxis.range, texts]);
}"""
# Set before the page loads: how many sliders the sidebar holds the moment the curve's first line
# is drawn (null until then).
_WATCH_OPENING = """(() => {
  window.__slidersAtCurve = null;
  new MutationObserver((records, watcher) => {
    if (document.querySelector('.st-key-transfer .js-plotly-plot .scatterlayer .trace')) {
      window.__slidersAtCurve = document.querySelectorAll('[data-testid=stSidebar] input[type=range]').length;
      watcher.disconnect();
    }
  }).observe(document, {subtree: true, childList: true});
})()"""


def test_a_new_tab_draws_the_curve_first_then_the_controls_by_themselves(server, browser):
    """bandcalc.page.opening: the curve is drawn before any control, then the browser's report brings
    the whole page with no action from the user, resistor sliders in view at 1440x900."""
    context = browser.new_context(viewport={"width": 1440, "height": 900})
    context.add_init_script(_WATCH_OPENING)
    page = context.new_page()
    page.goto(server)
    drawn_whole(page)
    assert page.evaluate("window.__slidersAtCurve") == 0
    assert page.get_by_role("slider", name="Feedback resistor").get_attribute("aria-valuetext") == "39k"
    # Both resistor sliders at hand, above the sidebar's fold, with no scrolling.
    for name in ("Feedback resistor", "Input resistor"):
        box = page.get_by_role("slider", name=name).bounding_box()
        assert box is not None and box["y"] + box["height"] < 900, (name, box)
    assert page.get_by_role("tab", name="Spread").count() == 1
    a = analyze(SUMP)
    assert metrics(page)[:2] == [format_si(a.upper, "V", 4), format_si(a.lower, "V", 4)]
    context.close()


# The drawing at the moment the page's script marks the chart with the value it drew: the page's own
# run may replace the chart a tenth of a second later, sooner than a test polling afterwards looks.
_RECORD_QUICK = f"""() => {{
  window.__quickDrawn = null;
  window.__quickWatcher?.disconnect();
  window.__quickWatcher = new MutationObserver(() => {{
    const label = document.querySelector('.st-key-transfer .js-plotly-plot')?.dataset.quickCurve;
    if (label !== undefined) window.__quickDrawn = {{label, drawing: ({_DRAWING})()}};
  }});
  window.__quickWatcher.observe(document.body,
                                {{subtree: true, attributes: true, attributeFilter: ['data-quick-curve']}});
}}"""
_QUICK = "label => window.__quickDrawn?.label === label"
# The page's script holds the figures around this value of the feedback slider.
_HELD = "label => window.bandcalcQuickCurve?.held?.at['st-key-in-resistors-feedback-slider'] === label"


def quick_press(page, key: str) -> tuple[str, str]:
    """Once the page's script holds the figures around the feedback slider's value, press ``key`` on
    that slider and wait for the script to draw the curve: (the drawing before, the script's drawing)."""
    slider = page.get_by_role("slider", name="Feedback resistor")
    page.wait_for_function(_HELD, arg=slider.get_attribute("aria-valuetext"), timeout=20_000)
    before = page.evaluate(_DRAWING)
    page.evaluate(_RECORD_QUICK)
    slider.focus()
    page.keyboard.press(key)
    page.wait_for_function(_QUICK, arg=slider.get_attribute("aria-valuetext"), timeout=20_000)
    return before, page.evaluate("window.__quickDrawn.drawing")


def test_the_curve_follows_a_slider_at_once_as_the_page_then_draws_it(server, browser):
    """bandcalc.page.quick_curve: a key press on a resistor slider redraws the curve in the browser
    from the figures sent ahead, and the page's own run then draws exactly the same."""
    page = browser.new_page(viewport={"width": 1440, "height": 900})
    page.goto(server)
    drawn_whole(page)
    slider = page.get_by_role("slider", name="Feedback resistor")
    for key, ohms, label in (("ArrowRight", 43e3, "43k"), ("ArrowLeft", 39e3, "39k")):
        before, quick = quick_press(page, key)  # drawn by the page's script
        assert slider.get_attribute("aria-valuetext") == label
        assert quick != before
        moved = analyze(with_value(SUMP, "resistors.feedback", ohms))
        points = [format_si(moved.upper, "V", 4), format_si(moved.lower, "V", 4)]
        wait_for(lambda points=points: metrics(page)[:2] == points, "the figures to follow the slider")
        settle(page)
        assert page.evaluate(_DRAWING) == quick
        assert f"Upper {points[0]}" in chart_labels(page)
    page.close()


def test_the_quick_curve_follows_the_axis_chosen(server, browser):
    """With a front end the curve can be drawn against the stage's volts: the figures sent ahead
    follow that choice, so the curve drawn at once is still the page's own."""
    page = browser.new_page(viewport={"width": 1440, "height": 900})
    page.goto(f"{server}?{PARAM}={design_to_address(load_demo('greenhouse_fan_thermostat'))}")
    drawn_whole(page)
    page.get_by_text("Stage input, open-circuit (V)").click()
    wait_for(lambda: "Stage input, open-circuit (V)" in chart_labels(page), "the curve in the stage's volts")
    settle(page)
    time.sleep(0.5)  # any figures still on their way after the choice
    before, quick = quick_press(page, "ArrowRight")
    label = page.get_by_role("slider", name="Feedback resistor").get_attribute("aria-valuetext")
    assert quick != before and "Stage input, open-circuit (V)" in quick
    wait_for(lambda: feedback_in_address(address(page)) is not None and
             format_code(feedback_in_address(address(page)), 4) == label, "the move in the address")
    settle(page)
    assert page.evaluate(_DRAWING) == quick
    page.close()


def test_spread_panel_edits_the_design_and_runs(server, browser):
    page = browser.new_page(viewport={"width": 1500, "height": 1400})
    page.goto(server)
    drawn_whole(page)
    page.get_by_role("tab", name="Spread").click()
    settle(page)
    supply = page.get_by_role("textbox", name="Each supply rail (%)")
    supply.wait_for(timeout=30_000)
    supply.fill("3")
    supply.press("Enter")
    # The panel reruns alone (a fragment) and still writes the changed design into the address.
    wait_for(lambda: design_in_address(address(page)).tolerances.supply == 3.0,
             "the tolerance in the address")
    settle(page)
    with page.expect_download() as download:  # the sidebar's Save button follows the panel's edit
        page.get_by_role("button", name="Save the design file").click()
    assert design_from_json(Path(download.value.path()).read_text()).tolerances.supply == 3.0
    page.get_by_role("button", name="Run the spread").click()
    page.get_by_text("Yield", exact=True).wait_for(timeout=60_000)
    settle(page)
    assert page.get_by_text("Worst case", exact=False).count() >= 1
    assert page.locator(".js-plotly-plot").count() >= 5  # transfer curve, three histograms, sensitivity
    # The panel's edit must leave the sidebar's controls alone: a slider there still works after it.
    slider = page.get_by_role("slider", name="Feedback resistor")
    slider.focus()
    page.keyboard.press("ArrowRight")
    wait_for(lambda: feedback_in_address(address(page)) == 43e3, "the sidebar slider after a panel's edit")
    assert design_in_address(address(page)).tolerances.supply == 3.0
    page.close()


def test_a_long_fit_shows_progress_and_stops_on_stop(server, browser):
    # Four free values from 100 Ohm to 100 MOhm over E24: the search runs to its limit (about
    # 2 million combinations, some seconds); Stop must end it, keeping the design.
    design = with_value(with_value(SUMP, "resistors.to_ground", 100e3), "resistors.to_positive", 100e3)
    page = browser.new_page(viewport={"width": 1500, "height": 1400})
    page.goto(f"{server}?{urlencode({PARAM: design_to_address(design)})}")
    drawn_whole(page)
    page.get_by_role("tab", name="Fit to target points").click()
    settle(page)
    for label, text in (("Upper point wanted (V)", "3"), ("Lower point wanted (V)", "2"),
                        ("Smallest resistor (Ω)", "100"), ("Largest resistor (Ω)", "100M")):
        page.get_by_role("textbox", name=label).fill(text)
    page.get_by_role("button", name="Find values").click()
    stop = page.get_by_role("button", name="Stop the search")
    stop.wait_for(timeout=30_000)
    page.get_by_text("combinations checked", exact=False).wait_for(timeout=30_000)
    stop.click()
    page.get_by_text("The search was stopped before it finished", exact=False).wait_for(timeout=30_000)
    settle(page)
    assert page.get_by_role("button", name="Apply 1").count() == 0
    assert page.get_by_role("button", name="Stop the search").count() == 0
    assert design_in_address(address(page)) == design


def near_the_limit() -> Design:
    """A design whose address is just under the page's limit: notes filling it."""
    low, high = 0, 40_000
    while low < high:  # the longest notes that still fit
        mid = (low + high + 1) // 2
        try:
            design_to_address(replace(SUMP, name="Near the limit", notes=prose(mid, seed=3)))
            low = mid
        except DesignError:
            high = mid - 1
    return replace(SUMP, name="Near the limit", notes=prose(low, seed=3))


def request_in_pieces(url: str, target: str, piece: int = 1024) -> bytes:
    """The status line the server answers a GET of ``target`` with, its head sent ``piece`` bytes at a
    time (as a request crosses a network; on one machine it mostly arrives in one piece)."""
    parts = urlsplit(url)
    head = f"GET {target} HTTP/1.1\r\nHost: {parts.netloc}\r\nConnection: close\r\n\r\n".encode()
    with socket.create_connection((parts.hostname, parts.port), timeout=10) as s:
        for start in range(0, len(head), piece):
            s.sendall(head[start:start + piece])
            time.sleep(0.002)
        return s.recv(100).split(b"\r\n")[0]


def test_the_server_takes_an_address_at_the_limit_sent_in_pieces(server):
    # Streamlit 1.67's server (uvicorn with h11) refuses a request head over 16 KiB sent in pieces
    # (measured: 17,000 characters of address were refused, 16,400 taken); the page's limit is half that.
    design = near_the_limit()
    address = design_to_address(design)
    assert ADDRESS_MAX - 200 < len(address) <= ADDRESS_MAX
    assert request_in_pieces(server, f"/?{PARAM}={address}") == b"HTTP/1.1 200 OK"


def notes_box(page):
    return page.get_by_role("textbox", name="Notes")


def test_a_reload_keeps_every_design_the_page_takes(server, browser, tmp_path):
    page = browser.new_page(viewport={"width": 1500, "height": 1000})
    page.goto(server)
    drawn_whole(page)

    # Notes typed in the box come back after a reload.
    typed = prose(6_000, seed=1)
    notes_box(page).fill(typed)
    notes_box(page).press("Control+Enter")
    wait_for(lambda: design_in_address(address(page)).notes == typed, "the notes in the address")
    page.reload()
    drawn_whole(page)
    wait_for(lambda: notes_box(page).input_value() == typed, "the notes after a reload")

    # A design file as long as the address takes: opened, then reloaded, it is all there.
    design = near_the_limit()
    path = tmp_path / "near.json"
    path.write_text(design_to_json(design), encoding="utf-8")
    page.locator("[data-testid='stFileUploaderDropzoneInput']").set_input_files(str(path))
    wait_for(lambda: design_in_address(address(page)) == design, "the opened design in the address")
    assert len(parse_qs(urlsplit(address(page)).query)[PARAM][0]) > ADDRESS_MAX - 200
    page.reload()
    drawn_whole(page)
    wait_for(lambda: page.locator("h1").first.inner_text() == "Near the limit", "the design after a reload")
    # The title and the notes box may arrive in separate updates: wait for both.
    wait_for(lambda: notes_box(page).input_value() == design.notes, "the notes after a reload")
    assert page.get_by_text("demo design is shown instead").count() == 0

    # Notes too long for the address are refused at once, and a reload keeps the design before them.
    notes_box(page).fill(prose(71_000, seed=2))
    notes_box(page).press("Control+Enter")
    page.get_by_text("too long for the page address").first.wait_for(timeout=30_000)
    settle(page)
    assert design_in_address(address(page)) == design
    page.reload()
    drawn_whole(page)
    wait_for(lambda: notes_box(page).input_value() == design.notes, "the design's own notes after a reload")
    assert page.get_by_text("too long").count() == 0
    page.close()


# Texts cut short: every element that ends its text with an ellipsis, measured with the ellipsis
# lifted (text-overflow: clip on it and beneath it), whose text is wider than its own box.
CUT_TEXTS = """() => {
  const cut = [];
  for (const e of document.querySelectorAll('body *')) {
    if (getComputedStyle(e).textOverflow !== 'ellipsis' || !e.textContent.trim()
        || e.getClientRects().length === 0) continue;
    const lifted = [e, ...e.querySelectorAll('*')].map(x => [x, x.style.textOverflow]);
    lifted.forEach(([x]) => { x.style.textOverflow = 'clip'; });
    const text = document.createRange();
    text.selectNodeContents(e);
    if (text.getBoundingClientRect().width > e.getBoundingClientRect().width + 0.5) {
      cut.push(e.textContent.trim());
    }
    lifted.forEach(([x, old]) => { x.style.textOverflow = old; });
  }
  return cut;
}"""


def cut_texts(page) -> list[str]:
    """The texts on the page that show only in part, ending in an ellipsis."""
    return page.evaluate(CUT_TEXTS)


@pytest.mark.parametrize("demo", ["sump_level_switch", "solar_battery_disconnect"])
def test_every_label_reads_in_full_at_1440_pixels(server, browser, demo):
    """A window 1440 pixels wide (a common laptop screen, from memory) with the sidebar open: no label,
    figure or tab name is cut short, in the live view and in every panel."""
    page = browser.new_page(viewport={"width": 1440, "height": 900})
    page.goto(f"{server}?{PARAM}={design_to_address(load_demo(demo))}")
    drawn_whole(page)
    assert cut_texts(page) == []
    for panel in PANELS:
        page.get_by_role("tab", name=panel.TITLE).click()
        settle(page)
        assert cut_texts(page) == [], panel.TITLE
    page.close()


# Hints in empty boxes ("blank: no limit given") cut short: a box clips its hint without an
# ellipsis, so each hint is measured in the box's own font against the room inside the box.
CUT_HINTS = """() => {
  const ruler = document.createElement('canvas').getContext('2d');
  const cut = [];
  for (const box of document.querySelectorAll('[data-testid=stSidebar] input[placeholder], '
                                              + '[data-testid=stSidebar] textarea[placeholder]')) {
    if (box.value || box.getClientRects().length === 0) continue;
    const style = getComputedStyle(box);
    ruler.font = style.font;
    const room = box.clientWidth - parseFloat(style.paddingLeft) - parseFloat(style.paddingRight);
    if (ruler.measureText(box.placeholder).width > room + 0.5) cut.push(box.placeholder);
  }
  return cut;
}"""


@pytest.mark.parametrize("demo", ["greenhouse_fan_thermostat", "solar_battery_disconnect"])
def test_every_hint_in_an_empty_sidebar_box_reads_in_full(server, browser, demo):
    """With every sidebar section open, at 1440 pixels wide: the hint of each empty box (what a
    blank means) fits the box; "blank: a comparator, not limited" was cut to "...not limitec"."""
    page = browser.new_page(viewport={"width": 1440, "height": 900})
    page.goto(f"{server}?{PARAM}={design_to_address(load_demo(demo))}")
    drawn_whole(page)
    shut = "[data-testid=stSidebar] details:not([open]) > summary"
    while page.locator(shut).count():
        page.locator(shut).first.click()
        settle(page)
    assert page.evaluate(CUT_HINTS) == []
    page.close()
