"""The Student t interval helpers against scipy.stats, and their use by the metrics."""

import math

import numpy as np
import pytest
from scipy import stats

from analysis._intervals import log_symmetric_interval, mean_interval, t_quantile


@pytest.mark.parametrize("n", [2, 3, 7, 40, 2000])
@pytest.mark.parametrize("confidence", [0.5, 0.9, 0.95, 0.99])
def test_mean_interval_matches_scipy(n, confidence):
    # scipy.stats.t.interval(confidence, df, loc, scale) is the textbook interval
    # x̄ ± t_{(1+c)/2, n-1} · s/√n (scipy reference: "scipy.stats.t", interval method)
    values = np.random.default_rng(n).normal(3.0, 2.0, size=n)
    want = stats.t.interval(
        confidence, n - 1, loc=values.mean(), scale=values.std(ddof=1) / math.sqrt(n)
    )
    got = mean_interval(values, confidence)
    assert got == pytest.approx(want, rel=1e-12, abs=1e-12)


@pytest.mark.parametrize("dof", [1, 4, 30, 1999])
@pytest.mark.parametrize("confidence", [0.8, 0.95])
def test_t_quantile_matches_scipy(dof, confidence):
    # scipy.stats.t.ppf is the inverse distribution function of Student's t
    assert t_quantile(dof, confidence) == pytest.approx(
        stats.t.ppf((1 + confidence) / 2, dof), rel=1e-12
    )


def test_mean_interval_of_one_value_is_a_point():
    assert mean_interval(np.array([0.25])) == (0.25, 0.25)


@pytest.mark.parametrize("confidence", [0.9, 0.95])
def test_log_symmetric_interval_is_the_t_interval_of_the_log(confidence):
    # exp of scipy's t interval for ln v with scale se/v (delta method)
    v, se, dof = 3.5e-4, 4.0e-5, 199
    lo, hi = stats.t.interval(confidence, dof, loc=math.log(v), scale=se / v)
    got = log_symmetric_interval(v, se, dof, confidence)
    assert got == pytest.approx((math.exp(lo), math.exp(hi)), rel=1e-12)


def test_log_symmetric_interval_of_zero_variance():
    assert log_symmetric_interval(0.0, 0.0, 10) == (0.0, 0.0)
