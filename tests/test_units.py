"""Reading and writing values in the trade's notations."""

import pytest

from bandcalc.model.units import (
    UnitError,
    format_code,
    format_ohms,
    format_si,
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
    (4700, "Ohm", "4.7 kOhm"), (2.2e6, "Ohm", "2.2 MOhm"), (2.95, "V", "2.95 V"), (0.05, "V", "50 mV"),
    (999.96, "Ohm", "1 kOhm"), (0, "V", "0 V"), (-0.27, "V", "-270 mV"), (8660, "Ohm", "8.66 kOhm"),
    (1.2e-7, "A", "120 nA"),
])
def test_format_si(value, unit, text):
    assert format_si(value, unit) == text


@pytest.mark.parametrize(("ohms", "code"), [
    (4700, "4k7"), (2.2, "2R2"), (1.5e6, "1M5"), (0.47, "R47"), (470, "470R"), (10e3, "10k"),
    (8660, "8k66"), (1e6, "1M"),
])
def test_format_code_round_trips(ohms, code):
    assert format_code(ohms) == code
    assert parse_resistance(code) == ohms


@pytest.mark.parametrize(("ohms", "si", "code"), [
    # The trade's two ways of writing a part value (IEC 60062 code: letter at the decimal point).
    (4700, "4.7 kOhm", "4k7"), (2.2e6, "2.2 MOhm", "2M2"), (8660, "8.66 kOhm", "8k66"),
    (470, "470 Ohm", "470R"),
])
def test_format_ohms_either_way(ohms, si, code):
    assert format_ohms(ohms) == si
    assert format_ohms(ohms, code=True) == code
