"""Unit tests of rarefy.gas: species data and equilibrium kinetic theory.

Tags as in shared/reference/published-values.md: P published value seen in a
source; M published value from memory; S computed independently (method stated);
T common vacuum-engineering practice.
"""

import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from rarefy.constants import AMU, K_B, N_A
from rarefy.gas import (
    HS_CONDUCTIVITY_FACTOR,
    HS_VISCOSITY_FACTOR,
    SPECIES,
    collision_frequency,
    collision_rate_per_volume,
    flux_weighted_mean_speed,
    format_gas_table,
    gas_table_rows,
    get_species,
    hard_sphere_transport_correction,
    knudsen_number,
    mean_collision_time,
    mean_free_path,
    mean_free_path_from_pressure,
    mean_sigma_cr,
    mean_speed,
    most_probable_speed,
    number_density,
    pressure,
    rarefaction_parameter,
    rms_speed,
    sigma_cr_coefficient,
    specific_gas_constant,
    thermal_conductivity,
    viscosity,
)

# published-values.md section 4: Bird 1994, Molecular Gas Dynamics, Appendix A,
# T_ref = 273 K (M, from memory). Units 1e-27 kg, 1e-5 Pa s, -, 1e-10 m, -, 1e-10 m.
BIRD_APP_A = {
    "He": (6.65, 1.865, 0.66, 2.33, 1.26, 2.30),
    "Ne": (33.5, 2.975, 0.66, 2.77, 1.31, 2.72),
    "Ar": (66.3, 2.117, 0.81, 4.17, 1.40, 4.11),
    "Kr": (139.1, 2.328, 0.80, 4.76, 1.32, 4.70),
    "Xe": (218.0, 2.107, 0.85, 5.74, 1.44, 5.65),
    "H2": (3.34, 0.845, 0.67, 2.92, 1.35, 2.88),
    "N2": (46.5, 1.656, 0.74, 4.17, 1.36, 4.11),
    "O2": (53.12, 1.919, 0.77, 4.07, 1.40, 4.01),
    "CO2": (73.1, 1.380, 0.93, 5.62, 1.61, 5.54),
    "CH4": (26.63, 1.024, 0.84, 4.83, 1.60, 4.78),
    "air": (48.1, 1.719, 0.77, 4.19, None, None),
}
NAMES = sorted(SPECIES)
VSS_NAMES = [n for n in NAMES if SPECIES[n].alpha is not None]
T_20C = 293.15


@pytest.mark.parametrize("name", list(BIRD_APP_A))
def test_species_rows_match_bird_appendix_a(name):
    # Bird 1994 App. A via published-values.md sec. 4 (M, from memory)
    m, mu, w, d, a, dv = BIRD_APP_A[name]
    sp = get_species(name)
    assert sp.mass_kg == pytest.approx(m * 1e-27, rel=1e-12)
    assert sp.mu_ref_pa_s == pytest.approx(mu * 1e-5, rel=1e-12)
    assert sp.omega == w
    assert sp.d_vhs_m == pytest.approx(d * 1e-10, rel=1e-12)
    assert sp.t_ref_k == 273.0
    if a is None:
        assert sp.alpha is None and sp.d_vss_m is None
    else:
        assert sp.alpha == a
        assert sp.d_vss_m == pytest.approx(dv * 1e-10, rel=1e-12)


def test_registry_and_rows_cover_every_gas():
    assert set(BIRD_APP_A) <= set(SPECIES)
    rows = gas_table_rows()
    assert [r["name"] for r in rows] == list(SPECIES)
    for r in rows:
        sp = SPECIES[r["name"]]
        assert r["molar_mass_kg_per_mol"] == pytest.approx(sp.mass_kg * N_A)
        assert r["viscosity_vhs_273_15k_pa_s"] == pytest.approx(
            float(viscosity(sp.model("vhs"), 273.15)))
    # molar masses near the standard atomic weights (argon 39.95 g/mol, M)
    assert SPECIES["Ar"].mass_kg / AMU == pytest.approx(39.948, rel=2e-3)
    text = format_gas_table()
    assert "Sources:" in text and text.count(SPECIES["Ar"].source) == 1
    for sp in SPECIES.values():      # every row and every internal-energy value is cited
        assert sp.source in text
        assert all(src in text for src in sp.internal_source)
        assert bool(sp.parker) + bool(sp.theta_vib_k) == len(sp.internal_source)
    assert "(g/mol)" in text and "(uPa s)" in text and "(mm)" in text


@pytest.mark.parametrize("name", NAMES)
def test_vhs_viscosity_reproduces_mu_ref(name):
    # Bird 1994 App. A mu_ref vs [B94] eq. 4.62 (M, from memory)
    sp = get_species(name)
    assert viscosity(sp.model("vhs"), sp.t_ref_k) == pytest.approx(sp.mu_ref_pa_s, rel=0.015)
    # hs diameter is fitted to mu_ref exactly (S: eq. 4.62 inverted, omega = 1/2)
    assert viscosity(sp.model("hs"), sp.t_ref_k) == pytest.approx(sp.mu_ref_pa_s, rel=1e-12)


@pytest.mark.parametrize("name", VSS_NAMES)
def test_vss_viscosity_reproduces_mu_ref(name):
    # Bird 1994 App. A mu_ref vs VSS form of eq. 4.62 / Koura & Matsumoto 1991 (M)
    sp = get_species(name)
    assert viscosity(sp.model("vss"), sp.t_ref_k) == pytest.approx(sp.mu_ref_pa_s, rel=0.015)


def test_vss_formula_reduces_to_vhs_at_alpha_one():
    # S: algebra, VSS eq. with alpha = 1 equals VHS eq. 4.62
    from dataclasses import replace
    vhs = get_species("Ar").model("vhs")
    vss1 = replace(vhs, kind="vss", alpha=1.0)
    t = np.array([100.0, 273.0, 1000.0])
    np.testing.assert_allclose(viscosity(vss1, t), viscosity(vhs, t), rtol=1e-14)


@pytest.mark.parametrize("name, mu_upas", [("Ar", 22.7), ("He", 19.9), ("N2", 17.9),
                                           ("air", 18.5)])
def test_viscosity_300k_vs_crc(name, mu_upas):
    # CRC Handbook, "Viscosity of Gases", 300 K (P), published-values.md sec. 5
    assert viscosity(get_species(name).model("vhs"), 300.0) * 1e6 == pytest.approx(
        mu_upas, rel=0.03)


@pytest.mark.parametrize("name", NAMES)
@pytest.mark.parametrize("kind", ["hs", "vhs"])
def test_mean_free_path_equals_mean_speed_over_frequency(name, kind):
    # S: [B94] eqs. 4.64 and 4.65 are related by lambda = cbar / nu
    model = get_species(name).model(kind)
    t = np.array([50.0, 300.0, 2000.0])
    n = 2.4e20
    lam = mean_free_path(model, n, t)
    np.testing.assert_allclose(lam, mean_speed(model.mass_kg, t)
                               / collision_frequency(model, n, t), rtol=1e-12)
    np.testing.assert_allclose(mean_collision_time(model, n, t),
                               1.0 / collision_frequency(model, n, t), rtol=1e-14)
    np.testing.assert_allclose(collision_rate_per_volume(model, n, t),
                               0.5 * n * n * mean_sigma_cr(model, t), rtol=1e-12)


def test_hard_sphere_mean_free_path_and_rate():
    # textbook HS: lambda = 1/(sqrt(2) pi d^2 n), <sigma c_r> = pi d^2 sqrt(16kT/(pi m))
    model = get_species("N2").model("hs")
    d, n = model.d_ref_m, 3.0e21
    for t in (77.0, 300.0, 1500.0):
        assert mean_free_path(model, n, t) == pytest.approx(
            1.0 / (math.sqrt(2.0) * math.pi * d**2 * n), rel=1e-13)
        assert mean_sigma_cr(model, t) == pytest.approx(
            math.pi * d**2 * math.sqrt(16 * K_B * t / (math.pi * model.mass_kg)), rel=1e-13)


@pytest.mark.parametrize("name, kind", [("Ar", "vhs"), ("CO2", "vhs"), ("He", "hs"),
                                        ("N2", "vss")])
def test_sigma_cr_coefficient_averages_to_mean_sigma_cr(name, kind):
    # S: quadrature of A c_r^(2-2w) ([B94] eq. 4.63) over the equilibrium c_r
    # distribution (Maxwellian with the reduced mass m/2) equals nu/n ([B94] eq. 4.64)
    model = get_species(name).model(kind)
    t = 450.0
    a = math.sqrt(K_B * t / (0.5 * model.mass_kg))  # Maxwell scale of c_r
    x = stats.maxwell(scale=a)
    val, _ = integrate.quad(lambda c: c ** (2 - 2 * model.omega) * x.pdf(c), 0, 20 * a,
                            epsabs=0, epsrel=1e-12, limit=200)
    assert sigma_cr_coefficient(model) * val == pytest.approx(mean_sigma_cr(model, t),
                                                              rel=1e-9)


@pytest.mark.parametrize("name", ["He", "Ar", "air"])
def test_speeds_vs_scipy_maxwell(name):
    # S: scipy.stats.maxwell with scale sqrt(kT/m) (mean, rms; mode found numerically)
    m, t = get_species(name).mass_kg, 296.0
    a = math.sqrt(K_B * t / m)
    x = stats.maxwell(scale=a)
    assert mean_speed(m, t) == pytest.approx(x.mean(), rel=1e-10)
    assert rms_speed(m, t) == pytest.approx(math.sqrt(x.moment(2)), rel=1e-10)
    h = 1e-5  # symmetric-difference root of d(log pdf)/dv; bias h^2/3
    mode = optimize.brentq(lambda v: x.logpdf(v * (1 + h)) - x.logpdf(v * (1 - h)),
                           0.5 * a, 3.0 * a, xtol=1e-14 * a, rtol=1e-15)
    assert most_probable_speed(m, t) == pytest.approx(mode, rel=1e-10)
    # flux-weighted mean speed: mean of v*f(v) is <v^2>/<v> (physics.md, S: scipy)
    assert flux_weighted_mean_speed(m, t) == pytest.approx(x.moment(2) / x.mean(),
                                                           rel=1e-10)


def test_air_mean_free_path_times_pressure_vacuum_practice():
    # T: vacuum practice, published-values.md sec. 7: lambda*p about 6.8e-3 Pa m for
    # air at 20 C. That figure is a hard-sphere mean free path with a viscosity
    # diameter; the HS model (d fitted to mu_ref at 273 K) gives 6.60e-3.
    air = get_species("air")
    lp_hs = mean_free_path_from_pressure(air.model("hs"), 1.0, T_20C)
    assert lp_hs == pytest.approx(6.8e-3, rel=0.05)
    # S: VHS lambda ([B94] eq. 4.65) is shorter than the HS lambda of a gas with the
    # same viscosity at T by (5-2w)(7-2w)/24 (0.787 for air: 5.29e-3 Pa m)
    lp_vhs = mean_free_path_from_pressure(air.model("vhs"), 1.0, T_20C)
    mu = viscosity(air.model("vhs"), T_20C)
    # HS first approximation: lambda = (16/5) mu / (n sqrt(2 pi m k T)), n = p/(kT)
    lp_hs_same_mu = 16 / 5 * mu * K_B * T_20C / math.sqrt(2 * math.pi * air.mass_kg
                                                          * K_B * T_20C)
    w = air.omega
    assert lp_vhs == pytest.approx(lp_hs_same_mu * (5 - 2 * w) * (7 - 2 * w) / 24,
                                   rel=1e-12)


def test_air_aperture_conductance_vacuum_practice():
    # T: cbar/4 for air at 20 C = 11.57 L/s per cm^2 (published-values.md sec. 7)
    c = mean_speed(get_species("air").mass_kg, T_20C) / 4.0  # m^3/s per m^2
    assert c * 1e3 * 1e-4 == pytest.approx(11.57, rel=0.005)


def test_state_relations_and_similarity_parameters():
    # S: ideal gas p = n k T; delta = p a /(mu v0); Kn = lambda/L (physics.md)
    n = number_density(101325.0, 273.15)
    assert n == pytest.approx(2.686780111e25, rel=1e-9)  # Loschmidt const. (M, CODATA 2018)
    assert pressure(n, 273.15) == pytest.approx(101325.0, rel=1e-14)
    ar = get_species("Ar")
    assert specific_gas_constant(ar.mass_kg) == pytest.approx(K_B / ar.mass_kg)
    v0 = math.sqrt(2 * K_B * 300.0 / ar.mass_kg)
    assert rarefaction_parameter(10.0, 1e-3, 2.27e-5, ar.mass_kg, 300.0) == pytest.approx(
        10.0 * 1e-3 / (2.27e-5 * v0), rel=1e-14)
    assert knudsen_number(np.array([1e-3, 2e-3]), 1e-2) == pytest.approx([0.1, 0.2])


def test_conductivity_prandtl_and_hs_factors():
    # S: (15/4)(k/m) mu gives Pr = c_p mu / K = 2/3 for a monatomic gas (CC ch. 10)
    model = get_species("Ar").model("vhs")
    cp = 2.5 * K_B / model.mass_kg
    assert cp * viscosity(model, 300.0) / thermal_conductivity(model, 300.0) == \
        pytest.approx(2.0 / 3.0, rel=1e-14)
    # M: Chapman & Cowling 1970 ch. 10, from memory
    assert hard_sphere_transport_correction() == {"viscosity": HS_VISCOSITY_FACTOR,
                                                  "conductivity": HS_CONDUCTIVITY_FACTOR}
    assert (HS_VISCOSITY_FACTOR, HS_CONDUCTIVITY_FACTOR) == (1.016034, 1.025218)


def test_get_species_case_insensitive_and_errors():
    assert get_species("ar") is get_species("AR") is SPECIES["Ar"]
    assert get_species("Air") is SPECIES["air"]
    with pytest.raises(KeyError, match="allowed: .*Ar.*air"):
        get_species("unobtainium")


def test_model_kind_errors():
    with pytest.raises(ValueError, match="air.*hs.*vhs"):
        get_species("air").model("vss")
    with pytest.raises(ValueError, match="allowed: hs, vhs, vss"):
        get_species("Ar").model("lj")
    m = get_species("Ar").model("VSS")
    assert (m.kind, m.alpha) == ("vss", 1.40) and m.d_ref_m == pytest.approx(4.11e-10)


def _iapws_mu0(t_k):
    """Dilute-gas viscosity of water, Pa s: IAPWS 2008 (Huber et al. 2009, J. Phys. Chem.
    Ref. Data 38, 101, eq. 11; coefficients M, from memory),
    mu0 = 100 sqrt(T/T_c) / sum_i H_i (T_c/T)^i uPa s, T_c = 647.096 K."""
    h = (1.67752, 2.20462, 0.6366564, -0.241605)
    t = np.asarray(t_k) / 647.096
    return 1e-6 * 100.0 * np.sqrt(t) / sum(hi / t ** i for i, hi in enumerate(h))


def test_water_vapour_row_follows_the_iapws_viscosity():
    # the H2O row is a VHS fit to IAPWS 2008 over 250-400 K (the range of vacuum practice)
    h2o = get_species("H2O")
    assert h2o.rot_dof == 3 and h2o.theta_vib_k is None and not h2o.has_vss
    # 12.34 uPa s at 373.15 K against steam tables' 12.27 at 1 atm (M): the formula as
    # remembered is the right one
    assert float(_iapws_mu0(373.15)) == pytest.approx(12.3e-6, rel=0.01)
    t = np.linspace(250.0, 400.0, 16)
    mu = np.array([float(viscosity(h2o.model("vhs"), tk)) for tk in t])
    assert np.max(np.abs(mu / _iapws_mu0(t) - 1.0)) < 0.02
    assert h2o.mass_kg * N_A == pytest.approx(18.015e-3, rel=1e-3)


def test_table_shows_internal_degrees_of_freedom_and_collision_numbers():
    rows = {r["name"]: r for r in gas_table_rows()}
    assert rows["Ar"]["rot_dof"] == 0 and rows["Ar"]["z_rot_default"] is None
    assert rows["N2"]["rot_dof"] == 2 and rows["N2"]["z_rot_default"] == 5.0
    assert rows["CH4"]["rot_dof"] == 3 and rows["H2O"]["rot_dof"] == 3
    # Parker 1959 (M): N2 Z_inf 23.0, T* 91.5 K gives 5.41 at 300 K (S)
    assert rows["N2"]["z_rot_parker_300k"] == pytest.approx(5.41, abs=0.01)
    # characteristic vibrational temperatures (Bird 1994 Table A5, M)
    assert (rows["N2"]["theta_vib_k"], rows["O2"]["theta_vib_k"]) == (3371.0, 2256.0)
    text = format_gas_table()
    assert "Z_rot" in text and "theta_vib (K)" in text and "rot. dof" in text
