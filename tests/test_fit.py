"""The fit against a published procedure, exhaustive search, the model itself and its messages."""

import dataclasses
import json
import re

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import three_resistor_stages

from bandcalc.cli.commands import main
from bandcalc.demos import load_demo
from bandcalc.fit import grid_search as search
from bandcalc.fit.exact import solve
from bandcalc.fit.selection import FitError, apply_candidate, fit, fit_to_dict
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
from bandcalc.model.network import switching_points
from bandcalc.model.operating import analyze
from bandcalc.model.standard_values import series_values


def datasheet_stage() -> Design:
    # Comparator data sheet (MAX9117 family), worked "additional hysteresis" example: 5 V,
    # 1.252 V reference on the - pin, rail-to-rail output; input resistor, a leg from the + pin
    # to ground, and a 1.2 MOhm feedback resistor for 3.0 V and 2.95 V (50 mV hysteresis).
    return Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(1.252),
                  resistors=Resistors(input=10e3, to_ground=10e3, feedback=1e6))


# --- A published procedure ---------------------------------------------------------------------

def test_datasheet_procedure_exact_values():
    # Published: with the feedback chosen as 1.2 MOhm, 50 mV of hysteresis gives an input
    # resistor of 12 kOhm (R1 = R3 x V_hys / V_cc), and the upper point 3.0 V gives 8.655 kOhm
    # for the leg to ground.  Worked by hand from the same formula,
    # R2 = 1 / (V_thr / (V_ref R1) - 1/R1 - 1/R3) = 8656.97 Ohm: the published figure is rounded.
    r = fit(datasheet_stage(), 3.0, 2.95, fixed={"feedback": "1M2"}, series="E192")
    assert r.fitted == ("input", "to_ground")
    assert r.exact.resistors["input"] == pytest.approx(12e3, rel=1e-9)
    assert r.exact.resistors["to_ground"] == pytest.approx(8655, rel=5e-4)
    assert r.exact.resistors["to_ground"] == pytest.approx(8656.97, abs=0.01)
    assert (r.exact.upper, r.exact.lower) == pytest.approx((3.0, 2.95), abs=1e-9)
    # The data sheet's own choice (12 kOhm, 8.66 kOhm) is also the best the E192 series offers.
    best = r.candidates[0]
    assert best.resistors == {"input": 12e3, "feedback": 1.2e6, "to_ground": 8660.0}


def test_datasheet_procedure_e96_choice():
    # Published: 8.66 kOhm chosen from E96 for the leg to ground, giving 3.0 V and 2.95 V
    # (rounded; the model gives 2.99939 V and 2.94939 V, see test_network).
    r = fit(datasheet_stage(), 3.0, 2.95, fixed={"feedback": 1.2e6, "input": 12e3}, series="E96")
    best = r.candidates[0]
    assert r.fitted == ("to_ground",) and r.added_leg is None
    assert best.resistors["to_ground"] == 8660.0
    assert (best.upper, best.lower) == pytest.approx((2.99939, 2.94939), abs=1e-5)
    assert best.worst_error == pytest.approx(0.00061, abs=1e-5)


# --- Every number from the model -----------------------------------------------------------------

CASES = [
    ("sump_level_switch", 3.1, 1.9),
    ("solar_battery_disconnect", 12.7, 11.5),  # battery volts through its sense divider
    ("rain_tank_overflow", 2.7, 2.3),
    ("magnetic_speed_pickup", 0.3, -0.1),  # asymmetric: needs a leg to a rail
    ("strain_overload_alarm", 9.0, 8.0),
    ("motor_current_direction", 0.01, -0.02),  # fits the reference divider
]


@pytest.mark.parametrize(("name", "upper", "lower"), CASES)
def test_every_candidate_reanalysed_gives_its_points(name, upper, lower, demo):
    design = demo(name)
    r = fit(design, upper, lower, series="E12", count=4)
    assert len(r.candidates) == 4
    for c in (*r.candidates, r.exact):
        applied = apply_candidate(design, c)
        assert applied.name == design.name and applied.comparator == design.comparator
        a = analyze(applied)
        # With a front end the points are in the watched quantity (battery volts here).
        got = (float(a.points.upper), float(a.points.lower))
        assert got == pytest.approx((c.upper, c.lower), abs=1e-9)
        assert (c.error_upper, c.error_lower) == (c.upper - upper, c.lower - lower)
        assert c.worst_error == max(abs(c.error_upper), abs(c.error_lower))
        assert c.network_current > 0
    assert (r.exact.upper, r.exact.lower) == pytest.approx((upper, lower), abs=1e-9)
    worst = [c.worst_error for c in r.candidates]
    assert worst == sorted(worst)
    for c in r.candidates:
        values = {**c.resistors, **({"reference.top": c.reference.top, "reference.bottom": c.reference.bottom}
                                    if c.reference else {})}
        assert all(1e3 <= values[p] <= 10e6 for p in r.fitted)


def test_open_drain_loading_is_in_the_points():
    # A pull-up that is not small against the feedback lowers the reached high level; the fit's
    # points must match the model with that loading, not an unloaded output.
    d = Design(stage="inverting", supply=Supply(5.0), output=OpenDrain(pullup=47e3),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=220e3))
    r = fit(d, 2.8, 2.3, series="E24")
    c = r.candidates[0]
    pts = switching_points(c.design)
    assert (float(pts.upper), float(pts.lower)) == (c.upper, c.lower)
    unloaded = switching_points(c.design, {"output.pullup": 1e-3})
    assert abs(float(unloaded.upper) - c.upper) > 1e-3


# --- True best: exhaustive search with the model ---------------------------------------------------

STAGES = {
    "non-inverting open-drain, bias": (
        Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=10e3, feedback=100e3, to_ground=50e3), output=OpenDrain(4.7e3),
               comparator=Comparator(offset=2e-3, bias_current=1e-7), source=Source(resistance=1e3)),
        3.3, 2.9),
    "inverting dual supply, push-pull": (
        Design(stage="inverting", supply=Supply(12, -12), output=PushPull(1.2, 1.2, 50),
               resistors=Resistors(to_ground=1e3, to_positive=100e3, feedback=47e3),
               comparator=Comparator(offset=5e-4, bias_current=5e-8)),
        1.0, -0.5),
    "inverting open-drain": (load_demo("rain_tank_overflow"), 2.75, 2.35),
    "inverting to a reference": (load_demo("strain_overload_alarm"), 9.2, 8.3),
}


def exhaustive_worst(design, fitted, grid, upper, lower):
    """Worst error of every combination of grid values for the fitted positions (model only)."""
    names = [p if p.startswith("reference.") else f"resistors.{p}" for p in fitted]
    axes = np.meshgrid(*([grid] * len(names)), indexing="ij")
    pts = switching_points(design, {k: a.ravel() for k, a in zip(names, axes, strict=True)})
    return np.maximum(np.abs(pts.upper - upper), np.abs(pts.lower - lower)), axes


@pytest.mark.parametrize("series", ["E12", "E24"])
@pytest.mark.parametrize("stage", sorted(STAGES))
def test_best_equals_exhaustive_search(stage, series):
    design, upper, lower = STAGES[stage]
    r = fit(design, upper, lower, series=series, count=6)
    grid = series_values(series, 1e3, 10e6)
    worst, axes = exhaustive_worst(r.design, r.fitted, grid, upper, lower)
    order = np.argsort(worst, kind="stable")
    assert [c.worst_error for c in r.candidates] == list(worst[order[:6]])
    best = r.candidates[0]
    assert tuple(best.resistors[p] for p in r.fitted) == tuple(a.ravel()[order[0]] for a in axes)


def test_divider_and_added_leg_equal_exhaustive_search(demo):
    # Four free values (input, feedback and the reference divider) on E12 over 1k-1M, and an
    # added leg on E24: both against every combination.
    motor = demo("motor_current_direction")
    r = fit(motor, 0.01, -0.02, series="E12", min_ohms=1e3, max_ohms=1e6, count=3)
    assert r.fitted == ("input", "feedback", "reference.top", "reference.bottom")
    worst, _ = exhaustive_worst(r.design, r.fitted, series_values("E12", 1e3, 1e6), 0.01, -0.02)
    assert [c.worst_error for c in r.candidates] == sorted(worst)[:3]
    sump = demo("sump_level_switch")
    r = fit(sump, 3.4, 2.25, series="E24", count=3)
    assert r.added_leg == "to_ground"
    worst, _ = exhaustive_worst(r.design, r.fitted, series_values("E24", 1e3, 10e6), 3.4, 2.25)
    assert [c.worst_error for c in r.candidates] == sorted(worst)[:3]


def evaluator(design, keys):
    """The model's points for rows of values of ``keys``; any current that scales as 1/R breaks ties."""
    def evaluate(values):
        pts = switching_points(design, {k: values[:, j] for j, k in enumerate(keys)})
        return pts.upper, pts.lower, np.sum(1 / values, axis=1)
    return evaluate


@settings(max_examples=25, deadline=None)
@given(three_resistor_stages(), st.floats(0.5, 4.5), st.floats(0.05, 0.8), st.sampled_from([1, 3, 8]))
def test_search_equals_enumerating_every_combination(design, centre, width, count):
    # The search (bandcalc.fit.grid_search) must return exactly what evaluating everything returns,
    # ties (by current) included.
    keys = ["resistors.to_positive" if design.inverting else "resistors.input", "resistors.to_ground",
            "resistors.feedback"]
    evaluate = evaluator(design, keys)
    grid = series_values("E6", 1e3, 10e6)
    upper, lower = centre + width / 2, centre - width / 2
    found = search.search(evaluate, grid, 3, upper, lower, count)
    every = search.exhaustive(evaluate, grid, 3, upper, lower, count)
    assert np.array_equal(found.values, every.values)
    assert found.evaluations < every.evaluations


@settings(max_examples=40, deadline=None)
@given(three_resistor_stages(), st.sampled_from(["resistors.to_ground", "resistors.feedback"]),
       st.floats(3.0, 7.0), st.floats(3.0, 7.0), st.floats(3.0, 7.0))
def test_a_point_is_moebius_in_one_resistance(design, key, a, b, c):
    # The fact the search stands on (first principles: each resistor is a rank-one term of the
    # network's linear equations): three samples fix a point as a function of one resistance.
    x = 10.0 ** np.array([3.0, 5.0, 7.0, a, b, c])
    pts = switching_points(design, {key: x})
    for y in (pts.upper, pts.lower):
        curve = search.Curve.through(x[:3], y[None, :3])
        assert curve.at(x[3:]) == pytest.approx(y[3:], abs=1e-9)


def test_a_missed_prediction_falls_back_to_the_full_enumeration(monkeypatch):
    design, upper, lower = STAGES["inverting dual supply, push-pull"]
    evaluate = evaluator(design, ["resistors.to_ground", "resistors.to_positive", "resistors.feedback"])
    grid = series_values("E6", 1e3, 10e6)
    monkeypatch.setattr(search.Curve, "at", lambda self, x: self.y0 + 0.0 * x)  # a wrong prediction
    found = search.search(evaluate, grid, 3, upper, lower, 3)
    assert found.evaluations == len(grid) ** 3
    assert np.array_equal(found.values, search.exhaustive(evaluate, grid, 3, upper, lower, 3).values)


def test_solver_finds_the_textbook_ratio_from_any_start():
    # Common practice (textbook-style case, as in test_network): 5 V rail-to-rail output, 2.5 V
    # reference; 3.75 V and 1.25 V need a feedback resistor twice the input resistor, at any scale.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e3, feedback=1e3))
    evaluate = evaluator(d, ["resistors.input", "resistors.feedback"])
    for start in ([1e3, 1e3], [5e4, 1e6], [2e6, 3e3]):
        values, worst = solve(evaluate, np.array([True, True]), (3.75, 1.25), np.array([start]),
                              np.full(2, 1e2), np.full(2, 1e8), 1e-9)
        assert worst[0] <= 1e-9
        assert values[0, 1] / values[0, 0] == pytest.approx(2.0, rel=1e-9)


# --- Added legs -------------------------------------------------------------------------------------

def test_two_resistor_stage_gets_a_leg_and_says_why(demo):
    # A fixed 2.5 V reference with input and feedback only: the hysteresis fixes their ratio, so
    # the points sit where that reference puts them (common practice).  Points above that place
    # need the + pin pulled down: a leg to ground.
    r = fit(demo("sump_level_switch"), 3.4, 2.25)
    assert r.added_leg == "to_ground" and "to_ground" in r.fitted and not r.problems
    assert any("needs a reference of 2.761 V, where it has 2.5 V" in n and "to ground" in n for n in r.notes)


def test_symmetric_dual_supply_stage_asked_for_asymmetric_points(demo):
    # +/-12 V, leg to ground and feedback only: the points sit symmetrically about about 0 V.
    # Moving them up needs the + pin pulled towards the positive rail.
    r = fit(demo("magnetic_speed_pickup"), 0.3, -0.1)
    assert r.added_leg == "to_positive"
    assert r.candidates[0].design.resistors.to_positive is not None


def test_leg_with_no_leverage_is_not_chosen(demo):
    # +/-12 V non-inverting stage with a 0 V reference: a leg to ground meets the + pin at its own
    # switching potential and could move the points only through the comparator's offset.
    r = fit(demo("tacho_generator_squarer"), 0.38, -0.11)
    assert r.added_leg == "to_negative"


# --- Targets that cannot be met ----------------------------------------------------------------------

@pytest.mark.parametrize(("upper", "lower", "message"), [
    (2.0, 3.0, r"the upper point \(2 V\) must be above the lower point \(3 V\)"),
    (2.5, 2.5, "must be above the lower point"),
    (5.5, 2.0, r"the upper point 5.5 V is above the highest signal the stage can see \(5 V\)"),
    (3.0, -0.5, r"the lower point -500 mV is below the lowest signal the stage can see \(0 V\)"),
])
def test_impossible_targets_are_refused_plainly(upper, lower, message, demo):
    with pytest.raises(FitError, match=message):
        fit(demo("sump_level_switch"), upper, lower)


@pytest.mark.parametrize(("stem", "upper", "lower", "message"), [
    # The greenhouse thermistor watches -10 C to 50 C, the solar divider 0 V to 16 V of battery.
    ("greenhouse_fan_thermostat", 300.0, 200.0,
     r"the upper point 300 °C is above the highest value the front end watches \(50 °C\); a rising "
     r"input would never reach it \(set front_end\.high if it goes higher\)"),
    ("greenhouse_fan_thermostat", 30.0, -30.0,
     r"the lower point -30 °C is below the lowest value the front end watches \(-10 °C\); a falling "
     r"input would never reach it \(set front_end\.low if it goes lower\)"),
    ("solar_battery_disconnect", 30.0, 20.0, r"above the highest value the front end watches \(16 V\)"),
])
def test_targets_beyond_the_watched_range_name_the_front_end_key(stem, upper, lower, message, demo):
    # The key to change is the front end's, in the watched quantity; the stage's own source
    # range (source.low / source.high) is not something a front-end design lets the user set.
    with pytest.raises(FitError, match=message) as refused:
        fit(demo(stem), upper, lower)
    assert "source." not in str(refused.value)


def test_hysteresis_wider_than_the_output_swing(demo):
    # Inverting stage: the + pin sees only a fraction of the output swing (0.02 V to 4.98 V).
    with pytest.raises(FitError, match=r"hysteresis of 4\.96 V is wider than the output swing allows.*"
                                       r"20 mV to 4\.98 V.*non-inverting stage"):
        stage = dataclasses.replace(demo("greenhouse_fan_thermostat"), front_end=None)
        fit(stage, 4.98, 0.02)


def test_reference_beyond_the_rail():
    # Non-inverting, 5 V, rail-to-rail output, divider reference, input and feedback only: 6.0 V
    # and 5.6 V need R_in/R_f = 0.4/5 and a reference of 6.0 / 1.08 = 5.556 V (worked by hand
    # from V_up = V_ref (1 + R_in/R_f)), which no divider across 5 V gives.
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=DividerReference(10e3, 10e3),
               resistors=Resistors(input=10e3, feedback=100e3), source=Source(high=12.0))
    r = fit(d, 6.0, 5.6, add_leg=False)
    assert r.problems[0] == ("With input and feedback it needs a reference of 5.556 V, above the 5 V rail: "
                             "use the inverting stage or a higher rail.")
    assert "to ground would make it possible" in r.problems[1]
    assert r.exact is None and r.candidates[0].worst_error > 0.1
    allowed = fit(d, 6.0, 5.6)
    assert allowed.added_leg == "to_ground" and not allowed.problems
    assert any("kept as drawn" in n for n in allowed.notes)


@pytest.mark.parametrize(("kwargs", "message"), [
    ({"series": "E25"}, "series: unknown series 'E25'; allowed: E3, E6"),
    ({"min_ohms": 0}, "min_ohms: must be a positive number of ohms"),
    ({"min_ohms": 1e6, "max_ohms": 1e3}, r"min_ohms \(1 MΩ\) must be below max_ohms \(1 kΩ\)"),
    ({"min_ohms": 1.01e3, "max_ohms": 1.05e3, "series": "E6"}, "no E6 value lies between"),
    ({"count": 0}, "count: must be a whole number from 1 to 100, got 0"),
    ({"fixed": {"pullup": 1e3}}, "fixed.pullup: not a resistor of this design; allowed: input, feedback"),
    ({"fixed": {"feedback": "4k7x"}}, r"fixed\.feedback: cannot read '4k7x'"),
    ({"fixed": {"feedback": 1e5, "input": 1e4}}, "nothing to fit"),
])
def test_bad_settings_name_the_setting(kwargs, message, demo):
    with pytest.raises(FitError, match=message):
        fit(demo("sump_level_switch"), 3.1, 1.9, **kwargs)


# --- Command line ----------------------------------------------------------------------------------

@pytest.mark.parametrize(("options", "message"), [
    (["--series", "E25"], "--series: unknown series 'E25'; allowed: E3"),
    (["--min-ohms", "1M", "--max-ohms", "1k"], r"--min-ohms \(1 MΩ\) must be below --max-ohms \(1 kΩ\)"),
    (["--min-ohms", "1.01k", "--max-ohms", "1.05k", "--series", "E6"], "--series: no E6 value lies between"),
    (["--hold", "pullup=1k"], "--hold pullup: not a resistor of this design; allowed: input, feedback"),
    (["--hold", "feedback=-1k"], "--hold feedback: must be greater than zero"),
])
def test_cli_messages_name_the_options_typed(options, message, capsys, demo_path):
    # The user typed --min-ohms and --hold, never the function's min_ohms or fixed.
    assert main(["fit", demo_path("sump_level_switch"), "--upper", "3.1", "--lower", "1.9", *options]) == 2
    err = capsys.readouterr().err
    assert re.search(message, err), err
    assert not re.search(r"(?<!-)\b(min_ohms|max_ohms|fixed)\b", err)


def test_cli_json_shape(capsys, demo_path):
    sump = demo_path("sump_level_switch")
    assert main(["fit", sump, "--upper", "3.1", "--lower", "1900m", "--series", "E24", "--count", "3",
                 "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["candidates"]) == 3 and out["exact"]["upper"] == pytest.approx(3.1)
    first = out["candidates"][0]
    assert set(first) == {"resistors", "upper", "lower", "error_upper", "error_lower", "worst_error",
                          "network_current"}
    assert {"input", "feedback"} <= set(first["resistors"]) and set(out["fitted"]) <= set(first["resistors"])
    worst = [c["worst_error"] for c in out["candidates"]]
    assert worst == sorted(worst)


def test_cli_divider_candidate_carries_the_reference(capsys, demo_path):
    motor = demo_path("motor_current_direction")
    assert main(["fit", motor, "--upper", "10m", "--lower=-20m", "--series", "E12", "--max-ohms", "1M",
                 "--count", "1", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out["candidates"][0]["reference"]["divider"]) == {"top", "bottom"}


def test_cli_table_and_code(capsys, demo, demo_path):
    # The sump stage's own points: with feedback held at 39k the input resistor is 10k.
    sump = demo_path("sump_level_switch")
    a = analyze(demo("sump_level_switch"))
    assert main(["fit", sump, "--upper", repr(a.upper), "--lower", repr(a.lower), "--hold", "feedback=39k",
                 "--code"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert "Held as given: feedback 39 kΩ." in out[4]
    assert out[5].split() == ["#", "input", "upper", "lower", "worst", "error", "current"]
    assert out[6].split()[:2] == ["1", "10k"]  # first candidate, in the IEC 60062 code


def test_cli_refuses_clearly(capsys, demo_path):
    sump = demo_path("sump_level_switch")
    assert main(["fit", sump, "--upper", "2", "--lower", "3"]) == 2
    assert "must be above the lower point" in capsys.readouterr().err
    assert main(["fit", sump, "--upper", "3", "--lower", "2", "--hold", "feedback"]) == 2
    assert "--hold: write KEY=R" in capsys.readouterr().err


def test_fit_to_dict_round_trips_through_json():
    r = fit(datasheet_stage(), 3.0, 2.95, fixed={"feedback": 1.2e6}, series="E96", count=2)
    again = json.loads(json.dumps(fit_to_dict(r)))
    assert again["fitted"] == ["input", "to_ground"] and again["notes"][0].startswith("Held as given")


# --- Targets in the watched quantity (front ends) --------------------------------------------------

def _exhaustive_watched(design, params, grid, upper, lower):
    """Every combination of grid values, evaluated through the front end; the least worst error."""
    from bandcalc.model.points import design_points

    mesh = np.meshgrid(*([grid] * len(params)), indexing="ij")
    values = {f"resistors.{p}": m.ravel() for p, m in zip(params, mesh, strict=True)}
    w = design_points(design, values)
    worst = np.maximum(np.abs(w.upper - upper), np.abs(w.lower - lower))
    return float(np.nanmin(worst))


@pytest.mark.parametrize(("name", "upper", "lower"), [
    ("solar_battery_disconnect", 12.8, 11.6),   # divider: the mapping to the stage is exact
    ("greenhouse_fan_thermostat", 32.0, 28.0),  # thermistor: source resistance moves with T
])
def test_watched_targets_best_equals_exhaustive_search(name, upper, lower, demo):
    from bandcalc.model.standard_values import series_values

    design = demo(name)
    r = fit(design, upper, lower, series="E12", count=3, add_leg=False)
    best = r.candidates[0]
    a = analyze(best.design)
    assert (float(a.points.upper), float(a.points.lower)) == pytest.approx((best.upper, best.lower), abs=1e-9)
    params = [p for p in r.fitted if not p.startswith("reference.")]
    grid = series_values("E12", 1e3, 10e6)
    assert best.worst_error == pytest.approx(_exhaustive_watched(design, params, grid, upper, lower),
                                             rel=1e-9, abs=1e-12)
    assert "map to" in r.notes[0]
