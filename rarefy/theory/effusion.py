"""Effusion from a gas at rest in equilibrium: fluxes, thin-aperture flow, beam averages.

All quantities SI. Formulas are the standard kinetic-theory results for a Maxwellian
gas (e.g. Bird, Molecular Gas Dynamics and the Direct Simulation of Gas Flows, Oxford
1994, ch. 4; Chapman & Cowling, The Mathematical Theory of Non-Uniform Gases, 1970).
Functions accept scalars or numpy arrays and broadcast.
"""

from __future__ import annotations

import numpy as np

from rarefy.constants import K_B

__all__ = [
    "mean_speed",
    "number_flux",
    "mass_flux",
    "free_molecular_mass_flow",
    "aperture_conductance",
    "flux_weighted_mean_speed",
    "flux_weighted_mean_energy",
    "orifice_axis_density",
    "orifice_axis_beam",
]


def mean_speed(t_k, mass_kg):
    """Mean molecular speed of a Maxwellian gas, cbar = sqrt(8 k T / (pi m)) (m/s).

    Notes
    -----
    Maxwell-Boltzmann distribution; Bird (1994) eq. 4.8.
    """
    return np.sqrt(8.0 * K_B * np.asarray(t_k, dtype=float) / (np.pi * np.asarray(mass_kg)))


def number_flux(n_m3, t_k, mass_kg):
    """One-sided number flux through a plane in a gas at rest, n cbar / 4 (m^-2 s^-1).

    Parameters
    ----------
    n_m3 : float or array
        Number density (m^-3).
    t_k : float or array
        Temperature (K).
    mass_kg : float or array
        Molecular mass (kg).

    Notes
    -----
    Common kinetic-theory result; Bird (1994) eq. 4.22 with zero drift.
    """
    return np.asarray(n_m3, dtype=float) * mean_speed(t_k, mass_kg) / 4.0


def mass_flux(p_pa, t_k, mass_kg):
    """One-sided mass flux of a gas at rest, p sqrt(m / (2 pi k T)) (kg m^-2 s^-1).

    Notes
    -----
    Equals m n cbar / 4 with n = p / (k T) (Hertz-Knudsen effusion flux); the
    free-molecular reference for reduced flow rates (Sharipov, J. Fluid Mech. 518,
    35 (2004)).
    """
    m = np.asarray(mass_kg, dtype=float)
    return np.asarray(p_pa, dtype=float) * np.sqrt(m / (2.0 * np.pi * K_B * np.asarray(t_k)))


def free_molecular_mass_flow(area_m2, p_up_pa, t_k, mass_kg, p_down_pa=0.0):
    """Net free-molecular mass flow through a thin aperture (kg/s).

    Parameters
    ----------
    area_m2 : float or array
        Aperture area (m^2).
    p_up_pa, p_down_pa : float or array
        Upstream and downstream pressure (Pa); both sides at temperature ``t_k``.
    t_k : float or array
        Temperature (K).
    mass_kg : float or array
        Molecular mass (kg).

    Returns
    -------
    float or array
        A (p_up - p_down) sqrt(m / (2 pi k T)).

    Notes
    -----
    Knudsen effusion, the two one-sided fluxes being independent in free-molecular flow
    (Sharipov 2004, reduced flow rate W = 1 - p1/p0).
    """
    dp = np.asarray(p_up_pa, dtype=float) - np.asarray(p_down_pa, dtype=float)
    return np.asarray(area_m2, dtype=float) * mass_flux(dp, t_k, mass_kg)


def aperture_conductance(area_m2, t_k, mass_kg):
    """Molecular-flow conductance of a thin aperture, C = A cbar / 4 (m^3/s).

    Notes
    -----
    Vacuum-engineering standard (Livesey, ch. 2 of Lafferty (ed.), Foundations of Vacuum
    Science and Technology, 1998); 11.6 L/s per cm^2 for air at 20 degC.
    """
    return np.asarray(area_m2, dtype=float) * mean_speed(t_k, mass_kg) / 4.0


def flux_weighted_mean_speed(t_k, mass_kg):
    """Mean speed of molecules crossing a plane (effusive beam), sqrt(9 pi k T / (8 m)) (m/s).

    Notes
    -----
    Mean of v over the flux-weighted distribution ~ v^3 exp(-m v^2 / 2kT)
    (Ramsey, Molecular Beams, Oxford 1956, ch. 2).
    """
    return np.sqrt(9.0 * np.pi * K_B * np.asarray(t_k, dtype=float) / (8.0 * np.asarray(mass_kg)))


def flux_weighted_mean_energy(t_k):
    """Mean translational energy of molecules crossing a plane, 2 k T (J).

    Notes
    -----
    Flux-weighted Maxwellian (Bird 1994, sec. 4.2; Ramsey 1956, ch. 2).
    """
    return 2.0 * K_B * np.asarray(t_k, dtype=float)


def orifice_axis_density(z_m, radius_m, n0_m3):
    """Number density on the axis of a free-molecular orifice jet into vacuum (m^-3).

    Parameters
    ----------
    z_m : float or array
        Distance downstream of the orifice plane along the axis (m), z >= 0.
    radius_m : float
        Orifice radius a (m).
    n0_m3 : float
        Reservoir number density (m^-3).

    Returns
    -------
    float or array
        (n0 / 2) (1 - z / sqrt(z^2 + a^2)): n0 times the fraction of the full solid angle
        subtended by the orifice (the speed distribution there is the reservoir one,
        restricted to directions through the hole).

    Notes
    -----
    Solid-angle argument for collisionless expansion (e.g. Pauly, Atom, Molecule and
    Cluster Beams I, Springer 2000, ch. 2).
    """
    z = np.asarray(z_m, dtype=float)
    if np.any(z < 0.0):
        raise ValueError("z_m must be >= 0")
    a = float(radius_m)
    if a <= 0.0:
        raise ValueError("radius_m must be > 0")
    s = np.sqrt(z * z + a * a)
    # 1 - z/s = a^2 / (s (s + z)), free of cancellation far downstream
    return 0.5 * float(n0_m3) * a * a / (s * (s + z))


def orifice_axis_beam(z_m, radius_m, t_k, mass_kg) -> dict:
    """Drift, temperatures and speed ratio on the axis of a free-molecular orifice beam.

    At a distance z on the axis the molecules are the reservoir's Maxwellian restricted to
    the directions through the hole, a cone of half-angle theta_m, mu = cos theta_m =
    z / sqrt(z^2 + a^2), filled uniformly in solid angle (the solid-angle argument of
    :func:`orifice_axis_density`). Averages over that cone (derived here):
    <cos> = (1 + mu)/2, <cos^2> = (1 + mu + mu^2)/3, so

    * drift u = cbar (1 + mu) / 2, cbar = sqrt(8kT/(pi m));
    * T_par = T [(1 + mu + mu^2) - 2 (1 + mu)^2 / pi];
    * T_perp = T (2 - mu - mu^2) / 2 (each transverse axis);
    * speed ratio S = u / sqrt(2 k T_par / m).

    Far away (mu -> 1) S -> sqrt(4/pi) / sqrt(3 - 8/pi) = 1.6755, the effusive beam's value.

    Returns a dict with ``drift_m_s``, ``temperature_parallel_k``,
    ``temperature_perpendicular_k``, ``speed_ratio`` (floats or arrays like ``z_m``).
    """
    z = np.asarray(z_m, dtype=float)
    if np.any(z < 0.0) or radius_m <= 0.0:
        raise ValueError("need z_m >= 0 and radius_m > 0")
    mu = z / np.sqrt(z * z + radius_m * radius_m)
    cbar = mean_speed(t_k, mass_kg)
    u = 0.5 * cbar * (1.0 + mu)
    t_par = t_k * ((1.0 + mu + mu * mu) - 2.0 * (1.0 + mu) ** 2 / np.pi)
    return {"drift_m_s": u, "temperature_parallel_k": t_par,
            "temperature_perpendicular_k": 0.5 * t_k * (2.0 - mu - mu * mu),
            "speed_ratio": u / np.sqrt(2.0 * K_B * t_par / mass_kg)}
