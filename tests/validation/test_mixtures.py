"""Gas mixtures against kinetic theory: equilibrium collision rates per species pair,
Graham's law of effusion, and the viscosity of a He-Ar mixture.

Tags as in shared/reference/published-values.md: P published value seen in a source;
M published value or law from memory; S derived independently here (stated beside the
check). Statistical tolerances are the smaller of the issue's and a multiple of the
standard error measured from the run, so each check can fail.
"""

import math

import numpy as np
import pytest
from scipy import integrate

from rarefy.case import parse_case
from rarefy.cli import execute
from rarefy.constants import K_B
from rarefy.engine.particles import VX, VZ
from rarefy.engine.simulation import Simulation
from rarefy.gas.mixture import chapman_enskog_hs_viscosity, mixture_of
from rarefy.gas.species import get_species
from rarefy.io.result import read_result, write_result
from rarefy.plan import make_plan
from rarefy.report import load_report

pytestmark = pytest.mark.validation


def periodic_box(species: list, fractions: list, model: str = "vhs",
                 pressure_pa: float = 20.0, temperature_k: float = 300.0) -> str:
    sides = "\n".join(f'[boundaries.{s}]\nkind = "periodic"'
                      for s in ("xmin", "xmax", "ymin", "ymax"))
    return f"""
[gas]
species = {species!r}
mole_fractions = {fractions!r}
model = "{model}"
[domain]
x = ["0 mm", "10 mm"]
y = ["0 mm", "10 mm"]
depth = "1 mm"
{sides}
[initial]
pressure = "{pressure_pa} Pa"
temperature = "{temperature_k} K"
[resolution]
cell_size = "1 mm"
particles_per_cell = 300
""".replace("'", '"')


def _mean_sigma_cr(a_coef: float, exponent: float, m_r: float, t_k: float) -> float:
    """<sigma_T c_r> over the Maxwellian of relative speeds of reduced mass m_r
    (scipy quadrature of the cross-section the kernel uses; kinetic theory, S)."""
    b = m_r / (2.0 * K_B * t_k)

    def f(c):
        return 4.0 * math.pi * (b / math.pi) ** 1.5 * c * c * math.exp(-b * c * c) \
            * a_coef * c ** exponent

    hi = 12.0 / math.sqrt(b)
    return integrate.quad(f, 0.0, hi, limit=200, epsabs=0.0, epsrel=1e-10)[0]


@pytest.mark.parametrize("species, fractions", [(["He", "Ar"], [0.6, 0.4]),
                                                (["He", "Xe"], [0.8, 0.2]),
                                                (["He", "N2"], [0.5, 0.5])])
def test_equilibrium_collision_rates_per_pair(species, fractions):
    # equilibrium collision rates per unit volume: n_p n_q <sigma_pq c_r> for unlike and
    # (1/2) n_p^2 <sigma_pp c_r> for like pairs (kinetic theory, Bird 1994 eq. 4.78 form,
    # M), with <sigma c_r> integrated here over the relative-speed Maxwellian of the
    # pair's reduced mass (S). The band is 2 %. With N2 the pairs exchange
    # rotational energy (Z_rot 5), which must leave the equilibrium rates alone.
    case = parse_case(periodic_box(species, fractions))
    plan = make_plan(case)
    sim = Simulation(case, plan, 5)
    nsp = len(species)
    a, e, _ = sim.pair
    masses = sim.masses
    volume = 10e-3 * 10e-3 * 1e-3
    counts = np.zeros((32, nsp, nsp))
    expected = np.zeros((32, nsp, nsp))
    # steps of about 0.2 collision times: ten per batch
    for _ in range(20):              # the fill is already in equilibrium
        sim.step(False)
    for b in range(32):
        for _ in range(10):
            sim.coll_stats = np.zeros(3 + nsp * nsp)
            s, n = sim.store.state, sim.store.n
            spc = s[-1, :n].astype(int)
            v = s[VX:VZ + 1, :n]
            t = sum(masses[k] * v[:, spc == k].var(axis=1).sum() * np.count_nonzero(spc == k)
                    for k in range(nsp)) / (3.0 * K_B * n)
            dens = np.bincount(spc, minlength=nsp) * sim.fnum / volume
            for p in range(nsp):
                for q in range(nsp):
                    m_r = masses[p] * masses[q] / (masses[p] + masses[q])
                    rate = dens[p] * dens[q] * _mean_sigma_cr(a[p, q], e[p, q], m_r, t)
                    expected[b, p, q] += (0.5 if p == q else 1.0) * rate * volume * sim.dt \
                        / sim.fnum * (1.0 if p <= q else 0.0)
            sim.step(False)
            counts[b] += sim.coll_stats[3:].reshape(nsp, nsp)
    # unlike pairs are counted in both orders by the kernel
    got = np.triu(counts + np.transpose(counts, (0, 2, 1))
                  - np.einsum("bpp->bp", counts)[:, :, None] * np.eye(nsp))
    for p in range(nsp):
        for q in range(p, nsp):
            ratio = got[:, p, q] / expected[:, p, q]
            mean, se = ratio.mean(), ratio.std(ddof=1) / math.sqrt(len(ratio))
            print(f"{species[p]}-{species[q]}: simulated / kinetic theory {mean:.4f} +- "
                  f"{se:.4f} ({got[:, p, q].sum():.0f} collisions)")
            assert se < 0.0067, "too few collisions for the check to fail"
            assert abs(mean - 1.0) < min(0.02, 4.0 * se + 0.004), (species[p], species[q])


def test_grahams_law_of_effusion_through_a_slit(tmp_path):
    # Free-molecular effusion: each species crosses an opening at its own one-way flux
    # n_k cbar_k / 4, so the number flows stand as (n1/n2) sqrt(m2/m1) (Graham's law of
    # effusion, M; kinetic theory, S); the issue's band is 1 %. Also each species'
    # transmission probability through the thin slit is 1 (free-molecular, S).
    # a compact slit: 1 mm wide (mirrored about y = 0), upstream cavity 1 mm deep with
    # reservoir sides, the plate diffuse at the gas temperature
    text = """
[gas]
species = ["He", "Ar"]
mole_fractions = [0.3, 0.7]
[domain]
x = ["-1 mm", "0.3 mm"]
y = ["0 mm", "1.5 mm"]
characteristic_length = "1 mm"
[boundaries.xmin]
kind = "reservoir"
pressure = "0.05 Pa"
temperature = "300 K"
[boundaries.ymin]
kind = "symmetry"
[[boundaries.ymax]]
kind = "reservoir"
from = "-1 mm"
to = "0 mm"
pressure = "0.05 Pa"
temperature = "300 K"
[[boundaries.ymax]]
kind = "vacuum"
from = "0 mm"
to = "0.3 mm"
[boundaries.xmax]
kind = "vacuum"
[[walls]]
name = "plate"
points = [["0 mm", "0.5 mm"], ["0 mm", "1.5 mm"]]
surface = "diffuse"
temperature = "300 K"
[[flux_planes]]
name = "throat"
points = [["0 mm", "0 mm"], ["0 mm", "0.5 mm"]]
mirrored = true
opening = "slit"
opening_length = "0 mm"
[resolution]
cell_size = "0.1 mm"
particles_per_cell = 60
[run]
settle_steps = 300
sample_steps = 24000
batches = 32
"""
    case = parse_case(text, "he-ar-slit.toml")
    execute(case, tmp_path, seed=3, quiet=True)
    rep = load_report(tmp_path)
    assert rep["knudsen_number"] > 50.0
    fp = rep["flux_planes"]
    he, ar = fp["throat He"], fp["throat Ar"]
    ratio = he["number_flow_1_s"] / ar["number_flow_1_s"]
    se = ratio * math.hypot(he["number_flow_stderr_1_s"] / he["number_flow_1_s"],
                            ar["number_flow_stderr_1_s"] / ar["number_flow_1_s"])
    m_he, m_ar = get_species("He").mass_kg, get_species("Ar").mass_kg
    graham = 0.3 / 0.7 * math.sqrt(m_ar / m_he)
    print(f"\nHe/Ar effusion: number-flow ratio {ratio:.4f} +- {se:.4f} (Graham {graham:.4f});"
          f" transmission He {he['transmission_probability']:.4f}, Ar "
          f"{ar['transmission_probability']:.4f}")
    assert se < 0.0033 * graham, "run too short for the check to fail"
    assert abs(ratio / graham - 1.0) < min(0.01, 4.0 * se / graham)
    for row in (he, ar):
        w, e = row["transmission_probability"], row["transmission_probability_stderr"]
        assert abs(w - 1.0) < min(0.02, 4.0 * e + 0.003), row["species"]
    # the whole gas: its mass flow is the species' sum, its reference the sum of theirs
    whole = fp["throat"]
    assert whole["mass_flow_kg_s"] == pytest.approx(he["mass_flow_kg_s"] + ar["mass_flow_kg_s"],
                                                    rel=1e-9)
    assert whole["free_molecular_mass_flow_kg_s"] == pytest.approx(
        he["free_molecular_mass_flow_kg_s"] + ar["free_molecular_mass_flow_kg_s"], rel=1e-12)
    # power: equal flows per molecule (no sqrt(m) law) would be off by the factor 3.2
    assert abs(ratio / (0.3 / 0.7) - 1.0) > 0.5


def test_helium_argon_viscosity_from_couette_flow(tmp_path):
    # Couette flow of an equimolar He-Ar mixture of hard spheres between diffuse plates
    # moving at -U and +U, 40 mixture mean free paths apart (cells of a quarter of it,
    # steps in which helium crosses under half a cell): in the core the shear stress over the
    # velocity gradient is the mixture's viscosity, against the first Chapman-Enskog
    # approximation for a binary hard-sphere mixture (Hirschfelder, Curtiss & Bird 1954,
    # eq. 8.2-22, M; rarefy.gas.mixture.chapman_enskog_hs_viscosity). The band is
    # 4 % (the first approximation itself is 1-2 % below the exact value for pure hard
    # spheres, Chapman & Cowling 1970, M).
    t_wall, p = 273.0, 5.0
    he, ar = get_species("He").model("hs"), get_species("Ar").model("hs")
    text0 = periodic_box(["He", "Ar"], [0.5, 0.5], model="hs")
    mix = mixture_of(parse_case(text0).gas)
    n = p / (K_B * t_wall)
    lam = float(mix.mean_free_path(n, t_wall))
    lam_he = float(mix.momentum_mean_free_paths(n, t_wall)[0])
    m_mean = mix.mean_mass()
    c_he = math.sqrt(8.0 * K_B * t_wall / (math.pi * he.mass_kg))
    v0 = math.sqrt(2.0 * K_B * t_wall / m_mean)
    gap, cell, u_wall = 40.0 * lam, lam / 4.0, 0.8 * v0
    text = f"""
[gas]
species = ["He", "Ar"]
mole_fractions = [0.5, 0.5]
model = "hs"
[domain]
x = ["0 m", "{2 * cell!r} m"]
y = ["0 m", "{gap!r} m"]
characteristic_length = "{gap!r} m"
[boundaries.xmin]
kind = "periodic"
[boundaries.xmax]
kind = "periodic"
[boundaries.ymin]
kind = "wall"
temperature = "{t_wall} K"
velocity = "{-u_wall!r} m/s"
[boundaries.ymax]
kind = "wall"
temperature = "{t_wall} K"
velocity = "{u_wall!r} m/s"
[initial]
pressure = "{p} Pa"
temperature = "{t_wall} K"
[resolution]
cell_size = "{cell!r} m"
time_step = "{0.45 * cell / c_he!r} s"
particles_per_cell = 30
[run]
settle_steps = 1500
sample_steps = 20000
batches = 20
"""
    case = parse_case(text, "he-ar-couette.toml")
    sim = Simulation(case, make_plan(case), 8)
    # start from the Navier-Stokes profile (slip of about a mean free path at each wall)
    # so that the shear settles in a few collision times, not a viscous diffusion time
    st = sim.store
    st.state[VX, :st.n] += 2.0 * u_wall * (st.state[1, :st.n] / gap - 0.5) \
        * gap / (gap + 2.2 * lam)
    sim.run()
    write_result(tmp_path / "result.h5", sim)
    rep = load_report(tmp_path)
    r = read_result(tmp_path)
    y = r.y
    core = (y > 4.0 * lam_he) & (y < gap - 4.0 * lam_he)
    # the shear stress is uniform across the gap: its mean over the core's cells (the
    # fields' batch-means errors; the walls' own tallies agree within their larger noise)
    shear = r.fields["shear_stress_xy"][core]
    tau = float(np.mean(shear))
    tau_se = float(np.sqrt(np.sum(r.stderr["shear_stress_xy"][core] ** 2))) / shear.size
    u = np.nanmean(r.fields["velocity_x"], axis=1)[core]
    su = np.sqrt(np.nanmean(r.stderr["velocity_x"] ** 2, axis=1) / r.fields["velocity_x"].shape[1])[core]
    (slope, _), cov = np.polyfit(y[core], u, 1, w=1.0 / su, cov="unscaled")
    slope_se = math.sqrt(cov[0, 0])
    t_core = float(np.nanmean(r.fields["temperature"][core]))
    mu = abs(tau) / slope
    mu_se = mu * math.hypot(tau_se / tau, slope_se / slope)
    mu_ce = chapman_enskog_hs_viscosity(he.d_ref_m, ar.d_ref_m, he.mass_kg, ar.mass_kg, 0.5,
                                        t_core)
    x_he = float(np.nanmean(r.fields["mole_fraction_He"][core]))
    print(f"\nHe-Ar Couette: mu({t_core:.1f} K) = {mu:.5e} +- {mu_se:.1e} Pa s, first "
          f"Chapman-Enskog {mu_ce:.5e} (ratio {mu / mu_ce:.4f} +- {mu_se / mu_ce:.4f}); "
          f"x_He in the core {x_he:.4f}")
    surf = rep["surfaces"]
    lower, upper = surf["boundary ymin"], surf["boundary ymax"]
    wall = 0.5 * (lower["shear_stress_pa"] - upper["shear_stress_pa"])
    wall_se = 0.5 * math.hypot(lower["shear_stress_stderr_pa"], upper["shear_stress_stderr_pa"])
    assert abs(abs(wall) - abs(tau)) < 4.0 * math.hypot(wall_se, tau_se)   # momentum balance
    assert mu_se < 0.013 * mu, "run too short for the check to fail"
    assert abs(mu / mu_ce - 1.0) < 0.04
    assert abs(x_he - 0.5) < 0.01


def test_seeded_beam_example_runs_and_drags_the_heavy_gas(tmp_path):
    # the documented example (examples/seeded-beam), shortened. In a seeded expansion the
    # light carrier accelerates the heavy species beyond its own free-molecular beam speed
    # and the heavy species gathers on the axis (seeded-beam practice, qualitative, M);
    # the whole gas's mass flow is the species' sum
    from pathlib import Path

    from rarefy.case import load_case

    example = Path(__file__).resolve().parents[2] / "examples" / "seeded-beam" / "case.toml"
    case = load_case(example, overrides={"run.settle_steps": 1500, "run.sample_steps": 5000,
                                         "run.batches": 10})
    execute(case, tmp_path, seed=6, quiet=True)
    rep = load_report(tmp_path)
    xe, he = rep["probes"]["axis_4a Xe"], rep["probes"]["axis_4a He"]
    fm = xe["analytic"]["free_molecular_beam"]
    drift, se = xe["velocity_x_m_s"], xe["velocity_x_stderr_m_s"]
    ratio = xe["number_density_m3"] / he["number_density_m3"]
    ratio_se = ratio * math.hypot(xe["number_density_stderr_m3"] / xe["number_density_m3"],
                                  he["number_density_stderr_m3"] / he["number_density_m3"])
    print(f"\nseeded beam, 4 radii: Xe drift {drift:.0f} +- {se:.0f} m/s (free-molecular "
          f"{fm['drift_m_s']:.0f}), Xe/He {ratio:.3f} +- {ratio_se:.3f} (source 0.111)")
    assert drift > fm["drift_m_s"] + 3.0 * se
    assert ratio > 0.1 / 0.9 + 2.0 * ratio_se
    fp = rep["flux_planes"]
    assert fp["throat"]["mass_flow_kg_s"] == pytest.approx(
        fp["throat He"]["mass_flow_kg_s"] + fp["throat Xe"]["mass_flow_kg_s"], rel=1e-9)


def test_walls_bring_each_species_to_their_temperature(tmp_path):
    # A closed box of nearly collisionless He-Xe-N2 whose walls (diffuse, 400 K) are hotter
    # than the fill (300 K): every molecule leaves a wall with the wall's Maxwellian of its
    # own mass (sqrt(k T_w / m_k); Bird 1994 sec. 12.3, M), so each species' temperature
    # becomes 400 K and the gas stays at rest. A shared sqrt(k T_w / m) for all species
    # would put xenon near 400 m_Xe / m_mean = 3000 K and helium near 90 K. Nitrogen
    # leaves with the wall's rotational equilibrium too (full accommodation of internal
    # energy, Maxwell model, M), so its rotational temperature becomes 400 K in the probe
    # and in the cell fields.
    from rarefy.templates import box_case

    text = box_case(gas="Ar", temperature_k=400.0, pressure_pa=0.01).replace(
        'species = "Ar"', 'species = ["He", "Xe", "N2"]\n'
        'mole_fractions = [0.34, 0.33, 0.33]').replace(
        '[initial]  # the only gas there is\npressure = "0.01 Pa"\ntemperature = "400 K"',
        '[initial]\npressure = "0.01 Pa"\ntemperature = "300 K"') + """
[[probes]]
name = "core"
x = ["2 mm", "8 mm"]
y = ["2 mm", "8 mm"]
[resolution]
particles_per_cell = 200
[run]
sample_steps = 6000
batches = 15
"""
    execute(parse_case(text, "hot-box.toml"), tmp_path, seed=11, quiet=True)
    rep = load_report(tmp_path)
    assert rep["knudsen_number"] > 10.0
    pr = rep["probes"]["core N2"]
    checks = [(sp, rep["probes"][f"core {sp}"]["temperature_k"],
               rep["probes"][f"core {sp}"]["temperature_stderr_k"]) for sp in ("He", "Xe", "N2")]
    checks.append(("N2 rotation", pr["temperature_rotational_k"],
                   pr["temperature_rotational_stderr_k"]))
    for sp, t, se in checks:
        print(f"{sp}: T {t:.2f} +- {se:.2f} K (walls 400 K)")
        assert se < 0.005 * 400.0, "too noisy for the check to fail"
        assert abs(t / 400.0 - 1.0) < min(0.01, 4.0 * se / 400.0 + 0.002), sp
    f = read_result(tmp_path).fields
    core = np.isfinite(f["temperature_rotational_N2"])
    t_rot = np.average(f["temperature_rotational_N2"][core],
                       weights=f["number_density_N2"][core])
    print(f"N2 rotation, all cells: {t_rot:.2f} K")
    assert abs(t_rot / 400.0 - 1.0) < 0.01
    # the mixture's overall temperature counts every degree of freedom of every molecule
    # alike (S): 400 K where all are at the walls' temperature
    w = f["number_density"][core]
    t_all = np.average(f["temperature_overall"][core], weights=w)
    print(f"overall temperature, all cells: {t_all:.2f} K")
    assert abs(t_all / 400.0 - 1.0) < 0.01
