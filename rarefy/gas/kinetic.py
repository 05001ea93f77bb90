"""Equilibrium kinetic theory of a single-species gas (SI units throughout).

Sources: [B94] G. A. Bird, Molecular Gas Dynamics and the Direct Simulation of Gas
Flows (Oxford, 1994); [CC] S. Chapman & T. G. Cowling, The Mathematical Theory of
Non-Uniform Gases, 3rd ed. (Cambridge, 1970); [KM] K. Koura & H. Matsumoto, Phys.
Fluids A 3, 2459 (1991). Functions accept numpy arrays for temperatures, densities
and pressures.
"""

from __future__ import annotations

import math

import numpy as np

from rarefy.constants import K_B
from rarefy.gas.species import MolecularModel

_erf = np.vectorize(math.erf, otypes=[float])   # scipy.special.erf without importing scipy

__all__ = [
    "HS_VISCOSITY_FACTOR", "HS_CONDUCTIVITY_FACTOR", "hard_sphere_transport_correction",
    "one_way_number_flux",
    "most_probable_speed", "mean_speed", "rms_speed", "flux_weighted_mean_speed",
    "viscosity", "thermal_conductivity", "mean_free_path",
    "mean_free_path_from_pressure", "collision_frequency", "collision_rate_per_volume",
    "mean_collision_time", "sigma_cr_coefficient", "mean_sigma_cr", "number_density",
    "pressure", "specific_gas_constant", "rarefaction_parameter", "knudsen_number",
]

# Ratio exact/first-approximation for hard spheres (converged Chapman-Enskog/Sonine
# expansion), [CC] ch. 10 -- from memory.
HS_VISCOSITY_FACTOR = 1.016034
HS_CONDUCTIVITY_FACTOR = 1.025218


def hard_sphere_transport_correction() -> dict[str, float]:
    """Exact-to-first-approximation ratios of hard-sphere transport coefficients.

    Returns
    -------
    dict
        ``{"viscosity": 1.016034, "conductivity": 1.025218}`` (dimensionless).

    Notes
    -----
    [CC] ch. 10 (converged Sonine expansion of the Boltzmann equation), from memory.
    """
    return {"viscosity": HS_VISCOSITY_FACTOR, "conductivity": HS_CONDUCTIVITY_FACTOR}


# --- Maxwellian speeds ----------------------------------------------------------

def most_probable_speed(mass_kg, t_k):
    """Most probable speed sqrt(2kT/m), m/s ([B94] ch. 4, Maxwellian)."""
    return np.sqrt(2.0 * K_B * np.asarray(t_k) / mass_kg)


def mean_speed(mass_kg, t_k):
    """Mean thermal speed sqrt(8kT/(pi m)), m/s ([B94] ch. 4, Maxwellian)."""
    return np.sqrt(8.0 * K_B * np.asarray(t_k) / (math.pi * mass_kg))


def rms_speed(mass_kg, t_k):
    """Root-mean-square speed sqrt(3kT/m), m/s ([B94] ch. 4, Maxwellian)."""
    return np.sqrt(3.0 * K_B * np.asarray(t_k) / mass_kg)


def flux_weighted_mean_speed(mass_kg, t_k):
    """Mean speed of molecules crossing a plane, sqrt(9 pi kT/(8 m)), m/s.

    Notes
    -----
    Mean of the flux-weighted distribution ~ v**3 exp(-m v**2 / 2kT), i.e.
    <v^2>/<v> of the Maxwellian, [B94] ch. 4 (effusive flux).
    """
    return np.sqrt(9.0 * math.pi * K_B * np.asarray(t_k) / (8.0 * mass_kg))


# --- transport coefficients -----------------------------------------------------

def viscosity(model: MolecularModel, t_k):
    """Viscosity of a HS/VHS/VSS gas, Pa s (first Chapman-Enskog approximation).

    Parameters
    ----------
    model : MolecularModel
    t_k : float or array
        Temperature, K.

    Notes
    -----
    HS/VHS: mu = 15 sqrt(pi m k T_ref) (T/T_ref)^w / (2 pi d^2 (5-2w)(7-2w)),
    [B94] eq. 4.62. VSS: mu = 5 (a+1)(a+2) sqrt(m k T_ref / pi) (T/T_ref)^w /
    (4 a (5-2w)(7-2w) d^2), [B94] eq. 4.62 VSS form, [KM]; equal to VHS at a = 1.
    """
    m, d, w, tr = model.mass_kg, model.d_ref_m, model.omega, model.t_ref_k
    tratio = np.asarray(t_k) / tr
    denom = (5.0 - 2.0 * w) * (7.0 - 2.0 * w)
    if model.kind == "vss":
        a = model.alpha
        return (5.0 * (a + 1.0) * (a + 2.0) * math.sqrt(m * K_B * tr / math.pi)
                * tratio ** w / (4.0 * a * denom * d * d))
    return (15.0 * math.sqrt(math.pi * m * K_B * tr) * tratio ** w
            / (2.0 * math.pi * d * d * denom))


def thermal_conductivity(model: MolecularModel, t_k):
    """Translational thermal conductivity (15/4)(k/m) mu, W/(m K).

    Notes
    -----
    First Chapman-Enskog approximation for a monatomic gas (Eucken factor 5/2),
    [CC] ch. 10; internal modes are not included.
    """
    return 3.75 * K_B / model.mass_kg * viscosity(model, t_k)


# --- collisions and mean free path ----------------------------------------------

def mean_free_path(model: MolecularModel, n_m3, t_k):
    """Equilibrium mean free path, m.

    Notes
    -----
    lambda = 1 / (sqrt(2) pi d^2 n (T_ref/T)^(w - 1/2)), [B94] eq. 4.65; for HS
    (w = 1/2) the textbook 1 / (sqrt(2) pi d^2 n).
    """
    d, w, tr = model.d_ref_m, model.omega, model.t_ref_k
    return 1.0 / (math.sqrt(2.0) * math.pi * d * d * np.asarray(n_m3)
                  * (tr / np.asarray(t_k)) ** (w - 0.5))


def mean_free_path_from_pressure(model: MolecularModel, p_pa, t_k):
    """Mean free path at pressure p (Pa) and temperature T (K), m ([B94] eq. 4.65)."""
    return mean_free_path(model, number_density(p_pa, t_k), t_k)


def collision_frequency(model: MolecularModel, n_m3, t_k):
    """Mean collision frequency of one molecule, 1/s.

    Notes
    -----
    nu = 4 d^2 n sqrt(pi k T_ref / m) (T/T_ref)^(1 - w), [B94] eq. 4.64;
    consistent with lambda = cbar / nu.
    """
    m, d, w, tr = model.mass_kg, model.d_ref_m, model.omega, model.t_ref_k
    return (4.0 * d * d * np.asarray(n_m3) * math.sqrt(math.pi * K_B * tr / m)
            * (np.asarray(t_k) / tr) ** (1.0 - w))


def collision_rate_per_volume(model: MolecularModel, n_m3, t_k):
    """Collisions per unit volume per unit time, n nu / 2, 1/(m^3 s) ([B94] eq. 4.64)."""
    return 0.5 * np.asarray(n_m3) * collision_frequency(model, n_m3, t_k)


def mean_collision_time(model: MolecularModel, n_m3, t_k):
    """Mean time between collisions of one molecule, 1/nu, s ([B94] eq. 4.64)."""
    return 1.0 / collision_frequency(model, n_m3, t_k)


def sigma_cr_coefficient(model: MolecularModel) -> float:
    """Constant A in sigma_T c_r = A c_r^(2 - 2w) for a like-molecule pair, SI.

    Units are m^2 (m/s)^(2w - 1), so that sigma_T c_r is in m^3/s.

    Notes
    -----
    sigma_T = pi d^2 (2 k T_ref / (m_r c_r^2))^(w - 1/2) / Gamma(5/2 - w),
    [B94] eq. 4.63, with reduced mass m_r = m/2.
    """
    d, w, tr = model.d_ref_m, model.omega, model.t_ref_k
    m_r = 0.5 * model.mass_kg
    return (math.pi * d * d * (2.0 * K_B * tr / m_r) ** (w - 0.5)
            / math.gamma(2.5 - w))


def mean_sigma_cr(model: MolecularModel, t_k):
    """Equilibrium mean <sigma_T c_r> = nu / n, m^3/s ([B94] eq. 4.64).

    Notes
    -----
    For HS this is pi d^2 sqrt(16 k T / (pi m)); equals the average of
    :func:`sigma_cr_coefficient` * c_r^(2 - 2w) over the Maxwellian of c_r.
    """
    return collision_frequency(model, 1.0, t_k)


# --- state relations and similarity parameters -----------------------------------

def number_density(p_pa, t_k):
    """Number density p / (k T), 1/m^3 (ideal gas, [B94] ch. 1)."""
    return np.asarray(p_pa) / (K_B * np.asarray(t_k))


def pressure(n_m3, t_k):
    """Pressure n k T, Pa (ideal gas, [B94] ch. 1)."""
    return np.asarray(n_m3) * K_B * np.asarray(t_k)


def specific_gas_constant(mass_kg: float) -> float:
    """Specific gas constant k / m, J/(kg K)."""
    return K_B / mass_kg


def rarefaction_parameter(p_pa, length_m, mu_pa_s, mass_kg, t_k):
    """Rarefaction parameter delta = p a / (mu v0), v0 = sqrt(2kT/m), dimensionless.

    Parameters
    ----------
    p_pa : pressure, Pa. length_m : radius or half-width a, m.
    mu_pa_s : viscosity, Pa s. mass_kg : molecular mass, kg. t_k : temperature, K.

    Notes
    -----
    The parameter of Sharipov's flow-rate tables (e.g. J. Fluid Mech. 518, 2004).
    """
    v0 = most_probable_speed(mass_kg, t_k)
    return np.asarray(p_pa) * np.asarray(length_m) / (np.asarray(mu_pa_s) * v0)


def knudsen_number(lambda_m, length_m):
    """Knudsen number lambda / L, dimensionless ([B94] ch. 1)."""
    return np.asarray(lambda_m) / np.asarray(length_m)


def one_way_number_flux(n_m3, t_k, mass_kg, drift_normal_m_s=0.0):
    """One-way number flux of a drifting Maxwellian across a plane, 1/(m^2 s).

    Gamma = n v_mp / (2 sqrt(pi)) [exp(-s^2) + sqrt(pi) s (1 + erf(s))],
    s = u_n / v_mp, u_n the drift along the plane's normal ([B94] eq. 4.22);
    n cbar / 4 for a gas at rest.
    """
    vmp = most_probable_speed(mass_kg, t_k)
    s = np.asarray(drift_normal_m_s) / vmp
    return n_m3 * vmp / (2.0 * math.sqrt(math.pi)) * (
        np.exp(-s * s) + math.sqrt(math.pi) * s * (1.0 + _erf(s)))
