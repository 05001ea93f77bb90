"""How many threads the parallel kernels use.

numba starts with one thread per core (or ``NUMBA_NUM_THREADS``). Processes that share
the machine -- sweep workers, MPI ranks on one node -- each take their share of the cores
so that they do not oversubscribe them: a descheduled thread stalls every parallel
region of its process.
"""

from __future__ import annotations

import os

import numba

__all__ = ["use_threads", "share_of_cores", "run_parallel", "parallel_min_particles"]


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


def parallel_min_particles() -> int:
    """Particle count from which the parallel kernels pay (see above); the slow-pool
    figure until numba has started its pool and can say which layer it uses."""
    try:
        layer = numba.threading_layer()
    except ValueError:
        return PARALLEL_MIN_SLOW_POOL
    return PARALLEL_MIN_FAST_POOL if layer in ("omp", "tbb") else PARALLEL_MIN_SLOW_POOL


def run_parallel(particles: int) -> bool:
    """Whether a step over ``particles`` particles should use the parallel kernels."""
    return numba.get_num_threads() > 1 and particles >= parallel_min_particles()
