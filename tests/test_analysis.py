"""Analysis of one design: levels, currents, power and the findings a designer expects."""

import pytest

from bandcalc.model.design import (
    Comparator,
    Design,
    DividerReference,
    FixedReference,
    OpenDrain,
    PushPull,
    Resistors,
    Source,
    Supply,
)
from bandcalc.model.operating import analyze, is_protective

TEXTBOOK = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
                  resistors=Resistors(input=1e3, feedback=2e3))


def test_levels_pins_and_currents_by_hand():
    # Worked by hand (first principles): at the upper point 3.75 V the output is low (0 V), so
    # the + pin sits at 2.5 V, the input resistor carries (3.75 - 2.5)/1k = 1.25 mA and the
    # feedback resistor the same current on to the output.
    a = analyze(TEXTBOOK)
    assert (a.upper, a.lower, a.hysteresis, a.centre) == pytest.approx((3.75, 1.25, 2.5, 2.5))
    assert (a.output_high, a.output_low) == (5.0, 0.0)
    assert a.at_upper.plus == pytest.approx(2.5) and a.at_upper.minus == 2.5
    assert a.at_upper.currents["input"] == pytest.approx(1.25e-3)
    assert a.at_upper.currents["feedback"] == pytest.approx(-1.25e-3)


def test_worst_power_over_the_signal_range():
    # By hand: with the output high and the signal at 0 V the + pin is at 5/3 V, so the
    # feedback resistor carries (5 - 5/3)/2k = 1.667 mA: 5.56 mW; the input resistor 2.78 mW.
    a = analyze(TEXTBOOK)
    assert a.power["feedback"] == pytest.approx((10 / 3 / 2e3) ** 2 * 2e3)
    assert a.power["input"] == pytest.approx((5 / 3 / 1e3) ** 2 * 1e3)


def test_rail_currents_include_divider_and_pullup():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=DividerReference(10e3, 10e3),
               resistors=Resistors(input=10e3, feedback=1e6), output=OpenDrain(pullup=1e3))
    a = analyze(d)
    # At the upper point the output is low (0 V): the pull-up draws 5 mA, the divider ~0.25 mA.
    assert a.at_upper.rails["positive"] == pytest.approx(5e-3 + 0.25e-3, rel=1e-3)
    assert a.positive_rail_current >= a.at_upper.rails["positive"]


def test_open_drain_high_level_reached_is_below_pullup_volts():
    d = Design(stage="inverting", supply=Supply(5.0), output=OpenDrain(pullup=47e3),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=100e3))
    a = analyze(d)
    assert a.output_high < 5.0
    assert any(f.startswith("Weak pull-up: 47 kOhm") for f in a.findings)


def test_strong_pullup_gives_no_weak_pullup_finding():
    d = Design(stage="inverting", supply=Supply(5.0), output=OpenDrain(pullup=4.7e3),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=1e6))
    assert not any("pull-up" in f for f in analyze(d).findings)


def test_latch_when_point_is_beyond_the_signal_range():
    # 2 kOhm input, 1 kOhm feedback on a 2.5 V reference: upper point 2.5 + 2 x 2.5 = 7.5 V,
    # beyond the 5 V rail the signal can reach.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=2e3, feedback=1e3))
    a = analyze(d)
    assert a.upper == pytest.approx(7.5)
    assert any(f.startswith("Latches: the upper switching point 7.5 V is above") for f in a.findings)
    assert any(f.startswith("Latches: the lower switching point -2.5 V is below") for f in a.findings)


def test_signal_range_beyond_rails_is_allowed_for_the_non_inverting_stage():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=2e3, feedback=1e3), source=Source(low=-5.0, high=10.0))
    assert not any(f.startswith("Latches") for f in analyze(d).findings)


def test_pin_beyond_a_rail():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(6.0),
               resistors=Resistors(input=1e3, feedback=10e3), source=Source(high=20.0))
    assert any("- pin would sit at 6 V, beyond the rails" in f for f in analyze(d).findings)


def test_common_mode_range():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(4.5),
               resistors=Resistors(input=1e3, feedback=10e3), source=Source(high=10.0),
               comparator=Comparator(common_mode_high=3.5))
    a = analyze(d)
    assert any("outside the comparator's common-mode input range" in f for f in a.findings)


def test_no_hysteresis_when_output_levels_coincide():
    d = Design(stage="inverting", supply=Supply(5.0), output=PushPull(high_drop=2.5, low_drop=2.5),
               resistors=Resistors(to_ground=10e3, feedback=100e3))
    assert any(f.startswith("No hysteresis") for f in analyze(d).findings)


def test_high_values_invite_leakage():
    d = Design(stage="inverting", supply=Supply(5.0), resistors=Resistors(to_ground=10e3, feedback=4.7e6))
    assert any(f.startswith("High value: feedback is 4.7 MOhm") for f in analyze(d).findings)


def test_caution_on_hazardous_voltage():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e6, to_ground=10e3, feedback=1e6), source=Source(high=400.0))
    (caution,) = analyze(d).cautions
    assert "not a safety-rated protection" in caution and "local codes" in caution
    assert analyze(TEXTBOOK).cautions == ()


def test_protective_caution_from_the_flag_or_the_words():
    # Common practice: a stage guarding people or property (battery protection, heater cut-off) gets
    # the usual caution. An explicit flag wins; without it, protection words in the name or notes
    # bring the caution (erring on the side of showing it).
    words = Design(stage="inverting", supply=Supply(5.0), resistors=Resistors(to_ground=1e4, feedback=1e5),
                   name="Heater cut-off")
    cautions = analyze(words).cautions
    assert any(c.startswith("Protective function") and "licensed practice" in c for c in cautions)
    quiet = Design(**{**words.__dict__, "protective": False})
    assert analyze(quiet).cautions == ()
    flagged = Design(**{**TEXTBOOK.__dict__, "protective": True})
    assert any(c.startswith("Protective function") for c in analyze(flagged).cautions)
    assert analyze(TEXTBOOK).cautions == ()


def _named(name: str, notes: str = "") -> Design:
    return Design(stage="inverting", supply=Supply(5.0), resistors=Resistors(to_ground=1e4, feedback=1e5),
                  name=name, notes=notes)


def test_protective_words_match_whole_words_only():
    # "strip", "tripod" and "alarmingly" hold a protective word inside another word; none of them
    # says the stage guards anything, so none brings the caution.
    for text in ("LED strip dimmer", "Tripod level sensor", "Gasket press counter", "Leakproof"):
        assert not is_protective(_named(text)), text
    for text in ("Overcurrent trip", "Pump trips at 3 V", "Battery protection", "Heater cut-off"):
        assert is_protective(_named(text)), text


def test_protective_words_cover_the_usual_guards():
    # Common practice: stages that guard people or property by their usual names.
    for text in ("Overheat shutdown", "Smoke detector", "Gas sensor", "Water leak sensor",
                 "Emergency stop", "Door interlock", "Ground fault detector", "Earth-fault relay",
                 "Li-ion overdischarge", "over-discharge cut"):
        assert is_protective(_named("Stage", text)), text
