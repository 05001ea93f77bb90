"""Particle store: struct of arrays with capacity management.

State rows of ``state`` (float64, shape (nvar, capacity)): x, y (m) and vx, vy, vz
(m/s), then, for molecules with internal energy, the rotational and (when vibration is
on) vibrational energy per unit mass (m^2/s^2). A second buffer of the same shape
receives the sorted order each step and the two swap, so sorting also compacts out
removed particles. ``key`` (int32) holds each particle's sort key, written by the move.
nvar x 8 x 2 + 4 bytes a slot: 84 (monatomic), 100 (rotation), 116 (and vibration).

The store grows when it must, to the larger of what is needed plus 1/16 and 1.25 x its
size, so a store that grew holds at most 1.25 x the room last asked for (the engine asks
for the particles plus the inflow, and axisymmetric runs for 1/4 more for duplicates).
"""

from __future__ import annotations

import numpy as np

__all__ = ["ParticleStore", "X", "Y", "VX", "VY", "VZ", "EROT", "EVIB", "NVAR",
           "bytes_per_slot"]

X, Y, VX, VY, VZ, EROT, EVIB = range(7)
NVAR = 5   # rows without internal energy


def bytes_per_slot(nvar: int) -> int:
    """Bytes one particle slot takes: two float64 buffers of ``nvar`` rows and the key."""
    return 16 * nvar + 4


class ParticleStore:
    """Particles 0..n-1 of ``state`` are alive; ``key`` holds their sort keys."""

    def __init__(self, capacity: int = 1024, nvar: int = NVAR):
        capacity = max(16, int(capacity))
        self.n = 0
        self.nvar = int(nvar)
        self.state = np.zeros((self.nvar, capacity))
        self.spare = np.zeros((self.nvar, capacity))
        self.key = np.full(capacity, -1, dtype=np.int32)

    @property
    def capacity(self) -> int:
        return self.state.shape[1]

    def reserve(self, needed: int) -> None:
        """Grow so that ``needed`` particles fit (see the module docstring)."""
        if needed <= self.capacity:
            return
        cap = max(needed + needed // 16, self.capacity + self.capacity // 4)
        self.spare = None                      # freed first: the sort overwrites it whole
        new = np.zeros((self.nvar, cap))
        new[:, : self.n] = self.state[:, : self.n]
        self.state = new
        self.spare = np.zeros((self.nvar, cap))
        key = np.full(cap, -1, dtype=np.int32)
        key[: self.n] = self.key[: self.n]
        self.key = key

    def add(self, x, y, vx, vy, vz, *internal) -> None:
        """Append particles given as arrays (used for initial fills and tests); the
        internal-energy rows, if the store has them, follow (zero when not given)."""
        k = len(x)
        self.reserve(self.n + k)
        sl = slice(self.n, self.n + k)
        self.state[:, sl] = 0.0
        for row, arr in enumerate((x, y, vx, vy, vz, *internal)):
            self.state[row, sl] = arr
        self.n += k

    def swap(self) -> None:
        self.state, self.spare = self.spare, self.state

    def view(self, row: int) -> np.ndarray:
        return self.state[row, : self.n]
