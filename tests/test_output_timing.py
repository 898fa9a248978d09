"""Output edges timed as the parts behave: propagation delay and its overdrive, an op-amp's slew
rate and recovery, the receiving input's threshold."""

import math
from dataclasses import replace

import pytest

from bandcalc.model.operating import analyze
from bandcalc.signal_check.output_timing import output_timing


def test_slew_rate_and_recovery_add_to_the_edges(demo):
    # An op-amp's output ramps at its slew rate: to half the swing in (swing / 2) / slew rate
    # (first principles); its saturation recovery comes before, on every edge.
    d = demo("sump_level_switch")
    a = analyze(d)
    opamp = replace(d, comparator=replace(d.comparator, slew_rate=0.5e6, recovery=2e-6))
    timing = output_timing(opamp)
    half = 0.5 * (a.output_high - a.output_low)
    assert timing.rise == pytest.approx(half / 0.5e6, rel=1e-6)
    assert timing.fall == pytest.approx(half / 0.5e6, rel=1e-6)
    assert timing.delay == pytest.approx(d.comparator.delay + 2e-6)


def test_a_given_threshold_times_the_open_drain_edge(demo):
    # V(t) = V_high - (V_high - V_low) exp(-t / RC): V_th after RC ln((V_high - V_low) / (V_high - V_th)).
    d = demo("solar_battery_disconnect")
    a = analyze(d)
    rc = d.output.pullup * d.output.load_capacitance
    th = a.output_low + 0.7 * (a.output_high - a.output_low)
    timing = output_timing(d, threshold_high=th)
    assert timing.rise == pytest.approx(rc * math.log(1 / 0.3), rel=1e-6)
    beyond = output_timing(d, threshold_high=a.output_high + 1.0)
    assert any("may never see that edge" in f for f in beyond.findings)
    assert beyond.rise == pytest.approx(rc * math.log(2), rel=1e-6)


def test_small_overdrive_is_reported(demo):
    # The signal passes the upper point by 1 mV only: at the pins less than the 100 mV the
    # data sheet's delay is stated at.
    d = demo("sump_level_switch")
    d = replace(d, comparator=replace(d.comparator, delay_overdrive=0.1))
    a = analyze(d)
    timing = output_timing(d, (a.lower - 1.0, a.upper + 1e-3))
    assert len(timing.findings) == 1
    assert timing.findings[0].startswith("At the upper point the signal overdrives the comparator by only")
    assert "less than the 100 mV its 200 ns delay is stated at" in timing.findings[0]
    assert output_timing(d, (a.lower - 1.0, a.upper + 1.0)).findings == ()


def test_the_loads_logic_thresholds_time_the_edges(demo):
    # A rising edge counts once the output reaches the lowest voltage the receiving input reads as
    # high (load.logic_high_min), a falling one once it reaches the highest it reads as low
    # (load.logic_low_max): the open-drain rise RC ln((V_high - V_low) / (V_high - V_th)), first
    # principles; thresholds given to the call still win.
    from bandcalc.model.design import Load

    d = demo("solar_battery_disconnect")
    a = analyze(d)
    swing = a.output_high - a.output_low
    high_min, low_max = a.output_low + 0.7 * swing, a.output_low + 0.2 * swing
    loaded = replace(d, load=Load(logic_low_max=low_max, logic_high_min=high_min))
    assert analyze(loaded).output_high == pytest.approx(a.output_high)  # thresholds alone load nothing
    rc = d.output.pullup * d.output.load_capacitance
    timing = output_timing(loaded)
    assert timing.threshold_high == pytest.approx(high_min) and timing.threshold_low == pytest.approx(low_max)
    assert timing.rise == pytest.approx(rc * math.log(1 / 0.3), rel=1e-6)
    assert output_timing(loaded, threshold_high=a.output_low + 0.5 * swing).rise == pytest.approx(
        rc * math.log(2), rel=1e-6)
