"""Analytic quick estimates for flow through an orifice, tube, slit or channel.

No simulation: the free-molecular limit (transmission probability, conductance) and the
ideal continuum limit (isentropic nozzle flow) side by side, with the regime at the
upstream conditions. Between the limits only a kinetic solution (DSMC) is reliable.
SI in, dict out; :func:`format_estimate` prints it.

Sources: molecular flow C = W A cbar/4 (Livesey, ch. 2 of Lafferty (ed.), Foundations of
Vacuum Science and Technology, Wiley 1998); W of a tube from Clausing's integral
equation (Ann. Phys. 12, 961 (1932)), long-tube limit 8R/(3L) (Knudsen, Ann. Phys. 28,
75 (1909)); isentropic flow from J. D. Anderson, Modern Compressible Flow (3rd ed.,
2003), ch. 3 and 5; rarefaction parameter from Sharipov, J. Fluid Mech. 518, 35 (2004).
"""

from __future__ import annotations

import math

from rarefy.constants import K_B, ZERO_CELSIUS_K
from rarefy.gas.kinetic import mean_free_path_from_pressure, rarefaction_parameter, viscosity
from rarefy.gas.species import Species, get_species
from rarefy.theory.continuum import choked_mass_flux, gamma_from_internal_dof
from rarefy.theory.effusion import mean_speed
from rarefy.theory.transmission import channel_transmission, tube_transmission

__all__ = ["KINDS", "estimate", "format_estimate", "throughput_to_sccm",
           "critical_pressure_ratio", "subsonic_mass_flow"]

KINDS = ("orifice", "tube", "slit", "channel")
ROUND, THIN = ("orifice", "tube"), ("orifice", "slit")
# Regime thresholds on delta = p0 a / (mu v0): rules of thumb. With the orifice data of
# published-values sec. 3 (Sharipov 2004), W(delta = 0.1) = 1.015, i.e. free-molecular
# to 1.5 %; W(10) = 1.463 is already near the hydrodynamic value of about 1.5.
DELTA_FREE_MOLECULAR = 0.1
DELTA_CONTINUUM = 100.0
LONG_TUBE_MIN_L_OVER_R = 10.0
STANDARD_T_K, STANDARD_P_PA = ZERO_CELSIUS_K, 101325.0  # sccm standard: 0 degC, 1 atm


def critical_pressure_ratio(gamma: float) -> float:
    """Choking pressure ratio p*/p0 = (2/(gamma+1))^(gamma/(gamma-1)) (Anderson eq. 3.74)."""
    return (2.0 / (gamma + 1.0)) ** (gamma / (gamma - 1.0))


def subsonic_mass_flow(area_m2, p0_pa, p1_pa, t_k, mass_kg, gamma) -> float:
    """Isentropic (unchoked) nozzle mass flow to a back pressure p1 (kg/s).

    Returns A p0 sqrt(2 gamma / ((gamma-1) R_s T)) sqrt(r^(2/gamma) - r^((gamma+1)/gamma)),
    r = p1/p0, R_s = k/m: the textbook nozzle flow (Anderson, Modern Compressible Flow,
    ch. 5), valid for r at or above :func:`critical_pressure_ratio`.
    """
    r, r_s = p1_pa / p0_pa, K_B / mass_kg
    return (area_m2 * p0_pa * math.sqrt(2.0 * gamma / ((gamma - 1.0) * r_s * t_k))
            * math.sqrt(max(r ** (2.0 / gamma) - r ** ((gamma + 1.0) / gamma), 0.0)))


def throughput_to_sccm(q_pa_m3_s: float, t_k: float) -> float:
    """Convert a throughput p V-dot at gas temperature ``t_k`` to sccm.

    Standard: 273.15 K and 101325 Pa, so 1 sccm = 101325 Pa * 1e-6 m^3 / 60 s of gas
    at 0 degC; Q is first reduced to 0 degC at equal molecule flow (Q T_std / T).
    Common vacuum practice (T); e.g. 1 mbar L/s at 0 degC is 59.2 sccm.
    """
    return q_pa_m3_s * (STANDARD_T_K / t_k) / (STANDARD_P_PA * 1e-6 / 60.0)


def _positive(value, name):
    v = float(value)  # nan for a missing value
    if not math.isfinite(v) or v <= 0.0:
        raise ValueError(f"{name} must be finite and > 0, got {value!r}")
    return v


def _geometry(kind, radius_m, width_m, length_m, depth_m):
    """Check the geometry arguments; return area, D, a, L over R or H, depth."""
    if kind not in KINDS:
        raise ValueError(f"unknown kind {kind!r}; allowed: {', '.join(KINDS)}")
    length = float(length_m)
    if kind in THIN and length != 0.0:
        raise ValueError(f"an {kind} is thin: length_m must be 0 (use "
                         f"{'tube' if kind == 'orifice' else 'channel'} for a finite length)")
    if kind not in THIN:
        length = _positive(length, f"length_m of a {kind}")
    if kind in ROUND:
        if width_m is not None:
            raise ValueError(f"a {kind} takes radius_m, not width_m")
        r = _positive(radius_m if radius_m is not None else math.nan, f"radius_m of a {kind}")
        return math.pi * r * r, 2.0 * r, r, length / r, None
    if radius_m is not None:
        raise ValueError(f"a {kind} takes width_m, not radius_m")
    h = _positive(width_m if width_m is not None else math.nan, f"width_m of a {kind}")
    depth = _positive(depth_m, "depth_m")
    return h * depth, h, 0.5 * h, length / h, depth


def estimate(kind, gas, temperature_k, upstream_pressure_pa, downstream_pressure_pa=0.0,
             radius_m=None, width_m=None, length_m=0.0, depth_m=1.0) -> dict:
    """Free-molecular and continuum estimates for one opening (SI in, dict out).

    Parameters
    ----------
    kind : {"orifice", "tube", "slit", "channel"}
        Thin round hole (radius), round tube (radius, length), thin slit (width) or
        planar channel (gap ``width_m``, length). Planar kinds are per ``depth_m``.
    gas : str or Species
        Species name (see :func:`rarefy.gas.species.get_species`).
    temperature_k, upstream_pressure_pa, downstream_pressure_pa : float
        Reservoir temperature (both sides), p0 > 0 and 0 <= p1 <= p0.
    radius_m, width_m, length_m, depth_m : float
        Geometry, m.

    Returns
    -------
    dict
        Sections ``input``, ``geometry``, ``free_molecular``, ``continuum``, ``regime``;
        plain floats/str/bool/None (JSON-ready). Free-molecular: W, C = W A cbar/4,
        mdot = W A (p0 - p1) sqrt(m/(2 pi k T)), Q = C (p0 - p1). Continuum: ideal
        isentropic flow through area A, choked if p1/p0 < critical ratio; an upper
        bound. Regime: VHS mean free path at p0, Kn = lambda/D, delta = p0 a/(mu v0).

    Raises
    ------
    ValueError
        Unknown kind or gas, missing/conflicting geometry, non-physical values.
    """
    area, d_char, a_char, ell, depth = _geometry(kind, radius_m, width_m, length_m, depth_m)
    try:
        sp = gas if isinstance(gas, Species) else get_species(gas)
    except KeyError as exc:
        raise ValueError(exc.args[0]) from None
    t = _positive(temperature_k, "temperature_k")
    p0 = _positive(upstream_pressure_pa, "upstream_pressure_pa")
    p1 = float(downstream_pressure_pa)
    if not (0.0 <= p1 <= p0):
        raise ValueError(f"downstream_pressure_pa must be in [0, upstream_pressure_pa = "
                         f"{p0:g}], got {downstream_pressure_pa!r}")
    m, ratio = sp.mass_kg, p1 / p0

    # free-molecular limit
    if kind == "tube":
        w = tube_transmission(ell)
    elif kind == "channel":
        w = channel_transmission(ell)
    else:
        w = 1.0
    cbar = float(mean_speed(t, m))
    cond = w * area * cbar / 4.0
    fm = {"transmission_probability": w, "conductance_m3_s": cond,
          "mass_flow_kg_s": w * area * (p0 - p1) * math.sqrt(m / (2.0 * math.pi * K_B * t)),
          "throughput_pa_m3_s": cond * (p0 - p1),
          "long_tube_transmission": None, "long_tube_conductance_m3_s": None}
    if kind == "tube" and ell > LONG_TUBE_MIN_L_OVER_R:
        fm["long_tube_transmission"] = 8.0 / (3.0 * ell)
        fm["long_tube_conductance_m3_s"] = fm["long_tube_transmission"] * area * cbar / 4.0

    # continuum limit (ideal, isentropic; vibration frozen)
    gamma = float(gamma_from_internal_dof(sp.rot_dof))
    crit = critical_pressure_ratio(gamma)
    choked = ratio < crit
    if choked:
        mdot_c = float(choked_mass_flux(p0, t, m, gamma)) * area
    else:
        mdot_c = subsonic_mass_flow(area, p0, p1, t, m, gamma)
    note = {"orifice": "a real thin orifice reaches about 0.8-0.85 of it (common practice)",
            "slit": "a real thin slit carries less (jet contraction)"
            }.get(kind, "ideal nozzle: wall friction along the length is ignored")
    cont = {"gamma": gamma, "critical_pressure_ratio": crit, "choked": choked,
            "mass_flow_kg_s": mdot_c, "throughput_pa_m3_s": mdot_c * K_B * t / m,
            "ratio_to_free_molecular": mdot_c / fm["mass_flow_kg_s"] if p1 < p0 else None,
            "upper_bound": True, "note": note}

    # regime at upstream conditions
    model = sp.model("vhs")
    lam = float(mean_free_path_from_pressure(model, p0, t))
    delta = float(rarefaction_parameter(p0, a_char, viscosity(model, t), m, t))
    word = ("free-molecular" if delta < DELTA_FREE_MOLECULAR else
            "continuum" if delta > DELTA_CONTINUUM else "transitional")
    regime = {"mean_free_path_m": lam, "knudsen_number": lam / d_char,
              "rarefaction_parameter": delta, "regime": word,
              "thresholds": {"free_molecular_below_delta": DELTA_FREE_MOLECULAR,
                             "continuum_above_delta": DELTA_CONTINUUM,
                             "note": "rules of thumb"}}
    return {
        "input": {"kind": kind, "gas": sp.name, "temperature_k": t,
                  "upstream_pressure_pa": p0, "downstream_pressure_pa": p1,
                  "pressure_ratio": ratio},
        "geometry": {"radius_m": a_char if kind in ROUND else None,
                     "width_m": d_char if kind not in ROUND else None,
                     "length_m": float(length_m), "depth_m": depth, "area_m2": area,
                     "characteristic_length_m": d_char,
                     ("l_over_r" if kind in ROUND else "l_over_h"): ell},
        "mean_speed_m_s": cbar, "free_molecular": fm, "continuum": cont, "regime": regime,
    }


def _q(x, unit):
    return "-" if x is None else f"{x:.4g} {unit}"


def format_estimate(result: dict, units: str = "si") -> str:
    """Readable text of an :func:`estimate` result; every number carries its unit.

    ``units="si"``: Pa, kg/s, Pa m^3/s, m^3/s. ``units="vacuum"``: mbar, kg/s, mbar L/s,
    L/s, and throughput also in sccm (standard 273.15 K, 101325 Pa).
    """
    if units not in ("si", "vacuum"):
        raise ValueError(f"units must be 'si' or 'vacuum', got {units!r}")
    inp, geo, fm, co, rg = (result[k] for k in
                            ("input", "geometry", "free_molecular", "continuum", "regime"))
    vac = units == "vacuum"
    p_u, p_f = ("mbar", 1e-2) if vac else ("Pa", 1.0)
    c_u, c_f = ("L/s", 1e3) if vac else ("m^3/s", 1.0)
    q_u, q_f = ("mbar L/s", 10.0) if vac else ("Pa m^3/s", 1.0)
    t, kind = inp["temperature_k"], inp["kind"]
    per = f" per {geo['depth_m']:g} m of depth" if geo["depth_m"] is not None else ""
    if kind in ROUND:
        size = f"radius {_q(geo['radius_m'], 'm')}"
    else:
        size = f"{'width' if kind == 'slit' else 'gap'} {_q(geo['width_m'], 'm')}"
    if kind not in THIN:
        size += f", length {_q(geo['length_m'], 'm')}"
    row = "  {:<30}{:<24}{}".format
    lines = [
        f"{kind}, {inp['gas']} at {t:g} K: analytic limits, no simulation",
        f"  {size}, area {_q(geo['area_m2'], 'm^2')}{per}",
        f"  upstream {_q(inp['upstream_pressure_pa'] * p_f, p_u)}, downstream "
        f"{_q(inp['downstream_pressure_pa'] * p_f, p_u)} (p1/p0 = {inp['pressure_ratio']:.4g})",
        f"regime at upstream conditions (VHS): {rg['regime']}",
        f"  mean free path {_q(rg['mean_free_path_m'], 'm')}, Knudsen number lambda/D "
        f"{rg['knudsen_number']:.4g}, rarefaction parameter delta "
        f"{rg['rarefaction_parameter']:.4g}",
        f"  (rules of thumb: free-molecular for delta < {DELTA_FREE_MOLECULAR:g}, continuum "
        f"for delta > {DELTA_CONTINUUM:g})",
        "",
        row("", "free-molecular", "continuum (isentropic)"),
        row("transmission probability", f"{fm['transmission_probability']:.6g}", "-"),
        row("conductance", _q(fm["conductance_m3_s"] * c_f, c_u), "-"),
        row("mass flow", _q(fm["mass_flow_kg_s"], "kg/s"), _q(co["mass_flow_kg_s"], "kg/s")),
        row("throughput", _q(fm["throughput_pa_m3_s"] * q_f, q_u),
            _q(co["throughput_pa_m3_s"] * q_f, q_u)),
    ]
    if vac:
        lines.append(row("throughput (standard)",
                         _q(throughput_to_sccm(fm["throughput_pa_m3_s"], t), "sccm"),
                         _q(throughput_to_sccm(co["throughput_pa_m3_s"], t), "sccm")))
        lines.append("  standard: 273.15 K, 101325 Pa (1 sccm = 101325 Pa x 1 cm^3 per min)")
    if fm["long_tube_transmission"] is not None:
        lines.append(f"  long-tube limit 8R/(3L): W = {fm['long_tube_transmission']:.4g}, "
                     f"C = {_q(fm['long_tube_conductance_m3_s'] * c_f, c_u)} (Knudsen)")
    rel = "<" if co["choked"] else ">="
    lines.append(f"  continuum: gamma {co['gamma']:.4g}; "
                 f"{'choked' if co['choked'] else 'not choked (subsonic)'}: p1/p0 "
                 f"{inp['pressure_ratio']:.4g} {rel} critical {co['critical_pressure_ratio']:.4g}")
    lines.append(f"  the continuum value is an upper bound; {co['note']}")
    if co["ratio_to_free_molecular"] is not None:
        lines.append(f"  continuum / free-molecular mass flow {co['ratio_to_free_molecular']:.4g}")
    lines.append("Between the limits a DSMC simulation (`rarefy run`) is needed.")
    return "\n".join(lines)
