"""The narrowest hysteresis for a false-edge target, and the table over filter time constants."""

import json
import math

import numpy as np
import pytest

from bandcalc.signal_check.disturbance import Hum, NoiseSpectrum
from bandcalc.signal_check.false_edges import SECONDS_PER_YEAR
from bandcalc.signal_check.hysteresis_choice import (
    false_edge_rate,
    filter_table,
    filter_table_to_dict,
    narrowest_hysteresis,
)


def test_parked_only_the_target_gives_the_hysteresis_in_closed_form():
    # Rice: two false edges per crossing at rate nu0 exp(-h^2 / (2 sigma^2)), nu0 = B / sqrt(3) for
    # flat noise to B; the target T is met at h = sigma sqrt(2 ln(2 nu0 / T)).
    noise = NoiseSpectrum(0.02, 3e3)
    target = 1.0 / SECONDS_PER_YEAR
    h = narrowest_hysteresis(noise, Hum(), 1.0, 0.0, target)
    exact = 0.02 * math.sqrt(2 * math.log(2 * 3e3 / math.sqrt(3) / target))
    assert h == pytest.approx(exact, rel=0.01)
    assert h >= exact


@pytest.mark.parametrize("hum", [Hum(), Hum(0.03, 60, {3: 0.01})])
def test_the_narrowest_hysteresis_just_meets_the_target(hum):
    noise = NoiseSpectrum(0.05, 2e3)
    target = 10.0 / SECONDS_PER_YEAR
    h = narrowest_hysteresis(noise, hum, 5.0, 1 / 60, target)
    assert false_edge_rate(noise, hum, h, 5.0, 1 / 60)[0] <= target
    assert false_edge_rate(noise, hum, h / 1.02, 5.0, 1 / 60)[0] > target


def test_no_noise_no_hysteresis_needed():
    assert narrowest_hysteresis(NoiseSpectrum(0.0, 1e3), Hum(), 1.0, 1.0, 1e-8) == 0.0


def test_the_table_trades_hysteresis_for_the_filter_lag():
    noise, slope = NoiseSpectrum(0.05, 5e3), 2.0
    table = filter_table(noise, Hum(), slope, crossings_per_second=1 / 3600, false_edges_per_year=1,
                         delay_budget=0.05)
    assert table.time_constants[0] == 0.0
    # Each row: delay = h / (2 k) + tau (a ramp through the filter lags by tau, first principles).
    np.testing.assert_allclose(table.delays, table.hysteresis / (2 * slope) + table.time_constants)
    assert np.all(np.diff(table.hysteresis) <= 0)  # more filtering, less hysteresis needed
    best = table.best_index
    assert 0 < best < table.time_constants.size - 1  # the least delay lies between the ends
    assert table.delays[best] == table.delays.min()
    np.testing.assert_array_equal(table.within_budget, table.delays <= 0.05)
    data = json.loads(json.dumps(filter_table_to_dict(table), allow_nan=False))
    assert data["rows"][0]["pole"] is None and data["least_delay"] == best
    assert data["rows"][1]["pole"] == pytest.approx(1 / (2 * math.pi * table.time_constants[1]))


def test_the_table_names_bad_input():
    with pytest.raises(ValueError, match="slope must be greater than 0, got 0"):
        filter_table(NoiseSpectrum(0.05, 5e3), Hum(), 0.0)
    with pytest.raises(ValueError, match="false_edges_per_year must be greater than 0, got 0"):
        filter_table(NoiseSpectrum(0.05, 5e3), Hum(), 1.0, false_edges_per_year=0)
