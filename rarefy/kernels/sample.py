"""Accumulate raw velocity moments per cell (sums over particles, float64).

Division into physical fields happens once, in ``rarefy.post.fields``.
"""

from numba import njit

from rarefy.kernels.config import (
    JIT, M_C2, M_C2VX, M_C2VY, M_N, M_VX, M_VXX, M_VXY, M_VXZ, M_VY, M_VYY, M_VYZ, M_VZ,
    M_VZZ,
)


@njit(**JIT)
def sample_cells(ncell, nsub, key_start, vx, vy, vz, acc):
    """Add the moments of the particles of every cell to ``acc[ncell, N_MOMENTS]``."""
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
        acc[c, M_N] += s_n
        acc[c, M_VX] += s_x
        acc[c, M_VY] += s_y
        acc[c, M_VZ] += s_z
        acc[c, M_VXX] += s_xx
        acc[c, M_VYY] += s_yy
        acc[c, M_VZZ] += s_zz
        acc[c, M_VXY] += s_xy
        acc[c, M_VXZ] += s_xz
        acc[c, M_VYZ] += s_yz
        acc[c, M_C2VX] += s_cx
        acc[c, M_C2VY] += s_cy
        acc[c, M_C2] += s_c2
