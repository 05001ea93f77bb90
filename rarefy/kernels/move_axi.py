"""Free flight in an axisymmetric domain, with radial weighting.

State per particle: axial position x, radius r and the velocity (vx, vr, vt) in the
local frame (axial, radial, azimuthal). A flight is straight in 3-D: starting from
(x, r, 0) the particle is at x + vx t, y = r + vr t, z = vt t, so its radius is
r(t) = sqrt((r + vr t)^2 + (vt t)^2); at the end (or at an event) position and
velocity are rotated back into the meridional plane (Bird 1994 sec. 15.1).

Walls, flux planes and domain sides are segments of the (x, r) plane, i.e. disks,
cylinders and cones: the meeting time solves a linear (disk) or quadratic (cone,
cylinder) equation. At a hit the frame is rotated to the hit point, where the
surface normal lies in the meridional plane, and the planar gas-surface model
(``rarefy.kernels.move.reflect``) applies unchanged.

Radial weighting: a particle in radial row j stands for (2j + 1) F_N molecules.
Moving to a row of larger weight it survives with probability w_old / w_new;
moving to a row of smaller weight it gains on average w_old / w_new - 1 duplicates,
placed where it is (Bird 1994 sec. 15.2). Independent random rounding of these numbers
would let the amount of gas random-walk without bound in a closed vessel, so the
rounding remainders of gains and of losses are carried per row (error diffusion, each
from a random start): each row's count stays within about one molecule of its
expectation. Gains and losses keep separate remainders: a shared one let deletions
owed by outward movers fall on inward movers and biased the radial flux (13 %
excess density near the axis upstream of an orifice at delta = 10). Duplicates are written into the
particle arrays after the first ``n`` particles.
"""

import numpy as np
from numba import njit, prange

from rarefy.kernels.config import (
    BND_ABSORB, BND_PERIODIC, JIT, P_ACC, P_END, P_SIGMA, P_START, P_VEL, SIDE_XMAX,
    SIDE_XMIN, SIDE_YMAX, W_ACC, W_SIGMA, W_VEL, W_X0, W_X1, W_Y0, W_Y1, serial_and_parallel,
)
from rarefy.kernels.move import (
    MAX_EVENTS, _facet_of, _tally_surface, cell_key, chunk_bounds, chunks, find_piece,
    reflect, side_frame, tally_crossing,
)
from rarefy.kernels.internal import wall_internal
from rarefy.kernels.rng import stream


@njit(inline="always", **JIT)
def surface_hit(px, pr, ux, ur, ut, ax, ar, bx, br, tmin):
    """First time t > tmin at which the flight meets the surface of revolution of the
    segment a-b, and the hit's fraction s along a -> b; (inf, -1) when it does not."""
    ex = bx - ax
    er = br - ar
    if ex == 0.0:  # disk or annulus at x = ax
        if ux == 0.0:
            return np.inf, -1.0
        t = (ax - px) / ux
        if t <= tmin:
            return np.inf, -1.0
        y = pr + ur * t
        z = ut * t
        s = (np.sqrt(y * y + z * z) - ar) / er
        if s < 0.0 or s > 1.0:
            return np.inf, -1.0
        return t, s
    k = er / ex
    c0 = ar + k * (px - ax)   # radius of the cone at the particle's x
    ck = k * ux               # its rate of change along the flight
    qa = ur * ur + ut * ut - ck * ck
    qb = 2.0 * (pr * ur - c0 * ck)
    qc = pr * pr - c0 * c0
    if qa == 0.0:
        if qb == 0.0:
            return np.inf, -1.0
        t1 = -qc / qb
        t2 = np.inf
    else:
        disc = qb * qb - 4.0 * qa * qc
        if disc < 0.0:
            return np.inf, -1.0
        sq = np.sqrt(disc)
        q = -0.5 * (qb + sq) if qb >= 0.0 else -0.5 * (qb - sq)
        t1 = q / qa
        t2 = qc / q if q != 0.0 else t1
        if t2 < t1:
            t1, t2 = t2, t1
    for t in (t1, t2):
        if t <= tmin or t == np.inf:
            continue
        if c0 + ck * t < 0.0:   # the mirror cone
            continue
        s = (px + ux * t - ax) / ex
        if 0.0 <= s <= 1.0:
            return t, s
    return np.inf, -1.0


@njit(inline="always", **JIT)
def rotate_to(pr, ur, ut, t):
    """Radius and (vr, vt) after flying time t, in the frame of the new position."""
    y = pr + ur * t
    z = ut * t
    r = np.sqrt(y * y + z * z)
    if r == 0.0:
        return 0.0, np.sqrt(ur * ur + ut * ut), 0.0
    return r, (ur * y + ut * z) / r, (ut * y - ur * z) / r


@njit(**JIT)
def _cross_planes_axi(px, pr, ux, ur, ut, t, planes, ftally, w, k, nsp):
    for p in range(planes.shape[0]):
        tmin = 0.0
        for _ in range(2):   # a line can cross a cone twice
            tc, s = surface_hit(px, pr, ux, ur, ut, planes[p, 0], planes[p, 1],
                                planes[p, 2], planes[p, 3], tmin)
            if tc > t or s >= 1.0:
                break
            tmin = tc
            _, vr, vt = rotate_to(pr, ur, ut, tc)
            ex = planes[p, 2] - planes[p, 0]
            er = planes[p, 3] - planes[p, 1]
            tally_crossing(ftally, planes, p, p * nsp + k, ux * er - vr * ex > 0.0,
                           ux * ux + ur * ur + ut * ut, w)


@njit(inline="always", **JIT)
def move_one_axi(i, t, x, r, vx, vr, vt, eint, ip, spc, sfac, segs, seg_tally, box, pieces,
                 piece_int, planes, stally, ftally, sampling, nudge, w, rng_key):
    """Move particle ``i`` for time ``t`` (s); False if it left the domain. Surface
    interactions draw from the particle's stream under ``rng_key`` and accommodate the
    internal energies ``eint`` (species k's parameters ``ip[k]``;
    ``rarefy.kernels.internal``). Species as in ``rarefy.kernels.move.move_one``."""
    s = stream(rng_key, i)
    nsp = sfac.shape[0]
    sp = int(spc[i]) if nsp > 1 else 0
    sf = sfac[sp]
    for _event in range(MAX_EVENTS):
        px = x[i]
        pr = r[i]
        ux = vx[i]
        ur = vr[i]
        ut = vt[i]
        t_hit = t
        k_hit = -1
        s_hit = 0.0
        for k in range(segs.shape[0]):
            tk, sk = surface_hit(px, pr, ux, ur, ut, segs[k, W_X0], segs[k, W_Y0],
                                 segs[k, W_X1], segs[k, W_Y1], 0.0)
            if tk < t_hit:
                t_hit = tk
                k_hit = k
                s_hit = sk
        # domain sides: the end disks and the outer cylinder (the axis is never met)
        t_box = np.inf
        side = -1
        if ux > 0.0:
            t_box = (box[1] - px) / ux
            side = SIDE_XMAX
        elif ux < 0.0:
            t_box = (box[0] - px) / ux
            side = SIDE_XMIN
        qa = ur * ur + ut * ut
        if qa > 0.0:
            qb = 2.0 * pr * ur
            qc = pr * pr - box[3] * box[3]
            sq = np.sqrt(max(qb * qb - 4.0 * qa * qc, 0.0))
            tr = (2.0 * qc) / (-qb - sq) if qb >= 0.0 else (-qb + sq) / (2.0 * qa)
            if tr < t_box:
                t_box = tr
                side = SIDE_YMAX
        if t_box < 0.0:
            t_box = 0.0
        if k_hit < 0 and t_box >= t:
            if sampling and planes.shape[0] > 0:
                _cross_planes_axi(px, pr, ux, ur, ut, t, planes, ftally, w, sp, nsp)
            x[i] = px + ux * t
            r[i], vr[i], vt[i] = rotate_to(pr, ur, ut, t)
            return True
        event_t = t_hit if (k_hit >= 0 and t_hit <= t_box) else t_box
        if sampling and planes.shape[0] > 0:
            _cross_planes_axi(px, pr, ux, ur, ut, event_t, planes, ftally, w, sp, nsp)
        hx = px + ux * event_t
        hr, wr, wt = rotate_to(pr, ur, ut, event_t)
        t -= event_t
        if k_hit >= 0 and t_hit <= t_box:
            ex = segs[k_hit, W_X1] - segs[k_hit, W_X0]
            er = segs[k_hit, W_Y1] - segs[k_hit, W_Y0]
            el = np.sqrt(ex * ex + er * er)
            tx = ex / el
            tr_ = er / el
            nx = -tr_
            nr = tx
            if ux * nx + wr * nr > 0.0:
                nx = -nx
                nr = -nr
            s, dif, nvx, nvr, nvt = reflect(s, ux, wr, wt, nx, nr, sf * segs[k_hit, W_SIGMA],
                                            segs[k_hit, W_ACC], segs[k_hit, W_VEL], tx, tr_)
            s, e0, e1 = wall_internal(s, eint, i, dif, sf * segs[k_hit, W_SIGMA], ip[sp])
            if sampling and seg_tally[k_hit, 1] > 0:
                f = _facet_of(seg_tally[k_hit, 0], seg_tally[k_hit, 1], s_hit) * nsp + sp
                _tally_surface(stally, f, ux, wr, wt, nvx, nvr, nvt, nx, nr, tx, tr_, e0, e1,
                               w)
            x[i] = hx + nudge * nx
            r[i] = abs(hr + nudge * nr)
            vx[i] = nvx
            vr[i] = nvr
            vt[i] = nvt
            continue
        # a side of the domain
        if side == SIDE_XMIN or side == SIDE_XMAX:
            hx = box[0] if side == SIDE_XMIN else box[1]
            coord = min(hr, box[3])
        else:
            hr = box[3]
            coord = min(max(hx, box[0]), box[1])
        j = find_piece(pieces, piece_int, side, coord)
        if j < 0 or piece_int[j, 1] == BND_ABSORB:
            x[i] = hx
            r[i] = hr
            return False
        if piece_int[j, 1] == BND_PERIODIC:
            x[i] = box[1] if side == SIDE_XMIN else box[0]
            r[i] = hr
            vr[i] = wr
            vt[i] = wt
            continue
        nx, nr, tx, tr_ = side_frame(side)   # the axis (ymin) is never met
        s, dif, nvx, nvr, nvt = reflect(s, ux, wr, wt, nx, nr, sf * pieces[j, P_SIGMA],
                                        pieces[j, P_ACC], pieces[j, P_VEL], tx, tr_)
        s, e0, e1 = wall_internal(s, eint, i, dif, sf * pieces[j, P_SIGMA], ip[sp])
        if sampling and piece_int[j, 3] > 0:
            frac = (coord - pieces[j, P_START]) / (pieces[j, P_END] - pieces[j, P_START])
            f = _facet_of(piece_int[j, 2], piece_int[j, 3], frac) * nsp + sp
            _tally_surface(stally, f, ux, wr, wt, nvx, nvr, nvt, nx, nr, tx, tr_, e0, e1, w)
        x[i] = hx + nudge * nx
        r[i] = hr + nudge * nr
        vx[i] = nvx
        vr[i] = nvr
        vt[i] = nvt
    return False


def move_all_axi_py(n, first_new, tfrac, dt, x, r, vx, vr, vt, eint, ip, spc, sfac, key, segs,
                    seg_tally, box,
                 pieces, piece_int, planes, stally, ftally, sampling, nudge, nx, ny, dx, dr,
                 nsub, free, row_weight, capacity, balance, rng_key):
    """Move particles 0..n-1 (those from ``first_new`` on for ``tfrac * dt``), apply the
    radial weights and write sort keys (-1: removed).

    The flights run in parallel in fixed chunks (``rarefy.kernels.move.chunks``, with
    per-chunk tallies); ``rng_key`` keys the per-particle streams of the surface
    interactions. The radial weights are then applied in one serial pass in particle
    order, because the rounding remainders are carried from particle to particle.
    Duplicates go to slots n, n+1, ... up to ``capacity``. ``balance[0, j]`` and
    ``balance[1, j]`` carry the fractional molecules not yet added to and removed from
    radial row j (start them at random in [0, 1)). Returns (new particle count,
    duplicates that did not fit).
    """
    nchunk = chunks(n)
    ntally = nchunk if sampling else 1   # without tallies the copies are never written
    tstride = np.int64(1) if sampling else np.int64(0)
    st = np.zeros((ntally,) + stally.shape)
    ft = np.zeros((ntally,) + ftally.shape)
    row_from = np.empty(n, np.int32)     # old radial row of a particle that changed row
    for ch in prange(nchunk):
        lo, hi = chunk_bounds(n, nchunk, ch)
        ti = np.int64(ch) * tstride
        stc = st[ti]
        ftc = ft[ti]
        for i in range(lo, hi):
            row_from[i] = -1
            t = dt if i < first_new else tfrac[i - first_new] * dt
            px = x[i]
            pr = r[i]
            j0 = min(int(pr / dr), ny - 1)
            qx = px + vx[i] * t
            ddr = np.sqrt(vr[i] * vr[i] + vt[i] * vt[i]) * t
            fast = False
            if qx > box[0] and qx < box[1] and abs(qx - px) < dx and ddr < dr \
                    and pr + ddr < box[3]:
                ix = min(max(int((px - box[0]) / dx), 0), nx - 1)
                fast = free[j0 * nx + ix] == 1
            if fast:
                x[i] = qx
                r[i], vr[i], vt[i] = rotate_to(pr, vr[i], vt[i], t)
                alive = True
            else:
                alive = move_one_axi(i, t, x, r, vx, vr, vt, eint, ip, spc, sfac, segs,
                                     seg_tally, box, pieces, piece_int, planes, stc, ftc,
                                     sampling, nudge,
                                     row_weight[j0], rng_key)
            if not alive:
                key[i] = -1
                continue
            key[i] = cell_key(x[i], r[i], box, nx, ny, dx, dr, nsub)
            if min(int(r[i] / dr), ny - 1) != j0:
                row_from[i] = j0
    if sampling:
        for ch in range(nchunk):
            stally += st[ch]
            ftally += ft[ch]
    m = n
    lost = 0
    for i in range(n):
        j0 = row_from[i]
        if j0 < 0:
            continue
        j1 = min(int(r[i] / dr), ny - 1)
        k = key[i]
        # weight change: w0 / w1 - 1 molecules to add (< 0: to remove). Gains and losses
        # each carry their rounding remainder per row (error diffusion), so the gas in a
        # closed vessel stays put and neither kind of move pays for the other
        ratio = row_weight[j0] / row_weight[j1]
        if ratio < 1.0:
            b = balance[1, j1] + 1.0 - ratio
            if b >= 1.0:
                balance[1, j1] = b - 1.0
                key[i] = -1
            else:
                balance[1, j1] = b
            continue
        b = balance[0, j1] + ratio - 1.0
        copies = int(b)
        balance[0, j1] = b - copies
        for _ in range(copies):
            if m >= capacity:
                lost += 1
                continue
            x[m] = x[i]
            r[m] = r[i]
            vx[m] = vx[i]
            vr[m] = vr[i]
            vt[m] = vt[i]
            for e in range(eint.shape[0]):
                eint[e, m] = eint[e, i]
            if sfac.shape[0] > 1:
                spc[m] = spc[i]
            key[m] = k
            m += 1
    return m, lost


move_all_axi, move_all_axi_par = serial_and_parallel(move_all_axi_py)
