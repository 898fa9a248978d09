"""Parts as data sheets state them: the comparator's own hysteresis, the offset current between its
pins, output levels within their limits, a linear sensor's offset and span accuracy, and a
thermistor's Beta with the temperatures it was measured between.  Each check is worked by hand
from first principles."""

import copy
import dataclasses

import pytest

from bandcalc.errors import DesignError
from bandcalc.model.design import Comparator, Design, FixedReference, PushPull, Resistors, Source, Supply
from bandcalc.model.design_file import design_from_dict, design_to_dict
from bandcalc.model.network import switching_points


def basic(comparator, **extra):
    """Non-inverting stage, 5 V, reference 2.5 V, 10 kOhm in, 39 kOhm feedback, ideal rail-to-rail output."""
    fields = {"stage": "non-inverting", "supply": Supply(5.0), "reference": FixedReference(2.5),
              "resistors": Resistors(input=10e3, feedback=39e3), "output": PushPull(),
              "comparator": comparator, **extra}
    return Design(**fields)


def test_comparator_own_hysteresis_adds_to_the_networks():
    # Data sheets of comparators with built-in hysteresis state the input trip points as
    # V_OS + V_HYST/2 (rising) and V_OS - V_HYST/2 (falling) (common practice).  Non-inverting
    # stage, first principles: the rising input switches where V+ = Vref + V_OS + V_HYST/2 with the
    # output low (0 V), so V_up = (Vref + V_OS + h/2)(1 + R1/R2); the falling one where
    # V+ = Vref + V_OS - h/2 with the output high (5 V): V_lo = (Vref + V_OS - h/2)(1 + R1/R2) - 5 R1/R2.
    h, offset, k = 0.006, 0.001, 10e3 / 39e3
    p = switching_points(basic(Comparator(offset=offset, hysteresis=h)))
    assert float(p.upper) == pytest.approx((2.5 + offset + h / 2) * (1 + k), abs=1e-12)
    assert float(p.lower) == pytest.approx((2.5 + offset - h / 2) * (1 + k) - 5.0 * k, abs=1e-12)
    # The network's own hysteresis, 5 V x R1/R2, grows by h (1 + R1/R2).
    assert float(p.upper - p.lower) == pytest.approx(5.0 * k + h * (1 + k), abs=1e-12)


def test_own_hysteresis_widens_an_inverting_stage_too():
    # Inverting stage, first principles: the + pin sits at Vs R2/(R1+R2) + Vo R1/(R1+R2) with R1 to
    # the positive rail and R2 = Rfb... here a divider of two 100 kOhm legs and 1 MOhm feedback: the
    # signal on the - pin must pass V+ - V_OS -+ h/2, so both points move outward by h/2.
    def inverting(h):
        return Design(stage="inverting", supply=Supply(5.0),
                      resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=1e6),
                      comparator=Comparator(hysteresis=h))
    plain, own = switching_points(inverting(None)), switching_points(inverting(0.004))
    assert float(own.upper - plain.upper) == pytest.approx(0.002, abs=1e-12)
    assert float(plain.lower - own.lower) == pytest.approx(0.002, abs=1e-12)


def test_the_range_checks_hold_both_states_inside_the_built_in_band():
    # First principles, with the trip points above: the output stays high until V+ - V- falls below
    # V_OS - h/2 and low until it rises above V_OS + h/2.  With 10 kOhm in and 10 MOhm feedback the
    # network adds only 5 mV; h = 1 V puts the points at (2.5 +/- 0.5 V)(1 + 1e-3) (less 5 mV for
    # the lower one), 1.997 V and 3.003 V, so a signal from 2.2 V to 2.8 V stays inside the band:
    # at either end the output holds whichever state it was in, and the range checks look at both.
    from bandcalc.model.points import design_points
    from bandcalc.model.range_checks import samples

    design = dataclasses.replace(basic(Comparator(hysteresis=1.0)), source=Source(low=2.2, high=2.8),
                                 resistors=Resistors(input=10e3, feedback=10e6))
    points = design_points(design)
    assert float(points.upper) == pytest.approx(3.0 * 1.001, abs=1e-9)
    assert float(points.lower) == pytest.approx(2.0 * 1.001 - 5.0 * 1e-3, abs=1e-9)
    states = {}
    for s in samples(design, points):
        states.setdefault(s.at, set()).add(s.state)
    assert states == {2.2: {"high", "low"}, 2.8: {"high", "low"}}


def test_offset_current_flows_into_one_pin_more_than_the_other():
    # Offset current I_os is the difference between the two pins' bias currents (data-sheet
    # definition, common practice): I+ = I_b + I_os/2, I- = I_b - I_os/2.  Inverting stage, first
    # principles: the - pin sees the signal less I- (R_source + R_input); the + pin, a 50 kOhm
    # Thevenin node of two 100 kOhm legs and 1 MOhm feedback, falls by I+ x its parallel resistance.
    def stage(ib, ios):
        return Design(stage="inverting", supply=Supply(5.0),
                      resistors=Resistors(input=100e3, to_positive=100e3, to_ground=100e3, feedback=1e6),
                      source=Source(resistance=50e3),
                      comparator=Comparator(bias_current=ib, offset_current=ios))
    ib, ios = 200e-9, 80e-9
    r_plus = 1 / (1 / 100e3 + 1 / 100e3 + 1 / 1e6)
    shift = (ib - ios / 2) * 150e3 - (ib + ios / 2) * r_plus
    base, moved = switching_points(stage(0.0, 0.0)), switching_points(stage(ib, ios))
    for a, b in ((base.upper, moved.upper), (base.lower, moved.lower)):
        assert float(b - a) == pytest.approx(shift, abs=1e-12)


def test_offset_current_on_a_non_inverting_stage_with_a_reference_divider():
    # Non-inverting stage, the - pin on a 10k/10k divider across 5 V (Thevenin 2.5 V behind 5 kOhm):
    # the - pin draws I- = I_b - I_os/2 through 5 kOhm; the + pin draws I+ = I_b + I_os/2 through
    # R1 || R2 (signal and output legs).  First principles: each point moves by
    # (1 + R1/R2) (dV+ - dV-) with dV+ = I+ (R1 || R2) seen at the signal as I+ R1, dV- = -I- 5 kOhm.
    from bandcalc.model.design import DividerReference

    def stage(ib, ios):
        return Design(stage="non-inverting", supply=Supply(5.0), reference=DividerReference(10e3, 10e3),
                      resistors=Resistors(input=10e3, feedback=39e3), output=PushPull(),
                      comparator=Comparator(bias_current=ib, offset_current=ios))
    ib, ios, k = 1e-6, 4e-7, 10e3 / 39e3
    i_plus, i_minus = ib + ios / 2, ib - ios / 2
    shift = i_plus * 10e3 - i_minus * 5e3 * (1 + k)
    base, moved = switching_points(stage(0.0, 0.0)), switching_points(stage(ib, ios))
    assert float(moved.upper - base.upper) == pytest.approx(shift, abs=1e-12)
    assert float(moved.lower - base.lower) == pytest.approx(shift, abs=1e-12)


FILE = {"format": 1, "stage": "non-inverting", "supply": {"positive": 5.0}, "reference": {"volts": 2.5},
        "resistors": {"input": "10k", "feedback": "39k"},
        "comparator": {"offset": "1m", "hysteresis": "6 mV", "offset_current": "20n"}}


def test_comparator_fields_read_in_file_units_and_round_trip():
    d = design_from_dict(copy.deepcopy(FILE))
    assert d.comparator.hysteresis == pytest.approx(0.006)
    assert d.comparator.offset_current == pytest.approx(20e-9)
    assert design_from_dict(design_to_dict(d)) == d
    plain = design_from_dict({**FILE, "comparator": {"offset": 0.001}})
    assert "hysteresis" not in design_to_dict(plain)["comparator"]  # files without them stay as they were


@pytest.mark.parametrize("field, value, message", [
    ("hysteresis", -0.001, "comparator.hysteresis: must be from 0 V to 100 kV, got -0.001 V"),
    ("hysteresis", "lots", "comparator.hysteresis: cannot read 'lots'"),
    ("offset_current", float("nan"), "comparator.offset_current: must be a finite number"),
])
def test_bad_comparator_fields_name_the_key(field, value, message):
    data = copy.deepcopy(FILE)
    data["comparator"][field] = value
    with pytest.raises(DesignError) as err:
        design_from_dict(data)
    assert message in str(err.value)


def test_own_hysteresis_reaches_the_design_points_through_a_front_end(demo):
    # The greenhouse demo watches temperature through an NTC divider: a built-in hysteresis widens
    # the watched band too (the stage's points move outward, and so do the watched ones).
    from bandcalc.model.points import design_points

    d = demo("greenhouse_fan_thermostat")
    wider = dataclasses.replace(d, comparator=dataclasses.replace(d.comparator, hysteresis=0.01))
    a, b = design_points(d), design_points(wider)
    assert float(b.stage_upper - b.stage_lower) == pytest.approx(float(a.stage_upper - a.stage_lower) + 0.01,
                                                                 rel=0.2)
    assert float(b.upper - b.lower) > float(a.upper - a.lower)


# --- sensors ---------------------------------------------------------------------------------------

LINEAR = {"kind": "linear", "volts_per_unit": "40m", "offset": 0.5, "unit": "kPa",
          "offset_tolerance": "10 mV", "span_tolerance": 2}


def sensor_design(front_end):
    return design_from_dict({**copy.deepcopy(FILE), "comparator": {}, "front_end": front_end,
                             "tolerances": {"resistors": 0}})


def test_linear_sensor_offset_and_span_accuracy_spread_the_watched_points():
    # The sensor reads offset + span x; its data sheet gives the offset within +/-10 mV and the span
    # within +/-2 %.  The stage's own points do not move (its resistors are exact here), so the watched
    # upper point x = (V_up - offset) / span is greatest with the offset low and the span low, least
    # with both high (first principles).
    from bandcalc.spread.propagation import worst_case

    d = sensor_design(LINEAR)
    assert d.front_end.offset_tolerance == pytest.approx(0.01) and d.front_end.span_tolerance == 2.0
    assert design_from_dict(design_to_dict(d)) == d
    k = 10e3 / 39e3
    v_up, v_lo = 2.5 * (1 + k), 2.5 * (1 + k) - 5.0 * k
    wc = worst_case(d)
    assert wc.upper.max == pytest.approx((v_up - 0.49) / (0.04 * 0.98), rel=1e-12)
    assert wc.upper.min == pytest.approx((v_up - 0.51) / (0.04 * 1.02), rel=1e-12)
    assert wc.lower.min == pytest.approx((v_lo - 0.51) / (0.04 * 1.02), rel=1e-12)
    # The hysteresis (V_up - V_lo) / span moves with the span alone.
    assert (wc.hysteresis.min, wc.hysteresis.max) == pytest.approx(
        ((v_up - v_lo) / (0.04 * 1.02), (v_up - v_lo) / (0.04 * 0.98)), rel=1e-12)


@pytest.mark.parametrize("front_end, message", [
    ({**LINEAR, "offset_tolerance": -0.01},
     "front_end.offset_tolerance: must be from 0 V to 100 kV, got -0.01 V"),
    ({**LINEAR, "span_tolerance": 100}, "front_end.span_tolerance: a percentage from 0 to below 100"),
    ({"kind": "thermistor", "r25": "10k", "beta": 3950, "fixed": "10k", "beta_temperatures": [85, 25]},
     "front_end.beta_temperatures: the first temperature must be below the second, got [85.0, 25.0]"),
    ({"kind": "thermistor", "r25": "10k", "beta": 3950, "fixed": "10k", "beta_temperatures": 50},
     "front_end.beta_temperatures: give the two temperatures in C the Beta was measured between"),
    ({"kind": "thermistor", "steinhart_hart": [1.129241e-3, 2.341077e-4, 8.775468e-8], "fixed": "10k",
      "beta_temperatures": [25, 85]}, "front_end.beta_temperatures: only with beta"),
])
def test_bad_sensor_accuracy_names_the_key(front_end, message):
    with pytest.raises(DesignError) as err:
        sensor_design(front_end)
    assert message in str(err.value)


def test_a_thermistor_beta_carries_the_temperatures_it_was_measured_between():
    # NTC data sheets state Beta between two temperatures, B25/50 or B25/85 (common practice); the
    # Beta model through R25 meets the part at both (first principles), so the pair is recorded and
    # stated; left out it is 25/50, and the outputs say so.
    from bandcalc.model.operating import analyze
    from bandcalc.model.thermistor import beta_resistance
    from bandcalc.outputs.summary import component_rows

    therm = {"kind": "thermistor", "r25": "10k", "beta": 3977, "fixed": "10k", "beta_temperatures": [25, 85]}
    d = sensor_design(therm)
    assert d.front_end.beta_temperatures == (25.0, 85.0)
    assert design_from_dict(design_to_dict(d)) == d
    assert "B25/85" in next(r["value"] for r in component_rows(analyze(d)) if r["designator"] == "TH1")
    default = sensor_design({k: v for k, v in therm.items() if k != "beta_temperatures"})
    assert default.front_end.beta_temperatures is None
    assert "B25/50, assumed" in next(r["value"] for r in component_rows(analyze(default))
                                     if r["designator"] == "TH1")
    # The model meets R25 at 25 C and R25 exp(B (1/T2 - 1/T1)) at the pair's second temperature.
    r85 = float(beta_resistance(10e3, 3977, 273.15 + 85))
    assert r85 == pytest.approx(10e3 * 2.718281828459045 ** (3977 * (1 / 358.15 - 1 / 298.15)), rel=1e-12)


# --- in the spread ---------------------------------------------------------------------------------

def limits_design(stage_output, comparator=None, **tolerances):
    from bandcalc.model.tolerances import PerResistor, Tolerances

    return Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
                  resistors=Resistors(input=10e3, feedback=39e3), output=stage_output,
                  comparator=comparator or Comparator(),
                  tolerances=Tolerances(resistors=PerResistor(0.0), **tolerances))


def test_output_levels_within_their_data_sheet_limits_move_the_hysteresis_by_hand():
    # First principles: with the output behind R_o, the hysteresis is (V_H - V_L) R_in / (R_f + R_o),
    # V_H = 5 V - high drop, V_L = low drop; greatest with both drops and R_o least, least with both
    # drops and R_o greatest.
    from bandcalc.model.tolerances import OutputLimits
    from bandcalc.spread.propagation import worst_case

    d = limits_design(PushPull(high_drop=0.1, low_drop=0.05, resistance=50.0),
                      output=OutputLimits(high_drop=(0.0, 0.3), low_drop=(0.0, 0.2),
                                          resistance=(20.0, 100.0)))
    wc = worst_case(d)
    assert wc.hysteresis.max == pytest.approx(5.0 * 10e3 / (39e3 + 20.0), rel=1e-12)
    assert wc.hysteresis.min == pytest.approx(4.5 * 10e3 / (39e3 + 100.0), rel=1e-12)
    assert wc.hysteresis.min_corner["output.high_drop"] == 0.3


def test_output_limits_must_include_the_designs_own_value():
    from bandcalc.model.tolerances import OutputLimits
    from bandcalc.spread.propagation import SpreadError, spread

    d = limits_design(PushPull(high_drop=0.5), output=OutputLimits(high_drop=(0.0, 0.3)))
    with pytest.raises(SpreadError, match=r"tolerances.output.high_drop: \[0, 0.3\] V must include the "
                                          r"design's output.high_drop, 0.5 V"):
        spread(d, samples=100)


def test_open_drain_limits_and_entries_for_the_other_output_kind(demo):
    # The rain-tank demo's open-drain output: its low level within 0 to 0.4 V (a data sheet's V_OL) and
    # the pull-up supply within its limits are factors; a push-pull entry is named in the notes.
    from bandcalc.model.tolerances import OutputLimits, Tolerances
    from bandcalc.spread.propagation import spread

    d = dataclasses.replace(demo("rain_tank_overflow"), tolerances=Tolerances(
        output=OutputLimits(low_volts=(0.0, 0.4), pullup_volts=(3.2, 3.4), resistance=(10.0, 20.0))))
    s = spread(d, samples=1000)
    by_name = {f.name: f for f in s.factors}
    assert (by_name["output.low_volts"].low, by_name["output.low_volts"].high) == (0.0, 0.4)
    assert (by_name["output.pullup_volts"].low, by_name["output.pullup_volts"].high) == (3.2, 3.4)
    wrong = "tolerances.output.resistance: not an entry for this design's open-drain output"
    assert any(wrong in n for n in s.notes)


def test_offset_current_and_built_in_hysteresis_limits_in_the_worst_case():
    # Inverting stage of the offset-current check above: an offset current of +/-80 nA about 0 moves
    # both points by +/-(I_os/2)(R_s + R_in + R_plus) (first principles); the comparator's hysteresis
    # within 2 to 6 mV adds h to the stage's (trip points at +/- h/2 on the - pin's signal).
    from bandcalc.model.tolerances import PerResistor, Tolerances
    from bandcalc.spread.propagation import worst_case

    design = Design(stage="inverting", supply=Supply(5.0),
                    resistors=Resistors(input=100e3, to_positive=100e3, to_ground=100e3, feedback=1e6),
                    source=Source(resistance=50e3), comparator=Comparator(hysteresis=0.004),
                    tolerances=Tolerances(resistors=PerResistor(0.0), offset_current=80e-9,
                                          comparator_hysteresis=(0.002, 0.006)))
    r_plus = 1 / (1 / 100e3 + 1 / 100e3 + 1 / 1e6)
    nominal = switching_points(design)
    wc = worst_case(design)
    move = 40e-9 * (150e3 + r_plus)
    assert wc.upper.max == pytest.approx(float(nominal.upper) + move + 0.001, rel=1e-12)
    assert wc.lower.min == pytest.approx(float(nominal.lower) - move - 0.001, rel=1e-12)
    assert wc.hysteresis.min == pytest.approx(float(nominal.upper - nominal.lower) - 0.002, rel=1e-12)
