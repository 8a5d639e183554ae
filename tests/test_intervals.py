"""The Student t interval helpers against scipy.stats, the standard error of a sample
variance against textbook formulas, and their use by the metrics."""

import math

import numpy as np
import pytest
from haarline import expand, parse_circuit
from haarline.metrics.gradient_variance import summarize_gradients
from haarline.metrics.intervals import (
    log_symmetric_interval,
    mean_interval,
    t_quantile,
    variance_standard_error,
)
from haarline.metrics.sampled_loss import loss_variance
from scipy import stats


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


def _se_squared(x: np.ndarray) -> float:
    return variance_standard_error((x - x.mean()) ** 2) ** 2


@pytest.mark.parametrize("n", [50, 1000])
@pytest.mark.parametrize("law", ["normal", "exponential", "uniform"])
def test_variance_standard_error_is_the_plug_in_textbook_formula(n, law):
    x = getattr(np.random.default_rng(n), law)(size=n)
    m2, m4 = stats.moment(x, 2), stats.moment(x, 4)  # sample central moments (scipy)
    se2 = _se_squared(x)
    # exactly (S/(S-1))^3 (m4 - m2^2) / S, by the algebra in the helper's Notes
    assert se2 == pytest.approx((n / (n - 1)) ** 3 * (m4 - m2**2) / n, rel=1e-10)
    # the textbook Var(s^2) = (mu4 - sigma^4 (n-3)/(n-1)) / n (Casella & Berger, Statistical
    # Inference, 2nd ed., 2002, Exercise 5.8(b)) with sample moments plugged in, to first
    # order in 1/n: the ratio is (n/(n-1))^3 / (1 + 2/((n-1)(kurtosis - 1))) = 1 + O(1/n)
    textbook = (m4 - m2**2 * (n - 3) / (n - 1)) / n
    assert abs(se2 / textbook - 1) < 4 / n


@pytest.mark.parametrize(
    ("law", "mu4"),
    [("normal", 3.0), ("exponential", 9.0)],  # fourth central moments at unit variance
)
def test_variance_standard_error_is_the_spread_of_repeated_variances(law, mu4):
    # 4000 experiments of 200 samples: the mean of se^2 is the exact Var(s^2) of the law,
    # (mu4 - (n-3)/(n-1)) / n (Casella & Berger, Exercise 5.8(b); 2/(n-1) for the normal,
    # from (n-1) s^2 ~ chi^2 with n-1 degrees of freedom). Tolerance: 4 Monte Carlo standard
    # errors of the mean of se^2, plus 3/n for the first-order formula.
    repeats, n = 4000, 200
    x = getattr(np.random.default_rng(7), law)(size=(repeats, n))
    se2 = np.array([_se_squared(row) for row in x])
    exact = (mu4 - (n - 3) / (n - 1)) / n
    tolerance = 4 * se2.std(ddof=1) / math.sqrt(repeats) / exact + 3 / n
    assert abs(se2.mean() / exact - 1) < tolerance


def test_gradient_variance_error_counts_correlated_parameters():
    # five correlated Gaussian "gradient" components: for the mean v of their sample
    # variances, Var(v) = (2 / (P^2 (n-1))) sum_kl Sigma_kl^2 (Wishart covariance
    # Cov(W_kk, W_ll) = 2 m Sigma_kl^2 at m = n - 1 degrees of freedom, Muirhead, Aspects of
    # Multivariate Statistical Theory, 1982, ch. 3). Treating the components as
    # independent would give 0.66 of it here; the tolerance is as in the test above.
    rng = np.random.default_rng(11)
    repeats, n, p = 4000, 200, 5
    a = rng.normal(size=(p, p))
    cov = a @ a.T / p
    exact = 2 * np.sum(cov**2) / (p * p * (n - 1))
    root = np.linalg.cholesky(cov)
    se2 = np.empty(repeats)
    for r in range(repeats):
        grads = rng.normal(size=(n, p)) @ root.T
        se2[r] = summarize_gradients(2, 1, np.zeros(n), grads).standard_error ** 2
    tolerance = 4 * se2.std(ddof=1) / math.sqrt(repeats) / exact + 3 / n
    assert abs(se2.mean() / exact - 1) < tolerance


def test_loss_variance_error_matches_the_closed_form():
    # one ry on |0>, global cost: C = 1 - cos^2(theta/2) = (1 - cos theta)/2 for theta uniform,
    # so C - E C = -cos(theta)/2, sigma^2 = 1/8 and mu4 = E cos^4 / 16 = 3/128; the textbook
    # Var(s^2) (Casella & Berger, Exercise 5.8(b)) gives se = 0.00198 at 2000 samples. The
    # estimate's own spread over seeds is about 1%; 5% allows five of those.
    program = expand(parse_circuit({"qubits": 1, "layer": [{"gate": "ry"}]}))
    n = 2000
    result = loss_variance(program, "global", samples=n, seed=3)
    want = math.sqrt((3 / 128 - (n - 3) / (n - 1) / 64) / n)
    assert result.standard_error == pytest.approx(want, rel=0.05)
    assert result.variance == pytest.approx(1 / 8, abs=4 * want)


@pytest.mark.parametrize("dof", [3, 5, 6, 99, 874, 999, 1000, 4999, 19_999, 20_000, 10**6])
@pytest.mark.parametrize("confidence", [0.5, 0.95, 0.999])
def test_t_quantile_without_scipy_matches_scipy_over_the_range(dof, confidence):
    # scipy.special.stdtrit (the inverse Student t distribution function); both sides of
    # the series / expansion switch and high coverage, where the tail is flat
    from haarline.metrics._special import student_t_quantile
    from scipy import special

    want = float(special.stdtrit(dof, 0.5 + confidence / 2))
    assert student_t_quantile(dof, confidence) == pytest.approx(want, rel=2e-13)


@pytest.mark.parametrize("bad", [0, -3, 2.5, True])
def test_t_quantile_refuses_what_is_not_a_whole_number_of_degrees(bad):
    from haarline.metrics._special import student_t_quantile

    with pytest.raises(ValueError, match="degrees of freedom"):
        student_t_quantile(bad, 0.95)


def test_log_gamma_is_scipys_gammaln_to_the_bit():
    # the plug-in bias sums binomial masses exp(lnΓ(m+1) - lnΓ(k+1) - lnΓ(m-k+1) + ...):
    # an ulp of lnΓ(m+1) moves the reported bias by 1e-10, so the replacement must give
    # scipy.special.gammaln's doubles exactly (whole numbers, halves, and the small range)
    from haarline.metrics._special import log_gamma
    from scipy import special

    x = np.concatenate(
        [
            np.arange(1, 200_001, dtype=float),
            np.arange(1, 20_001) + 0.5,
            np.linspace(1e-3, 40.0, 20_001),
            np.geomspace(40.0, 1e12, 2_001),
        ]
    )
    assert np.array_equal(log_gamma(x), special.gammaln(x))
    with pytest.raises(ValueError, match="positive"):
        log_gamma(np.array([1.0, 0.0]))
