"""Front ends on the page: the sidebar section, the watched figures, the transfer curve's axis, the
schematic.  Expected numbers come from the package (``analyze``, ``transfer_curve``), which its own
tests check against a published probe table, the Beta relation, lcapy and scipy; here the question
is whether the page shows and edits them faithfully."""

import base64

import pytest
from page_helpers import SUMP, captions, chart, design_on, errors, figures, numbers, page

from bandcalc.demos import load_demo
from bandcalc.model.front_end import DividerFrontEnd, LinearFrontEnd, ThermistorFrontEnd
from bandcalc.model.operating import analyze
from bandcalc.model.units import format_code, format_si, format_value
from bandcalc.page.edit import with_front_end, with_reference

SOLAR = load_demo("solar_battery_disconnect")
GREENHOUSE = load_demo("greenhouse_fan_thermostat")
SECTION = "page.section.front_end"


def svg_of(at) -> str:
    url = at.image[0].proto.imgs[0].url
    return base64.b64decode(url.split(",", 1)[1]).decode()


def with_section(design=SUMP):
    at = page(design=design)
    at.session_state[SECTION] = True
    return at.run()


def test_solar_figures_read_in_battery_volts_with_the_stage_beneath():
    at = page(design=SOLAR)
    a = analyze(SOLAR)
    shown = figures(at)
    assert shown["Upper switching point"] == format_value(float(a.points.upper), "V", 4) == "12.78 V"
    assert shown["Lower switching point"] == format_value(float(a.points.lower), "V", 4) == "11.56 V"
    assert shown["Hysteresis"] == format_value(float(a.points.upper) - float(a.points.lower), "V", 4)
    assert shown["Output high"] == format_si(a.output_high, "V", 4)
    notes = captions(at)
    assert f"{format_si(a.upper, 'V', 4)} at the stage" in notes
    assert f"{format_si(a.hysteresis, 'V', 4)} at the stage" in notes
    assert any("output turns high as the watched quantity rises through 12.78 V" in c for c in notes)


def test_a_thermistor_at_the_bottom_pairs_the_watched_upper_point_with_the_stage_lower_point():
    at = page(design=GREENHOUSE)
    a = analyze(GREENHOUSE)
    assert figures(at)["Upper switching point"] == format_value(float(a.points.upper), "C", 4)
    notes = captions(at)
    # As it warms the divider's output falls, so the warm point is where the stage's input has
    # fallen to its lower point (bandcalc.model.points.DesignPoints): the first caption is that one.
    assert notes.index(f"{format_si(a.lower, 'V', 4)} at the stage") < notes.index(
        f"{format_si(a.upper, 'V', 4)} at the stage")
    assert any("output turns high as the watched quantity rises" in c for c in notes)  # the fan starts
    # The currents panel works at the stage's own points and says where they are watched.
    warm = format_value(float(a.points.at_stage_upper), "C", 4)
    assert any(c.startswith(f"At the stage's upper point: {format_si(a.upper, 'V', 4)} in ({warm} watched)")
               for c in notes)


def test_the_transfer_curve_plots_against_the_watched_quantity_or_the_stage():
    at = page(design=GREENHOUSE)
    a = analyze(GREENHOUSE)
    spec = chart(at)
    assert spec["layout"]["xaxis"]["title"]["text"] == "Temperature (°C)"
    points = spec["data"][2]
    assert points["x"] == pytest.approx([float(a.points.upper), float(a.points.lower)])
    assert points["text"] == [f"Upper {format_value(float(a.points.upper), 'C', 4)}",
                              f"Lower {format_value(float(a.points.lower), 'C', 4)}"]
    at.radio(key="page.transfer.axis").set_value("stage").run()
    spec = chart(at)
    assert spec["layout"]["xaxis"]["title"]["text"] == "Stage input, open-circuit (V)"
    assert spec["data"][2]["x"] == pytest.approx([a.upper, a.lower])
    rising = numbers(spec["data"][0]["y"])
    assert min(rising) == pytest.approx(a.output_low, abs=1e-9)
    assert max(rising) == pytest.approx(a.output_high, abs=1e-9)


def test_without_a_front_end_there_is_no_axis_choice():
    at = page()
    assert not [r for r in at.radio if r.key == "page.transfer.axis"]
    assert chart(at)["layout"]["xaxis"]["title"]["text"] == "Input (V)"


def test_a_sense_divider_from_the_sidebar():
    at = with_section()
    at.radio(key="in.front_end.kind").set_value("divider").run()
    d = design_on(at)
    assert d.front_end == DividerFrontEnd(top=100e3, bottom=100e3)
    assert (d.source.low, d.source.high) == (None, None)  # the watched range takes their place
    assert figures(at)["Upper switching point"] == format_value(float(analyze(d).points.upper), "V", 4)
    at.text_input(key="in.front_end.top.text").input("300k").run()
    assert design_on(at).front_end.top == 300e3
    assert "Rd1 300k" in svg_of(at) and "Rd2 100k" in svg_of(at)
    at.text_input(key="in.front_end.high").input("24").run()
    assert design_on(at).front_end.high == 24.0
    at.text_input(key="in.front_end.low").input("lots").run()
    (message,) = errors(at)
    assert message.startswith("Lowest watched value (front_end.low): cannot read 'lots'")
    assert "keeps no value" in message and design_on(at).front_end.low is None
    assert not [k for k in at.session_state if str(k) == "in.source.high"]  # not offered with a front end


def test_a_thermistor_from_the_sidebar():
    at = with_section()
    at.radio(key="in.front_end.kind").set_value("thermistor").run()
    assert design_on(at).front_end == ThermistorFrontEnd(fixed=10e3, r25=10e3, beta=3950.0)
    at.text_input(key="in.front_end.beta").input("3435").run()
    assert design_on(at).front_end.beta == 3435.0
    at.text_input(key="in.front_end.beta").input("warm").run()
    (message,) = errors(at)
    assert message.startswith("Beta (front_end.beta): cannot read 'warm'") and "keeps 3435 K" in message
    assert at.text_input(key="in.front_end.beta").value == "3435 K"
    at.radio(key="in.front_end.position").set_value("top").run()
    at.radio(key="in.front_end.excitation.kind").set_value("volts").run()
    at.text_input(key="in.front_end.excitation").input("3.3").run()
    at.text_input(key="in.front_end.dissipation_constant").input("2m").run()
    fe = design_on(at).front_end
    assert (fe.position, fe.excitation, fe.dissipation_constant) == ("top", 3.3, 2e-3)
    at.radio(key="in.front_end.model").set_value("steinhart_hart").run()
    at.text_input(key="in.front_end.steinhart_hart[2]").input("8.775468e-8").run()
    fe = design_on(at).front_end
    assert fe.beta is None and fe.steinhart_hart[2] == 8.775468e-8
    assert f"NTC {format_code(fe.nominal_r25)}, S-H" in svg_of(at) and "3.3 V" in svg_of(at)
    assert figures(at)["Upper switching point"].endswith(" °C")
    assert not at.exception


def test_a_linear_sensor_from_the_sidebar():
    at = with_section()
    at.radio(key="in.front_end.kind").set_value("linear").run()
    assert design_on(at).front_end == LinearFrontEnd(volts_per_unit=0.01, unit="C")
    at.text_input(key="in.front_end.unit").input("kPa").run()
    at.text_input(key="in.front_end.volts_per_unit").input("45m").run()
    at.text_input(key="in.front_end.offset").input("0.2").run()
    fe = design_on(at).front_end
    assert (fe.unit, fe.volts_per_unit, fe.offset) == ("kPa", 0.045, 0.2)
    a = analyze(design_on(at))
    assert figures(at)["Upper switching point"] == format_value(float(a.points.upper), "kPa", 4)
    assert "45 mV/kPa + 200 mV" in svg_of(at)
    at.text_input(key="in.front_end.unit").input("  ").run()
    (message,) = errors(at)
    assert message.startswith("Watched unit (front_end.unit)") and "keeps 'kPa'" in message
    assert at.text_input(key="in.front_end.unit").value == "kPa"
    at.radio(key="in.front_end.kind").set_value("none").run()
    assert design_on(at).front_end is None


def test_a_refused_choice_shows_the_designs_own_again():
    # A thermistor divider fed from the reference needs a fixed reference: with a divider reference
    # the choice is refused, and the radio goes back to what the design has, the positive rail.
    divided = with_front_end(with_reference(SUMP, "divider"), "thermistor")
    at = with_section(divided)
    at.radio(key="in.front_end.excitation.kind").set_value("reference").run()
    (message,) = errors(at)
    assert message.startswith("Divider fed from: front_end.excitation: \"reference\" needs a fixed reference")
    assert design_on(at) == divided
    assert at.radio(key="in.front_end.excitation.kind").value == "positive"


def test_the_input_filter_section_adds_a_filter_and_states_its_pole():
    from bandcalc.model.input_filter import filter_pole

    at = page()
    at.session_state["page.section.filter"] = True
    at.run()
    at.radio(key="in.filter.kind").set_value("rc").run()
    d = design_on(at)
    assert d.filter is not None and not errors(at)
    pole = filter_pole(d)
    stated = f"Pole {format_si(pole.pole_upper, 'Hz')} at the upper point"
    assert any(c.startswith(stated) for c in captions(at))
    at.text_input(key="in.filter.capacitance").input("1 uF").run()
    assert design_on(at).filter.capacitance == pytest.approx(1e-6)
