"""Sampling accumulators, kept per batch for batch-means standard errors.

Raw sums only: cell velocity moments, surface and flux-plane tallies and
collision counts. Cell fields are also evaluated once per batch so that each
field's batch-to-batch scatter gives its standard error (batch means:
stderr = std(batch values) / sqrt(number of batches); common practice, e.g.
Bird 1994 sec. 11.2 on sample sizes, and any text on correlated time series).
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from rarefy.kernels.config import N_FLUX_TALLY, N_MOMENTS, N_PROBE_MOMENTS, N_SURF_TALLY
from rarefy.post.uncertainty import blocked_stderr

__all__ = ["Accumulators"]


class Accumulators:
    """All sums of one run's sampling phase, ``batches`` blocks of ``steps_per_batch``.

    Flux-plane rows hold the crossing sums and then two speed histograms of ``nbins``
    bins plus overflow (``rarefy.kernels.config.F_HIST``); probes hold velocity sums
    (``PM_*``) and four histograms (``H_*``) of ``nbins`` bins plus overflow.

    A mixture of ``nspecies`` species keeps each species apart: cell moments in columns
    k * N_MOMENTS + M_*, surface, flux-plane and probe sums in rows
    facet (plane, probe) * nspecies + k.
    """

    def __init__(self, ncell: int, nfacet: int, nplane: int, batches: int,
                 steps_per_batch: int, nprobe: int = 0, nbins: int = 0, nspecies: int = 1):
        ns = self.nspecies = nspecies
        nfacet, nplane, nprobe = nfacet * ns, nplane * ns, nprobe * ns
        self.batches = batches
        self.steps_per_batch = steps_per_batch
        self.batch = 0
        self.step_in_batch = 0
        self.cell_batch = np.zeros((ncell, ns * N_MOMENTS))
        self.cell_total = np.zeros((ncell, ns * N_MOMENTS))
        self.surf = np.zeros((batches, max(nfacet, 0), N_SURF_TALLY))
        self.nbins = nbins
        self.flux = np.zeros((batches, max(nplane, 0), N_FLUX_TALLY + 2 * (nbins + 1)))
        self.probe_mom = np.zeros((batches, nprobe, N_PROBE_MOMENTS))
        self.probe_hist = np.zeros((batches, nprobe, 4, nbins + 1))
        self.collisions = np.zeros((batches, 3))   # collisions, separation sum, candidates
        self.particles = np.zeros(batches)         # sum over steps of the particle count
        self.field_sum: dict[str, np.ndarray] = {}
        self.field_sumsq: dict[str, np.ndarray] = {}
        self.field_count: dict[str, np.ndarray] = {}

    def extend(self, extra: int) -> None:
        """Add ``extra`` batches of the same length (sampling continues into them)."""
        pad = ((0, extra), (0, 0), (0, 0))
        self.surf = np.pad(self.surf, pad)
        self.flux = np.pad(self.flux, pad)
        self.collisions = np.pad(self.collisions, ((0, extra), (0, 0)))
        self.particles = np.pad(self.particles, (0, extra))
        self.probe_mom = np.pad(self.probe_mom, pad)
        self.probe_hist = np.pad(self.probe_hist, pad + ((0, 0),))
        self.batches += extra

    def net_flow(self, plane: int, masses=None) -> np.ndarray:
        """Per completed batch, the net crossings of flux plane ``plane`` (a mixture's
        species rows weighted by ``masses``, a mass flow in their unit)."""
        nb = self.batch
        rows = self.flux[:nb, plane * self.nspecies:(plane + 1) * self.nspecies]
        net = rows[:, :, 0] - rows[:, :, 1]
        if self.nspecies == 1:
            return net[:, 0]
        return net @ (np.ones(self.nspecies) if masses is None else np.asarray(masses))

    def relative_error(self, plane: int, masses=None) -> float:
        """Batch-means relative standard error of the net (mass) flow through flux plane
        ``plane`` over the completed batches (inf while it cannot be told)."""
        nb = self.batch
        if nb < 2:
            return np.inf
        net = self.net_flow(plane, masses)
        mean = net.mean()
        if mean == 0.0:
            return np.inf
        return blocked_stderr(net) / abs(mean)

    @property
    def done(self) -> bool:
        return self.batch >= self.batches

    @property
    def steps_sampled(self) -> int:
        return self.batch * self.steps_per_batch + self.step_in_batch

    def end_step(self, nparticles: int, fields: Callable[[np.ndarray, int], dict]) -> None:
        """Count one sampled step; close the batch when it is full."""
        self.particles[self.batch] += nparticles
        self.step_in_batch += 1
        if self.step_in_batch < self.steps_per_batch:
            return
        for name, value in fields(self.cell_batch, self.steps_per_batch).items():
            ok = np.isfinite(value)
            v = np.where(ok, value, 0.0)
            if name not in self.field_sum:
                self.field_sum[name] = np.zeros_like(v)
                self.field_sumsq[name] = np.zeros_like(v)
                self.field_count[name] = np.zeros_like(v)
            self.field_sum[name] += v
            self.field_sumsq[name] += v * v
            self.field_count[name] += ok
        self.cell_total += self.cell_batch
        self.cell_batch[:] = 0.0
        self.batch += 1
        self.step_in_batch = 0

    def field_stderr(self, name: str) -> np.ndarray:
        """Batch-means standard error of a cell field (NaN where fewer than 2 batches)."""
        k = self.field_count[name]
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = self.field_sum[name] / k
            var = (self.field_sumsq[name] / k - mean * mean) * k / (k - 1)
            return np.where(k >= 2, np.sqrt(np.maximum(var, 0.0) / k), np.nan)
