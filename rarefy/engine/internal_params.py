"""The internal-energy parameter array the kernels read (``IP_*`` of
``rarefy.kernels.config``), built from the plan and the molecular model."""

from __future__ import annotations

import math

import numpy as np

from rarefy.constants import K_B, N_A
from rarefy.gas import internal
from rarefy.gas.species import MolecularModel, get_species
from rarefy.kernels.config import (
    IP_M_OVER_K, IP_MW_A, IP_MW_B, IP_NU_P, IP_OMEGA, IP_ROT_DOF, IP_ROT_FACTOR, IP_ROT_MODE,
    IP_ROT_P, IP_ROT_ZINV, IP_THETA, IP_TSTAR, IP_VIB_FACTOR, IP_VIB_MODE, IP_VIB_P, IP_VIB_TH,
    IP_VIB_ZINV, IP_ZINF, N_INTERNAL_PAR,
)
from rarefy.plan import Plan

__all__ = ["kernel_parameters", "internal_rows"]


def internal_rows(plan: Plan) -> int:
    """Internal-energy rows per particle: 0 (monatomic), 1 (rotation), 2 (and vibration);
    a mixture has the rows its molecules need (monatomic species keep zeros there)."""
    return 0 if not plan.rot_dof else 1 + int(plan.vibration)


def kernel_parameters(plan: Plan, models, vibration_number) -> np.ndarray:
    """float64[nspecies, N_INTERNAL_PAR] for the collision, move and inflow kernels, one
    row per species (``models`` in the plan's species order).

    ``vibration_number`` is the case's Z_vib (a number) or ``"millikan-white"``.
    Millikan-White's Z_vib(T) = p tau(T) nu(T) / p with nu / p = NU_P T^-omega:
    nu = 4 d^2 n sqrt(pi k T_ref / m) (T / T_ref)^(1 - omega) ([B94] eq. 4.64), n = p / kT,
    both of the species in its own gas (in a mixture an approximation: the species' own
    constants and collision rate stand for those with its partners).
    """
    ip = np.zeros((len(models), N_INTERNAL_PAR))
    for k, model in enumerate(models):
        _species_row(ip[k], plan, k, model, vibration_number)
    return ip


def _species_row(row: np.ndarray, plan: Plan, k: int, model: MolecularModel,
                 vibration_number) -> None:
    row[IP_M_OVER_K] = model.mass_kg / K_B
    row[IP_OMEGA] = model.omega
    dof = plan.species_rot_dof[k]
    if not dof:
        return
    z = plan.species_rot_collision_number[k]
    row[IP_ROT_DOF] = dof
    row[IP_ROT_FACTOR] = 1.0 + dof / (5.0 - 2.0 * model.omega)
    row[IP_ROT_P] = plan.species_rot_selection_probability[k]
    row[IP_ROT_ZINV] = 1.0 / z
    if plan.species_rotation[k] == "parker":
        row[IP_ROT_MODE] = 1.0
        row[IP_ZINF], row[IP_TSTAR] = get_species(model.species).parker
    theta = plan.species_theta_vib_k[k]
    if theta > 0.0:
        row[IP_THETA] = theta
        row[IP_VIB_TH] = K_B * theta / model.mass_kg
        row[IP_VIB_FACTOR] = 1.0 + 2.0 / (5.0 - 2.0 * model.omega)
        row[IP_VIB_ZINV] = 1.0 / plan.species_vib_collision_number[k]
        if vibration_number == "millikan-white":
            mu = 0.5 * model.mass_kg * N_A * 1e3
            row[IP_VIB_MODE] = 1.0
            row[IP_MW_A] = 1.16e-3 * math.sqrt(mu) * theta ** (4.0 / 3.0)
            row[IP_MW_B] = 0.015 * mu ** 0.25
            row[IP_NU_P] = (4.0 * model.d_ref_m ** 2
                            * math.sqrt(math.pi * K_B * model.t_ref_k / model.mass_kg)
                            * model.t_ref_k ** (model.omega - 1.0) / K_B)
        else:
            row[IP_VIB_P] = internal.vib_selection_probability(float(vibration_number),
                                                               model.omega)
