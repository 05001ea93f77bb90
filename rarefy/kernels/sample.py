"""Accumulate raw velocity moments per cell (sums over particles, float64).

The engine samples twice per step with weight 1/2: after the free flight (before
collisions) and after the collisions (the cell moments inside the collision kernel,
``rarefy.kernels.collide``, while each cell is in cache). Collisions relax the shear stress and heat
flux, which the next flight rebuilds, so a sample taken on one side only is biased by
O(dt p / mu) (about -7 % in shear at dt = 0.17 tau when taken after collisions); the
average of the two is the flux carried during the flight to O(dt^2). Conserved
moments (n, u, T, p) are the same in both samples.

Division into physical fields happens once, in ``rarefy.post.fields``.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import (
    H_SPEED, H_VX, H_VY, H_VZ, JIT, PM_C, PM_C2, PM_EROT, PM_VX, PM_VXX, PM_VXY, PM_VXZ, PM_VY, PM_VYY,
    PM_VYZ, PM_VZ, PM_VZZ, PM_W, M_C2, M_C2VX, M_C2VY, M_EROT, M_EVIB, M_EVX, M_EVY, M_N, N_MOMENTS, M_VX, M_VXX, M_VXY, M_VXZ, M_VY, M_VYY, M_VYZ, M_VZ,
    M_VZZ,
)


@njit(inline="always", **JIT)
def add_cell_moments(lo, hi, vx, vy, vz, eint, acc, c, weight):
    """Add ``weight`` times the moments of particles lo..hi-1 (cell ``c``) to
    ``acc[c, :N_MOMENTS]``; the sums of the internal-energy rows ``eint`` (rotation,
    vibration: as many as the gas has) go to M_EROT, M_EVIB, their total times vx, vy to
    M_EVX, M_EVY."""
    s_n = 0.0
    s_x = s_y = s_z = 0.0
    s_xx = s_yy = s_zz = s_xy = s_xz = s_yz = 0.0
    s_cx = s_cy = s_c2 = 0.0
    for i in range(lo, hi):
        u = vx[i]
        v = vy[i]
        w = vz[i]
        c2 = u * u + v * v + w * w
        s_n += 1.0
        s_x += u
        s_y += v
        s_z += w
        s_xx += u * u
        s_yy += v * v
        s_zz += w * w
        s_xy += u * v
        s_xz += u * w
        s_yz += v * w
        s_cx += c2 * u
        s_cy += c2 * v
        s_c2 += c2
    acc[c, M_N] += weight * s_n
    acc[c, M_VX] += weight * s_x
    acc[c, M_VY] += weight * s_y
    acc[c, M_VZ] += weight * s_z
    acc[c, M_VXX] += weight * s_xx
    acc[c, M_VYY] += weight * s_yy
    acc[c, M_VZZ] += weight * s_zz
    acc[c, M_VXY] += weight * s_xy
    acc[c, M_VXZ] += weight * s_xz
    acc[c, M_VYZ] += weight * s_yz
    acc[c, M_C2VX] += weight * s_cx
    acc[c, M_C2VY] += weight * s_cy
    acc[c, M_C2] += weight * s_c2
    ne = eint.shape[0]
    if ne > 0:
        s_r = s_v = s_ex = s_ey = 0.0
        for i in range(lo, hi):
            e = eint[0, i]
            s_r += e
            if ne > 1:
                s_v += eint[1, i]
                e += eint[1, i]
            s_ex += e * vx[i]
            s_ey += e * vy[i]
        acc[c, M_EROT] += weight * s_r
        acc[c, M_EVIB] += weight * s_v
        acc[c, M_EVX] += weight * s_ex
        acc[c, M_EVY] += weight * s_ey


@njit(**JIT)
def add_cell_moments_mixed(lo, hi, vx, vy, vz, eint, spc, acc, c, weight):
    """:func:`add_cell_moments` of a mixture: particle i's moments go to the columns of
    its species, spc[i] * N_MOMENTS + M_* (internal energies per unit mass of the
    species)."""
    ne = eint.shape[0]
    for i in range(lo, hi):
        o = int(spc[i]) * N_MOMENTS
        u = vx[i]
        v = vy[i]
        w = vz[i]
        c2 = u * u + v * v + w * w
        acc[c, o + M_N] += weight
        acc[c, o + M_VX] += weight * u
        acc[c, o + M_VY] += weight * v
        acc[c, o + M_VZ] += weight * w
        acc[c, o + M_VXX] += weight * u * u
        acc[c, o + M_VYY] += weight * v * v
        acc[c, o + M_VZZ] += weight * w * w
        acc[c, o + M_VXY] += weight * u * v
        acc[c, o + M_VXZ] += weight * u * w
        acc[c, o + M_VYZ] += weight * v * w
        acc[c, o + M_C2VX] += weight * c2 * u
        acc[c, o + M_C2VY] += weight * c2 * v
        acc[c, o + M_C2] += weight * c2
        if ne > 0:
            e = eint[0, i]
            acc[c, o + M_EROT] += weight * e
            if ne > 1:
                acc[c, o + M_EVIB] += weight * eint[1, i]
                e += eint[1, i]
            acc[c, o + M_EVX] += weight * e * u
            acc[c, o + M_EVY] += weight * e * v


@njit(**JIT)
def sample_probes(box, cells, cell_start, nsub, key_start, cell_wt, x, y, vx, vy, vz, eint,
                  spc, nsp, vmax, mom, hist, weight):
    """Add ``weight`` times the velocity sums and histograms of the particles inside each
    probe.

    ``box[q] = x0, x1, y0, y1`` is probe q's rectangle (m) and
    ``cells[cell_start[q]:cell_start[q + 1]]`` the cells it overlaps; a particle counts
    with its cell's weight factor ``cell_wt`` (radial weighting). ``mom[q]`` receives the
    PM_* sums (PM_EROT, PM_EVIB from the rows of ``eint``; a mixture of ``nsp`` species
    uses row q * nsp + spc[i] of ``mom`` and ``hist``), ``hist[q, H_*, b]`` the speed histogram on [0, vmax) and the component
    histograms on [-vmax, vmax), bin ``nb`` (the last) collecting what falls outside.
    """
    nb = hist.shape[2] - 1
    ns2 = nsub * nsub
    inv_s = nb / vmax
    inv_c = 0.5 * nb / vmax
    for q in range(box.shape[0]):
        x0 = box[q, 0]
        x1 = box[q, 1]
        y0 = box[q, 2]
        y1 = box[q, 3]
        for k in range(cell_start[q], cell_start[q + 1]):
            c = cells[k]
            w = weight * cell_wt[c]
            for i in range(key_start[c * ns2], key_start[(c + 1) * ns2]):
                if x[i] < x0 or x[i] >= x1 or y[i] < y0 or y[i] >= y1:
                    continue
                row = q * nsp + int(spc[i]) if nsp > 1 else q
                u = vx[i]
                v = vy[i]
                t = vz[i]
                c2 = u * u + v * v + t * t
                s = np.sqrt(c2)
                mom[row, PM_W] += w
                mom[row, PM_VX] += w * u
                mom[row, PM_VY] += w * v
                mom[row, PM_VZ] += w * t
                mom[row, PM_VXX] += w * u * u
                mom[row, PM_VYY] += w * v * v
                mom[row, PM_VZZ] += w * t * t
                mom[row, PM_VXY] += w * u * v
                mom[row, PM_VXZ] += w * u * t
                mom[row, PM_VYZ] += w * v * t
                mom[row, PM_C] += w * s
                mom[row, PM_C2] += w * c2
                for e in range(eint.shape[0]):
                    mom[row, PM_EROT + e] += w * eint[e, i]
                b = int(s * inv_s)
                hist[row, H_SPEED, b if b < nb else nb] += w
                for h, comp in ((H_VX, u), (H_VY, v), (H_VZ, t)):
                    f = (comp + vmax) * inv_c
                    b = int(f) if f >= 0.0 else nb
                    hist[row, h, b if b < nb else nb] += w
