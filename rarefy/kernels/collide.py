"""No-Time-Counter (NTC) collisions for HS, VHS and VSS molecules (one species).

Per cell, the number of candidate pairs is (1/2) N (N - 1) F_N (sigma c_r)_max dt / V_c,
with the fractional part carried to the next step; a candidate is accepted with
probability sigma c_r / (sigma c_r)_max (Bird 1994, sec. 11.1, NTC scheme; the
N (N - 1) form replaces N * mean(N) without bias). The first molecule is drawn
from the cell, its partner from the same sub-cell when that holds another
molecule, else from the cell, which keeps the mean collision separation well
below the mean free path.

Cross-section: sigma_T c_r = A c_r^(2 - 2 omega) (VHS/VSS, Bird 1994 eq. 4.63;
hard spheres are omega = 1/2). Scattering: cos(chi) = 2 R^(1/alpha) - 1 (VSS,
Koura & Matsumoto 1991; alpha = 1 is isotropic VHS/HS), applied relative to
the pre-collision relative velocity (Bird 1994 eq. 2.22). Momentum and energy
are conserved to round-off.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import JIT


@njit(**JIT)
def scatter(urx, ury, urz, alpha):
    """Post-collision relative velocity for a VSS (alpha) or VHS (alpha = 1) pair."""
    cr = np.sqrt(urx * urx + ury * ury + urz * urz)
    if alpha == 1.0:
        cosx = 2.0 * np.random.random() - 1.0
    else:
        cosx = 2.0 * np.random.random() ** (1.0 / alpha) - 1.0
    sinx = np.sqrt(max(0.0, 1.0 - cosx * cosx))
    eps = 2.0 * np.pi * np.random.random()
    ce = np.cos(eps)
    se = np.sin(eps)
    if alpha == 1.0:
        # isotropic: direction independent of the incoming one
        return cr * cosx, cr * sinx * ce, cr * sinx * se
    vw = np.sqrt(ury * ury + urz * urz)
    if vw > 1e-10 * cr:
        nx = cosx * urx + sinx * se * vw
        ny = cosx * ury + sinx * (cr * urz * ce - urx * ury * se) / vw
        nz = cosx * urz - sinx * (cr * ury * ce + urx * urz * se) / vw
        return nx, ny, nz
    s = 1.0 if urx >= 0.0 else -1.0
    return s * cr * cosx, cr * sinx * ce, cr * sinx * se


@njit(**JIT)
def collide_cells(ncell, nsub, key_start, x, y, vx, vy, vz, volume, sigcr_max, remainder,
                  cell_fnum, dt, a_coef, exponent, alpha, stats):
    """NTC collisions in every cell.

    Parameters
    ----------
    key_start : int64[ncell * nsub^2 + 1], first slot of every (cell, sub-cell) key.
    volume : float64[ncell], cell volume in m^3 (0 for cells inside solids).
    sigcr_max, remainder : float64[ncell], kept between steps.
    cell_fnum : float64[ncell], real molecules per simulated particle in each cell.
    a_coef, exponent : sigma_T c_r = a_coef * c_r**exponent (m^3/s).
    stats : float64[3] accumulates (collisions, sum of pair separations (m), candidates).
    """
    ns2 = nsub * nsub
    for c in range(ncell):
        lo = key_start[c * ns2]
        hi = key_start[(c + 1) * ns2]
        npart = hi - lo
        if npart < 2 or volume[c] <= 0.0:
            continue
        expected = 0.5 * npart * (npart - 1) * cell_fnum[c] * sigcr_max[c] * dt / volume[c] \
            + remainder[c]
        ncand = int(expected)
        remainder[c] = expected - ncand
        stats[2] += ncand
        for _ in range(ncand):
            i = lo + int(np.random.random() * npart)
            if i >= hi:
                i = hi - 1
            # sub-cell of i: search its key range
            k = c * ns2
            while key_start[k + 1] <= i:
                k += 1
            slo = key_start[k]
            shi = key_start[k + 1]
            if shi - slo >= 2:
                j = slo + int(np.random.random() * (shi - slo - 1))
                if j >= i:
                    j += 1
            else:
                j = lo + int(np.random.random() * (npart - 1))
                if j >= i:
                    j += 1
            if j >= hi:
                j = hi - 1
            urx = vx[i] - vx[j]
            ury = vy[i] - vy[j]
            urz = vz[i] - vz[j]
            cr = np.sqrt(urx * urx + ury * ury + urz * urz)
            if cr == 0.0:
                continue
            sigcr = a_coef * cr ** exponent
            if sigcr > sigcr_max[c]:
                sigcr_max[c] = sigcr
            if np.random.random() * sigcr_max[c] > sigcr:
                continue
            cmx = 0.5 * (vx[i] + vx[j])
            cmy = 0.5 * (vy[i] + vy[j])
            cmz = 0.5 * (vz[i] + vz[j])
            nx, ny, nz = scatter(urx, ury, urz, alpha)
            vx[i] = cmx + 0.5 * nx
            vy[i] = cmy + 0.5 * ny
            vz[i] = cmz + 0.5 * nz
            vx[j] = cmx - 0.5 * nx
            vy[j] = cmy - 0.5 * ny
            vz[j] = cmz - 0.5 * nz
            stats[0] += 1.0
            dxs = x[i] - x[j]
            dys = y[i] - y[j]
            stats[1] += np.sqrt(dxs * dxs + dys * dys)
