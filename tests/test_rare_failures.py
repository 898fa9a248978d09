"""Failure probabilities down to parts per billion, checked against closed forms and one-dimensional
integrals (scipy.stats and scipy.integrate as reference libraries), each within the stated 95 %
interval."""

import dataclasses
import json
import math

import numpy as np
import pytest
from scipy import integrate, stats

from bandcalc.cli.commands import main
from bandcalc.model.design import Design, DividerReference, PushPull, Resistors, Supply
from bandcalc.model.design_file import save_design
from bandcalc.model.tolerances import Limits, PerResistor, Tolerances
from bandcalc.spread.propagation import monte_carlo
from bandcalc.spread.rare_failures import PLAIN_ENOUGH

K = 10e3 / 39e3  # input over feedback
SUPPLY = 3.0  # percent, the 3-sigma tolerance of the rail
SIGMA = 5.0 * SUPPLY / 100 / 3


def rail_design(tolerances):
    """A stage whose points are proportional to the rail: reference a 10k/10k divider across 0 V and
    the rail (V_ref = V_rail / 2), ideal rail-to-rail output, no offset, no bias current.  First
    principles (the non-inverting form of Sedra & Smith's bistable, from memory):
    V_up = V_rail / 2 (1 + R1/R2), V_lo = V_rail / 2 (1 - R1/R2)."""
    return Design(stage="non-inverting", supply=Supply(5.0), reference=DividerReference(10e3, 10e3),
                  resistors=Resistors(input=10e3, feedback=39e3), output=PushPull(), tolerances=tolerances)


def failure(tolerances, samples=20_000, seed=1):
    f = monte_carlo(rail_design(tolerances), samples=samples, seed=seed).build_yield.failure
    assert f is not None
    return f


@pytest.mark.parametrize("p", [1e-3, 1e-6, 1e-9])
def test_both_points_proportional_to_the_rail_closed_form(p):
    # The build fails when the rail (normal, 3 sigma = 3 %) is high enough to lift the upper point over
    # its window, or low enough to drop the lower point under its own: p/2 each side, so
    # P = Q((a - 5 V) / sigma) + Q((5 V - b) / sigma) with Q the normal tail (scipy.stats.norm.sf).
    z = stats.norm.isf(p / 2)
    upper_limit = (5.0 + z * SIGMA) * (1 + K) / 2
    lower_limit = (5.0 - z * SIGMA) * (1 - K) / 2
    tol = Tolerances(resistors=PerResistor(0.0), supply=SUPPLY,
                     limits=Limits(upper=(None, upper_limit), lower=(lower_limit, None)))
    f = failure(tol)
    exact = stats.norm.sf((upper_limit * 2 / (1 + K) - 5.0) / SIGMA) + \
        stats.norm.cdf((lower_limit * 2 / (1 - K) - 5.0) / SIGMA)
    assert exact == pytest.approx(p, rel=1e-9)
    assert "importance sampling" in f.method
    assert f.low <= exact <= f.high
    assert f.high - f.low <= 0.2 * f.probability  # within +/-10 % (95 %)


@pytest.mark.parametrize("p", [1e-3, 1e-6, 1e-9])
def test_rail_and_a_resistor_one_dimensional_integral(p):
    # The rail and the feedback resistor (1 %, normal) both move the upper point:
    # V_up = V_rail / 2 (1 + R1 / R2).  Given R2, the build fails where the rail passes
    # 2 a / (1 + R1 / R2): P = integral over R2 of Q((2 a / (1 + R1/R2) - 5 V) / sigma) phi(R2) dR2
    # (scipy.integrate.quad).
    sigma_r = 39e3 * 0.01 / 3

    def probability(limit):
        def given(r2):
            tail = stats.norm.sf((2 * limit / (1 + 10e3 / r2) - 5.0) / SIGMA)
            return tail * stats.norm.pdf(r2, 39e3, sigma_r)
        return integrate.quad(given, 39e3 - 12 * sigma_r, 39e3 + 12 * sigma_r, epsabs=0, epsrel=1e-10,
                              limit=200)[0]

    from scipy.optimize import brentq

    limit = brentq(lambda a: math.log(probability(a)) - math.log(p), 3.1, 3.8, xtol=1e-12)
    tol = Tolerances(resistors=PerResistor(0.0, (("feedback", 1.0),)), supply=SUPPLY,
                     limits=Limits(upper=(None, limit)))
    f = failure(tol)
    exact = probability(limit)
    assert exact == pytest.approx(p, rel=1e-6)
    assert f.low <= exact <= f.high
    assert f.high - f.low <= 0.2 * f.probability


@pytest.mark.parametrize("p", [1e-3, 1e-6, 1e-9])
def test_a_resistor_coefficient_over_the_range_one_dimensional_integral(p):
    # The input resistor's own coefficient alpha (normal, 3 sigma = 300 ppm/K) over -40 to 85 C: the
    # upper point is greatest at 85 C where alpha > 0 and at -40 C where alpha < 0, so two ways to fail.
    # Given alpha the build fails where the rail passes 2 a / (1 + K (1 + max(60 alpha, -65 alpha)));
    # P = integral over alpha of that normal tail times phi(alpha).
    sigma_a = 100e-6

    def probability(limit):
        def given(alpha):
            reach = 1 + K * (1 + max(60 * alpha, -65 * alpha))
            return stats.norm.sf((2 * limit / reach - 5.0) / SIGMA) * stats.norm.pdf(alpha, 0.0, sigma_a)
        return sum(integrate.quad(given, a, b, epsabs=0, epsrel=1e-10, limit=200)[0]
                   for a, b in ((-12 * sigma_a, 0.0), (0.0, 12 * sigma_a)))

    from scipy.optimize import brentq

    limit = brentq(lambda a: math.log(probability(a)) - math.log(p), 3.1, 3.8, xtol=1e-12)
    tol = Tolerances(resistors=PerResistor(0.0), supply=SUPPLY, temperature=(-40.0, 85.0),
                     resistor_tempco=PerResistor(None, (("input", 300.0),)),
                     limits=Limits(upper=(None, limit)))
    f = failure(tol)
    exact = probability(limit)
    assert f.low <= exact <= f.high
    assert f.high - f.low <= 0.2 * f.probability
    # Both ways were found: at the lowest and at the highest temperature.
    assert {pt.temperature for pt in f.points} >= {-40.0, 85.0}


@pytest.mark.parametrize("distribution, p", [("screened", 1e-6), ("uniform", 1e-3), ("uniform", 1e-6)])
def test_a_bounded_rail_closed_form(distribution, p):
    # Screened: the rail is normal cut at its tolerance (scipy.stats.truncnorm(-3, 3)); uniform: the
    # tail is a straight line, P = (V_max - v) / (V_max - V_min).
    tol = Tolerances(resistors=PerResistor(0.0), supply=SUPPLY, distribution=distribution)
    if distribution == "screened":
        threshold = 5.0 + stats.truncnorm(-3, 3).isf(p) * SIGMA
    else:
        threshold = 5.0 * (1 + SUPPLY / 100) - p * 2 * 5.0 * SUPPLY / 100
    tol = dataclasses.replace(tol, limits=Limits(upper=(None, threshold * (1 + K) / 2)))
    f = failure(tol)
    assert "importance sampling" in f.method
    assert f.low <= p * (1 + 1e-9) and p * (1 - 1e-9) <= f.high
    assert f.high - f.low <= 0.2 * f.probability


def test_no_build_can_fail_when_every_part_is_bounded_and_the_worst_case_keeps_the_windows():
    tol = Tolerances(resistors=PerResistor(0.0), supply=SUPPLY, distribution="screened",
                     limits=Limits(upper=(None, 5.0 * 1.0301 * (1 + K) / 2)))
    f = failure(tol)
    assert (f.probability, f.low, f.high) == (0.0, 0.0, 0.0)
    assert f.method.startswith("none can fail")


def test_frequent_failures_are_the_builds_own_count():
    # One build in ten fails: the Monte Carlo count is the answer, with its Wilson interval.
    tol = Tolerances(resistors=PerResistor(0.0), supply=SUPPLY,
                     limits=Limits(upper=(None, (5.0 + stats.norm.isf(0.1) * SIGMA) * (1 + K) / 2)))
    y = monte_carlo(rail_design(tol), samples=20_000, seed=1).build_yield
    f = y.failure
    assert f.method.startswith("the Monte Carlo builds' own count")
    assert f.probability == pytest.approx(1 - y.fraction)
    assert (f.low, f.high) == pytest.approx((1 - y.high, 1 - y.low))
    assert f.low <= 0.1 <= f.high


def test_the_command_gives_the_failure_probability_as_strict_json(tmp_path, capsys):
    z = stats.norm.isf(1e-6)
    tol = Tolerances(resistors=PerResistor(0.0), supply=SUPPLY, temperature=(-40.0, 85.0),
                     limits=Limits(upper=(None, (5.0 + z * SIGMA) * (1 + K) / 2)))
    path = tmp_path / "rail.json"
    save_design(dataclasses.replace(rail_design(tol), name="Rail"), path)
    assert main(["spread", str(path), "--samples", "5000", "--seed", "3", "--json"]) == 0

    def refuse(constant):
        raise AssertionError(f"not strict JSON: {constant}")

    out = json.loads(capsys.readouterr().out, parse_constant=refuse)
    failure_ = out["monte_carlo"]["yield"]["failure"]
    assert set(failure_) >= {"probability", "low", "high", "method"}
    assert failure_["low"] <= 1e-6 <= failure_["high"]
    assert out["monte_carlo"]["yield"]["fraction"] == 1.0
    assert out["temperature"] == {"low": -40.0, "high": 85.0}
    # Nothing moves with temperature here: no temperature of failure to report.
    assert all(p["temperatures"] is None for p in out["monte_carlo"]["yield"]["where"])
    assert np.isfinite(out["worst_case"]["upper"]["max"])


def test_builds_without_a_switching_point_count_in_the_failure_probability(demo):
    # The greenhouse thermistor divider gives the stage 0 V to 5 V and no more (first principles);
    # a bias current of up to +/-50 uA through it asks for more in part of its range, where the
    # stage has no switching point, and no window margin leads there.  Only the bias current varies,
    # uniformly, and the window (any positive hysteresis) holds wherever the points exist, so the
    # failure probability is the share of the bias current's interval without both points: a
    # one-dimensional integral, here the midpoint rule on 200,001 points.  Such builds fail: no
    # bounded corner "cannot fail", and no search "below 1e-299".
    from bandcalc.model.points import design_points

    d = demo("greenhouse_fan_thermostat")
    d = dataclasses.replace(d, front_end=dataclasses.replace(d.front_end, r25_tolerance=None,
                                                             beta_tolerance=None))
    tol = Tolerances(resistors=PerResistor(0.0), bias_current=5e-5, distribution="uniform",
                     limits=Limits(hysteresis=(0.0, None)))
    d = dataclasses.replace(d, tolerances=tol)
    n = 200_001
    bias = d.comparator.bias_current + 5e-5 * (2 * (np.arange(n) + 0.5) / n - 1)
    with np.errstate(all="ignore"):
        p = design_points(d, {"comparator.bias_current": bias})
    truth = float(np.mean(~(np.isfinite(p.upper) & np.isfinite(p.lower))))
    assert 0.1 < truth < 0.3
    y = monte_carlo(d, samples=1_000, seed=1).build_yield
    f = y.failure
    assert 0 < y.samples - y.passed < PLAIN_ENOUGH  # too few for the count alone: the search runs
    assert f.method.startswith("the Monte Carlo builds' own count")
    assert f.probability == pytest.approx(1 - y.fraction)
    assert f.low <= truth <= f.high
