"""Macroscopic fields from accumulated velocity moments (kinetic-theory definitions).

With C = c - u the peculiar velocity (Bird 1994 sec. 1.4):
n = <N> F_N / V;  u = <c>;  k T_i = m <C_i^2>;  T = (T_x + T_y + T_z)/3;  p = n k T;
shear stress tau_xy = -rho <C_x C_y>;  heat flux q_i = (rho/2) <C^2 C_i> + rho <e C_i>
(e the internal energy per unit mass; <e C_i> = <e c_i> - <e> u_i),
expanded in raw moments as <C^2 C_x> = <c^2 c_x> - u_x <c^2>
- 2 (u_x <c_x c_x> + u_y <c_x c_y> + u_z <c_x c_z>) + 2 u_x u^2.

Molecules with internal energy (Bird 1994 sec. 1.4 and ch. 5): T_rot = 2 <e_rot> / (zeta_r k); the vibrational mode of mean energy
<e_vib> has T_vib = theta / ln(1 + k theta / <e_vib>) and zeta_v = 2 <e_vib> / (k T_vib);
the overall temperature weights each by its degrees of freedom,
T = (3 T_tr + zeta_r T_rot + zeta_v T_vib) / (3 + zeta_r + zeta_v).
"""

from __future__ import annotations

import numpy as np

from rarefy.constants import K_B
from rarefy.kernels.config import (
    M_C2, M_C2VX, M_C2VY, M_EROT, M_EVIB, M_EVX, M_EVY, M_N, N_MOMENTS, M_VX, M_VXX, M_VXY, M_VXZ, M_VY, M_VYY, M_VYZ, M_VZ, M_VZZ,
)

__all__ = ["FIELD_UNITS", "INTERNAL_FIELDS", "fields_from_moments", "internal_temperatures",
           "cell_fields", "field_unit", "species_internal"]

FIELD_UNITS = {
    "number_density": "m^-3",
    "velocity_x": "m/s",
    "velocity_y": "m/s",
    "velocity_z": "m/s",
    "temperature": "K",
    "temperature_x": "K",
    "temperature_y": "K",
    "temperature_z": "K",
    "pressure": "Pa",
    "shear_stress_xy": "Pa",
    "heat_flux_x": "W/m^2",
    "heat_flux_y": "W/m^2",
    "particles_per_cell": "1",
    "temperature_rotational": "K",
    "temperature_vibrational": "K",
    "temperature_overall": "K",
}
# fields only gases with internal energy have (the vibrational one only with vibration on)
INTERNAL_FIELDS = ("temperature_rotational", "temperature_vibrational", "temperature_overall")


def fields_from_moments(sums: np.ndarray, nsteps: int, volume: np.ndarray, mass_kg: float,
                        fnum: float, rot_dof: int = 0,
                        theta_vib_k: float = 0.0) -> dict[str, np.ndarray]:
    """Fields per cell from moment sums ``sums[ncell, N_MOMENTS]`` over ``nsteps`` steps.

    With ``rot_dof`` > 0 the rotational and overall temperatures are added, and with
    ``theta_vib_k`` > 0 (vibration on) the vibrational one. Cells that held no particle
    get NaN velocities, temperatures and fluxes.
    """
    cnt = sums[:, M_N]
    with np.errstate(invalid="ignore", divide="ignore"):
        inv = np.where(cnt > 0, 1.0 / cnt, np.nan)
        n = np.where(volume > 0, cnt / nsteps * fnum / np.where(volume > 0, volume, 1.0), 0.0)
        ux, uy, uz = sums[:, M_VX] * inv, sums[:, M_VY] * inv, sums[:, M_VZ] * inv
        cxx, cyy, czz = sums[:, M_VXX] * inv, sums[:, M_VYY] * inv, sums[:, M_VZZ] * inv
        cxy, cxz, cyz = sums[:, M_VXY] * inv, sums[:, M_VXZ] * inv, sums[:, M_VYZ] * inv
        c2 = sums[:, M_C2] * inv
        u2 = ux * ux + uy * uy + uz * uz
        tx = mass_kg / K_B * (cxx - ux * ux)
        ty = mass_kg / K_B * (cyy - uy * uy)
        tz = mass_kg / K_B * (czz - uz * uz)
        t = (tx + ty + tz) / 3.0
        rho = n * mass_kg
        q3x = sums[:, M_C2VX] * inv - ux * c2 - 2.0 * (ux * cxx + uy * cxy + uz * cxz) \
            + 2.0 * ux * u2
        q3y = sums[:, M_C2VY] * inv - uy * c2 - 2.0 * (ux * cxy + uy * cyy + uz * cyz) \
            + 2.0 * uy * u2
        e_int = (sums[:, M_EROT] + sums[:, M_EVIB]) * inv
        qix = sums[:, M_EVX] * inv - e_int * ux     # 0 for a monatomic gas
        qiy = sums[:, M_EVY] * inv - e_int * uy
    out = {
        "number_density": n,
        "velocity_x": ux,
        "velocity_y": uy,
        "velocity_z": uz,
        "temperature": t,
        "temperature_x": tx,
        "temperature_y": ty,
        "temperature_z": tz,
        "pressure": n * K_B * t,
        "shear_stress_xy": -rho * (cxy - ux * uy),
        "heat_flux_x": rho * (0.5 * q3x + qix),
        "heat_flux_y": rho * (0.5 * q3y + qiy),
        "particles_per_cell": cnt / nsteps,
    }
    if rot_dof:
        out.update(internal_temperatures(sums[:, M_EROT] * inv, sums[:, M_EVIB] * inv, t,
                                         mass_kg, rot_dof, theta_vib_k))
    return out


def internal_temperatures(e_rot, e_vib, t_tr, mass_kg: float, rot_dof: int,
                          theta_vib_k: float = 0.0) -> dict[str, np.ndarray]:
    """Rotational, vibrational (when ``theta_vib_k`` > 0) and overall temperatures (K)
    from the mean internal energies per unit mass (m^2/s^2) and T_tr (K)."""
    from rarefy.gas.internal import vibrational_temperature

    t_rot = 2.0 * mass_kg * np.asarray(e_rot) / (rot_dof * K_B)
    out = {"temperature_rotational": t_rot}
    heat = 3.0 * t_tr + rot_dof * t_rot
    dof = 3.0 + rot_dof
    if theta_vib_k > 0.0:
        ev = mass_kg * np.asarray(e_vib)
        t_vib = vibrational_temperature(ev, theta_vib_k)
        with np.errstate(invalid="ignore", divide="ignore"):
            zeta_v = np.where(t_vib > 0.0, 2.0 * ev / (K_B * np.where(t_vib > 0, t_vib, 1.0)),
                              0.0)
        out["temperature_vibrational"] = t_vib
        heat = heat + zeta_v * t_vib
        dof = dof + zeta_v
    out["temperature_overall"] = heat / dof
    return out


def species_internal(plan) -> tuple[tuple[int, ...], tuple[float, ...]]:
    """(rotational dof, theta_vib in K or 0) per species of a plan (a ``Plan`` or the
    dict a result file holds; results written before mixtures of molecules give the
    single values)."""
    get = plan.get if isinstance(plan, dict) else lambda k, d=None: getattr(plan, k, d)
    dofs = get("species_rot_dof", ()) or (get("rot_dof", 0),)
    thetas = get("species_theta_vib_k", ()) or (get("theta_vib_k", 0.0),)
    return tuple(int(d) for d in dofs), tuple(float(t) for t in thetas)


def cell_fields(sums: np.ndarray, nsteps: int, volume: np.ndarray, masses: np.ndarray,
                fnum, rot_dof=(0,), theta_vib_k=(0.0,),
                names: tuple[str, ...] = ()) -> dict[str, np.ndarray]:
    """Fields per cell of a pure gas (:func:`fields_from_moments`) or of a mixture;
    ``rot_dof`` and ``theta_vib_k`` per species (:func:`species_internal`).

    A mixture's sums hold species k in columns k * N_MOMENTS + M_*. Its fields are those of
    the whole gas: the moments weighted by m_k / m_mean (m_mean the cell's number-weighted
    mean mass) make :func:`fields_from_moments` return the number density, the
    mass-averaged velocity u, the temperature sum_k m_k <(c - u)^2> / (3 k N), pressure
    n k T, shear stress and heat flux of the mixture (Bird 1994 sec. 1.5, from memory).
    Each species adds ``number_density_<name>``, ``mole_fraction_<name>`` and its
    ``velocity_x_<name>``, ``velocity_y_<name>`` (diffusion shows as their difference
    from the mixture's). Where molecules take part, each adds
    ``temperature_rotational_<name>`` (and ``temperature_vibrational_<name>``), and the
    mixture gets ``temperature_rotational`` (the rotational energy of all its molecules
    over their rotational dof) and ``temperature_overall`` (every degree of freedom of
    every molecule weighted alike, as for a pure gas).
    """
    nsp = len(masses)
    if nsp == 1:
        return fields_from_moments(sums, nsteps, volume, float(masses[0]), fnum, rot_dof[0],
                                   theta_vib_k[0])
    blocks = [sums[:, k * N_MOMENTS:(k + 1) * N_MOMENTS] for k in range(nsp)]
    counts = np.array([b[:, M_N] for b in blocks])
    total = counts.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        m_mean = np.where(total > 0, (masses[:, None] * counts).sum(axis=0)
                          / np.where(total > 0, total, 1.0), masses.mean())
        weighted = sum(b * (m / m_mean)[:, None] for b, m in zip(blocks, masses))
        out = fields_from_moments(weighted, nsteps, volume, m_mean, fnum)
        heat = 3.0 * total * out["temperature"]   # sums of dof * T over the molecules
        dof = 3.0 * total
        rot_heat = np.zeros_like(heat)
        rot_dof_sum = np.zeros_like(heat)
        for k, (name, b) in enumerate(zip(names, blocks)):
            part = fields_from_moments(b, nsteps, volume, float(masses[k]), fnum,
                                       rot_dof[k], theta_vib_k[k])
            out[f"number_density_{name}"] = part["number_density"]
            out[f"mole_fraction_{name}"] = np.where(total > 0, b[:, M_N] / total, np.nan)
            out[f"velocity_x_{name}"] = part["velocity_x"]
            out[f"velocity_y_{name}"] = part["velocity_y"]
            if not rot_dof[k]:
                continue
            n_k = b[:, M_N]
            t_rot = part["temperature_rotational"]
            out[f"temperature_rotational_{name}"] = t_rot
            have = n_k > 0
            rot_heat += np.where(have, n_k * rot_dof[k] * t_rot, 0.0)
            rot_dof_sum += n_k * rot_dof[k]
            if theta_vib_k[k] > 0.0:
                t_vib = part["temperature_vibrational"]
                out[f"temperature_vibrational_{name}"] = t_vib
                ev = masses[k] * b[:, M_EVIB] * np.where(have, 1.0 / np.where(have, n_k, 1), 0)
                zeta_v = np.where(t_vib > 0.0, 2.0 * ev / (K_B * np.where(t_vib > 0, t_vib,
                                                                           1.0)), 0.0)
                heat += np.where(have, n_k * zeta_v * t_vib, 0.0)
                dof += n_k * zeta_v
        if rot_dof_sum.any():
            out["temperature_rotational"] = np.where(rot_dof_sum > 0,
                                                     rot_heat / rot_dof_sum, np.nan)
            out["temperature_overall"] = np.where(total > 0, (heat + rot_heat)
                                                  / (dof + rot_dof_sum), np.nan)
    return out


def field_unit(name: str) -> str:
    """Unit of a cell field, species fields included (``number_density_He``: m^-3)."""
    if name in FIELD_UNITS:
        return FIELD_UNITS[name]
    for prefix, unit in (("number_density_", "m^-3"), ("mole_fraction_", "1"),
                         ("velocity_", "m/s"), ("temperature_", "K")):
        if name.startswith(prefix):
            return unit
    raise KeyError(name)
