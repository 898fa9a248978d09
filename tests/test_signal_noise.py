"""The signal check with noise as a spectrum: results independent of the sample rate, findings
that agree with the run, hum as a sine, output edges timed at the receiving threshold, and the
width sweep over several seeds beside the prediction."""

import math
from dataclasses import replace

import numpy as np
import pytest

from bandcalc.model.design import InputFilter, OpenDrain, PushPull
from bandcalc.model.input_filter import filter_pole
from bandcalc.model.operating import analyze
from bandcalc.signal_check.edges import run_design, run_stage
from bandcalc.signal_check.waveform import SyntheticSignal, synthesize
from bandcalc.signal_check.width_trade import sweep_design


def extra_edges(rate, rms, seeds, bandwidth=None):
    """Mean extra edges of a 20 Hz sine through points 1.0 +/- 0.1 V, over ``seeds``."""
    total = 0
    for seed in seeds:
        wave = synthesize("sine", 1.0, 1.0, 20.0, 0.5, rate, noise_rms=rms, seed=seed,
                          **({} if bandwidth is None else {"noise_bandwidth": bandwidth}))
        total += run_stage(wave, 1.1, 0.9).extra_edges
    return total / len(seeds)


def test_extra_edges_do_not_depend_on_the_sample_rate():
    # The same noise (its RMS and the default bandwidth) sampled at 10 kS/s, 100 kS/s and 1 MS/s:
    # the mean extra edges over 8 seeds agree within their statistics (a Poisson count's spread).
    counts = [extra_edges(rate, 0.05, range(8)) for rate in (10e3, 100e3, 1e6)]
    assert min(counts) > 0
    spread = 4 * math.sqrt(max(counts) / 8) + 0.5
    assert max(counts) - min(counts) < spread, counts


@pytest.mark.parametrize("bandwidth", [300.0, 3e3])
def test_extra_edges_follow_the_bandwidth_not_the_rate(bandwidth):
    slow, fast = (extra_edges(rate, 0.05, range(6), bandwidth) for rate in (20 * bandwidth, 200 * bandwidth))
    assert abs(slow - fast) < 4 * math.sqrt(max(slow, fast, 1) / 6) + 0.5


def test_the_findings_never_promise_no_edges_when_the_run_has_some(demo):
    # The sump demo, 0.18 V RMS on a slow sine, sampled at 1 MS/s: whatever the run gives, the
    # findings state a rate (Rice), never "should add no edges".
    d = demo("sump_level_switch")
    a = analyze(d)
    wave = synthesize("sine", a.centre, a.hysteresis, 1.0, 1.0, 1e6, noise_rms=0.18, seed=1)
    run = run_design(d, wave)
    assert not any("should add no edges" in f for f in run.findings)
    assert run.check is not None and run.check.parked_per_second >= 0
    assert any("once every" in f or "not expected ever" in f for f in run.findings)
    if run.extra_edges:
        assert any(f"Noise adds {run.extra_edges} edge" in f for f in run.findings)


def test_hum_spans_twice_its_amplitude_and_is_not_counted_as_noise(demo):
    # A 0.2 V hum and no noise: the run reports no random noise and a hum spanning 0.4 V (a sine
    # spans 2 A; as Gaussian noise of the same RMS it would have been taken as 6.6 x 0.2 / sqrt(2)
    # = 0.93 V peak-to-peak).
    d = demo("sump_level_switch")
    a = analyze(d)
    wave = synthesize("triangle", a.centre, 2.0, 2.0, 2.0, 20e3, hum_amplitude=0.2)
    run = run_design(d, wave)
    assert run.noise.rms == pytest.approx(0.0, abs=2e-3)
    assert run.check.hum.span() == pytest.approx(0.4, rel=0.02)
    assert any("Hum spans 400 mV" in f and "inside the hysteresis" in f for f in run.findings)


def test_open_drain_edge_is_timed_at_half_the_swing(demo):
    # The pull-up charges the load: V(t) = V_low + (V_high - V_low)(1 - exp(-t / RC)); it reaches
    # half the swing after RC ln 2 (first-order step response, first principles), not the 10-90 %
    # time 2.2 RC.
    d = demo("solar_battery_disconnect")
    rc = d.output.pullup * d.output.load_capacitance
    a = analyze(d)
    f, amp = 5.0, 1.0
    run = run_design(d, synthesize("sine", a.points.centre, amp, f, 0.4, 200e3))
    lag = math.asin((a.points.upper - a.points.centre) / amp) / (2 * math.pi * f)
    rising = run.edge_delays[run.output_rising]
    assert rising == pytest.approx(lag + d.comparator.delay + rc * math.log(2), abs=2e-6)


def test_push_pull_load_capacitance_is_used_on_both_edges(demo):
    d = demo("sump_level_switch")
    loaded = replace(d, output=replace(d.output, resistance=1e3, load_capacitance=1e-6))
    a = analyze(loaded)
    wave = synthesize("sine", a.centre, 2.0, 5.0, 0.4, 200e3)
    plain, slowed = run_design(replace(loaded, output=replace(loaded.output, load_capacitance=0.0)), wave), \
        run_design(loaded, wave)
    # Through the output resistance both edges reach half the swing after R C ln 2.
    np.testing.assert_allclose(slowed.edge_delays - plain.edge_delays, 1e3 * 1e-6 * math.log(2), atol=2e-6)


def test_push_pull_load_capacitance_without_resistance_is_reported(demo):
    d = demo("sump_level_switch")
    odd = replace(d, output=PushPull(0.05, 0.05, 0.0, 1e-9))
    a = analyze(odd)
    run = run_design(odd, synthesize("sine", a.centre, 2.0, 5.0, 0.4, 100e3))
    assert any("output.load_capacitance" in f and "not used" in f for f in run.findings)


def test_open_drain_falls_through_its_switch(demo):
    d = demo("solar_battery_disconnect")
    assert isinstance(d.output, OpenDrain)
    a = analyze(d)
    run = run_design(d, synthesize("sine", a.points.centre, 1.0, 5.0, 0.4, 200e3))
    assert run.fall_time == 0.0 and run.rise_time > 0.0


def test_the_filter_delays_the_edges_and_quietens_the_noise(demo):
    # A ramp through a first-order low-pass lags by its time constant (first principles); the
    # noise reaching the stage is the source's behind the same pole.
    d = demo("sump_level_switch")
    a = analyze(d)
    filtered = replace(d, filter=InputFilter(0.0, 10e-6))  # no resistor: the points stay put
    pole = filter_pole(filtered)
    wave = synthesize("ramp", a.centre, 2.0, 1.0, 1.0, 100e3)
    plain, slow = run_design(d, wave), run_design(filtered, wave)
    assert slow.edge_delays[0] - plain.edge_delays[0] == pytest.approx(pole.time_constant, rel=0.01)
    wave = synthesize("ramp", a.centre, 2.0, 1.0, 1.0, 100e3, noise_rms=0.01, noise_bandwidth=2e3, seed=2)
    plain, slow = run_design(d, wave), run_design(filtered, wave)
    assert slow.check.noise.pole == pytest.approx(pole.pole)
    assert slow.check.noise.rms_at_stage < 0.5 * plain.check.noise.rms_at_stage


def test_the_sweep_runs_several_seeds_beside_one_prediction(demo):
    # One noise draw decided the narrowest clean width (1.17, 1.27, 1.36 V for seeds 1, 2, 3 in
    # the report); now each sweep runs five draws and shows their spread, and the prediction from
    # Rice's formula, which no draw decides, sits beside them.
    d = demo("sump_level_switch")
    a = analyze(d)
    sweeps = [sweep_design(d, SyntheticSignal("sine", a.centre, 1.5, 20.0, 0.5, 50e3, noise_rms=0.12,
                                              noise_bandwidth=2e3, seed=seed)) for seed in (1, 2, 3)]
    step = float(sweeps[0].widths[1])
    for sweep in sweeps:
        assert sweep.runs == 5 and len(sweep.run_best_widths) == 5
        assert sweep.best_width == max(sweep.run_best_widths)  # clean in every draw
    predicted = {s.predicted_best_width for s in sweeps}
    assert len(predicted) == 1 and None not in predicted
    drawn = [w for s in sweeps for w in s.run_best_widths]
    assert min(drawn) - 2 * step <= predicted.pop() <= max(drawn) + 2 * step


def test_a_sweep_too_long_is_refused_at_once(demo):
    # 5 draws of 10 s at 1 MS/s: 50 M samples, each through every width; refused before any is made.
    spec = SyntheticSignal("sine", 2.5, 1.0, 1.0, 10.0, 1e6, noise_rms=0.1, seed=1)
    with pytest.raises(ValueError, match=r"5 noise draws of 10,000,001 samples, more than 20,000,000 in "
                                         r"all; 1 draw\(s\) fit: lower the seeds"):
        sweep_design(demo("sump_level_switch"), spec)
