"""Cell index: counting sort of particles by (cell, sub-cell) key.

One pass counts keys, a prefix sum gives each key's first slot, a second pass
scatters every particle array into the sorted order (removed particles, key -1,
are dropped, which compacts the store). Collisions then walk contiguous ranges.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import JIT


@njit(**JIT)
def counting_sort(n, key, nkeys, key_start, src, dst, key_out):
    """Sort ``n`` particles by key into ``dst`` (float arrays stacked as rows of ``src``).

    Parameters
    ----------
    key : int64[n]; -1 marks a removed particle.
    key_start : int64[nkeys + 1], filled with the first slot of every key.
    src, dst : float64[nvar, capacity]; particle variables, one row each.
    key_out : int64[capacity], receives the sorted keys.

    Returns the number of surviving particles.
    """
    key_start[:] = 0
    for i in range(n):
        k = key[i]
        if k >= 0:
            key_start[k + 1] += 1
    for k in range(nkeys):
        key_start[k + 1] += key_start[k]
    nalive = key_start[nkeys]
    fill = key_start[:nkeys].copy()
    nvar = src.shape[0]
    for i in range(n):
        k = key[i]
        if k < 0:
            continue
        j = fill[k]
        fill[k] = j + 1
        for v in range(nvar):
            dst[v, j] = src[v, i]
        key_out[j] = k
    return nalive
