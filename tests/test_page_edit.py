"""The page's pure helpers: the design in the address, and the edits its controls make."""

import base64
import re
import zlib
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as hyp
from page_helpers import prose

from bandcalc.demos import load_demo
from bandcalc.errors import DesignError
from bandcalc.model.design import DividerReference, FixedReference, Load, OpenDrain, PushPull
from bandcalc.model.parts import value_at, with_value
from bandcalc.model.standard_values import series_values
from bandcalc.model.units import format_code
from bandcalc.page.address import ADDRESS_MAX, address_to_design, design_to_address
from bandcalc.page.edit import (
    in_series,
    slider_options,
    with_legs,
    with_load_value,
    with_output,
    with_protective,
    with_reference,
    with_resistor_size,
    with_stage,
)

SUMP = load_demo("sump_level_switch")  # also used at import time, in parametrize


def test_address_round_trip(each_demo):
    d = each_demo
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


@pytest.mark.parametrize("json_text", [
    '{"format": 1, "stage": "inverting", "supply": {"positive": 1%s}, "resistors": {"feedback": 1e3}}'
    % ("0" * 400),  # beyond a float's range, about 1.8e308 (IEEE 754 double precision)
    "[" * 20_000 + "]" * 20_000,  # past the JSON parser's recursion limit (about 1,000 levels, from memory)
])
def test_an_address_no_design_can_come_from_is_named(json_text):
    text = base64.urlsafe_b64encode(zlib.compress(json_text.encode())).decode()
    # Refused naming the address, and the key or the nesting at fault.
    with pytest.raises(DesignError, match=r"page address \(design=\.\.\.\): (supply\.positive: .*too large|"
                                          r"nested .* levels deep)"):
        address_to_design(text)


def test_a_lone_surrogate_cannot_go_into_the_address():
    with pytest.raises(DesignError, match=r"^name: holds a lone surrogate"):
        design_to_address(replace(SUMP, name="Pump \ud800"))


def test_with_value_validates_and_names_the_key():
    assert with_value(SUMP, "resistors.feedback", 47e3).resistors.feedback == 47e3
    assert value_at(with_value(SUMP, "supply.positive", 12.0), "supply.positive") == 12.0
    with pytest.raises(DesignError, match="resistors.feedback"):
        with_value(SUMP, "resistors.feedback", 0.0)
    with pytest.raises(DesignError, match="output.pullup: not a value"):
        with_value(SUMP, "output.pullup", 1e3)  # push-pull output has no pull-up
    with pytest.raises(DesignError, match="supply"):
        with_value(SUMP, "supply.negative", 6.0)


def test_stage_switch_fits_what_the_stage_needs(demo):
    inverting = demo("greenhouse_fan_thermostat")
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
    # Each option reads differently on the slider: a value that reads like a neighbour takes its place.
    assert 4700.0 not in slider_options("E24", 4699.6) and 4699.6 in slider_options("E24", 4699.6)
    for ohms in (4699.6, 4750.0, 39e3, 0.0123, 4.982e-14, 1e13):
        labels = [format_code(v, 4) for v in slider_options("E96", ohms)]
        assert len(labels) == len(set(labels)), ohms
    # Beyond the series tables (yocto to yotta ohm, the SI prefixes) the value stands alone.
    assert slider_options("E24", 1e23) == (1e23,) and slider_options("E24", 1e308) == (1e308,)
    assert in_series("E24", 39e3) and not in_series("E24", 4750.0) and not in_series("E24", 1e308)


# --- front ends ---------------------------------------------------------------------------------

def test_each_front_end_kind_starts_valid_and_clears_the_source_range():
    from bandcalc.model.operating import analyze
    from bandcalc.page.edit import front_end_kind, with_front_end

    ranged = with_value(SUMP, "source.high", 4.0)
    units = {"divider": "V", "thermistor": "C", "linear": "C"}
    for kind, unit in units.items():
        d = with_front_end(ranged, kind)
        assert front_end_kind(d) == kind and (d.source.low, d.source.high) == (None, None)
        assert analyze(d).points.unit == unit
    bare = with_front_end(with_front_end(SUMP, "divider"), "none")
    assert bare.front_end is None and bare.source.resistance == SUMP.source.resistance
    assert (bare.source.low, bare.source.high) == (None, None)  # the rails
    with pytest.raises(DesignError, match="front_end.kind: 'bridge' is not a front-end kind"):
        with_front_end(SUMP, "bridge")


def test_beta_and_steinhart_hart_describe_the_same_thermistor():
    from bandcalc.model.thermistor import KELVIN_AT_25C, beta_resistance, steinhart_hart_resistance
    from bandcalc.page.edit import thermistor_model, with_front_end, with_thermistor_model

    d = with_front_end(SUMP, "thermistor")
    sh = with_thermistor_model(d, "steinhart_hart")
    assert thermistor_model(sh) == "steinhart_hart"
    # The Beta relation R = R25 exp(B (1/T - 1/298.15 K)) (thermistor manufacturers' data sheets) is
    # Steinhart-Hart (Steinhart & Hart, Deep-Sea Research 15, 1968) with C = 0.
    kelvin = np.linspace(250.0, 400.0, 7)
    expected = beta_resistance(10e3, 3950.0, kelvin)
    assert np.allclose(steinhart_hart_resistance(sh.front_end.steinhart_hart, kelvin), expected, rtol=1e-12)
    back = with_thermistor_model(sh, "beta").front_end
    assert (back.r25, back.beta) == pytest.approx((10e3, 3950.0), rel=1e-12)
    # From a 10 kOhm probe's published coefficients (tests/test_frontend.py): the Beta taken is the
    # one between 25 C and 50 C (B25/50, as data sheets commonly state it), so the Beta curve meets
    # the coefficients' curve at both temperatures.
    probe = (1.129241e-3, 2.341077e-4, 8.775468e-8)
    d = with_value(sh, "front_end.steinhart_hart", probe)
    beta = with_thermistor_model(d, "beta").front_end
    for kelvin in (KELVIN_AT_25C, KELVIN_AT_25C + 25.0):
        assert beta_resistance(beta.r25, beta.beta, kelvin) == pytest.approx(
            steinhart_hart_resistance(probe, kelvin), rel=1e-12)


def test_one_steinhart_hart_coefficient_by_its_index():
    from bandcalc.page.edit import with_front_end, with_thermistor_model

    d = with_thermistor_model(with_front_end(SUMP, "thermistor"), "steinhart_hart")
    assert value_at(d, "front_end.steinhart_hart[2]") == 0.0
    moved = with_value(d, "front_end.steinhart_hart[2]", 8.775468e-8)
    assert moved.front_end.steinhart_hart[2] == 8.775468e-8
    assert moved.front_end.steinhart_hart[:2] == d.front_end.steinhart_hart[:2]
    with pytest.raises(DesignError, match="front_end.steinhart_hart: an NTC thermistor needs B > 0"):
        with_value(d, "front_end.steinhart_hart[1]", -1e-4)
    with pytest.raises(DesignError, match=r"front_end.steinhart_hart\[3\]: not a value of this design"):
        value_at(d, "front_end.steinhart_hart[3]")


def test_thermistor_excitation_kinds():
    from bandcalc.page.edit import excitation_kind, with_excitation, with_front_end

    d = with_front_end(SUMP, "thermistor")
    assert excitation_kind(d) == "positive"
    own = with_excitation(d, "volts")
    assert own.front_end.excitation == SUMP.supply.positive and excitation_kind(own) == "volts"
    assert with_excitation(own, "reference").front_end.excitation == "reference"  # the sump has 2.5 V fixed
    divided = with_value(with_reference(SUMP, "divider"), "resistors.feedback", 39e3)
    with pytest.raises(DesignError, match='"reference" needs a fixed reference'):
        with_excitation(with_front_end(divided, "thermistor"), "reference")


# --- tolerances ---------------------------------------------------------------------------------

def test_tolerance_entries_edit_the_design_section():
    from bandcalc.model.tolerances import ToleranceError
    from bandcalc.page.tolerance_edit import (
        tolerance_value,
        with_part_tolerance,
        with_temperature_end,
        with_tolerance,
        with_window_end,
        without_tolerances,
    )

    assert SUMP.tolerances is not None
    d = with_tolerance(SUMP, "supply", 2.5)
    assert d.tolerances.supply == 2.5 and tolerance_value(d, "supply") == 2.5
    assert with_tolerance(d, "supply", None).tolerances.supply == 0.0  # blank: exact
    assert with_tolerance(d, "resistors", None).tolerances.resistors.default is None  # blank: the series'
    with pytest.raises(ToleranceError, match="tolerances.supply: must be from 0 to 50 percent"):
        with_tolerance(d, "supply", 60.0)
    # A blank end of the temperature range is 25 C, the parts' nominal temperature; both blank: none.
    bare = without_tolerances(SUMP)
    cold = with_temperature_end(bare, "low", -20.0)
    assert cold.tolerances.temperature == (-20.0, 25.0)
    assert with_temperature_end(cold, "low", None).tolerances.temperature is None
    w = with_window_end(bare, "upper", "high", 3.2)
    assert w.tolerances.limits.upper == (None, 3.2)
    assert with_window_end(w, "upper", "high", None).tolerances.limits.upper is None
    with pytest.raises(ToleranceError, match="tolerances.limits.upper: the lowest value"):
        with_window_end(w, "upper", "low", 3.3)
    part = with_part_tolerance(bare, "resistors", "feedback", 0.1)
    assert part.tolerances.resistors.get("feedback") == 0.1 and part.tolerances.resistors.get("input") is None
    assert with_part_tolerance(part, "resistors", "feedback", None).tolerances.resistors.parts == ()


def test_resistor_rows_take_the_series_tolerance_unless_given(demo):
    from bandcalc.page.tolerance_edit import resistor_rows, with_part_tolerance, without_tolerances

    rows = {r["name"]: r for r in resistor_rows(without_tolerances(SUMP))}
    # 10k and 39k are E24 values: 5 % (IEC 60063 usual tolerance of E24, common practice).
    assert (rows["input"]["percent"], rows["input"]["origin"]) == (5.0, "usual for E24")
    assert rows["feedback"]["percent"] == 5.0
    given = {r["name"]: r for r in resistor_rows(with_part_tolerance(SUMP, "resistors", "feedback", 0.1))}
    assert (given["feedback"]["percent"], given["feedback"]["origin"]) == (0.1, "given for this resistor")
    solar = {r["name"]: r for r in resistor_rows(demo("solar_battery_disconnect"))}
    assert solar["front_end.top"]["percent"] == 0.1 and solar["front_end.top"]["tempco"] == 25.0
    assert solar["input"]["origin"] == "given for every resistor"


@pytest.mark.parametrize(("text", "unit", "value"), [
    ("25", "C", 25.0), ("-20 C", "C", -20.0), ("3950 K", "K", 3950.0), ("1.5m", "W/K", 1.5e-3),
    ("1.5 mW/K", "W/K", 1.5e-3), ("100 ppm/K", "ppm/K", 100.0), ("7u", "V/K", 7e-6), ("2.5 %", "%", 2.5),
    ("8.775468e-8", "", 8.775468e-8), ("4k7", "Ohm", 4700.0), ("50 kPa", "kPa", 50.0),
])
def test_typed_values_in_any_unit(text, unit, value):
    from bandcalc.page.inputs import read_value

    assert read_value(text, unit, "field") == pytest.approx(value, rel=1e-15)


def test_typed_value_errors_name_the_field():
    from bandcalc.model.units import UnitError
    from bandcalc.page.inputs import read_value, shown

    with pytest.raises(UnitError, match=r"Beta \(front_end.beta\): cannot read 'warm'; write a number in K"):
        read_value("warm", "K", "Beta (front_end.beta)")
    assert shown(3950.0, "K") == "3950 K" and shown(1.5e-3, "W/K") == "1.5 mW/K"
    assert shown(8.775468e-8, "") == "8.775468e-08" and shown(25.0, "C") == "25 °C"


def test_data_sheet_limits_and_networks_edit_the_design_section(demo):
    from bandcalc.errors import BandcalcError
    from bandcalc.page.tolerance_edit import (
        limit_end,
        limit_keys,
        resistor_rows,
        with_limit_end,
        with_network,
        with_part_tolerance,
        without_network,
        without_tolerances,
    )

    bare = without_tolerances(SUMP)
    assert limit_keys(SUMP) == ("output.high_drop", "output.low_drop", "output.resistance",
                                "comparator_hysteresis")
    assert limit_keys(demo("rain_tank_overflow"))[:2] == ("output.low_volts", "output.pullup_volts")
    # A blank end takes the design's own value (the sump's high drop is 50 mV); both blank: no limit.
    d = with_limit_end(bare, "output.high_drop", "high", 0.3)
    assert d.tolerances.output.high_drop == (0.05, 0.3) and limit_end(d, "output.high_drop", "low") == 0.05
    assert with_limit_end(with_limit_end(d, "output.high_drop", "low", None), "output.high_drop", "high",
                          None).tolerances.output.high_drop is None
    assert with_limit_end(bare, "comparator_hysteresis", "high", 0.006).tolerances.comparator_hysteresis \
        == (0.0, 0.006)
    with pytest.raises(BandcalcError, match="tolerances.output.high_drop: the least value"):
        with_limit_end(d, "output.high_drop", "low", 0.5)
    # A network takes its members from elsewhere: their own tempco entries and other networks.
    own = with_part_tolerance(bare, "resistor_tempco", "feedback", 25.0)
    net = with_network(own, "RN1", ("input", "feedback"), 50.0, 5.0)
    assert net.tolerances.resistor_networks[0].resistors == ("input", "feedback")
    assert net.tolerances.resistor_tempco.parts == ()
    rows = {r["name"]: r for r in resistor_rows(net)}
    assert rows["input"]["network"] == "RN1" and rows["input"]["tempco"] == 50.0
    assert without_network(net, "RN1").tolerances.resistor_networks == ()
    with pytest.raises(BandcalcError, match="tolerances.resistor_networks.RN2.resistors: this design has no "
                                            "to_ground resistor"):
        with_network(net, "RN2", ("input", "to_ground"), 50.0, 5.0)
    with pytest.raises(BandcalcError, match="tolerances.resistor_networks.RN1.resistors: give two or more"):
        with_network(net, "RN1", ("input",), 50.0, 5.0)


def test_a_thermistors_beta_pair_and_model_switch(demo):
    from bandcalc.page.edit import beta_temperature, with_beta_temperature, with_thermistor_model

    d = demo("greenhouse_fan_thermostat")
    assert beta_temperature(d, 1) is None  # not given: B25/50 assumed
    hot = with_beta_temperature(d, 1, 85.0)
    assert hot.front_end.beta_temperatures == (25.0, 85.0)  # the blank first one takes 25 C
    assert with_beta_temperature(with_beta_temperature(hot, 1, None), 0, None).front_end.beta_temperatures \
        is None
    with pytest.raises(DesignError, match="front_end.beta_temperatures: the first temperature must be below"):
        with_beta_temperature(hot, 0, 90.0)
    # Steinhart-Hart coefficients need no pair: switching drops it.
    assert with_thermistor_model(hot, "steinhart_hart").front_end.beta_temperatures is None


def test_with_filter_adds_the_starting_filter_and_takes_it_away(demo):
    from bandcalc.model.design import InputFilter
    from bandcalc.page.edit import STARTING_FILTER, filter_kind, with_filter

    d = demo("sump_level_switch")
    on = with_filter(d, "rc")
    assert on.filter == STARTING_FILTER == InputFilter(10e3, 100e-9) and filter_kind(on) == "rc"
    assert with_filter(on, "rc") is on
    assert with_filter(on, "none").filter is None
    with pytest.raises(ValueError, match="filter: 'lc' is not a filter kind; allowed: none, rc"):
        with_filter(d, "lc")


def test_load_edits_make_and_drop_the_section():
    d = with_load_value(SUMP, "logic_high_min", 2.0)
    assert d.load == Load(logic_high_min=2.0)
    d = with_load_value(d, "resistance", 4.7e3)
    assert d.load.resistance == 4.7e3 and d.load.volts == 0.0
    assert with_load_value(d, "volts", None).load.volts == 0.0  # blank: ground
    d = with_load_value(with_load_value(d, "resistance", None), "logic_high_min", None)
    assert d.load is None
    with pytest.raises(DesignError, match="load.nothing: not a value of the load"):
        with_load_value(SUMP, "nothing", 1.0)


def test_protective_and_size_edits():
    assert with_protective(SUMP, True).protective is True
    with pytest.raises(DesignError, match="protective: must be true or false"):
        with_protective(SUMP, "yes")
    assert with_resistor_size(SUMP, "1206").ratings.size == "1206"
    with pytest.raises(DesignError, match="ratings.size: '0601' is not a size"):
        with_resistor_size(SUMP, "0601")


# --- the address holds every design the page takes -----------------------------------------------
# Measured with Streamlit 1.67 and Debian's Chromium (tests/test_browser.py reloads at the limit):
# the page's server (uvicorn with h11) refuses a request whose head is over 16 KiB (h11's default
# max_incomplete_event_size, 16 * 1024) whenever the head does not arrive in one piece, and common
# proxies refuse request lines over 8 KiB (nginx's large_client_header_buffers and Apache's
# LimitRequestLine default to 8 KiB, from memory).  The page keeps at most ADDRESS_MAX characters.

def test_the_address_limit_leaves_room_in_a_request_head():
    assert ADDRESS_MAX + len("GET /?design= HTTP/1.1\r\n") < 8 * 1024


def test_notes_too_long_for_the_address_are_refused_naming_them():
    long = replace(SUMP, notes=prose(71_000))
    with pytest.raises(DesignError, match=r"^notes: too long for the page address \(71,000 characters\)"):
        design_to_address(long)
    # A text that compresses to nothing still inflates to far more than any design file holds.
    with pytest.raises(DesignError, match=r"^notes: too long for the page address"):
        design_to_address(replace(SUMP, notes="a" * 1_000_000))


def test_notes_of_a_few_pages_fit():
    fits = replace(SUMP, notes=prose(12_000))
    text = design_to_address(fits)
    assert len(text) <= ADDRESS_MAX and address_to_design(text) == fits


@given(notes=hyp.text(max_size=3_000) | hyp.builds(prose, hyp.integers(0, 40_000), hyp.integers(0, 9)),
       name=hyp.text(max_size=300))
def test_every_design_the_address_takes_comes_back(notes, name):
    design = replace(SUMP, name=name, notes=notes)
    try:
        text = design_to_address(design)
    except DesignError as exc:
        assert re.match(r"^(name|notes): (too long for the page address|holds a character that is not text)",
                        str(exc)), exc
        return
    assert len(text) <= ADDRESS_MAX
    assert address_to_design(text) == design


def test_an_address_longer_than_the_page_writes_is_refused():
    with pytest.raises(DesignError, match=r"page address \(design=\.\.\.\): longer than the page writes"):
        address_to_design("A" * (ADDRESS_MAX + 1))
