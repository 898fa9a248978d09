"""The stage schematic: well-formed SVG, every part with its value in the IEC 60062 code."""

import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from bandcalc.design import load_design
from bandcalc.schematic import stage_svg

DEMO_DIR = Path(__file__).parent.parent / "demo_data"


def texts(svg: str) -> list[str]:
    root = ET.fromstring(svg)
    return ["".join(t.itertext()) for t in root.iter("{http://www.w3.org/2000/svg}text")]


@pytest.mark.parametrize(("stem", "expected"), [
    # Values as written in each demo file (4k7 = 4700 ohm per IEC 60062).
    ("sump_level_switch", ["Rin 10k", "Rfb 39k", "Rsrc 100R", "2.5 V", "5 V", "0 V", "IN", "OUT", "REF"]),
    ("motor_current_direction", ["Rtop 10k", "Rbot 10k", "Rpu 4k7", "Rfb 1M", "3.3 V", "-5 V"]),
    ("greenhouse_fan_thermostat", ["Rup 150k", "Rgnd 120k", "Rfb 1M5"]),
    ("strain_overload_alarm", ["Rref 100k", "Rup 100k", "Rfb 200k", "Rpu 4k7", "REF", "-15 V"]),
    ("solar_battery_disconnect", ["Rin 1k", "Rfb 1M", "Rpu 10k", "2.495 V"]),
])
def test_svg_names_every_part_with_its_value(stem, expected):
    svg = stage_svg(load_design(DEMO_DIR / f"{stem}.json"))
    assert svg.startswith("<svg")
    found = texts(svg)
    for label in expected:
        assert label in found


def test_push_pull_has_no_pullup_and_inverting_no_reference():
    found = texts(stage_svg(load_design(DEMO_DIR / "greenhouse_fan_thermostat.json")))
    assert not any(t.startswith("Rpu") for t in found)
    assert "REF" not in found


def test_a_reference_leg_in_a_non_inverting_stage_names_the_shared_reference():
    from bandcalc.page.edit import with_legs

    d = with_legs(load_design(DEMO_DIR / "sump_level_switch.json"), {"to_reference"})
    found = texts(stage_svg(d))
    assert "Rref 100k" in found and found.count("REF") == 2  # the reference and the leg's far end


def test_values_change_the_labels_only():
    from bandcalc.page.edit import with_value
    from bandcalc.schematic import stage_labels

    d = load_design(DEMO_DIR / "sump_level_switch.json")
    moved = with_value(d, "resistors.feedback", 47e3)
    a, b = stage_svg(d), stage_svg(moved)
    assert "Rfb 47k" in texts(b) and "Rfb 39k" not in texts(b)
    assert a.replace("Rfb 39k", "Rfb 47k") == b
    assert stage_labels(moved)["resistors.feedback"] == "Rfb 47k"
