"""Accumulate raw velocity moments per cell (sums over particles, float64).

The engine samples twice per step with weight 1/2: after the free flight (before
collisions) and after the collisions. Collisions relax the shear stress and heat
flux, which the next flight rebuilds, so a sample taken on one side only is biased by
O(dt p / mu) (about -7 % in shear at dt = 0.17 tau when taken after collisions); the
average of the two is the flux carried during the flight to O(dt^2). Conserved
moments (n, u, T, p) are the same in both samples.

Division into physical fields happens once, in ``rarefy.post.fields``.
"""

from numba import njit

from rarefy.kernels.config import (
    JIT, M_C2, M_C2VX, M_C2VY, M_N, M_VX, M_VXX, M_VXY, M_VXZ, M_VY, M_VYY, M_VYZ, M_VZ,
    M_VZZ,
)


@njit(**JIT)
def sample_cells(ncell, nsub, key_start, vx, vy, vz, acc, weight):
    """Add ``weight`` times the moments of every cell's particles to
    ``acc[ncell, N_MOMENTS]``."""
    ns2 = nsub * nsub
    for c in range(ncell):
        lo = key_start[c * ns2]
        hi = key_start[(c + 1) * ns2]
        if hi == lo:
            continue
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
