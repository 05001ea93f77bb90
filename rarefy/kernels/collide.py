"""No-Time-Counter (NTC) collisions for HS, VHS and VSS molecules, of one species or a
mixture, fused with the cell sampling.

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

The cells are independent, so the loop over them runs in parallel (``prange``).
Random numbers come from one counter-based stream per cell keyed by (seed, step,
cell) (``rarefy.kernels.rng``), so the result does not depend on the thread count.
A point uniform in the unit disk gives the azimuth without sine or cosine and, through
its squared radius q (uniform on (0, 1), independent of the azimuth), the deflection:
isotropic directions are then Marsaglia's (1972) (2q - 1, 2u sqrt(1 - q), 2v sqrt(1 - q)).

Molecules with internal energy (``ip[k, IP_ROT_DOF]`` > 0) exchange it with the pair's
relative motion by Larsen-Borgnakke before the scattering (``rarefy.kernels.internal``);
the relative speed is then sqrt(4 E_t / m) of the new translational energy.
With Parker's Z_rot or Millikan-White's Z_vib the cell's translational temperature (of
its particles before the collisions, with the N / (N - 1) correction) sets the
probabilities.

Mixtures: candidates are drawn from all molecules of the cell with one (sigma c_r)_max
over all pairs and accepted with the pair's own sigma_pq c_r (mixing rules in
``rarefy.gas.mixture``), which gives every pair its kinetic-theory rate; the pair scatters
about its centre of mass (masses m_p, m_q). Molecules of a mixture exchange internal
energy by ``rarefy.kernels.internal.exchange_mixed`` with the pair's reduced mass
(E_t = m_r c_r^2 / 2) and omega_pq; with Parker's or Millikan-White's numbers the cell's
temperature is that of all its molecules about their mass-averaged velocity.

When sampling, each cell's moments are added with weight 1/2 before and after its
collisions while the cell is in cache (see ``rarefy.kernels.sample``).
"""

import numpy as np
from numba import njit, prange

from rarefy.kernels.config import (
    IP_M_OVER_K, IP_ROT_DOF, IP_ROT_MODE, IP_VIB_MODE, IP_VIB_TH, JIT, serial_and_parallel,
)
from rarefy.kernels.internal import cell_probabilities, exchange, exchange_mixed, inverse_numbers
from rarefy.kernels.rng import stream, uniform, unit_disk
from rarefy.kernels.sample import add_cell_moments, add_cell_moments_mixed


@njit(inline="always", **JIT)
def scatter(s, urx, ury, urz, cr, alpha):
    """(next counter, post-collision relative velocity) for a VSS (alpha) or VHS/HS
    (alpha = 1) pair of relative speed ``cr`` > 0."""
    s, ce, se, q = unit_disk(s)
    if alpha == 1.0:
        # isotropic: direction independent of the incoming one
        f = 2.0 * cr * np.sqrt(1.0 - q) * np.sqrt(q)
        return s, cr * (2.0 * q - 1.0), f * ce, f * se
    cosx = 2.0 * q ** (1.0 / alpha) - 1.0
    sinx = np.sqrt(max(0.0, 1.0 - cosx * cosx))
    vw = np.sqrt(ury * ury + urz * urz)
    if vw > 1e-10 * cr:
        nx = cosx * urx + sinx * se * vw
        ny = cosx * ury + sinx * (cr * urz * ce - urx * ury * se) / vw
        nz = cosx * urz - sinx * (cr * ury * ce + urx * urz * se) / vw
        return s, nx, ny, nz
    sg = 1.0 if urx >= 0.0 else -1.0
    return s, sg * cr * cosx, cr * sinx * ce, cr * sinx * se


@njit(**JIT)
def cell_temperature(lo, hi, vx, vy, vz, m_over_k):
    """Translational temperature (K) of particles lo..hi-1, with the N / (N - 1)
    correction for the sample mean."""
    n = hi - lo
    sx = sy = sz = s2 = 0.0
    for i in range(lo, hi):
        sx += vx[i]
        sy += vy[i]
        sz += vz[i]
        s2 += vx[i] * vx[i] + vy[i] * vy[i] + vz[i] * vz[i]
    var = (s2 - (sx * sx + sy * sy + sz * sz) / n) / (n - 1)
    return m_over_k * var / 3.0


@njit(**JIT)
def cell_temperature_mixed(lo, hi, vx, vy, vz, spc, mr, m_over_k):
    """Translational temperature (K) of a mixture's particles lo..hi-1 of masses
    ``mr[spc[i]]`` (reference masses; ``m_over_k`` = m_ref / k): sum m (c - u)^2 / (3 k)
    about the mass-averaged velocity u, over N - 1."""
    sm = smx = smy = smz = s2 = 0.0
    for i in range(lo, hi):
        m = mr[int(spc[i])]
        sm += m
        smx += m * vx[i]
        smy += m * vy[i]
        smz += m * vz[i]
        s2 += m * (vx[i] * vx[i] + vy[i] * vy[i] + vz[i] * vz[i])
    return m_over_k * (s2 - (smx * smx + smy * smy + smz * smz) / sm) / (3.0 * (hi - lo - 1))


@njit(inline="always", **JIT)
def _moments(lo, hi, vx, vy, vz, eint, spc, nsp, moments, c, weight):
    if nsp > 1:
        add_cell_moments_mixed(lo, hi, vx, vy, vz, eint, spc, moments, c, weight)
    else:
        add_cell_moments(lo, hi, vx, vy, vz, eint, moments, c, weight)


@njit(**JIT)
def _collide_mixed(s, i, j, urx, ury, urz, cr, vx, vy, vz, spc, mr, a_pair, e_pair, al_pair,
                   cmax, eint, ip, zc, inner):
    """One candidate pair of a mixture: accept with sigma_pq c_r / (sigma c_r)_max,
    exchange internal energy when ``inner`` (``zc[k]``: species k's inverse collision
    numbers in this cell) and scatter about the centre of mass (masses m_p, m_q).
    Returns (counter, sigma c_r if accepted, else -sigma c_r)."""
    p = int(spc[i])
    q = int(spc[j])
    sigcr = a_pair[p, q] * cr ** e_pair[p, q]
    s, r = uniform(s)
    if r * max(cmax, sigcr) > sigcr:
        return s, -sigcr
    mi = mr[p]
    mj = mr[q]
    msum = mi + mj
    cmx = (mi * vx[i] + mj * vx[j]) / msum
    cmy = (mi * vy[i] + mj * vy[j]) / msum
    cmz = (mi * vz[i] + mj * vz[j]) / msum
    if inner:
        m_red = mi * mj / msum
        et = 0.5 * m_red * cr * cr
        s, et = exchange_mixed(s, eint, i, j, et, mi, mj, ip[p], ip[q], zc[p], zc[q],
                               1.0 - 0.5 * e_pair[p, q])
        crn = np.sqrt(2.0 * et / m_red)
        f = crn / cr
        urx *= f
        ury *= f
        urz *= f
        cr = crn
    s, nx, ny, nz = scatter(s, urx, ury, urz, cr, al_pair[p, q])
    fi = mj / msum
    fj = mi / msum
    vx[i] = cmx + fi * nx
    vy[i] = cmy + fi * ny
    vz[i] = cmz + fi * nz
    vx[j] = cmx - fj * nx
    vy[j] = cmy - fj * ny
    vz[j] = cmz - fj * nz
    return s, sigcr


def collide_cells_py(ncell, nsub, key_start, x, y, vx, vy, vz, volume, sigcr_max, remainder,
                  cell_fnum, dt, a_coef, exponent, alpha, eint, ip, spc, mr, a_pair, e_pair,
                  al_pair, rng_key, moments, sampling, stats):
    """NTC collisions in every cell; with ``sampling``, also the cell moments.

    Parameters
    ----------
    key_start : int64[ncell * nsub^2 + 1], first slot of every (cell, sub-cell) key.
    volume : float64[ncell], cell volume in m^3 (0 for cells inside solids).
    sigcr_max, remainder : float64[ncell], kept between steps.
    cell_fnum : float64[ncell], real molecules per simulated particle in each cell.
    a_coef, exponent : sigma_T c_r = a_coef * c_r**exponent (m^3/s).
    eint : float64[rows, capacity], internal energies per unit mass (rows: rotation, then
        vibration; none for a monatomic gas); ``ip[k]`` the parameters (``IP_*``) of
        species k.
    spc, mr, a_pair, e_pair, al_pair : mixtures of nsp = len(mr) > 1 species: the
        species row, the masses over the reference mass, and per pair (p, q) the
        sigma_T c_r coefficient, exponent and VSS alpha (``rarefy.gas.mixture``; one
        species: a_coef, exponent, alpha apply and these are not read).
    rng_key : uint64, this step's key of the per-cell random streams.
    moments : float64[ncell, nsp * N_MOMENTS] receives half the moments before and half
        after the collisions when ``sampling`` (species k in columns k * N_MOMENTS + M_*).
    stats : float64[3] accumulates (collisions, sum of pair separations (m), candidates);
        a longer array also counts collisions per pair p * nsp + q at 3 + (p the species
        of the molecule drawn first; per cell, then summed in cell order).
    """
    ns2 = nsub * nsub
    nsp = mr.shape[0]
    pairs = stats.shape[0] > 3
    hard = exponent == 1.0
    inner = eint.shape[0] > 0
    per_cell = False
    for k in range(nsp):
        per_cell = per_cell or (ip[k, IP_ROT_DOF] > 0.0 and (
            ip[k, IP_ROT_MODE] == 1.0 or (ip[k, IP_VIB_TH] > 0.0
                                          and ip[k, IP_VIB_MODE] == 1.0)))
    ip0 = ip[0]
    # a mixture's inverse collision numbers, per cell and species (rotation, vibration)
    zinv = np.empty((ncell if inner and nsp > 1 else 1, nsp, 2))
    n_coll = 0.0                  # whole numbers: their parallel sum is exact
    n_cand = 0.0
    sep_cell = np.zeros(ncell)    # summed in cell order below, whatever the threads
    pair_cell = np.zeros((ncell if pairs else 1, nsp * nsp))
    for c in prange(ncell):
        lo = key_start[c * ns2]
        hi = key_start[(c + 1) * ns2]
        npart = hi - lo
        if sampling and npart > 0:
            _moments(lo, hi, vx, vy, vz, eint, spc, nsp, moments, c, 0.5)
        if npart < 2 or volume[c] <= 0.0:
            if sampling and npart > 0:
                _moments(lo, hi, vx, vy, vz, eint, spc, nsp, moments, c, 0.5)
            continue
        expected = 0.5 * npart * (npart - 1) * cell_fnum[c] * sigcr_max[c] * dt / volume[c] \
            + remainder[c]
        ncand = int(expected)
        remainder[c] = expected - ncand
        s = stream(rng_key, c)
        cmax = sigcr_max[c]
        prot = 0.0
        pvib = 0.0
        if inner:
            t_cell = 0.0
            if nsp > 1:
                if per_cell and ncand > 0:
                    t_cell = cell_temperature_mixed(lo, hi, vx, vy, vz, spc, mr,
                                                    ip0[IP_M_OVER_K] / mr[0])
                for k in range(nsp):
                    zinv[c, k, 0], zinv[c, k, 1] = inverse_numbers(ip[k], t_cell)
            else:
                if per_cell and ncand > 0:
                    t_cell = cell_temperature(lo, hi, vx, vy, vz, ip0[IP_M_OVER_K])
                prot, pvib = cell_probabilities(ip0, t_cell)
        c_coll = 0
        c_sep = 0.0
        for _ in range(ncand):
            s, r = uniform(s)
            i = lo + int(r * npart)
            if i >= hi:
                i = hi - 1
            # sub-cell of i: search its key range
            k = c * ns2
            while key_start[k + 1] <= i:
                k += 1
            slo = key_start[k]
            shi = key_start[k + 1]
            s, r = uniform(s)
            if shi - slo >= 2:
                j = slo + int(r * (shi - slo - 1))
                if j >= i:
                    j += 1
            else:
                j = lo + int(r * (npart - 1))
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
            if nsp > 1:
                if inner:
                    s, ok = _collide_mixed(s, i, j, urx, ury, urz, cr, vx, vy, vz, spc, mr,
                                           a_pair, e_pair, al_pair, cmax, eint, ip, zinv[c],
                                           True)
                else:
                    s, ok = _collide_mixed(s, i, j, urx, ury, urz, cr, vx, vy, vz, spc, mr,
                                           a_pair, e_pair, al_pair, cmax, eint, ip, zinv[0],
                                           False)
                if ok < 0.0:        # rejected; -ok is sigma c_r (the maximum may rise)
                    cmax = max(cmax, -ok)
                    continue
                cmax = max(cmax, ok)
                if pairs:
                    pair_cell[c, int(spc[i]) * nsp + int(spc[j])] += 1.0
                c_coll += 1
                dxs = x[i] - x[j]
                dys = y[i] - y[j]
                c_sep += np.sqrt(dxs * dxs + dys * dys)
                continue
            sigcr = a_coef * cr if hard else a_coef * cr ** exponent
            if sigcr > cmax:
                cmax = sigcr
            s, r = uniform(s)
            if r * cmax > sigcr:
                continue
            if pairs:
                pair_cell[c, 0] += 1.0
            cmx = 0.5 * (vx[i] + vx[j])
            cmy = 0.5 * (vy[i] + vy[j])
            cmz = 0.5 * (vz[i] + vz[j])
            if inner:
                et = 0.25 * cr * cr
                s, et = exchange(s, eint, i, j, et, prot, pvib, ip0)
                crn = 2.0 * np.sqrt(et)
                f = crn / cr
                urx *= f
                ury *= f
                urz *= f
                cr = crn          # 0 only if rotation took all: scatter then gives 0
            s, nx, ny, nz = scatter(s, urx, ury, urz, cr, alpha)
            vx[i] = cmx + 0.5 * nx
            vy[i] = cmy + 0.5 * ny
            vz[i] = cmz + 0.5 * nz
            vx[j] = cmx - 0.5 * nx
            vy[j] = cmy - 0.5 * ny
            vz[j] = cmz - 0.5 * nz
            c_coll += 1
            dxs = x[i] - x[j]
            dys = y[i] - y[j]
            c_sep += np.sqrt(dxs * dxs + dys * dys)
        sigcr_max[c] = cmax
        if sampling:
            _moments(lo, hi, vx, vy, vz, eint, spc, nsp, moments, c, 0.5)
        n_coll += c_coll
        sep_cell[c] = c_sep
        n_cand += ncand
    sep = 0.0
    for c in range(ncell):
        sep += sep_cell[c]
    stats[0] += n_coll
    stats[1] += sep
    stats[2] += n_cand
    if pairs:
        for c in range(ncell):
            for k in range(nsp * nsp):
                stats[3 + k] += pair_cell[c, k]


collide_cells, collide_cells_par = serial_and_parallel(collide_cells_py)
