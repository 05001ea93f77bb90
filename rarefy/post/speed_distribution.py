"""A sampled speed distribution, the common currency of probes, flux planes and TOF.

``weighting`` says what the histogram counts:

* ``"density"``: molecules found in a volume (a probe), f(v) dv;
* ``"flux"``: molecules crossing a surface per unit time (a flux plane), proportional
  to v f(v) dv for a beam along the surface normal.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["SpeedDistribution", "WEIGHTINGS"]

WEIGHTINGS = ("density", "flux")


@dataclass(frozen=True)
class SpeedDistribution:
    """Histogram of molecular speeds.

    Attributes
    ----------
    edges_m_s : bin edges (m/s), increasing, ``len(counts) + 1`` of them, first 0.
    counts : weight per bin (any scale, >= 0).
    counts_stderr : batch-means standard error of each bin (same scale), or None.
    weighting : ``"density"`` or ``"flux"``.
    label : name of the probe or flux plane it came from.
    mass_kg : molecular mass (kg).
    temperature_k : source temperature for theory overlays (K), or None.
    """

    edges_m_s: np.ndarray
    counts: np.ndarray
    counts_stderr: np.ndarray | None
    weighting: str
    label: str
    mass_kg: float
    temperature_k: float | None = None

    def __post_init__(self):
        if self.weighting not in WEIGHTINGS:
            raise ValueError(f"weighting must be one of {WEIGHTINGS}, not {self.weighting!r}")
        if len(self.edges_m_s) != len(self.counts) + 1:
            raise ValueError("need one more bin edge than bins")

    @property
    def centres_m_s(self) -> np.ndarray:
        return 0.5 * (self.edges_m_s[1:] + self.edges_m_s[:-1])

    @property
    def widths_m_s(self) -> np.ndarray:
        return np.diff(self.edges_m_s)

    def pdf(self) -> np.ndarray:
        """Probability density per bin (1/(m/s)), normalised over the histogram."""
        total = float(np.sum(self.counts))
        return np.asarray(self.counts) / (total * self.widths_m_s)
