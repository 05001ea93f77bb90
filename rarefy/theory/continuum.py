"""Continuum (isentropic, ideal-gas) limits for orifice and nozzle flow.

SI units. Source: textbook one-dimensional gas dynamics, e.g. J. D. Anderson, Modern
Compressible Flow (3rd ed., McGraw-Hill 2003), ch. 5 (choked mass flow).
"""

from __future__ import annotations

import numpy as np

from rarefy.constants import K_B

__all__ = [
    "choked_mass_flux",
    "isentropic_reduced_flow_rate",
    "gamma_from_internal_dof",
]


def _check_gamma(gamma):
    g = np.asarray(gamma, dtype=float)
    if np.any(g <= 1.0):
        raise ValueError("gamma must be > 1")
    return g


def _choke_factor(g):
    return (2.0 / (g + 1.0)) ** ((g + 1.0) / (2.0 * (g - 1.0)))


def choked_mass_flux(p0_pa, t0_k, mass_kg, gamma):
    """Ideal choked (sonic-throat) mass flux from a reservoir (kg m^-2 s^-1).

    Parameters
    ----------
    p0_pa, t0_k : float or array
        Reservoir (stagnation) pressure (Pa) and temperature (K).
    mass_kg : float or array
        Molecular mass (kg); specific gas constant R_s = k / m.
    gamma : float or array
        Ratio of specific heats (> 1).

    Returns
    -------
    float or array
        p0 sqrt(gamma / (R_s T0)) (2 / (gamma + 1))^((gamma + 1) / (2 (gamma - 1))).
        Multiply by a throat area and a discharge coefficient C_d for a mass flow.

    Notes
    -----
    Anderson, Modern Compressible Flow, eq. 5.21 (isentropic flow, sonic throat).
    """
    g = _check_gamma(gamma)
    r_s = K_B / np.asarray(mass_kg, dtype=float)
    return np.asarray(p0_pa, dtype=float) * np.sqrt(g / (r_s * np.asarray(t0_k))) * _choke_factor(g)


def isentropic_reduced_flow_rate(gamma):
    """Choked isentropic mass flux over the free-molecular effusion flux (dimensionless).

    Returns
    -------
    float or array
        sqrt(2 pi gamma) (2 / (gamma + 1))^((gamma + 1) / (2 (gamma - 1))):
        1.8203 for gamma = 5/3 and 1.7164 for gamma = 7/5.

    Notes
    -----
    Ratio of Anderson's eq. 5.21 to p0 sqrt(m / (2 pi k T0)); the upper bound on the
    reduced flow rate of an orifice (Sharipov, J. Fluid Mech. 518, 35 (2004)).
    """
    g = _check_gamma(gamma)
    return np.sqrt(2.0 * np.pi * g) * _choke_factor(g)


def gamma_from_internal_dof(rot_dof, vib_dof=0):
    """Ratio of specific heats of an ideal gas, (5 + dof) / (3 + dof), dof = rot + vib.

    Parameters
    ----------
    rot_dof : float
        Rotational degrees of freedom (0 monatomic, 2 linear molecules, 3 nonlinear).
    vib_dof : float, optional
        Effective (fully or partly excited) vibrational degrees of freedom.

    Notes
    -----
    Equipartition, c_v = (3 + dof) k / 2 per molecule (Bird 1994, sec. 1.4; Vincenti &
    Kruger, Introduction to Physical Gas Dynamics, 1965).
    """
    dof = np.asarray(rot_dof, dtype=float) + np.asarray(vib_dof, dtype=float)
    if np.any(dof < 0.0):
        raise ValueError("degrees of freedom must be >= 0")
    return (5.0 + dof) / (3.0 + dof)
