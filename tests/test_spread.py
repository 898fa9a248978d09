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
from bandcalc.model.tolerances import Limits, PerResistor, Tolerances
from bandcalc.spread import propagation as spread_module
from bandcalc.spread.factors import QUANTITIES, Factor, factors
from bandcalc.spread.propagation import (
    SpreadError,
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
    # Non-inverting stage: input and feedback resistors with their own tempcos, a fixed reference
    # with drift, the offset with drift. Written out here from the documented model.
    tol = Tolerances(resistors=PerResistor(1.0), reference=0.5, offset=0.004, temperature=(-40.0, 85.0),
                     resistor_tempco=PerResistor(200.0, (("feedback", -50.0),)),
                     reference_drift=30.0, offset_drift=1e-5)
    design = with_tolerances(demo(SUMP), tol)
    p = parameters(design)

    def at(r_in, r_f, ref, off, ref_drift, off_drift, t):
        dt = t - 25.0
        return {"resistors.input": r_in * (1 + 200e-6 * dt), "resistors.feedback": r_f * (1 - 50e-6 * dt),
                "reference.volts": ref * (1 + ref_drift * 1e-6 * dt),
                "comparator.offset": off + off_drift * dt}

    ends = [(p["resistors.input"] * 0.99, p["resistors.input"] * 1.01),
            (p["resistors.feedback"] * 0.99, p["resistors.feedback"] * 1.01),
            (2.5 * 0.995, 2.5 * 1.005), (p["comparator.offset"] - 0.004, p["comparator.offset"] + 0.004),
            (-30.0, 30.0), (-1e-5, 1e-5)]
    grid = np.linspace(-40.0, 85.0, 126)
    seen = {q: [] for q in QUANTITIES}
    for corner in itertools.product(*ends):
        pts = points_of_array(design, at(*corner, grid))
        for q in QUANTITIES:
            seen[q].append(pts[q])
    wc = worst_case(design)
    for q in QUANTITIES:
        values = np.concatenate(seen[q])
        assert getattr(wc, q).min == pytest.approx(values.min(), rel=1e-12)
        assert getattr(wc, q).max == pytest.approx(values.max(), rel=1e-12)


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


@pytest.mark.parametrize("samples", [5, 10_000_001, 2.5, True])
def test_bad_sample_counts_are_refused(samples, demo):
    with pytest.raises(SpreadError, match="samples: must be a whole number from 10 to 10,000,000"):
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
    assert {"temperature", "reference.drift", "comparator.offset_drift"} <= set(names)
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
    assert "--samples: must be a whole number from 10 to 10,000,000" in capsys.readouterr().err
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
