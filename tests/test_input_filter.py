"""The input filter: its resistor at DC through the one stage model, its pole against lcapy, its file
section and its place in the table of parts."""

import re
from dataclasses import replace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import designs, designs_with_front_ends

from bandcalc.model.design import Design, InputFilter
from bandcalc.model.design_file import design_from_dict, design_to_dict
from bandcalc.model.input_filter import filter_pole
from bandcalc.model.operating import analyze
from bandcalc.model.parts import part, resistors_of
from bandcalc.model.points import design_points

resistances = st.floats(0.0, 2e4)
capacitances = st.floats(1e-10, 1e-5)


@settings(max_examples=60, deadline=None)
@given(design=designs_with_front_ends() | designs(), r=resistances, c=capacitances)
def test_the_filter_resistor_moves_the_points_as_more_source_resistance(design, r, c):
    # At DC the capacitor carries no current, so the filter's resistor is in series with the
    # source (first principles): the points equal those of the design with that much more source
    # resistance and no filter.
    filtered = replace(design, filter=InputFilter(r, c))
    more_source = replace(design, source=replace(design.source, resistance=design.source.resistance + r))
    a, b = design_points(filtered), design_points(more_source)
    assert float(a.upper) == pytest.approx(float(b.upper), rel=1e-9, abs=1e-9, nan_ok=True)
    assert float(a.lower) == pytest.approx(float(b.lower), rel=1e-9, abs=1e-9, nan_ok=True)


@settings(max_examples=10, deadline=None)
@given(design=designs(), r=resistances, c=capacitances)
def test_switching_points_with_a_filter_agree_with_lcapy(design, r, c):
    # lcapy (PyPI) solves the netlist with the filter's resistor and capacitor in it, the
    # capacitor open at DC.
    pytest.importorskip("lcapy")
    from circuit_reference import switching_point

    d = replace(design, filter=InputFilter(r, c))
    pts = design_points(d)
    upper_state, lower_state = ("high", "low") if d.inverting else ("low", "high")
    assert float(pts.stage_upper) == pytest.approx(switching_point(d, upper_state), rel=1e-6, abs=1e-9)
    assert float(pts.stage_lower) == pytest.approx(switching_point(d, lower_state), rel=1e-6, abs=1e-9)


STAGES = {
    # Each stage kind: non-inverting with a fixed and a divider reference, inverting with and without
    # an input resistor, push-pull and open-drain outputs.
    "non-inverting push-pull": {"stage": "non-inverting", "reference": {"volts": 2.5},
                                "resistors": {"input": "10k", "feedback": "100k", "to_ground": "47k"},
                                "output": {"kind": "push-pull", "resistance": 50}},
    "non-inverting open-drain": {"stage": "non-inverting",
                                 "reference": {"divider": {"top": "10k", "bottom": "22k"}},
                                 "resistors": {"input": "22k", "feedback": "470k", "to_reference": "100k"},
                                 "output": {"kind": "open-drain", "pullup": "4k7"}},
    "inverting with input resistor": {"stage": "inverting",
                                      "resistors": {"input": "10k", "to_positive": "20k", "to_ground": "10k",
                                                    "feedback": "100k"},
                                      "output": {"kind": "push-pull"}},
    "inverting, signal straight to the pin": {"stage": "inverting", "reference": {"volts": 1.2},
                                              "resistors": {"to_reference": "10k", "feedback": "220k"},
                                              "output": {"kind": "open-drain", "pullup": "10k"}},
}


@pytest.mark.parametrize("kind", list(STAGES))
@pytest.mark.parametrize("state", ["high", "low"])
def test_the_pole_agrees_with_lcapy_for_each_stage_kind(kind, state):
    # lcapy (PyPI) builds the transfer function from the signal to the capacitor's node by its own
    # nodal analysis; its one pole is the filter's.
    pytest.importorskip("lcapy")
    from circuit_reference import filter_pole as lcapy_pole

    design = design_from_dict({"format": 1, "supply": {"positive": 5.0}, "source": {"resistance": 330},
                               "filter": {"resistance": "4k7", "capacitance": "100n"}, **STAGES[kind]})
    pole = filter_pole(design)
    after_upper = "low" if design.inverting else "high"
    ours = pole.pole_upper if state == after_upper else pole.pole_lower
    assert ours == pytest.approx(lcapy_pole(design, state), rel=1e-9)


def test_the_inverting_stage_does_not_load_the_capacitor():
    # The - pin draws only bias current: R C with the source and the filter's resistor alone.
    design = design_from_dict({"format": 1, "supply": {"positive": 5.0}, "source": {"resistance": 1000},
                               "filter": {"resistance": 9000, "capacitance": 1e-6},
                               **STAGES["inverting with input resistor"]})
    pole = filter_pole(design)
    assert pole.resistance_upper == pole.resistance_lower == 10_000
    assert pole.time_constant == pytest.approx(10e-3)


def test_no_filter_no_pole(demo):
    assert filter_pole(demo("sump_level_switch")) is None


def test_the_filter_section_reads_writes_and_names_its_keys(demo):
    data = design_to_dict(demo("sump_level_switch"))
    d = design_from_dict({**data, "filter": {"resistance": "10k", "capacitance": "1u"}})
    assert d.filter == InputFilter(10e3, 1e-6)
    assert design_from_dict(design_to_dict(d)) == d
    for section, message in [
        ({"resistance": "10k"}, "filter.capacitance: missing"),
        ({"resistance": "10k", "capacitance": 0}, "filter.capacitance: must be greater than zero"),
        ({"resistance": -1, "capacitance": "1u"}, "filter.resistance: must be zero or more"),
        # Bounds as every part's (common practice): resistors to a teraohm, capacitors to a millifarad.
        ({"resistance": 1e15, "capacitance": "1u"}, "filter.resistance: must be from 0 Ω to 1 TΩ"),
        ({"resistance": "10k", "capacitance": 1.0}, "filter.capacitance: must be from 0 F to 1 mF, got 1"),
        ({"resistance": "10k", "capacitance": "1u", "pole": 5}, "filter.pole: unknown key"),
        ({"resistance": "10k", "capacitance": "1 uV"}, "filter.capacitance: cannot read"),
    ]:
        with pytest.raises(ValueError, match=re.escape(message)):
            design_from_dict({**data, "filter": section})


def test_the_filter_resistor_is_a_part_with_its_current(demo):
    d = replace(demo("sump_level_switch"), filter=InputFilter(10e3, 1e-6))
    row = part("filter.resistance")
    assert (row.designator, row.bought) == ("Rflt", True)
    assert resistors_of(d)["filter.resistance"] == 10e3
    a = analyze(d)
    # The input resistor's current flows through the filter's resistor too (series, at DC).
    assert a.at_upper.currents["filter.resistance"] == pytest.approx(a.at_upper.currents["input"])


def test_the_design_class_checks_its_filter():
    with pytest.raises(ValueError, match="filter.capacitance"):
        InputFilter(1e3, -1e-9)
    assert Design.__dataclass_fields__["filter"].default is None


def test_the_signal_section_reads_writes_and_names_its_keys(demo):
    from bandcalc.model.signal_settings import SignalSettings

    data = design_to_dict(demo("sump_level_switch"))
    section = {"noise": "20m", "noise_bandwidth": "2 kHz", "hum": 0.005, "hum_frequency": 60,
               "hum_harmonics": {"3": "1m"}, "slope": 0.5, "crossings_per_second": 1e-3,
               "false_edges_per_year": 1, "delay_budget": "500m"}
    d = design_from_dict({**data, "signal": section})
    assert d.signal == SignalSettings(noise=0.02, noise_bandwidth=2e3, hum=0.005, hum_frequency=60.0,
                                      hum_harmonics=((3, 0.001),), slope=0.5, crossings_per_second=1e-3,
                                      false_edges_per_year=1.0, delay_budget=0.5)
    assert design_from_dict(design_to_dict(d)) == d
    for bad, message in [
        ({"noise": -1}, "signal.noise: must be from 0 to 1e+06, got -1"),
        # Bounds (common practice, generous): amounts in the design's unit under a million, rates
        # under 1 GHz, a delay budget within an hour.
        ({"hum": 1e9}, "signal.hum: must be from 0 to 1e+06, got 1e+09"),
        ({"noise_bandwidth": 1e12}, "signal.noise_bandwidth: must be from 0 Hz to 1 GHz"),
        ({"crossings_per_second": 1e10}, "signal.crossings_per_second: must be from 0 to 1e+09"),
        ({"false_edges_per_year": 1e300}, "signal.false_edges_per_year: must be from 0 to 1e+18"),
        ({"delay_budget": 1e5}, "signal.delay_budget: must be from 0 s to 3600 s"),
        ({"hum_harmonics": {"3": -1}}, "signal.hum_harmonics.3: must be from 0 to 1e+06, got -1"),
        ({"noise_bandwidth": 0}, "signal.noise_bandwidth: must be greater than zero"),
        ({"hum_frequency": 55}, "signal.hum_frequency: 55.0 Hz is not a mains frequency; allowed: 50, 60"),
        ({"hum_harmonics": {"1": 0.1}}, "signal.hum_harmonics.1: a harmonic order is a whole number from 2"),
        ({"hum_harmonics": [0.1]}, "signal.hum_harmonics: must be an object of order to amplitude"),
        ({"slope": "fast"}, "signal.slope: cannot read 'fast'"),
        ({"target": 1}, "signal.target: unknown key"),
    ]:
        with pytest.raises(ValueError, match=re.escape(message)):
            design_from_dict({**data, "signal": bad})
