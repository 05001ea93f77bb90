"""Steady-state detection from the histories of the particle count and the flux-plane flows.

The settling phase is cut into windows of equal length; each window gives the mean
particle count and the mean net crossings per step of every flux plane. The flow is
taken as steady when, over the last ``2 h`` windows, the change that a least-squares
line through the window means predicts across them lies within the 95 % t-band of its
standard error (from the residual scatter) plus a small relative tolerance, for the
particle count and for every flux plane alike (a trend test on window means, common
practice for judging the end of a transient in Monte Carlo runs).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["SteadyDetector"]

# two-sided 95 % point of Student's t with 4 degrees of freedom (a line through 6
# windows), 2.78
T_FACTOR = 2.78


class SteadyDetector:
    """Collects window means and judges steadiness.

    Parameters
    ----------
    half : int
        Windows in each half of the comparison (default 3).
    count_tol, flow_tol : float
        Relative tolerances for the particle count and the flows (default 0.5 % and 2 %).
    """

    def __init__(self, half: int = 3, count_tol: float = 0.005, flow_tol: float = 0.02):
        self.half = half
        self.count_tol = count_tol
        self.flow_tol = flow_tol
        self.rows: list[np.ndarray] = []   # per window: [particles, flow_0, flow_1, ...]

    def add_window(self, mean_particles: float, flows_per_step: np.ndarray) -> None:
        self.rows.append(np.concatenate([[mean_particles], np.asarray(flows_per_step, float)]))

    def _series_steady(self, y: np.ndarray, tol: float, scale: float) -> bool:
        """Least-squares line through the window means: the change it predicts over the
        compared windows must lie within the t-band of its own error plus tol x scale."""
        x = np.arange(y.size, dtype=float)
        x -= x.mean()
        slope = float(np.dot(x, y - y.mean()) / np.dot(x, x))
        resid = y - y.mean() - slope * x
        se = math.sqrt(float(np.dot(resid, resid)) / (y.size - 2) / float(np.dot(x, x)))
        return abs(slope) * y.size <= T_FACTOR * se * y.size + tol * scale

    def steady(self) -> bool:
        """True when every series has stopped drifting over the last 2 ``half`` windows."""
        if len(self.rows) < 2 * self.half:
            return False
        h = np.array(self.rows[-2 * self.half:])
        if not self._series_steady(h[:, 0], self.count_tol, abs(h[:, 0].mean())):
            return False
        for k in range(1, h.shape[1]):
            # a flow's scale: its mean, or its scatter where it is near zero
            scale = max(abs(h[:, k].mean()), h[:, k].std())
            if not self._series_steady(h[:, k], self.flow_tol, scale):
                return False
        return True

    def summary(self) -> dict:
        """Histories for the result file: window means, one row per window."""
        return {"windows": len(self.rows),
                "history": np.array(self.rows) if self.rows else np.zeros((0, 1))}
