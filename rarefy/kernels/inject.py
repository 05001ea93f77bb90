"""Reservoir inflow: molecules entering through a side from a drifting Maxwellian.

The number entering per step is the one-way flux
Gamma = n v_mp / (2 sqrt(pi)) [exp(-s^2) + sqrt(pi) s (1 + erf(s))], s = u_n / v_mp
(Bird 1994 eq. 4.22) times area and dt, divided by F_N and rounded at random.
The normal velocity follows the flux-weighted half-range distribution
f(z) ~ z exp(-(z - s)^2), z = v_n / v_mp > 0 (Garcia & Wagner 2006), sampled here
by an exact rejection from the envelope (|z - s| + s) exp(-(z - s)^2) for s >= 0
and from z exp(-z^2) with acceptance exp(2 s z) for s < 0. Each molecule then
flies a uniformly random fraction of the step, so inflow is spread over dt.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import JIT, SIDE_XMAX, SIDE_XMIN, SIDE_YMAX, SIDE_YMIN
from rarefy.kernels.internal import inject_internal

# columns of the inflow rows; I_AXI = 1: an end disk of an axisymmetric domain, where
# the radius is drawn with density ~ r; I_SPEC: the species (mixtures: one row per
# species of each piece)
I_SIDE, I_START, I_END, I_POS, I_VMP, I_UX, I_UY, I_UZ, I_AXI, I_SPEC, I_RATE = range(11)
N_INFLOW_COLS = 11


@njit(**JIT)
def flux_weighted_normal(s):
    """Sample z > 0 with density ~ z exp(-(z - s)^2) (speeds in units of v_mp)."""
    if s >= 0.0:
        p_abs = 1.0 / (1.0 + s * np.sqrt(np.pi))
        while True:
            if np.random.random() < p_abs:
                yv = np.sqrt(-np.log(1.0 - np.random.random()))
                if np.random.random() < 0.5:
                    yv = -yv
            else:
                yv = np.random.standard_normal() / np.sqrt(2.0)
            z = s + yv
            if z <= 0.0:
                continue
            if np.random.random() * (abs(yv) + s) <= z:
                return z
    while True:
        z = np.sqrt(-np.log(1.0 - np.random.random()))
        if np.random.random() < np.exp(2.0 * s * z):
            return z


@njit(**JIT)
def inject(inflow, n, x, y, vx, vy, vz, eint, ip, spc, nsp, tfrac):
    """Append the molecules entering this step at index ``n``; returns the new count.

    ``inflow[k]`` holds side, start, end, position of the side, v_mp, drift
    (ux, uy, uz) and the expected number per step. ``tfrac`` receives each new
    molecule's fraction of the step still to fly. Internal energies (``eint``, parameters
    ``ip[k]`` of species k) are drawn in equilibrium at the reservoir's temperature: the flux of
    molecules through a plane is weighted by their velocity only. With ``nsp`` > 1
    species, ``spc`` (the species row) receives each molecule's species.
    """
    m = n
    for k in range(inflow.shape[0]):
        side = int(inflow[k, I_SIDE])
        count = int(inflow[k, I_RATE] + np.random.random())
        vmp = inflow[k, I_VMP]
        sig = vmp / np.sqrt(2.0)
        ux = inflow[k, I_UX]
        uy = inflow[k, I_UY]
        uz = inflow[k, I_UZ]
        for _ in range(count):
            a = inflow[k, I_START]
            b = inflow[k, I_END]
            if inflow[k, I_AXI] > 0.0:
                pos = np.sqrt(a * a + np.random.random() * (b * b - a * a))
            else:
                pos = a + np.random.random() * (b - a)
            if side == SIDE_XMIN or side == SIDE_XMAX:
                sign = 1.0 if side == SIDE_XMIN else -1.0
                vn = vmp * flux_weighted_normal(sign * ux / vmp)
                x[m] = inflow[k, I_POS]
                y[m] = pos
                vx[m] = sign * vn
                vy[m] = uy + sig * np.random.standard_normal()
            else:
                sign = 1.0 if side == SIDE_YMIN else -1.0
                vn = vmp * flux_weighted_normal(sign * uy / vmp)
                x[m] = pos
                y[m] = inflow[k, I_POS]
                vy[m] = sign * vn
                vx[m] = ux + sig * np.random.standard_normal()
            vz[m] = uz + sig * np.random.standard_normal()
            inject_internal(eint, m, ip[int(inflow[k, I_SPEC])], sig * sig)
            if nsp > 1:
                spc[m] = inflow[k, I_SPEC]
            tfrac[m - n] = np.random.random()
            m += 1
    return m


@njit(**JIT)
def seed_generator(seed):
    """Seed the kernels' random stream (numba keeps one per thread)."""
    np.random.seed(seed)
