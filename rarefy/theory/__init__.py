"""Analytic reference results (SI units) to show beside simulated ones.

Modules: ``effusion`` (kinetic theory of a gas at rest, thin apertures), ``transmission``
(free-molecular transmission probabilities of tubes and slots), ``continuum`` (isentropic
choked flow), ``couette`` (free-molecular planar Couette and heat-transfer limits).
"""

from rarefy.theory.continuum import (
    choked_mass_flux,
    gamma_from_internal_dof,
    isentropic_reduced_flow_rate,
)
from rarefy.theory.couette import free_molecular_couette_shear, free_molecular_heat_flux
from rarefy.theory.effusion import (
    aperture_conductance,
    flux_weighted_mean_energy,
    flux_weighted_mean_speed,
    free_molecular_mass_flow,
    mass_flux,
    mean_speed,
    number_flux,
    orifice_axis_density,
)
from rarefy.theory.maxwell import (
    characteristic_speeds,
    component_pdf,
    drifting_speed_pdf,
    flux_speed_cdf,
    flux_speed_pdf,
    speed_cdf,
    speed_pdf,
)
from rarefy.theory.transmission import (
    channel_transmission,
    channel_transmission_direct,
    tube_transmission,
    tube_transmission_direct,
    tube_transmission_long,
)

__all__ = [
    "aperture_conductance",
    "channel_transmission",
    "channel_transmission_direct",
    "characteristic_speeds",
    "choked_mass_flux",
    "component_pdf",
    "drifting_speed_pdf",
    "flux_speed_cdf",
    "flux_speed_pdf",
    "flux_weighted_mean_energy",
    "flux_weighted_mean_speed",
    "free_molecular_couette_shear",
    "free_molecular_heat_flux",
    "free_molecular_mass_flow",
    "gamma_from_internal_dof",
    "isentropic_reduced_flow_rate",
    "mass_flux",
    "mean_speed",
    "number_flux",
    "orifice_axis_density",
    "speed_cdf",
    "speed_pdf",
    "tube_transmission",
    "tube_transmission_direct",
    "tube_transmission_long",
]
