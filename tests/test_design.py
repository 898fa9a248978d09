"""Design files: the documented shape, round trips and clear messages for bad input."""

import copy
import json

import pytest

from bandcalc.demos import demo_designs
from bandcalc.errors import DesignError
from bandcalc.model.design_file import (
    design_from_dict,
    design_from_json,
    design_to_dict,
    design_to_json,
    load_design,
    save_design,
)

EXAMPLE = {
    "format": 1,
    "name": "Sump level switch",
    "notes": "free text",
    "stage": "non-inverting",
    "supply": {"positive": 5.0, "negative": 0.0},
    "reference": {"volts": 2.5},
    "resistors": {"input": 10000, "feedback": "220k"},
    "output": {"kind": "push-pull", "high_drop": 0.0, "low_drop": 0.0, "resistance": 0.0},
    "comparator": {"offset": 0.0, "bias_current": 0.0},
    "source": {"resistance": 0.0},
}


def test_documented_example_reads():
    d = design_from_dict(EXAMPLE)
    assert d.resistors.feedback == 220e3
    assert d.resistors.input == 10e3


def test_demo_set_covers_every_stage_supply_and_output_kind():
    kinds = set()
    for d in demo_designs().values():
        kinds.add((d.stage, d.supply.negative != 0, d.output.kind))
    assert len(kinds) == 8


def test_demo_round_trip(each_demo, tmp_path):
    d = each_demo
    save_design(d, tmp_path / "again.json")
    assert load_design(tmp_path / "again.json") == d
    assert design_from_json(design_to_json(d)) == d


def test_optional_sections_default_to_ideal():
    minimal = {"format": 1, "stage": "inverting", "supply": {"positive": 5},
               "resistors": {"feedback": "1M", "to_ground": "4k7"}}
    d = design_from_dict(minimal)
    assert d.comparator.offset == 0 and d.comparator.bias_current == 0
    assert d.output.kind == "push-pull" and d.source.resistance == 0
    assert design_from_dict(design_to_dict(d)) == d


def _with(path: str, value):
    data = copy.deepcopy(EXAMPLE)
    keys = path.split(".")
    target = data
    for k in keys[:-1]:
        target = target[k]
    if value is _DELETE:
        del target[keys[-1]]
    else:
        target[keys[-1]] = value
    return data


_DELETE = object()

BAD = [
    ("resistors.feedback", "4k7x", "resistors.feedback: cannot read '4k7x'"),
    ("resistors.feedback", -10, "resistors.feedback: must be greater than zero"),
    ("resistors.feedback", 0, "resistors.feedback: must be greater than zero"),
    ("resistors.input", float("nan"), "resistors.input: must be a finite number"),
    ("resistors.input", float("inf"), "resistors.input: must be a finite number"),
    ("resistors.feedback", _DELETE, "resistors.feedback: missing"),
    ("resistors.input", _DELETE, "resistors.input: the non-inverting stage needs an input resistor"),
    ("resistors.to_nowhere", 1000, "resistors.to_nowhere: unknown key; allowed: input, feedback"),
    ("colour", "red", "design.colour: unknown key"),
    ("stage", "inverted", "stage: 'inverted' is not a stage kind; allowed: non-inverting, inverting"),
    ("supply.negative", 6.0, "supply: the positive rail (5.0 V) must be above the negative rail"),
    ("supply.positive", "five", "supply.positive: cannot read 'five'"),
    ("reference", _DELETE, "reference: the non-inverting stage needs a reference"),
    ("reference", {"volts": 2.5, "divider": {"top": 1, "bottom": 1}}, "reference: give exactly one"),
    ("reference", {"divider": {"top": "10k"}}, "reference.divider.bottom: missing"),
    ("output", {"kind": "totem"}, "output.kind: 'totem' is not an output kind"),
    ("output", {"kind": "open-drain"}, "output.pullup: missing"),
    ("output", {"kind": "push-pull", "pullup": 1000}, "output.pullup: unknown key"),
    ("comparator.bias", 1e-9, "comparator.bias: unknown key"),
    ("comparator.delay", -1e-6, "comparator.delay: must be from 0 s to 1 s"),
    ("source.resistance", -1, "source.resistance: must be zero or more"),
    ("format", 2, "format: 2 is not a design file format this version reads; allowed: 1"),
    ("name", 5, "name: must be text"),
]


@pytest.mark.parametrize(("key", "value", "message"), BAD, ids=[b[0] + ":" + str(b[1])[:12] for b in BAD])
def test_bad_input_is_named(key, value, message):
    with pytest.raises(DesignError) as err:
        design_from_dict(_with(key, value))
    assert message in str(err.value)


def test_leg_to_reference_needs_a_reference():
    data = {"format": 1, "stage": "inverting", "supply": {"positive": 5},
            "resistors": {"feedback": "1M", "to_reference": "10k"}}
    with pytest.raises(DesignError, match="resistors.to_reference needs a reference"):
        design_from_dict(data)


def test_file_errors_name_the_file(tmp_path):
    bad = tmp_path / "broken.json"
    bad.write_text("{not json")
    with pytest.raises(DesignError, match=r"broken.json: not valid JSON \(line 1"):
        load_design(bad)
    with pytest.raises(DesignError, match="missing.json: cannot read the file"):
        load_design(tmp_path / "missing.json")


def test_saved_file_is_the_documented_shape(tmp_path):
    d = design_from_dict(EXAMPLE)
    save_design(d, tmp_path / "d.json")
    data = json.loads((tmp_path / "d.json").read_text())
    assert data["resistors"] == {"input": 10000.0, "feedback": 220000.0}
    assert data["output"]["kind"] == "push-pull"
    assert data["reference"] == {"volts": 2.5}


def test_protective_flag_round_trips_and_is_checked():
    d = design_from_dict({**EXAMPLE, "protective": True})
    assert d.protective is True
    assert design_from_dict(design_to_dict(d)) == d
    with pytest.raises(DesignError, match="protective: must be true or false"):
        design_from_dict({**EXAMPLE, "protective": "yes"})


# --- files that must be refused at load, each with the key named ---------------------------------
# The analysis must never meet a value it cannot use: every such value is refused when the design is
# built, with the key the user wrote and what is allowed.

@pytest.mark.parametrize(("key", "value", "message"), [
    ("resistors.feedback", None, "resistors.feedback: required"),
    ("supply.positive", None, "supply.positive: required"),
    ("reference", {"volts": None}, "reference.volts: required"),
    ("reference", {"divider": {"top": "10k", "bottom": None}}, "reference.divider.bottom: required"),
    ("output", {"kind": "open-drain", "pullup": None}, "output.pullup: required"),
])
def test_a_required_value_given_as_null_is_refused(key, value, message):
    with pytest.raises(DesignError, match=message.replace(".", r"\.")):
        design_from_dict(_with(key, value))


def test_null_for_an_optional_value_leaves_it_out():
    d = design_from_dict(_with("comparator.offset", None))
    assert d.comparator.offset == 0.0


# Bounds of values a real part has (common practice: resistors from a milliohm shunt to a teraohm,
# rails and sensed voltages within +/-100 kV, bias currents well under an ampere, delays under a
# second, loads under a millifarad).  1e23 is 1e3 with a slip of the finger.
@pytest.mark.parametrize(("key", "value", "message"), [
    ("resistors.feedback", 1e23, "resistors.feedback: must be from 1 mΩ to 1 TΩ, got 1e+23"),
    ("resistors.feedback", 1e308, "resistors.feedback: must be from 1 mΩ to 1 TΩ"),
    ("resistors.input", 1e-9, "resistors.input: must be from 1 mΩ to 1 TΩ"),
    ("supply.positive", 1e308, "supply.positive: must be from -100 kV to 100 kV"),
    ("supply.positive", "1e6", "supply.positive: must be from -100 kV to 100 kV"),
    ("reference.volts", -2e5, "reference.volts: must be from -100 kV to 100 kV"),
    ("comparator.offset", 1e300, "comparator.offset: must be from -100 kV to 100 kV"),
    ("comparator.bias_current", 5.0, "comparator.bias_current: must be from -1 A to 1 A"),
    ("comparator.delay", 1e9, "comparator.delay: must be from 0 s to 1 s"),
    ("output.load_capacitance", 1.0, "output.load_capacitance: must be from 0 F to 1 mF"),
    ("output.resistance", 1e20, "output.resistance: must be from 0 Ω to 1 TΩ"),
    ("source.resistance", 1e300, "source.resistance: must be from 0 Ω to 1 TΩ"),
    # Op-amps slew from some mV/us to some kV/us and recover in micro- to milliseconds (common
    # practice); data sheets state delays at overdrives of millivolts to some hundred millivolts.
    ("comparator.slew_rate", 1e15, "comparator.slew_rate: must be from 1 V/s to 1e+12 V/s, got 1e+15"),
    ("comparator.slew_rate", 0, "comparator.slew_rate: must be from 1 V/s to 1e+12 V/s, got 0"),
    ("comparator.recovery", 5.0, "comparator.recovery: must be from 0 s to 1 s, got 5"),
    ("comparator.delay_overdrive", 1e6, "comparator.delay_overdrive: must be from 1 µV to 100 kV"),
    ("comparator.delay_overdrive", 0, "comparator.delay_overdrive: must be from 1 µV to 100 kV, got 0"),
])
def test_magnitudes_no_part_has_are_refused_with_the_allowed_range(key, value, message):
    with pytest.raises(DesignError) as err:
        design_from_dict(_with(key, value))
    assert message in str(err.value)


def test_an_integer_literal_beyond_any_float_is_refused_naming_the_key():
    text = json.dumps(EXAMPLE).replace('"positive": 5.0', '"positive": 1' + "0" * 400)
    with pytest.raises(DesignError, match=r"supply\.positive: .*too large"):
        design_from_json(text)
    text = json.dumps(EXAMPLE).replace('"positive": 5.0', '"positive": 1' + "0" * 5000)
    with pytest.raises(DesignError, match=r"supply\.positive: .*too large"):
        design_from_json(text)


def test_json_nested_deeper_than_a_design_needs_is_refused():
    # RFC 8259, section 9: a parser may set a limit on the depth of nesting.
    text = json.dumps(EXAMPLE)[:-1] + ', "notes2": ' + "[" * 5000 + "]" * 5000 + "}"
    with pytest.raises(DesignError, match=r"design: nested 5001 levels deep; a design file nests at most"):
        design_from_json(text)


def test_booleans_are_not_numbers_and_numbers_are_not_booleans():
    # RFC 8259, section 3: true and false are literal names of their own, not numbers.
    with pytest.raises(DesignError, match="format: True is not a design file format"):
        design_from_dict({**EXAMPLE, "format": True})
    with pytest.raises(DesignError, match="protective: must be true or false .*got 1"):
        design_from_dict({**EXAMPLE, "protective": 1})
    with pytest.raises(DesignError, match="protective: must be true or false .*got 0"):
        design_from_dict({**EXAMPLE, "protective": 0})


def test_a_key_given_twice_is_refused_naming_it():
    # RFC 8259, section 4: with names that are not unique, what a reader makes of an object is
    # unpredictable; a design file must say one thing.
    text = json.dumps(EXAMPLE)[:-1] + ', "name": "other"}'
    with pytest.raises(DesignError, match=r'design: the key "name" appears twice; give each key once'):
        design_from_json(text)
    text = json.dumps(EXAMPLE).replace('"feedback": "220k"', '"feedback": "220k", "feedback": "1M"')
    with pytest.raises(DesignError, match=r'resistors: the key "feedback" appears twice'):
        design_from_json(text)


@pytest.mark.parametrize(("where", "text"), [
    ("name", '"name": "\\ud800"'),
    ("notes", '"notes": "ok \\udfff"'),
    ("design \\(a key\\)", '"\\ud800": 1'),
])
def test_a_lone_surrogate_is_refused_naming_the_key(where, text):
    # The Unicode Standard (D76, D91): a surrogate code point alone is no character and has no UTF-8
    # form, so such text can be neither shown nor saved.
    body = json.dumps({k: v for k, v in EXAMPLE.items() if k not in ("name", "notes")})
    with pytest.raises(DesignError, match=rf"^design: {where}: .*lone surrogate"):
        design_from_json(body[:-1] + ", " + text + "}")


def test_a_lone_surrogate_is_refused_when_the_design_is_built_too():
    from dataclasses import replace
    with pytest.raises(DesignError, match="name: .*lone surrogate"):
        replace(design_from_dict(EXAMPLE), name="\ud800")


def test_a_file_with_a_utf8_byte_order_mark_reads(tmp_path):
    # RFC 8259, section 8.1: a parser may ignore a byte-order mark rather than treat it as an error.
    path = tmp_path / "bom.json"
    path.write_text(json.dumps(EXAMPLE), encoding="utf-8-sig")
    assert load_design(path) == design_from_dict(EXAMPLE)
    assert design_from_json("\ufeff" + json.dumps(EXAMPLE)) == design_from_dict(EXAMPLE)


def test_only_regular_files_are_read_and_their_size_is_checked_first(tmp_path, monkeypatch):
    import os

    from bandcalc.model import design_file
    with pytest.raises(DesignError, match="/dev/zero: cannot read the file .*not a regular file"):
        load_design("/dev/zero")
    pipe = tmp_path / "pipe.json"
    os.mkfifo(pipe)  # no writer: opening it to read would wait for ever
    with pytest.raises(DesignError, match="pipe.json: cannot read the file .*not a regular file"):
        load_design(pipe)
    with pytest.raises(DesignError, match="cannot read the file .*a directory"):
        load_design(tmp_path)
    big = tmp_path / "big.json"
    big.write_text(json.dumps(EXAMPLE))
    monkeypatch.setattr(design_file, "MAX_FILE_BYTES", 100)
    with pytest.raises(DesignError, match=r"big.json: cannot read the file \(\d+ bytes; at most 100 are"):
        load_design(big)
