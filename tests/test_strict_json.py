"""JSON for machines is strict JSON: RFC 8259, section 6, permits no NaN or Infinity."""

import json
import math

import numpy as np

from bandcalc.outputs.strict_json import dumps, strict


def _strict_loads(text: str):
    def refuse(name):
        raise AssertionError(f"not strict JSON: {name}")
    return json.loads(text, parse_constant=refuse)


def test_non_finite_numbers_become_null_and_are_listed_with_what_they_were():
    result = {"upper": math.nan, "nested": {"low": [1.0, -math.inf, np.float64(np.inf)]}, "n": np.int64(3)}
    out = strict(result)
    assert out["upper"] is None and out["nested"]["low"] == [1.0, None, None] and out["n"] == 3
    assert out["not_finite"] == {"upper": "NaN", "nested.low[1]": "-Infinity", "nested.low[2]": "Infinity"}
    assert math.isnan(result["upper"])  # the result itself is left as it was


def test_finite_results_are_unchanged_and_lists_are_made_strict_one_by_one():
    assert strict({"a": 1.5, "b": "text", "c": None}) == {"a": 1.5, "b": "text", "c": None}
    both = _strict_loads(dumps([{"x": 1.0}, {"x": math.nan}]))
    assert both == [{"x": 1.0}, {"x": None, "not_finite": {"x": "NaN"}}]
