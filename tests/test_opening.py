"""A new tab's page in two runs (bandcalc.page.opening): the results first, then, once the browser
reports the curve drawn, the whole page around them.  Driven with AppTest; the browser's side is in
tests/test_browser.py."""

import json

from page_helpers import SUMP, charts, design_on, errors, figures, opened, stranded, unopened
from streamlit.components.v2.bidi_component.main import _make_trigger_id
from streamlit.proto.WidgetStates_pb2 import WidgetState

from bandcalc.model.operating import analyze
from bandcalc.model.units import format_si
from bandcalc.page import compute, sheet
from bandcalc.page.address import PARAM
from bandcalc.page.opening import OPENED
from bandcalc.page.results import FIGURES


def expected(design) -> dict[str, str]:
    a = analyze(design)
    return {label: format_si(getattr(a, attr), "V", 4) for label, attr, _ in FIGURES}


def asking(at) -> list:
    """The page's script that asks for the rest of the page, if drawn (a list of one or none)."""
    return [e for e in at.get("bidi_component") if e.proto.component_name == "bandcalc.opening"]


def opening_script(at):
    (element,) = asking(at)
    return element


def report_drawn(at):
    """What the page's script sends once the browser has drawn the curve: the component's trigger
    "drawn", as Streamlit's front end sends a trigger (one JSON list of events on the component's
    own trigger widget, ``<id>__events`` in Streamlit's naming), with the other widgets' values."""
    element = opening_script(at)
    states = at._tree.get_widget_states()
    state = WidgetState(id=_make_trigger_id(element.proto.id, "events"),
                        json_trigger_value=json.dumps([{"event": "drawn", "value": True}]))
    states.widgets.append(state)
    return at._run(states)


def test_a_new_tab_gets_the_results_first_then_the_whole_page_once_the_curve_is_drawn():
    at = unopened().run()
    assert not at.exception and not errors(at)
    assert at.title[0].value == "Sump level switch"
    assert figures(at) == expected(SUMP)
    assert [trace["name"] for trace in charts(at)[0]["data"]][:2] == ["Rising input", "Falling input"]
    assert at.get("image")  # the schematic
    # No controls yet, nor panels; the sidebar's first line is in place.
    assert [h.value for h in at.sidebar.header] == ["Stage"]
    assert not at.sidebar.text_input and not at.select_slider and not at.tabs
    assert json.loads(json.loads(opening_script(at).proto.json))["chart"] == "st-key-transfer"
    assert at.query_params[PARAM]  # the address already holds the design

    report_drawn(at)
    assert not at.exception and not errors(at)
    assert stranded(at) == []
    assert figures(at) == expected(SUMP) and at.title[0].value == "Sump level switch"
    assert at.tabs and not asking(at)
    # Every run after it draws the whole page.
    at.run()
    assert stranded(at) == [] and at.session_state[OPENED] is True


def test_a_message_for_the_top_of_the_page_shows_in_both_runs_once():
    at = unopened()
    at.query_params[PARAM] = "not-a-design"
    at.run()
    first = errors(at)
    assert len(first) == 1 and "demo" in first[0]
    report_drawn(at)
    assert errors(at) == first
    at.run()
    assert errors(at) == []  # shown, then gone, as before


def test_without_a_curve_to_draw_the_page_opens_whole_at_once(monkeypatch):
    # The user needs the controls beside the message to mend the design.
    def refuse(*args, **kwargs):
        raise ValueError("no curve for this design")

    monkeypatch.setattr(compute, "transfer_spec_of", refuse)
    monkeypatch.setattr(sheet, "transfer_spec_of", refuse)
    at = unopened().run()
    assert not at.exception
    assert any("Transfer curve: no curve for this design" in e for e in errors(at))
    assert at.select_slider and at.sidebar.text_input and at.tabs
    assert not asking(at)
    assert design_on(at) == SUMP


def test_the_tests_whole_page_is_the_one_a_browser_gets_after_the_report():
    # page_helpers.opened() starts the session as if the browser had reported: the same page.
    reported = report_drawn(unopened().run())
    whole = opened().run()
    assert figures(whole) == figures(reported)
    assert [w.key for w in whole.sidebar.text_input] == [w.key for w in reported.sidebar.text_input]
    assert [t.label for t in whole.tabs] == [t.label for t in reported.tabs]
