"""The stage model against published worked examples, an independent solver and invariants."""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from strategies import designs, designs_with_loads

from bandcalc.errors import DesignError
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
from bandcalc.model.network import pin_resistances, switching_points
from bandcalc.model.parts import parameters


def points(design):
    p = switching_points(design)
    return float(p.upper), float(p.lower)


# --- Published worked examples ---------------------------------------------------------------

def test_horowitz_hill_three_resistor_stage():
    # Horowitz & Hill, The Art of Electronics, 3rd ed., section 4.3.2B: +10 V supply, 10 kOhm
    # to +10 V, 10 kOhm to ground, 100 kOhm feedback, output swinging 0 to +5 V; the book
    # gives switching points of 4.76 V and 5.00 V.
    d = Design(stage="inverting", supply=Supply(10.0),
               resistors=Resistors(feedback=100e3, to_positive=10e3, to_ground=10e3),
               output=PushPull(high_drop=5.0))
    upper, lower = points(d)
    assert upper == pytest.approx(5.00, abs=0.005)
    assert lower == pytest.approx(4.76, abs=0.005)
    assert lower == pytest.approx(100 / 21, abs=1e-9)  # exact: 10 V x (1/10k) / (2.1/10k)


def test_comparator_datasheet_additional_hysteresis_example():
    # Comparator data sheet (MAX9117 family), worked "additional hysteresis" example: 5 V,
    # 1.252 V reference on the - pin, 12 kOhm input, 8.66 kOhm + pin to ground, 1.2 MOhm
    # feedback, rail-to-rail output.  Published 3 V and 2.95 V (rounded).
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(1.252),
               resistors=Resistors(input=12e3, to_ground=8.66e3, feedback=1.2e6))
    upper, lower = points(d)
    assert upper == pytest.approx(3.0, abs=0.001)
    assert lower == pytest.approx(2.95, abs=0.001)
    assert upper == pytest.approx(2.99939, abs=1e-5)  # exact, worked by hand from the same values
    assert lower == pytest.approx(2.94939, abs=1e-5)


def test_textbook_two_resistor_stage():
    # Common practice (textbook-style case, no single source): 5 V rail-to-rail output, 2.5 V
    # reference, 1 kOhm input, 2 kOhm feedback switches at 3.75 V and 1.25 V.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e3, feedback=2e3))
    assert points(d) == pytest.approx((3.75, 1.25), abs=1e-12)


def test_symmetric_dual_supply_inverting_bistable():
    # Sedra & Smith, Microelectronic Circuits, section on bistable circuits (formula from
    # memory): the inverting bistable with R1 from + pin to ground and R2 feedback switches at
    # V_TH = L+ R1/(R1+R2) and V_TL = L- R1/(R1+R2).  Here L+- = +-13 V, R1 = 10k, R2 = 100k.
    d = Design(stage="inverting", supply=Supply(15.0, -15.0),
               resistors=Resistors(to_ground=10e3, feedback=100e3), output=PushPull(2.0, 2.0))
    upper, lower = points(d)
    assert upper == pytest.approx(13 * 10 / 110, abs=1e-12)
    assert lower == pytest.approx(-13 * 10 / 110, abs=1e-12)


def test_non_inverting_dual_supply_textbook_formula():
    # Sedra & Smith, bistable circuits, non-inverting form (formula from memory):
    # V_TH = -L- R1/R2, V_TL = -L+ R1/R2 with the reference at 0 V.
    d = Design(stage="non-inverting", supply=Supply(12.0, -12.0), reference=FixedReference(0.0),
               resistors=Resistors(input=10e3, feedback=100e3), output=PushPull(1.0, 1.0))
    upper, lower = points(d)
    assert upper == pytest.approx(11 * 10e3 / 100e3, abs=1e-12)
    assert lower == pytest.approx(-11 * 10e3 / 100e3, abs=1e-12)


def test_bias_current_shift_through_input_resistor():
    # First principles (common practice): in the inverting stage the bias current into the
    # - pin drops I_b x (R_source + R_input), so both points rise by that much; on the + pin it
    # shifts the pin by -I_b x (parallel resistance of the + node).
    base = Design(stage="inverting", supply=Supply(5.0),
                  resistors=Resistors(input=100e3, to_positive=100e3, to_ground=100e3, feedback=1e6),
                  source=Source(resistance=50e3))
    ib = 200e-9
    biased = Design(**{**base.__dict__, "comparator": Comparator(bias_current=ib)})
    r_plus = 1 / (1 / 100e3 + 1 / 100e3 + 1 / 1e6)
    shift = ib * (150e3) - ib * r_plus
    for a, b in zip(points(base), points(biased), strict=True):
        assert b - a == pytest.approx(shift, abs=1e-12)


def test_open_drain_high_level_is_loaded_by_feedback():
    # First principles: with the output high, the pull-up and the feedback path to the + pin
    # form a divider; at the upper point of an inverting stage V+ equals the signal.
    d = Design(stage="inverting", supply=Supply(5.0),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=100e3),
               output=OpenDrain(pullup=10e3))
    p = switching_points(d)
    vplus = float(p.at_upper.plus)
    expected_out = 5.0 - 10e3 * (5.0 - vplus) / (10e3 + 100e3)
    assert float(p.at_upper.output) == pytest.approx(expected_out, abs=1e-12)
    assert float(p.upper) == pytest.approx(vplus, abs=1e-12)


# --- Independent solver: lcapy on random designs of every kind --------------------------------

@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.one_of(designs(), designs_with_loads()))
def test_agrees_with_lcapy_nodal_analysis(design):
    # lcapy (PyPI, independent linear circuit solver; netlist in tests/circuit_reference.py, a load
    # a resistor from the output node to its own source): the switching points, and the level the
    # output reaches at each of them, loaded by the feedback, a pull-up and any load.
    pytest.importorskip("lcapy")
    from circuit_reference import output_at, switching_point

    p = switching_points(design)
    upper_state, lower_state = ("high", "low") if design.inverting else ("low", "high")
    assert float(p.upper) == pytest.approx(switching_point(design, upper_state), abs=1e-6)
    assert float(p.lower) == pytest.approx(switching_point(design, lower_state), abs=1e-6)
    assert float(p.at_upper.output) == pytest.approx(output_at(design, upper_state, float(p.upper)), abs=1e-6)
    assert float(p.at_lower.output) == pytest.approx(output_at(design, lower_state, float(p.lower)), abs=1e-6)


# --- Invariants --------------------------------------------------------------------------------

@settings(deadline=None)
@given(designs())
def test_positive_feedback_gives_upper_above_lower(design):
    # Positive feedback opens a band whenever the output levels reached differ; a pull-up so
    # weak that the feedback drags the "high" level down to the low level leaves none.
    p = switching_points(design)
    upper_state, lower_state = ("high", "low") if design.inverting else ("low", "high")
    reached = {upper_state: float(p.at_upper.output), lower_state: float(p.at_lower.output)}
    if reached["high"] - reached["low"] > 1e-6:
        assert float(p.hysteresis) > 0
    assert float(p.centre) == pytest.approx((float(p.upper) + float(p.lower)) / 2)


@settings(deadline=None)
@given(designs())
def test_hysteresis_falls_to_zero_as_feedback_grows(design):
    # Needs a second leg on the + pin: with the feedback alone, V+ simply follows the output.
    r = design.resistors
    assume(not design.inverting or any(getattr(r, k) for k in ("to_positive", "to_negative",
                                                                 "to_ground", "to_reference")))
    # A weak pull-up lets the feedback drag the high level, which then rises with the feedback:
    # hold to the common-practice pull-up under a tenth of the feedback.
    assume(not isinstance(design.output, OpenDrain) or 10 * design.output.pullup <= r.feedback)
    # Other legs are at most 100x the feedback here, so x1e9 leaves under 1e-7 of the band.
    feedback = np.array([1.0, 1e3, 1e6, 1e9]) * design.resistors.feedback
    h = switching_points(design, {"resistors.feedback": feedback}).hysteresis
    assert np.all(np.diff(h) < 0)
    assert h[-1] < 1e-5 * h[0]


@settings(deadline=None)
@given(designs(), st.integers(0, 2**32 - 1))
def test_array_inputs_equal_looping_the_scalar_call(design, seed):
    rng = np.random.default_rng(seed)
    names = [k for k in parameters(design) if k.startswith("resistors.")]
    values = {k: parameters(design)[k] * rng.uniform(0.9, 1.1, 16) for k in names}
    values["comparator.offset"] = rng.uniform(-1e-3, 1e-3, 16)
    vec = switching_points(design, values)
    for i in range(16):
        one = switching_points(design, {k: v[i] for k, v in values.items()})
        assert float(one.upper) == vec.upper[i]
        assert float(one.lower) == vec.lower[i]


def test_arrays_broadcast_against_each_other():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e3, feedback=2e3))
    p = switching_points(d, {"resistors.input": np.array([1e3, 2e3])[:, None],
                             "resistors.feedback": np.array([2e3, 4e3, 8e3])[None, :]})
    assert p.upper.shape == (2, 3)
    assert p.upper[0, 0] == pytest.approx(3.75)


def test_unknown_parameter_is_named():
    d = Design(stage="inverting", supply=Supply(5.0), resistors=Resistors(feedback=1e5, to_ground=1e4))
    with pytest.raises(DesignError, match="resistors.input"):
        switching_points(d, {"resistors.input": 1e3})


def test_supply_variation_moves_default_pullup_and_divider():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=DividerReference(10e3, 10e3),
               resistors=Resistors(input=10e3, feedback=100e3), output=OpenDrain(pullup=1e3))
    nominal = switching_points(d)
    moved = switching_points(d, {"supply.positive": 5.5})
    # Everything scales with a single supply: points scale by 5.5/5 (first principles).
    assert float(moved.upper) == pytest.approx(float(nominal.upper) * 1.1)
    assert not math.isclose(float(moved.lower), float(nominal.lower))


def test_load_pulls_an_open_drain_high_level_down_by_hand():
    # First principles (Thevenin, Millman): a 10 kOhm pull-up to 5 V with a 10 kOhm load to ground
    # is 2.5 V behind 5 kOhm.  Inverting stage, 100k to +5 V, 100k to ground, 100k feedback: with
    # the output high the + pin sits at (5/100k + 2.5/105k) / (2/100k + 1/105k) = 2.5 V, so the
    # upper point is 2.5 V (no hysteresis left on that side); unloaded it is 3.0238 V.
    base = Design(stage="inverting", supply=Supply(5.0), output=OpenDrain(pullup=10e3),
                  resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=100e3))
    loaded = Design(**{**base.__dict__, "load": Load(resistance=10e3)})
    unloaded = (5 / 100e3 + 5 / 110e3) / (2 / 100e3 + 1 / 110e3)
    assert float(switching_points(base).upper) == pytest.approx(unloaded)
    assert float(switching_points(loaded).upper) == pytest.approx(2.5, abs=1e-12)
    assert float(switching_points(loaded).at_upper.output) == pytest.approx(2.5, abs=1e-12)
    # A stiff push-pull output (no output resistance) is not moved by any load.
    stiff = Design(**{**loaded.__dict__, "output": PushPull()})
    assert float(switching_points(stiff).upper) == pytest.approx(float(switching_points(
        Design(**{**stiff.__dict__, "load": None})).upper), abs=1e-12)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(designs_with_loads())
def test_pin_resistances_agree_with_lcapy(design):
    # lcapy (PyPI): the impedance between each pin's node and ground with every source at rest is
    # the resistance a clamp at that pin works against (the clamp current of the range checks).
    pytest.importorskip("lcapy")
    from circuit_reference import pin_resistances as reference

    for state in ("high", "low"):
        plus, minus = pin_resistances(design, parameters(design), state)
        want_plus, want_minus = reference(design, state)
        assert float(plus) == pytest.approx(want_plus, rel=1e-9, abs=1e-9)
        assert float(minus) == pytest.approx(want_minus, rel=1e-9, abs=1e-9)
