"""Internal energy of simulated molecules: Larsen-Borgnakke exchange in collisions and
equilibrium sampling at walls and reservoirs.

The helpers compile once as separate functions (not inlined): the kernels of rare events
(walls) and of molecular collisions call them, and the serial and parallel builds of
every kernel share them, which keeps the cold compile short.

Energies are per unit mass (m^2/s^2), so that with kT/m = sigma^2 a wall or reservoir
needs no mass. ``eint[0]`` holds each particle's rotational energy, ``eint[1]`` its
vibrational energy (whole quanta of k theta / m); the parameters come in one array
``ip`` indexed by ``IP_*`` (``rarefy.kernels.config``).

Rotation (classical, zeta_r dof): the equilibrium energy is Gamma(zeta_r / 2) kT; in a
collision a selected molecule takes the fraction Beta(zeta_r / 2, 5/2 - omega) of the
energy E_c of the pair's relative motion plus its own rotation (Larsen & Borgnakke 1975;
Bird 1994 ch. 5, from memory: the inverse for zeta_r = 2, else the
acceptance-rejection of the beta density by its maximum). Vibration (one harmonic mode,
quantized Larsen-Borgnakke, Bird 1994 ch. 5; Bergemann & Boyd 1994): the level i is
drawn uniformly from 0..floor(E_c / k theta) and accepted with probability
(1 - i k theta / E_c)^(3/2 - omega); the equilibrium level is geometric,
floor(-ln(R) T / theta).

Mixtures (:func:`exchange_mixed`): each species has its own row of ``ip``; a pair
exchanges its relative translational energy m_r c_r^2 / 2 (per unit reference mass, the
molecules' energies scaled by their mass ratios) with each molecule's own dof and
collision number and the pair's omega; monatomic species carry zero rows.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import (
    IP_MW_A, IP_MW_B, IP_NU_P, IP_OMEGA, IP_ROT_DOF, IP_ROT_FACTOR, IP_ROT_MODE, IP_ROT_P,
    IP_ROT_ZINV, IP_THETA, IP_TSTAR, IP_VIB_FACTOR, IP_VIB_MODE, IP_VIB_P, IP_VIB_TH,
    IP_VIB_ZINV, IP_ZINF, JIT,
)
from rarefy.constants import ATM_PA
from rarefy.kernels.rng import normal, uniform



@njit(**JIT)
def equilibrium_rot(s, dof, kt_m):
    """(next counter, rotational energy per unit mass) drawn at kT/m = ``kt_m``:
    Gamma(dof/2) kT/m for dof = 2 or 3."""
    s, r = uniform(s)
    e = -np.log(1.0 - r)
    if dof == 3:
        s, g = normal(s)
        e += 0.5 * g * g
    return s, e * kt_m


@njit(**JIT)
def equilibrium_vib(s, th, kt_m):
    """(next counter, vibrational energy per unit mass) of a harmonic mode of quantum
    ``th`` = k theta / m at kT/m = ``kt_m``: whole quanta, geometric distribution."""
    s, r = uniform(s)
    return s, np.floor(-np.log(1.0 - r) * kt_m / th) * th


@njit(**JIT)
def wall_internal(s, eint, i, diffuse, sigma, ip):
    """Accommodate particle i's internal energy at a surface (full accommodation when
    re-emitted diffusely, unchanged when reflected specularly, the Maxwell model).
    Returns (next counter, energy per unit mass before, after)."""
    dof = ip[IP_ROT_DOF]
    if dof == 0.0:
        return s, 0.0, 0.0
    th = ip[IP_VIB_TH]
    e0 = eint[0, i] + (eint[1, i] if th > 0.0 else 0.0)
    if not diffuse:
        return s, e0, e0
    kt_m = sigma * sigma
    s, er = equilibrium_rot(s, dof, kt_m)
    eint[0, i] = er
    if th > 0.0:
        s, ev = equilibrium_vib(s, th, kt_m)
        eint[1, i] = ev
        er += ev
    return s, e0, er


@njit(**JIT)
def inject_internal(eint, m, ip, kt_m):
    """Equilibrium internal energy of a molecule entering from a reservoir at kT/m
    ``kt_m`` (numba's seeded generator, as the rest of the inflow). A monatomic species
    of a mixture with molecules gets zeros in the rows (the slot may hold a former
    particle's energies)."""
    dof = ip[IP_ROT_DOF]
    if dof == 0.0:
        for row in range(eint.shape[0]):
            eint[row, m] = 0.0
        return
    e = -np.log(1.0 - np.random.random())
    if dof == 3.0:
        g = np.random.standard_normal()
        e += 0.5 * g * g
    eint[0, m] = e * kt_m
    th = ip[IP_VIB_TH]
    if th > 0.0:
        eint[1, m] = np.floor(-np.log(1.0 - np.random.random()) * kt_m / th) * th
    elif eint.shape[0] > 1:
        eint[1, m] = 0.0


@njit(**JIT)
def beta_fraction(s, a, b):
    """(next counter, x ~ Beta(a, b)) for a = 1 (inverse) or a, b > 1 (acceptance-
    rejection against the density's maximum at (a - 1) / (a + b - 2))."""
    if a == 1.0:
        s, r = uniform(s)
        return s, 1.0 - (1.0 - r) ** (1.0 / b)
    xm = (a - 1.0) / (a + b - 2.0)
    pmax = xm ** (a - 1.0) * (1.0 - xm) ** (b - 1.0)
    while True:
        s, x = uniform(s)
        s, r = uniform(s)
        if x ** (a - 1.0) * (1.0 - x) ** (b - 1.0) >= r * pmax:
            return s, x


@njit(**JIT)
def vib_level(s, ec, th, expo):
    """(next counter, energy of the level drawn) for quantized Larsen-Borgnakke with
    collision energy ``ec`` (per unit mass), quantum ``th`` and exponent 3/2 - omega."""
    imax = int(ec / th)
    if imax < 1:
        return s, 0.0
    while True:
        s, r = uniform(s)
        lev = int(r * (imax + 1))
        if lev > imax:
            lev = imax
        s, r = uniform(s)
        if (1.0 - lev * th / ec) ** expo >= r:
            return s, lev * th


@njit(**JIT)
def inverse_numbers(ip, t_cell):
    """(1/Z_rot, 1/Z_vib) of one species (its row ``ip``) in a cell at translational
    temperature ``t_cell`` (K; <= 0: the plan's reference values): constants, Parker's
    Z_rot(T) or Millikan-White's Z_vib(T). A mixture turns them into selection
    probabilities per pair (:func:`exchange_mixed`)."""
    zr = ip[IP_ROT_ZINV]
    zv = ip[IP_VIB_ZINV]
    if t_cell > 0.0:
        if ip[IP_ROT_MODE] == 1.0:
            x = ip[IP_TSTAR] / t_cell
            zr = (1.0 + 0.5 * np.pi ** 1.5 * np.sqrt(x)
                  + (np.pi + 0.25 * np.pi * np.pi) * x) / ip[IP_ZINF]
        if ip[IP_VIB_MODE] == 1.0:
            p_tau = np.exp(ip[IP_MW_A] * (t_cell ** (-1.0 / 3.0) - ip[IP_MW_B]) - 18.42) * ATM_PA
            zv = 1.0 / max(1.0, p_tau * ip[IP_NU_P] * t_cell ** (-ip[IP_OMEGA]))
    return zr, zv


@njit(**JIT)
def cell_probabilities(ip, t_cell):
    """Selection probabilities (rotation, vibration) for a cell at translational
    temperature ``t_cell`` (K): constants, Parker's Z_rot(T) or Millikan-White's Z_vib(T)
    (``rarefy.gas.internal``)."""
    prot = ip[IP_ROT_P]
    pvib = ip[IP_VIB_P]
    if t_cell > 0.0:
        if ip[IP_ROT_MODE] == 1.0:
            x = ip[IP_TSTAR] / t_cell
            z = ip[IP_ZINF] / (1.0 + 0.5 * np.pi ** 1.5 * np.sqrt(x)
                               + (np.pi + 0.25 * np.pi * np.pi) * x)
            prot = min(0.5, ip[IP_ROT_FACTOR] / z)
        if ip[IP_VIB_MODE] == 1.0:
            p_tau = np.exp(ip[IP_MW_A] * (t_cell ** (-1.0 / 3.0) - ip[IP_MW_B]) - 18.42) * ATM_PA
            zv = p_tau * ip[IP_NU_P] * t_cell ** (-ip[IP_OMEGA])
            pvib = min(0.5, ip[IP_VIB_FACTOR] / zv)
    return prot, pvib


@njit(**JIT)
def relax_vib(s, eint, i, et, ip):
    """Quantized Larsen-Borgnakke for molecule i's vibration; returns (counter, new et)."""
    th = ip[IP_VIB_TH]
    ec = et + eint[1, i]
    s, ev = vib_level(s, ec, th, 1.5 - ip[IP_OMEGA])
    eint[1, i] = ev
    return s, ec - ev


@njit(**JIT)
def relax_rot(s, eint, i, et, ip):
    """Larsen-Borgnakke for molecule i's rotation; returns (counter, new et)."""
    ec = et + eint[0, i]
    s, f = beta_fraction(s, 0.5 * ip[IP_ROT_DOF], 2.5 - ip[IP_OMEGA])
    eint[0, i] = f * ec
    return s, ec - eint[0, i]


@njit(**JIT)
def exchange(s, eint, i, j, et, prot, pvib, ip):
    """Larsen-Borgnakke exchange of the pair (i, j) with its relative translational
    energy ``et`` (per unit mass of one molecule): vibration, then rotation. For each mode
    molecule i relaxes with probability p, molecule j with probability p, never both (p
    <= 1/2; double relaxation prohibited, as Haas et al. 1994 propose), so each relaxation
    starts from the pair's own translational energy and the relaxation rate is exactly
    2 p times the mean step of one relaxation. Returns (next counter, new et)."""
    if ip[IP_VIB_TH] > 0.0:
        s, r = uniform(s)
        if r < pvib:
            s, et = relax_vib(s, eint, i, et, ip)
        elif r < 2.0 * pvib:
            s, et = relax_vib(s, eint, j, et, ip)
    s, r = uniform(s)
    if r < prot:
        s, et = relax_rot(s, eint, i, et, ip)
    elif r < 2.0 * prot:
        s, et = relax_rot(s, eint, j, et, ip)
    return s, et


@njit(**JIT)
def relax_rot_mass(s, eint, i, et, dof, omega, mi):
    """:func:`relax_rot` in a mixture: energies per unit reference mass, molecule i of
    mass ``mi`` (in reference masses), pair exponent ``omega``."""
    ec = et + mi * eint[0, i]
    s, f = beta_fraction(s, 0.5 * dof, 2.5 - omega)
    er = f * ec
    eint[0, i] = er / mi
    return s, ec - er


@njit(**JIT)
def relax_vib_mass(s, eint, i, et, th, omega, mi):
    """:func:`relax_vib` in a mixture (``th`` the quantum per unit mass of molecule i)."""
    ec = et + mi * eint[1, i]
    s, ev = vib_level(s, ec, th * mi, 1.5 - omega)
    eint[1, i] = ev / mi
    return s, ec - ev


@njit(**JIT)
def exchange_mixed(s, eint, i, j, et, mi, mj, ipi, ipj, zi, zj, omega):
    """Larsen-Borgnakke exchange of a mixture's pair (i, j): molecules of masses ``mi``,
    ``mj`` (reference masses), species rows ``ipi``, ``ipj``, inverse collision numbers
    ``zi``, ``zj`` (rotation, vibration; this cell's), the pair's VHS exponent ``omega``
    and relative translational energy ``et`` = m_r c_r^2 / 2 per unit reference mass.

    As :func:`exchange`, with each molecule's own degrees of freedom and collision
    number, and the pair's omega in the distributions and in the selection factor
    (1 + zeta / (5 - 2 omega_pq)) / Z: a molecule relaxes against the collision-weighted
    energy (5/2 - omega_pq) k T of the pair it is in. Monatomic partners (no rows) never
    relax; at most one molecule relaxes per mode. Returns (next counter, new et)."""
    di = ipi[IP_ROT_DOF]
    dj = ipj[IP_ROT_DOF]
    if di == 0.0 and dj == 0.0:
        return s, et
    expo = 5.0 - 2.0 * omega
    thi = ipi[IP_VIB_TH]
    thj = ipj[IP_VIB_TH]
    if thi > 0.0 or thj > 0.0:
        pi_ = min(0.5, (1.0 + 2.0 / expo) * zi[1]) if thi > 0.0 else 0.0
        pj_ = min(0.5, (1.0 + 2.0 / expo) * zj[1]) if thj > 0.0 else 0.0
        s, r = uniform(s)
        if r < pi_:
            s, et = relax_vib_mass(s, eint, i, et, thi, omega, mi)
        elif r < pi_ + pj_:
            s, et = relax_vib_mass(s, eint, j, et, thj, omega, mj)
    pi_ = min(0.5, (1.0 + di / expo) * zi[0]) if di > 0.0 else 0.0
    pj_ = min(0.5, (1.0 + dj / expo) * zj[0]) if dj > 0.0 else 0.0
    s, r = uniform(s)
    if r < pi_:
        s, et = relax_rot_mass(s, eint, i, et, di, omega, mi)
    elif r < pi_ + pj_:
        s, et = relax_rot_mass(s, eint, j, et, dj, omega, mj)
    return s, et
