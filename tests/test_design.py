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
    ("comparator.delay", -1e-6, "comparator.delay: must be zero or more"),
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
