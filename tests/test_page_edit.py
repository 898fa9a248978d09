"""The page's pure helpers: the design in the address, and the edits its controls make."""

import base64
import zlib
from pathlib import Path

import pytest

from bandcalc.design import DesignError, DividerReference, FixedReference, OpenDrain, PushPull, load_design
from bandcalc.eseries import series_values
from bandcalc.page.address import address_to_design, design_to_address
from bandcalc.page.edit import (
    slider_options,
    value_at,
    with_legs,
    with_output,
    with_reference,
    with_stage,
    with_value,
)

DEMO_DIR = Path(__file__).parent.parent / "demo_data"
DEMOS = sorted(DEMO_DIR.glob("*.json"))
SUMP = load_design(DEMO_DIR / "sump_level_switch.json")


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_address_round_trip(path):
    d = load_design(path)
    text = design_to_address(d)
    assert address_to_design(text) == d
    assert all(c.isalnum() or c in "-_" for c in text)  # URL-safe, no padding
    # Well under the ~2,000 characters every browser and server keeps in an address (common practice).
    assert len(text) < 1500


@pytest.mark.parametrize("garbled", ["", "not*base64!", "AAAA", design_to_address(SUMP)[:-12]])
def test_garbled_address_is_named(garbled):
    with pytest.raises(DesignError, match=r"page address \(design=\.\.\.\)"):
        address_to_design(garbled)


def test_valid_text_but_bad_design_names_the_key():
    text = base64.urlsafe_b64encode(zlib.compress(b'{"format": 1, "stage": "sideways"}')).decode()
    with pytest.raises(DesignError, match="page address.*supply"):
        address_to_design(text)


def test_oversized_address_is_refused():
    bomb = base64.urlsafe_b64encode(zlib.compress(b" " * 1_000_000)).decode()
    with pytest.raises(DesignError, match="too long"):
        address_to_design(bomb)


def test_with_value_validates_and_names_the_key():
    assert with_value(SUMP, "resistors.feedback", 47e3).resistors.feedback == 47e3
    assert value_at(with_value(SUMP, "supply.positive", 12.0), "supply.positive") == 12.0
    with pytest.raises(DesignError, match="resistors.feedback"):
        with_value(SUMP, "resistors.feedback", 0.0)
    with pytest.raises(DesignError, match="output.pullup: not a value"):
        with_value(SUMP, "output.pullup", 1e3)  # push-pull output has no pull-up
    with pytest.raises(DesignError, match="supply"):
        with_value(SUMP, "supply.negative", 6.0)


def test_stage_switch_fits_what_the_stage_needs():
    inverting = load_design(DEMO_DIR / "greenhouse_fan_thermostat.json")
    d = with_stage(inverting, "non-inverting")
    assert d.resistors.input == 100e3
    assert d.reference == FixedReference(2.5)  # mid-supply of 0 / 5 V
    assert with_stage(d, "inverting").stage == "inverting"
    with pytest.raises(DesignError, match="stage"):
        with_stage(d, "sideways")


def test_legs_and_reference_kinds():
    d = with_legs(SUMP, {"to_ground", "to_positive"})
    assert (d.resistors.to_ground, d.resistors.to_positive, d.resistors.to_negative) == (100e3, 100e3, None)
    assert with_legs(d, set()).resistors.present().keys() == {"feedback", "input"}
    with pytest.raises(DesignError, match="resistors.sideways"):
        with_legs(SUMP, {"sideways"})
    div = with_reference(SUMP, "divider")
    assert div.reference == DividerReference(10e3, 10e3)
    back = with_reference(with_value(div, "reference.top", 30e3), "fixed")
    assert back.reference.volts == pytest.approx(1.25)  # 5 V x 10k / (30k + 10k)
    with pytest.raises(DesignError, match="reference"):
        with_reference(SUMP, "none")  # the non-inverting stage needs its reference


def test_open_drain_starts_with_a_strong_pullup():
    d = with_output(SUMP, "open-drain")
    assert isinstance(d.output, OpenDrain)
    # A twentieth of 39k is 1.95k; nearest E12 is 1.8k; under a tenth of the feedback (common practice).
    assert d.output.pullup == 1800.0
    assert isinstance(with_output(d, "push-pull").output, PushPull)


def test_slider_options_span_decades_around_the_value():
    opts = slider_options("E24", 39e3)
    assert opts[0] == 1e3 and opts[-1] == 910e3  # one decade below, one above the value's decade
    assert 39e3 in opts and len(opts) == 3 * 24
    odd = slider_options("E24", 4750.0)  # E96, not E24: kept exactly among its neighbours
    assert 4750.0 in odd and len(odd) == 3 * 24 + 1
    assert list(odd) == sorted(odd)
    assert set(slider_options("E192", 1e3)) >= set(series_values("E192", 100, 99e3))
    with pytest.raises(DesignError, match="series"):
        slider_options("E7", 1e3)
