"""Standard errors of means of correlated Monte Carlo series (batch means, blocking)."""

from __future__ import annotations

import math

import numpy as np

__all__ = ["blocked_stderr", "batch_mean"]


def blocked_stderr(values: np.ndarray, min_blocks: int = 10) -> float:
    """Standard error of the mean of a correlated series by blocking: adjacent batches
    are merged pairwise while at least ``min_blocks`` blocks remain, and the largest
    estimate over the levels is returned (Flyvbjerg & Petersen, J. Chem. Phys. 91, 461
    (1989)). Batches shorter than the correlation time then cannot hide it."""
    v = np.asarray(values, dtype=float)
    best = v.std(ddof=1) / math.sqrt(v.size)
    while v.size // 2 >= min_blocks:
        v = 0.5 * (v[: 2 * (v.size // 2): 2] + v[1: 2 * (v.size // 2): 2])
        best = max(best, v.std(ddof=1) / math.sqrt(v.size))
    return float(best)


def batch_mean(values: np.ndarray) -> tuple[float, float]:
    """Mean and batch-means standard error (with blocking) of per-batch estimates."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return math.nan, math.nan
    if v.size < 2:
        return float(v.mean()), math.nan
    return float(v.mean()), blocked_stderr(v)
