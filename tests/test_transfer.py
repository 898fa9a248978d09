"""The transfer curve's branches against a published example, an independent solver and invariants."""

import numpy as np
import pytest
import sympy
from circuit_reference import netlist

from bandcalc.model.design import Design, FixedReference, PushPull, Resistors, Supply
from bandcalc.model.operating import analyze
from bandcalc.model.points import stage_design
from bandcalc.model.transfer import transfer_curve


def branch_at(curve, branch, x):
    """Output on a branch at an input value away from the jumps."""
    values = getattr(curve, branch)
    i = int(np.argmin(abs(curve.signal - x)))
    return float(values[i])


def test_horowitz_hill_stage_branches():
    # Horowitz & Hill, The Art of Electronics, 3rd ed., section 4.3.2B: inverting stage, output
    # swinging 0 to +5 V, switching points 5.00 V (rising) and 4.76 V (falling).  The output
    # stays high (+5 V) while the input rises to 5.00 V, and low (0 V) while it falls to 4.76 V.
    d = Design(stage="inverting", supply=Supply(10.0),
               resistors=Resistors(feedback=100e3, to_positive=10e3, to_ground=10e3),
               output=PushPull(high_drop=5.0))
    c = transfer_curve(d)
    assert (c.upper, c.lower) == pytest.approx((5.00, 100 / 21), abs=1e-9)
    assert c.start_state == "high" and c.switched_state == "low"
    assert branch_at(c, "rising", 1.0) == 5.0 and branch_at(c, "rising", 8.0) == 0.0
    assert branch_at(c, "falling", 8.0) == 0.0 and branch_at(c, "falling", 1.0) == 5.0
    assert c.at_upper == (5.0, 0.0) and c.at_lower == (0.0, 5.0)


def test_textbook_stage_band():
    # Common practice (textbook-style case): 5 V rail-to-rail output, 2.5 V reference, 1 kOhm
    # input, 2 kOhm feedback: non-inverting, switches up at 3.75 V and back at 1.25 V.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e3, feedback=2e3))
    c = transfer_curve(d, samples=51)
    assert (c.upper, c.lower) == pytest.approx((3.75, 1.25), abs=1e-12)
    inside = (c.signal > c.lower) & (c.signal < c.upper)
    assert np.all(c.rising[inside] == 0.0) and np.all(c.falling[inside] == 5.0)
    outside = (c.signal < c.lower) | (c.signal > c.upper)
    assert np.array_equal(c.rising[outside], c.falling[outside])
    assert c.hysteresis == pytest.approx(2.5)


def test_each_point_appears_twice_with_a_vertical_jump(each_demo):
    d = each_demo
    c = transfer_curve(d)
    assert np.all(np.diff(c.signal) >= 0)
    for point, branch, (before, after) in ((c.upper, c.rising, c.at_upper), (c.lower, c.falling, c.at_lower)):
        where = np.flatnonzero(c.signal == point)
        assert len(where) >= 2
        # Read in the direction of travel: rising left to right, falling right to left.
        first, last = branch[where[0]], branch[where[-1]]
        if branch is c.rising:
            assert (first, last) == pytest.approx((before, after))
        else:
            assert (last, first) == pytest.approx((before, after))


def test_jump_levels_are_the_levels_analysis_reports(each_demo):
    d = each_demo
    a, c = analyze(d), transfer_curve(d)
    # Just before each switch the output is at the level analysis reports for that point.
    assert c.at_upper[0] == pytest.approx(a.at_upper.output, abs=1e-12)
    assert c.at_lower[0] == pytest.approx(a.at_lower.output, abs=1e-12)
    assert {c.start_state, c.switched_state} == {"high", "low"}


@pytest.mark.parametrize("stem", ["rain_tank_overflow", "sump_level_switch"])
def test_branch_levels_against_lcapy(stem, demo):
    # lcapy (PyPI, independent linear circuit solver; netlist in tests/circuit_reference.py):
    # the loaded output node's voltage at an input inside the band, in each output state.
    d = demo(stem)
    c = transfer_curve(d)
    x = 0.5 * (c.upper + c.lower)
    from lcapy import Circuit

    for state, branch in ((c.start_state, "rising"), (c.switched_state, "falling")):
        text, _ = netlist(d, state)
        node = Circuit(text)["o"].V.dc.sympy
        expected = float(node.subs({s: sympy.Float(x) for s in node.free_symbols if s.name == "vs"}))
        assert c.level_at(branch, x) == pytest.approx(expected, rel=1e-9, abs=1e-12)


def test_sweep_covers_the_signal_range_and_both_points(demo):
    d = demo("rain_tank_overflow")
    c = transfer_curve(d)
    low, high = d.signal_range()
    assert c.signal[0] < low and c.signal[-1] > high
    assert c.signal[0] < c.lower < c.upper < c.signal[-1]


def test_with_a_divider_ahead_the_stage_sees_its_thevenin_equivalent(demo):
    # The solar demo watches 0 to 16 V of battery through 240k / 62k: the stage's input runs over
    # 16 V x 62 / 302 = 3.285 V (divider ratio), and the curve is the stage with the divider's
    # Thevenin resistance in series (bandcalc.model.points.stage_design folds it in the same way).
    d = demo("solar_battery_disconnect")
    a, c = analyze(d), transfer_curve(d)
    assert c.signal[0] < 0 and c.signal[-1] > 16 * 62 / 302
    assert (c.upper, c.lower) == pytest.approx((a.upper, a.lower), rel=1e-12)
    folded = transfer_curve(stage_design(d))
    assert (folded.upper, folded.lower) == pytest.approx((c.upper, c.lower), rel=1e-12)
    x = 0.5 * (c.upper + c.lower)
    for branch in ("rising", "falling"):
        assert c.level_at(branch, x) == pytest.approx(folded.level_at(branch, x), rel=1e-12)
    assert (c.unit, c.watched) == ("V", False)


def test_against_the_watched_quantity(demo):
    d = demo("solar_battery_disconnect")
    a, c = analyze(d), transfer_curve(d, watched=True)
    assert (c.unit, c.watched) == ("V", True)
    assert (c.upper, c.lower) == pytest.approx((float(a.points.upper), float(a.points.lower)), rel=1e-12)
    assert c.signal[0] < 0 and c.signal[-1] > 16  # the watched range, front_end.low / high
    # Each watched point maps to the stage's point through the divider ratio 62 / 302.
    assert c.upper * 62 / 302 == pytest.approx(a.upper, rel=1e-9)
    # Without a front end the design's input is the stage's own volts: both axes are the same.
    sump = demo("sump_level_switch")
    same, stage = transfer_curve(sump, watched=True), transfer_curve(sump)
    assert np.array_equal(same.signal, stage.signal)
    assert (same.upper, same.lower) == (stage.upper, stage.lower)


def test_a_thermistor_at_the_bottom_switches_the_other_way_round(demo):
    # Greenhouse demo: NTC at the bottom, inverting stage.  As it warms the stage's input falls, so
    # the warming branch starts where the stage has switched (output low: fan off) and turns the
    # fan on (output high) at the upper watched point; the stage's own curve is the usual one.
    d = demo("greenhouse_fan_thermostat")
    a = analyze(d)
    warm = transfer_curve(d, watched=True)
    assert warm.unit == "C" and warm.start_state == "low"
    assert (warm.upper, warm.lower) == pytest.approx((float(a.points.upper), float(a.points.lower)), rel=1e-9)
    assert warm.level_at("rising", 20.0) == pytest.approx(a.output_low, abs=1e-9)
    assert warm.level_at("rising", 40.0) == pytest.approx(a.output_high, abs=1e-9)
    assert warm.level_at("falling", 0.5 * (warm.upper + warm.lower)) == pytest.approx(a.output_high, abs=1e-9)
    stage = transfer_curve(d)
    assert stage.start_state == "high"
    assert (stage.upper, stage.lower) == pytest.approx((a.upper, a.lower), rel=1e-9)


def test_bad_arguments_are_named(demo):
    d = demo("greenhouse_fan_thermostat")
    with pytest.raises(ValueError, match="samples"):
        transfer_curve(d, samples=1)
    with pytest.raises(ValueError, match="branch"):
        transfer_curve(d).level_at("sideways", 1.0)
