"""Tests of the confidence intervals of simulated blocking (netdim.evaluate.intervals).

References: scipy.stats (beta and t quantiles, the binomial distribution), the closed form
of the Clopper-Pearson limits at k = 0 and k = n, and mpmath's exact binomial sums.
"""

import math

import mpmath
import numpy as np
import pytest
from scipy import stats

from netdim.evaluate.intervals import (
    batch_means,
    blocking_interval,
    clopper_pearson,
    t_quantile,
)


@pytest.mark.parametrize("k,n", [(0, 10), (1, 10), (3, 50), (7, 5000), (50, 50), (0, 1),
                                 (12, 1_000_000)])
@pytest.mark.parametrize("conf", [0.9, 0.95, 0.999])
def test_clopper_pearson_equals_beta_quantiles(k, n, conf):
    # Source: Clopper and Pearson 1934 (Biometrika 26, 404-413) in its beta form,
    # lo = Beta(alpha/2; k, n-k+1), hi = Beta(1-alpha/2; k+1, n-k), with scipy.stats.beta.
    alpha = 1 - conf
    lo, hi = clopper_pearson(k, n, conf)
    want_lo = 0.0 if k == 0 else stats.beta.ppf(alpha / 2, k, n - k + 1)
    want_hi = 1.0 if k == n else stats.beta.ppf(1 - alpha / 2, k + 1, n - k)
    assert float(lo) == pytest.approx(want_lo, rel=1e-9, abs=1e-300)
    assert float(hi) == pytest.approx(want_hi, rel=1e-9)


@pytest.mark.parametrize("k,n", [(1, 20), (4, 200), (9, 1000)])
def test_clopper_pearson_limits_solve_the_binomial_tails(k, n):
    # Source: the defining property of the exact interval (Clopper and Pearson 1934): at the
    # upper limit P(X <= k) = alpha/2, at the lower limit P(X >= k) = alpha/2; binomial sums
    # in mpmath at 40 digits.
    mpmath.mp.dps = 40
    lo, hi = clopper_pearson(k, n, 0.95)

    def cdf(p, upto):
        p = mpmath.mpf(float(p))
        return mpmath.fsum(mpmath.binomial(n, i) * p**i * (1 - p) ** (n - i)
                           for i in range(upto + 1))

    assert float(cdf(hi, k)) == pytest.approx(0.025, rel=1e-7)
    assert float(1 - cdf(lo, k - 1)) == pytest.approx(0.025, rel=1e-7)


def test_no_loss_upper_limit_is_about_3_7_over_n():
    # Source: Clopper-Pearson at k = 0 has the closed form 1 - (alpha/2)^(1/n) (about
    # -ln(0.025)/n = 3.69/n; the 'rule of three' 3/n is the one-sided 95% limit,
    # Hanley and Lippman-Hand 1983, from memory).
    for n in (100, 5000, 10**6):
        lo, hi = clopper_pearson(0, n)
        assert lo == 0.0
        assert float(hi) == pytest.approx(-math.expm1(math.log(0.025) / n), rel=1e-10)
        if n >= 5000:
            assert 3.68 / n < hi < 3.70 / n


def test_nothing_offered_is_the_whole_unit_interval():
    # Source: with n = 0 the data say nothing (common practice, no source).
    lo, hi = clopper_pearson(0, 0)
    assert (float(lo), float(hi)) == (0.0, 1.0)


def test_t_quantile_equals_scipy_stats():
    # Source: scipy.stats.t.ppf (the quantile the batch-means interval used before).
    for df in (1, 2, 5, 19, 99, 10_000):
        for p in (0.95, 0.975, 0.9995):
            assert float(t_quantile(p, df)) == pytest.approx(stats.t.ppf(p, df), rel=1e-10)


def test_batch_means_by_hand():
    # Source: Law and Kelton (2000) ch. 9: ratio of totals, half-width t_{m-1} s / sqrt(m)
    # from the batch ratios, worked out here with numpy and scipy.stats.t.
    rng = np.random.default_rng(3)
    den = rng.integers(900, 1100, size=(20, 3)).astype(float)
    num = rng.binomial(den.astype(int), [0.01, 0.2, 0.0]).astype(float)
    est, half = batch_means(num, den, 0.95)
    ratios = num / den
    want_half = stats.t.ppf(0.975, 19) * ratios.std(axis=0, ddof=1) / math.sqrt(20)
    np.testing.assert_allclose(est, num.sum(0) / den.sum(0), rtol=1e-14)
    np.testing.assert_allclose(half, want_half, rtol=1e-10)
    assert half[2] == 0.0  # no loss in any batch: zero width, the case intervals must fix


def test_interval_is_the_union_of_both():
    # Source: the rule of netdim.evaluate.intervals (documented): the union of the
    # batch-means interval and the exact binomial one (scipy.stats.beta for the latter).
    est = np.array([0.0, 0.02, 0.3])
    half = np.array([0.0, 0.001, 0.1])
    k = np.array([0, 20, 300])
    n = np.array([5000, 1000, 1000])
    iv = blocking_interval(est, half, k, n, 0.95)
    cp_hi0 = stats.beta.ppf(0.975, 1, 5000)
    assert iv[0, 0] == 0.0 and iv[0, 1] == pytest.approx(cp_hi0, rel=1e-9)
    # a narrow batch interval around 20/1000 widens to the exact binomial one
    assert iv[1, 0] == pytest.approx(stats.beta.ppf(0.025, 20, 981), rel=1e-9)
    assert iv[1, 1] == pytest.approx(stats.beta.ppf(0.975, 21, 980), rel=1e-9)
    # a wide batch interval (correlated losses) is kept
    assert tuple(iv[2]) == pytest.approx((0.2, 0.4))
    assert np.all(iv[:, 0] <= est) and np.all(est <= iv[:, 1])
