"""Free-flight move with wall, boundary and flux-plane events (planar 2-D).

Particles fly straight for the time step; the first event on the way (a wall
segment, a side of the domain) is handled and the flight resumes with the time
left. Gas-surface interaction follows the Maxwell model: with probability
equal to the accommodation coefficient the molecule is re-emitted diffusely at
the wall temperature (normal speed from the flux-weighted half-range
Maxwellian, sqrt(-2 ln R) sqrt(kT_w/m); tangential components Gaussian with
variance kT_w/m; Bird 1994 sec. 12.3), else specularly. A diffusely re-emitted
molecule also takes rotational and vibrational energy in equilibrium at T_w (full
accommodation of internal energy); a specular one keeps its own
(``rarefy.kernels.internal.wall_internal``).

Geometry arrives as plain arrays (see ``rarefy.geometry.planar``):

``segs[k] = x0, y0, x1, y1, sigma, acc, vel``  wall segments,
``seg_tally[k] = first facet, number of facets``,
``box = xmin, xmax, ymin, ymax``,
``pieces[j] = start, end, sigma, acc, vel``  domain-side pieces,
``piece_int[j] = side, kind, first facet, number of facets``,
``planes[p] = x0, y0, x1, y1, bins per (m/s), bins``  flux planes and their speed
histograms.
"""

import numpy as np
from numba import njit, prange

from rarefy.kernels.config import (
    BND_ABSORB, BND_PERIODIC, F_C2_NEG, F_C2_POS, F_C_NEG, F_C_POS, F_HIST, F_N_NEG, F_N_POS,
    JIT, PL_INV_DV, PL_NBINS, serial_and_parallel, P_ACC, P_END, P_SIGMA, P_START, P_VEL, SIDE_XMAX, SIDE_XMIN, SIDE_YMAX, SIDE_YMIN, T_C2_IN, T_C2_OUT,
    T_EI_IN, T_EI_OUT, T_HITS, T_VN_IN, T_VN_OUT, T_VT_IN, T_VT_OUT, W_ACC, W_SIGMA, W_VEL, W_X0, W_X1, W_Y0,
    W_Y1,
)
from rarefy.kernels.internal import wall_internal
from rarefy.kernels.rng import normal, stream, uniform

MAX_EVENTS = 1000  # events in one step before a particle is declared lost
# Tallying moves run in at most MAX_CHUNKS chunks of at least CHUNK_PARTICLES particles.
MAX_CHUNKS = 64
CHUNK_PARTICLES = 8192


@njit(inline="always", **JIT)
def reflect(s, vx, vy, vz, nx, ny, sigma, acc, vel, tx, ty):
    """Post-interaction velocity at a surface with unit normal (nx, ny) into the gas.

    (tx, ty) is the unit tangent along which the wall moves at speed ``vel``; ``s`` is
    the particle's random stream (``rarefy.kernels.rng``). Returns (next counter,
    diffuse, new vx, vy, vz). Diffuse with probability ``acc`` (Maxwell model).
    """
    s, r = uniform(s)
    if r < acc:
        s, r = uniform(s)
        vn = sigma * np.sqrt(-2.0 * np.log(1.0 - r))
        s, g1 = normal(s)
        s, g2 = normal(s)
        vt = sigma * g1 + vel
        return s, True, vn * nx + vt * tx, vn * ny + vt * ty, sigma * g2
    vdotn = vx * nx + vy * ny
    return s, False, vx - 2.0 * vdotn * nx, vy - 2.0 * vdotn * ny, vz


@njit(**JIT)
def _tally_surface(tally, facet, vx0, vy0, vz0, vx1, vy1, vz1, nx, ny, tx, ty, e0, e1, w):
    tally[facet, T_HITS] += w
    tally[facet, T_VN_IN] += -(vx0 * nx + vy0 * ny) * w
    tally[facet, T_VN_OUT] += (vx1 * nx + vy1 * ny) * w
    tally[facet, T_VT_IN] += (vx0 * tx + vy0 * ty) * w
    tally[facet, T_VT_OUT] += (vx1 * tx + vy1 * ty) * w
    tally[facet, T_C2_IN] += (vx0 * vx0 + vy0 * vy0 + vz0 * vz0) * w
    tally[facet, T_C2_OUT] += (vx1 * vx1 + vy1 * vy1 + vz1 * vz1) * w
    tally[facet, T_EI_IN] += e0 * w
    tally[facet, T_EI_OUT] += e1 * w


@njit(inline="always", **JIT)
def ray_segment(px, py, ux, uy, ax, ay, bx, by):
    """Where the ray p + u t meets the line through a, b: (t, s) with the hit at
    a + s (b - a); t = inf when they are parallel."""
    ex = bx - ax
    ey = by - ay
    det = -ux * ey + ex * uy
    if det == 0.0:
        return np.inf, -1.0
    dx = ax - px
    dy = ay - py
    return (-dx * ey + ex * dy) / det, (ux * dy - uy * dx) / det


@njit(**JIT)
def _cross_planes(x, y, vx, vy, vz, t, planes, ftally, w, k, nsp):
    """Tally crossings of the flux planes by the straight path p + v s, 0 < s <= t, by a
    molecule of species ``k`` of ``nsp`` (row p * nsp + k of the tallies)."""
    for p in range(planes.shape[0]):
        s_t, s_p = ray_segment(x, y, vx, vy, planes[p, 0], planes[p, 1], planes[p, 2],
                               planes[p, 3])
        if s_t <= 0.0 or s_t > t or s_p < 0.0 or s_p >= 1.0:
            continue
        ex = planes[p, 2] - planes[p, 0]
        ey = planes[p, 3] - planes[p, 1]
        # right-hand normal (ey, -ex) is the positive direction
        tally_crossing(ftally, planes, p, p * nsp + k, vx * ey - vy * ex > 0.0,
                       vx * vx + vy * vy + vz * vz, w)


@njit(inline="always", **JIT)
def tally_crossing(ftally, planes, p, row, positive, c2, w):
    """Count one crossing of flux plane ``p`` by a molecule of squared speed ``c2`` in
    tally row ``row`` and bin its speed (``planes[p, PL_INV_DV]`` bins per m/s,
    ``planes[p, PL_NBINS]`` bins; faster molecules go to the overflow column)."""
    c = np.sqrt(c2)
    nb = int(planes[p, PL_NBINS])
    b = int(c * planes[p, PL_INV_DV])
    if b > nb:
        b = nb
    if positive:
        ftally[row, F_N_POS] += w
        ftally[row, F_C_POS] += c * w
        ftally[row, F_C2_POS] += c2 * w
        ftally[row, F_HIST + b] += w
    else:
        ftally[row, F_N_NEG] += w
        ftally[row, F_C_NEG] += c * w
        ftally[row, F_C2_NEG] += c2 * w
        ftally[row, F_HIST + nb + 1 + b] += w


@njit(inline="always", **JIT)
def find_piece(pieces, piece_int, side, coord):
    """Index of the boundary piece of ``side`` that holds ``coord``; -1 if none."""
    for q in range(pieces.shape[0]):
        if piece_int[q, 0] == side and pieces[q, P_START] <= coord <= pieces[q, P_END]:
            return q
    return -1


@njit(inline="always", **JIT)
def side_frame(side):
    """Inward unit normal and wall tangent (nx, ny, tx, ty) of a domain side; the
    tangent is +y on the x-sides and +x on the y-sides."""
    if side == SIDE_XMIN:
        return 1.0, 0.0, 0.0, 1.0
    if side == SIDE_XMAX:
        return -1.0, 0.0, 0.0, 1.0
    if side == SIDE_YMIN:
        return 0.0, 1.0, 1.0, 0.0
    return 0.0, -1.0, 1.0, 0.0


@njit(**JIT)
def _facet_of(first, nbins, frac):
    b = int(frac * nbins)
    if b < 0:
        b = 0
    elif b >= nbins:
        b = nbins - 1
    return first + b


@njit(inline="always", **JIT)
def move_one(i, t, x, y, vx, vy, vz, eint, ip, spc, sfac, segs, seg_tally, box, pieces,
             piece_int, planes, stally, ftally, sampling, nudge, rng_key):
    """Move particle ``i`` for time ``t`` (s). Returns False if it left the domain.

    Surface interactions draw from the particle's stream under ``rng_key``; ``eint`` are
    the internal energies and ``ip[k]`` the parameters of species k
    (``rarefy.kernels.internal``). Mixtures: ``spc[i]`` is the particle's species k,
    ``sfac[k]`` = sqrt(m_ref / m_k) scales the walls' sqrt(k T_w / m_ref), and species k
    tallies into rows facet * nsp + k and plane * nsp + k (nsp = len(sfac); one species:
    row = facet)."""
    s = stream(rng_key, i)
    nsp = sfac.shape[0]
    sp = int(spc[i]) if nsp > 1 else 0
    sf = sfac[sp]
    last = -1
    for _event in range(MAX_EVENTS):
        px = x[i]
        py = y[i]
        ux = vx[i]
        uy = vy[i]
        # --- first wall segment on the path
        t_hit = t
        k_hit = -1
        s_hit = 0.0
        for k in range(segs.shape[0]):
            if k == last:
                continue
            s_t, s_s = ray_segment(px, py, ux, uy, segs[k, W_X0], segs[k, W_Y0],
                                   segs[k, W_X1], segs[k, W_Y1])
            if s_t <= 0.0 or s_t > t_hit or s_s < -1e-12 or s_s > 1.0 + 1e-12:
                continue
            t_hit = s_t
            k_hit = k
            s_hit = s_s
        # --- first domain side on the path
        t_box = np.inf
        side = -1
        if ux > 0.0:
            tb = (box[1] - px) / ux
            if tb < t_box:
                t_box = tb
                side = SIDE_XMAX
        elif ux < 0.0:
            tb = (box[0] - px) / ux
            if tb < t_box:
                t_box = tb
                side = SIDE_XMIN
        if uy > 0.0:
            tb = (box[3] - py) / uy
            if tb < t_box:
                t_box = tb
                side = SIDE_YMAX
        elif uy < 0.0:
            tb = (box[2] - py) / uy
            if tb < t_box:
                t_box = tb
                side = SIDE_YMIN
        if t_box < 0.0:
            t_box = 0.0
        if k_hit < 0 and t_box >= t:
            if sampling and planes.shape[0] > 0:
                _cross_planes(px, py, ux, uy, vz[i], t, planes, ftally, 1.0, sp, nsp)
            x[i] = px + ux * t
            y[i] = py + uy * t
            return True
        if k_hit >= 0 and t_hit <= t_box:
            # ---- wall segment event
            if sampling and planes.shape[0] > 0:
                _cross_planes(px, py, ux, uy, vz[i], t_hit, planes, ftally, 1.0, sp, nsp)
            ex = segs[k_hit, W_X1] - segs[k_hit, W_X0]
            ey = segs[k_hit, W_Y1] - segs[k_hit, W_Y0]
            el = np.sqrt(ex * ex + ey * ey)
            tx = ex / el
            ty = ey / el
            nx = -ty
            ny = tx
            if ux * nx + uy * ny > 0.0:  # normal must face the side we came from
                nx = -nx
                ny = -ny
            hx = px + ux * t_hit
            hy = py + uy * t_hit
            w0x, w0y, w0z = ux, uy, vz[i]
            s, dif, nvx, nvy, nvz = reflect(s, w0x, w0y, w0z, nx, ny,
                                            sf * segs[k_hit, W_SIGMA], segs[k_hit, W_ACC],
                                            segs[k_hit, W_VEL], tx, ty)
            s, e0, e1 = wall_internal(s, eint, i, dif, sf * segs[k_hit, W_SIGMA], ip[sp])
            if sampling and seg_tally[k_hit, 1] > 0:
                f = _facet_of(seg_tally[k_hit, 0], seg_tally[k_hit, 1], s_hit) * nsp + sp
                _tally_surface(stally, f, w0x, w0y, w0z, nvx, nvy, nvz, nx, ny, tx, ty, e0,
                               e1, 1.0)
            vx[i] = nvx
            vy[i] = nvy
            vz[i] = nvz
            x[i] = hx + nudge * nx
            y[i] = hy + nudge * ny
            t -= t_hit
            last = k_hit
            continue
        # ---- domain side event
        if sampling and planes.shape[0] > 0:
            _cross_planes(px, py, ux, uy, vz[i], t_box, planes, ftally, 1.0, sp, nsp)
        hx = px + ux * t_box
        hy = py + uy * t_box
        if side == SIDE_XMIN or side == SIDE_XMAX:
            hx = box[0] if side == SIDE_XMIN else box[1]
            hy = min(max(hy, box[2]), box[3])
            coord = hy
        else:
            hy = box[2] if side == SIDE_YMIN else box[3]
            hx = min(max(hx, box[0]), box[1])
            coord = hx
        j = find_piece(pieces, piece_int, side, coord)
        t -= t_box
        last = -1
        if j < 0 or piece_int[j, 1] == BND_ABSORB:
            x[i] = hx
            y[i] = hy
            return False
        if piece_int[j, 1] == BND_PERIODIC:
            if side == SIDE_XMIN:
                hx = box[1]
            elif side == SIDE_XMAX:
                hx = box[0]
            elif side == SIDE_YMIN:
                hy = box[3]
            else:
                hy = box[2]
            x[i] = hx
            y[i] = hy
            continue
        # reflecting side: inward normal, tangent along +x (y-sides) or +y (x-sides)
        nx, ny, tx, ty = side_frame(side)
        w0x, w0y, w0z = ux, uy, vz[i]
        s, dif, nvx, nvy, nvz = reflect(s, w0x, w0y, w0z, nx, ny, sf * pieces[j, P_SIGMA],
                                        pieces[j, P_ACC], pieces[j, P_VEL], tx, ty)
        s, e0, e1 = wall_internal(s, eint, i, dif, sf * pieces[j, P_SIGMA], ip[sp])
        if sampling and piece_int[j, 3] > 0:
            frac = (coord - pieces[j, P_START]) / (pieces[j, P_END] - pieces[j, P_START])
            f = _facet_of(piece_int[j, 2], piece_int[j, 3], frac) * nsp + sp
            _tally_surface(stally, f, w0x, w0y, w0z, nvx, nvy, nvz, nx, ny, tx, ty, e0, e1,
                           1.0)
        vx[i] = nvx
        vy[i] = nvy
        vz[i] = nvz
        x[i] = hx
        y[i] = hy
    return False


@njit(inline="always", **JIT)
def cell_key(px, py, box, nx, ny, dx, dy, nsub):
    """Sort key of a position: cell * nsub^2 + sub-cell (row-major cells)."""
    fx = (px - box[0]) / dx
    fy = (py - box[2]) / dy
    ix = int(fx)
    iy = int(fy)
    if ix < 0:
        ix = 0
    elif ix >= nx:
        ix = nx - 1
    if iy < 0:
        iy = 0
    elif iy >= ny:
        iy = ny - 1
    sx = int((fx - ix) * nsub)
    sy = int((fy - iy) * nsub)
    if sx < 0:
        sx = 0
    elif sx >= nsub:
        sx = nsub - 1
    if sy < 0:
        sy = 0
    elif sy >= nsub:
        sy = nsub - 1
    return ((iy * nx + ix) * nsub + sy) * nsub + sx


@njit(inline="always", **JIT)
def chunks(n):
    """Number of fixed chunks the parallel move loops cut particles 0..n-1 into: each
    chunk tallies into its own copy of the surface and flux-plane sums, added in chunk
    order afterwards, so the sums do not depend on the thread count."""
    return max(1, min(MAX_CHUNKS, n // CHUNK_PARTICLES))


@njit(inline="always", **JIT)
def chunk_bounds(n, nchunk, ch):
    return (n * ch) // nchunk, (n * (ch + 1)) // nchunk


def move_all_py(n, first_new, tfrac, dt, x, y, vx, vy, vz, eint, ip, spc, sfac, key, segs,
                seg_tally, box, pieces, piece_int, planes, stally, ftally, sampling, nudge, nx,
                ny, dx, dy, nsub, free, rng_key):
    """Move particles 0..n-1: older ones for ``dt``, those from ``first_new`` on for
    ``tfrac[i - first_new] * dt``. Writes each particle's sort key (-1: removed).

    ``free[c]`` is 1 where no wall or flux plane touches cell c or its neighbours:
    a flight shorter than a cell that starts there cannot meet one, and if it also
    ends inside the domain it needs no event search (the fast path).

    Particles move in parallel, in :func:`chunks`; ``rng_key`` keys the per-particle
    random streams of the surface interactions. Returns the number of particles removed.
    """
    nchunk = chunks(n)
    ntally = nchunk if sampling else 1   # without tallies the copies are never written
    tstride = np.int64(1) if sampling else np.int64(0)
    st = np.zeros((ntally,) + stally.shape)
    ft = np.zeros((ntally,) + ftally.shape)
    removed = 0
    for ch in prange(nchunk):
        lo, hi = chunk_bounds(n, nchunk, ch)
        ti = np.int64(ch) * tstride
        stc = st[ti]
        ftc = ft[ti]
        gone = 0
        for i in range(lo, hi):
            t = dt if i < first_new else tfrac[i - first_new] * dt
            px = x[i]
            py = y[i]
            qx = px + vx[i] * t
            qy = py + vy[i] * t
            if (qx > box[0] and qx < box[1] and qy > box[2] and qy < box[3]
                    and abs(qx - px) < dx and abs(qy - py) < dy):
                ix = min(max(int((px - box[0]) / dx), 0), nx - 1)
                iy = min(max(int((py - box[2]) / dy), 0), ny - 1)
                if free[iy * nx + ix]:
                    x[i] = qx
                    y[i] = qy
                    key[i] = cell_key(qx, qy, box, nx, ny, dx, dy, nsub)
                    continue
            alive = move_one(i, t, x, y, vx, vy, vz, eint, ip, spc, sfac, segs, seg_tally, box,
                             pieces, piece_int, planes, stc, ftc, sampling, nudge, rng_key)
            if alive:
                key[i] = cell_key(x[i], y[i], box, nx, ny, dx, dy, nsub)
            else:
                key[i] = -1
                gone += 1
        removed += gone
    if sampling:
        for ch in range(nchunk):
            stally += st[ch]
            ftally += ft[ch]
    return removed


move_all, move_all_par = serial_and_parallel(move_all_py)


@njit(**JIT)
def compute_keys(n, x, y, key, box, nx, ny, dx, dy, nsub):
    """Sort keys of particles 0..n-1 (used after particles are added directly)."""
    for i in range(n):
        key[i] = cell_key(x[i], y[i], box, nx, ny, dx, dy, nsub)
