"""Particle store: struct of arrays with capacity management.

State rows of ``state`` (float64, shape (5, capacity)): x, y (m) and vx, vy, vz
(m/s). A second buffer of the same shape receives the sorted order each step
and the two swap, so sorting also compacts out removed particles.
"""

from __future__ import annotations

import numpy as np

__all__ = ["ParticleStore", "X", "Y", "VX", "VY", "VZ"]

X, Y, VX, VY, VZ = range(5)
NVAR = 5


class ParticleStore:
    """Particles 0..n-1 of ``state`` are alive; ``key`` holds their sort keys."""

    def __init__(self, capacity: int = 1024):
        capacity = max(16, int(capacity))
        self.n = 0
        self.state = np.zeros((NVAR, capacity))
        self.spare = np.zeros((NVAR, capacity))
        self.key = np.full(capacity, -1, dtype=np.int32)
        self.key_spare = np.full(capacity, -1, dtype=np.int32)

    @property
    def capacity(self) -> int:
        return self.state.shape[1]

    def reserve(self, needed: int) -> None:
        """Grow (by doubling) so that ``needed`` particles fit."""
        if needed <= self.capacity:
            return
        cap = self.capacity
        while cap < needed:
            cap *= 2
        for name in ("state", "spare"):
            old = getattr(self, name)
            new = np.zeros((NVAR, cap))
            new[:, : self.n] = old[:, : self.n]
            setattr(self, name, new)
        for name in ("key", "key_spare"):
            old = getattr(self, name)
            new = np.full(cap, -1, dtype=np.int32)
            new[: self.n] = old[: self.n]
            setattr(self, name, new)

    def add(self, x, y, vx, vy, vz) -> None:
        """Append particles given as arrays (used for initial fills and tests)."""
        k = len(x)
        self.reserve(self.n + k)
        sl = slice(self.n, self.n + k)
        for row, arr in zip(range(NVAR), (x, y, vx, vy, vz)):
            self.state[row, sl] = arr
        self.n += k

    def swap(self) -> None:
        self.state, self.spare = self.spare, self.state
        self.key, self.key_spare = self.key_spare, self.key

    def view(self, row: int) -> np.ndarray:
        return self.state[row, : self.n]
