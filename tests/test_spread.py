"""Spread of the switching points: worst case against brute force, Monte Carlo against first-order
propagation and normal-distribution tables, sensitivity, yield, reproducibility and the command."""

import dataclasses
import itertools
import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from bandcalc.cli.commands import main
from bandcalc.model.network import switching_points
from bandcalc.model.parts import parameters
from bandcalc.model.points import design_points
from bandcalc.model.tolerances import Limits, PerResistor, ResistorNetwork, Tolerances
from bandcalc.outputs.strict_json import dumps
from bandcalc.spread import propagation as spread_module
from bandcalc.spread.factors import QUANTITIES, Factor, factors
from bandcalc.spread.propagation import (
    SpreadError,
    failure_places,
    monte_carlo,
    sensitivity,
    spread,
    spread_to_dict,
    summarize,
    wilson_interval,
    worst_case,
)

SUMP = "sump_level_switch"
SOLAR = "solar_battery_disconnect"

PLAIN = Tolerances(resistors=PerResistor(1.0), reference=0.5, supply=5.0, offset=0.004, bias_current=1e-7)
HOT = dataclasses.replace(PLAIN, temperature=(-20.0, 70.0),
                          resistor_tempco=PerResistor(100.0, (("feedback", 25.0),)),
                          reference_drift=50.0, offset_drift=5e-6)


def with_tolerances(design, tolerances):
    """The design with the tolerances section given (None: without one)."""
    return dataclasses.replace(design, tolerances=tolerances)


def points_of(design, values):
    # A front end puts the points in the watched quantity (bandcalc.model.points, tested on its own).
    p = design_points(design, values) if design.front_end is not None else switching_points(design, values)
    return {"upper": float(p.upper), "lower": float(p.lower), "hysteresis": float(p.upper - p.lower)}


def plain_bounds(design, tol):
    """Each varied parameter's (low, high), written out from the tolerance definitions (no temperature)."""
    p, bounds = parameters(design), {}
    for key, value in p.items():
        name = key.removeprefix("resistors.")
        if key.startswith("resistors.") or key in ("reference.top", "reference.bottom", "output.pullup",
                                                   "front_end.top", "front_end.bottom", "front_end.fixed"):
            t = tol.resistors.get(name) / 100
            bounds[key] = (value * (1 - t), value * (1 + t))
        elif key in ("supply.positive", "supply.negative", "output.pullup_volts", "output.low_volts") \
                and value != 0:
            bounds[key] = (value - abs(value) * tol.supply / 100, value + abs(value) * tol.supply / 100)
    if "reference.volts" in p:
        v = p["reference.volts"]
        bounds["reference.volts"] = (v * (1 - tol.reference / 100), v * (1 + tol.reference / 100))
    for key, t in (("comparator.offset", tol.offset), ("comparator.bias_current", tol.bias_current)):
        bounds[key] = (p[key] - t, p[key] + t)
    fe = design.front_end
    for key, attr in (("front_end.r25", "r25_tolerance"), ("front_end.beta", "beta_tolerance")):
        if getattr(fe, attr, None):
            t = getattr(fe, attr) / 100
            bounds[key] = (p[key] * (1 - t), p[key] * (1 + t))
    return bounds


def brute_force(design, bounds):
    """Min and max of each quantity over every corner, one scalar model call per corner."""
    seen = {q: [] for q in QUANTITIES}
    for corner in itertools.product(*bounds.values()):
        for q, v in points_of(design, dict(zip(bounds, corner, strict=True))).items():
            seen[q].append(v)
    return {q: (min(v), max(v)) for q, v in seen.items()}


# --- worst case ---------------------------------------------------------------------------------

def test_worst_case_equals_brute_force_over_all_corners(each_demo):
    design = with_tolerances(each_demo, PLAIN)
    expected = brute_force(design, plain_bounds(design, PLAIN))
    wc = worst_case(design)
    for q in QUANTITIES:
        got = getattr(wc, q)
        assert (got.min, got.max) == pytest.approx(expected[q], rel=1e-12, abs=1e-12)
        # The corner reported gives the extreme it claims.
        assert points_of(design, got.min_corner)[q] == pytest.approx(got.min, rel=1e-12, abs=1e-12)
        assert points_of(design, got.max_corner)[q] == pytest.approx(got.max, rel=1e-12, abs=1e-12)
    assert wc.method == "every corner of the box"


def test_worst_case_by_series_defaults_without_a_tolerances_section(demo):
    design = with_tolerances(demo(SUMP), None)
    # 10 kOhm and 39 kOhm are E24 values: 5 % each (the usual E24 tolerance).
    expected = brute_force(design, {"resistors.input": (9.5e3, 10.5e3),
                                    "resistors.feedback": (37.05e3, 40.95e3)})
    wc = worst_case(design)
    assert (wc.upper.min, wc.upper.max) == pytest.approx(expected["upper"], rel=1e-12)
    assert (wc.hysteresis.min, wc.hysteresis.max) == pytest.approx(expected["hysteresis"], rel=1e-12)


def test_worst_case_over_temperature_equals_brute_force_and_a_fine_temperature_grid(demo):
    # Non-inverting stage: input and feedback resistors each with its own coefficient within its bound,
    # a fixed reference drifting within its box, the offset with drift.  Written out here from the
    # documented model: R25 (1 + alpha (T - 25 C)); the reference anywhere in
    # V25 (1 +/- drift (high - low)) at every temperature; offset25 + drift (T - 25 C).
    tol = Tolerances(resistors=PerResistor(1.0), reference=0.5, offset=0.004, temperature=(-40.0, 85.0),
                     resistor_tempco=PerResistor(200.0, (("feedback", 50.0),)),
                     reference_drift=30.0, offset_drift=1e-5)
    design = with_tolerances(demo(SUMP), tol)
    p = parameters(design)

    def at(r_in, r_f, ref, off, a_in, a_f, ref_drift, off_drift, edge, t):
        dt = t - 25.0
        return {"resistors.input": r_in * (1 + a_in * 1e-6 * dt),
                "resistors.feedback": r_f * (1 + a_f * 1e-6 * dt),
                "reference.volts": ref * (1 + ref_drift * 1e-6 * 125.0 * edge) + 0 * dt,
                "comparator.offset": off + off_drift * dt}

    ends = [(p["resistors.input"] * 0.99, p["resistors.input"] * 1.01),
            (p["resistors.feedback"] * 0.99, p["resistors.feedback"] * 1.01),
            (2.5 * 0.995, 2.5 * 1.005), (p["comparator.offset"] - 0.004, p["comparator.offset"] + 0.004),
            (-200.0, 200.0), (-50.0, 50.0), (30.0,), (-1e-5, 1e-5), (-1.0, 1.0)]
    grid = np.linspace(-40.0, 85.0, 2001)
    seen = {q: [] for q in QUANTITIES}
    for corner in itertools.product(*ends):
        pts = points_of_array(design, at(*corner, grid))
        for q in QUANTITIES:
            seen[q].append(pts[q])
    wc = worst_case(design)
    for q in QUANTITIES:
        values = np.concatenate(seen[q])
        assert getattr(wc, q).min == pytest.approx(values.min(), rel=1e-10)
        assert getattr(wc, q).max == pytest.approx(values.max(), rel=1e-10)
    # The upper point is greatest at the top of the reference's box, at one end of the range.
    corner = wc.upper.max_corner
    assert corner["reference.drift"] == 30.0 and corner["temperature"] in (-40.0, 85.0)


def points_of_array(design, values):
    p = switching_points(design, values)
    return {"upper": p.upper, "lower": p.lower, "hysteresis": p.upper - p.lower}


def test_corner_search_from_derivative_signs_equals_every_corner(each_demo):
    design = with_tolerances(each_demo, HOT)
    every = worst_case(design)
    searched = worst_case(design, exhaustive_limit=0)
    assert searched.method.startswith("corner from the signs")
    for q in QUANTITIES:
        a, b = getattr(every, q), getattr(searched, q)
        assert (b.min, b.max) == pytest.approx((a.min, a.max), rel=1e-12, abs=1e-15)
    assert searched.evaluated < every.evaluated


# --- Monte Carlo --------------------------------------------------------------------------------

def test_normal_sampler_covers_three_sigma_99_73_percent():
    # Normal-distribution table: P(|Z| <= 3) = 0.9973 (e.g. oscilloscope measurement guides);
    # reference library: scipy.stats.norm.
    factor = Factor("resistors.feedback", "Ohm", 100e3, 99e3, 101e3, "normal", "1 %")
    x = factor.draw(np.random.default_rng(7), 4_000_000)
    inside = np.mean((x >= 99e3) & (x <= 101e3))  # the tolerance is 3 sigma
    expected = stats.norm.cdf(3) - stats.norm.cdf(-3)
    assert expected == pytest.approx(0.9973, abs=5e-5)
    assert inside == pytest.approx(expected, abs=5 * math.sqrt(expected * (1 - expected) / x.size))
    assert np.std(x) == pytest.approx(1e3 / 3, rel=2e-3)
    assert np.mean(x) == pytest.approx(100e3, abs=5 * 1e3 / 3 / math.sqrt(x.size))


def test_uniform_sampler_stays_in_its_bounds():
    factor = Factor("supply.positive", "V", 5.0, 4.75, 5.25, "uniform", "5 %")
    x = factor.draw(np.random.default_rng(7), 1_000_000)
    assert x.min() >= 4.75 and x.max() <= 5.25
    assert np.var(x) == pytest.approx(0.5**2 / 12, rel=5e-3)  # variance of a uniform over a width w: w^2/12


def first_order(design, bounds, sigma_per_bound):
    """First-order propagation written out: sum over parameters of (dq/dx * sigma_x)^2."""
    nominal = points_of(design, {})
    var = {q: 0.0 for q in QUANTITIES}
    for key, (lo, hi) in bounds.items():
        mid, h = 0.5 * (lo + hi), 1e-4 * (hi - lo)
        up, down = points_of(design, {key: mid + h}), points_of(design, {key: mid - h})
        sigma = 0.5 * (hi - lo) * sigma_per_bound
        for q in QUANTITIES:
            var[q] += ((up[q] - down[q]) / (2 * h) * sigma) ** 2
    return nominal, {q: math.sqrt(v) for q, v in var.items()}


@pytest.mark.parametrize("distribution, sigma_per_bound", [("normal", 1 / 3), ("uniform", 1 / math.sqrt(3))])
@pytest.mark.parametrize("stem", [SOLAR, "rain_tank_overflow", "motor_current_direction"])
def test_monte_carlo_agrees_with_first_order_propagation_for_small_tolerances(stem, distribution,
                                                                             sigma_per_bound, demo):
    tol = Tolerances(resistors=PerResistor(0.1), reference=0.1, supply=0.1, offset=1e-4, bias_current=1e-9,
                     distribution=distribution)
    design = with_tolerances(demo(stem), tol)
    nominal, std = first_order(design, plain_bounds(design, tol), sigma_per_bound)
    n = 200_000
    mc = monte_carlo(design, samples=n, seed=3)
    for q in QUANTITIES:
        got = getattr(mc, q)
        # Standard error of a mean is std/sqrt(n); of a standard deviation about std/sqrt(2n).
        assert got.mean == pytest.approx(nominal[q], abs=5 * std[q] / math.sqrt(n))
        assert got.std == pytest.approx(std[q], rel=5 / math.sqrt(2 * n))
    se = sensitivity(design)
    for q in QUANTITIES:
        assert se.std[q] == pytest.approx(std[q], rel=1e-5)


def test_one_linear_factor_fills_its_worst_case_range_as_the_normal_table_says(demo):
    # Only the reference varies, and the upper point is linear in it: the fraction of builds inside
    # the worst-case range is P(|Z| <= 3), and inside mean +/- 2 sigma it is P(|Z| <= 2)
    # (normal-distribution tables; scipy.stats.norm).
    design = with_tolerances(demo(SUMP), Tolerances(resistors=PerResistor(0.0), reference=1.0))
    wc = worst_case(design)
    half = 0.5 * (wc.upper.max - wc.upper.min)
    for window, k in (((wc.upper.min, wc.upper.max), 3), ((wc.nominal["upper"] - half * 2 / 3,
                                                           wc.nominal["upper"] + half * 2 / 3), 2)):
        tol = dataclasses.replace(design.tolerances, limits=Limits(upper=window))
        y = monte_carlo(design, tol, samples=1_000_000, seed=11).build_yield
        expected = stats.norm.cdf(k) - stats.norm.cdf(-k)
        assert y.fraction == pytest.approx(expected, abs=5 * math.sqrt(expected * (1 - expected) / y.samples))
        assert y.low < y.fraction < y.high


def test_same_seed_same_numbers_whatever_the_block_size(monkeypatch, demo):
    design = demo(SOLAR)
    first = spread_to_dict(spread(design, samples=20_000, seed=5))
    assert spread_to_dict(spread(design, samples=20_000, seed=5)) == first
    monkeypatch.setattr(spread_module, "CHUNK", 1_000)
    assert spread_to_dict(spread(design, samples=20_000, seed=5)) == first
    other = spread_to_dict(spread(design, samples=20_000, seed=6))
    assert other["monte_carlo"]["upper"]["mean"] != first["monte_carlo"]["upper"]["mean"]


def test_progress_is_reported_per_block(monkeypatch, demo):
    monkeypatch.setattr(spread_module, "CHUNK", 4_000)
    calls = []
    monte_carlo(demo(SUMP), samples=10_000, progress=lambda done, total: calls.append((done, total)))
    assert calls == [(4_000, 10_000), (8_000, 10_000), (10_000, 10_000)]


def test_summary_matches_numpy_percentiles_and_histogram():
    values = np.random.default_rng(2).normal(3.0, 0.01, 50_001)
    s = summarize(values, 40)
    expected = np.percentile(values, spread_module.PERCENTILES)
    assert list(s.percentiles.values()) == pytest.approx(expected, rel=1e-14)
    counts, edges = np.histogram(values, bins=40)
    assert np.array_equal(s.counts, counts) and np.allclose(s.edges, edges)
    assert s.std == pytest.approx(np.std(values, ddof=1)) and s.mean == pytest.approx(np.mean(values))


def test_yield_counts_builds_inside_every_window(demo):
    design = demo(SUMP)
    mc = monte_carlo(design, samples=50_000, seed=1)
    y = mc.build_yield
    assert y.windows == {"upper": (3.0, 3.25), "lower": (1.8, 1.95), "hysteresis": (1.0, math.inf)}
    assert 0 < y.passed < y.samples == 50_000
    assert y.samples - y.passed <= sum(y.outside.values())
    assert y.outside["lower"] > 0 and y.outside["upper"] == 0


@pytest.mark.parametrize("passed, n", [(81, 263), (0, 100_000), (99_861, 100_000), (50, 50), (1, 10)])
def test_wilson_interval_against_scipy(passed, n):
    # Reference library: scipy.stats.binomtest(...).proportion_ci(method="wilson").
    ci = stats.binomtest(passed, n).proportion_ci(confidence_level=0.95, method="wilson")
    assert wilson_interval(passed, n) == pytest.approx((ci.low, ci.high), rel=1e-9, abs=1e-15)


def test_wilson_interval_published_example():
    # Newcombe, "Two-sided confidence intervals for the single proportion", Statistics in
    # Medicine 17 (1998) 857-872: 81 of 263 gives 0.2553 to 0.3662 by the score method (from memory).
    low, high = wilson_interval(81, 263)
    assert (round(low, 4), round(high, 4)) == (0.2553, 0.3662)


@pytest.mark.parametrize("samples", [5, 2_000_001, 2.5, True])
def test_bad_sample_counts_are_refused(samples, demo):
    with pytest.raises(SpreadError, match="samples: must be a whole number from 10 to 2,000,000"):
        monte_carlo(demo(SUMP), samples=samples)


def test_bad_seed_is_refused(demo):
    with pytest.raises(SpreadError, match="seed: must be a whole number, 0 or more"):
        monte_carlo(demo(SUMP), seed=-1)


# --- sensitivity --------------------------------------------------------------------------------

def test_sensitivity_shares_are_ranked_and_sum_to_one(demo):
    se = sensitivity(demo(SOLAR))
    for q in QUANTITIES:
        shares = [s.share for s in getattr(se, q)]
        assert sum(shares) == pytest.approx(1.0)
        assert shares == sorted(shares, reverse=True)
    # The battery divider (input, to_ground) is 0.1 %; the 0.5 % reference leads the upper point.
    assert se.upper[0].factor == "reference.volts"


def test_sensitivity_of_the_basic_stage_by_hand(demo):
    # Non-inverting stage with an ideal output swinging 0 V to 5 V, reference V: the upper point is
    # V (1 + Rin/Rf) (the output is low, at 0 V). d/dV = 1 + Rin/Rf, d/dRin = V/Rf, d/dRf = -V Rin/Rf^2.
    sump = demo(SUMP)
    design = dataclasses.replace(with_tolerances(sump, Tolerances(resistors=PerResistor(1.0), reference=0.5)),
                                 output=dataclasses.replace(sump.output, high_drop=0.0,
                                                            low_drop=0.0, resistance=0.0),
                                 comparator=dataclasses.replace(sump.comparator, offset=0.0,
                                                                bias_current=0.0),
                                 source=dataclasses.replace(sump.source, resistance=0.0))
    v, r_in, r_f = 2.5, 10e3, 39e3
    contributions = {"reference.volts": (1 + r_in / r_f) * v * 0.005 / 3,
                     "resistors.input": v / r_f * r_in * 0.01 / 3,
                     "resistors.feedback": v * r_in / r_f**2 * r_f * 0.01 / 3}
    total = sum(c**2 for c in contributions.values())
    se = sensitivity(design)
    assert se.mean["upper"] == pytest.approx(v * (1 + r_in / r_f), rel=1e-12)
    assert se.std["upper"] == pytest.approx(math.sqrt(total), rel=1e-7)
    for share in se.upper:
        assert share.share == pytest.approx(contributions[share.factor] ** 2 / total, rel=1e-6)


# --- notes and the whole ------------------------------------------------------------------------

def test_notes_on_defaults_and_unused_entries(demo):
    bare = with_tolerances(demo(SUMP), None)
    assert any("No tolerances section" in n for n in spread(bare, samples=1_000).notes)
    tol = Tolerances(resistors=PerResistor(1.0, (("to_ground", 0.1),)), reference=0.5,
                     resistor_tempco=PerResistor(100.0))
    notes = spread(with_tolerances(demo("motor_current_direction"), tol), samples=1_000).notes
    assert any("no to_ground resistor" in n for n in notes)
    assert any("tolerances.reference is for a fixed reference" in n for n in notes)
    assert any("no temperature range" in n for n in notes)


def test_a_corner_beyond_the_signal_range_is_reported(demo):
    design = with_tolerances(demo(SUMP), Tolerances(resistors=PerResistor(5.0)))
    design = dataclasses.replace(design, source=dataclasses.replace(design.source, high=3.15))
    notes = spread(design, samples=1_000).notes
    assert any("never switches on a rising signal" in n for n in notes)


def test_factors_list_what_varies(demo):
    names = [f.name for f in factors(demo(SOLAR))]
    assert names[:5] == ["resistors.input", "resistors.feedback", "output.pullup", "front_end.top",
                         "front_end.bottom"]
    # Each resistor's own coefficient, the drifts; the temperature is the range, not a factor.
    assert {"resistors.input.tempco", "front_end.top.tempco", "reference.drift",
            "comparator.offset_drift"} <= set(names)
    assert "temperature" not in names
    # The pull-up follows the 5 V rail; the 0 V rail is not varied.
    assert "supply.negative" not in names


def test_hazard_caution_is_carried_into_the_spread(demo):
    design = demo(SOLAR)
    design = dataclasses.replace(design, front_end=dataclasses.replace(design.front_end, high=60.0))
    assert any("Hazardous voltage" in c for c in spread(design, samples=1_000).cautions)


# --- command line -------------------------------------------------------------------------------

def test_cli_json_keys(capsys, demo_path):
    assert main(["spread", demo_path(SUMP), "--samples", "20000", "--seed", "4", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    for q in QUANTITIES:
        assert out["worst_case"][q]["min"] <= out["nominal"][q] <= out["worst_case"][q]["max"]
        assert out["monte_carlo"][q]["std"] > 0 and "mean" in out["monte_carlo"][q]
    assert out["monte_carlo"]["samples"] == 20000 and out["monte_carlo"]["seed"] == 4
    assert out["monte_carlo"]["yield"]["windows"]["hysteresis"] == [1.0, None]
    assert out["sensitivity"]["upper"][0]["factor"] == "reference.volts"


def test_cli_table(capsys, demo_path):
    assert main(["spread", demo_path(SOLAR), "--samples", "1000"]) == 0
    out = capsys.readouterr().out
    for text in ("worst-case min", "std deviation", "yield:", "worst corners", "largest shares"):
        assert text in out


def test_cli_table_writes_kelvin_without_a_prefix(capsys, demo_path):
    # Beta is in kelvin and reads as data sheets print it, 3950 K (never "3.95 kK"); the offset
    # drift in µV/K keeps its prefix.
    assert main(["spread", demo_path("greenhouse_fan_thermostat"), "--samples", "1000"]) == 0
    out = capsys.readouterr().out
    assert "front_end.beta 3910 K to 3990 K (1 %)" in out and "kK" not in out
    assert main(["spread", demo_path(SOLAR), "--samples", "1000"]) == 0
    assert "comparator.offset_drift -7 µV/K to 7 µV/K" in capsys.readouterr().out


def test_cli_bad_samples_and_bad_file(tmp_path, capsys, demo_path):
    with pytest.raises(SystemExit) as exit_:
        main(["spread", demo_path(SUMP), "--samples", "lots"])
    assert exit_.value.code == 2
    assert "--samples: must be a whole number from 10 to 2,000,000" in capsys.readouterr().err
    bad = tmp_path / "bad.json"
    data = json.loads(Path(demo_path(SUMP)).read_text())
    data["tolerances"]["supply"] = 80
    bad.write_text(json.dumps(data))
    assert main(["spread", str(bad), demo_path(SUMP), "--samples", "1000", "--json"]) == 2
    captured = capsys.readouterr()
    assert f"{bad}: tolerances.supply: must be from 0 to 50 percent" in captured.err
    assert json.loads(captured.out)["name"] == "Sump level switch"


def test_a_design_with_nothing_varied_gives_its_nominal_points_everywhere(demo):
    design = with_tolerances(demo(SUMP), Tolerances(resistors=PerResistor(0.0)))
    s = spread(design, samples=1_000)
    assert s.factors == ()
    for q in QUANTITIES:
        nominal = s.worst_case.nominal[q]
        assert getattr(s.worst_case, q).min == getattr(s.worst_case, q).max == pytest.approx(nominal)
        assert getattr(s.monte_carlo, q).mean == pytest.approx(nominal)
        assert getattr(s.monte_carlo, q).std == pytest.approx(0.0, abs=1e-12)
        assert getattr(s.monte_carlo, q).counts.sum() == 1_000
        assert s.sensitivity.std[q] == 0 and getattr(s.sensitivity, q) == ()


def test_thermistor_front_end_tolerances_are_varied_in_the_watched_quantity(demo):
    # The greenhouse demo watches temperature through an NTC: its R25 and Beta tolerances are
    # factors and the worst case equals brute force over every corner, in degrees C.
    d = demo("greenhouse_fan_thermostat")
    fe = dataclasses.replace(d.front_end, r25_tolerance=1.0, beta_tolerance=1.0)
    design = dataclasses.replace(d, front_end=fe, tolerances=PLAIN)
    names = [f.name for f in factors(design)]
    assert {"front_end.r25", "front_end.beta", "front_end.fixed"} <= set(names)
    expected = brute_force(design, plain_bounds(design, PLAIN))
    wc = worst_case(design)
    for q in QUANTITIES:
        assert (getattr(wc, q).min, getattr(wc, q).max) == pytest.approx(expected[q], rel=1e-9)
    s = spread(design, samples=2_000)
    assert s.unit == "C" and spread_to_dict(s)["unit"] == "C"
    assert 25 < s.monte_carlo.upper.mean < 40


# --- each build over the operating range ---------------------------------------------------------

def basic_design(tolerances):
    """Non-inverting stage on 5 V: 2.5 V fixed reference, 10 kOhm in, 39 kOhm feedback, an ideal
    rail-to-rail output, no source resistance, no bias current."""
    from bandcalc.model.design import Design, FixedReference, PushPull, Resistors, Supply

    return Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
                  resistors=Resistors(input=10e3, feedback=39e3), output=PushPull(), tolerances=tolerances)


def basic_points(v_ref, offset, r_in, r_f, rail):
    """Sedra & Smith, bistable circuits, non-inverting form with a reference (from memory): the output
    swings 0 V to the rail; V_up = (Vref + Vos)(1 + R1/R2), V_lo = V_up - rail R1/R2."""
    k = r_in / r_f
    upper = (v_ref + offset) * (1 + k)
    return upper, upper - rail * k


def grid_extremes(x, span, grid):
    """Each build's least and greatest upper point, lower point and hysteresis over a temperature grid,
    the reference at both edges of its box: written out here, independently of the package."""
    t = grid[None, :] - 25.0
    r_in = x["resistors.input"][:, None] * (1 + 1e-6 * x["resistors.input.tempco"][:, None] * t)
    r_f = x["resistors.feedback"][:, None] * (1 + 1e-6 * x["resistors.feedback.tempco"][:, None] * t)
    offset = x["comparator.offset"][:, None] + x["comparator.offset_drift"][:, None] * t
    out = {q: [] for q in QUANTITIES}
    for edge in (-1.0, 1.0):
        v_ref = x["reference.volts"][:, None] * (1 + 1e-6 * x["reference.drift"][:, None] * span * edge)
        up, lo = basic_points(v_ref, offset, r_in, r_f, 5.0)
        for q, v in (("upper", up), ("lower", lo), ("hysteresis", up - lo)):
            out[q].append(v)
    return {q: np.concatenate(v, axis=1) for q, v in out.items()}


@pytest.mark.parametrize("tempco, drift", [(100.0, 1e-4), (2000.0, 1e-3)], ids=["parts", "extreme"])
def test_each_builds_extremes_over_the_range_equal_a_dense_grid(tempco, drift):
    # Opposite resistor coefficients against an offset drift turn the points inside the range; half the
    # builds take the drift that nearly cancels the upper point's slope at 25 C, so that many turn.  The
    # package's extremes (five temperatures, turning points, the dense fallback for the extreme
    # coefficients) must be the grid's, to the grid's own resolution.
    from bandcalc.spread.factors import VariedModel
    from bandcalc.spread.over_range import over_range

    tol = Tolerances(resistors=PerResistor(1.0), reference=0.5, offset=0.002, temperature=(-40.0, 85.0),
                     resistor_tempco=PerResistor(tempco), reference_drift=50.0, offset_drift=drift)
    model = VariedModel(basic_design(tol), None)
    n, rng = 3000, np.random.default_rng(5)
    x = model.unit_values(rng.uniform(-1, 1, (n, len(model.factors))))
    k = x["resistors.input"] / x["resistors.feedback"]
    slope = (x["reference.volts"] + x["comparator.offset"]) * k * 1e-6 * (
        x["resistors.input.tempco"] - x["resistors.feedback.tempco"]) / (1 + k)
    half = np.arange(n) < n // 2
    x["comparator.offset_drift"] = np.where(half, -slope * (1 + rng.uniform(-2e-3, 2e-3, n)),
                                            x["comparator.offset_drift"])
    grid = np.linspace(-40.0, 85.0, 2001)
    expected = grid_extremes(x, 125.0, grid)
    got = over_range(model, x, n)
    interior = 0
    for q in QUANTITIES:
        values = expected[q]
        least, greatest = values.min(axis=1), values.max(axis=1)
        # Between grid points a curve strays from the grid's values by at most its curvature x step^2 / 8,
        # which the grid's second differences give (first principles).
        bend = np.abs(np.diff(values.reshape(n, 2, grid.size), 2, axis=2)).max(axis=(1, 2)) / 8 + 1e-13
        assert np.all(least - got.lowest[q] <= 1.5 * bend) and np.all(got.highest[q] - greatest <= 1.5 * bend)
        assert np.all(got.lowest[q] <= least + 1e-13) and np.all(got.highest[q] >= greatest - 1e-13)
        at = np.argmax(values, axis=1) % grid.size
        interior += int(np.count_nonzero((at > 0) & (at < grid.size - 1)))
    assert interior >= 0.05 * n  # the test does reach builds that turn inside the range


def test_per_build_yield_over_the_range_against_a_dense_grid_and_not_a_random_temperature():
    # Reference drift 100 ppm/K over -40 to 85 C and windows on both points.  The test draws its own
    # builds (normal, the tolerance at 3 sigma) and checks each over a 401-point temperature grid with
    # the reference at both edges of its box: the package's per-build yield agrees.  Drawing one random
    # temperature per build instead (the reference then at V25 (1 + drift (T - 25 C))) gives a clearly
    # higher figure: a build that passes at one temperature need not pass over the range.
    tol = Tolerances(resistors=PerResistor(1.0), reference=0.5, offset=0.004, supply=1.0,
                     temperature=(-40.0, 85.0), reference_drift=100.0, offset_drift=2e-5,
                     limits=Limits(upper=(3.11, 3.16), lower=(1.84, 1.90)))
    design = basic_design(tol)
    rng = np.random.default_rng(11)
    n = 40_000

    def normal(nominal, half):
        return nominal + half * rng.standard_normal(n) / 3

    r_in, r_f = normal(10e3, 100.0), normal(39e3, 390.0)
    v25, off, rail = normal(2.5, 0.0125), normal(0.0, 0.004), normal(5.0, 0.05)
    drift, off_drift = normal(0.0, 100.0), normal(0.0, 2e-5)
    grid = np.linspace(-40.0, 85.0, 401)[None, :]
    passed = np.ones(n, dtype=bool)
    for edge in (-1.0, 1.0):
        up, lo = basic_points(v25[:, None] * (1 + 1e-6 * drift[:, None] * 125.0 * edge),
                              off[:, None] + off_drift[:, None] * (grid - 25.0), r_in[:, None], r_f[:, None],
                              rail[:, None])
        inside = (up >= 3.11) & (up <= 3.16) & (lo >= 1.84) & (lo <= 1.90)
        passed &= np.all(inside, axis=1)
    t = rng.uniform(-40.0, 85.0, n)
    up, lo = basic_points(v25 * (1 + 1e-6 * drift * (t - 25.0)), off + off_drift * (t - 25.0), r_in, r_f,
                          rail)
    random_t = np.mean((up >= 3.11) & (up <= 3.16) & (lo >= 1.84) & (lo <= 1.90))
    over_range = passed.mean()

    y = monte_carlo(design, samples=100_000, seed=2).build_yield
    sigma = math.sqrt(over_range * (1 - over_range) * (1 / n + 1 / y.samples))
    assert 0.5 < over_range < 0.9
    assert y.fraction == pytest.approx(over_range, abs=4 * sigma)
    assert random_t - over_range > 10 * sigma  # the random-temperature model reads clearly higher


def test_two_untracked_resistors_move_the_hysteresis_as_worked_by_hand(demo):
    # The sump demo's input (10 kOhm behind the 100 Ohm source) and feedback (39 kOhm behind the output's
    # 50 Ohm) resistors, each rated +/-100 ppm/K on its own, over -40 to 85 C, nothing else varied.
    # First principles: the hysteresis is (V_H - V_L) (R_s + R_in) / (R_f + R_o) with V_H - V_L =
    # 4.95 V - 0.05 V.  The ratio moves furthest at -40 C (t = -65 K, against +60 K at 85 C): greatest
    # with R_in rising and R_f falling there (alpha_in = -100, alpha_f = +100 ppm/K), least the other
    # way round: 1251.07 mV to 1283.84 mV, 1251..1283 mV to the whole millivolt.
    def hysteresis(a_in, a_f, t):
        return 4.9 * (100 + 10e3 * (1 + a_in * t)) / (39e3 * (1 + a_f * t) + 50)

    tol = Tolerances(resistors=PerResistor(0.0), temperature=(-40.0, 85.0),
                     resistor_tempco=PerResistor(100.0))
    wc = worst_case(with_tolerances(demo(SUMP), tol))
    assert wc.hysteresis.max == pytest.approx(hysteresis(-100e-6, 100e-6, -65.0), rel=1e-12)
    assert wc.hysteresis.min == pytest.approx(hysteresis(100e-6, -100e-6, -65.0), rel=1e-12)
    assert (math.floor(1e3 * wc.hysteresis.min), math.floor(1e3 * wc.hysteresis.max)) == (1251, 1283)
    assert wc.hysteresis.max_corner["temperature"] == wc.hysteresis.min_corner["temperature"] == -40.0
    # A network whose resistors share one coefficient (tracking 0) barely moves it: 1267.28..1267.42 mV.
    shared = dataclasses.replace(tol, resistor_tempco=PerResistor(), resistor_networks=(
        ResistorNetwork("RN1", ("input", "feedback"), tempco=100.0, tracking=0.0),))
    wc = worst_case(with_tolerances(demo(SUMP), shared))
    same = [hysteresis(a, a, t) for a in (-100e-6, 100e-6) for t in (-65.0, 60.0)]
    assert (wc.hysteresis.min, wc.hysteresis.max) == pytest.approx((min(same), max(same)), rel=1e-12)
    assert (round(1e3 * wc.hysteresis.min, 2), round(1e3 * wc.hysteresis.max, 2)) == (1267.28, 1267.42)


def test_a_network_tracking_bound_spreads_its_members_by_hand(demo):
    # Members' coefficients: the network's common one within +/-50 ppm/K plus each one's own within
    # +/-5 ppm/K (tracking 10 ppm/K: no two differ by more).  The hysteresis extremes sit at the corners
    # of (common, own_in, own_f) at an end of the range (first principles, as above).
    tol = Tolerances(resistors=PerResistor(0.0), temperature=(-40.0, 85.0), resistor_networks=(
        ResistorNetwork("RN1", ("input", "feedback"), tempco=50.0, tracking=10.0),))
    design = with_tolerances(demo(SUMP), tol)
    names = {f.name for f in factors(design)}
    assert names == {"resistor_networks.RN1.tempco", "resistors.input.tempco", "resistors.feedback.tempco"}
    values = [4.9 * (100 + 10e3 * (1 + 1e-6 * (c + d1) * t)) / (39e3 * (1 + 1e-6 * (c + d2) * t) + 50)
              for c in (-50, 50) for d1 in (-5, 5) for d2 in (-5, 5) for t in (-65.0, 60.0)]
    wc = worst_case(design)
    assert (wc.hysteresis.min, wc.hysteresis.max) == pytest.approx((min(values), max(values)), rel=1e-12)


def test_reference_drift_by_the_box_method_over_the_whole_range(demo):
    # Box method (common practice): a data sheet's drift is (V_max - V_min) / (V25 x (T_high - T_low)),
    # so over the range the reference stays within V25 +/- drift x V25 x (high - low), shape unknown.
    # Over -40 to 85 C at 100 ppm/K that is +/-1.25 %, not the 0.65 % of drift x 65 K from 25 C.
    tol = Tolerances(resistors=PerResistor(0.0), temperature=(-40.0, 85.0), reference_drift=100.0)
    design = with_tolerances(basic_design(None), tol)
    wc = worst_case(design)
    k = 10e3 / 39e3
    assert wc.upper.max == pytest.approx(2.5 * 1.0125 * (1 + k), rel=1e-12)
    assert wc.upper.min == pytest.approx(2.5 * 0.9875 * (1 + k), rel=1e-12)
    assert wc.lower.min == pytest.approx(2.5 * 0.9875 * (1 + k) - 5 * k, rel=1e-12)
    # A drift moves the points at every temperature alike, so the hysteresis does not move.
    assert wc.hysteresis.min == pytest.approx(wc.hysteresis.max, rel=1e-12)


@pytest.mark.parametrize("distribution", ["screened", "uniform"])
def test_screened_and_uniform_builds_never_leave_the_worst_case_box(distribution, each_demo):
    tol = dataclasses.replace(HOT, distribution=distribution)
    s = spread(with_tolerances(each_demo, tol), samples=20_000, seed=3)
    for q in QUANTITIES:
        e, mc = getattr(s.worst_case, q), s.monte_carlo
        span = e.max - e.min
        assert mc.lowest[q].min >= e.min - 1e-12 * span
        assert mc.highest[q].max <= e.max + 1e-12 * span


def test_normal_builds_may_leave_the_worst_case_box(demo):
    # A normal distribution keeps 0.27 % of each part beyond its tolerance (standard normal tables):
    # with ten factors some builds fall outside the box.
    s = spread(demo(SUMP), samples=200_000, seed=3)
    outside = [q for q in QUANTITIES if s.monte_carlo.lowest[q].min < getattr(s.worst_case, q).min
               or s.monte_carlo.highest[q].max > getattr(s.worst_case, q).max]
    assert outside


def test_screened_draws_are_a_normal_cut_at_the_tolerance():
    # Reference library: scipy.stats.truncnorm(-3, 3), the standard normal cut at +/-3 sigma.
    from bandcalc.spread.draws import Stream

    z = Stream("screened", np.random.default_rng(4)).take(2_000_000)
    assert np.abs(z).max() <= 1.0
    cut = stats.truncnorm(-3, 3)
    assert np.std(3 * z) == pytest.approx(cut.std(), rel=2e-3)
    for edge in (0.5, 1.0, 2.0, 2.9):
        expected = cut.cdf(edge) - cut.cdf(-edge)
        assert np.mean(np.abs(3 * z) <= edge) == pytest.approx(expected, abs=5 * math.sqrt(expected / z.size))
    # The same stream whatever the blocks.
    stream = Stream("screened", np.random.default_rng(4))
    blocks = np.concatenate([stream.take(n) for n in (7, 1000, 3, 500_000, 1_498_990)])
    assert np.array_equal(blocks, z)


def test_where_builds_fail_names_the_window_and_the_temperature():
    # Only the offset drifts (+/-200 uV/K, normal): the upper point is highest at one end of the range,
    # so builds that pass the upper window's top fail at 85 C or at -40 C, never inside.
    tol = Tolerances(resistors=PerResistor(0.0), offset=0.0, temperature=(-40.0, 85.0), offset_drift=2e-4,
                     limits=Limits(upper=(None, 3.16)))
    s = spread(basic_design(tol), samples=50_000, seed=1)
    (place,) = s.monte_carlo.build_yield.places
    assert (place.quantity, place.side, place.limit) == ("upper", "above", 3.16)
    low, high = place.at_ends
    assert place.builds == low + high == s.monte_carlo.samples - s.monte_carlo.build_yield.passed > 0
    # By hand: V_up = (2.5 + drift (T - 25 C)) (1 + R1/R2) passes 3.16 V for drift > 0.0175 / 60 per K at
    # 85 C or drift < -0.0175 / 65 at -40 C; P(Z > 3 x 0.0175 / (60 x 2e-4 x 1.2564...)) each side.
    k = 1 + 10e3 / 39e3
    excess = 3.16 / k - 2.5
    assert high / place.builds == pytest.approx(stats.norm.sf(3 * excess / (60 * 2e-4))
                                                / (stats.norm.sf(3 * excess / (60 * 2e-4))
                                                   + stats.norm.sf(3 * excess / (65 * 2e-4))), abs=0.05)
    words = " ".join(failure_places(s))
    assert "Upper point above 3.16 V" in words and "at 85 °C" in words and "at -40 °C" in words


def test_json_is_strict_where_a_figure_does_not_exist(demo):
    # A worst case or sensitivity figure that does not exist (NaN) is null in JSON, never NaN.
    s = spread(demo(SUMP), samples=1_000)
    nan = float("nan")
    broken = dataclasses.replace(s, worst_case=dataclasses.replace(
        s.worst_case,
        upper=dataclasses.replace(s.worst_case.upper, max=nan, max_corner={"temperature": nan})))
    text = dumps(spread_to_dict(broken))  # as the command line writes it
    out = json.loads(text)
    assert out["worst_case"]["upper"]["max"] is None
    assert out["not_finite"] == {"worst_case.upper.max": "NaN",
                                 "worst_case.upper.max_corner.temperature": "NaN"}


def test_a_spread_that_refuses_says_why_on_the_command_line(tmp_path, capsys, demo_path):
    # Output limits that leave out the design's own value: the command names the key and goes on.
    data = json.loads(Path(demo_path(SUMP)).read_text())
    data["tolerances"]["output"] = {"high_drop": [0.1, 0.3]}
    bad = tmp_path / "limits.json"
    bad.write_text(json.dumps(data))
    assert main(["spread", str(bad), demo_path(SUMP), "--samples", "1000", "--json"]) == 2
    captured = capsys.readouterr()
    assert (f"{bad}: tolerances.output.high_drop: [0.1, 0.3] V must include the design's output.high_drop, "
            "0.05 V") in captured.err
    assert json.loads(captured.out)["name"] == "Sump level switch"


# --- corners where the stage has no switching point --------------------------------------------

@pytest.mark.parametrize(("bias", "failing"), [(1e-4, 128), (5e-5, 68)])
def test_corners_without_a_switching_point_are_named_with_the_reason(demo, bias, failing):
    # The greenhouse thermistor divider runs from the 5 V rail to ground, so it gives the stage 0 V to
    # 5 V and no more at any temperature (first principles); 100 uA of bias current through its
    # 5 kOhm asks for more at some corners, and no temperature switches the stage there.
    design = with_tolerances(demo("greenhouse_fan_thermostat"), Tolerances(bias_current=bias))
    s = spread(design, samples=1_000)
    assert math.isnan(s.worst_case.upper.min) and math.isnan(s.worst_case.upper.max)
    note = next(n for n in s.notes if "no upper switching point" in n)
    assert f"{failing} of 128 corners" in note and "comparator.bias_current" in note
    assert "beyond the 0 V to 5 V the front end gives" in note
    # The corner the note names has no point in the model either.
    corner = s.worst_case.upper.min_corner
    assert math.isnan(float(design_points(design, corner).upper))
    if failing < 128:
        assert "over the other corners it runs from" in note
