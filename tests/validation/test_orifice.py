"""Thin round orifice into vacuum across the regimes: reduced flow rate W(delta).

Reference: Sharipov, J. Fluid Mech. 518, 35-60 (2004), DSMC of a thin orifice into
vacuum, hard-sphere molecules; the values used are a curve fit of that paper's results
for p1/p0 = 0, tabulated in shared/reference/published-values.md section 3 (P, one
source; treat as +/- 2 %). W = mdot / (pi R^2 p0 sqrt(m / (2 pi k T0))), delta =
R p0 / (mu0 v0), v0 = sqrt(2 k T0 / m).

The check is the issue's 3 % band; the run's own standard error must be below 1 % so
that the check can fail. The delta = 10 run uses cells of 0.92 mean free paths to stay
within the test budget (usual practice is 1/3; the flow rate of a near-continuum
orifice depends little on viscosity: runs at 0.55 and 0.69 mean free paths gave
W = 1.450 +/- 0.005 and 1.448 +/- 0.010, and this one 1.441 +/- 0.015).
"""

import math

import pytest

from rarefy.case import parse_case
from rarefy.cli import execute
from rarefy.constants import K_B
from rarefy.gas import kinetic
from rarefy.gas.species import get_species
from rarefy.report import load_report
from rarefy.templates import orifice_case

pytestmark = pytest.mark.validation

T = 300.0
R = 1e-3


def pressure_for_delta(delta):
    sp = get_species("Ar")
    mu = kinetic.viscosity(sp.model("hs"), T)
    v0 = math.sqrt(2.0 * K_B * T / sp.mass_kg)
    return delta * mu * v0 / R


@pytest.mark.parametrize("delta, w_ref, overrides", [
    (0.1, 1.015, {"resolution.particles_per_cell": 80, "run.sample_steps": 8000}),
    (1.0, 1.128, {"run.sample_steps": 6000}),
    (10.0, 1.463, {"resolution.cell_size": "0.08333333 mm",
                   "resolution.particles_per_cell": 10, "run.settle_steps": 3000,
                   "run.sample_steps": 7000}),
])
def test_orifice_reduced_flow_rate(tmp_path, delta, w_ref, overrides):
    p0 = pressure_for_delta(delta)
    text = orifice_case(gas="Ar", temperature_k=T, upstream_pressure_pa=p0, radius_m=R)
    case = parse_case(text, "orifice.toml", overrides={"gas.model": "hs", **overrides})
    execute(case, tmp_path, seed=2, quiet=True)
    rep = load_report(tmp_path)
    assert rep["rarefaction_parameter"] == pytest.approx(delta, rel=1e-9)
    fp = rep["flux_planes"]["throat"]
    w, err = fp["transmission_probability"], fp["transmission_probability_stderr"]
    print(f"orifice delta={delta}: W = {w:.4f} +/- {err:.4f} (Sharipov 2004 fit: {w_ref})")
    assert err < 0.01 * w_ref, "run too short for the check to be able to fail"
    assert abs(w - w_ref) <= 0.03 * w_ref, (w, err, w_ref)
    # the simulated flow lies between the free-molecular and the isentropic limits
    assert 1.0 - 3 * err < w < fp["analytic"]["isentropic_choked_transmission_probability"]
    # on the axis 4 radii downstream: towards the continuum the beam is faster and colder
    # along the axis than the free-molecular (effusive) beam -- the jet's expansion
    # cooling (qualitative physics; the FM values are rarefy.theory.effusion's cone
    # averages at the probe centre)
    pr = rep["probes"]["axis_4a"]
    fm = pr["analytic"]["free_molecular_beam"]
    s, s_se = pr["speed_ratio"], pr["speed_ratio_stderr"]
    t_par, t_se = pr["temperature_parallel_k"], pr["temperature_parallel_stderr_k"]
    print(f"  axis 4a: speed ratio {s:.3f} +/- {s_se:.3f} (FM {fm['speed_ratio']:.3f}), "
          f"T_par {t_par:.1f} +/- {t_se:.1f} K (FM {fm['temperature_parallel_k']:.1f} K), "
          f"drift {pr['velocity_x_m_s']:.1f} m/s (FM {fm['drift_m_s']:.1f}), n "
          f"{pr['number_density_m3']:.4g} (FM {fm['number_density_m3']:.4g}) m^-3")
    if delta >= 10.0:
        # measured (seed 2): S 2.50 +/- 0.04 = 1.49 x FM, T_par 96.8 +/- 3.0 K = 0.73 x FM
        assert s > 1.3 * fm["speed_ratio"] and s - 5 * s_se > fm["speed_ratio"]
        assert t_par < 0.85 * fm["temperature_parallel_k"]
        assert t_par + 5 * t_se < fm["temperature_parallel_k"]


def test_nitrogen_orifice_flow_follows_gamma_seven_fifths(tmp_path):
    # Towards the continuum a thin orifice chokes: W -> sqrt(2 pi gamma)
    # (2/(gamma+1))^((gamma+1)/(2(gamma-1))), 1.8203 for gamma 5/3 and 1.7164 for 7/5
    # (shared/reference/published-values.md sec. 3, S), so a diatomic gas whose rotation
    # takes part passes less, relative to the free-molecular flow, than the same molecules
    # with rotation frozen (Z_rot = 1e12: a monatomic gas of the same mass and cross-
    # section); in the free-molecular limit both are 1. At delta = 10 the ratio must lie
    # between the continuum ratio 1.7164 / 1.8203 = 0.943 and 1, and below 1 beyond the
    # runs' noise. Measured (seed 2, 14000 sampled steps): 1.3964 +- 0.0064 against
    # 1.4379 +- 0.0090, ratio 0.971 +- 0.008; the test samples 10000 steps (test budget)
    # and asks for 2 standard errors below 1, which a gas that did not exchange rotation
    # would pass by chance about once in 40 runs.
    sp = get_species("N2")
    mu = kinetic.viscosity(sp.model("vhs"), T)
    p0 = 10.0 * mu * math.sqrt(2.0 * K_B * T / sp.mass_kg) / R
    text = orifice_case(gas="N2", temperature_k=T, upstream_pressure_pa=p0, radius_m=R)
    runs = {}
    for label, z_rot in (("rotating", 5.0), ("frozen", 1e12)):
        case = parse_case(text, "n2-orifice.toml", overrides={
            "gas.rotation": z_rot, "resolution.cell_size": "0.08333333 mm",
            "resolution.particles_per_cell": 10, "run.settle_steps": 2500,
            "run.sample_steps": 10000})
        execute(case, tmp_path / label, seed=2, quiet=True)
        fp = load_report(tmp_path / label)["flux_planes"]["throat"]
        runs[label] = (fp["transmission_probability"], fp["transmission_probability_stderr"])
        assert fp["analytic"]["gamma"] == pytest.approx(1.4)
    (w1, e1), (w0, e0) = runs["rotating"], runs["frozen"]
    ratio = w1 / w0
    err = ratio * math.hypot(e1 / w1, e0 / w0)
    continuum = 1.7164 / 1.8203
    print(f"N2 orifice delta=10: W {w1:.4f} +/- {e1:.4f} (rotating), {w0:.4f} +/- {e0:.4f} "
          f"(frozen), ratio {ratio:.4f} +/- {err:.4f} (continuum {continuum:.4f})")
    assert err < 0.0125, "runs too short for the check to be able to fail"
    assert ratio < 1.0 - 2.0 * err
    assert ratio > continuum - 2.0 * err
