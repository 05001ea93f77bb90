"""Maxwell-Boltzmann fits to binned velocity samples, with uncertainties and goodness of fit.

Samples of a DSMC run are correlated (a molecule is counted in many steps), so a
histogram's bin counts scatter more than Poisson counts. The scatter of the batch
histograms gives the dispersion factor r = Var(O_k) / O_k (pooled over the bins);
N / r is then the effective number of independent samples. The fit is the
maximum-likelihood fit of the binned (multinomial) model (Cowan 1998, Statistical Data
Analysis, sec. 6.10 -- from memory), its covariance r times the inverse Fisher
information, and the goodness of fit both Pearson's chi^2 per degree of freedom with
variances r E_k (neighbouring bins merged until each expects 5 r), and the
Kolmogorov-Smirnov distance between the binned and fitted cumulative distributions with
the KS p-value for N / r samples (scipy.stats.kstwo). That p-value errs on the side of
accepting: the binned distance is at most the unbinned one, and the parameters were
fitted to the same data (the KS table assumes a fully specified distribution); treat
it as a screen, and chi^2/dof as the figure of merit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy import optimize, stats
from scipy.special import erf

__all__ = ["BinnedFit", "fit_binned", "dispersion_factor", "drifting_speed_cdf"]


def drifting_speed_cdf(v, drift_m_s: float, a_m_s: float):
    """Cumulative speed distribution of an isotropic Maxwellian drifting at ``drift_m_s``
    with thermal speed a = sqrt(2kT/m) (m/s).

    F(v) = [erf((v-u)/a) + erf((v+u)/a)] / 2 - a / (2 u sqrt(pi)) [exp(-(v-u)^2/a^2) -
    exp(-(v+u)^2/a^2)], the integral of f(v) = v / (u a sqrt(pi)) [exp(-(v-u)^2/a^2) -
    exp(-(v+u)^2/a^2)] (kinetic theory; e.g. Bird 1994 sec. 4.1 for the drifting
    Maxwellian); tends to the Maxwell distribution erf(x) - 2x exp(-x^2)/sqrt(pi),
    x = v/a, as u -> 0 (the drift is kept >= 1e-4 a, an error below 1e-8).
    """
    v = np.asarray(v, dtype=float)
    u = max(float(drift_m_s), 1e-4 * a_m_s)
    lo, hi = (v - u) / a_m_s, (v + u) / a_m_s
    return 0.5 * (erf(lo) + erf(hi)) - a_m_s / (2.0 * u * math.sqrt(math.pi)) * (
        np.exp(-lo * lo) - np.exp(-hi * hi))


@dataclass
class BinnedFit:
    """Result of :func:`fit_binned` (parameters in the model's units)."""

    params: np.ndarray
    stderr: np.ndarray
    covariance: np.ndarray
    reduced_chi_square: float
    degrees_of_freedom: int
    ks_distance: float
    ks_p_value: float
    effective_samples: float
    dispersion: float
    expected: np.ndarray          # fitted counts per bin (same scale as the data)


def dispersion_factor(batch_counts: np.ndarray) -> float:
    """r = sum_k Var(O_k) / sum_k O_k from per-batch histograms ``[batch, bin]``:
    Var(O_k) = B Var_b(O_bk) for the total O_k over B batches (batch means)."""
    b = batch_counts.shape[0]
    total = batch_counts.sum(axis=0)
    if b < 2 or total.sum() <= 0.0:
        return 1.0
    var = b * batch_counts.var(axis=0, ddof=1)
    return float(max(var.sum() / total.sum(), 1e-12))


def _probabilities(cdf, theta, edges) -> np.ndarray:
    f = cdf(edges, *theta)
    span = f[-1] - f[0]
    return np.clip(np.diff(f) / span, 1e-300, None) if span > 0 else np.full(len(edges) - 1,
                                                                                np.nan)


def _merge_bins(observed: np.ndarray, expected: np.ndarray, least: float):
    """Merge neighbouring bins, left to right, until each expects at least ``least``
    (the remainder joins the last group): the usual condition for Pearson's chi^2."""
    obs, exp = [], []
    o = e = 0.0
    for ob, ex in zip(observed, expected):
        o += ob
        e += ex
        if e >= least:
            obs.append(o)
            exp.append(e)
            o = e = 0.0
    if e > 0.0 and exp:
        obs[-1] += o
        exp[-1] += e
    return np.array(obs), np.array(exp)


def fit_binned(edges: np.ndarray, batch_counts: np.ndarray, cdf: Callable,
               start: list[float], lower: list[float] | None = None) -> BinnedFit | None:
    """Maximum-likelihood fit of ``cdf(v, *theta)`` to a histogram on ``edges``.

    ``batch_counts[batch, bin]`` are the per-batch counts (the overflow bin excluded);
    the model is conditioned on the histogram range. Returns None if there are fewer
    than 10 effective samples or fewer bins than parameters + 2.
    """
    counts = batch_counts.sum(axis=0)
    n = counts.sum()
    r = dispersion_factor(batch_counts)
    neff = n / r
    k = len(start)
    if neff < 10.0 or np.count_nonzero(counts) < k + 2:
        return None
    scale = np.abs(np.asarray(start, dtype=float))
    scale[scale == 0.0] = 1.0
    lower = np.full(k, -np.inf) if lower is None else np.asarray(lower, dtype=float)

    def nll(z):
        theta = z * scale
        if np.any(theta < lower):
            return 1e300
        p = _probabilities(cdf, theta, edges)
        if not np.all(np.isfinite(p)):
            return 1e300
        return -float(np.sum(counts * np.log(p))) / n

    best = optimize.minimize(nll, np.ones(k), method="Nelder-Mead",
                             options=dict(xatol=1e-9, fatol=1e-13, maxiter=4000))
    theta = best.x * scale
    p = _probabilities(cdf, theta, edges)
    # Fisher information of the multinomial, derivatives by central differences
    grad = np.empty((k, len(p)))
    for i in range(k):
        h = 1e-5 * max(abs(theta[i]), scale[i] * 1e-3)
        tp, tm = theta.copy(), theta.copy()
        tp[i] += h
        tm[i] -= h
        if tm[i] < lower[i]:   # one-sided at a bound
            tm[i] = theta[i]
        grad[i] = (_probabilities(cdf, tp, edges) - _probabilities(cdf, tm, edges)) \
            / (tp[i] - tm[i])
    info = n * (grad / p) @ grad.T
    try:
        cov = r * np.linalg.inv(info)
    except np.linalg.LinAlgError:
        cov = np.full((k, k), np.nan)
    expected = n * p
    obs_m, exp_m = _merge_bins(counts, expected, 5.0 * r)
    dof = obs_m.size - 1 - k
    chi2 = float(np.sum((obs_m - exp_m) ** 2 / (r * exp_m)))
    ks = float(np.max(np.abs(np.cumsum(counts) / n - np.cumsum(p))))
    m = max(int(round(neff)), 1)
    return BinnedFit(
        params=theta, stderr=np.sqrt(np.clip(np.diag(cov), 0.0, None)), covariance=cov,
        reduced_chi_square=chi2 / dof if dof > 0 else math.nan, degrees_of_freedom=dof,
        ks_distance=ks, ks_p_value=float(stats.kstwo.sf(ks, m)), effective_samples=neff,
        dispersion=r, expected=expected)
