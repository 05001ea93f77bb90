"""Internal energy of molecules: equilibrium values and relaxation rates (SI units).

Rotation is classical, with ``rot_dof`` (zeta_r) degrees of freedom: mean energy
(zeta_r / 2) k T. Vibration is one harmonic-oscillator mode of characteristic
temperature theta (energy levels i k theta, i = 0, 1, ...): mean energy
k theta / (exp(theta / T) - 1) and an effective number of degrees of freedom
zeta_v = 2 (theta / T) / (exp(theta / T) - 1) (Bird 1994, ch. 5; textbook statistical mechanics).

Relaxation follows the Jeans (Landau-Teller) equation dT_int/dt = (T_tr - T_int) / tau
with tau = Z / nu, Z the collision number and nu the collision frequency of one molecule
(Bird 1994, ch. 5; Jeans 1904, from memory). In a closed box the energy 3 T_tr + zeta_r T_rot is conserved,
so T_tr - T_rot decays as exp(-(1 + zeta_r / 3) N_c / Z_rot), N_c the collisions per
molecule (:func:`box_relaxation_rate`).

Larsen-Borgnakke with per-molecule selection: a molecule chosen in a collision takes the
fraction E_rot' / E_c ~ Beta(zeta_r / 2, 5/2 - omega) of the energy E_c = E_t + E_rot
of the translational motion of the pair (VHS: E_t ~ Gamma(5/2 - omega) in collisions)
and its own rotation. On average that moves its rotational energy a fraction
(5 - 2 omega) / (5 - 2 omega + zeta_r) of the way to equilibrium with T_tr, so the
selection probability that reproduces Z_rot is
Lambda = (1 + zeta_r / (5 - 2 omega)) / Z_rot (:func:`selection_probability`; the same
argument as Lumpkin, Haas & Boyd 1991, Phys. Fluids A 3, 2282, carried out for VHS
molecules; the check is ``tests/validation/test_internal_energy.py``). The argument holds
exactly when each relaxation starts from the pair's translational energy alone, so at
most one molecule of a pair relaxes in a collision (double relaxation prohibited, as
Haas et al. 1994, Phys. Fluids 6, 2191, propose; from memory): with both relaxing in
turn the second sees what the first left, and the rate fell 5 % short at Z_rot = 5.
"""

from __future__ import annotations

import math

import numpy as np

from rarefy.constants import ATM_PA, K_B, N_A

__all__ = [
    "DEFAULT_ZROT",
    "ATM_PA",
    "parker_zrot",
    "selection_probability",
    "parker_floor_temperature",
    "vib_selection_probability",
    "vib_box_relaxation_rate",
    "box_relaxation_rate",
    "vibrational_energy",
    "vibrational_temperature",
    "millikan_white_p_tau",
    "gamma_of_gas",
    "gamma_of_mixture",
]

# Rotational collision number when a case gives none: the value commonly used in DSMC
# for N2 and O2 near room temperature (common practice; Parker's formula gives 5.4 for
# N2 at 300 K). H2 relaxes far more slowly (Z_rot of a few hundred at room temperature,
# from memory): set it in the case.
DEFAULT_ZROT = 5.0


def parker_zrot(t_k, z_inf: float, t_star_k: float):
    """Parker's (1959) rotational collision number
    Z_rot(T) = Z_inf / (1 + (pi^(3/2) / 2) sqrt(T*/T) + (pi + pi^2 / 4) T*/T)."""
    x = t_star_k / np.asarray(t_k, dtype=float)
    return z_inf / (1.0 + 0.5 * math.pi ** 1.5 * np.sqrt(x) + (math.pi + math.pi ** 2 / 4.0) * x)


def selection_probability(z: float, rot_dof: int, omega: float) -> float:
    """Larsen-Borgnakke selection probability of one molecule per collision that gives
    the rotational collision number ``z`` (module docstring); at most 1/2, as at most one
    molecule of a pair relaxes in a collision."""
    return min(0.5, (1.0 + rot_dof / (5.0 - 2.0 * omega)) / z)


def parker_floor_temperature(parker: tuple[float, float], rot_dof: int,
                             omega: float) -> float:
    """Temperature (K) below which Parker's Z_rot falls under the smallest collision number
    the exchange reaches, 2 (1 + zeta_r / (5 - 2 omega)) (selection probability 1/2);
    0 if it never does."""
    from scipy.optimize import brentq

    z_min = 2.0 * (1.0 + rot_dof / (5.0 - 2.0 * omega))
    f = lambda t: float(parker_zrot(t, *parker)) - z_min  # noqa: E731
    if f(1e-3) >= 0.0:
        return 0.0
    return float(brentq(f, 1e-3, 1e7))


def vib_selection_probability(z: float, omega: float) -> float:
    """Selection probability for the vibrational mode that gives the collision number
    ``z``: the rotational rule with the mode's high-temperature 2 degrees of freedom,
    (1 + 2 / (5 - 2 omega)) / Z_vib, at most 1/2. The quantized exchange moves the mean
    vibrational energy 0.64-0.73 of the way to equilibrium per selection (0.64, the
    classical value for N2, when T >> theta; more when T < theta), so below theta the
    relaxation runs up to about 14 % faster than Z_vib says."""
    return min(0.5, (1.0 + 2.0 / (5.0 - 2.0 * omega)) / z)


def vib_box_relaxation_rate(z: float, t_k: float, theta_k: float) -> float:
    """Decay rate, per collision of one molecule, of E_v(T_tr) - E_v in a closed box of a
    diatomic gas with rotation in equilibrium with translation: energy conservation
    (5/2) k dT = -dE_v gives (1 + (2/5) c_v / k) / Z_vib, with c_v the heat capacity of
    the mode at ``t_k``."""
    x = theta_k / t_k
    c_v = (0.5 * x / math.sinh(0.5 * x)) ** 2
    return (1.0 + 0.4 * c_v) / z


def box_relaxation_rate(z: float, rot_dof: int, fraction: float = 1.0) -> float:
    """Decay rate of T_tr - T_rot per collision of one molecule in a closed box,
    (1 + x zeta_r / 3) / Z_rot (Jeans equation with energy conservation), x the mole
    fraction of the rotating molecules when they are mixed with monatomic gas (whose
    3/2 k T per molecule takes part in the exchange: 3 T_tr + x zeta_r T_rot is
    conserved)."""
    return (1.0 + fraction * rot_dof / 3.0) / z


def vibrational_energy(t_k, theta_k: float):
    """Mean vibrational energy of a harmonic mode, k theta / (exp(theta/T) - 1), J."""
    t = np.asarray(t_k, dtype=float)
    with np.errstate(over="ignore", divide="ignore"):
        return K_B * theta_k / np.expm1(theta_k / t)


def vibrational_temperature(e_j, theta_k: float):
    """Temperature of a harmonic mode of mean energy ``e_j`` (J):
    theta / ln(1 + k theta / e); 0 for e = 0."""
    e = np.asarray(e_j, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(e > 0.0, theta_k / np.log1p(K_B * theta_k / np.where(e > 0, e, 1.0)),
                        0.0)


def millikan_white_p_tau(t_k, mass_kg: float, theta_k: float):
    """Millikan & White (1963, J. Chem. Phys. 39, 3209) vibrational relaxation time times
    pressure, Pa s: p tau = exp(A (T^(-1/3) - B) - 18.42) atm s with
    A = 1.16e-3 mu^(1/2) theta^(4/3), B = 0.015 mu^(1/4), mu the reduced mass of the
    pair in g/mol (here m/2, one species)."""
    mu = 0.5 * mass_kg * N_A * 1e3
    a = 1.16e-3 * math.sqrt(mu) * theta_k ** (4.0 / 3.0)
    b = 0.015 * mu ** 0.25
    t = np.asarray(t_k, dtype=float)
    return np.exp(a * (t ** (-1.0 / 3.0) - b) - 18.42) * ATM_PA


def gamma_of_gas(rot_dof: int, t_k=None, theta_k: float | None = None) -> float:
    """Ratio of specific heats (5 + zeta) / (3 + zeta) with zeta the internal degrees of
    freedom: rotation, plus the vibrational mode's effective dof at ``t_k`` when
    ``theta_k`` is given. Frozen vibration (the default) leaves 7/5 for diatomics."""
    zeta = float(rot_dof)
    if theta_k is not None and t_k is not None:
        # heat capacity of the mode, d(E_v)/d(kT) = (x/2 / sinh(x/2))^2, x = theta / T
        x = theta_k / float(t_k)
        zeta += 2.0 * (0.5 * x / math.sinh(0.5 * x)) ** 2 if x < 700 else 0.0
    return (5.0 + zeta) / (3.0 + zeta)


def gamma_of_mixture(fractions, rot_dofs, t_k=None, thetas=None) -> float:
    """Ratio of specific heats of an ideal-gas mixture, sum x_k (5 + zeta_k) /
    sum x_k (3 + zeta_k) (heat capacities add by mole fraction; zeta_k as in
    :func:`gamma_of_gas`, with vibration where ``thetas[k]`` > 0)."""
    num = den = 0.0
    for k, (x, dof) in enumerate(zip(fractions, rot_dofs)):
        theta = thetas[k] if thetas is not None and thetas[k] > 0.0 else None
        g = gamma_of_gas(dof, t_k, theta)
        zeta = 2.0 / (g - 1.0) - 3.0            # (5 + zeta) / (3 + zeta) = g
        num += x * (5.0 + zeta)
        den += x * (3.0 + zeta)
    return num / den
