"""The figures the page sends ahead for the browser to draw the moment a resistor slider moves
(bandcalc.page.quick_curve): the right values, the same charts the page draws for them, and
nothing that could break the page.  The browser's side is in tests/test_browser.py."""

import json

import pytest
from page_helpers import SUMP, chart, numbers, page, trace

from bandcalc.demos import load_demo
from bandcalc.model.parts import with_value
from bandcalc.model.transfer import transfer_curve
from bandcalc.outputs.plots import transfer_spec
from bandcalc.page.quick_curve import REACH, box_class, figures_near, varying
from bandcalc.page.results import AXIS_KEY

FEEDBACK_BOX = "st-key-in-resistors-feedback-slider"
INPUT_BOX = "st-key-in-resistors-input-slider"


def spec_of(design) -> dict:
    return transfer_spec(transfer_curve(design))


def sent(at) -> dict:
    """What the page last sent the browser for the quick curve."""
    (element,) = [e for e in at.get("bidi_component") if e.proto.component_name == "bandcalc.quick_curve"]
    return json.loads(json.loads(element.proto.json))


def test_box_class_follows_streamlits_rule_for_keys():
    # Streamlit's front end: "st-key-" + the key, every character but [a-zA-Z0-9_-] turned to "-".
    assert box_class("in.resistors.feedback.slider") == FEEDBACK_BOX
    assert box_class(" a b/c_d-e ") == "st-key-a-b-c_d-e"


def test_varying_keeps_what_differs_and_leaves_what_all_share():
    layouts = [{"title": {"text": ""}, "xaxis": {"range": [0, 1], "title": "V"}, "shapes": [1]},
               {"title": {"text": ""}, "xaxis": {"range": [0, 2], "title": "V"}, "shapes": [1]},
               {"title": {"text": ""}, "xaxis": {"range": [0, 1], "title": "V"}, "shapes": [2], "extra": 3}]
    assert varying(layouts) == [{"xaxis": {"range": [0, 1]}, "shapes": [1], "extra": None},
                                {"xaxis": {"range": [0, 2]}, "shapes": [1], "extra": None},
                                {"xaxis": {"range": [0, 1]}, "shapes": [2], "extra": 3}]
    assert varying([{"a": 1}, {"a": 1}]) == [{}, {}]


def test_figures_near_a_slider_are_the_charts_of_its_neighbouring_values():
    # The sump demo's feedback resistor is 39k; its E24 neighbours two steps each way.
    near = figures_near(SUMP, "resistors.feedback", "E24", spec_of)
    assert REACH == 2 and list(near) == ["33k", "36k", "39k", "43k", "47k"]
    for label, ohms in zip(near, (33e3, 36e3, 39e3, 43e3, 47e3), strict=True):
        spec = spec_of(with_value(SUMP, "resistors.feedback", ohms))
        assert json.dumps(near[label]["data"], default=list) == json.dumps(spec["data"], default=list)
        # The layout: the view, the band and its label move with the value; the rest stays the
        # chart's own as drawn (so Streamlit's dress of the title is kept).
        assert near[label]["layout"]["xaxis"]["range"] == spec["layout"]["xaxis"]["range"]
        assert near[label]["layout"]["shapes"] == spec["layout"]["shapes"]
        assert near[label]["layout"]["annotations"] == spec["layout"]["annotations"]
        assert "title" not in near[label]["layout"] and "margin" not in near[label]["layout"]


def test_a_value_whose_chart_cannot_be_drawn_is_left_out():
    def refusing(design):
        if design.resistors.feedback == 43e3:
            raise ValueError("resistors.feedback: refused")
        return spec_of(design)

    assert list(figures_near(SUMP, "resistors.feedback", "E24", refusing)) == ["33k", "36k", "39k", "47k"]


def test_the_page_sends_the_figures_near_each_slider_drawn_and_follows_a_move():
    at = page()
    held = sent(at)
    assert held["chart"] == "st-key-transfer"
    assert held["at"] == {FEEDBACK_BOX: "39k", INPUT_BOX: "10k"}
    assert list(held["sliders"][FEEDBACK_BOX]) == ["33k", "36k", "39k", "43k", "47k"]
    assert list(held["sliders"][INPUT_BOX]) == ["8k2", "9k1", "10k", "11k", "12k"]
    # A move reruns the parts that follow the design, this one with them (page_helpers checks the
    # quick rerun against a full one): the figures are now those around the new value.
    at.select_slider(key="in.resistors.feedback.slider").set_value(47e3).run()
    held = sent(at)
    assert held["at"][FEEDBACK_BOX] == "47k"
    assert list(held["sliders"][FEEDBACK_BOX]) == ["39k", "43k", "47k", "51k", "56k"]
    assert list(held["sliders"][INPUT_BOX]) == ["8k2", "9k1", "10k", "11k", "12k"]
    assert not at.exception and not at.error


def test_every_slider_drawn_and_no_other_gets_its_figures():
    # The motor demo: a divider reference and an open-drain output with a pull-up resistor.
    at = page(design=load_demo("motor_current_direction"))
    at.session_state["page.section.resistors"] = False
    at.session_state["page.section.output"] = True
    at.run()
    held = sent(at)
    assert held["at"] == {box_class("in.reference.top.slider"): "10k",
                          box_class("in.reference.bottom.slider"): "10k",
                          box_class("in.output.pullup.slider"): "4k7"}
    assert list(held["sliders"]) == list(held["at"])
    assert list(held["sliders"][box_class("in.output.pullup.slider")]) == ["3k9", "4k3", "4k7", "5k1", "5k6"]


@pytest.mark.parametrize("watched", [True, False])
def test_with_a_front_end_the_figures_are_drawn_against_the_axis_chosen(watched):
    design = load_demo("greenhouse_fan_thermostat")
    at = page(design=design)
    if not watched:
        at.radio(key=AXIS_KEY).set_value("stage").run()
    held = sent(at)
    own = held["sliders"][FEEDBACK_BOX][held["at"][FEEDBACK_BOX]]
    drawn = chart(at)
    for name in ("Rising input", "Falling input"):
        assert numbers(trace(own, name)["x"]) == pytest.approx(numbers(trace(drawn, name)["x"]), rel=1e-12)
        assert numbers(trace(own, name)["y"]) == pytest.approx(numbers(trace(drawn, name)["y"]), rel=1e-12)
    assert "xaxis" not in own["layout"] or "title" not in own["layout"]["xaxis"]  # the same for all
