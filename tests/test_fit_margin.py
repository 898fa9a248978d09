"""Fit for what the builds will do: the search over windows, the worst-case margin of every
candidate against a plain corner enumeration, yield with its interval, tolerance grades and cost."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import three_resistor_stages
from test_fit import evaluator

from bandcalc.fit import grid_search as search
from bandcalc.model.design import Design, FixedReference, Resistors, Supply
from bandcalc.model.standard_values import series_values

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
