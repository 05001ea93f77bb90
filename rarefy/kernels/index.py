"""Cell index: counting sort of particles by (cell, sub-cell) key.

The store is cut into one contiguous chunk per thread. Each thread counts its chunk's
keys; a prefix sum over (key, chunk) gives every chunk its first slot in each key's
range; then each thread scatters its chunk's particles (every particle array) into the
sorted order. Removed particles (key -1) are dropped, which compacts the store.
Chunks are taken in store order, so the result is the stable sort whatever the number
of threads. Collisions then walk contiguous ranges. The keys themselves are not kept:
the next move writes every particle's key afresh.
"""

import numpy as np
from numba import prange

from rarefy.kernels.config import serial_and_parallel


def counting_sort_py(n, key, nkeys, key_start, src, dst, nthreads):
    """Sort ``n`` particles by key into ``dst`` (float arrays stacked as rows of ``src``).

    Parameters
    ----------
    key : int32[n]; -1 marks a removed particle.
    key_start : int64[nkeys + 1], filled with the first slot of every key.
    src, dst : float64[nvar, capacity]; particle variables, one row each.
    nthreads : chunks to count and scatter in parallel (``numba.get_num_threads()``;
        fewer when a chunk would hold under 65536 particles, or when the chunks' counts
        would pass 2 per particle).

    Returns the number of surviving particles.
    """
    # the per-chunk counts (chunks x keys int64) stay within 16 bytes per particle
    nt = max(1, min(nthreads, n // 65536, (2 * n) // max(nkeys, 1)))
    bounds = np.empty(nt + 1, np.int64)
    for t in range(nt + 1):
        bounds[t] = (n * t) // nt
    count = np.zeros((nt, nkeys), np.int64)
    for t in prange(nt):
        ct = count[t]
        for i in range(bounds[t], bounds[t + 1]):
            k = key[i]
            if k >= 0:
                ct[k] += 1
    # exclusive prefix over (key, chunk): count[t, k] becomes chunk t's first slot of k
    total = 0
    for k in range(nkeys):
        key_start[k] = total
        for t in range(nt):
            c = count[t, k]
            count[t, k] = total
            total += c
    key_start[nkeys] = total
    nvar = src.shape[0]
    for t in prange(nt):
        fill = count[t]
        for i in range(bounds[t], bounds[t + 1]):
            k = key[i]
            if k < 0:
                continue
            j = fill[k]
            fill[k] = j + 1
            for v in range(nvar):
                dst[v, j] = src[v, i]
    return total


counting_sort, counting_sort_par = serial_and_parallel(counting_sort_py)
