"""The first-order recursion and the RC low-pass built on it, against a plain loop and the RC step
and ramp responses."""

import math

import numpy as np
import pytest

from bandcalc.signal_check.first_order import decaying_sum, low_pass


def loop(decay, u):
    y = np.empty(len(u))
    y[0] = u[0]
    for i in range(1, len(u)):
        y[i] = math.exp(-min(decay[i], 50.0)) * y[i - 1] + u[i]
    return y


@pytest.mark.parametrize("n", [1, 2, 7, 300, 5000])
@pytest.mark.parametrize("scale", [1e-6, 0.01, 1.0, 30.0, 1e4])
def test_blocks_agree_with_the_plain_loop(n, scale):
    rng = np.random.default_rng(n)
    d, u = rng.exponential(scale, n), rng.normal(size=n)
    np.testing.assert_allclose(decaying_sum(d, u), loop(d, u), rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(decaying_sum(d[0], u), loop(np.full(n, d[0]), u), rtol=1e-9, atol=1e-9)


def test_ramp_through_rc_lags_by_tau():
    # An RC low-pass fed a ramp of slope k from rest at 0: y = k (t - tau (1 - exp(-t / tau)))
    # (first-order ramp response, Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 1; from memory).
    t = np.linspace(0.0, 1.0, 20001)
    tau, k = 0.01, 5.0
    exact = k * (t - tau * (1 - np.exp(-t / tau)))
    np.testing.assert_allclose(low_pass(t, k * t, tau), exact, atol=1e-12)
    uneven = np.sort(np.random.default_rng(3).uniform(0, 1, 20001))
    uneven[0] = 0.0
    np.testing.assert_allclose(low_pass(uneven, k * uneven, tau),
                               k * (uneven - tau * (1 - np.exp(-uneven / tau))), atol=1e-12)


def test_step_settles_to_63_percent_in_one_time_constant():
    # 1 - 1/e = 63.2 % of a step after one time constant (first principles).
    t = np.arange(0, 10001) * 1e-5
    x = np.where(t > 0, 1.0, 0.0)
    y = low_pass(t, x, 0.01)
    assert y[1001] == pytest.approx(1 - math.exp(-1), abs=1e-3)
    assert y[-1] == pytest.approx(1 - math.exp(-10), abs=1e-3)


def test_starts_settled_and_zero_tau_passes_through():
    t = np.arange(100) * 1e-3
    x = np.full(100, 2.5)
    np.testing.assert_allclose(low_pass(t, x, 0.05), x)
    np.testing.assert_array_equal(low_pass(t, np.sin(t), 0.0), np.sin(t))
    with pytest.raises(ValueError, match="time constant"):
        low_pass(t, x, -1.0)
