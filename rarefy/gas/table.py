"""Plain-text and JSON-ready tables of the species database."""

from __future__ import annotations

from rarefy.constants import N_A, ZERO_CELSIUS_K
from rarefy.gas.internal import DEFAULT_ZROT, parker_zrot
from rarefy.gas.kinetic import mean_free_path_from_pressure, viscosity
from rarefy.gas.species import SPECIES

__all__ = ["gas_table_rows", "format_gas_table"]

_MFP_P_PA = 1.0
_MFP_T_K = 300.0


def gas_table_rows() -> list[dict]:
    """One dict per species, all numbers in SI units.

    Returns
    -------
    list of dict
        Keys: ``name``, ``long_name``, ``mass_kg``, ``molar_mass_kg_per_mol``,
        ``d_vhs_m``, ``omega``, ``alpha`` (None if absent), ``d_vss_m`` (None if
        absent), ``rot_dof``, ``z_rot_default`` (None for monatomic gases),
        ``parker_z_inf``, ``parker_t_star_k``, ``z_rot_parker_300k`` (None without
        Parker constants), ``theta_vib_k`` (None: vibration not modelled),
        ``mu_ref_pa_s``, ``t_ref_k``,
        ``viscosity_vhs_273_15k_pa_s`` (VHS, [B94] eq. 4.62),
        ``mean_free_path_vhs_1pa_300k_m`` (VHS, [B94] eq. 4.65), ``source``,
        ``internal_source``.
    """
    rows = []
    for sp in SPECIES.values():
        vhs = sp.model("vhs")
        rows.append({
            "name": sp.name,
            "long_name": sp.long_name,
            "mass_kg": sp.mass_kg,
            "molar_mass_kg_per_mol": sp.mass_kg * N_A,
            "d_vhs_m": sp.d_vhs_m,
            "omega": sp.omega,
            "alpha": sp.alpha,
            "d_vss_m": sp.d_vss_m,
            "rot_dof": sp.rot_dof,
            "z_rot_default": DEFAULT_ZROT if sp.rot_dof else None,
            "parker_z_inf": sp.parker[0] if sp.parker else None,
            "parker_t_star_k": sp.parker[1] if sp.parker else None,
            "z_rot_parker_300k": float(parker_zrot(300.0, *sp.parker)) if sp.parker
            else None,
            "theta_vib_k": sp.theta_vib_k,
            "mu_ref_pa_s": sp.mu_ref_pa_s,
            "t_ref_k": sp.t_ref_k,
            "viscosity_vhs_273_15k_pa_s": float(viscosity(vhs, ZERO_CELSIUS_K)),
            "mean_free_path_vhs_1pa_300k_m": float(
                mean_free_path_from_pressure(vhs, _MFP_P_PA, _MFP_T_K)),
            "source": sp.source,
            "internal_source": list(sp.internal_source),
        })
    return rows


def _opt(value, scale, fmt):
    return "-" if value is None else format(value * scale, fmt)


def format_gas_table() -> str:
    """Plain-text table of every species with units in the headers and sources below.

    Returns
    -------
    str
        Columns: name, long name, molar mass (g/mol), d_VHS (1e-10 m), omega,
        alpha, d_VSS (1e-10 m), rotational degrees of freedom, default Z_rot, Z_rot by
        Parker's formula at 300 K, vibrational characteristic temperature (K), VHS
        viscosity at 273.15 K (uPa s), VHS mean free path at 1 Pa and 300 K (mm); then
        a ``Sources:`` block with each distinct citation once.
    """
    header = ("name", "long name", "M (g/mol)", "d_VHS (1e-10 m)", "omega", "alpha",
              "d_VSS (1e-10 m)", "rot. dof", "Z_rot", "Z_rot Parker 300 K",
              "theta_vib (K)", "mu(273.15 K) (uPa s)",
              "lambda(1 Pa, 300 K) (mm)")
    body = []
    for r in gas_table_rows():
        body.append((
            r["name"], r["long_name"],
            format(r["molar_mass_kg_per_mol"] * 1e3, ".3f"),
            format(r["d_vhs_m"] * 1e10, ".2f"),
            format(r["omega"], ".2f"),
            _opt(r["alpha"], 1.0, ".2f"),
            _opt(r["d_vss_m"], 1e10, ".2f"),
            str(r["rot_dof"]),
            _opt(r["z_rot_default"], 1.0, "g"),
            _opt(r["z_rot_parker_300k"], 1.0, ".2f"),
            _opt(r["theta_vib_k"], 1.0, ".0f"),
            format(r["viscosity_vhs_273_15k_pa_s"] * 1e6, ".2f"),
            format(r["mean_free_path_vhs_1pa_300k_m"] * 1e3, ".3f"),
        ))
    widths = [max(len(row[i]) for row in (header, *body)) for i in range(len(header))]

    def line(cells):
        out = [c.ljust(w) if i < 2 else c.rjust(w)
               for i, (c, w) in enumerate(zip(cells, widths))]
        return "  ".join(out).rstrip()

    lines = [line(header), "  ".join("-" * w for w in widths)]
    lines += [line(row) for row in body]
    lines.append("")
    lines.append("Viscosity and mean free path: VHS model, [B94] eqs. 4.62 and 4.65; "
                 "'-': no checked VSS data (use hs or vhs).")
    lines.append("Z_rot: rotational collision number used unless the case sets "
                 "gas.rotation (a number, or \"parker\" where Parker's constants exist); "
                 "theta_vib: the one vibrational mode, off unless gas.vibration = true.")
    lines.append("Sources:")
    seen = []
    for sp in SPECIES.values():
        for src in (sp.source, *sp.internal_source):
            if src and src not in seen:
                seen.append(src)
    lines += [f"  [{i}] {src}" for i, src in enumerate(seen, 1)]
    return "\n".join(lines) + "\n"
