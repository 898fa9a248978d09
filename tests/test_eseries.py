"""Tests for bandcalc.model.standard_values against IEC 60063 and the ``eseries`` package."""

from decimal import Decimal
from itertools import pairwise

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from bandcalc.model.standard_values import (
    SERIES,
    TOLERANCE,
    EseriesError,
    nearest,
    next_above,
    next_below,
    series_of,
    series_values,
)

NAMES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")
ALLOWED = "allowed: E3, E6, E12, E24, E48, E96, E192"
NOT_POSITIVE = "value must be a positive, finite number of ohms; got"
NOT_NUMBER = "value must be a number in ohms; got"

# Targets spanning milliohms to gigaohms; hypothesis adds decade edges on its own.
targets = st.floats(min_value=1e-3, max_value=1e10, allow_nan=False)
names = st.sampled_from(NAMES)


def _codes(name: str) -> tuple[int, ...]:
    """Mantissas as the integers the standard prints (47 for 4.7, 866 for 8.66)."""
    scale = 10 if len(SERIES[name]) <= 24 else 100
    return tuple(round(m * scale) for m in SERIES[name])


# --- The tables ---------------------------------------------------------------------


def test_series_names_in_order():
    assert tuple(SERIES) == NAMES
    assert tuple(TOLERANCE) == NAMES


@pytest.mark.parametrize("name", NAMES)
def test_tables_match_eseries_package(name):
    # Source: the `eseries` package from PyPI (1.2.1), `eseries.series(key)`, which
    # prints each IEC 60063 series as integers of two or three significant digits.
    eseries = pytest.importorskip("eseries")
    assert _codes(name) == eseries.series(eseries.ESeries[name])


@pytest.mark.parametrize("name", NAMES)
def test_tolerances_match_eseries_package(name):
    # Source: `eseries.tolerance(key)` of the eseries package 1.2.1; E6 20 %, E12 10 %,
    # E24 5 %, E48 2 %, E96 1 %, E192 0.5 % are also the figures quoted with IEC 60063.
    eseries = pytest.importorskip("eseries")
    assert TOLERANCE[name] == eseries.tolerance(eseries.ESeries[name])


@pytest.mark.parametrize(
    ("name", "count"),
    [("E3", 3), ("E6", 6), ("E12", 12), ("E24", 24), ("E48", 48), ("E96", 96),
     ("E192", 192)],
)  # fmt: skip
def test_counts_per_decade(name, count):
    # Source: IEC 60063, series En has n values per decade (the name says so).
    assert len(SERIES[name]) == count
    assert len(series_values(name, 1e3, 9.999e3)) == count


@pytest.mark.parametrize("name", NAMES)
def test_mantissas_ascend_within_one_decade(name):
    mantissas = SERIES[name]
    assert all(1 <= m < 10 for m in mantissas)
    assert all(a < b for a, b in pairwise(mantissas))


def test_e24_published_list():
    # Source: the IEC 60063 E24 list as printed in resistor makers' catalogues and
    # electronics handbooks (typed from memory, and cross-checked above against the
    # eseries package).
    published = (
        "1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 "
        "3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1"
    )
    assert SERIES["E24"] == tuple(float(v) for v in published.split())


@pytest.mark.parametrize(
    ("coarse", "fine"),
    [("E3", "E6"), ("E6", "E12"), ("E12", "E24"), ("E48", "E96"), ("E96", "E192")],
)
def test_each_series_takes_every_other_value_of_the_next(coarse, fine):
    # Source: IEC 60063 construction (from memory): E(n) is every second value of
    # E(2n). E24 to E48 does not hold, as the two-digit and three-digit series differ.
    assert SERIES[coarse] == SERIES[fine][::2]


def _departures(name: str) -> dict[float, float]:
    """Table values that differ from the rounded geometric series 10**(i/n)."""
    n = len(SERIES[name])
    digits = 1 if n <= 24 else 2
    geometric = [round(10 ** (i / n), digits) for i in range(n)]
    return {m: g for m, g in zip(SERIES[name], geometric, strict=True) if m != g}


def test_e24_departs_from_geometric_series_where_known():
    # Source: IEC 60063, whose E24 values 2.7 ... 8.2 depart from the rounded geometric series
    # (from memory); the same set is found from the eseries package's E24 table, which the
    # tables test matches.
    departures = _departures("E24")
    assert sorted(departures) == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]
    # The geometric series gives 2.6 ... 4.6 and 8.3 instead (rounded 10**(i/24)).
    assert departures[4.7] == 4.6
    assert departures[8.2] == 8.3


def test_e192_has_920_where_geometric_series_gives_919():
    # Source: IEC 60063 E192 list (from memory) and the eseries package's E192 table;
    # 10**(185/192) = 9.1934 rounds to 9.19.
    assert _departures("E192") == {9.20: 9.19}
    assert _departures("E48") == {}
    assert _departures("E96") == {}


# --- Exact values ---------------------------------------------------------------------


def test_values_equal_their_decimal_spelling():
    # 4.7 kOhm, 8.66 kOhm and 1.2 MOhm must compare equal to the literal floats.
    assert 4700.0 in series_values("E24", 1e3, 1e4)
    assert 8660.0 in series_values("E96", 1e3, 1e4)
    assert 1.2e6 in series_values("E12", 1e6, 1e7)
    assert 0.47 in series_values("E6", 0.1, 1.0)


@pytest.mark.parametrize("name", NAMES)
def test_every_value_is_the_float_of_its_decimal(name):
    # Independent route: decimal arithmetic, then one rounding to float.
    values = series_values(name, 1e-3, 9.99e9)
    expected = [
        float(Decimal(repr(m)).scaleb(decade))
        for decade in range(-3, 10)
        for m in SERIES[name]
    ]
    assert values.tolist() == expected


def test_series_values_bounds_are_inclusive():
    assert series_values("E12", 1e3, 1e4).tolist() == [
        1000.0, 1200.0, 1500.0, 1800.0, 2200.0, 2700.0, 3300.0, 3900.0, 4700.0,
        5600.0, 6800.0, 8200.0, 10000.0,
    ]  # fmt: skip
    assert series_values("E24", 4700, 4700).tolist() == [4700.0]
    assert series_values("E24", 4701, 5099).size == 0


# --- Lookups --------------------------------------------------------------------------


def test_nearest_e24_4k7():
    # Source: the eseries package documentation example, nearest(E24, 4.7e3) == 4700.
    assert nearest("E24", 4.7e3) == 4700.0
    assert nearest("e24", 4.6e3) == 4700.0


@pytest.mark.parametrize(
    ("function", "name", "value", "expected"),
    [
        (next_above, "E12", 8300, 10000.0),  # over the decade edge
        (next_above, "E12", 10000, 10000.0),  # a standard value is its own bound
        (next_below, "E12", 9999, 8200.0),
        (next_below, "E12", 1000, 1000.0),
        (next_below, "E24", 999, 910.0),
        (next_above, "E96", 9.77e3, 10000.0),
        (next_below, "E192", 9.199e3, 9090.0),
        (nearest, "E12", 9.2e3, 10000.0),  # 800 ohm to 10k beats 1 kOhm to 8k2
        (nearest, "E3", 0.3, 0.22),
    ],
)
def test_lookups_across_decades(function, name, value, expected):
    # Source: checked by hand against the tables, and against the eseries package
    # (find_greater_than_or_equal / find_less_than_or_equal / find_nearest) below.
    assert function(name, value) == expected


def test_nearest_tie_goes_to_lower_value():
    # 4.9 kOhm is exactly halfway between the E24 values 4.7 k and 5.1 k. The eseries
    # package (1.2.1) also answers 4700 here, and 5100 just above the midpoint.
    assert nearest("E24", 4900) == 4700.0
    assert nearest("E24", 4900.001) == 5100.0


def test_lookups_vectorized_keep_shape():
    values = np.array([[8300.0, 4.7e3], [1.0, 0.0123]])
    assert next_above("E12", values).tolist() == [[10000.0, 4700.0], [1.0, 0.015]]
    assert next_below("E12", values).tolist() == [[8200.0, 4700.0], [1.0, 0.012]]
    assert nearest("E12", values).tolist() == [[8200.0, 4700.0], [1.0, 0.012]]
    assert isinstance(nearest("E12", 4700), float)
    assert next_above("E12", []).shape == (0,)


@settings(deadline=None)
@given(name=names, value=targets)
def test_bounds_bracket_the_target(name, value):
    below, above = next_below(name, value), next_above(name, value)
    # A value found below is never above its target; one found above never below.
    assert below <= value <= above
    # Both are standard values, and no standard value lies strictly between them.
    between = series_values(name, below, above)
    assert between[0] == below and between[-1] == above
    assert len(between) <= 2
    assert nearest(name, value) in (below, above)


@settings(deadline=None)
@given(name=names, value=targets)
def test_lookups_agree_with_eseries_package(name, value):
    # Source: the eseries package (PyPI, 1.2.1), an independent implementation.
    eseries = pytest.importorskip("eseries")
    key = eseries.ESeries[name]
    assert next_above(name, value) == eseries.find_greater_than_or_equal(key, value)
    assert next_below(name, value) == eseries.find_less_than_or_equal(key, value)
    assert nearest(name, value) == eseries.find_nearest(key, value)


@settings(deadline=None)
@given(name=names, values=st.lists(targets, max_size=20))
def test_vectorized_matches_scalar(name, values):
    for function in (nearest, next_above, next_below):
        assert function(name, values).tolist() == [function(name, v) for v in values]


# --- Series membership and default tolerance -------------------------------------------


@pytest.mark.parametrize(
    ("value", "name", "tolerance"),
    [
        (4700.0, "E3", 0.40),
        (6.8e6, "E6", 0.20),
        (1.2e3, "E12", 0.10),
        (1.1e3, "E24", 0.05),
        (1.05e3, "E48", 0.02),
        (8660.0, "E48", 0.02),
        (8870.0, "E96", 0.01),
        (9200.0, "E192", 0.005),
        (8.2 / 1000 * 1e6, "E12", 0.10),  # 8199.999999999998 counts as 8.2 kOhm
        (9190.0, None, None),  # not in E192 (the series has 9.20 there)
        (4800.0, None, None),
        (4990.0, "E96", 0.01),  # 4.99 is in E96 (and E192), not E48
    ],
)
def test_series_of_and_its_tolerance(value, name, tolerance):
    assert series_of(value) == name
    assert (TOLERANCE[name] if name else None) == tolerance


# --- Bad input --------------------------------------------------------------------------


def test_lower_case_and_blank_names_accepted():
    assert next_above(" e96 ", 8650) == 8660.0


@pytest.mark.parametrize("bad", ["E25", "E", "", "24"])
def test_unknown_series_names_the_key_and_the_allowed_ones(bad):
    with pytest.raises(EseriesError) as info:
        nearest(bad, 1000)
    assert str(info.value) == f"unknown series {bad!r}; {ALLOWED}"
    assert isinstance(info.value, ValueError)


def test_unknown_series_message_exact():
    with pytest.raises(EseriesError, match=r"^unknown series 'E25'; allowed: E3, E6,"):
        series_values("E25", 1, 10)


def test_series_name_must_be_text():
    with pytest.raises(EseriesError, match=rf"got 24; {ALLOWED}$"):
        next_below(24, 1000)


@pytest.mark.parametrize(
    ("bad", "message"),
    [
        (float("nan"), f"{NOT_POSITIVE} nan"),
        (float("inf"), f"{NOT_POSITIVE} inf"),
        (-4700, f"{NOT_POSITIVE} -4700.0"),
        (0, f"{NOT_POSITIVE} 0.0"),
        ([100, -1], f"{NOT_POSITIVE} -1.0 (at index 1)"),
        (1e30, "value must lie between 1e-24 and 1e+24 ohm; got 1e+30"),
        ("4k7", f"{NOT_NUMBER} '4k7'"),
        (None, f"{NOT_NUMBER} None"),
        (True, f"{NOT_NUMBER} True"),
    ],
)
def test_bad_values_are_named(bad, message):
    for function in (nearest, next_above, next_below):
        with pytest.raises(EseriesError) as info:
            function("E24", bad)
        assert str(info.value) == message


def test_bad_bounds_are_named():
    with pytest.raises(EseriesError, match=r"^low \(2 ohm\) must not exceed high"):
        series_values("E24", 2, 1)
    with pytest.raises(EseriesError, match=r"^high must be a positive, finite"):
        series_values("E24", 1, float("nan"))
    with pytest.raises(EseriesError, match=r"^low must be a single number"):
        series_values("E24", [1, 2], 10)
    with pytest.raises(EseriesError, match=r"^value must be a positive, finite"):
        series_of(0)


def test_tables_are_read_only():
    with pytest.raises(TypeError):
        SERIES["E24"] = (1.0,)  # type: ignore[index]
    values = series_values("E24", 1, 10)
    values[0] = 99.0  # a copy: the lookups are unaffected
    assert next_above("E24", 1) == 1.0
