"""Gas mixtures: case keys, mixing rules and mixture properties (each reduces to the pure
gas's kinetic theory), exact conservation in unlike collisions, and the result file."""

import math

import numpy as np
import pytest

from rarefy.case import CaseError, parse_case
from rarefy.constants import K_B
from rarefy.gas import internal, kinetic
from rarefy.gas.mixture import Mixture, chapman_enskog_hs_viscosity, mixture_of
from rarefy.gas.species import get_species
from rarefy.kernels.collide import collide_cells
from rarefy.kernels.config import N_INTERNAL_PAR, N_MOMENTS
from rarefy.kernels.rng import step_key
from rarefy.plan import format_plan, make_plan

BOX = """
[gas]
{gas}
[domain]
x = ["0 mm", "10 mm"]
y = ["0 mm", "10 mm"]
[boundaries.xmin]
kind = "reservoir"
pressure = "1 Pa"
temperature = "300 K"
{extra}
[boundaries.xmax]
kind = "vacuum"
[boundaries.ymin]
kind = "wall"
temperature = "300 K"
[boundaries.ymax]
kind = "wall"
temperature = "300 K"
"""


def _case(gas: str, extra: str = ""):
    return parse_case(BOX.format(gas=gas, extra=extra), "mix.toml")


def _error(gas: str, key: str, *fragments, extra: str = ""):
    with pytest.raises(CaseError) as err:
        _case(gas, extra)
    assert err.value.key == key, str(err.value)
    for f in fragments:
        assert f in str(err.value), str(err.value)


def test_mixture_keys():
    g = _case('species = ["he", "Xe"]\nmole_fractions = [0.9, 0.1]').gas
    assert g.mixture == ("He", "Xe") and g.names == ("He", "Xe")
    assert g.mole_fractions == pytest.approx((0.9, 0.1)) and g.species == "He"
    c = _case('species = ["He", "Ar"]\nmole_fractions = [0.5, 0.5]',
              "mole_fractions = [0.2, 0.8]")
    res = [b for b in c.boundaries if b.kind == "reservoir"][0]
    assert res.mole_fractions == pytest.approx((0.2, 0.8))
    assert _case('species = "Ar"').gas.names == ("Ar",)


def test_mixtures_with_molecules():
    # a molecule in a mixture takes the pure gas's keys: one value for every molecule or
    # a table by species (left-out molecules take the default Z_rot)
    g = _case('species = ["He", "N2", "CO2"]\nmole_fractions = [0.2, 0.5, 0.3]').gas
    assert g.rotation == (None, 5.0, 5.0) and [g.rotation_of(k) for k in range(3)] == \
        [None, 5.0, 5.0]
    g = _case('species = ["He", "N2", "CO2"]\nmole_fractions = [0.2, 0.5, 0.3]\n'
              'rotation = {n2 = "parker"}').gas
    assert g.rotation == (None, "parker", 5.0)
    assert [g.rotation_from_case(k) for k in range(3)] == [False, True, False]
    plan = make_plan(_case('species = ["He", "N2", "H2"]\nmole_fractions = [0.2, 0.5, 0.3]\n'
                           'rotation = {N2 = 4}'))
    assert plan.species_rotation_source == ("", "case", "auto")
    assert any("H2 relaxes its rotation" in w for w in plan.warnings())   # left at 5
    g = _case('species = ["N2", "O2"]\nmole_fractions = [0.79, 0.21]\nrotation = "parker"\n'
              'vibration = true\nvibration_number = 50').gas
    assert g.rotation == ("parker", "parker") and g.vibration and g.vibration_number == 50.0
    # the plan: per-species entries, and gamma of the mixture from heat capacities that
    # add by mole fraction (textbook thermodynamics): He-N2 50/50 has
    # c_v = (0.5 * 3/2 + 0.5 * 5/2) k = 2 k, gamma = 3/2 (S)
    plan = make_plan(_case('species = ["He", "N2"]\nmole_fractions = [0.5, 0.5]'))
    assert plan.species_rot_dof == (0, 2) and plan.rot_dof == 2
    assert plan.species_rot_collision_number == (0.0, 5.0)
    assert plan.gamma == pytest.approx(1.5, rel=1e-12)
    assert "N2: rotation 2 dof, Z_rot 5" in format_plan(plan)
    assert "He:" not in format_plan(plan)
    air = make_plan(_case('species = ["N2", "O2"]\nmole_fractions = [0.79, 0.21]\n'
                          'rotation = "parker"'))
    assert air.gamma == pytest.approx(1.4, rel=1e-12)
    assert air.species_rotation == ("parker", "parker")
    # Parker's Z_rot at the plan's reference temperature, per species
    assert air.species_rot_collision_number[1] == pytest.approx(
        float(internal.parker_zrot(air.reference_temperature_k, *get_species("O2").parker)))


def test_mixture_errors():
    _error('species = ["He", "He"]\nmole_fractions = [0.5, 0.5]', "gas.species[1]",
           "listed twice")
    _error('species = ["He", "CO2"]\nmole_fractions = [0.5, 0.5]\nrotation = "parker"',
           "gas.rotation", "CO2 lacks", "table by species")
    _error('species = ["He", "N2"]\nmole_fractions = [0.5, 0.5]\nrotation = {He = 3}',
           "gas.rotation.He", "no molecule of the mixture", "allowed: N2")
    _error('species = ["N2", "CO2"]\nmole_fractions = [0.5, 0.5]\nvibration = true',
           "gas.vibration", "no vibrational data for CO2")
    _error('species = ["He", "N2"]\nmole_fractions = [0.5, 0.5]\nrotation = 0.5',
           "gas.rotation", "from 1 to 1e12")
    _error('species = ["He", "N2"]\nmole_fractions = [0.5, 0.5]\nrotation = [5, 3]',
           "gas.rotation", "a table by species")
    _error('species = ["N2", "O2"]\nmole_fractions = [0.5, 0.5]\nrotation = {N2 = 3, n2 = 4}',
           "gas.rotation.n2", "N2 is given twice")
    _error('species = ["He", "N2"]\nmole_fractions = [0.5, 0.5]\nvibration_number = 3',
           "gas.vibration_number", "only with vibration = true")
    _error('species = ["He", "Unobtainium"]\nmole_fractions = [0.5, 0.5]',
           "gas.species[1]", "unknown species")
    _error('species = ["He"]\nmole_fractions = [1.0]', "gas.species", "2 to 8 species")
    _error('species = ["He", "Ar"]', "gas.mole_fractions", "one number per species")
    _error('species = ["He", "Ar"]\nmole_fractions = [0.5, 0.6]', "gas.mole_fractions",
           "must sum to 1")
    _error('species = ["He", "Ar"]\nmole_fractions = [1.0]', "gas.mole_fractions",
           "a list of 2 numbers")
    _error('species = ["He", "Ar"]\nmole_fractions = [-0.5, 1.5]', "gas.mole_fractions",
           "from 0 to 1")
    _error('species = "Ar"\nmole_fractions = [1.0]', "gas.mole_fractions",
           "only for a mixture")
    _error('species = ["He", "Ar"]\nmole_fractions = [0.5, 0.5]\nrotation = 5',
           "gas.rotation", "no internal energy")
    _error('species = "Ar"', "boundaries.xmin.mole_fractions", "only for a mixture",
           extra="mole_fractions = [1.0]")
    _error('species = ["He", "Ar"]\nmole_fractions = [0.5, 0.5]',
           "boundaries.xmin.mole_fractions", "a list of 2 numbers",
           extra="mole_fractions = [1.0]")


def _mix(names, fractions, model="vhs"):
    return Mixture(tuple(get_species(n).model(model) for n in names), tuple(fractions))


def test_mixing_rules_reduce_to_the_pure_gas():
    # a mixture whose second species is absent is the pure gas: Bird 1994 eqs. 4.63-4.65
    # (M) for the cross-section, collision rate and mean free path; Wilke's rule and the
    # Chapman-Enskog mixture viscosity give the species' own viscosity (S)
    mix = _mix(["Ar", "He"], [1.0, 0.0])
    ar = get_species("Ar").model("vhs")
    a, e, al = mix.sigma_cr_coefficients()
    assert a[0, 0] == pytest.approx(kinetic.sigma_cr_coefficient(ar), rel=1e-14)
    assert e[0, 0] == pytest.approx(2.0 - 2.0 * ar.omega) and al[0, 0] == 1.0
    assert mix.mean_sigma_cr(0, 0, 400.0) == pytest.approx(
        float(kinetic.mean_sigma_cr(ar, 400.0)), rel=1e-12)
    n = 1e20
    assert mix.mean_free_path(n, 300.0) == pytest.approx(
        float(kinetic.mean_free_path(ar, n, 300.0)), rel=1e-12)
    assert mix.viscosity(300.0) == pytest.approx(float(kinetic.viscosity(ar, 300.0)),
                                                 rel=1e-12)
    he_hs, ar_hs = get_species("He").model("hs"), get_species("Ar").model("hs")
    for x1, ref in ((1.0, he_hs), (0.0, ar_hs)):
        mu = chapman_enskog_hs_viscosity(he_hs.d_ref_m, ar_hs.d_ref_m, he_hs.mass_kg,
                                         ar_hs.mass_kg, x1, 273.0)
        assert mu == pytest.approx(float(kinetic.viscosity(ref, 273.0)), rel=1e-12)
    # unlike pairs: arithmetic means of d, omega and alpha (Bird 1994 sec. 4.3, M)
    mix = _mix(["He", "Xe"], [0.5, 0.5], "vss")
    d, w, alpha, m_r = mix.pair(0, 1)
    he, xe = get_species("He"), get_species("Xe")
    assert d == pytest.approx(0.5 * (he.d_vss_m + xe.d_vss_m))
    assert w == pytest.approx(0.5 * (he.omega + xe.omega))
    assert alpha == pytest.approx(0.5 * (he.alpha + xe.alpha))
    assert m_r == pytest.approx(he.mass_kg * xe.mass_kg / (he.mass_kg + xe.mass_kg))
    # the unlike pair's cross-section: Bird 1994 eq. 4.63 with d_pq, omega_pq and the
    # reduced mass (M), against numbers entered here
    a, e, al = mix.sigma_cr_coefficients()
    assert a[0, 1] == a[1, 0] == pytest.approx(
        math.pi * d * d * (2.0 * K_B * 273.0 / m_r) ** (w - 0.5) / math.gamma(2.5 - w),
        rel=1e-12)
    assert e[0, 1] == pytest.approx(2.0 - 2.0 * w) and al[0, 1] == pytest.approx(alpha)


def test_helium_argon_viscosity_has_its_known_maximum():
    # measured He-Ar viscosities rise above pure argon's at intermediate compositions
    # (a maximum near 30-40 % He; Kestin and co-workers' measurements, M); the first
    # Chapman-Enskog approximation for hard spheres shows it too
    he, ar = get_species("He").model("hs"), get_species("Ar").model("hs")
    mus = [chapman_enskog_hs_viscosity(he.d_ref_m, ar.d_ref_m, he.mass_kg, ar.mass_kg, x,
                                       273.0) for x in np.linspace(0.0, 1.0, 11)]
    k = int(np.argmax(mus))
    assert 0.2 <= k / 10 <= 0.5 and mus[k] > mus[0] > mus[-1]


def test_unlike_collisions_conserve_momentum_and_energy():
    # exact: an elastic collision of masses m_p, m_q about their centre of mass conserves
    # momentum and energy (Bird 1994 ch. 2, M); the kernel to round-off
    rng = np.random.default_rng(4)
    mix = _mix(["He", "Xe"], [0.7, 0.3])
    a, e, al = mix.sigma_cr_coefficients()
    masses = mix.masses
    n = 300
    spc = (rng.random(n) < 0.3).astype(np.float64)
    m = masses[spc.astype(int)]
    sig = np.sqrt(K_B * 300.0 / m)
    vx, vy, vz = (sig * rng.standard_normal(n) + u for u in (50.0, -20.0, 10.0))
    p0 = np.array([(m * v).sum() for v in (vx, vy, vz)])
    e0 = math.fsum(0.5 * m * (vx * vx + vy * vy + vz * vz))
    sigcr = np.array([float(a.max()) * 5000.0 ** float(e.max())])
    dt = 1e-6
    fnum = 30000.0 / (0.5 * n * (n - 1) * sigcr[0] * dt)
    stats = np.zeros(3 + 4)
    collide_cells(1, 1, np.array([0, n], dtype=np.int64), rng.random(n), rng.random(n),
                  vx, vy, vz, np.array([1.0]), sigcr, np.zeros(1), np.array([fnum]), dt,
                  0.0, 1.0, 1.0, np.zeros((0, n)), np.zeros((2, N_INTERNAL_PAR)), spc,
                  masses / masses.mean(), a, e, al, step_key(3, 0, 1),
                  np.zeros((1, 2 * N_MOMENTS)), False, stats)
    p1 = np.array([(m * v).sum() for v in (vx, vy, vz)])
    e1 = math.fsum(0.5 * m * (vx * vx + vy * vy + vz * vz))
    assert stats[0] > 500 and stats[3:].sum() == stats[0]
    assert stats[4] + stats[5] > 100                   # unlike pairs collided
    assert np.abs(p1 - p0).max() < 1e-12 * np.abs(m * sig).sum()
    assert abs(e1 - e0) < 1e-12 * e0



def test_molecules_in_a_mixture_exchange_internal_energy_conserving_it():
    # exact: Larsen-Borgnakke in unlike pairs moves energy between the pair's relative
    # motion (E_t = m_r c_r^2 / 2) and the internal modes of its molecules, conserving
    # momentum and total energy (Bird 1994 ch. 5, M); helium has no internal modes and
    # keeps zeros; N2 and O2 keep whole vibrational quanta of their own theta
    from rarefy.case import parse_case as parse
    from rarefy.engine.internal_params import kernel_parameters

    rng = np.random.default_rng(5)
    case = parse(BOX.format(gas='species = ["He", "N2", "O2"]\n'
                                'mole_fractions = [0.4, 0.3, 0.3]\nrotation = 3\n'
                                'vibration = true\nvibration_number = 5', extra=""), "m.toml")
    plan = make_plan(case)
    mix = mixture_of(case.gas)
    ip = kernel_parameters(plan, mix.models, case.gas.vibration_number)
    a, e, al = mix.sigma_cr_coefficients()
    masses = mix.masses
    n = 300
    spc = rng.choice(3, n, p=[0.4, 0.3, 0.3]).astype(np.float64)
    k = spc.astype(int)
    m = masses[k]
    sig = np.sqrt(K_B * 3000.0 / m)
    vx, vy, vz = (sig * rng.standard_normal(n) + u for u in (50.0, -20.0, 10.0))
    th = K_B * np.array([0.0, get_species("N2").theta_vib_k,
                         get_species("O2").theta_vib_k]) / masses
    eint = np.vstack([rng.gamma(1.0, sig * sig), np.floor(rng.exponential(1.0, n)) * th[k]])
    eint[:, k == 0] = 0.0
    p0 = np.array([(m * v).sum() for v in (vx, vy, vz)])
    e0 = math.fsum(0.5 * m * (vx * vx + vy * vy + vz * vz)) + math.fsum((m * eint).ravel())
    r0 = eint.copy()
    sigcr = np.array([float(a.max()) * 8000.0 ** float(e.max())])
    dt = 1e-6
    fnum = 30000.0 / (0.5 * n * (n - 1) * sigcr[0] * dt)
    stats = np.zeros(3 + 9)
    collide_cells(1, 1, np.array([0, n], dtype=np.int64), rng.random(n), rng.random(n),
                  vx, vy, vz, np.array([1.0]), sigcr, np.zeros(1), np.array([fnum]), dt,
                  0.0, 1.0, 1.0, eint, ip, spc, masses / plan.mass_kg, a, e, al,
                  step_key(3, 0, 1), np.zeros((1, 3 * N_MOMENTS)), False, stats)
    p1 = np.array([(m * v).sum() for v in (vx, vy, vz)])
    e1 = math.fsum(0.5 * m * (vx * vx + vy * vy + vz * vz)) + math.fsum((m * eint).ravel())
    assert stats[0] > 2000
    assert np.abs(p1 - p0).max() < 1e-12 * np.abs(m * sig).sum()
    assert abs(e1 - e0) < 1e-12 * e0
    assert np.all(eint[:, k == 0] == 0.0)
    mol = k > 0
    assert np.count_nonzero(eint[0, mol] != r0[0, mol]) > 0.9 * mol.sum()
    assert np.count_nonzero(eint[1, mol] != r0[1, mol]) > 0.5 * mol.sum()
    assert np.all(eint >= 0.0)
    q = eint[1, mol] / th[k[mol]]
    assert np.allclose(q, np.rint(q), atol=1e-9)

def test_mixture_result_file_opens_with_species(tmp_path):
    # the result keeps every tally per species; xarray opens them on named dimensions
    xr = pytest.importorskip("xarray")
    from rarefy.cli import execute
    from rarefy.io.result import read_result
    from rarefy.report import load_report

    text = BOX.format(gas='species = ["He", "Ar"]\nmole_fractions = [0.4, 0.6]',
                      extra="") + """
[[flux_planes]]
name = "mid"
points = [["5 mm", "0 mm"], ["5 mm", "10 mm"]]
[[probes]]
name = "centre"
x = ["4 mm", "6 mm"]
y = ["4 mm", "6 mm"]
[run]
settle_steps = 100
sample_steps = 200
batches = 4
"""
    execute(parse_case(text, "mix.toml"), tmp_path, seed=2, quiet=True)
    r = read_result(tmp_path)
    assert r.species == ["He", "Ar"] and r.plane_names == ["mid", "mid He", "mid Ar"]
    assert r.probe_names == ["centre He", "centre Ar"]
    np.testing.assert_array_equal(r.flux[:, 0], r.flux[:, 1] + r.flux[:, 2])
    f = r.fields
    np.testing.assert_allclose(f["number_density_He"] + f["number_density_Ar"],
                               f["number_density"], rtol=1e-12)
    ok = np.isfinite(f["mole_fraction_He"])
    np.testing.assert_allclose((f["mole_fraction_He"] + f["mole_fraction_Ar"])[ok], 1.0)
    with xr.open_dataset(tmp_path / "result.h5", engine="h5netcdf") as ds:
        assert ds["number_density_He"].attrs["units"] == "m^-3"
        assert ds["mole_fraction_Ar"].attrs["units"] == "1"
    with xr.open_dataset(tmp_path / "result.h5", engine="h5netcdf", group="raw") as raw:
        assert raw["flux_tally"].dims[:3] == ("batch", "plane", "species")
    rep = load_report(tmp_path)
    assert rep["flux_planes"]["mid He"]["species"] == "He"
    assert set(rep["probes"]) == {"centre He", "centre Ar"}
    assert mixture_of(parse_case(text).gas).nspecies == 2
