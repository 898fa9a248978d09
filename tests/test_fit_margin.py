"""Fit for what the builds will do: the search over windows, the worst-case margin of every
candidate against a plain corner enumeration, yield with its interval, tolerance grades and cost."""

import dataclasses
import itertools
import json
import re

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import three_resistor_stages
from test_fit import evaluator

from bandcalc.cli.commands import main
from bandcalc.fit import grid_search as search
from bandcalc.fit.grades import DEFAULT_COSTS, GradeError, choices, parse_grades
from bandcalc.fit.margin import CornerModel, margins
from bandcalc.fit.robust import YIELD_BUILDS
from bandcalc.fit.selection import FitError, apply_candidate, fit
from bandcalc.model.design import Design, DividerReference, FixedReference, Resistors, Supply
from bandcalc.model.design_file import design_from_dict, design_to_dict
from bandcalc.model.standard_values import series_values
from bandcalc.model.tolerances import Limits, PerResistor, Tolerances
from bandcalc.model.units import format_value
from bandcalc.outputs.summary import SummaryInputs, design_summary
from bandcalc.spread.propagation import monte_carlo, wilson_interval, worst_case

# --- The search over windows ---------------------------------------------------------------------

@settings(max_examples=25, deadline=None)
@given(three_resistor_stages(), st.floats(0.5, 4.5), st.floats(0.05, 0.8), st.floats(0.0, 0.3),
       st.floats(0.0, 0.3), st.sampled_from([1, 3, 8]))
def test_search_over_windows_equals_enumerating_every_combination(design, centre, width, up_half, low_half,
                                                                   count):
    # With windows the search ranks by how far the nominal points stand outside them (negative:
    # inside, the nominal margin with its sign turned): it must return what evaluating everything does.
    keys = ["resistors.to_positive" if design.inverting else "resistors.input", "resistors.to_ground",
            "resistors.feedback"]
    evaluate = evaluator(design, keys)
    grid = series_values("E6", 1e3, 10e6)
    upper = (centre + width / 2 - up_half, centre + width / 2 + up_half)
    lower = (centre - width / 2 - low_half, centre - width / 2 + low_half)
    found = search.search(evaluate, grid, 3, upper, lower, count)
    every = search.exhaustive(evaluate, grid, 3, upper, lower, count)
    assert np.array_equal(found.values, every.values)
    u, lo, _ = evaluate(every.values)
    outside = np.maximum.reduce([upper[0] - u, u - upper[1], lower[0] - lo, lo - lower[1]])
    assert np.all(np.diff(outside) >= -search.ERROR_STEP)


def test_an_open_side_of_a_window_is_taken():
    # A window open on one side: only its finite edge counts.
    keys = ["resistors.input", "resistors.to_ground", "resistors.feedback"]
    stage = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
                   resistors=Resistors(input=1e4, to_ground=1e4, feedback=1e5))
    evaluate = evaluator(stage, keys)
    grid = series_values("E6", 1e3, 1e6)
    upper, lower = (3.0, np.inf), (-np.inf, 2.0)
    found = search.search(evaluate, grid, 3, upper, lower, 4)
    every = search.exhaustive(evaluate, grid, 3, upper, lower, 4)
    assert np.array_equal(found.values, every.values)


# --- The margin against exhaustive search with an independent worst case --------------------------
#
# The worst case below is written in the test: Millman's theorem for the + pin (V+ = sum(V_k / R_k) /
# sum(1 / R_k)), an ideal comparator and an ideal push-pull output at the rails, and every corner of
# the tolerance box listed with itertools.product.  It shares nothing with the package's network
# solution, its factors or its worst-case code; with no temperature range every build is a corner.

WINDOWS = {"upper": (2.9, 3.1), "lower": (1.9, 2.1)}


def tolerances(windows, resistors=1.0, supply=2.0, **kwargs):
    limits = Limits(**{q: tuple(w) for q, w in windows.items()})
    return Tolerances(resistors=PerResistor(resistors), supply=supply, limits=limits, **kwargs)


def inverting_stage():
    return Design(stage="inverting", supply=Supply(5.0),
                  resistors=Resistors(to_positive=10e3, to_ground=10e3, feedback=100e3),
                  tolerances=tolerances(WINDOWS))


def corner_margin(points, windows, tols, *nominal):
    """The margin of every combination (arrays ``nominal``) over every corner of ``tols`` (fractions):
    ``points(*values)`` gives (upper, lower) for one corner's values."""
    least = {q: np.inf for q in windows}
    greatest = {q: -np.inf for q in windows}
    for signs in itertools.product((-1.0, 1.0), repeat=len(tols)):
        values = [x * (1 + s * t) for x, s, t in zip(nominal, signs, tols, strict=True)]
        for q, v in zip(("upper", "lower"), points(*values), strict=True):
            least[q], greatest[q] = np.minimum(least[q], v), np.maximum(greatest[q], v)
    return np.min([np.minimum(least[q] - lo, hi - greatest[q]) for q, (lo, hi) in windows.items()], axis=0)


def every(grid, n):
    return [a.ravel() for a in np.meshgrid(*([grid] * n), indexing="ij")]


def assert_best_equals(r, margin, columns):
    """The fit's candidates are the combinations of largest independent margin, best first."""
    best = np.sort(margin)[::-1][: len(r.candidates)]
    assert [c.margin for c in r.candidates] == pytest.approx(list(best), abs=1e-12)
    for c in r.candidates:
        row = np.all([np.isclose(col, c.resistors.get(key, c.value(key))) for key, col in columns.items()],
                     axis=0)
        assert margin[row] == pytest.approx([c.margin], abs=1e-12)


def test_inverting_three_resistors_best_margin_equals_exhaustive_corners():
    # Inverting stage, E12 from 1k to 100k, 1 % parts and a 2 % rail: 15,625 combinations, 16 corners.
    r = fit(inverting_stage(), None, None, by="margin", series="E12", min_ohms=1e3, max_ohms=100e3, count=5)
    assert r.stopped is None and r.by == "margin"
    rp, rg, rf = every(series_values("E12", 1e3, 100e3), 3)

    def points(p, g, f, vp):
        total = 1 / p + 1 / g + 1 / f
        # output high (the rail) at the upper point, low (0 V) at the lower
        return (vp / p + vp / f) / total, (vp / p) / total

    margin = corner_margin(points, WINDOWS, (0.01, 0.01, 0.01, 0.02), rp, rg, rf, 5.0)
    assert_best_equals(r, margin, {"to_positive": rp, "to_ground": rg, "feedback": rf})
    assert r.candidates[0].margin > 0
    # The same worst case the spread command gives for the candidate put on the design.
    for c in r.candidates[:2]:
        wc = worst_case(apply_candidate(r.design, c))
        spread_margin = min(wc.upper.min - 2.9, 3.1 - wc.upper.max, wc.lower.min - 1.9, 2.1 - wc.lower.max)
        assert c.margin == pytest.approx(spread_margin, abs=1e-12)


def test_non_inverting_divider_reference_best_margin_equals_exhaustive_corners():
    # Input, feedback and the reference divider free (four values, E12 from 10k to 100k); the rail
    # feeds the divider and the output's high level.
    windows = {"upper": (2.9, 3.1), "lower": (2.3, 2.5)}
    design = Design(stage="non-inverting", supply=Supply(5.0), reference=DividerReference(10e3, 10e3),
                    resistors=Resistors(input=10e3, feedback=100e3), tolerances=tolerances(windows))
    r = fit(design, None, None, by="margin", series="E12", min_ohms=10e3, max_ohms=100e3, count=4)
    assert r.fitted == ("input", "feedback", "reference.top", "reference.bottom") and r.stopped is None
    ri, rf, rt, rb = every(series_values("E12", 10e3, 100e3), 4)

    def points(i, f, t, b, vp):
        vref = vp * b / (t + b)
        return vref * (1 + i / f), vref * (1 + i / f) - vp * i / f  # output low, then high (vp)

    margin = corner_margin(points, windows, (0.01,) * 4 + (0.02,), ri, rf, rt, rb, 5.0)
    assert_best_equals(r, margin, {"input": ri, "feedback": rf, "reference.top": rt, "reference.bottom": rb})


def test_front_end_best_margin_equals_exhaustive_corners():
    # A sense divider (240k / 62k, 1 %) from a battery ahead of a three-resistor stage on a fixed
    # 2.5 V reference; windows in battery volts.  Thevenin: V = W Rb / (Rt + Rb) through Rt || Rb.
    windows = {"upper": (12.4, 13.1), "lower": (11.3, 11.8)}
    design = design_from_dict({
        "format": 1, "stage": "non-inverting", "supply": {"positive": 5.0}, "reference": {"volts": 2.5},
        "resistors": {"input": "10k", "feedback": "1M", "to_ground": "100k"},
        "front_end": {"kind": "divider", "top": "240k", "bottom": "62k", "low": 0, "high": 16},
        "tolerances": {"resistors": 1.0, "supply": 2.0,
                       "limits": {"upper": [12.4, 13.1], "lower": [11.3, 11.8]}}})
    r = fit(design, None, None, by="margin", series="E12", min_ohms=10e3, max_ohms=1e6, count=3)
    assert r.fitted == ("input", "feedback", "to_ground") and r.stopped is None
    ri, rf, rg = every(series_values("E12", 10e3, 1e6), 3)

    def points(i, f, g, top, bottom, vp):
        rs = top * bottom / (top + bottom) + i
        total = 1 / rs + 1 / f + 1 / g
        scale = rs * (top + bottom) / bottom
        return 2.5 * total * scale, (2.5 * total - vp / f) * scale

    margin = corner_margin(points, windows, (0.01,) * 5 + (0.02,), ri, rf, rg, 240e3, 62e3, 5.0)
    assert_best_equals(r, margin, {"input": ri, "feedback": rf, "to_ground": rg})


# --- Yield, grades and the command line ------------------------------------------------------------

def test_yield_is_the_spread_monte_carlo_of_the_candidate_and_overlaps_are_marked():
    r = fit(inverting_stage(), None, None, by="yield", series="E12", min_ohms=1e3, max_ohms=100e3, count=3)
    for c in r.candidates:
        applied = apply_candidate(r.design, c)
        mc = monte_carlo(applied, samples=YIELD_BUILDS, seed=1).build_yield
        assert (c.build_yield.passed, c.build_yield.samples) == (mc.passed, YIELD_BUILDS)
        assert (c.build_yield.low, c.build_yield.high) == wilson_interval(mc.passed, YIELD_BUILDS)
    fractions = [c.build_yield.fraction for c in r.candidates]
    assert fractions == sorted(fractions, reverse=True)
    for i, c in enumerate(r.candidates, 1):
        for j in c.not_told_apart:
            other = r.candidates[j - 1].build_yield
            assert c.build_yield.low <= other.high and other.low <= c.build_yield.high and j != i
    assert any("Yield: 10,000 builds" in line for line in r.assumptions)
    assert any(line.startswith("Distribution: normal") for line in r.assumptions)


def test_grades_are_the_cheapest_keeping_the_margin_positive():
    # Every grade choice of every listed candidate, with the independent corner margin.
    grades = parse_grades("5,1,0.5,0.1")
    r = fit(inverting_stage(), None, None, by="margin", series="E12", min_ohms=1e3, max_ohms=100e3, count=4,
            grades=grades)

    def points(p, g, f, vp):
        total = 1 / p + 1 / g + 1 / f
        return (vp / p + vp / f) / total, (vp / p) / total

    costs = []
    for c in r.candidates:
        values = [np.array([c.resistors[k]]) for k in ("to_positive", "to_ground", "feedback")]
        best = None
        for choice in itertools.product(zip(grades.percents, grades.costs, strict=True), repeat=3):
            tol = tuple(p / 100 for p, _ in choice) + (0.02,)
            m = float(corner_margin(points, WINDOWS, tol, *values, 5.0)[0])
            cost = sum(k for _, k in choice)
            cheaper = best is None or cost < best[0] - 1e-9
            if m > 0 and (cheaper or (abs(cost - best[0]) < 1e-9 and m > best[1])):
                best = (cost, m, choice)
        assert best is not None
        assert c.cost == pytest.approx(best[0]) and c.margin == pytest.approx(best[1], abs=1e-12)
        costs.append(c.cost)
    assert costs == sorted(costs)
    graded = apply_candidate(r.design, r.candidates[0])
    assert dict(graded.tolerances.resistors.parts) == r.candidates[0].grades


@pytest.mark.parametrize(("text", "message"), [
    ("5,,1", "write grades in percent separated by commas"),
    ("5,x", "grade 'x' is not a number"),
    ("0.3", "no default cost for a 0.3 % grade"),
    ("1:0", "the cost of 1 % must be above 0"),
    ("5,5", "grade 5 % is given twice"),
    ("60", "at most 50 %"),
])
def test_bad_grades_are_refused_naming_what_is_wrong(text, message):
    with pytest.raises(GradeError, match=re.escape(message)):
        parse_grades(text)


def test_grades_with_costs_and_defaults():
    g = parse_grades("0.1:4, 1:1, 5")
    assert g.percents == (5.0, 1.0, 0.1) and g.costs == (DEFAULT_COSTS[5.0], 1.0, 4.0)


def test_nominal_ranking_is_unchanged_and_refuses_grades():
    design = inverting_stage()
    r = fit(design, 3.0, 2.0, series="E12", min_ohms=1e3, max_ohms=100e3)
    assert r.by == "nominal" and r.candidates[0].margin is None and r.windows is None
    with pytest.raises(FitError, match="grades are chosen for the margin or yield ranking"):
        fit(design, 3.0, 2.0, grades=parse_grades("1"))


def test_a_missing_window_is_refused_naming_where_to_give_it():
    design = dataclasses.replace(inverting_stage(), tolerances=tolerances({"upper": (2.9, 3.1)}))
    with pytest.raises(FitError, match=r"lower: no window for the lower point; give one here or as "
                                       r"tolerances.limits.lower"):
        fit(design, None, None, by="margin")


def test_too_many_corners_are_refused_at_once():
    design = dataclasses.replace(inverting_stage(), tolerances=tolerances(
        WINDOWS, offset=1e-3, bias_current=1e-9, temperature=(-40, 85), resistor_tempco=PerResistor(100),
        offset_drift=1e-6, offset_current=1e-9))
    small = fit(design, None, None, by="margin", series="E12", min_ohms=1e3, max_ohms=100e3, count=1)
    assert small.candidates[0].margin is not None
    # Eight grades for three parts, 512 choices for each of 160 candidates (four times the count),
    # each bounded over up to 64 corners, is more than the budget of corner builds.
    with pytest.raises(FitError, match="give fewer grades"):
        fit(design, None, None, by="margin", grades=parse_grades("10,5,2,1,0.5,0.25,0.1,0.05"), count=40)


def test_grades_bounded_by_a_few_corners_are_those_every_corner_gives():
    # Eight grades for three parts over a temperature range (2,048 corners, 512 choices each) were
    # refused as too many to compute in full.  Each choice is now bounded from above over the corners
    # worst at the tightest and loosest grades, and only those whose bound is positive are computed
    # in full, cheapest first: the answer must be what computing every choice in full gives.
    design = dataclasses.replace(inverting_stage(), tolerances=tolerances(
        WINDOWS, offset=1e-3, bias_current=1e-9, temperature=(-40, 85), resistor_tempco=PerResistor(100),
        offset_drift=1e-6, offset_current=1e-9))
    grades = parse_grades("10,5,2,1,0.5,0.25,0.1,0.05")
    r = fit(design, None, None, by="margin", grades=grades, count=3)
    assert r.stopped is None and all(c.cost is not None for c in r.candidates)
    keys = ["to_positive", "to_ground", "feedback"]
    corners = CornerModel(r.design, [f"resistors.{k}" for k in keys])
    table, cost = choices(grades, 3)
    for c in r.candidates:
        values = np.tile([c.resistors[k] for k in keys], (len(table), 1))
        full = margins(corners.extremes(values, table), r.windows)
        cheapest = cost[full > 0].min()
        best = np.argmax(np.where((full > 0) & np.isclose(cost, cheapest), full, -np.inf))
        assert c.cost == pytest.approx(cheapest) and c.margin == pytest.approx(full[best], abs=1e-12)
        assert c.grades == dict(zip(keys, table[best], strict=True))


@pytest.fixture
def design_file(tmp_path):
    path = tmp_path / "inverting.json"
    path.write_text(json.dumps({**design_to_dict(inverting_stage()), "name": "Inverting level check"}))
    return str(path)


def test_cli_margin_json_contract(capsys, design_file):
    options = ["--series", "E12", "--max-ohms", "100k", "--json"]
    assert main(["fit", design_file, "--by", "margin", *options]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["by"] == "margin" and out["windows"] == {"upper": [2.9, 3.1], "lower": [1.9, 2.1]}
    first = out["candidates"][0]
    assert first["resistors"] == {"feedback": 68e3, "to_positive": 33e3, "to_ground": 33e3}
    assert first["margin"] == pytest.approx(0.0047904, abs=1e-7)
    assert "grades" not in first
    assert main(["fit", design_file, "--by", "margin", "--series", "E12", "--max-ohms", "100k", "--json",
                 "--grades", "5,1,0.5,0.1"]) == 0
    first = json.loads(capsys.readouterr().out)["candidates"][0]
    assert set(first["grades"]) == {"feedback", "to_positive", "to_ground"} and first["cost"] > 0


def test_cli_windows_and_a_point_on_the_command_line(capsys, design_file):
    # A point is a window of zero width: its margin is minus the farthest any build strays from it.
    assert main(["fit", design_file, "--by", "margin", "--upper", "2.95,3.05", "--lower", "2", "--series",
                 "E12", "--max-ohms", "100k", "--json", "--count", "1"]) == 2
    out = json.loads(capsys.readouterr().out)
    assert out["windows"] == {"upper": [2.95, 3.05], "lower": [2.0, 2.0]}
    assert out["candidates"][0]["margin"] < 0 and out["problems"]


def test_cli_yield_table_says_what_is_not_told_apart(capsys, design_file):
    assert main(["fit", design_file, "--by", "yield", "--series", "E12", "--max-ohms", "100k", "--count",
                 "3"]) == 0
    out = capsys.readouterr().out
    assert "yield (95 %)" in out and "not told apart from" in out and "#2" in out
    assert "Distribution: normal" in out


@pytest.mark.parametrize(("options", "message"), [
    (["--by", "margin", "--grades", "1,,2"], "--grades: write grades"),
    (["--upper", "3,3.1", "--lower", "2"], "--upper: a window (LOWEST,HIGHEST) is for --by margin or yield"),
    (["--lower", "2"], "--upper: required with --by nominal"),
    (["--by", "margin", "--upper", "3.1,3"], "--upper: give a value or a window"),
])
def test_cli_bad_options_are_named(options, message, capsys, design_file):
    assert main(["fit", design_file, *options]) == 2
    assert message in capsys.readouterr().err


def test_the_summary_lists_margin_grades_and_cost():
    r = fit(inverting_stage(), None, None, by="margin", series="E12", min_ohms=1e3, max_ohms=100e3, count=2,
            grades=parse_grades("5,1,0.5,0.1"))
    design = apply_candidate(r.design, r.candidates[0])
    text = design_summary(design, SummaryInputs(fit=r))
    assert "| Margin | Grades | Cost |" in text
    first = r.candidates[0]
    grades = " ".join(f"{first.grades[p]:g} %" for p in r.fitted)
    assert f"| {format_value(first.margin, 'V', 3)} | {grades} |" in text
    # the component table gives each part the grade chosen, as its tolerance
    assert f"{first.grades['feedback']:g} % (given for this resistor)" in text


@pytest.mark.parametrize("series", ["E12", "E24"])
def test_a_leg_is_added_only_where_it_gains_margin(demo, series):
    # Placing the sump's points exactly needs a third resistor (its reference is 2 mV off what two
    # resistors need), but the windows do not: the leg stays only where the best candidate's margin
    # is larger with it than with the stage as drawn, and a note gives the gain.  Over E12 the stage
    # as drawn does as well and the leg is left out; over E24 it gains under a millivolt, said so.
    sump = demo("sump_level_switch")
    chosen = fit(sump, None, None, by="margin", series=series, count=3)
    drawn = fit(sump, None, None, by="margin", series=series, count=3, add_leg=False)
    with_leg = chosen.candidates[0].margin
    without = drawn.candidates[0].margin
    if chosen.added_leg is None:
        assert [c.resistors for c in chosen.candidates] == [c.resistors for c in drawn.candidates]
        assert any(n.startswith("The stage as drawn does as well for the builds as with the added resistor")
                   for n in chosen.notes)
    else:
        assert with_leg > without
        gain = format_value(with_leg - without, sump.unit, 3)
        (note,) = [n for n in chosen.notes if n.startswith("Without the added resistor")]
        assert f"the best margin is {format_value(without, sump.unit, 3)}: the resistor gains {gain}" in note
    assert (series == "E12") == (chosen.added_leg is None)
