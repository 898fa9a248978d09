"""The page's fit panel, driven headless with Streamlit's AppTest.

Expected numbers come from the package itself: ``fit`` (whose candidates tests/test_fit.py
checks against evaluating every combination, and whose model is checked against lcapy) and
``analyze``.  Here the question is whether the panel shows them faithfully, runs the search only
on a button press, and puts a candidate on the sliders with one click.
"""


import pytest
import streamlit as st
from page_helpers import SUMP, as_read, design_on, errors, figures, page
from streamlit.testing.v1 import AppTest
from test_page import expected

from bandcalc.demos import load_demo
from bandcalc.fit import selection
from bandcalc.fit.selection import apply_candidate, fit
from bandcalc.model.design import Resistors
from bandcalc.model.design_file import design_to_json
from bandcalc.model.operating import analyze
from bandcalc.model.parts import with_value
from bandcalc.model.units import format_code, format_si, format_value
from bandcalc.page.address import PARAM, design_to_address
from bandcalc.page.panels import fit as panel

GREENHOUSE = load_demo("greenhouse_fan_thermostat")


@pytest.fixture(autouse=True)
def fresh_cache():
    # st.cache_data outlives a session; each test counts its own searches (clears every
    # st.cache_data cache, through Streamlit's public API).
    st.cache_data.clear()
    yield


def fit_tab(query: dict | None = None) -> AppTest:
    at = page(query)
    at.session_state["page.panel"] = panel.TITLE
    return at.run()


def find(at: AppTest, upper: str, lower: str, **fields) -> AppTest:
    at.text_input(key="fit.upper").input(upper)
    at.text_input(key="fit.lower").input(lower)
    for name, value in fields.items():
        at.text_input(key=f"fit.{name}").input(value)
    return button(at, "Find values").click().run()


def button(at: AppTest, label: str):
    return next(b for b in at.button if b.label == label)


def candidates_shown(at: AppTest) -> dict[str, list[str]]:
    return {k: list(v) for k, v in at.table[-1].value.items()}


def as_shown(result, unit: str, names: dict[str, str]) -> dict[str, list[str]]:
    """The fit's candidates written the way the panel should write them."""
    rows = result.candidates
    table = {"Rank": [str(i) for i in range(1, len(rows) + 1)]}
    for key, name in names.items():
        table[name] = [format_code(c.resistors[key], 3) for c in rows]
    table["Upper"] = [format_value(c.upper, unit, 4) for c in rows]
    table["Lower"] = [format_value(c.lower, unit, 4) for c in rows]
    table["Worst error"] = [format_value(c.worst_error, unit, 3) for c in rows]
    table["Network current"] = [format_si(c.network_current, "A") for c in rows]
    return table


def test_the_fit_tab_is_listed_and_its_targets_start_at_the_designs_points():
    at = fit_tab()
    assert not at.exception and not errors(at)
    assert panel.TITLE in [t.label for t in at.tabs]
    a = analyze(SUMP)
    assert at.text_input(key="fit.upper").value == format_value(a.upper, "V", 5) == "3.1362 V"
    assert at.text_input(key="fit.lower").value == format_value(a.lower, "V", 5) == "1.8689 V"
    assert at.text_input(key="fit.upper").label == "Upper point wanted (V)"
    assert at.selectbox(key="fit.series").value == "E24"
    assert (at.text_input(key="fit.min_ohms").value, at.text_input(key="fit.max_ohms").value) == ("1k", "10M")
    assert not at.table  # no search before the button is pressed


def test_a_first_click_on_the_defaults_finds_the_design_itself():
    # The sump demo's own values (10k, 39k) are E24 values and place its present points.
    at = fit_tab()
    button(at, "Find values").click().run()
    shown = candidates_shown(at)
    assert not errors(at)
    assert (shown["Input"][0], shown["Feedback"][0], shown["On the sliders"][0]) == ("10k", "39k", "yes")


def test_find_values_shows_the_candidates_of_fit():
    at = find(fit_tab(), "3.1", "1.9")
    assert not at.exception and not errors(at)
    result = fit(SUMP, 3.1, 1.9)
    shown = candidates_shown(at)
    want = as_shown(result, "V", {"input": "Input", "feedback": "Feedback", "to_positive": "To + rail"})
    assert {k: shown[k] for k in want} == want
    assert shown["Input"][0] == "3k6" and shown["Upper"][0] == "3.102 V"  # fit(), sump demo, 3.1 / 1.9 V
    assert [m.value for m in at.markdown if m.value.startswith("**Found for**")] == [
        "**Found for** upper 3.1 V, lower 1.9 V: input, feedback, to + rail from E24, 1k to 10M."]
    assert [as_read(i.value) for i in at.info] == list(result.notes)  # the added leg is explained
    exact = result.exact.resistors
    first = f"Exact values, not standard: input {format_si(exact['input'], 'Ohm', 4)}, "
    assert any(c.value.startswith(first) for c in at.caption)
    stored_json, stored = at.session_state[panel.RESULT_KEY]
    assert stored_json == design_to_json(SUMP) and stored.candidates == result.candidates


def test_apply_puts_a_candidate_on_the_sliders_and_in_the_address():
    at = find(fit_tab(), "3.1", "1.9")
    best = fit(SUMP, 3.1, 1.9).candidates[0]
    at.button(key="fit.apply.1").click().run()
    applied = apply_candidate(SUMP, best)
    assert not at.exception and not errors(at)
    assert design_on(at).resistors == Resistors(**best.resistors) == applied.resistors
    assert at.session_state["page.design"] == applied
    assert figures(at) == expected(applied)  # the figures in view are analyze() of the applied design
    assert at.select_slider(key="in.resistors.feedback.slider").value == best.resistors["feedback"]
    assert at.select_slider(key="in.resistors.to_positive.slider").value == best.resistors["to_positive"]
    assert [s.value for s in at.success] == [
        "Fit candidate 1 applied: input 3k6, feedback 15k, to + rail 3M6; upper 3.102 V, lower 1.898 V."]
    # The targets and the list stay, with the candidate now in use marked.
    assert at.text_input(key="fit.upper").value == "3.1"
    assert candidates_shown(at)["On the sliders"] == ["yes", "", "", "", ""]


def test_the_search_runs_only_on_the_button(monkeypatch):
    calls = []

    def counted(*args, **kwargs):
        calls.append(args)
        return fit(*args, **kwargs)

    monkeypatch.setattr(panel, "fit", counted)
    at = fit_tab()
    at.select_slider(key="in.resistors.input.slider").set_value(12e3).run()
    assert calls == []
    button(at, "Find values").click().run()
    assert len(calls) == 1 and calls[0][1:] == (3.1362, 1.8689)
    at.select_slider(key="in.resistors.feedback.slider").set_value(47e3).run()  # a slider move
    assert len(calls) == 1 and at.table  # the list is shown, not searched again
    at.select_slider(key="in.resistors.feedback.slider").set_value(39e3).run()
    button(at, "Find values").click().run()  # the same design and settings again: from the cache
    assert len(calls) == 1


def test_a_front_end_design_takes_targets_and_shows_candidates_in_its_unit():
    at = fit_tab({PARAM: design_to_address(GREENHOUSE)})
    a = analyze(GREENHOUSE)
    assert at.text_input(key="fit.upper").value == format_value(float(a.points.upper), "C", 5) == "31.914 °C"
    assert at.text_input(key="fit.lower").value == format_value(float(a.points.lower), "C", 5) == "27.94 °C"
    assert at.text_input(key="fit.upper").label == "Upper point wanted (°C)"
    find(at, "32", "28 °C")
    assert not errors(at)
    result = fit(GREENHOUSE, 32.0, 28.0)
    shown = candidates_shown(at)
    names = {"feedback": "Feedback", "to_positive": "To + rail", "to_ground": "To ground"}
    want = as_shown(result, "C", names)
    assert {k: shown[k] for k in want} == want
    assert all(v.endswith(" °C") for v in shown["Upper"] + shown["Lower"] + shown["Worst error"])
    at.button(key="fit.apply.2").click().run()
    applied = apply_candidate(GREENHOUSE, result.candidates[1])
    assert design_on(at) == applied
    # With a front end the figures read in the watched quantity.
    assert figures(at)["Upper switching point"] == format_value(float(analyze(applied).points.upper), "C", 4)


@pytest.mark.parametrize("unit", ["kPa", "%RH", "m/s"])
def test_targets_the_panel_writes_in_a_sensors_own_unit_are_read_back(unit):
    # A sensor with a linear output watching pressure, humidity or speed: the targets start as the
    # design's points written with the unit ("313.62 kPa"); pressing Find values on them must search.
    from bandcalc.page.edit import with_front_end

    sensor = with_value(with_front_end(SUMP, "linear"), "front_end.unit", unit)
    at = fit_tab({PARAM: design_to_address(sensor)})
    assert at.text_input(key="fit.upper").value.endswith(f" {unit}")
    button(at, "Find values").click().run()
    assert not errors(at) and at.table
    assert candidates_shown(at)["Upper"][0].endswith(f" {unit}")


@pytest.mark.parametrize(("upper", "lower", "fields", "message"), [
    ("abc", "1.9", {}, "Upper point wanted: cannot read 'abc'"),
    ("3.1", "", {}, "Lower point wanted: needs a value in V"),
    ("1.9", "3.1", {}, "Upper point wanted (1.9 V) must be above the lower point wanted (3.1 V)"),
    ("3.1", "1.9", {"min_ohms": "4k7x"}, "Smallest resistor: cannot read '4k7x'"),
    ("3.1", "1.9", {"max_ohms": "1k"}, "Smallest resistor (1k) must be below the largest resistor (1k)"),
    # fit() refuses a target above the 5 V rail (the sump signal reaches the rails only).
    ("6", "1.9", {}, "Find values: the upper point 6 V is above the highest signal the stage can see"),
])
def test_bad_input_names_the_field_and_keeps_everything(upper, lower, fields, message):
    at = find(fit_tab(), "3.1", "1.9")
    before = candidates_shown(at)
    find(at, upper, lower, **fields)
    assert not at.exception
    (shown,) = errors(at)
    assert shown.startswith(message)
    assert design_on(at) == SUMP and figures(at) == expected(SUMP)
    assert candidates_shown(at) == before  # the last results stay
    assert at.text_input(key="fit.upper").value == upper  # and so does what was typed


def test_held_resistors_keep_their_values():
    at = fit_tab()
    at.multiselect(key="fit.hold").set_value(["feedback"])
    find(at, "3.1", "1.9")
    assert set(candidates_shown(at)) >= {"Input", "To + rail"}
    result = fit(SUMP, 3.1, 1.9, fixed={"feedback": 39e3})
    assert candidates_shown(at)["Upper"] == [format_value(c.upper, "V", 4) for c in result.candidates]
    assert "Held as given: feedback 39 kΩ." in [i.value for i in at.info]


def test_targets_out_of_reach_without_an_added_leg_are_explained():
    at = fit_tab()
    at.checkbox(key="fit.add_leg").uncheck()
    find(at, "3.1", "1.9")
    result = fit(SUMP, 3.1, 1.9, add_leg=False)
    assert result.problems  # fit(): with input and feedback alone the sump stage needs another reference
    assert [w.value for w in at.warning] == [f"Cannot meet the targets exactly: {p}" for p in result.problems]
    assert candidates_shown(at)["Upper"] == [format_value(c.upper, "V", 4) for c in result.candidates]


def test_settings_stay_across_tabs_and_restart_for_another_design():
    at = fit_tab()
    at.selectbox(key="fit.series").set_value("E96")
    find(at, "3.1", "1.9")
    at.session_state["page.panel"] = "Currents and power"
    at.run()
    at.session_state["page.panel"] = panel.TITLE
    at.run()
    assert at.text_input(key="fit.upper").value == "3.1" and at.selectbox(key="fit.series").value == "E96"
    button(at, "Targets from the present points").click().run()
    assert at.text_input(key="fit.upper").value == "3.1362 V"
    at.selectbox(key="page.demo").set_value("greenhouse_fan_thermostat").run()  # another design
    assert at.text_input(key="fit.upper").value == "31.914 °C"


def test_results_for_a_changed_stage_are_not_offered():
    at = find(fit_tab(), "3.1", "1.9")
    at.text_input(key="in.supply.positive").input("12").run()
    assert not at.table and not [b for b in at.button if b.label.startswith("Apply")]
    assert any(i.value.startswith("The stage has changed since the last search") for i in at.info)
    assert at.session_state[panel.RESULT_KEY][1].candidates == fit(SUMP, 3.1, 1.9).candidates  # kept


def test_latest_fit_holds_for_the_design_while_only_resistor_values_change():
    def script():
        import streamlit as st

        from bandcalc.demos import load_demo
        from bandcalc.model.parts import with_value
        from bandcalc.page.panels.fit import latest_fit

        design = load_demo(st.session_state["demo"])
        st.session_state["held"] = [
            latest_fit(design) is not None,
            latest_fit(with_value(design, "resistors.feedback", 1e6)) is not None,
            latest_fit(with_value(design, "supply.positive", 12.0)) is not None,
        ]

    at = AppTest.from_function(script)
    at.session_state["demo"] = "sump_level_switch"
    at.session_state[panel.RESULT_KEY] = (design_to_json(SUMP), fit(SUMP, 3.1, 1.9))
    at.run()
    assert at.session_state["held"] == [True, True, False]
    assert with_value(SUMP, "resistors.feedback", 1e6) != SUMP


# --- A search that is too large, stopped at its limit, or stopped by the user ---------------------

ALL_LEGS = with_value(with_value(with_value(SUMP, "resistors.to_ground", 100e3), "resistors.to_positive",
                                            100e3), "resistors.to_negative", 1e6)


def test_a_search_too_large_is_refused_with_a_plain_message(monkeypatch):
    # Five free values over E24 (bandcalc.fit.selection refuses them before searching); the
    # search itself must not start.
    def started(*args, **kwargs):
        raise AssertionError("the search started")

    monkeypatch.setattr(selection, "search", started)
    at = fit_tab({PARAM: design_to_address(ALL_LEGS)})
    find(at, "3", "2")
    assert not at.exception
    (shown,) = errors(at)
    assert shown.startswith("Find values: too many combinations to search: 5 free values")
    assert "hold 1 of them" in shown and "coarser series" in shown
    assert design_on(at) == ALL_LEGS and not at.table
    assert at.text_input(key="fit.upper").value == "3"


def test_a_search_stopped_at_its_limit_is_marked_not_proven(monkeypatch):
    # Four free values over E24 (with the leg the fit adds): about 800,000 checks to finish.
    def small(*args, **kwargs):
        return fit(*args, **kwargs, budget=200_000)

    monkeypatch.setattr(panel, "fit", small)
    design = with_value(SUMP, "resistors.to_ground", 100e3)
    at = fit_tab({PARAM: design_to_address(design)})
    find(at, "3", "2")
    result = fit(design, 3.0, 2.0, budget=200_000)
    assert result.stopped and not errors(at)
    assert [w.value for w in at.warning] == [result.stopped]
    assert candidates_shown(at)["Upper"] == [format_value(c.upper, "V", 4) for c in result.candidates]


def test_the_search_shows_its_progress_and_a_stop_button_and_a_stop_keeps_everything(monkeypatch):
    seen = []

    def interrupted(*args, progress, **kwargs):
        # What Streamlit does when Stop (or any other widget) is pressed while the search runs:
        # the script stops at its next Streamlit call, here the progress update.
        progress(1000, 2_000_000)
        seen.append("progress shown")
        st.stop()

    at = find(fit_tab(), "3.1", "1.9")
    before = candidates_shown(at)
    monkeypatch.setattr(panel, "fit", interrupted)
    find(at, "3.2", "1.9")
    assert seen == ["progress shown"] and not at.exception
    (bar,) = at.get("progress")
    assert "1,000 of at most 2,000,000 combinations checked" in bar.proto.text
    stop = button(at, "Stop the search")
    stop.click().run()  # the rerun the click asks for
    assert not at.exception and not errors(at)
    assert any(i.value.startswith("The search was stopped before it finished") for i in at.info)
    assert not at.get("progress") and not [b for b in at.button if b.label == "Stop the search"]
    assert candidates_shown(at) == before and design_on(at) == SUMP
    at.run()  # said once
    assert not any(i.value.startswith("The search was stopped") for i in at.info)
