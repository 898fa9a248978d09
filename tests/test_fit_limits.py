"""The fit answers within seconds or refuses at once: its up-front size check, the search's
budget of combinations checked, the progress it reports, and the bounded candidate count.

Time is bounded by the test runner (subprocess timeouts, a search that may not start), never
by asserting durations.  Where numbers are compared, the reference is evaluating every
combination with the model (``grid_search.exhaustive``), as in tests/test_fit.py.
"""

import dataclasses
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from bandcalc.demos import load_demo
from bandcalc.fit import grid_search, selection
from bandcalc.fit.selection import MAX_COUNT, FitError, fit, fit_to_dict
from bandcalc.model.design import DividerReference
from bandcalc.model.design_file import design_to_dict
from bandcalc.model.network import switching_points
from bandcalc.model.parts import with_values
from bandcalc.model.standard_values import series_values

ROOT = Path(__file__).parent.parent
SUMP = load_demo("sump_level_switch")
# The sump stage with every leg of the + pin in place: five free values.
SUMP_ALL_LEGS = with_values(SUMP, {"resistors.to_ground": 100e3, "resistors.to_positive": 100e3,
                                   "resistors.to_negative": 1e6})
# The same with a divider reference and two legs: six free values.
SUMP_DIVIDER = dataclasses.replace(
    with_values(SUMP, {"resistors.to_ground": 100e3, "resistors.to_positive": 100e3}),
    reference=DividerReference(10e3, 10e3))
# A runaway (minutes) is far beyond this; a fit that answers or refuses takes a few seconds.
RUNNER_LIMIT = 60


def run_fit(tmp_path, design, *options: str) -> subprocess.CompletedProcess:
    """``python -m bandcalc fit`` on ``design`` in a subprocess the test runner stops at RUNNER_LIMIT."""
    path = tmp_path / "design.json"
    path.write_text(json.dumps(design_to_dict(design)))
    return subprocess.run([sys.executable, "-m", "bandcalc", "fit", str(path), *options],
                          capture_output=True, text=True, cwd=ROOT, timeout=RUNNER_LIMIT)


def strict(text: str):
    """JSON with NaN and Infinity refused, as strict JSON readers do."""
    def refuse(name):
        raise ValueError(f"not strict JSON: {name}")
    return json.loads(text, parse_constant=refuse)


# --- The command line: the runaway runs of the issue --------------------------------------------

@pytest.mark.parametrize("design", [SUMP_ALL_LEGS, SUMP_DIVIDER], ids=["five free values", "six free values"])
def test_too_many_free_values_are_refused_at_once(tmp_path, design):
    run = run_fit(tmp_path, design, "--upper", "3", "--lower", "2")
    assert run.returncode == 2 and not run.stdout
    message = run.stderr
    assert "too many combinations to search" in message
    assert "hold" in message and "narrow the range" in message and "coarser series" in message


@pytest.mark.parametrize("series, high", [("E96", "1e12"), ("E192", "1e10")])
def test_a_very_wide_range_answers_within_the_budget(tmp_path, series, high):
    run = run_fit(tmp_path, SUMP, "--upper", "3", "--lower", "2", "--series", series, "--min-ohms", "1",
                  "--max-ohms", high, "--json")
    assert run.returncode == 0, run.stderr
    out = strict(run.stdout)
    assert 0 < out["checked"] <= grid_search.BUDGET
    assert out["candidates"]
    if not out["proven"]:
        assert "not proven the best" in out["stopped"]


def test_count_is_bounded_and_refused_at_once(tmp_path):
    run = run_fit(tmp_path, SUMP, "--upper", "3", "--lower", "2", "--count", "1000000000")
    assert run.returncode == 2 and not run.stdout
    assert "--count: must be a whole number from 1 to 100, got '1000000000'" in run.stderr
    helped = subprocess.run([sys.executable, "-m", "bandcalc", "fit", "--help"], capture_output=True,
                            text=True, cwd=ROOT, timeout=RUNNER_LIMIT)
    assert "1 to 100" in " ".join(helped.stdout.split())


# --- The fit: refuse before searching, name what would help -------------------------------------

@pytest.fixture
def no_search(monkeypatch):
    """Fail at once where the fit starts a search it should have refused."""
    def started(*args, **kwargs):
        raise AssertionError("the search started")
    monkeypatch.setattr(selection, "search", started)


def test_refusal_comes_before_any_search_and_says_what_would_help(no_search):
    with pytest.raises(FitError) as refused:
        fit(SUMP_ALL_LEGS, 3.0, 2.0)
    message = str(refused.value)
    # 97 E24 values from 1 kOhm to 10 MOhm; every combination of four of the five is 97**4.
    assert message.startswith("too many combinations to search: 5 free values (input, feedback, "
                              "to_positive, to_negative and to_ground), each one of 97 E24 values from "
                              "1 kΩ to 10 MΩ")
    assert f"about {97 ** 4:,} combinations" in message
    assert f"its limit of {grid_search.BUDGET:,}" in message
    # Within ten times the limit: E12's 49 values over the range (49**4 = 5,764,801), or one value
    # held (97**3 = 912,673).
    assert "a coarser series (E12 or coarser)" in message
    assert "hold 1 of them" in message


def test_an_added_leg_that_makes_the_search_too_large_is_refused_before_searching(no_search):
    # Input, feedback and a leg to the + rail over E96 (385 values): 385**2 combinations of two
    # are few.  Points this high need the + pin pulled down (test_fit: the sump stage gets a leg
    # to ground for them); with that leg, 385**3 = 57,066,625 is beyond ten times the limit.
    design = with_values(SUMP, {"resistors.to_positive": 100e3})
    with pytest.raises(FitError, match=r"too many combinations to search: 4 free values \(input, feedback, "
                                       r"to_positive and to_ground, a leg the fit added"):
        fit(design, 3.4, 2.25, series="E96")


def test_count_outside_its_range_is_refused():
    for count in (0, MAX_COUNT + 1, 10**9):
        refused = f"count: must be a whole number from 1 to {MAX_COUNT}, got {count}$"
        with pytest.raises(FitError, match=refused):
            fit(SUMP, 3.1, 1.9, count=count)
    assert len(fit(SUMP, 3.1, 1.9, count=MAX_COUNT, series="E6").candidates) == MAX_COUNT


# --- The search: a budget, the best found, progress ---------------------------------------------

FOUR = ["resistors.input", "resistors.feedback", "resistors.to_ground", "resistors.to_positive"]


def four_free(series="E12"):
    design = with_values(SUMP, {"resistors.to_ground": 100e3, "resistors.to_positive": 100e3})
    evaluate = selection._evaluator(design, FOUR)
    return design, evaluate, series_values(series, 1e3, 10e6)


def test_a_search_within_its_budget_is_unchanged_and_proven():
    _, evaluate, grid = four_free("E6")
    found = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5)
    every = grid_search.exhaustive(evaluate, grid, 4, 3.0, 2.0, 5)
    assert found.proven and np.array_equal(found.values, every.values)
    assert found.evaluations <= found.checked <= grid_search.BUDGET
    again = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5, budget=found.checked)
    assert again.proven and np.array_equal(again.values, found.values)


def test_a_search_out_of_budget_stops_with_the_best_it_found():
    design, evaluate, grid = four_free("E12")
    whole = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5)
    assert whole.proven
    budget = whole.checked // 3
    found = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5, budget=budget)
    assert not found.proven and 0 < found.checked <= budget and len(found.values) == 5
    # What it lists are model values, ranked; none beats the proven best.
    pts = switching_points(design, {k: found.values[:, j] for j, k in enumerate(FOUR)})
    assert np.array_equal(pts.upper, found.upper) and np.array_equal(pts.lower, found.lower)
    worst = np.maximum(np.abs(found.upper - 3.0), np.abs(found.lower - 2.0))
    assert list(worst) == sorted(worst)
    assert worst[0] >= max(abs(whole.upper[0] - 3.0), abs(whole.lower[0] - 2.0))


def test_a_missed_prediction_beyond_the_budget_keeps_what_was_found(monkeypatch):
    # Evaluating all 49**4 combinations is beyond a budget of 100,000: the search keeps its
    # candidates (model values) and says they are not proven, instead of enumerating everything.
    _, evaluate, grid = four_free("E12")
    monkeypatch.setattr(grid_search.Curve, "at", lambda self, x: self.y0 + 0.0 * x)  # a wrong prediction
    found = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 3, budget=100_000)
    assert not found.proven and found.checked <= 100_000 and len(found.values) == 3


def test_a_missed_prediction_beyond_the_full_enumeration_searches_again_with_a_wider_margin():
    # Over 18 decades the predictions from three samples miss the model by more than a quarter of
    # the margin (rounding); evaluating all 55**3 combinations is beyond this budget, so the search
    # runs again with a wider margin, and must still equal evaluating everything.
    design = with_values(SUMP, {"resistors.to_positive": 1e6})
    keys = ["resistors.feedback", "resistors.input", "resistors.to_positive"]
    evaluate = selection._evaluator(design, keys)
    grid = series_values("E3", 1e-3, 1e15)
    found = grid_search.search(evaluate, grid, 3, 3.0, 2.0, 5, budget=len(grid) ** 3 - 1)
    every = grid_search.exhaustive(evaluate, grid, 3, 3.0, 2.0, 5)
    assert found.proven and found.checked < len(grid) ** 3
    assert np.array_equal(found.values, every.values)


def test_seeds_are_evaluated_first_and_leave_a_finished_search_unchanged():
    _, evaluate, grid = four_free("E6")
    seeds = grid[np.random.default_rng(1).integers(0, len(grid), (40, 4))]
    found = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5, seeds=seeds)
    assert found.proven
    assert np.array_equal(found.values, grid_search.exhaustive(evaluate, grid, 4, 3.0, 2.0, 5).values)
    first = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 40, seeds=seeds, budget=40)
    assert not first.proven and {tuple(v) for v in first.values} == {tuple(v) for v in seeds}


def test_progress_reports_the_share_of_the_budget_and_can_stop_the_search():
    _, evaluate, grid = four_free("E12")
    seen = []
    found = grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5, budget=10**6,
                               progress=lambda done, total: seen.append((done, total)))
    assert seen and all(total == 10**6 for _, total in seen)
    done = [d for d, _ in seen]
    assert done == sorted(done) and done[-1] <= found.checked <= 10**6

    class Stop(Exception):
        pass

    def stop(done, total):
        raise Stop

    with pytest.raises(Stop):  # the page's Stop interrupts the search this way
        grid_search.search(evaluate, grid, 4, 3.0, 2.0, 5, progress=stop)


def test_the_size_estimate_is_every_combination_of_all_but_one():
    assert grid_search.search_size(97, 5) == 97**4
    assert grid_search.search_size(97, 2) == 97 and grid_search.search_size(97, 1) == 97


# --- The fit's report of a stopped search ---------------------------------------------------------

def test_a_fit_stopped_at_its_budget_says_so_in_every_output():
    design, _, _ = four_free()
    proven = fit(design, 3.0, 2.0, series="E12")
    assert proven.stopped is None and 0 < proven.checked <= grid_search.BUDGET
    r = fit(design, 3.0, 2.0, series="E12", budget=proven.checked // 3)
    assert r.checked <= proven.checked // 3 and r.candidates
    assert r.stopped.startswith(f"The search stopped at its limit of {proven.checked // 3:,} combinations "
                                "checked: the candidates are the best it found, not proven the best.")
    out = strict(json.dumps(fit_to_dict(r), allow_nan=False))
    assert out["proven"] is False and out["stopped"] == r.stopped and out["checked"] == r.checked
    assert strict(json.dumps(fit_to_dict(proven)))["proven"] is True


def test_a_fit_whose_budget_ends_before_any_candidate_is_refused():
    # One free value (feedback held) over 1,153 E96 values: within ten times a budget of 200, but
    # its one block of evaluations is beyond it.
    points = switching_points(SUMP)
    with pytest.raises(FitError, match="the search reached its limit of 200 combinations checked before"):
        fit(SUMP, float(points.upper), float(points.lower), series="E96", min_ohms=1, max_ohms=1e12,
            fixed={"feedback": 39e3}, budget=200)


def test_fit_progress_comes_from_the_search():
    design, _, _ = four_free()
    seen = []
    fit(design, 3.0, 2.0, series="E12", progress=lambda done, total: seen.append(done))
    assert seen and seen == sorted(seen)


def test_the_summary_says_a_stopped_search_is_not_proven():
    from bandcalc.outputs.summary import SummaryInputs, design_summary

    design, _, _ = four_free()
    r = fit(design, 3.0, 2.0, series="E12", budget=100_000)
    assert r.stopped
    text = design_summary(design, SummaryInputs(fit=r))
    assert f"- Not proven the best: {r.stopped}" in text
    proven = design_summary(design, SummaryInputs(fit=fit(design, 3.0, 2.0, series="E12")))
    assert "Not proven the best" not in proven
