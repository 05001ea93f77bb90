"""Counter-based random streams for the parallel kernels.

A stream is a 64-bit counter ``s``; each draw adds the golden-ratio increment and
returns the SplitMix64 finaliser of the counter (Steele, Lea & Flood 2014, "Fast
splittable pseudorandom number generators", OOPSLA; the generator passes BigCrush).
A kernel opens one stream per unit of work -- a cell in the collision kernel, a
particle in the move kernel -- from ``stream(key, unit)``, where ``key`` mixes the
run's seed and the step (``step_key``). The numbers a cell or particle draws then
depend only on (seed, step, unit), not on which thread runs it or in what order,
so parallel kernels give the same result for every thread count.

A draw costs a few integer multiplies (about 1 ns), against about 8 ns for numba's
``np.random.random()``; there is no shared state, so threads never contend.

Every function returns the advanced counter with its value: numba cannot update a
scalar argument in place, and tuples of scalars stay in registers.

These helpers are inlined into the kernels, and numba judges a cached kernel stale only
by its own source file: after editing this file, clear the ``__pycache__`` folders of
``rarefy/kernels`` (or set ``NUMBA_CACHE_DIR`` to a new folder) before measuring.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import JIT

_GOLDEN = np.uint64(0x9E3779B97F4A7C15)
_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_UNIT_KEY = np.uint64(0xD1B54A32D192ED03)
_S30 = np.uint64(30)
_S27 = np.uint64(27)
_S31 = np.uint64(31)
_S11 = np.uint64(11)
_TO_UNIT = 1.0 / 9007199254740992.0  # 2^-53


@njit(inline="always", **JIT)
def mix64(z):
    """SplitMix64 finaliser: a bijective avalanche mix of a uint64."""
    z = (z ^ (z >> _S30)) * _M1
    z = (z ^ (z >> _S27)) * _M2
    return z ^ (z >> _S31)


@njit(inline="always", **JIT)
def stream(key, unit):
    """Counter of the stream of work unit ``unit`` (an integer >= 0) under ``key`` (a
    uint64 from :func:`step_key`; cast, so that an int64 key cannot give another
    stream)."""
    return mix64(np.uint64(key) ^ (np.uint64(unit) * _UNIT_KEY))


@njit(inline="always", **JIT)
def uniform(s):
    """(next counter, a double uniform on [0, 1) with 53 random bits)."""
    s = s + _GOLDEN
    return s, np.float64(mix64(s) >> _S11) * _TO_UNIT


@njit(inline="always", **JIT)
def unit_disk(s):
    """(next counter, (cos e, sin e, q)) for an azimuth e uniform on [0, 2 pi), from a
    point (u, v) uniform in the unit disk by rejection (acceptance pi/4): cos e = u /
    sqrt(q), sin e = v / sqrt(q) with q = u^2 + v^2, itself uniform on (0, 1) and
    independent of e (common practice; Marsaglia 1972 for its use on the sphere)."""
    while True:
        s, a = uniform(s)
        s, b = uniform(s)
        u = 2.0 * a - 1.0
        v = 2.0 * b - 1.0
        q = u * u + v * v
        if 0.0 < q < 1.0:
            r = 1.0 / np.sqrt(q)
            return s, u * r, v * r, q


@njit(inline="always", **JIT)
def normal(s):
    """(next counter, a standard normal deviate) by Marsaglia's polar method
    (Marsaglia & Bray 1964): from a point uniform in the unit disk at squared radius q
    and azimuth e, cos(e) sqrt(-2 ln q) is standard normal; the partner deviate
    sin(e) sqrt(-2 ln q) is dropped so that a draw's cost does not depend on history."""
    s, ce, se, q = unit_disk(s)
    return s, ce * np.sqrt(-2.0 * np.log(q))


_MASK = (1 << 64) - 1


def _mix_py(z: int) -> int:
    """``mix64`` in Python integers (for keys made once per step outside the kernels)."""
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & _MASK
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & _MASK
    return z ^ (z >> 31)


def run_key(seed: int) -> int:
    """64-bit key of a run's streams: NumPy's SeedSequence mix of the seed."""
    w = np.random.SeedSequence([int(seed), 0x5EED]).generate_state(2, dtype=np.uint32)
    return (int(w[0]) << 32) | int(w[1])


def step_key(key: int, step: int, salt: int) -> np.uint64:
    """Key of one step's streams of one kernel (``salt`` tells kernels apart)."""
    z = _mix_py((key + (int(step) + 1) * 0x9E3779B97F4A7C15) & _MASK)
    return np.uint64(_mix_py(z ^ ((int(salt) * 0xD1B54A32D192ED03) & _MASK)))
