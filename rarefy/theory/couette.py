"""Free-molecular limits of planar Couette flow and heat transfer between plates.

Two parallel diffuse plates (full accommodation), no intermolecular collisions; results
independent of the gap. SI units.
Sources: the collisionless solutions are exact (e.g. Sharipov, J. Phys. Chem. Ref.
Data 40, 023101 (2011); Kogan, Rarefied Gas Dynamics, Plenum 1969, ch. 7).
"""

from __future__ import annotations

import numpy as np

from rarefy.constants import K_B

__all__ = ["free_molecular_couette_shear", "free_molecular_heat_flux"]


def free_molecular_couette_shear(p_pa, du_m_s, t_k, mass_kg):
    """Shear stress between plates sliding at relative speed U, free-molecular (Pa).

    Parameters
    ----------
    p_pa : float or array
        Gas pressure (Pa).
    du_m_s : float or array
        Relative tangential wall speed U (m/s), small against the thermal speed.
    t_k : float or array
        Wall (and gas) temperature (K).
    mass_kg : float or array
        Molecular mass (kg).

    Returns
    -------
    float or array
        tau = p U / (sqrt(pi) v0), v0 = sqrt(2 k T / m); tau / (p U / v0) = 1/sqrt(pi).

    Notes
    -----
    Linearized free-molecular Couette flow; Sharipov (2011), limit delta -> 0.
    """
    v0 = np.sqrt(2.0 * K_B * np.asarray(t_k, dtype=float) / np.asarray(mass_kg, dtype=float))
    return np.asarray(p_pa, dtype=float) * np.asarray(du_m_s, dtype=float) / (np.sqrt(np.pi) * v0)


def free_molecular_heat_flux(p_pa, t1_k, t2_k, mass_kg):
    """Heat flux from wall 2 to wall 1 across a collisionless gas layer (W/m^2).

    Parameters
    ----------
    p_pa : float or array
        Gas pressure (Pa): the normal stress on the plates, n1 k T1 + n2 k T2 for the
        two half-Maxwellian streams.
    t1_k, t2_k : float or array
        Plate temperatures (K).
    mass_kg : float or array
        Molecular mass (kg).

    Returns
    -------
    float or array
        q = 2 p sqrt(2 k / (pi m)) (T2 - T1) / (sqrt(T1) + sqrt(T2)), positive from
        the hotter plate 2 to plate 1 (translational energy only, monatomic gas).

    Notes
    -----
    Exact collisionless solution with two half-Maxwellians; Sharipov (2011), planar
    Fourier problem, limit delta -> 0; Kogan (1969), ch. 7.
    """
    t1 = np.asarray(t1_k, dtype=float)
    t2 = np.asarray(t2_k, dtype=float)
    m = np.asarray(mass_kg, dtype=float)
    return (
        2.0 * np.asarray(p_pa, dtype=float) * np.sqrt(2.0 * K_B / (np.pi * m))
        * (t2 - t1) / (np.sqrt(t1) + np.sqrt(t2))
    )
