"""Blocking estimate of the standard error of a correlated series."""

import numpy as np

from rarefy.post.uncertainty import batch_mean, blocked_stderr


def test_independent_batches_give_the_plain_standard_error():
    # for independent data the blocked estimate stays near sigma / sqrt(n) (common
    # practice; Flyvbjerg & Petersen 1989)
    rng = np.random.default_rng(3)
    v = rng.normal(1.0, 2.0, 4000)
    assert blocked_stderr(v) == np.float64(blocked_stderr(v))
    assert 0.9 * 2.0 / np.sqrt(4000) < blocked_stderr(v) < 1.3 * 2.0 / np.sqrt(4000)


def test_correlated_batches_are_not_underestimated():
    # AR(1) series with correlation 0.9: the true standard error of the mean is
    # sigma sqrt((1 + phi) / (1 - phi)) / sqrt(n) (textbook time-series result), about
    # 4.4 times the naive one; blocking must recover most of it, the naive one cannot
    rng = np.random.default_rng(4)
    phi, n = 0.9, 20000
    e = rng.normal(0.0, 1.0, n)
    v = np.empty(n)
    v[0] = e[0]
    for i in range(1, n):
        v[i] = phi * v[i - 1] + e[i]
    sigma = 1.0 / np.sqrt(1 - phi ** 2)
    true = sigma * np.sqrt((1 + phi) / (1 - phi)) / np.sqrt(n)
    naive = v.std(ddof=1) / np.sqrt(n)
    assert naive < 0.3 * true
    assert 0.8 * true < blocked_stderr(v) < 1.3 * true


def test_batch_mean_ignores_nan_and_handles_short_series():
    mean, err = batch_mean([1.0, np.nan, 3.0])
    assert mean == 2.0 and err > 0
    assert np.isnan(batch_mean([5.0])[1])
