"""The internal-energy parameter array the kernels read (``IP_*`` of
``rarefy.kernels.config``), built from the plan and the molecular model."""

from __future__ import annotations

import math

import numpy as np

from rarefy.constants import K_B, N_A
from rarefy.gas import internal
from rarefy.gas.species import MolecularModel, Species
from rarefy.kernels.config import (
    IP_M_OVER_K, IP_MW_A, IP_MW_B, IP_NU_P, IP_OMEGA, IP_ROT_DOF, IP_ROT_FACTOR, IP_ROT_MODE,
    IP_ROT_P, IP_THETA, IP_TSTAR, IP_VIB_FACTOR, IP_VIB_MODE, IP_VIB_P, IP_VIB_TH, IP_ZINF, N_INTERNAL_PAR,
)
from rarefy.plan import Plan

__all__ = ["kernel_parameters", "internal_rows"]


def internal_rows(plan: Plan) -> int:
    """Internal-energy rows per particle: 0 (monatomic), 1 (rotation), 2 (and vibration)."""
    return 0 if not plan.rot_dof else 1 + int(plan.vibration)


def kernel_parameters(plan: Plan, model: MolecularModel, sp: Species,
                      vibration_number) -> np.ndarray:
    """float64[N_INTERNAL_PAR] for the collision, move and inflow kernels.

    ``vibration_number`` is the case's Z_vib (a number) or ``"millikan-white"``.
    Millikan-White's Z_vib(T) = p tau(T) nu(T) / p with nu / p = NU_P T^-omega:
    nu = 4 d^2 n sqrt(pi k T_ref / m) (T / T_ref)^(1 - omega) ([B94] eq. 4.64), n = p / kT.
    """
    ip = np.zeros(N_INTERNAL_PAR)
    ip[IP_M_OVER_K] = model.mass_kg / K_B
    ip[IP_OMEGA] = model.omega
    if not plan.rot_dof:
        return ip
    ip[IP_ROT_DOF] = plan.rot_dof
    ip[IP_ROT_FACTOR] = 1.0 + plan.rot_dof / (5.0 - 2.0 * model.omega)
    ip[IP_ROT_P] = plan.rot_selection_probability
    if plan.rotation == "parker":
        ip[IP_ROT_MODE] = 1.0
        ip[IP_ZINF], ip[IP_TSTAR] = sp.parker
    if plan.vibration:
        theta = plan.theta_vib_k
        ip[IP_THETA] = theta
        ip[IP_VIB_TH] = K_B * theta / model.mass_kg
        ip[IP_VIB_FACTOR] = 1.0 + 2.0 / (5.0 - 2.0 * model.omega)
        if vibration_number == "millikan-white":
            mu = 0.5 * model.mass_kg * N_A * 1e3
            ip[IP_VIB_MODE] = 1.0
            ip[IP_MW_A] = 1.16e-3 * math.sqrt(mu) * theta ** (4.0 / 3.0)
            ip[IP_MW_B] = 0.015 * mu ** 0.25
            ip[IP_NU_P] = (4.0 * model.d_ref_m ** 2
                           * math.sqrt(math.pi * K_B * model.t_ref_k / model.mass_kg)
                           * model.t_ref_k ** (model.omega - 1.0) / K_B)
        else:
            ip[IP_VIB_P] = internal.vib_selection_probability(float(vibration_number),
                                                              model.omega)
    return ip
