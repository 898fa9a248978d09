"""Reading and writing values in the trade's notations."""

import pytest

from bandcalc.model.units import (
    UnitError,
    format_code,
    format_ohms,
    format_si,
    format_value,
    parse_quantity,
    parse_resistance,
)


@pytest.mark.parametrize(("text", "ohms"), [
    # IEC 60062 resistor code: the letter marks the decimal point and the multiplier.
    ("4k7", 4700.0), ("2R2", 2.2), ("1M5", 1.5e6), ("R47", 0.47), ("470R", 470.0), ("4K7", 4700.0),
    ("8k66", 8660.0), ("1G", 1e9),
    # SI prefixes, with or without the unit.
    ("4.7k", 4700.0), ("2.2M", 2.2e6), ("470", 470.0), ("10k", 1e4), ("4.7 kOhm", 4700.0),
    ("100 ohm", 100.0), ("1meg", 1e6), ("1e3", 1000.0), ("4k7 Ω", 4700.0),
    (4700, 4700.0), (2.2e6, 2.2e6),
])
def test_parse_resistance(text, ohms):
    assert parse_resistance(text) == ohms


@pytest.mark.parametrize("text", ["4k7x", "abc", "k", "R", "1m5", "4.7 V", "", "4 k 7", "nan"])
def test_unreadable_resistance_is_refused_with_the_field_named(text):
    with pytest.raises(UnitError, match=r"resistors\.input: cannot read"):
        parse_resistance(text, "resistors.input")


def test_4k7_is_never_4():
    # The reason this parser exists: a general SI parser reads "4k7" as 4 with a unit "k7".
    assert parse_resistance("4k7") == 4700.0


@pytest.mark.parametrize(("text", "unit", "value"), [
    ("50m", "V", 0.05), ("100 nA", "A", 1e-7), ("3.3V", "V", 3.3), ("2.5", "V", 2.5),
    ("100n", "A", 1e-7), (1.5, "V", 1.5), ("10u", "s", 1e-5), ("100p", "F", 1e-10),
])
def test_parse_quantity(text, unit, value):
    assert parse_quantity(text, unit) == value


@pytest.mark.parametrize("value", ["2.5 A", "fast", float("inf"), True, None])
def test_bad_quantity(value):
    with pytest.raises(UnitError, match="supply.positive"):
        parse_quantity(value, "V", "supply.positive")


@pytest.mark.parametrize(("value", "unit", "text"), [
    (4700, "Ohm", "4.7 kΩ"), (2.2e6, "Ohm", "2.2 MΩ"), (2.95, "V", "2.95 V"), (0.05, "V", "50 mV"),
    (999.96, "Ohm", "1 kΩ"), (0, "V", "0 V"), (-0.27, "V", "-270 mV"), (8660, "Ohm", "8.66 kΩ"),
    (1.2e-7, "A", "120 nA"),
])
def test_format_si(value, unit, text):
    assert format_si(value, unit) == text


# The SI prefix micro is written µ (SI Brochure, 9th edition, Table 7); bandcalc writes the MICRO
# SIGN U+00B5, which Latin-1, Windows-1252 and the old DOS code page 437 all hold (from memory).
MICRO = "\u00b5"


@pytest.mark.parametrize(("value", "unit", "text"), [
    (1.2e-6, "A", "1.2 µA"), (622e-6, "W", "622 µW"), (-2.7e-6, "s", "-2.7 µs"), (1e-6, "V", "1 µV"),
])
def test_micro_is_written_mu_for_people(value, unit, text):
    assert format_si(value, unit) == text and MICRO in text


# The ohm and the degree Celsius are written by their symbols, Ω and °C (SI Brochure, 9th edition,
# Table 4).  The ohm is the GREEK CAPITAL LETTER OMEGA U+03A9: Unicode makes the OHM SIGN U+2126
# canonically equivalent to it, so normalized text holds U+03A9 (from memory).
OMEGA, DEGREE = "\u03a9", "\u00b0"


@pytest.mark.parametrize(("value", "unit", "text"), [
    (4700, "Ohm", f"4.7 k{OMEGA}"), (0.001, "Ohm", f"1 m{OMEGA}"), (31.81, "C", f"31.81 {DEGREE}C"),
    (0.05, "C/s", f"0.05 {DEGREE}C/s"), (-40.0, "C", f"-40 {DEGREE}C"), (100.0, "ppm/K", "100 ppm/K"),
])
def test_ohms_and_degrees_are_written_by_their_symbols_for_people(value, unit, text):
    assert format_value(value, unit) == text


def test_ascii_where_only_ascii_will_do():
    assert format_si(1.2e-6, "A", plain=True) == "1.2 uA"
    assert format_si(4700, "Ohm", plain=True) == "4.7 kOhm"
    assert format_value(31.81, "C", plain=True) == "31.81 C"
    assert format_value(float("inf"), "Ohm", plain=True) == "+inf Ohm"


@pytest.mark.parametrize(("text", "unit", "value"), [
    # What bandcalc writes for people reads back, symbols and all.
    ("31.81 °C", "C", 31.81), ("-40°C", "C", -40.0), ("4.7 kΩ", "Ohm", 4700.0), ("25 C", "C", 25.0),
])
def test_symbols_read_back(text, unit, value):
    assert parse_quantity(text, unit) == value


@pytest.mark.parametrize("value", [4.7e-6, 1.23456e-5, 2e-7, 999.9e-6])
def test_what_is_written_reads_back(value):
    # The page writes values in its boxes with format_si and reads what the user leaves there.
    assert parse_quantity(format_si(value, "A", 6), "A") == pytest.approx(value, rel=1e-12)
    assert parse_quantity(format_si(value, "A", 6, plain=True), "A") == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize(("ohms", "code"), [
    (4700, "4k7"), (2.2, "2R2"), (1.5e6, "1M5"), (0.47, "R47"), (470, "470R"), (10e3, "10k"),
    (8660, "8k66"), (1e6, "1M"),
])
def test_format_code_round_trips(ohms, code):
    assert format_code(ohms) == code
    assert parse_resistance(code) == ohms


@pytest.mark.parametrize(("ohms", "si", "code"), [
    # The trade's two ways of writing a part value (IEC 60062 code: letter at the decimal point).
    (4700, "4.7 kΩ", "4k7"), (2.2e6, "2.2 MΩ", "2M2"), (8660, "8.66 kΩ", "8k66"),
    (470, "470 Ω", "470R"),
])
def test_format_ohms_either_way(ohms, si, code):
    assert format_ohms(ohms) == si
    assert format_ohms(ohms, code=True) == code


@pytest.mark.parametrize("unit", ["V", "s", "Ohm", "C", "kPa", ""])
def test_a_value_that_does_not_exist_prints_without_a_unit(unit):
    assert format_si(float("nan"), unit) == "n/a"
    assert format_value(float("nan"), unit) == "n/a"


@pytest.mark.parametrize(("value", "unit", "text"), [
    # Beyond the prefixes (pico to tera) a figure goes to E notation, never to "0 pV" or 300 digits.
    (1e-300, "V", "1e-300 V"), (-2.5e-16, "A", "-2.5e-16 A"), (3.2e20, "Ohm", "3.2e+20 Ω"),
    (2.5e-13, "A", "0.25 pA"), (999e12, "V", "999 TV"),
])
def test_format_si_beyond_the_prefixes(value, unit, text):
    assert format_si(value, unit) == text


@pytest.mark.parametrize(("value", "text"), [
    (2.499e300, "2.499e+300 kPa"), (-1.5e16, "-1.5e+16 kPa"), (3e-13, "3e-13 kPa"),
    (31.91, "31.91 kPa"), (0.0012346, "0.001235 kPa"), (123456789, "123500000 kPa"),
])
def test_format_value_beyond_plain_figures(value, text):
    assert format_value(value, "kPa", 4) == text


@pytest.mark.parametrize(("value", "unit", "text"), [
    # Kelvin (a thermistor's Beta) and degrees take no prefix; volts per kelvin and watts per
    # kelvin (drift, dissipation constant) do, as data sheets write them (common practice).
    (3950.0, "K", "3950 K"), (25.0, "C", "25 °C"), (7e-6, "V/K", "7 µV/K"), (1.5e-3, "W/K", "1.5 mW/K"),
])
def test_which_units_take_a_prefix(value, unit, text):
    assert format_value(value, unit) == text


@pytest.mark.parametrize(("value", "unit", "text"), [
    # -0.0 comes out of sums and products (0 * -1); people read "0", never "-0".
    (-0.0, "kPa", "0 kPa"), (-0.0, "C", "0 °C"), (-0.0, "V", "0 V"),
    (-0.00001, "kPa", "-0.00001 kPa"), (-0.00001, "V", "-10 µV"),
])
def test_zero_has_no_sign(value, unit, text):
    assert format_value(value, unit) == text
