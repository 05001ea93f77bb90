"""Derived results with standard errors: flux planes, surfaces, diagnostics.

Standard errors are batch means: the sampling is cut into equal blocks, each
block gives one estimate, and stderr = std(estimates, ddof=1) / sqrt(blocks)
(common practice for correlated Monte Carlo series). Where a run has many short
blocks (``--target-error`` adds blocks), adjacent blocks are merged while at least
ten remain and the largest estimate is kept, so a correlation time longer than a
block (a molecule's residence in a long tube) still shows in the error.
"""

from __future__ import annotations

import math

import numpy as np

from rarefy.case import Case
from rarefy.constants import K_B
from rarefy.gas.mixture import mixture_of
from rarefy.gas.species import get_species
from rarefy.io.result import ResultData
from rarefy.post.uncertainty import batch_mean
from rarefy.kernels.config import (
    F_C2_POS, F_C_POS, F_N_NEG, F_N_POS, T_C2_IN, T_C2_OUT, T_EI_IN, T_EI_OUT, T_HITS, T_VN_IN, T_VN_OUT, T_VT_IN,
    T_VT_OUT,
)
from rarefy.gas import internal, kinetic
from rarefy.theory import channel_transmission, continuum, effusion, tube_transmission

__all__ = ["flux_plane_results", "surface_results", "diagnostics",
           "upstream_downstream"]


def upstream_downstream(case: Case) -> tuple[float, float, float]:
    """(p0 Pa, T0 K, p1 Pa): densest reservoir, and the lowest reservoir pressure
    (0 where any side is vacuum)."""
    res = [b for b in case.boundaries if b.kind == "reservoir"]
    if not res:
        return case.initial.pressure_pa, case.initial.temperature_k, 0.0
    up = max(res, key=lambda b: b.pressure_pa / b.temperature_k)
    down = 0.0 if any(b.kind == "vacuum" for b in case.boundaries) else \
        min(b.pressure_pa for b in res)
    return up.pressure_pa, up.temperature_k, down


def free_molecular_transmission(plane, axisymmetric: bool) -> float:
    """Free-molecular transmission probability of the opening a flux plane names (1 for
    thin orifices and slits; Clausing-type integral equations for tubes and channels)."""
    if plane.opening is None or plane.opening_length_m <= 0.0:
        return 1.0
    half = math.dist(plane.start, plane.end)
    if plane.opening == "tube" or (axisymmetric and plane.opening == "orifice"):
        return tube_transmission(plane.opening_length_m / half)
    gap = 2.0 * half if plane.mirrored else half
    return channel_transmission(plane.opening_length_m / gap)


def viscous_mass_flow(plane, axisymmetric, mu, p0, p1, t0, mass, depth) -> float:
    """Fully developed laminar (Poiseuille) flow of an isothermal ideal gas through the
    tube or channel a flux plane names, kg/s: pi R^4 (p0^2 - p1^2) / (16 mu L R_s T)
    (tube) and H^3 w (p0^2 - p1^2) / (24 mu L R_s T) (channel of gap H, depth w);
    textbook continuum results (e.g. Lafferty 1998, ch. 2). NaN for thin openings."""
    if plane.opening is None or plane.opening_length_m <= 0.0:
        return math.nan
    rs = K_B / mass
    half = math.dist(plane.start, plane.end)
    dp2 = p0 * p0 - p1 * p1
    if axisymmetric:
        return math.pi * half ** 4 * dp2 / (16.0 * mu * plane.opening_length_m * rs * t0)
    gap = 2.0 * half if plane.mirrored else half
    return gap ** 3 * depth * dp2 / (24.0 * mu * plane.opening_length_m * rs * t0)


def reservoir_fractions(case: Case) -> tuple[np.ndarray, np.ndarray]:
    """Mole fractions of the upstream (densest) and downstream (lowest-pressure)
    reservoirs of :func:`upstream_downstream`; a pure gas: [1.0], [1.0]."""
    default = np.asarray(case.gas.mole_fractions or (1.0,))
    res = [b for b in case.boundaries if b.kind == "reservoir"]
    if not res:
        return np.asarray(case.initial.mole_fractions or default), default
    up = max(res, key=lambda b: b.pressure_pa / b.temperature_k)
    down = min(res, key=lambda b: b.pressure_pa)
    return (np.asarray(up.mole_fractions or default),
            np.asarray(down.mole_fractions or default))


def _fm_crossing_speed(parts, t0: float) -> float:
    """Mean speed of the molecules crossing an opening in free-molecular effusion: each
    species' flux-weighted mean speed, weighted by its one-way flux p_k / sqrt(m_k)."""
    speeds = [float(effusion.flux_weighted_mean_speed(t0, mm)) for mm, _, _, _ in parts]
    if len(parts) == 1:
        return speeds[0]
    weights = [pu / math.sqrt(mm) for mm, _, pu, _ in parts]
    total = sum(weights)
    if total <= 0.0:
        return float(np.mean(speeds))
    return sum(w * c for w, c in zip(weights, speeds)) / total


def flux_plane_results(r: ResultData, case: Case) -> dict:
    """Per flux plane: mass flow, transmission probability, crossing speeds, theory.

    A mixture has a row for the whole gas and one per species ("throat He"); a species'
    free-molecular and transmission figures use its partial pressures, the whole gas's
    the sum over species (Graham's law: each species effuses at its own rate)."""
    sp = get_species(case.gas.species)
    fnum = r.attrs["particle_weight"]
    period = r.steps_per_batch * r.attrs["time_step_s"]
    p0, t0, p1 = upstream_downstream(case)
    x_up, x_down = reservoir_fractions(case)
    masses = r.species_mass
    mixture = len(r.species) > 1
    # the plan's gamma counts rotation and, when switched on, vibration at the reference
    # temperature (rarefy.gas.internal.gamma_of_gas); a mixture's at the upstream
    # reservoir's composition (gamma_of_mixture)
    gamma = r.plan.get("gamma", (5.0 + sp.rot_dof) / (3.0 + sp.rot_dof))
    if mixture and r.plan.get("species_rot_dof"):
        thetas = r.plan.get("species_theta_vib_k")
        gamma = internal.gamma_of_mixture(x_up, r.plan["species_rot_dof"],
                                          r.plan["reference_temperature_k"],
                                          thetas if any(thetas) else None)
    out = {}
    for k, name in enumerate(r.plane_names):
        spk = r.plane_species[k]
        factor = 2.0 if r.plane_mirrored[k] else 1.0
        tally = r.flux[:, k, :]
        if spk >= 0 or not mixture:           # one species: its own mass and pressures
            kk = max(spk, 0)
            m = float(masses[kk])
            parts = [(m, tally, p0 * x_up[kk], p1 * x_down[kk])]
        else:                                 # the whole mixture: its species' rows
            parts = [(float(masses[j]), r.flux[:, k + 1 + j, :], p0 * x_up[j],
                      p1 * x_down[j]) for j in range(len(r.species))]
        m_up = float(sum(x * mm for x, mm in zip(x_up, masses))) if not spk >= 0 \
            else parts[0][0]
        nets = [(t[:, F_N_POS] - t[:, F_N_NEG]) * fnum * factor / period
                for _, t, _, _ in parts]
        mdot, mdot_se = batch_mean(sum(net * mm for net, (mm, _, _, _) in zip(nets, parts)))
        if len(parts) == 1:                   # one species: as mass flow / m
            nflow, nflow_se = mdot / parts[0][0], mdot_se / parts[0][0]
            rho0 = parts[0][2] / (K_B / parts[0][0] * t0)
            thr = mdot / rho0 * parts[0][2] if rho0 > 0 else math.nan
            thr_se = mdot_se / rho0 * parts[0][2] if rho0 > 0 else math.nan
        else:                                 # p V of the molecules: N k T0
            nflow, nflow_se = batch_mean(sum(nets))
            thr, thr_se = nflow * K_B * t0, nflow_se * K_B * t0
        area = float(r.plane_area[k])
        fm = sum(effusion.free_molecular_mass_flow(area, pu, t0, mm) for mm, _, pu, _ in parts)
        fm_net = sum(effusion.free_molecular_mass_flow(area, pu, t0, mm, p_down_pa=pd)
                     for mm, _, pu, pd in parts)
        p_up = sum(pu for _, _, pu, _ in parts)
        p_down = sum(pd for _, _, _, pd in parts)
        with np.errstate(invalid="ignore", divide="ignore"):
            speed = tally[:, F_C_POS] / tally[:, F_N_POS]
            energy = sum(0.5 * mm * t[:, F_C2_POS] for mm, t, _, _ in parts) \
                / tally[:, F_N_POS]
        c_mean, c_se = batch_mean(speed)
        e_mean, e_se = batch_mean(energy)
        # continuum references: the whole gas expands together, a species carries its
        # mass fraction of the whole gas's flow
        share, cp_up, cp_down, cm_up = 1.0, p_up, p_down, m_up
        if mixture and spk >= 0:
            share = x_up[spk] * masses[spk] / float(x_up @ masses)
            cp_up, cp_down, cm_up = p0, p1, float(x_up @ masses)
        choked = continuum.choked_mass_flux(cp_up, t0, cm_up, gamma) * area * share
        plane = case.flux_planes[r.plane_index[k]]
        w_fm = free_molecular_transmission(plane, case.domain.axisymmetric)
        mix = mixture_of(case.gas)
        mu0 = mix.viscosity(t0, x_up) if mixture else \
            kinetic.viscosity(sp.model(case.gas.model), t0)
        viscous = viscous_mass_flow(plane, case.domain.axisymmetric, mu0, cp_up, cp_down, t0,
                                    cm_up, case.domain.depth_m) * share
        out[name] = {
            "species": r.species[spk] if spk >= 0 else "+".join(r.species),
            "mass_flow_kg_s": mdot,
            "mass_flow_stderr_kg_s": mdot_se,
            "number_flow_1_s": nflow,
            "number_flow_stderr_1_s": nflow_se,
            "throughput_pa_m3_s": thr,
            "throughput_stderr_pa_m3_s": thr_se,
            "free_molecular_mass_flow_kg_s": fm,
            "transmission_probability": mdot / fm if fm > 0 else math.nan,
            "transmission_probability_stderr": mdot_se / fm if fm > 0 else math.nan,
            "area_m2": area,
            "upstream_pressure_pa": p_up,
            "downstream_pressure_pa": p_down,
            "upstream_temperature_k": t0,
            "crossing_mean_speed_m_s": c_mean,
            "crossing_mean_speed_stderr_m_s": c_se,
            "crossing_mean_energy_j": e_mean,
            "crossing_mean_energy_stderr_j": e_se,
            "analytic": {
                "opening": plane.opening,
                "free_molecular_transmission": w_fm,
                "free_molecular_net_mass_flow_kg_s": w_fm * fm_net,
                "viscous_mass_flow_kg_s": viscous,
                "free_molecular_crossing_mean_speed_m_s": _fm_crossing_speed(parts, t0),
                "free_molecular_crossing_mean_energy_j":
                    effusion.flux_weighted_mean_energy(t0),
                "isentropic_choked_mass_flow_kg_s": choked,
                "isentropic_choked_transmission_probability": choked / fm if fm > 0
                else math.nan,
                "gamma": gamma,
            },
        }
    return out


def surface_results(r: ResultData) -> dict:
    """Per wall (or wall boundary): mean pressure, shear stress and heat flux to it."""
    m = r.attrs["mass_kg"]
    fnum = r.attrs["particle_weight"]
    period = r.steps_per_batch * r.attrs["time_step_s"]
    out = {}
    owners = np.array(r.facet_owner)
    for name in dict.fromkeys(r.facet_owner):
        sel = owners == name
        t = r.surf[:, sel, :].sum(axis=1)
        area = float(r.facet_area[sel].sum())
        scale = m * fnum / (period * area)
        p = (t[:, T_VN_IN] + t[:, T_VN_OUT]) * scale
        tau = (t[:, T_VT_IN] - t[:, T_VT_OUT]) * scale
        q = 0.5 * (t[:, T_C2_IN] - t[:, T_C2_OUT]) * scale
        if t.shape[1] > T_EI_OUT:   # internal energy given up to the surface
            q = q + (t[:, T_EI_IN] - t[:, T_EI_OUT]) * scale
        hits = t[:, T_HITS] * fnum / (period * area)
        row = {"area_m2": area}
        for key, unit, v in (("pressure", "pa", p), ("shear_stress", "pa", tau),
                             ("heat_flux", "w_m2", q), ("number_flux", "1_m2_s", hits)):
            row[f"{key}_{unit}"], row[f"{key}_stderr_{unit}"] = batch_mean(v)
        out[name] = row
    return out


def diagnostics(r: ResultData) -> dict:
    """Collision frequency, collision separation, particles per cell."""
    dt = r.attrs["time_step_s"]
    ncoll = r.collisions[:, 0]
    part_time = r.particles * dt
    with np.errstate(invalid="ignore", divide="ignore"):
        freq = 2.0 * ncoll / part_time
        sep = r.collisions[:, 1] / ncoll
    f_mean, f_se = batch_mean(freq)
    s_mean, _ = batch_mean(sep)
    mfp = r.plan["mean_free_path_m"]
    ppc = r.fields["particles_per_cell"]
    gas = ppc[(r.volume > 0) & (ppc > 0)]
    return {
        "collision_frequency_hz": f_mean,
        "collision_frequency_stderr_hz": f_se,
        "mean_collision_separation_m": s_mean,
        "mean_collision_separation_over_mfp": s_mean / mfp if mfp > 0 else math.nan,
        "particles_per_cell": float(gas.mean()) if gas.size else 0.0,
        "particles_per_cell_min": float(gas.min()) if gas.size else 0.0,
        "mean_particles": float(r.particles.sum() / max(1, r.batches * r.steps_per_batch)),
        "collisions_sampled": float(ncoll.sum()),
    }
