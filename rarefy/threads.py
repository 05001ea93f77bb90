"""How many threads the parallel kernels use.

numba starts with one thread per core (or ``NUMBA_NUM_THREADS``). Processes that share
the machine -- sweep workers, MPI ranks on one node -- each take their share of the cores
so that they do not oversubscribe them: a descheduled thread stalls every parallel
region of its process.
"""

from __future__ import annotations

import os

import numba
import numpy as np

__all__ = ["use_threads", "share_of_cores", "run_parallel", "parallel_min_particles",
           "threading_layer"]


def use_threads(n: int | None) -> int:
    """Set the kernels' thread count to ``n`` (None: every thread numba may use), clipped
    to 1..``NUMBA_NUM_THREADS``; returns the count in use."""
    top = numba.config.NUMBA_NUM_THREADS
    numba.set_num_threads(top if n is None else max(1, min(int(n), top)))
    return numba.get_num_threads()


def share_of_cores(processes: int) -> int:
    """Threads per process when ``processes`` processes share this machine's cores."""
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") \
        else (os.cpu_count() or 1)
    return max(1, cores // max(1, int(processes)))


# Particles from which a step's kernels run in parallel. Starting numba's thread pool
# costs about 10 us per kernel with the OpenMP or TBB layers and about 330 us with the
# built-in "workqueue" layer (measured on a 2-core machine); below these counts the
# serial kernels are faster. The results are the same either way.
PARALLEL_MIN_FAST_POOL = 20_000
PARALLEL_MIN_SLOW_POOL = 200_000


@numba.njit(parallel=True, cache=True)
def _touch_pool(a):
    for i in numba.prange(a.shape[0]):
        a[i] = i


def threading_layer() -> str:
    """The layer of numba's thread pool ("omp", "tbb" or "workqueue"), starting the pool
    with a trivial parallel loop if no parallel kernel has run yet."""
    try:
        return numba.threading_layer()
    except ValueError:
        _touch_pool(np.zeros(2))
        return numba.threading_layer()


def parallel_min_particles() -> int:
    """Particle count from which the parallel kernels pay (see above)."""
    layer = threading_layer()
    return PARALLEL_MIN_FAST_POOL if layer in ("omp", "tbb") else PARALLEL_MIN_SLOW_POOL


def run_parallel(particles: int) -> bool:
    """Whether a step over ``particles`` particles should use the parallel kernels (on one
    thread, or below :data:`PARALLEL_MIN_FAST_POOL`, the pool is never started)."""
    return (numba.get_num_threads() > 1 and particles >= PARALLEL_MIN_FAST_POOL
            and particles >= parallel_min_particles())
