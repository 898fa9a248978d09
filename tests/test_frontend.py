"""Front ends: thermistor models against published data, the divider against an independent solver,
watched switching points round-tripping through the stage model, the design-file section and the CLI."""

import copy
import dataclasses
import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from strategies import designs_with_front_ends

from bandcalc.cli.commands import main
from bandcalc.demos import demo_paths
from bandcalc.errors import DesignError
from bandcalc.model.design import Design, FixedReference, OpenDrain, PushPull, Resistors, Source, Supply
from bandcalc.model.design_file import design_from_dict, design_to_dict
from bandcalc.model.front_end import (
    DividerFrontEnd,
    LinearFrontEnd,
    ThermistorFrontEnd,
    beta_resistance,
    beta_temperature,
    front_end_tolerances,
    steinhart_hart_resistance,
    steinhart_hart_temperature,
)
from bandcalc.model.network import switching_points
from bandcalc.model.operating import analysis_to_dict, analyze
from bandcalc.model.points import (
    design_points,
    front_end_power,
    input_at,
    stage_design,
    stage_targets,
    volts_for,
)

GREENHOUSE = "greenhouse_fan_thermostat"
SOLAR = "solar_battery_disconnect"
SUMP = "sump_level_switch"

# Steinhart-Hart coefficients and two rows of the resistance table published for a common 10 kOhm
# NTC probe (from memory: the probe manual is not at hand to cite by name).
PROBE = (1.129241e-3, 2.341077e-4, 8.775468e-8)
PROBE_TABLE = [(0.0, 32650.9), (-10.0, 55303.9)]


# --- thermistor models against outside references ---------------------------------------------

@pytest.mark.parametrize(("celsius", "ohms"), PROBE_TABLE)
def test_steinhart_hart_against_published_probe_table(celsius, ohms):
    # The table lists measured resistances and the coefficients are fitted to them, so the two
    # agree to within the fit: a few parts in 1e5, about a millikelvin.
    assert steinhart_hart_resistance(PROBE, celsius + 273.15) == pytest.approx(ohms, rel=1e-4)
    assert steinhart_hart_temperature(PROBE, ohms) - 273.15 == pytest.approx(celsius, abs=2e-3)


def test_steinhart_hart_probe_is_10k_at_25c_and_inverse_is_exact():
    # Same source: a "10 kOhm probe" is 10 kOhm at 25 C.
    assert steinhart_hart_resistance(PROBE, 298.15) == pytest.approx(10e3, rel=1e-4)
    kelvin = np.linspace(200.0, 450.0, 51)
    back = steinhart_hart_temperature(PROBE, steinhart_hart_resistance(PROBE, kelvin))
    assert np.allclose(back, kelvin, rtol=0, atol=1e-9)


def test_beta_equation_defining_relation():
    # The Beta model's definition (thermistor manufacturers' data sheets):
    # R(T) = R25 exp(B (1/T - 1/298.15 K)), so R(T1)/R(T2) = exp(B (1/T1 - 1/T2)) for any pair,
    # and R(25 C) = R25.
    r25, beta = 10e3, 3950.0
    t1, t2 = np.array([250.0, 280.0, 310.0, 360.0]), np.array([300.0, 330.0, 270.0, 240.0])
    ratio = beta_resistance(r25, beta, t1) / beta_resistance(r25, beta, t2)
    assert np.allclose(ratio, np.exp(beta * (1 / t1 - 1 / t2)), rtol=1e-13)
    assert beta_resistance(r25, beta, 298.15) == pytest.approx(r25, rel=1e-15)
    assert np.allclose(beta_temperature(r25, beta, beta_resistance(r25, beta, t1)), t1, rtol=1e-13)


def test_thermistor_resistance_takes_celsius_and_scales_steinhart_hart_by_r25():
    sh = ThermistorFrontEnd(fixed=10e3, steinhart_hart=PROBE)
    p = {"front_end.r25": sh.nominal_r25 * 1.02}
    assert sh.resistance(p, 0.0) == pytest.approx(32650.9 * 1.02, rel=1e-4)
    assert sh.temperature(p, 32650.9 * 1.02) == pytest.approx(0.0, abs=2e-3)


# --- the divider's Thevenin equivalent against an independent solver ---------------------------

def _stage(**changes):
    base = dict(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.495),
                resistors=Resistors(input=1e3, feedback=1e6), output=OpenDrain(pullup=10e3))
    return Design(**{**base, **changes})


@pytest.mark.parametrize(("top", "bottom", "x"),
                         [(240e3, 62e3, 16.0), (1e6, 10e3, 325.0), (4.7e3, 4.7e3, 3.3)])
def test_divider_thevenin_against_lcapy(top, bottom, x):
    lcapy = pytest.importorskip("lcapy")
    # lcapy (PyPI), a general linear-circuit solver: open-circuit voltage and impedance at the node.
    cct = lcapy.Circuit(f"Vx w 0 {x!r}\nRtop w s {top!r}\nRbot s 0 {bottom!r}")
    thevenin = cct.thevenin("s", 0)
    design = _stage(front_end=DividerFrontEnd(top, bottom), source=Source(resistance=100.0))
    volts, ohms = volts_for(design, x)
    assert volts == pytest.approx(float(thevenin.Voc.dc.sympy), rel=1e-12)
    assert ohms - 100.0 == pytest.approx(float(thevenin.Z.sympy), rel=1e-12)


def _full_circuit(design, state, front_lines):
    """The whole stage with its front end as one lcapy netlist (from tests/circuit_reference.py)."""
    from circuit_reference import netlist

    text, minus = netlist(design, state)
    lines = [line for line in text.splitlines() if not line.startswith("Vs ")] + front_lines
    return "\n".join(lines), minus


@pytest.mark.parametrize("stage", ["non-inverting", "inverting"])
def test_watched_divider_points_against_lcapy_whole_circuit(stage):
    pytest.importorskip("lcapy")
    import sympy
    from lcapy import Circuit

    resistors = (Resistors(input=1e3, feedback=1e6) if stage == "non-inverting"
                 else Resistors(input=10e3, to_reference=100e3, feedback=1e6))
    design = _stage(stage=stage, resistors=resistors, front_end=DividerFrontEnd(240e3, 62e3),
                    source=Source(resistance=470.0))
    w = design_points(design)
    states = ("high", "low") if design.inverting else ("low", "high")
    for state, x in zip(states, (w.at_stage_upper, w.at_stage_lower), strict=True):
        text, minus = _full_circuit(design, state, ["Vs w 0 vs", "Rtop w s 240000.0", "Rbot s 0 62000.0"])
        cct = Circuit(text)
        diff = cct["p"].V.dc.sympy - cct[minus].V.dc.sympy
        vs = sympy.Symbol("vs", real=True)
        diff = diff.subs({s: vs for s in diff.free_symbols if s.name == "vs"})
        (root,) = sympy.solve(sympy.Eq(diff, 0), vs)
        assert float(x) == pytest.approx(float(root), abs=1e-9)


@pytest.mark.parametrize(("position", "stage"), [("bottom", "inverting"), ("top", "non-inverting"),
                                                 ("bottom", "non-inverting")])
def test_watched_thermistor_points_satisfy_the_whole_circuit_in_lcapy(position, stage):
    # At the solved temperature, the whole circuit with the thermistor's resistance there must sit
    # exactly at the switching condition V+ - V- = offset (lcapy, independent nodal analysis).
    pytest.importorskip("lcapy")
    from lcapy import Circuit

    fe = ThermistorFrontEnd(fixed=10e3, r25=10e3, beta=3950.0, position=position)
    resistors = (Resistors(input=4.7e3, feedback=470e3) if stage == "non-inverting"
                 else Resistors(to_positive=150e3, to_ground=120e3, feedback=1.5e6))
    design = _stage(stage=stage, resistors=resistors, reference=FixedReference(2.5), front_end=fe,
                    output=PushPull(0.02, 0.02, 60.0), source=Source(resistance=220.0))
    w = design_points(design)
    states = ("high", "low") if design.inverting else ("low", "high")
    for state, x in zip(states, (w.at_stage_upper, w.at_stage_lower), strict=True):
        r_t = float(fe.resistance({"front_end.r25": 10e3, "front_end.beta": 3950.0}, x))
        parts = ["Vexc e 0 5.0"] + (["Rfix e s 10000.0", f"Rth s 0 {r_t!r}"] if position == "bottom"
                                    else [f"Rth e s {r_t!r}", "Rfix s 0 10000.0"])
        text, minus = _full_circuit(design, state, parts)
        cct = Circuit(text)
        assert float(cct["p"].V.dc.sympy - cct[minus].V.dc.sympy) == pytest.approx(0.0, abs=1e-9)


# --- round trips through the stage model --------------------------------------------------------

def test_thermistor_points_against_a_bracketed_root_solve(demo):
    # An independent root finder (scipy's brentq) on the switching condition in temperature,
    # with the stage re-evaluated at each trial's Thevenin resistance.
    from scipy.optimize import brentq

    design = demo(GREENHOUSE)
    w = design_points(design)

    def gap(celsius, which):
        volts, ohms = volts_for(design, celsius)
        return float(volts) - float(getattr(switching_points(design, {"source.resistance": ohms}), which))

    for which, x in (("upper", w.at_stage_upper), ("lower", w.at_stage_lower)):
        assert float(x) == pytest.approx(brentq(gap, -55, 150, args=(which,), xtol=1e-12), abs=1e-8)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(designs_with_front_ends())
def test_watched_points_round_trip_through_the_stage_model(design):
    # At the watched point, the stage evaluated with the front end's source there switches
    # exactly at the front end's open-circuit voltage there.
    # Tolerance: both sides extrapolate from samples at 0 and 1 (V or the divider fraction), so
    # the random designs' far-out points carry rounding that grows with the distance: about 1e-10
    # at kilovolts, above 1e-9 at millions of units (a 1 mV/kPa sensor's point at -6.4e6 kPa).
    w = design_points(design)
    close = {"abs": 1e-9 * max(1.0, design.supply.span), "rel": 1e-8}
    points = (("upper", w.at_stage_upper, w.stage_upper), ("lower", w.at_stage_lower, w.stage_lower))
    for which, x, volts in points:
        if not np.isfinite(x):
            continue
        v, r = volts_for(design, x)
        assert float(v) == pytest.approx(float(volts), **close)
        point = getattr(switching_points(design, {"source.resistance": r}), which)
        assert float(point) == pytest.approx(float(v), **close)
        assert float(input_at(design, v)) == pytest.approx(float(x), rel=1e-9, abs=1e-9)


def test_watched_points_broadcast_like_the_stage_model(demo):
    design = demo(GREENHOUSE)
    r25 = 10e3 * np.array([0.99, 1.0, 1.01])[:, None]
    beta = 3950.0 * np.array([0.99, 1.0, 1.01])[None, :]
    vec = design_points(design, {"front_end.r25": r25, "front_end.beta": beta})
    assert vec.upper.shape == (3, 3)
    for i in range(3):
        for j in range(3):
            one = design_points(design, {"front_end.r25": r25[i, 0], "front_end.beta": beta[0, j]})
            assert float(one.upper) == pytest.approx(vec.upper[i, j], rel=1e-14)
    # A higher R25 reads colder, so the fan switches at a higher temperature (first principles).
    assert vec.upper[2, 1] > vec.upper[1, 1] > vec.upper[0, 1]
    with pytest.raises(DesignError, match="front_end.top"):
        design_points(design, {"front_end.top": 1e3})


def test_stage_targets_for_the_fit_are_exact(demo):
    design = demo(GREENHOUSE)
    w = design_points(design)
    t = stage_targets(design, w.upper, w.lower)
    assert float(switching_points(design, {"source.resistance": t.upper_resistance}).upper) == pytest.approx(
        float(t.upper), abs=1e-12)
    assert float(switching_points(design, {"source.resistance": t.lower_resistance}).lower) == pytest.approx(
        float(t.lower), abs=1e-12)
    # A thermistor on the bottom: the hotter watched point is the stage's lower volts point.
    assert float(t.upper) == pytest.approx(float(w.stage_upper)) and float(t.upper) > float(t.lower)


def test_divider_stage_design_is_the_stage_with_the_thevenin_resistance(demo):
    design = demo(SOLAR)
    stage = stage_design(design)
    assert stage.front_end is None
    assert stage.source.resistance == pytest.approx(240e3 * 62e3 / 302e3)
    # Hand check: the watched points are the stage's volts points over the divider ratio.
    pts, w = switching_points(stage), design_points(design)
    assert float(w.upper) == pytest.approx(float(pts.upper) * 302 / 62, rel=1e-12)
    assert float(w.lower) == pytest.approx(float(pts.lower) * 302 / 62, rel=1e-12)


def test_linear_sensor_by_hand(demo):
    # A ratiometric-style pressure sensor on a fixed 5 V: 0.5 V + 40 mV/kPa; watched = (V - 0.5)/0.04.
    design = Design(**{**demo(SUMP).__dict__,
                       "front_end": LinearFrontEnd(volts_per_unit=0.04, offset=0.5, unit="kPa",
                                                   resistance=1e3),
                       "source": Source(resistance=100.0)})
    pts = switching_points(design, {"source.resistance": 1100.0})
    a = analyze(design)
    assert float(a.points.upper) == pytest.approx((float(pts.upper) - 0.5) / 0.04, rel=1e-12)
    assert float(a.points.lower) == pytest.approx((float(pts.lower) - 0.5) / 0.04, rel=1e-12)
    assert (a.points.unit, a.points.rises, a.rising_output) == ("kPa", True, "high")


# --- analysis -------------------------------------------------------------------------------------

def test_greenhouse_reads_in_celsius_with_the_direction_turned(demo):
    a = analyze(demo(GREENHOUSE))
    assert a.points.unit == "C" and not a.points.rises
    assert float(a.points.upper) == pytest.approx(31.91, abs=0.01)
    assert float(a.points.lower) == pytest.approx(27.94, abs=0.01)
    # By hand (Beta model): the 10k/NTC divider's voltage at the hotter point is the stage's lower point.
    r = 10e3 * math.exp(3950 * (1 / (float(a.points.upper) + 273.15) - 1 / 298.15))
    assert a.lower == pytest.approx(5 * r / (r + 10e3), abs=1e-9)
    # The fan (output high) comes on as the temperature rises through the upper watched point.
    assert a.rising_output == "high"
    heating = "Self-heating: at its switching points the thermistor dissipates up to 622 µW (at 27.94 °C)"
    assert any(f.startswith(heating) for f in a.warnings)


def test_thermistor_dissipation_by_hand(demo):
    design = demo(GREENHOUSE)
    # Inverting stage: the pin draws only its bias current, so the bead carries V^2/R (first principles).
    r = 10e3 * math.exp(3950 * (1 / (303.15) - 1 / 298.15))
    v = 5 * r / (r + 10e3) - 1e-9 * (r * 10e3 / (r + 10e3))
    power = front_end_power(design, 30.0, "high")
    assert power["front_end.thermistor"] == pytest.approx(v * v / r, rel=1e-12)
    assert power["front_end.fixed"] == pytest.approx((5 - v) ** 2 / 10e3, rel=1e-12)


def test_no_self_heating_finding_for_a_high_value_divider(demo):
    design = demo(GREENHOUSE)
    cool = Design(**{**design.__dict__, "front_end": ThermistorFrontEnd(fixed=100e3, r25=100e3, beta=4250.0)})
    assert not any(f.startswith("Self-heating") for f in analyze(cool).warnings)


def test_latch_is_judged_in_the_watched_quantity(demo):
    design = demo(SOLAR)
    short = Design(**{**design.__dict__, "front_end": DividerFrontEnd(240e3, 62e3, low=0.0, high=12.0)})
    (latch,) = [f for f in analyze(short).warnings if f.startswith("Latches")]
    assert "upper switching point" in latch
    assert "12.78 V (2.623 V at the stage) is above the highest value the input reaches (12 V)" in latch
    assert not any(f.startswith("Latches") for f in analyze(design).warnings)


def test_caution_when_the_front_end_watches_a_hazardous_voltage(demo):
    # A rectified 230 V mains bus (325 V peak) watched through a 1 MOhm / 10 kOhm divider.
    design = _stage(front_end=DividerFrontEnd(1e6, 10e3, low=0.0, high=400.0),
                    resistors=Resistors(input=10e3, feedback=1e6))
    caution, spacing = analyze(design).cautions
    assert "IEC 60664-1" in spacing and "400 V" in spacing
    assert "400 V" in caution and "not a safety-rated protection" in caution and "local codes" in caution
    assert not any(c.startswith("Hazardous") for c in analyze(demo(SOLAR)).cautions)


def test_json_of_analyze_gains_watched_keys_only_with_a_front_end(capsys, demo_path):
    assert main(["analyze", demo_path(GREENHOUSE), demo_path(SUMP), "--json"]) == 0
    green, sump = json.loads(capsys.readouterr().out)
    assert green["watched_unit"] == "C"
    assert green["upper_watched"] > green["lower_watched"]
    assert green["watched_direction"] == "falls" and green["watched_rising_output"] == "high"
    assert not {"upper_watched", "lower_watched", "watched_unit"} & set(sump)


def test_table_shows_both_quantities(capsys, demo_path):
    assert main(["analyze", demo_path(SOLAR)]) == 0
    out = capsys.readouterr().out
    assert ("watched upper      12.78 V  (the stage's upper point; rising through it sets the output "
            "high)") in out
    assert "watched lower      11.56 V" in out and "upper point        2.623 V" in out


def test_unreached_point_is_null_in_json():
    # Excited from 1 V, the divider never reaches a 2.5 V reference: no temperature switches it.
    design = _stage(front_end=ThermistorFrontEnd(fixed=10e3, r25=10e3, beta=3950.0, excitation=1.0),
                    reference=FixedReference(2.5), resistors=Resistors(input=10e3, feedback=1e6))
    data = analysis_to_dict(analyze(design))
    assert data["upper_watched"] is None and data["lower_watched"] is None
    assert any("no value the input reaches switches the stage" in f for f in data["warnings"])


@pytest.mark.parametrize(("change", "named"), [
    # 5.15 K: the Beta model's resistance overflows a float (exp(3950 (1/5.15 - 1/298.15)), by hand).
    ({"low": -268.0}, "front_end.low: at -268 °C the thermistor's resistance would be more than"),
    # A Beta of 1.3e7 K is no part's; it would overflow already at -10 C, the greenhouse's lowest.
    ({"beta": 1.3e7}, "front_end.beta: must be from 100 K to 20000 K"),
    ({"beta": 1.3e7, "low": None}, "front_end.beta: must be from 100 K to 20000 K"),
])
def test_a_range_the_front_end_cannot_reach_is_named_by_its_own_key(change, named, demo):
    d = demo(GREENHOUSE)
    with pytest.raises(DesignError) as refused:  # refused when the front end is built
        dataclasses.replace(d, front_end=dataclasses.replace(d.front_end, **change))
    assert named in str(refused.value)
    assert "source." not in str(refused.value)  # a key the user never wrote


def test_a_sensor_whose_output_cannot_move_is_named_as_the_front_end():
    # 0.5 V + 1e-300 V per kPa: in floating point the output never leaves 0.5 V; no sensor has it.
    # The message names the front end's own key, not "source.resistance: ... nan" or "source: low
    # must be below high" (keys the user never wrote).
    with pytest.raises(DesignError, match=r"front_end\.volts_per_unit: must be from 1 nV") as refused:
        LinearFrontEnd(volts_per_unit=1e-300, unit="kPa", offset=0.5, low=0.0, high=16.0)
    assert "source." not in str(refused.value)


# --- the design-file section -----------------------------------------------------------------------

BASE = json.loads(demo_paths()[GREENHOUSE].read_text())  # the file as written


def _with_front_end(front_end, **top):
    data = copy.deepcopy(BASE)
    data["front_end"] = front_end
    data.update(top)
    return data


@pytest.mark.parametrize("front_end", [
    {"kind": "divider", "top": "100k", "bottom": "22k", "low": 0, "high": "16"},
    {"kind": "thermistor", "steinhart_hart": list(PROBE), "fixed": "4k7", "position": "top",
     "excitation": 3.3, "dissipation_constant": "2m", "r25_tolerance": 0.5},
    {"kind": "linear", "volts_per_unit": "40m", "offset": 0.5, "unit": "kPa", "resistance": "1k"},
])
def test_section_reads_and_round_trips(front_end):
    d = design_from_dict(_with_front_end(front_end))
    assert design_from_dict(design_to_dict(d)) == d
    assert design_to_dict(d)["front_end"]["kind"] == front_end["kind"]


def test_front_end_tolerances_are_bounds_keyed_like_the_parameters(demo):
    fe = demo(GREENHOUSE).front_end
    assert front_end_tolerances(fe) == {"front_end.r25": (9.9e3, 10.1e3, "1 %"),
                                        "front_end.beta": (3910.5, 3989.5, "1 %")}
    assert front_end_tolerances(DividerFrontEnd(1e3, 1e3)) == {}


THERM = {"kind": "thermistor", "r25": "10k", "beta": 3950, "fixed": "10k"}
BAD = [
    ({"kind": "resistive"},
     "front_end.kind: 'resistive' is not a front-end kind; allowed: divider, thermistor, linear"),
    ({**THERM, "colour": 1}, "front_end.colour: unknown key; allowed: kind, fixed, r25, beta"),
    ({"kind": "divider", "top": "100k"}, "front_end.bottom: missing"),
    ({"kind": "divider", "top": "100k", "bottom": "-1"}, "front_end.bottom: must be greater than zero"),
    ({"kind": "divider", "top": "4k7x", "bottom": "1k"}, "front_end.top: cannot read '4k7x'"),
    ({"kind": "divider", "top": "1k", "bottom": "1k", "low": 5, "high": 2},
     "front_end: low (5.0) must be below high"),
    ({"kind": "thermistor", "r25": "10k", "fixed": "10k"},
     "give the thermistor as r25 and beta, or as steinhart_hart"),
    ({**THERM, "steinhart_hart": list(PROBE)}, "front_end.steinhart_hart: give either steinhart_hart or r25"),
    ({"kind": "thermistor", "steinhart_hart": [1e-3, 2e-4], "fixed": "10k"},
     "front_end.steinhart_hart: give three coefficients"),
    ({"kind": "thermistor", "steinhart_hart": [1e-3, -2e-4, 1e-7], "fixed": "10k"}, "needs B > 0 and C >= 0"),
    ({**THERM, "position": "middle"}, "front_end.position: 'middle' is not a position; allowed: bottom, top"),
    ({**THERM, "excitation": "rail"}, "front_end.excitation: 'rail' is not allowed; give \"positive\""),
    ({**THERM, "excitation": "reference"}, 'front_end.excitation: "reference" needs a fixed reference'),
    ({**THERM, "beta_tolerance": 120}, "front_end.beta_tolerance: a percentage from 0 to below 100"),
    ({**THERM, "low": -300}, "front_end.low: -300.0 °C is not above absolute zero"),
    ({**THERM, "high": -60}, "front_end: low (-55.0 °C) must be below high (-60.0 °C)"),
    ({**THERM, "dissipation_constant": 0}, "front_end.dissipation_constant: must be greater than zero"),
    ({"kind": "linear", "volts_per_unit": 0, "unit": "kPa"}, "front_end.volts_per_unit: must not be zero"),
    ({"kind": "linear", "volts_per_unit": 0.1}, "front_end.unit: missing"),
    ({"kind": "linear", "volts_per_unit": 0.1, "unit": " "},
     "front_end.unit: give the watched quantity's unit"),
    ("divider", "front_end: must be an object such as"),
]


@pytest.mark.parametrize(("front_end", "message"), BAD, ids=[b[1][:40] for b in BAD])
def test_bad_front_end_is_named(front_end, message):
    with pytest.raises(DesignError) as err:
        design_from_dict(_with_front_end(front_end))
    assert message in str(err.value)


def test_source_range_is_refused_beside_a_front_end():
    with pytest.raises(DesignError, match="source.high: with a front end, give the range of the watched"):
        design_from_dict(_with_front_end(THERM, source={"resistance": 0, "high": 5}))


def test_files_without_a_front_end_still_read_and_write_without_one(demo):
    d = demo(SUMP)
    assert d.front_end is None and "front_end" not in design_to_dict(d)
    assert d.unit == "V" and analyze(d).points.unit == "V"


def test_a_thermistor_fed_from_a_zero_volt_reference_is_refused_when_built(demo):
    # Found by Hypothesis: with no excitation the divider's output never moves, so no temperature
    # reaches either point (first principles).  The stage cannot be analysed over such a range, so
    # the design is refused when it is built, naming the front end, not when it is first analysed.
    from dataclasses import replace

    from bandcalc.model.design import FixedReference, Source

    thermistor = ThermistorFrontEnd(fixed=1e3, r25=1e3, beta=2500.0, position="top", excitation="reference")
    with pytest.raises(DesignError, match=r"front_end: its output is 0 V at both -55 and 150 °C \(it hardly "
                                          r"moves with the watched value\)"):
        replace(demo(SUMP), reference=FixedReference(0.0), source=Source(), front_end=thermistor)


# --- front ends no real part has: refused at load, naming the key the user wrote ------------------

GREENHOUSE_FE = BASE["front_end"]
SH_ONLY = {k: v for k, v in GREENHOUSE_FE.items() if k not in ("r25", "beta", "beta_tolerance")}


@pytest.mark.parametrize("coefficients", [
    [1129.241, 2.341077e-4, 8.775468e-8],  # A typed without its exponent (PROBE's A is 1.129241e-3)
    [1.129241e3, 2.341077e-4, 8.775468e-8],  # A a million times too large
    [1.129241e-3, 2.341077e4, 8.775468e-8],  # B likewise
])
def test_steinhart_hart_typos_are_refused_naming_the_coefficients(coefficients):
    with pytest.raises(DesignError, match=r"front_end\.steinhart_hart: these coefficients give "):
        design_from_dict(_with_front_end({**SH_ONLY, "steinhart_hart": coefficients}))


@pytest.mark.parametrize(("change", "message"), [
    # Near absolute zero the Beta model's resistance passes any float (exp(3950 / 5 K)).
    ({"low": -268}, r"front_end\.low: at -268 °C the thermistor's resistance would be"),
    ({"high": 1e6}, r"front_end\.high: must be from -273\.15 °C to 500 °C"),
    # NTC parts have Betas of a few thousand kelvin (common practice).
    ({"beta": 1.3e7}, r"front_end\.beta: must be from 100 K to 20000 K, got 1\.3e\+07"),
    ({"fixed": 1e23}, r"front_end\.fixed: must be from 1 mΩ to 1 TΩ"),
    ({"excitation": 1e308}, r"front_end\.excitation: must be from 0 V to 100 kV"),
    ({"dissipation_constant": 1e9}, r"front_end\.dissipation_constant: must be from"),
])
def test_thermistor_values_no_part_has_are_refused_naming_the_key_written(change, message):
    with pytest.raises(DesignError, match=message):
        design_from_dict(_with_front_end({**GREENHOUSE_FE, **change}))


def test_a_steep_curve_over_the_default_range_names_that_range():
    # R25 1 TOhm is allowed, but at -55 C (the default low end) a Beta of 4000 K takes it past 1 TOhm.
    with pytest.raises(DesignError, match=r"front_end: over the default watched range -55 °C to 150 °C"):
        design_from_dict(_with_front_end({"kind": "thermistor", "r25": 1e12, "beta": 4000, "fixed": "10k"}))


@pytest.mark.parametrize(("front_end", "message"), [
    ({"kind": "linear", "volts_per_unit": 1e-300, "unit": "kPa"},
     r"front_end\.volts_per_unit: must be from 1 nV to 1 MV per unit"),
    ({"kind": "linear", "volts_per_unit": 1e300, "unit": "kPa"}, r"front_end\.volts_per_unit: must be from"),
    ({"kind": "linear", "volts_per_unit": 0.01, "unit": "kPa", "high": 1e300},
     r"front_end\.high: the sensor would give .* there; it must stay from -100 kV to 100 kV"),
    ({"kind": "linear", "volts_per_unit": 0.01, "unit": "kPa", "offset": 1e6},
     r"front_end\.offset: must be from -100 kV to 100 kV"),
    ({"kind": "linear", "volts_per_unit": 0.01, "unit": "k\ud800"}, r"front_end\.unit: .*lone surrogate"),
    ({"kind": "divider", "top": "10k", "bottom": 1e300}, r"front_end\.bottom: must be from 1 mΩ to 1 TΩ"),
    ({"kind": "divider", "top": "10k", "bottom": "1k", "high": 1e308},
     r"front_end\.high: must be from -100 kV to 100 kV"),
    # Below the bound as well as above it (a low of -1e308 V passed, to fail later as "source.low").
    ({"kind": "divider", "top": "10k", "bottom": "1k", "low": -1e308},
     r"front_end\.low: must be from -100 kV to 100 kV"),
    # Ranges the stage cannot be analysed over are refused when the file is read, naming the key
    # written, not when the analysis first needs them.
    ({"kind": "divider", "top": "10k", "bottom": "1k", "high": 5e-324},
     r"front_end: its output is 0 V at both 0 and 4\.94066e-324 V"),
    ({"kind": "divider", "top": "10k", "bottom": "1k", "high": -1.0},
     r"front_end\.high: -1 V is not above the low end of the range, 0 V \(what brings the front end's "
     r"output to the negative rail\); give front_end\.low"),
])
def test_other_front_ends_no_part_has_are_refused_naming_the_key(front_end, message):
    with pytest.raises(DesignError, match=message):
        design_from_dict(_with_front_end(front_end))


def test_a_required_front_end_value_given_as_null_is_refused_and_an_optional_one_left_out():
    with pytest.raises(DesignError, match=r"front_end\.fixed: required"):
        design_from_dict(_with_front_end({**GREENHOUSE_FE, "fixed": None}))
    d = design_from_dict(_with_front_end({**GREENHOUSE_FE, "low": None}))
    assert d.front_end.low is None
