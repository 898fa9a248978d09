"""The SPICE netlist: run through ngspice, its points agree with bandcalc's; its text is safe and fixed.

ngspice (Debian's ``ngspice`` package, a circuit simulator of the Berkeley SPICE3 line) is the
outside reference here: it solves the written circuit by modified nodal analysis in a transient
run, knowing nothing of bandcalc's summing-node solution.  The tests that run it skip, saying so,
where it is not installed; ``.ci/run`` installs it.
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from strategies import designs, designs_with_filters, designs_with_front_ends, designs_with_loads

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design, FixedReference, InputFilter, PushPull, Resistors, Source, Supply
from bandcalc.model.design_file import design_from_json, design_to_json
from bandcalc.model.front_end import DividerFrontEnd, LinearFrontEnd, ThermistorFrontEnd
from bandcalc.model.operating import analyze
from bandcalc.model.parts import part, resistors_of
from bandcalc.model.points import input_range, volts_for
from bandcalc.outputs.netlist import LAG_VOLTS, MAX_WAVE_SAMPLES, netlist
from bandcalc.signal_check.edges import run_design, run_points
from bandcalc.signal_check.waveform import synthesize

NGSPICE = shutil.which("ngspice")
needs_ngspice = pytest.mark.skipif(NGSPICE is None, reason="ngspice is not installed (.ci/run installs "
                                                           "Debian's ngspice package)")
_MEASURE = re.compile(r"^(upper|lower|watched_upper|watched_lower|edge_\d+)\s+=\s+(\S+)\s*$", re.M)


def ngspice(text: str, tmp_path) -> dict[str, float]:
    """Run a netlist in ngspice's batch mode; its measures by name (a failed one is left out)."""
    path = tmp_path / "stage.cir"
    path.write_text(text, encoding="utf-8")
    run = subprocess.run([NGSPICE, "-b", str(path)], capture_output=True, text=True, timeout=120,
                         cwd=tmp_path)
    return {name: float(value) for name, value in _MEASURE.findall(run.stdout)}


def agrees(got: float, want: float, volts: float = 1e-3) -> bool:
    """Within 1 mV (or ``volts``) or 0.1 %, whichever is wider."""
    return abs(got - want) <= max(volts, 1e-3 * abs(want))


def watched_tolerance(design: Design, x: float) -> float:
    """1 mV of the stage's source, in the watched quantity at ``x`` (through the front end's slope)."""
    h = 1e-4 * max(1.0, abs(x))
    slope = float(np.diff(volts_for(design, np.array([x - h, x + h]))[0])[0]) / (2 * h)
    return 1e-3 / abs(slope)


def check_points(design: Design, measured: dict[str, float]) -> None:
    a = analyze(design)
    assert agrees(measured["upper"], a.upper), (measured, a.upper)
    assert agrees(measured["lower"], a.lower), (measured, a.lower)
    if design.front_end is not None:
        for key in ("upper", "lower"):
            want = float(getattr(a.points, key))
            tolerance = watched_tolerance(design, want)
            assert agrees(measured[f"watched_{key}"], want, tolerance), (key, measured, want)


@needs_ngspice
def test_every_demo_agrees_with_analyze(each_demo, tmp_path):
    # ngspice's points (the source at the output's edges in a slow triangle) against analyze, within
    # 1 mV or 0.1 %; the watched points within that 1 mV seen through the front end.
    check_points(each_demo, ngspice(netlist(each_demo), tmp_path))


def _inside(design: Design) -> bool:
    """Both points inside the range the input reaches (a hundredth of it from its ends), and apart."""
    try:
        low, high = input_range(design)
        w = analyze(design).points
    except BandcalcError:
        return False
    margin = 1e-2 * (high - low)
    stage = analyze(design)
    return (bool(np.isfinite([w.upper, w.lower]).all()) and low + margin < float(w.lower)
            and float(w.upper) < high - margin and stage.upper - stage.lower > 5e-3)


KINDS = [(stage, dual, output) for stage in ("non-inverting", "inverting") for dual in (False, True)
         for output in ("push-pull", "open-drain")]


@needs_ngspice
@pytest.mark.parametrize(("stage", "dual", "output"), KINDS)
@settings(max_examples=4, deadline=None, suppress_health_check=[
    HealthCheck.too_slow, HealthCheck.filter_too_much, HealthCheck.function_scoped_fixture])
@given(design=st.one_of(designs(), designs_with_loads(), designs_with_front_ends(), designs_with_filters()))
def test_random_designs_of_every_kind_agree_with_analyze(tmp_path, stage, dual, output, design):
    # Each stage, supply and output kind, with any legs, a load, a front end of any kind or an input
    # filter.
    assume((design.stage, design.supply.negative < 0, design.output.kind) == (stage, dual, output))
    assume(_inside(design))
    check_points(design, ngspice(netlist(design), tmp_path))


@st.composite
def with_the_parts_own_hysteresis(draw):
    """A design of any kind whose comparator has hysteresis built in and an offset current."""
    design = draw(st.one_of(designs(), designs_with_loads(), designs_with_front_ends()))
    part_data = replace(design.comparator, hysteresis=draw(st.floats(1e-3, 0.05)),
                        offset_current=draw(st.floats(-1e-7, 1e-7)))
    return replace(design, comparator=part_data)


@needs_ngspice
@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                 HealthCheck.function_scoped_fixture])
@given(design=with_the_parts_own_hysteresis())
def test_the_parts_own_hysteresis_and_offset_current_agree(tmp_path, design):
    # The part's trip points (offset -/+ half its hysteresis, by the output's state) add to the
    # network's; each pin draws the bias current -/+ half the offset current.
    assume(_inside(design))
    text = netlist(design)
    assert "*u(v(state)-0.5))" in text.split("BDEC dec 0 V=")[1].splitlines()[0]
    check_points(design, ngspice(text, tmp_path))


@needs_ngspice
def test_steinhart_hart_thermistor_agrees(tmp_path, demo):
    # A 10 kOhm NTC's Steinhart-Hart coefficients as commonly published for such parts (A = 1.009249522e-3,
    # B = 2.378405444e-4, C = 2.019202697e-7; from memory): the netlist writes the curve's inverse in
    # closed form (Cardano), ngspice evaluates it; bandcalc solves it its own way.
    greenhouse = demo("greenhouse_fan_thermostat")
    fe = ThermistorFrontEnd(fixed=10e3, steinhart_hart=(1.009249522e-3, 2.378405444e-4, 2.019202697e-7),
                            low=-10.0, high=50.0)
    design = replace(greenhouse, front_end=fe)
    text = netlist(design)
    assert "pow(" in text
    check_points(design, ngspice(text, tmp_path))


@needs_ngspice
@pytest.mark.parametrize(("ohms", "farads", "resistors"), [
    (4.7e3, 100e-9, None),  # 0.47 ms: a usual filter
    (340e3, 100e-9, Resistors(input=1e6, feedback=10e6)),  # 34 ms behind a 10 MOhm feedback
    (0.0, 1e-6, None),  # the capacitor alone, behind the source's 100 Ohm
])
def test_an_input_filter_is_its_resistor_and_capacitor_and_agrees(demo, tmp_path, ohms, farads, resistors):
    # The filter's resistor in series after the source's, its capacitor from the stage's input node to
    # ground; at DC the capacitor carries nothing and the resistor moves the points as analyze says.
    # The sweep is slow against the filter's time constant, so the capacitor's lag stays below a
    # tenth of the sweep's step (with the 34 ms filter the run was once 22 million steps long).
    sump = demo("sump_level_switch")
    design = replace(sump, filter=InputFilter(ohms, farads), resistors=resistors or sump.resistors)
    text = netlist(design)
    lines = text.splitlines()
    assert ("Rflt line in 340000" in lines) if ohms == 340e3 else True
    assert f"Cflt {'in' if ohms else 'line'} 0 {farads:.12g}" in lines
    assert sum(line.startswith("Rflt ") for line in lines) == (1 if ohms else 0)
    check_points(design, ngspice(text, tmp_path))


def test_the_sweep_is_slow_enough_for_every_capacitor_and_no_slower(demo):
    # The capacitor lags the ramp by its time constant times the ramp's slope (first-order lag behind
    # a ramp, common practice): that lag, with all the capacitance through all the resistance as the
    # time constant, is LAG_VOLTS exactly where the capacitor sets the run's length.
    sump = demo("sump_level_switch")
    design = replace(sump, filter=InputFilter(340e3, 100e-9), resistors=Resistors(input=1e6, feedback=10e6))
    half = float(re.search(r"^VIN src 0 PWL\(0 \S+ (\S+) ", netlist(design), re.M)[1])
    ohms = 100 + 340e3 + 1e6 + 10e6 + 50  # source, filter, input, feedback, output
    swing = 5.0  # the source's range, 0 to 5 V, at one volt per volt
    assert 100e-9 * ohms * swing / half == pytest.approx(LAG_VOLTS, rel=1e-9)


def _short_signal(design: Design):
    """A sine across the band, two periods at 50 Hz sampled at 100 kHz, in the design's unit."""
    upper, lower, _ = run_points(design)
    return synthesize("sine", 0.5 * (upper + lower), 1.5 * (upper - lower), 50.0, 0.04, 100e3)


@needs_ngspice
def test_signal_bench_edges_agree_with_the_signal_check_within_one_sample(each_demo, tmp_path):
    wave = _short_signal(each_demo)
    run = run_design(each_demo, wave)
    measured = ngspice(netlist(each_demo, wave), tmp_path)
    assert run.edge_count >= 3
    got = np.array([measured[f"edge_{k + 1}"] for k in range(run.edge_count)])
    assert np.abs(got - (run.edge_times - wave.t[0])) == pytest.approx(0, abs=1 / 100e3)


@needs_ngspice
def test_a_run_starting_inside_the_band_starts_in_the_signal_checks_state(demo, tmp_path):
    # A push-pull output with no output resistance is an ideal source on the output node, where a
    # .nodeset cannot act: the run started low where the signal check starts high (a sine from the
    # centre), and every edge after was counted one off.
    sump = replace(demo("sump_level_switch"), output=PushPull(0.05, 0.05, 0.0))
    wave = _short_signal(sump)
    run = run_design(sump, wave)
    assert bool(run.output_high[0])
    measured = ngspice(netlist(sump, wave), tmp_path)
    got = np.array([measured.get(f"edge_{k + 1}", np.nan) for k in range(run.edge_count)])
    assert np.abs(got - (run.edge_times - wave.t[0])) == pytest.approx(0, abs=1 / 100e3)


@settings(max_examples=30, deadline=None)
@given(st.one_of(designs(), designs_with_loads(), designs_with_front_ends()))
def test_the_same_design_gives_the_same_text(design):
    try:
        text = netlist(design)
    except BandcalcError:
        assume(False)
    assert netlist(design) == text
    assert netlist(design_from_json(design_to_json(design))) == text  # read back from its file


def test_resistors_carry_their_designators(each_demo):
    text = netlist(each_demo)
    for key, ohms in resistors_of(each_demo).items():
        name = part(key).designator
        assert name[0] == "R"  # a SPICE resistor
        (line,) = [row for row in text.splitlines() if row.split(" ")[0] == name]
        assert float(line.split()[-1]) == pytest.approx(ohms, rel=1e-11)


_ELEMENT = re.compile(r"^(?:[RBICV]\w* \w+ \w+ |\+ |\.(?:nodeset|tran|meas|end)\b)")


@pytest.mark.parametrize("text", ["pump\n.control\nshell touch hacked\n.endc", "a\rb\x1b[2Jc\u2028.end",
                                  "+ 5\n* x"])
def test_user_text_stays_inside_comments(text, demo):
    # A name or a unit that holds a line break would otherwise start a SPICE line of its own (a
    # .control block can run shell commands); every line is a comment or one bandcalc writes.
    sump = replace(demo("sump_level_switch"), name=text)
    sensor = replace(sump, source=Source(resistance=100.0),
                     front_end=LinearFrontEnd(volts_per_unit=0.01, unit=f"kPa{text}", low=0.0, high=400.0))
    for design in (sump, sensor):
        for line in netlist(design).splitlines():
            assert line.startswith("* ") or _ELEMENT.match(line), line
    # Shown on one line, controls as their escapes.
    shown = {"pump\n.control\nshell touch hacked\n.endc": "pump .control shell touch hacked .endc",
             "a\rb\x1b[2Jc\u2028.end": "a b\\u001b[2Jc .end", "+ 5\n* x": "+ 5 * x"}[text]
    assert netlist(sump).startswith(f"* bandcalc netlist: {shown}\n")


@needs_ngspice
def test_a_tiny_series_resistance_is_written_as_a_short(tmp_path):
    # A 1e-12 Ohm source resistance between a sense divider and the - pin, written as a resistor, left
    # ngspice's matrix nearly singular (the common voltage of its two nodes lost to rounding): both
    # points came out 117 mV low.  Below 1 milliohm it is a short, and a note says so.
    design = Design(stage="inverting", supply=Supply(11.25), source=Source(resistance=1e-12),
                    resistors=Resistors(feedback=1e6, to_reference=1e3), reference=FixedReference(5.0),
                    output=PushPull(), front_end=DividerFrontEnd(1e3, 1e3))
    text = netlist(design)
    assert not any(line.startswith("Rsrc ") for line in text.splitlines())
    assert "* Rsrc (1e-12 Ohm) is written as a short" in text
    check_points(design, ngspice(text, tmp_path))


def test_a_long_signal_is_refused_with_its_count(demo):
    sump = demo("sump_level_switch")
    wave = synthesize("sine", 2.5, 1.0, 50.0, 1.0, 100e3)
    most = f"100,001 samples, the netlist takes at most {MAX_WAVE_SAMPLES:,} "
    with pytest.raises(BandcalcError, match=most):
        netlist(sump, wave)


def test_numbers_never_carry_a_scale_suffix(each_demo):
    # SPICE reads "1M" as milli (common practice of SPICE3 and its descendants): values are plain E notation.
    for line in netlist(each_demo).splitlines():
        if not line.startswith("*"):
            assert not re.search(r"(?<![\w.])[-+]?(?>\d+\.?\d*(?:[eE][-+]?\d+)?)[a-zA-Z]", line), line


def test_open_circuit_source_is_a_copy_where_the_front_end_has_resistance(demo):
    text = netlist(demo("solar_battery_disconnect"))
    assert "Rd1_open watched src_open 240000" in text and "FIND v(src_open)" in text
    assert math.isclose(float(re.search(r"VIN watched 0 PWL\(0 (\S+) ", text)[1]), 0.0)
