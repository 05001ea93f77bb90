"""Run summaries: the JSON contract of ``rarefy report --json`` and its text form.

Stable top-level keys: ``gas``, ``knudsen_number``, ``rarefaction_parameter``,
``diagnostics`` (``collision_frequency_hz``, ``mean_collision_separation_over_mfp``,
``particles_per_cell``) and ``flux_planes`` (per plane ``mass_flow_kg_s``,
``mass_flow_stderr_kg_s``, ``free_molecular_mass_flow_kg_s``,
``transmission_probability``, ``transmission_probability_stderr``) and ``probes``
(per probe ``number_density_m3``, ``mean_speed_m_s``, ``temperature_k``,
``speed_ratio`` and the rest of :func:`rarefy.post.probes.probe_results`, each sampled
value with its ``_stderr`` twin, the unit staying last); more keys may be added, none
removed.
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

from rarefy.case import parse_case
from rarefy.io.result import ResultData, read_result
from rarefy.post.probes import probe_results
from rarefy.post.results import diagnostics, flux_plane_results, surface_results

__all__ = ["build_report", "format_report", "load_report"]


def build_report(r: ResultData) -> dict:
    """The summary of a result as plain JSON-ready data (SI units in the key names)."""
    case = parse_case(r.case_text, r.path, overrides=case_overrides(r) or None)
    planes = flux_plane_results(r, case)
    for row in planes.values():
        dp = row["upstream_pressure_pa"] - row["downstream_pressure_pa"]
        row["conductance_m3_s"] = row["throughput_pa_m3_s"] / dp if dp > 0 else math.nan
        row["conductance_stderr_m3_s"] = row["throughput_stderr_pa_m3_s"] / dp \
            if dp > 0 else math.nan
    p = r.plan
    return {
        "title": case.title,
        "case_overrides": case_overrides(r),
        "gas": p["gas"],
        "model": p["model"],
        "seed": r.attrs["seed"],
        "rarefy_version": r.attrs["rarefy_version"],
        "interrupted": bool(r.attrs.get("interrupted", False)),
        "knudsen_number": p["knudsen_number"],
        "rarefaction_parameter": p["rarefaction_parameter"],
        "characteristic_length_m": p["characteristic_length_m"],
        "reference_pressure_pa": p["reference_pressure_pa"],
        "reference_temperature_k": p["reference_temperature_k"],
        "mean_free_path_m": p["mean_free_path_m"],
        "internal_energy": internal_line_of(p),
        "steps": r.attrs["steps"],
        "stop_reason": r.attrs.get("stop_reason", ""),
        "sample_start_step": r.attrs.get("sample_start_step"),
        "settle_reason": r.attrs.get("settle_reason", ""),
        "sampled_steps": r.batches * r.steps_per_batch,
        "batches": r.batches,
        "time_step_s": r.attrs["time_step_s"],
        "particle_weight": r.attrs["particle_weight"],
        "diagnostics": diagnostics(r),
        "flux_planes": planes,
        "surfaces": surface_results(r),
        "probes": probe_results(r, case),
        "plan_warnings": p.get("warnings", []) + (
            [f"{r.attrs['lost_duplicates']} radial-weighting duplicates did not fit in "
             "memory and were dropped: the density near the axis is biased low"]
            if r.attrs.get("lost_duplicates", 0) else []),
    }


def internal_line_of(plan: dict) -> str:
    """The plan's line on internal energy, from the plan as stored in a result."""
    from rarefy.plan import Plan, internal_line

    if plan.get("rot_dof") and "rotation" not in plan:
        return "rotation not exchanged (a result of an older rarefy)"
    names = {f.name for f in dataclasses.fields(Plan)}
    return internal_line(Plan(**{k: v for k, v in plan.items() if k in names}))


def case_overrides(r: ResultData) -> dict:
    """The ``--set`` overrides the run applied on top of its case text."""
    return {k: v for k, v in json.loads(r.attrs.get("case_overrides", "[]"))}


def load_report(rundir: str | Path) -> dict:
    return build_report(read_result(rundir))


def _pm(value: float, err: float, unit: str, fmt: str = ".4g") -> str:
    if err is None or not math.isfinite(err):
        return f"{value:{fmt}} {unit}"
    return f"{value:{fmt}} ± {err:.2g} {unit}"


def format_report(rep: dict) -> str:
    """Human-readable summary: every sampled number with its standard error and unit."""
    d = rep["diagnostics"]
    lines = [
        f"{rep['title'] or 'rarefy run'}",
        f"  gas {rep['gas']} ({rep['model'].upper()}), seed {rep['seed']}, "
        f"{rep['sampled_steps']} sampled steps in {rep['batches']} batches"
        + ("  [INTERRUPTED: partial sampling]" if rep["interrupted"] else ""),
        f"  sampling began at step {rep['sample_start_step']}"
        + (f" ({rep['settle_reason']})" if rep.get("settle_reason") else ""),
        f"  stopped: {rep['stop_reason']}",
        f"  reference: {rep['reference_pressure_pa']:.4g} Pa, "
        f"{rep['reference_temperature_k']:.4g} K, mean free path "
        f"{rep['mean_free_path_m'] * 1e3:.4g} mm",
        *([f"  internal energy: {rep['internal_energy']}"] if rep.get("internal_energy")
          else []),
        f"  Knudsen number {rep['knudsen_number']:.4g} (L = "
        f"{rep['characteristic_length_m'] * 1e3:.4g} mm), rarefaction parameter delta "
        f"{rep['rarefaction_parameter']:.4g}",
        "",
        "Diagnostics",
        f"  collision frequency      "
        f"{_pm(d['collision_frequency_hz'], d['collision_frequency_stderr_hz'], 'Hz')}",
        f"  collision separation     {d['mean_collision_separation_over_mfp']:.3g} "
        "mean free paths (reference state)",
        f"  particles per cell       {d['particles_per_cell']:.3g} mean, "
        f"{d['particles_per_cell_min']:.3g} min",
    ]
    for name, fp in rep["flux_planes"].items():
        an = fp["analytic"]
        q, q_se = fp["throughput_pa_m3_s"], fp["throughput_stderr_pa_m3_s"]
        c, c_se = fp["conductance_m3_s"], fp["conductance_stderr_m3_s"]
        w, w_se = fp["transmission_probability"], fp["transmission_probability_stderr"]
        v, v_se = fp["crossing_mean_speed_m_s"], fp["crossing_mean_speed_stderr_m_s"]
        lines += [
            "",
            f"Flux plane '{name}' (area {fp['area_m2']:.4g} m^2)",
            "  mass flow                "
            + _pm(fp["mass_flow_kg_s"], fp["mass_flow_stderr_kg_s"], "kg/s"),
            "  throughput               " + _pm(q, q_se, "Pa m^3/s")
            + " = " + _pm(q * 10.0, q_se * 10.0, "mbar L/s"),
            "  conductance              " + _pm(c * 1e3, c_se * 1e3, "L/s"),
            "  transmission probability " + _pm(w, w_se, ""),
            "  crossing mean speed (+)  " + _pm(v, v_se, "m/s"),
            "  analytic estimates:",
            f"    free-molecular aperture flow      {fp['free_molecular_mass_flow_kg_s']:.4g} "
            "kg/s (transmission 1: the reference of the transmission probability)",
            "    free-molecular net flow           "
            f"{an['free_molecular_net_mass_flow_kg_s']:.4g} kg/s (transmission "
            f"{an['free_molecular_transmission']:.4g}"
            + (f", {an['opening']}" if an["opening"] else "") + ")",
            "    ideal isentropic choked flow      "
            f"{an['isentropic_choked_mass_flow_kg_s']:.4g} kg/s (transmission "
            f"{an['isentropic_choked_transmission_probability']:.4g}, gamma "
            f"{an['gamma']:.4g})",
            *(["    viscous (Poiseuille) flow         "
               f"{an['viscous_mass_flow_kg_s']:.4g} kg/s (long-duct continuum limit)"]
              if math.isfinite(an["viscous_mass_flow_kg_s"]) else []),
            "    free-molecular crossing speed     "
            f"{an['free_molecular_crossing_mean_speed_m_s']:.4g} m/s",
        ]
    if rep["surfaces"]:
        lines += ["", "Surfaces (mean over each wall)"]
        for name, s in rep["surfaces"].items():
            lines.append(
                f"  {name:<16} p {_pm(s['pressure_pa'], s['pressure_stderr_pa'], 'Pa')}; "
                f"shear {_pm(s['shear_stress_pa'], s['shear_stress_stderr_pa'], 'Pa')}; "
                f"heat flux {_pm(s['heat_flux_w_m2'], s['heat_flux_stderr_w_m2'], 'W/m^2')}")
    for name, pr in rep.get("probes", {}).items():
        fit = pr["speed_fit"]
        e = pr["direction"]
        lines += [
            "",
            f"Probe '{name}' (volume {pr['volume_m3']:.4g} m^3, flow direction {e})",
            "  number density           "
            + _pm(pr["number_density_m3"], pr["number_density_stderr_m3"], "m^-3"),
            "  drift velocity (x, y, z) " + ", ".join(
                _pm(pr[f"velocity_{c}_m_s"], pr[f"velocity_{c}_stderr_m_s"], "m/s", ".4g")
                for c in "xyz"),
            "  temperature              "
            + _pm(pr["temperature_k"], pr["temperature_stderr_k"], "K")
            + f"; parallel ({e}) "
            + _pm(pr["temperature_parallel_k"], pr["temperature_parallel_stderr_k"], "K")
            + "; perpendicular "
            + _pm(pr["temperature_perpendicular_k"], pr["temperature_perpendicular_stderr_k"],
                  "K"),
            *(["  internal temperatures    " + "; ".join(
                f"{label} " + _pm(pr[f"temperature_{key}_k"],
                                  pr[f"temperature_{key}_stderr_k"], "K")
                for key, label in (("rotational", "rotational"),
                                   ("vibrational", "vibrational"), ("overall", "overall"))
                if f"temperature_{key}_k" in pr)] if "temperature_rotational_k" in pr else []),
            "  speed ratio              " + _pm(pr["speed_ratio"], pr["speed_ratio_stderr"], "")
            + " (drift / sqrt(2 k T_par / m))",
            "  speeds: most probable    "
            + _pm(pr["most_probable_speed_m_s"], pr["most_probable_speed_stderr_m_s"], "m/s")
            + "; mean " + _pm(pr["mean_speed_m_s"], pr["mean_speed_stderr_m_s"], "m/s")
            + "; rms " + _pm(pr["rms_speed_m_s"], pr["rms_speed_stderr_m_s"], "m/s"),
            "  drifting Maxwellian fit  T "
            + _pm(fit["temperature_k"], fit["temperature_stderr_k"], "K")
            + f" at the drift speed {fit['drift_m_s']:.4g} m/s; chi^2/dof "
            f"{fit['reduced_chi_square']:.3g}, KS distance {fit['ks_distance']:.3g} "
            f"(p = {fit['ks_p_value']:.3g}, {fit['effective_samples']:.3g} effective samples)",
            "  per-axis Gaussian fits   " + "; ".join(
                f"T_{c} " + _pm(f["temperature_k"], f["temperature_stderr_k"], "K")
                for c, f in pr["component_fits"].items()),
        ]
        an = pr["analytic"]
        lines.append(f"  source gas at rest ({an['temperature_k']:.4g} K): most probable "
                     f"{an['most_probable_speed_m_s']:.4g} m/s, mean "
                     f"{an['mean_speed_m_s']:.4g} m/s, rms {an['rms_speed_m_s']:.4g} m/s")
        fm = an.get("free_molecular_beam")
        if fm:
            lines.append(
                f"  free-molecular beam here: n {fm['number_density_m3']:.4g} m^-3, drift "
                f"{fm['drift_m_s']:.4g} m/s, T_par {fm['temperature_parallel_k']:.4g} K, "
                f"T_perp {fm['temperature_perpendicular_k']:.4g} K, speed ratio "
                f"{fm['speed_ratio']:.4g}")
        if pr["overflow_fraction"] > 1e-4:
            lines.append(f"  note: {pr['overflow_fraction']:.2%} of the molecules were faster "
                         "than the histogram range; raise [histograms] speed_max")
    if rep["plan_warnings"]:
        lines += ["", "Resolution warnings"] + [f"  - {w}" for w in rep["plan_warnings"]]
    return "\n".join(lines)
