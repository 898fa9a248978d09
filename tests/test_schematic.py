"""The stage schematic: well-formed SVG, every part with its value in the IEC 60062 code."""

import xml.etree.ElementTree as ET

import pytest

from bandcalc.model.parts import with_value
from bandcalc.outputs.schematic import stage_svg


def texts(svg: str) -> list[str]:
    root = ET.fromstring(svg)
    return ["".join(t.itertext()) for t in root.iter("{http://www.w3.org/2000/svg}text")]


@pytest.mark.parametrize(("stem", "expected"), [
    # Values as written in each demo file (4k7 = 4700 ohm per IEC 60062).
    ("sump_level_switch", ["Rin 10k", "Rfb 39k", "Rsrc 100R", "2.5 V", "5 V", "0 V", "IN", "OUT", "REF"]),
    ("motor_current_direction", ["Rtop 10k", "Rbot 10k", "Rpu 4k7", "Rfb 1M", "3.3 V", "-5 V"]),
    # Front ends: the NTC (10 kOhm at 25 C, Beta 3950 K) under its 10k fixed resistor from 5 V, and
    # the 240k / 62k sense divider from the battery, drawn ahead of the stage's input.
    ("greenhouse_fan_thermostat",
     ["Rup 150k", "Rgnd 120k", "Rfb 1M5", "Rfix 10k", "NTC 10k, B 3950 K", "5 V"]),
    ("strain_overload_alarm", ["Rref 100k", "Rup 100k", "Rfb 200k", "Rpu 4k7", "REF", "-15 V"]),
    ("solar_battery_disconnect", ["Rin 1k", "Rfb 1M", "Rpu 10k", "2.495 V", "Rd1 240k", "Rd2 62k", "IN"]),
])
def test_svg_names_every_part_with_its_value(stem, expected, demo):
    svg = stage_svg(demo(stem))
    assert svg.startswith("<svg")
    found = texts(svg)
    for label in expected:
        assert label in found


def test_push_pull_has_no_pullup_and_inverting_no_reference(demo):
    found = texts(stage_svg(demo("greenhouse_fan_thermostat")))
    assert not any(t.startswith("Rpu") for t in found)
    assert "REF" not in found


def test_a_reference_leg_in_a_non_inverting_stage_names_the_shared_reference(demo):
    from bandcalc.page.edit import with_legs

    d = with_legs(demo("sump_level_switch"), {"to_reference"})
    found = texts(stage_svg(d))
    assert "Rref 100k" in found and found.count("REF") == 2  # the reference and the leg's far end


def test_values_change_the_labels_only(demo):
    from bandcalc.outputs.schematic import stage_labels

    d = demo("sump_level_switch")
    moved = with_value(d, "resistors.feedback", 47e3)
    a, b = stage_svg(d), stage_svg(moved)
    assert "Rfb 47k" in texts(b) and "Rfb 39k" not in texts(b)
    assert a.replace("Rfb 39k", "Rfb 47k") == b
    assert stage_labels(moved)["resistors.feedback"] == "Rfb 47k"


def positions(svg: str) -> dict[str, float]:
    """x of each text label (the start of its first line)."""
    root = ET.fromstring(svg)
    return {"".join(t.itertext()): float(t.get("x")) for t in root.iter("{http://www.w3.org/2000/svg}text")
            if t.get("x") is not None}


def test_the_front_end_sits_ahead_of_the_input_resistor(demo):
    found = positions(stage_svg(demo("solar_battery_disconnect")))
    assert found["IN"] < found["Rd1 240k"] < found["Rin 1k"]


@pytest.fixture
def sump_with(demo):
    """``sump_with(front_end)`` -> the sump demo with that front-end section and a 100 ohm source."""
    from bandcalc.model.design_file import design_from_dict, design_to_dict

    data = design_to_dict(demo("sump_level_switch"))

    def design(front_end: dict):
        return design_from_dict({**data, "source": {"resistance": 100}, "front_end": front_end})
    return design


def test_a_linear_sensor_is_drawn_with_its_law_and_output_resistance(sump_with):
    svg = stage_svg(sump_with({"kind": "linear", "volts_per_unit": 0.04, "offset": 0.5, "unit": "kPa",
                               "resistance": "1k"}))
    found = texts(svg)
    assert "40 mV/kPa + 500 mV" in found and "Rsen 1k" in found
    assert "IN" not in found  # the sensor is the input
    bare = texts(stage_svg(sump_with({"kind": "linear", "volts_per_unit": 0.01, "unit": "C"})))
    assert "10 mV/C" in bare and not any(t.startswith("Rsen") for t in bare)


def test_a_thermistor_on_top_from_the_reference(sump_with):
    found = texts(stage_svg(sump_with({
        "kind": "thermistor", "steinhart_hart": [1.129241e-3, 2.341077e-4, 8.775468e-8], "fixed": "10k",
        "position": "top", "excitation": "reference"})))
    # Steinhart-Hart coefficients of a 10 kOhm probe: its resistance at 25 C rounds to 10k.
    assert "NTC 10k, S-H" in found and "Rfix 10k" in found and found.count("REF") == 2


def test_each_front_end_layout_is_drawn_once(demo):
    from bandcalc.model.parts import with_value
    from bandcalc.outputs.schematic import stage_template

    d = demo("greenhouse_fan_thermostat")
    stage_svg(d)
    before = stage_template.cache_info().hits
    stage_svg(with_value(d, "front_end.fixed", 12e3))  # a new value, the same drawing
    assert stage_template.cache_info().hits == before + 1


def test_the_input_filter_sits_between_the_source_and_the_input_resistor(demo):
    from dataclasses import replace

    from bandcalc.model.design import InputFilter

    found = positions(stage_svg(replace(demo("sump_level_switch"), filter=InputFilter(4.7e3, 1e-7))))
    assert found["IN"] < found["Rsrc 100R"] < found["Rflt 4k7"] < found["Cflt 100 nF"] < found["Rin 10k"]
    capacitor_only = texts(stage_svg(replace(demo("sump_level_switch"), filter=InputFilter(0.0, 1e-7))))
    assert "Cflt 100 nF" in capacitor_only and not any(t.startswith("Rflt") for t in capacitor_only)


def test_the_load_hangs_from_the_output(demo):
    from bandcalc.model.design import Design, Load

    sump = demo("sump_level_switch")
    to_rail = Design(**{**sump.__dict__, "load": Load(resistance=4.7e3, volts=3.3)})
    found = texts(stage_svg(to_rail))
    assert "RL 4k7" in found and "3.3 V" in found
    to_ground = Design(**{**sump.__dict__, "load": Load(resistance=2.2e3)})
    found = texts(stage_svg(to_ground))
    assert "RL 2k2" in found and "0 V" in found  # 0 V: the negative rail of the supply pins
    assert not any(t.startswith("RL") for t in texts(stage_svg(sump)))
    # Logic thresholds alone draw nothing.
    thresholds = Design(**{**sump.__dict__, "load": Load(logic_high_min=2.0)})
    assert texts(stage_svg(thresholds)) == texts(stage_svg(sump))
