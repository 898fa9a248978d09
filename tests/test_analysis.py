"""Analysis of one design: levels, currents, power and the findings a designer expects."""

import json
import math

import pytest

from bandcalc.model.design import (
    Comparator,
    Design,
    DividerReference,
    FixedReference,
    Load,
    OpenDrain,
    PushPull,
    Resistors,
    Source,
    Supply,
)
from bandcalc.model.findings import finding_to_dict
from bandcalc.model.front_end import DividerFrontEnd
from bandcalc.model.operating import analyze, is_protective
from bandcalc.model.ratings import PartRating, Ratings
from bandcalc.model.units import format_si

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
    assert any(f.startswith("Weak pull-up: 47 kΩ") for f in a.warnings)


def test_strong_pullup_gives_no_weak_pullup_finding():
    d = Design(stage="inverting", supply=Supply(5.0), output=OpenDrain(pullup=4.7e3),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=1e6))
    assert not any("pull-up" in f for f in analyze(d).warnings)


def test_latch_when_point_is_beyond_the_signal_range():
    # 2 kOhm input, 1 kOhm feedback on a 2.5 V reference: upper point 2.5 + 2 x 2.5 = 7.5 V,
    # beyond the 5 V rail the signal can reach.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=2e3, feedback=1e3))
    a = analyze(d)
    assert a.upper == pytest.approx(7.5)
    assert any(f.startswith("Latches: the upper switching point 7.5 V is above") for f in a.warnings)
    assert any(f.startswith("Latches: the lower switching point -2.5 V is below") for f in a.warnings)


def test_signal_range_beyond_rails_is_allowed_for_the_non_inverting_stage():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=2e3, feedback=1e3), source=Source(low=-5.0, high=10.0))
    assert not any(f.startswith("Latches") for f in analyze(d).warnings)


def test_pin_beyond_a_rail():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(6.0),
               resistors=Resistors(input=1e3, feedback=10e3), source=Source(high=20.0))
    assert any("the - pin would reach 6 V with the input at" in f and "1 V beyond the positive rail" in f
               for f in analyze(d).warnings)


def test_common_mode_range():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(4.5),
               resistors=Resistors(input=1e3, feedback=10e3), source=Source(high=10.0),
               comparator=Comparator(common_mode_high=3.5))
    a = analyze(d)
    assert any("above the comparator's common-mode input range (up to 3.5 V)" in f for f in a.warnings)


def test_no_hysteresis_when_output_levels_coincide():
    d = Design(stage="inverting", supply=Supply(5.0), output=PushPull(high_drop=2.5, low_drop=2.5),
               resistors=Resistors(to_ground=10e3, feedback=100e3))
    assert any(f.startswith("No hysteresis") for f in analyze(d).warnings)


def test_high_values_invite_leakage():
    d = Design(stage="inverting", supply=Supply(5.0), resistors=Resistors(to_ground=10e3, feedback=4.7e6))
    assert any(f.startswith("High value: feedback is 4.7 MΩ") for f in analyze(d).warnings)


def test_caution_on_hazardous_voltage():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e6, to_ground=10e3, feedback=1e6), source=Source(high=400.0))
    caution, spacing = analyze(d).cautions
    assert "not a safety-rated protection" in caution and "local codes" in caution
    assert spacing.startswith("Creepage and clearance")
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


# --- Over the whole range the input reaches ------------------------------------------------------

def _of(design: Design, kind: str) -> list:
    return [f for f in analyze(design).findings if f.kind == kind]


# Clean stages of either kind on 5 V: every pin inside the rails over the whole range.
CLEAN = {
    "non-inverting": TEXTBOOK,
    "inverting": Design(stage="inverting", supply=Supply(5.0),
                        resistors=Resistors(input=10e3, to_positive=100e3, to_ground=100e3, feedback=1e6)),
}
PROBLEMS = ("input_beyond_rail", "common_mode", "differential_input", "working_voltage", "power",
            "logic_levels", "no_hysteresis", "latches", "weak_pullup", "high_value", "self_heating")


@pytest.mark.parametrize("stage", list(CLEAN))
def test_a_clean_design_has_no_problem_findings(stage):
    # Only the power-up note: the input can rest inside the band (a fact of every such stage).
    a = analyze(CLEAN[stage])
    assert not [f.kind for f in a.findings if f.kind in PROBLEMS]
    assert [f.kind for f in a.findings] == ["power_up"] and a.findings[0].level == "note"


def test_clamp_current_through_the_input_resistor_worked_by_hand():
    # Worked by hand (first principles; the pin held at the rail by its clamp): a 5 V comparator
    # whose - pin is fed through 10 kOhm from a signal reaching 12 V is driven 7 V past the rail;
    # the clamp carries 7 V / 10 kOhm = 0.7 mA, within the 1 mA default limit.  Before, nothing
    # was said: both switching points sit well inside the rails.
    d = Design(**{**CLEAN["inverting"].__dict__, "source": Source(high=12.0)})
    (f,) = _of(d, "input_beyond_rail")
    assert f.values["pin"] == "-" and f.values["rail"] == "positive"
    assert f.values["volts"] == pytest.approx(12.0) and f.values["at"] == pytest.approx(12.0)
    assert f.values["series_resistance"] == pytest.approx(10e3)
    assert f.values["clamp_current"] == pytest.approx(0.7e-3)
    assert f.values["current_limit"] == pytest.approx(1e-3)
    assert format_si(0.7e-3, "A") in f.message and "within" in f.message and "from memory" in f.message
    assert "reverse" in f.message  # the phase-reversal caution


def test_clamp_current_over_the_limit_asks_for_series_resistance_by_hand():
    # By hand: 1 kOhm of source resistance and a 0.5 mA limit: (12 - 5) V / 11 kOhm = 636 uA, over
    # the limit; 7 V / 0.5 mA = 14 kOhm in all would hold it, so 3 kOhm more in series.  Below the
    # negative rail: -3 V through 11 kOhm, 273 uA.
    d = Design(**{**CLEAN["inverting"].__dict__, "source": Source(resistance=1e3, low=-3.0, high=12.0),
                  "comparator": Comparator(input_current_limit=0.5e-3)})
    high, low = sorted(_of(d, "input_beyond_rail"), key=lambda f: f.values["rail"] != "positive")
    assert high.values["clamp_current"] == pytest.approx(7 / 11e3)
    assert high.values["added_resistance"] == pytest.approx(3e3)
    assert f"over the {format_si(0.5e-3, 'A')} limit" in high.message and "3 kΩ more" in high.message
    assert low.values["rail"] == "negative" and low.values["clamp_current"] == pytest.approx(3 / 11e3)


def test_plus_pin_beyond_the_rail_through_the_input_and_feedback_by_hand():
    # By hand: non-inverting, 10 kOhm input, 100 kOhm feedback, signal to 24 V, output high (5 V) at
    # the top: unclamped the + pin would sit at (24 x 100k + 5 x 10k) / 110k = 22.27 V behind
    # 10k || 100k = 9.09 kOhm: (22.27 - 5) / 9.09k = 1.9 mA, the same as (24 - 5) / 10k with the
    # pin held at 5 V (no current in the feedback).  Over the 1 mA default limit.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=10e3, feedback=100e3), source=Source(high=24.0))
    (f,) = _of(d, "input_beyond_rail")
    assert f.values["pin"] == "+" and f.values["volts"] == pytest.approx(2.45e6 / 110e3)
    assert f.values["series_resistance"] == pytest.approx(1e6 / 110)
    assert f.values["clamp_current"] == pytest.approx(1.9e-3)


def test_a_reference_beyond_the_rail_has_nothing_to_limit_its_current():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(6.0),
               resistors=Resistors(input=1e3, feedback=10e3), source=Source(high=20.0))
    (f,) = [f for f in _of(d, "input_beyond_rail") if f.values["pin"] == "-"]
    assert f.values["clamp_current"] == math.inf and "nothing in the network limits" in f.message
    assert "the stage cannot switch" in f.message  # it is there at the switching points too
    assert finding_to_dict(f)["clamp_current"] is None  # strict JSON


@pytest.mark.parametrize("stage", list(CLEAN))
def test_common_mode_over_the_whole_range(stage):
    # The switching points (near 2.5 V) sit inside a 0 to 3.5 V common-mode range, but the signal
    # reaches 5 V: in the inverting stage the - pin follows it there, in the non-inverting stage
    # the + pin does.  Before, only the switching points were checked.
    d = Design(**{**CLEAN[stage].__dict__, "comparator": Comparator(common_mode_high=3.5)})
    (f,) = _of(d, "common_mode")
    assert f.values["pin"] == ("-" if stage == "inverting" else "+")
    assert f.values["volts"] > 3.5 and f.values["limit"] == 3.5
    assert "reverse" in f.message and "switching point" not in f.message
    assert not _of(CLEAN[stage], "common_mode")


@pytest.mark.parametrize("stage", list(CLEAN))
def test_differential_input_beyond_the_given_maximum(stage):
    # The difference between the pins peaks at an end of the range; with a 2 V maximum given it
    # is too large, with none given nothing is checked.
    d = Design(**{**CLEAN[stage].__dict__, "comparator": Comparator(differential_max=2.0)})
    (f,) = _of(d, "differential_input")
    assert abs(f.values["volts"]) > 2.0 and f.values["limit"] == 2.0
    assert not _of(Design(**{**d.__dict__, "comparator": Comparator(differential_max=10.0)}),
                   "differential_input")


@pytest.mark.parametrize("stage", list(CLEAN))
def test_logic_levels_with_the_margin(stage):
    # By hand: an open-drain output, 10 kOhm pull-up to 5 V, into a 10 kOhm load to ground, reaches
    # at most 2.5 V when high: 1 V short of a receiving input that needs 3.5 V; its low level (0 V)
    # clears a 0.8 V threshold.
    loaded = Design(**{**CLEAN[stage].__dict__, "output": OpenDrain(pullup=10e3),
                       "load": Load(resistance=10e3, logic_low_max=0.8, logic_high_min=3.5)})
    (f,) = _of(loaded, "logic_levels")
    assert f.values["output_state"] == "high" and f.values["threshold"] == 3.5
    assert f.values["volts"] <= 2.5 + 1e-9 and f.values["margin"] == pytest.approx(f.values["volts"] - 3.5)
    assert "short by" in f.message
    fine = Design(**{**CLEAN[stage].__dict__, "load": Load(logic_low_max=0.8, logic_high_min=3.5)})
    assert not _of(fine, "logic_levels")
    # A push-pull output that stops 0.4 V above ground misses a 0.3 V low threshold by 0.1 V.
    lifted = Design(**{**CLEAN[stage].__dict__, "output": PushPull(low_drop=0.4),
                       "load": Load(logic_low_max=0.3)})
    (f,) = _of(lifted, "logic_levels")
    assert f.values["output_state"] == "low" and f.values["margin"] == pytest.approx(-0.1)


def _mains_sense(**changes) -> Design:
    # An inverting stage watching up to 400 V through a 2 MOhm / 20 kOhm sense divider; its - pin
    # draws nothing (no input resistor, no bias current).
    d = Design(stage="inverting", supply=Supply(5.0),
               front_end=DividerFrontEnd(top=2e6, bottom=20e3, high=400.0),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=1e6), name="Line monitor")
    return Design(**{**d.__dict__, **changes})


def test_working_voltage_and_series_count_worked_by_hand():
    # By hand: at 400 V the divider's node sits at 400 x 20k / 2.02M = 3.96 V, so the 2 MOhm top
    # resistor sees 396.04 V: above the 75 V of a 0603 chip (typical figure, from memory), and
    # 396.04 / 75 = 5.3, so six in series would do.  It dissipates 396.04^2 / 2M = 78.4 mW; derated
    # twice (common practice) that needs 157 mW, above 0603's 100 mW.
    (f,) = _of(_mains_sense(), "working_voltage")
    assert f.values["part"] == "front_end.top" and f.values["volts"] == pytest.approx(400 * 2e6 / 2.02e6)
    assert f.values["rating"] == 75.0 and f.values["in_series"] == 6
    assert "from memory" in f.message and "6 in series" in f.message
    (p,) = _of(_mains_sense(), "power")
    assert p.values["part"] == "front_end.top" and p.values["watts"] == pytest.approx(396.0396 ** 2 / 2e6)
    assert p.values["needed"] == pytest.approx(2 * p.values["watts"]) and p.values["rating"] == 0.1
    # 1206 chips (200 V, 0.25 W): two in series, and the power fits.
    bigger = _mains_sense(ratings=Ratings(size="1206"))
    assert [f.values["in_series"] for f in _of(bigger, "working_voltage")] == [2]
    assert not _of(bigger, "power")
    # The part's own rating wins over its size's.
    rated = _mains_sense(ratings=Ratings(parts=(("front_end.top", PartRating(working_voltage=500.0,
                                                                             power=0.25)),)))
    assert not _of(rated, "working_voltage") and not _of(rated, "power")


@pytest.mark.parametrize("stage", list(CLEAN))
def test_working_voltage_and_power_fire_on_either_stage(stage):
    # The 400 V sense divider ahead of either clean stage: its 2 MOhm top resistor sees between
    # 396 V (the node unloaded, by hand as above) and 400 V, whatever the stage draws from the
    # node: six 0603 parts in series; the stage's own resistors are fine.
    d = Design(**{**CLEAN[stage].__dict__, "source": Source(),
                  "front_end": DividerFrontEnd(top=2e6, bottom=20e3, high=400.0)})
    (f,) = _of(d, "working_voltage")
    assert f.values["part"] == "front_end.top" and f.values["in_series"] == 6
    assert 396.0 <= f.values["volts"] <= 400.0
    assert [p.values["part"] for p in _of(d, "power")] == ["front_end.top"]
    assert not _of(CLEAN[stage], "working_voltage") and not _of(CLEAN[stage], "power")


def test_power_is_judged_over_the_range_not_at_a_point_the_input_never_reaches():
    # Behind the 400 V divider the textbook stage would switch up at about 2.9 kV, far beyond the
    # range: the input never gets there, so it may sit low over the whole range.  By hand (Millman
    # at the divider's node): at 400 V with the output low the node sees 2 MOhm to 400 V, 20 kOhm
    # to ground and the 1k input + 2k feedback to 0 V, so it sits at 0.5211 V and the top
    # resistor takes 399.48 V: 79.8 mW, not the 4.1 W it would take at 2.9 kV.  Before, the
    # switching points counted wherever they lay.
    d = Design(**{**TEXTBOOK.__dict__, "front_end": DividerFrontEnd(top=2e6, bottom=20e3, high=400.0)})
    a = analyze(d)
    assert any(f.kind == "latches" for f in a.findings)
    node = (400 / 2e6) / (1 / 2e6 + 1 / 20e3 + 1 / 3e3)
    assert a.power["front_end.top"] == pytest.approx((400 - node) ** 2 / 2e6, rel=1e-9)


def test_high_voltage_brings_the_creepage_and_clearance_caution():
    cautions = analyze(_mains_sense()).cautions
    assert any("Creepage and clearance" in c and "IEC 60664-1" in c and "licensed practice" in c
               for c in cautions)
    assert not any("Creepage" in c for c in analyze(CLEAN["inverting"]).cautions)


def test_power_finding_and_summary_derate_the_same_way():
    # 60 mW in a resistor: under the 0.1 W of an 0603, but derated twice (common practice) it needs
    # 120 mW, so the finding fires, as the summary's rating does.  Before, the finding compared the
    # power itself with 0.1 W and stayed silent.  By hand: a 600 / 600 Ohm reference divider on
    # 12 V puts 6 V across each half, 36 / 600 = 60 mW.
    d = Design(stage="non-inverting", supply=Supply(12.0), reference=DividerReference(600.0, 600.0),
               resistors=Resistors(input=10e3, feedback=100e3))
    found = {p.values["part"]: p for p in _of(d, "power")}
    assert set(found) == {"reference.top", "reference.bottom"}
    assert found["reference.top"].values["watts"] == pytest.approx(0.06)
    assert found["reference.top"].values["needed"] == pytest.approx(0.12)


def test_power_up_inside_the_band_and_outside_it():
    # The band (1.25 V to 3.75 V) lies inside the 0 to 5 V the input reaches: the first state is
    # not set by the network.  An input that never goes below 4 V cannot rest inside it.
    (f,) = _of(TEXTBOOK, "power_up")
    assert f.values["low"] == pytest.approx(1.25) and f.values["high"] == pytest.approx(3.75)
    assert "capacitor" in f.message
    above = Design(**{**TEXTBOOK.__dict__, "source": Source(low=4.0, high=5.0)})
    assert not _of(above, "power_up")


def test_power_up_caution_for_a_protective_stage():
    guarded = Design(**{**TEXTBOOK.__dict__, "protective": True})
    assert any(c.startswith("Power-up") and "safe state" in c for c in analyze(guarded).cautions)
    assert not any(c.startswith("Power-up") for c in analyze(TEXTBOOK).cautions)


def test_every_finding_has_a_kind_a_message_and_strict_json_numbers(each_demo):
    a = analyze(each_demo)
    for f in a.findings:
        text = json.dumps(finding_to_dict(f), allow_nan=False)
        assert {"kind", "message"} <= set(json.loads(text)) and f.message in a.warnings
