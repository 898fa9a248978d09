"""The page, driven headless with Streamlit's AppTest: figures, chart data, controls, messages.

Expected numbers come from the package itself (``analyze``), which its own tests check against
published examples and lcapy; here the question is whether the page shows them faithfully.
"""

import base64
import json

import numpy as np
import pytest
from page_helpers import (
    SUMP,
    address_of,
    captions,
    chart,
    design_on,
    errors,
    figures,
    numbers,
    opened,
    page,
    prose,
    stranded,
)
from streamlit.testing.v1 import AppTest

from bandcalc.model.design_file import design_to_dict, design_to_json
from bandcalc.model.operating import analyze
from bandcalc.model.parts import with_value
from bandcalc.model.units import format_si
from bandcalc.page.address import PARAM, design_to_address
from bandcalc.page.edit import with_filter
from bandcalc.page.results import FIGURES

FEEDBACK = "in.resistors.feedback"
INPUT = "in.resistors.input"


def expected(design) -> dict[str, str]:
    a = analyze(design)
    return {label: format_si(getattr(a, attr), "V", 4) for label, attr, _ in FIGURES}


def test_default_page_shows_the_sump_demo():
    at = page()
    assert not at.exception and not errors(at)
    assert figures(at) == expected(SUMP)
    assert figures(at)["Upper switching point"] == "3.136 V"  # analyze() of the sump demo
    assert at.title[0].value == "Sump level switch"
    assert design_on(at) == SUMP


def test_chart_holds_both_branches_points_and_band():
    at = page()
    spec = chart(at)
    a = analyze(SUMP)
    rising, falling, points, *_ = spec["data"]  # then the direction arrows
    assert (rising["name"], falling["name"]) == ("Rising input", "Falling input")
    assert points["x"] == pytest.approx([a.upper, a.lower])
    assert points["text"] == [f"Upper {format_si(a.upper, 'V', 4)}", f"Lower {format_si(a.lower, 'V', 4)}"]
    band = spec["layout"]["shapes"][0]
    assert (band["x0"], band["x1"]) == pytest.approx((a.lower, a.upper))
    # The branches run between the output levels reached (loaded output, see transfer.py).
    assert min(numbers(rising["y"])) == pytest.approx(min(numbers(falling["y"])))
    assert np.isclose(numbers(rising["y"]), a.output_low, rtol=0, atol=1e-12).any()
    assert np.isclose(numbers(falling["y"]), a.output_high, rtol=0, atol=1e-12).any()


def test_schematic_shows_the_values():
    at = page()
    url = at.image[0].proto.imgs[0].url
    assert url.startswith("data:image/svg+xml;base64,")
    svg = base64.b64decode(url.split(",", 1)[1]).decode()
    assert "Rfb 39k" in svg and "Rin 10k" in svg and "2.5 V" in svg


def test_moving_a_resistor_slider_changes_figures_and_chart():
    at = page()
    before = chart(at)["data"][2]["x"]
    at.select_slider(key=f"{FEEDBACK}.slider").set_value(47e3).run()
    moved = with_value(SUMP, "resistors.feedback", 47e3)
    assert not at.exception and not errors(at)
    assert figures(at) == expected(moved)
    assert figures(at) != expected(SUMP)
    a = analyze(moved)
    after = chart(at)["data"][2]["x"]
    assert after == pytest.approx([a.upper, a.lower]) and after != pytest.approx(before)
    assert at.text_input(key=f"{FEEDBACK}.text").value == "47k"  # the typed box follows the slider
    assert design_on(at).resistors.feedback == 47e3


def test_a_slider_move_reruns_only_the_parts_that_follow_the_design():
    # Without page()'s completing run: what the browser is sent after the move.  The live view, the
    # Save button, the open panel and the slider's own control; not the title, the name and notes,
    # nor the other controls (their values cannot have changed).
    at = opened().run()
    controls = len(at.sidebar.text_input)
    at.select_slider(key=f"{FEEDBACK}.slider").set_value(47e3).run()
    assert not at.exception and not errors(at)
    assert not at.title
    assert figures(at) == expected(with_value(SUMP, "resistors.feedback", 47e3))
    assert [b.label for b in at.get("download_button")][:1] == ["Save the design file"]
    assert [t.key for t in at.sidebar.text_input] == [f"{FEEDBACK}.text"] and controls > 5
    assert at.text_input(key=f"{FEEDBACK}.text").value == "47k"
    assert at.query_params[PARAM] == design_to_address(with_value(SUMP, "resistors.feedback", 47e3))


def test_the_filter_pole_follows_a_slider():
    # The pole depends on the resistors that load the capacitor: it is one of the parts rerun after
    # a slider, and page()'s check finds nothing stale against a full run.
    at = page(design=with_filter(SUMP, "rc"))
    at.session_state["page.section.filter"] = True
    at.run()
    pole = [c for c in captions(at) if c.startswith("Pole ")]
    at.select_slider(key=f"{FEEDBACK}.slider").set_value(10e3).run()
    assert not at.exception and not errors(at)
    moved = [c for c in captions(at) if c.startswith("Pole ")]
    assert len(moved) == 1 and moved != pole


def test_a_refused_typed_resistor_reruns_the_whole_page_with_the_message():
    at = opened().run()
    at.text_input(key=f"{FEEDBACK}.text").input("4k7k").run()
    assert at.title  # the whole page, whose top says why
    assert any("4k7k" in e for e in errors(at))
    assert at.text_input(key=f"{FEEDBACK}.text").value == "39k"


def test_typing_the_iec_code_sets_the_exact_value():
    at = page()
    at.text_input(key=f"{INPUT}.text").input("4k7").run()
    assert not errors(at)
    assert at.select_slider(key=f"{INPUT}.slider").value == 4700.0
    assert figures(at) == expected(with_value(SUMP, "resistors.input", 4700.0))
    at.text_input(key=f"{INPUT}.text").input("4.7k").run()  # the SI notation reads the same
    assert design_on(at).resistors.input == 4700.0


def test_a_typed_value_outside_the_series_is_kept_exactly():
    at = page()
    at.text_input(key=f"{INPUT}.text").input("4k75").run()
    assert at.select_slider(key=f"{INPUT}.slider").value == 4750.0
    assert design_on(at).resistors.input == 4750.0
    assert any("4k75 is not an E24 value" in c.value for c in at.caption)


def test_bad_typed_value_names_the_field_and_keeps_the_old_value():
    at = page()
    at.text_input(key=f"{INPUT}.text").input("4k7x").run()
    assert not at.exception
    (message,) = errors(at)
    assert "Input resistor" in message and "'4k7x'" in message and "keeps 10k" in message
    assert figures(at) == expected(SUMP)
    assert at.text_input(key=f"{INPUT}.text").value == "10k"
    assert design_on(at) == SUMP


def test_a_value_the_design_refuses_is_explained():
    at = page()
    at.text_input(key="in.supply.negative").input("6").run()  # above the 5 V positive rail
    (message,) = errors(at)
    assert message.startswith("Negative rail (supply.negative)") and "positive rail" in message
    assert figures(at) == expected(SUMP)


def test_the_address_carries_the_design_across_a_reload():
    at = page()
    at.select_slider(key=f"{FEEDBACK}.slider").set_value(68e3).run()
    address = at.query_params[PARAM]
    again = page({PARAM: address})  # a new session, as after a reload or from a shared link
    assert figures(again) == figures(at)
    assert design_on(again).resistors.feedback == 68e3
    assert again.select_slider(key=f"{FEEDBACK}.slider").value == 68e3


def test_a_garbled_address_gives_a_message_and_the_demo():
    at = page({PARAM: design_to_address(SUMP)[:-20] + "%%%"})
    assert not at.exception
    (message,) = errors(at)
    assert "page address (design=...)" in message and "demo design is shown instead" in message
    assert figures(at) == expected(SUMP)


def test_a_bad_design_file_keeps_the_current_design():
    at = page()
    at.file_uploader[0].set_value(("broken.json", b'{"format": 1, "stage": ', "application/json")).run()
    assert not at.exception
    (message,) = errors(at)
    assert message.startswith("broken.json: not valid JSON") and "current design is kept" in message
    assert figures(at) == expected(SUMP)
    wrong = b'{"format": 1, "stage": "sideways", "supply": {"positive": 5}, "resistors": {"feedback": 1e3}}'
    at.file_uploader[0].set_value(("wrong.json", wrong, "application/json")).run()
    assert "stage: 'sideways' is not a stage kind" in errors(at)[0]


def test_a_good_design_file_replaces_the_design(demo):
    other = demo("magnetic_speed_pickup")
    at = page()
    at.file_uploader[0].set_value(("pickup.json", design_to_json(other).encode(), "application/json")).run()
    assert not errors(at)
    assert figures(at) == expected(other)
    assert at.title[0].value == other.name
    assert at.select_slider(key=f"{FEEDBACK}.slider").value == other.resistors.feedback


def test_save_offers_the_design_file():
    at = page()
    (button,) = at.get("download_button")
    assert button.proto.label == "Save the design file"


def test_demo_chooser_opens_a_demo(demo):
    at = page()
    at.selectbox(key="page.demo").set_value("magnetic_speed_pickup").run()
    pickup = demo("magnetic_speed_pickup")
    assert figures(at) == expected(pickup)
    assert design_on(at) == pickup


def test_stage_output_and_section_controls():
    at = page()
    for name in ("output", "comparator", "source"):
        at.session_state[f"page.section.{name}"] = True
    at.run()
    at.radio(key="in.output.kind").set_value("open-drain").run()
    assert design_on(at).output.kind == "open-drain"
    assert at.select_slider(key="in.output.pullup.slider").value == 1800.0
    at.text_input(key="in.comparator.offset").input("-3 mV").run()
    assert design_on(at).comparator.offset == -0.003
    at.text_input(key="in.source.high").input("").run()  # blank: the positive rail
    assert design_on(at).source.high is None
    at.text_input(key="in.comparator.delay").input("fast").run()
    assert "Propagation delay (comparator.delay): cannot read 'fast'" in errors(at)[0]
    at.radio(key="in.stage").set_value("inverting").run()
    assert design_on(at).stage == "inverting"
    assert not at.exception


def test_legs_and_reference_controls():
    at = page()
    at.multiselect(key="in.resistors.legs").set_value(["to_ground"]).run()
    assert design_on(at).resistors.to_ground == 100e3
    at.select_slider(key="in.resistors.to_ground.slider").set_value(22e3).run()
    assert figures(at) == expected(design_on(at))
    at.radio(key="in.reference.kind").set_value("divider").run()
    assert design_on(at).reference.top == 10e3
    at.select_slider(key="in.reference.top.slider").set_value(12e3).run()
    assert design_on(at).reference.top == 12e3
    assert not at.exception and not errors(at)


def test_series_choice_changes_the_slider_steps():
    at = page()
    assert len(at.select_slider(key=f"{FEEDBACK}.slider").options) == 3 * 24
    at.selectbox(key="page.series").set_value("E96").run()
    assert len(at.select_slider(key=f"{FEEDBACK}.slider").options) == 3 * 96 + 1  # 39k is not in E96


@pytest.mark.parametrize("stem", ["sump_level_switch", "strain_overload_alarm"])
def test_findings_and_cautions_are_shown(stem, demo):
    design = demo(stem)
    hazardous = with_value(design, "source.high", 60.0)  # a watched voltage above 50 V
    at = page({PARAM: design_to_address(hazardous)})
    assert any(e.value.startswith("Hazardous voltage") for e in at.error)
    assert figures(at) == expected(hazardous)


def test_panel_tables_show_currents():
    at = page()
    tables = at.table
    assert len(tables) == 3
    a = analyze(SUMP)
    pins = tables[0].value
    assert list(pins["At the upper point"]) == [format_si(v, "V", 4) for v in
                                                (a.at_upper.plus, a.at_upper.minus, a.at_upper.output)]


def test_an_unexpected_error_is_explained_without_a_traceback():
    def script():
        from bandcalc.page.compute import guarded

        guarded("Sum", lambda: 1 / 0)

    at = AppTest.from_function(script).run()
    assert not at.exception
    assert at.error[0].value.startswith("Sum: could not be worked out for this design")


def test_a_panel_plugs_in_and_can_apply_a_design(monkeypatch):
    # The contract later panels follow (DEVELOPERS.md, "Adding a panel"): a module with TITLE and
    # render(sheet), listed in PANELS; apply_design() after a button press changes the design.
    import types

    import streamlit as st

    from bandcalc.page import panels, state

    trial = types.ModuleType("trial")
    trial.TITLE = "Trial"

    def render(sheet):
        st.write(f"Panel sees feedback {sheet.design.resistors.feedback:g}")
        if st.button("Use 47k"):
            state.apply_design(with_value(sheet.design, "resistors.feedback", 47e3), "Applied 47k.")

    trial.render = render
    monkeypatch.setattr(panels, "PANELS", (*panels.PANELS, trial))
    at = page()
    assert [t.label for t in at.tabs] == [p.TITLE for p in panels.PANELS] and at.tabs[-1].label == "Trial"
    assert not any("Panel sees" in m.value for m in at.markdown)  # a closed tab does not run
    at.session_state["page.panel"] = "Trial"
    at.run()
    assert any(m.value == "Panel sees feedback 39000" for m in at.markdown)
    next(b for b in at.button if b.label == "Use 47k").click().run()
    assert figures(at) == expected(with_value(SUMP, "resistors.feedback", 47e3))
    assert at.select_slider(key=f"{FEEDBACK}.slider").value == 47e3
    assert [s.value for s in at.success] == ["Applied 47k."]


def test_an_internal_error_in_the_page_is_explained(monkeypatch):
    from bandcalc.page import sheet

    def broken(design):
        raise RuntimeError("boom")

    monkeypatch.setattr(sheet, "render_results", broken)
    at = page()
    assert not at.exception
    assert any(e.value.startswith("The page ran into an internal error") for e in at.error)
    assert not any("boom" in e.value for e in at.error)


def test_protective_checkbox_starts_from_the_words_and_is_saved():
    at = page()
    box = at.checkbox(key="in.protective")
    assert box.value is False  # "Sump level switch": no protective word
    at.text_input(key="in.name").input("Sump overflow alarm").run()
    assert at.checkbox(key="in.protective").value is True  # "alarm", judged from the words
    assert design_on(at).protective is None
    assert any(e.value.startswith("Protective function") for e in at.error)
    at.checkbox(key="in.protective").uncheck().run()
    assert design_on(at).protective is False  # saved as the user's choice
    assert not any(e.value.startswith("Protective function") for e in at.error)
    assert not at.exception and not errors(at)


def test_load_controls_change_the_levels_and_check_the_logic():
    at = page()
    at.session_state["page.section.load"] = True
    at.session_state["page.section.output"] = True
    at.run()
    at.text_input(key="in.output.resistance").input("100").run()
    at.text_input(key="in.load.resistance").input("1k").run()
    loaded = design_on(at)
    assert loaded.load.resistance == 1e3 and loaded.load.volts == 0.0
    assert figures(at) == expected(loaded) and figures(at) != expected(SUMP)
    at.text_input(key="in.load.logic_high_min").input("4.9").run()
    assert design_on(at).load.logic_high_min == 4.9
    assert any(w.value.startswith("Logic levels: the output's high level falls to") for w in at.warning)
    at.text_input(key="in.load.logic_low_max").input("5.5").run()  # above the high threshold: refused
    assert "load: logic_low_max (5.5 V) must be below logic_high_min (4.9 V)" in errors(at)[0]
    assert design_on(at).load.logic_low_max is None  # the design kept what it had
    at.text_input(key="in.load.resistance").input("").run()
    at.text_input(key="in.load.logic_high_min").input("").run()
    assert design_on(at).load is None
    assert not at.exception


# --- several changes in one rerun -----------------------------------------------------------------
# The browser sends every widget that changed since the last run together: a box typed into and left
# by clicking another control arrives with that control's change.  Each callback edits the design as
# the earlier ones of the same run left it, and none may be lost, in whichever order they run.

def test_two_typed_values_in_one_run_both_land():
    at = page()
    at.text_input(key="in.reference.volts").input("6")
    at.text_input(key="in.supply.positive").input("12")
    at.run()
    assert not at.exception and not errors(at)
    d = design_on(at)
    assert (d.supply.positive, d.reference.volts) == (12.0, 6.0)
    assert at.text_input(key="in.supply.positive").value == "12 V"
    assert at.text_input(key="in.reference.volts").value == "6 V"


def test_an_edit_that_needs_a_later_one_of_the_same_run_still_lands():
    # Callbacks run in the order of the controls on the page.  The lowest signal (source.low) comes
    # before the highest: raising the lowest to 6 V is refused beside the highest at 5 V (low must be
    # below high), and fits once the highest is 8 V.  Both end up in the design.
    at = page()
    at.session_state["page.section.source"] = True
    at.run()
    at.text_input(key="in.source.low").input("6")
    at.text_input(key="in.source.high").input("8")
    at.run()
    assert not at.exception and not errors(at)
    assert (design_on(at).source.low, design_on(at).source.high) == (6.0, 8.0)
    assert at.text_input(key="in.source.low").value == "6 V"


def test_a_slider_and_a_choice_in_one_run_both_land():
    at = page()
    at.select_slider(key=f"{FEEDBACK}.slider").set_value(47e3)
    at.radio(key="in.reference.kind").set_value("divider")
    at.run()
    assert not at.exception and not errors(at)
    d = design_on(at)
    assert d.resistors.feedback == 47e3 and d.reference.top == 10e3
    assert at.select_slider(key=f"{FEEDBACK}.slider").value == 47e3


def test_of_two_edits_in_one_run_the_refused_one_is_named_and_the_other_kept():
    at = page()
    at.text_input(key="in.supply.positive").input("12")
    at.text_input(key=f"{INPUT}.text").input("4k7x")
    at.run()
    assert not at.exception
    (message,) = errors(at)
    assert "Input resistor" in message and "'4k7x'" in message and "keeps 10k" in message
    assert design_on(at).supply.positive == 12.0 and design_on(at).resistors.input == 10e3
    assert at.text_input(key=f"{INPUT}.text").value == "10k"


# --- designs the page cannot keep or show: a message, and the design the user had ---------------

def _sump_file(**changes) -> dict:
    data = design_to_dict(SUMP)
    for path, value in changes.items():
        *parents, last = path.split(".")
        node = data
        for key in parents:
            node = node[key]
        node[last] = value
    return data


def _steinhart_hart_typo(demo) -> dict:
    data = design_to_dict(demo("greenhouse_fan_thermostat"))
    for key in ("r25", "beta", "beta_tolerance"):
        data["front_end"].pop(key)
    # A 10 kOhm probe's published A = 1.129241e-3 (tests/test_frontend.py), typed without its exponent.
    data["front_end"]["steinhart_hart"] = [1129.241, 2.341077e-4, 8.775468e-8]
    return data


def test_an_address_with_a_huge_integer_gives_a_message_and_the_demo():
    # JSON allows integers of any length; as a float this one overflows (Python's float holds at
    # most about 1.8e308, IEEE 754 double precision).
    text = json.dumps(_sump_file(**{"resistors.feedback": "HUGE"})).replace('"HUGE"', "1" + "0" * 400)
    at = page({PARAM: address_of(text)})
    assert not stranded(at)
    (message,) = errors(at)
    assert "page address (design=...)" in message and "demo design is shown instead" in message
    assert design_on(at) == SUMP
    again = page({PARAM: at.query_params[PARAM]})  # a reload does not repeat it
    assert not stranded(again) and not errors(again)


@pytest.mark.parametrize("depth", [20_000, 990])
def test_an_address_nested_deeply_gives_a_message_and_the_demo(depth):
    # Python's json parser stops at its recursion limit, about a thousand levels deep (from memory).
    text = json.dumps(_sump_file(notes="DEEP")).replace('"DEEP"', "[" * depth + "]" * depth)
    at = page({PARAM: address_of(text)})
    assert not stranded(at)
    (message,) = errors(at)
    assert "page address (design=...)" in message and "demo design is shown instead" in message
    assert design_on(at) == SUMP
    assert not errors(page({PARAM: at.query_params[PARAM]}))


def test_an_address_whose_design_cannot_be_analysed_gives_a_message_and_the_demo(demo):
    at = page({PARAM: address_of(_steinhart_hart_typo(demo))})
    assert not stranded(at)
    (message,) = errors(at)
    assert "page address (design=...)" in message and "demo design is shown instead" in message
    assert design_on(at) == SUMP


@pytest.mark.parametrize("case", ["feedback null", "lone surrogate", "Steinhart-Hart typo"])
def test_a_file_that_cannot_be_analysed_or_kept_leaves_the_design(case, demo):
    data = {"feedback null": lambda: _sump_file(**{"resistors.feedback": None}),
            "lone surrogate": lambda: _sump_file(name="\ud800"),
            "Steinhart-Hart typo": lambda: _steinhart_hart_typo(demo)}[case]()
    at = page()
    body = json.dumps(data).encode("utf-8")  # a lone surrogate is written as the escape \ud800
    at.file_uploader[0].set_value(("odd.json", body, "application/json")).run()
    assert not stranded(at)
    (message,) = errors(at)
    assert message.startswith("odd.json: ") and "current design is kept" in message
    assert design_on(at) == SUMP and at.title[0].value == SUMP.name


@pytest.mark.parametrize("ohms", [1e23, 1e308])
def test_a_file_with_an_absurd_resistor_never_strands_the_page(ohms):
    # Either the page shows the design (its figures, its controls), or it names the file and keeps
    # the design it had; never a page with only an internal error.
    at = page()
    body = json.dumps(_sump_file(**{"resistors.feedback": ohms})).encode()
    at.file_uploader[0].set_value(("absurd.json", body, "application/json")).run()
    assert not stranded(at)
    if errors(at):
        (message,) = errors(at)
        assert message.startswith("absurd.json: ") and "current design is kept" in message
        assert design_on(at) == SUMP
    else:
        assert design_on(at).resistors.feedback == ohms
        assert at.select_slider(key=f"{FEEDBACK}.slider").value == ohms


# --- a reload never loses what the page took ------------------------------------------------------

def test_notes_that_fit_come_back_after_a_reload():
    notes = prose(9_000)
    at = page()
    at.text_area(key="in.notes").input(notes).run()
    assert not errors(at) and design_on(at).notes == notes
    again = page({PARAM: at.query_params[PARAM]})  # a new session, as after a reload
    assert not errors(again) and again.text_area(key="in.notes").value == notes


def test_notes_too_long_for_the_address_are_refused_at_once():
    notes = prose(71_000)
    at = page()
    at.text_area(key="in.notes").input(notes).run()
    assert not stranded(at)
    (message,) = errors(at)
    assert message.startswith("Notes (notes): too long for the page address (71,000 characters)")
    assert "The design keeps the notes it had" in message
    assert design_on(at) == SUMP
    assert at.text_area(key="in.notes").value == notes  # still there to shorten or copy
    again = page({PARAM: at.query_params[PARAM]})
    assert not errors(again) and design_on(again) == SUMP


def test_refused_notes_left_in_their_box_are_marked_not_in_the_design_on_every_run():
    # Found by the page fuzz test: the refusal is said once; the same text entered again is no change
    # to the box, so the page went quiet while the box held text the design did not have.
    notes = prose(71_000)
    at = page()
    at.text_area(key="in.notes").input(notes).run()
    for _ in range(2):
        at.text_area(key="in.notes").input(notes).run()
        (held,) = [w.value for w in at.warning if w.value.startswith("Not in the design: ")]
        assert held.startswith("Not in the design: Notes (notes): too long for the page address")
        assert held.endswith("The design keeps the notes it had.") and design_on(at) == SUMP
    at.text_area(key="in.notes").input("Short again.").run()
    assert design_on(at).notes == "Short again."
    assert not [w for w in at.warning if w.value.startswith("Not in the design: ")]


def test_a_design_file_too_long_for_the_address_is_refused_at_once():
    # Near the page's 1 MB upload cap: notes filling most of it.
    body = json.dumps(_sump_file(notes=prose(900_000)), indent=2).encode()
    assert 900_000 < len(body) < 1_000_000
    at = page()
    at.file_uploader[0].set_value(("long.json", body, "application/json")).run()
    assert not stranded(at)
    (message,) = errors(at)
    assert message.startswith("long.json: notes: too long for the page address (900,000 characters)")
    assert message.endswith("The current design is kept.")
    assert design_on(at) == SUMP


def test_a_typed_value_that_reads_like_its_neighbour_survives_other_edits():
    # 4699.6 ohm and the E24 value 4700 ohm both read "4k7" to four digits; the slider told them
    # apart by that label alone and, on the next edit anywhere, moved the resistor to 4700 ohm.
    at = page()
    at.text_input(key=f"{INPUT}.text").input("4699.6").run()
    assert design_on(at).resistors.input == 4699.6
    at.text_input(key="in.supply.positive").input("6").run()
    at.select_slider(key=f"{FEEDBACK}.slider").set_value(47e3).run()
    assert not errors(at)
    assert (design_on(at).resistors.input, design_on(at).supply.positive) == (4699.6, 6.0)
    assert "4k6996 is not an E24 value; it is kept exactly as typed." in captions(at)
