"""Probe results: density, drift, temperatures, speeds and Maxwell-Boltzmann fits.

For the molecules in a probe (weights w: the particle weight of their cell),

* number density n = sum(w) F_N / (V steps);
* drift u = <v>; temperature T = m (<c^2> - |u|^2) / (3k); parallel temperature
  T_par = m (<v_e^2> - u_e^2) / k along the probe's flow direction e, perpendicular
  T_perp = m (<c^2> - <v_e^2> - |u|^2 + u_e^2) / (2k) (Bird 1994 sec. 1.4, eqs. for the
  translational temperature and its components);
* speed ratio S = u_e / sqrt(2 k T_par / m) (beam practice: drift over the parallel
  thermal speed);
* mean and rms speed <c>, sqrt(<c^2>); the most probable speed is the mode of the
  fitted drifting Maxwellian.

Each is evaluated from the sums over all batches; its standard error is the jackknife
over the batches (leave one batch out), which stays stable for ratios where a batch holds
few molecules. The fits (``rarefy.post.fit``) are an isotropic drifting
Maxwellian to the speed histogram, and a Gaussian to each velocity-component histogram
(together the drifting anisotropic Maxwellian: one temperature per axis).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from scipy import optimize, stats

from rarefy.constants import K_B
from rarefy.gas import kinetic
from rarefy.post.results import reservoir_fractions, upstream_downstream
from rarefy.theory import effusion
from rarefy.io.result import ResultData, read_result
from rarefy.kernels.config import (
    F_HIST, H_SPEED, H_VX, H_VY, H_VZ, PM_C, PM_C2, PM_EROT, PM_EVIB, PM_VX, PM_VXX, PM_VY, PM_VYY, PM_VZ,
    PM_VZZ, PM_W,
)
from rarefy.theory.maxwell import drifting_speed_pdf
from rarefy.post.fields import internal_temperatures, species_internal
from rarefy.post.fit import BinnedFit, drifting_speed_cdf, fit_binned
from rarefy.post.speed_distribution import SpeedDistribution

__all__ = ["probe_results", "probe_batch_values", "speed_fit_pdf", "load_speed_distribution",
           "speed_distribution", "stderr_key"]

COMPONENTS = (("x", H_VX), ("y", H_VY), ("z", H_VZ))


def probe_batch_values(mom: np.ndarray, mass_kg: float, volume_m3: float, fnum: float,
                       steps_per_batch: int, direction: str = "x", rot_dof: int = 0,
                       theta_vib_k: float = 0.0) -> dict[str, np.ndarray]:
    """Probe quantities per batch from the summed moments ``mom[batch, PM_*]`` (SI); with
    ``rot_dof`` > 0 also the rotational, (vibration on) vibrational and overall
    temperatures (``rarefy.post.fields.internal_temperatures``)."""
    w = mom[:, PM_W]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = {c: mom[:, col] / w for c, col in (("x", PM_VX), ("y", PM_VY), ("z", PM_VZ))}
        sq = {c: mom[:, col] / w for c, col in (("x", PM_VXX), ("y", PM_VYY), ("z", PM_VZZ))}
        c1 = mom[:, PM_C] / w
        c2 = mom[:, PM_C2] / w
        u2 = mean["x"] ** 2 + mean["y"] ** 2 + mean["z"] ** 2
        ue = mean[direction]
        t_par = mass_kg * (sq[direction] - ue ** 2) / K_B
        t_all = mass_kg * (c2 - u2) / (3.0 * K_B)
        t_perp = (3.0 * t_all - t_par) / 2.0
        out = {
            "number_density_m3": w * fnum / (volume_m3 * steps_per_batch),
            "velocity_x_m_s": mean["x"], "velocity_y_m_s": mean["y"],
            "velocity_z_m_s": mean["z"],
            "temperature_k": t_all,
            "temperature_parallel_k": t_par,
            "temperature_perpendicular_k": t_perp,
            "speed_ratio": ue / np.sqrt(2.0 * K_B * t_par / mass_kg),
            "mean_speed_m_s": c1,
            "rms_speed_m_s": np.sqrt(c2),
        }
        if rot_dof and mom.shape[1] > PM_EVIB:
            temps = internal_temperatures(mom[:, PM_EROT] / w, mom[:, PM_EVIB] / w, t_all,
                                          mass_kg, rot_dof, theta_vib_k)
            out.update({k + "_k": v for k, v in temps.items()})
        return out


def stderr_key(key: str) -> str:
    """The report's name of a quantity's standard error: the unit stays last
    (``number_density_m3`` -> ``number_density_stderr_m3``)."""
    for unit in ("_m_s", "_m3", "_k"):
        if key.endswith(unit):
            return key[: -len(unit)] + "_stderr" + unit
    return key + "_stderr"


def _mode(drift: float, a: float) -> float:
    """Most probable speed of the drifting Maxwellian (maximum of its pdf)."""
    def neg_pdf(v):
        u = max(drift, 1e-4 * a)
        return -v / u * (math.exp(-((v - u) / a) ** 2) - math.exp(-((v + u) / a) ** 2))
    hi = drift + 3.0 * a
    return float(optimize.minimize_scalar(neg_pdf, bounds=(0.0, hi), method="bounded",
                                          options=dict(xatol=1e-9 * hi)).x)


def speed_fit_pdf(v, drift_m_s: float, temperature_k: float, mass_kg: float):
    """Pdf (s/m) of the fitted drifting Maxwellian speed distribution."""
    return drifting_speed_pdf(v, mass_kg, temperature_k, drift_m_s)


def _fit_summary(fit: BinnedFit | None) -> dict:
    if fit is None:
        return {"reduced_chi_square": math.nan, "ks_distance": math.nan,
                "ks_p_value": math.nan, "effective_samples": math.nan}
    return {"reduced_chi_square": fit.reduced_chi_square, "ks_distance": fit.ks_distance,
            "ks_p_value": fit.ks_p_value, "effective_samples": fit.effective_samples}


def _speed_fit(edges, hist, mass_kg, start_t, drift) -> dict:
    """Fit the temperature of an isotropic Maxwellian drifting at the measured drift speed
    ``drift`` (m/s) to the speed histogram. From speeds alone the drift and the temperature
    are nearly degenerate at small drift (<c^2> = 3kT/m + u^2 fixes only their sum), so
    the drift comes from the mean velocity, which measures it far better."""
    a0 = math.sqrt(2.0 * K_B * max(start_t, 1e-3) / mass_kg)
    fit = fit_binned(edges, hist, lambda v, a: drifting_speed_cdf(v, drift, a), [a0],
                     lower=[1e-9])
    out = {"drift_m_s": drift, "temperature_k": math.nan,
           "temperature_stderr_k": math.nan, "most_probable_speed_m_s": math.nan,
           "most_probable_speed_stderr_m_s": math.nan, **_fit_summary(fit)}
    if fit is None:
        return out
    a, sa = fit.params[0], fit.stderr[0]
    t = mass_kg * a * a / (2.0 * K_B)
    mode = _mode(drift, a)
    slope = (_mode(drift, a * (1 + 1e-4)) - _mode(drift, a * (1 - 1e-4))) / (2e-4 * a)
    out.update(temperature_k=t, temperature_stderr_k=2.0 * t * sa / a,
               most_probable_speed_m_s=mode, most_probable_speed_stderr_m_s=abs(slope) * sa)
    return out


def _component_fit(edges, hist, mass_kg, start_u, start_t) -> dict:
    s0 = math.sqrt(K_B * max(start_t, 1e-3) / mass_kg)
    fit = fit_binned(edges, hist, lambda v, mu, s: stats.norm.cdf(v, mu, s),
                     [start_u if abs(start_u) > 1e-3 * s0 else 1e-3 * s0, s0],
                     lower=[-np.inf, 1e-9])
    if fit is None:
        return {"drift_m_s": math.nan, "drift_stderr_m_s": math.nan,
                "temperature_k": math.nan, "temperature_stderr_k": math.nan,
                **_fit_summary(fit)}
    (mu, s), (smu, ss) = fit.params, fit.stderr
    t = mass_kg * s * s / K_B
    return {"drift_m_s": mu, "drift_stderr_m_s": smu, "temperature_k": t,
            "temperature_stderr_k": 2.0 * t * ss / s, **_fit_summary(fit)}


def _orifice_beam(case, box, mass_kg, fraction: float = 1.0) -> dict | None:
    """Free-molecular values at the probe centre when the probe sits on the axis behind
    a thin orifice (a flux plane from the axis with opening = "orifice", no length) fed
    from a reservoir on the xmin side; ``fraction``: the species' mole fraction there."""
    if case is None or not case.domain.axisymmetric or box[2] > 0.0:
        return None
    if not any(b.side == "xmin" and b.kind == "reservoir" for b in case.boundaries):
        return None      # the beam runs towards +x from a source on the xmin side
    for fp in case.flux_planes:
        if fp.opening == "orifice" and fp.opening_length_m == 0.0 and fp.start[0] == fp.end[0] \
                and min(fp.start[1], fp.end[1]) == 0.0:
            z = 0.5 * (box[0] + box[1]) - fp.start[0]
            if z <= 0.0:
                return None
            p0, t0, _ = upstream_downstream(case)
            a = abs(fp.end[1] - fp.start[1])
            beam = {k: float(v) for k, v in
                    effusion.orifice_axis_beam(z, a, t0, mass_kg).items()}
            beam["number_density_m3"] = float(effusion.orifice_axis_density(
                z, a, fraction * p0 / (K_B * t0)))
            beam["note"] = (f"free-molecular beam on the axis {z:.4g} m behind the orifice "
                            "plane '" + fp.name + "' (probe centre)")
            return beam
    return None


def probe_results(r: ResultData, case=None) -> dict:
    """Per probe: the quantities of :func:`probe_batch_values` with ``_stderr`` twins,
    the fits and the analytic references (JSON-ready; SI units in the key names).
    With the ``case``, probes on the axis behind a thin orifice also get the
    free-molecular beam values at their centre."""
    out = {}
    if not r.probe_names or r.batches == 0:
        return out
    mass, fnum = r.attrs["mass_kg"], r.attrs["particle_weight"]
    edges = r.speed_edges
    vmax = edges[-1]
    cedges = np.linspace(-vmax, vmax, len(edges))
    for q, name in enumerate(r.probe_names):
        mass = r.row_mass(r.probe_species[q])      # a mixture's probes: one per species
        direction = r.probe_direction[q]
        row = {"volume_m3": float(r.probe_volume[q]),
               "region_m": [float(v) for v in r.probe_box[q]], "direction": direction}
        mom = r.probe_mom[:, q]
        tot = mom.sum(axis=0, keepdims=True)
        dofs, thetas = species_internal(r.plan)
        k = max(r.probe_species[q], 0)
        inner = (dofs[k], thetas[k]) if k < len(dofs) else (0, 0.0)
        whole = probe_batch_values(tot, mass, r.probe_volume[q], fnum,
                                   r.steps_per_batch * r.batches, direction, *inner)
        # jackknife over the batches: ratios of sums stay stable where a batch holds few
        # molecules (Efron & Tibshirani 1993, ch. 11)
        nb = mom.shape[0]
        leave_out = probe_batch_values(tot - mom, mass, r.probe_volume[q], fnum,
                                       r.steps_per_batch * (nb - 1), direction, *inner) \
            if nb >= 2 else None
        for key in whole:
            row[key] = float(whole[key][0])
            if leave_out is None:
                row[stderr_key(key)] = math.nan
                continue
            jk = leave_out[key]
            row[stderr_key(key)] = float(np.sqrt((nb - 1) / nb * np.sum((jk - jk.mean()) ** 2)))
        hist = r.probe_hist[:, q]
        nsamples = hist[:, H_SPEED].sum()
        row["overflow_fraction"] = float(hist[:, H_SPEED, -1].sum() / nsamples) \
            if nsamples > 0 else math.nan
        drift = math.sqrt(sum(row[f"velocity_{c}_m_s"] ** 2 for c in "xyz"))
        row["speed_fit"] = _speed_fit(edges, hist[:, H_SPEED, :-1], mass,
                                      row["temperature_k"], drift)
        row["most_probable_speed_m_s"] = row["speed_fit"]["most_probable_speed_m_s"]
        row["most_probable_speed_stderr_m_s"] = \
            row["speed_fit"]["most_probable_speed_stderr_m_s"]
        row["component_fits"] = {
            c: _component_fit(cedges, hist[:, h, :-1], mass, row[f"velocity_{c}_m_s"],
                              row["temperature_k"]) for c, h in COMPONENTS}
        t0 = r.plan["reference_temperature_k"]
        row["analytic"] = {
            "note": "Maxwellian at rest at the reference temperature (the source gas)",
            "temperature_k": t0,
            "most_probable_speed_m_s": float(kinetic.most_probable_speed(mass, t0)),
            "mean_speed_m_s": float(kinetic.mean_speed(mass, t0)),
            "rms_speed_m_s": float(kinetic.rms_speed(mass, t0)),
        }
        k = r.probe_species[q]
        beam = _orifice_beam(case, r.probe_box[q], mass,
                             float(reservoir_fractions(case)[0][k]) if k >= 0 and case
                             else 1.0)
        if beam:
            row["analytic"]["free_molecular_beam"] = beam
        out[name] = row
    return out


def speed_distribution(r: ResultData, name: str) -> SpeedDistribution | None:
    """The sampled speed distribution of a probe (density-weighted) or a flux plane
    (flux-weighted, crossings in the positive direction); None if ``name`` is neither."""
    temperature = r.plan.get("reference_temperature_k")
    edges = r.speed_edges
    nb = len(edges) - 1
    mass = r.attrs["mass_kg"]
    if name in r.probe_names:
        q = r.probe_names.index(name)
        h = r.probe_hist[:, q, H_SPEED, :nb]
        mass = r.row_mass(r.probe_species[q])
        weighting = "density"
    elif name in r.plane_names:
        q = r.plane_names.index(name)
        h = r.flux[:, q, F_HIST:F_HIST + nb]
        mass = r.row_mass(r.plane_species[q])
        weighting = "flux"
    else:
        return None
    b = h.shape[0]
    err = np.sqrt(b * h.var(axis=0, ddof=1)) if b >= 2 else None
    return SpeedDistribution(edges, h.sum(axis=0), err, weighting, name, mass, temperature)


def load_speed_distribution(rundir: str | Path, name: str) -> SpeedDistribution:
    """The speed distribution named ``name`` in the result of ``rundir``; raises
    :class:`rarefy.cli_errors.InputError` when the result has no probe or flux plane of
    that name."""
    from rarefy.cli_errors import InputError

    path = Path(rundir)
    target = path / "result.h5" if path.is_dir() else path
    if not target.exists():
        raise InputError(f"{rundir}: no result file (expected {target}); run `rarefy run` "
                         "first")
    try:
        r = read_result(target)
    except (OSError, ValueError, KeyError) as exc:   # not HDF5, other format, damaged
        raise InputError(f"{target}: cannot be read as a rarefy result ({exc})") from None
    dist = speed_distribution(r, name)
    if dist is None:
        known = r.probe_names + r.plane_names
        raise InputError(f"--source {name!r}: {target} has no probe or flux plane of that "
                         f"name; allowed: {', '.join(known) if known else '(none defined)'}")
    if float(np.sum(dist.counts)) <= 0.0:
        raise InputError(f"--source {name!r}: no molecules were sampled there")
    return dist
