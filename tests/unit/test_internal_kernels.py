"""Internal-energy kernels: Larsen-Borgnakke distributions, equilibrium sampling,
collision-number formulas and conservation, against scipy's reference distributions and
exact sums."""

import math

import numpy as np
import pytest
from numba import njit
from scipy import stats

from rarefy.constants import K_B
from rarefy.gas import internal, kinetic
from rarefy.gas.species import get_species
from rarefy.kernels.collide import collide_cells
from rarefy.kernels.config import (
    IP_M_OVER_K, IP_OMEGA, IP_ROT_DOF, IP_ROT_FACTOR, IP_ROT_MODE, IP_ROT_P, IP_TSTAR,
    IP_VIB_P, IP_VIB_TH, IP_ZINF, N_INTERNAL_PAR, N_MOMENTS,
)
from rarefy.kernels.internal import (
    beta_fraction, cell_probabilities, equilibrium_rot, equilibrium_vib, vib_level,
    wall_internal,
)
from rarefy.kernels.rng import step_key, stream

P_MIN = 1e-3        # KS acceptance for a correct distribution (fixed seed)
P_WRONG = 1e-6      # KS p-value a wrong distribution must fall below
KEY = step_key(99, 0, 1)
N2 = get_species("N2")


@njit
def _draw2(func, n, a, b):
    s = stream(KEY, 0)
    out = np.empty(n)
    for k in range(n):
        s, out[k] = func(s, a, b)
    return out


@njit
def _draw3(func, n, a, b, c):
    s = stream(KEY, 0)
    out = np.empty(n)
    for k in range(n):
        s, out[k] = func(s, a, b, c)
    return out


def _draws(func, n, *args):
    """n draws from one stream (the counter passed on inside compiled code, as in the
    kernels)."""
    args = [float(a) for a in args]
    return (_draw2 if len(args) == 2 else _draw3)(func, n, *args)


@pytest.mark.parametrize("a, b", [(1.0, 1.76), (1.5, 1.66), (1.5, 1.5)])
def test_larsen_borgnakke_fraction_is_beta(a, b):
    # Bird 1994 ch. 5 (M): E_rot'/E_c ~ Beta(zeta/2, 5/2 - omega); scipy.stats.beta
    x = _draws(beta_fraction, 20000, a, b)
    assert stats.kstest(x, stats.beta(a, b).cdf).pvalue > P_MIN
    assert stats.kstest(x, stats.beta(a, b + 0.15).cdf).pvalue < P_WRONG   # power


def test_equilibrium_rotational_energy_is_gamma():
    # classical rotor with zeta dof: E / kT ~ Gamma(zeta/2) (Bird 1994 ch. 5, M)
    for dof in (2, 3):
        e = _draws(equilibrium_rot, 20000, dof, 1.0)
        assert stats.kstest(e, stats.gamma(0.5 * dof).cdf).pvalue > P_MIN
        assert stats.kstest(e, stats.gamma(0.5 * dof, scale=1.05).cdf).pvalue < P_WRONG


def test_equilibrium_vibrational_levels_are_boltzmann():
    # harmonic levels i with P(i) ~ exp(-i theta / T) (Bird 1994 ch. 5, M); theta/T = 0.8
    th, kt = 1.0, 1.25
    e = _draws(equilibrium_vib, 40000, th, kt)
    levels = np.rint(e / th).astype(int)
    assert np.all(np.abs(e - levels * th) == 0.0)
    kmax = 8
    obs = np.bincount(np.minimum(levels, kmax), minlength=kmax + 1)
    q = math.exp(-th / kt)
    p = (1 - q) * q ** np.arange(kmax + 1.0)
    p[-1] = q ** kmax
    assert stats.chisquare(obs, p * len(levels)).pvalue > P_MIN
    mean = e.mean() / th
    assert mean == pytest.approx(1.0 / math.expm1(th / kt), rel=4 * e.std() / th
                                 / math.sqrt(len(e)) / mean)


def test_quantized_larsen_borgnakke_levels():
    # Bird 1994 ch. 5 (M): P(i) ~ (1 - i k theta / E_c)^(3/2 - omega), i <= E_c / k theta
    ec, th, expo = 5.5, 1.0, 0.76
    e = _draws(vib_level, 40000, ec, th, expo)
    lev = np.rint(e / th).astype(int)
    w = (1.0 - np.arange(6) * th / ec) ** expo
    obs = np.bincount(lev, minlength=6)
    assert len(obs) == 6
    assert stats.chisquare(obs, w / w.sum() * len(lev)).pvalue > P_MIN
    w_wrong = (1.0 - np.arange(6) * th / ec) ** (expo + 0.5)
    assert stats.chisquare(obs, w_wrong / w_wrong.sum() * len(lev)).pvalue < P_WRONG


def test_parker_collision_number_in_the_kernel():
    # Parker 1959 (M): Z = Z_inf / (1 + (pi^1.5/2) sqrt(T*/T) + (pi + pi^2/4) T*/T); the
    # kernel's per-cell probability must be (1 + zeta/(5 - 2 omega)) / Z(T)
    ip = np.zeros(N_INTERNAL_PAR)
    ip[IP_ROT_DOF], ip[IP_ROT_MODE] = 2.0, 1.0
    ip[IP_ZINF], ip[IP_TSTAR] = N2.parker
    ip[IP_ROT_FACTOR] = 1.0 + 2.0 / (5.0 - 2.0 * N2.omega)
    for t in (150.0, 300.0, 1000.0, 5000.0):
        z = float(internal.parker_zrot(t, *N2.parker))
        zb = 23.0 / (1 + math.pi ** 1.5 / 2 * math.sqrt(91.5 / t)
                     + (math.pi + math.pi ** 2 / 4) * 91.5 / t)
        assert z == pytest.approx(zb, rel=1e-14)
        prot, _ = cell_probabilities(ip, t)
        assert prot == pytest.approx(internal.selection_probability(z, 2, N2.omega), rel=1e-12)
    assert float(internal.parker_zrot(300.0, *N2.parker)) == pytest.approx(5.41, abs=0.01)
    # Z_rot grows towards Z_inf at high temperature
    zs = internal.parker_zrot(np.array([100.0, 300.0, 1e3, 1e4, 1e8]), *N2.parker)
    assert np.all(np.diff(zs) > 0) and zs[-1] == pytest.approx(23.0, rel=0.01)


def test_collisions_conserve_total_energy_with_internal_modes():
    # exact: Larsen-Borgnakke moves energy between translation and the internal modes
    # of the pair, conserving momentum and total energy (Bird 1994 ch. 5, M)
    rng = np.random.default_rng(3)
    n = 200
    sig = math.sqrt(K_B * 3000.0 / N2.mass_kg)
    vx, vy, vz = (sig * rng.standard_normal(n) + u for u in (100.0, -30.0, 5.0))
    th = K_B * N2.theta_vib_k / N2.mass_kg
    eint = np.vstack([rng.gamma(1.0, sig * sig, n), np.floor(rng.exponential(0.8, n)) * th])
    ip = np.zeros(N_INTERNAL_PAR)
    ip[IP_ROT_DOF], ip[IP_ROT_P], ip[IP_VIB_TH], ip[IP_VIB_P] = 2.0, 0.4, th, 0.3
    ip[IP_OMEGA], ip[IP_M_OVER_K] = N2.omega, N2.mass_kg / K_B
    model = N2.model("vhs")
    a_coef = kinetic.sigma_cr_coefficient(model)
    exponent = 2.0 - 2.0 * model.omega
    sigcr = np.array([a_coef * (6.0 * sig) ** exponent])
    dt = 1e-6
    fnum = 3000.0 / (0.5 * n * (n - 1) * sigcr[0] * dt)
    p0 = np.array([vx.sum(), vy.sum(), vz.sum()])
    e0 = math.fsum(0.5 * (vx * vx + vy * vy + vz * vz)) + math.fsum(eint.ravel())
    r0 = eint.copy()
    st = np.zeros(3)
    collide_cells(1, 1, np.array([0, n], dtype=np.int64), rng.random(n), rng.random(n),
                  vx, vy, vz, np.array([1.0]), sigcr, np.zeros(1), np.array([fnum]), dt,
                  a_coef, exponent, model.alpha, eint, ip[None, :], np.zeros(1), np.ones(1),
                  np.zeros((1, 1)), np.zeros((1, 1)), np.ones((1, 1)), KEY,
                  np.zeros((1, N_MOMENTS)),
                  False, st)
    e1 = math.fsum(0.5 * (vx * vx + vy * vy + vz * vz)) + math.fsum(eint.ravel())
    assert st[0] > 1000
    assert np.abs(np.array([vx.sum(), vy.sum(), vz.sum()]) - p0).max() < 1e-9 * n * sig
    assert abs(e1 - e0) < 1e-12 * e0
    assert np.count_nonzero(eint[0] != r0[0]) > 0.9 * n      # rotation exchanged
    assert np.count_nonzero(eint[1] != r0[1]) > 0.3 * n      # vibration exchanged
    assert np.all(eint >= 0.0)
    assert np.allclose(eint[1] / th, np.rint(eint[1] / th), atol=1e-9)   # whole quanta


def test_millikan_white_in_the_kernel_matches_the_plan():
    # Millikan & White 1963 (M): p tau = exp(A (T^-1/3 - B) - 18.42) atm s; Z_vib =
    # p tau nu / p with nu from Bird 1994 eq. 4.64 (M). The kernel's per-cell probability
    # must equal the plan's (1 + 2/(5 - 2 omega)) / Z_vib at the same temperature.
    from rarefy.case import parse_case
    from rarefy.engine.internal_params import kernel_parameters
    from rarefy.plan import make_plan, vib_collision_number
    from rarefy.templates import box_case

    for gas in ("N2", "O2", "H2"):
        case = parse_case(box_case(gas=gas, temperature_k=2000.0, pressure_pa=100.0),
                          "box.toml", overrides={"gas.vibration": True})
        plan = make_plan(case)
        sp = get_species(gas)
        model = sp.model(case.gas.model)
        ip = kernel_parameters(plan, (model,), case.gas.vibration_number)[0]
        for t in (800.0, 2000.0, 6000.0):
            z = vib_collision_number(case.gas, model, t, sp.theta_vib_k)
            _, pvib = cell_probabilities(ip, t)
            assert pvib == pytest.approx(internal.vib_selection_probability(z, sp.omega),
                                         rel=1e-9), (gas, t)
    # N2 at 2000 K: A = 220, B = 0.0290 (reduced mass 14.0 g/mol): p tau = 3.4e-4 atm s
    # from the correlation's own numbers (S)
    p_tau = internal.millikan_white_p_tau(2000.0, N2.mass_kg, N2.theta_vib_k)
    a = 1.16e-3 * math.sqrt(14.0) * 3371.0 ** (4 / 3)
    assert p_tau / internal.ATM_PA == pytest.approx(
        math.exp(a * (2000.0 ** (-1 / 3) - 0.015 * 14.0 ** 0.25) - 18.42), rel=2e-3)


def test_mixture_collision_numbers_in_the_kernel_match_the_plan():
    # each molecule of a mixture keeps its own Z_rot (Parker 1959 or a constant) and
    # Z_vib (Millikan & White 1963, M); the kernel's per-cell inverse numbers must be
    # those of rarefy.gas.internal and the plan at the same temperature, and zero for
    # helium, which has no internal modes
    from rarefy.case import parse_case
    from rarefy.engine.internal_params import kernel_parameters
    from rarefy.gas.mixture import mixture_of
    from rarefy.kernels.internal import inverse_numbers
    from rarefy.plan import format_plan, make_plan, vib_collision_number
    from rarefy.templates import box_case

    text = box_case(gas="N2", temperature_k=2000.0, pressure_pa=100.0).replace(
        'species = "N2"', 'species = ["He", "N2", "O2"]\nmole_fractions = [0.2, 0.4, 0.4]\n'
        'rotation = {N2 = "parker", O2 = 7}\nvibration = true')
    case = parse_case(text, "box.toml")
    plan = make_plan(case)
    mix = mixture_of(case.gas)
    ip = kernel_parameters(plan, mix.models, case.gas.vibration_number)
    assert "O2: rotation 2 dof, Z_rot 7 (case)" in format_plan(plan)
    for t in (800.0, 2000.0, 6000.0):
        assert inverse_numbers(ip[0], t) == (0.0, 0.0)
        zr, zv = inverse_numbers(ip[1], t)
        assert zr == pytest.approx(1.0 / float(internal.parker_zrot(t, *N2.parker)), rel=1e-12)
        for k, sp in ((1, N2), (2, get_species("O2"))):
            z = vib_collision_number(case.gas, mix.models[k], t, sp.theta_vib_k)
            assert inverse_numbers(ip[k], t)[1] == pytest.approx(1.0 / z, rel=1e-9), (k, t)
        assert inverse_numbers(ip[2], t)[0] == pytest.approx(1.0 / 7.0, rel=1e-15)
    # at the plan's reference temperature, the plan's own numbers
    t_ref = plan.reference_temperature_k
    for k in (1, 2):
        zr, zv = inverse_numbers(ip[k], t_ref)
        assert zr == pytest.approx(1.0 / plan.species_rot_collision_number[k], rel=1e-12)
        assert zv == pytest.approx(1.0 / plan.species_vib_collision_number[k], rel=1e-9)


def test_specular_reflection_keeps_and_diffuse_reemission_resets_internal_energy():
    # Maxwell model (Bird 1994 ch. 5 and sec. 12.3, M): specular reflection keeps the
    # molecule's internal state; diffuse re-emission gives it the wall's equilibrium
    ip = np.zeros(N_INTERNAL_PAR)
    ip[IP_ROT_DOF], ip[IP_VIB_TH] = 2.0, 1.0
    eint = np.array([[7.0], [3.0]])
    out = _wall_draws(eint, False, 2.0, ip, 3)
    assert np.all(out[0] == 10.0) and np.all(out[1] == 10.0)
    assert eint[0, 0] == 7.0 and eint[1, 0] == 3.0
    out = _wall_draws(eint, True, 2.0, ip, 4000)
    assert np.all(out[0] == 10.0) and np.all(out[1] == out[2] + out[3])
    # kT/m = sigma^2 = 4: rotation Exp(mean 4), vibration whole quanta of mean
    # 1/(exp(1/4) - 1) = 3.52 (S)
    assert stats.kstest(out[2], stats.expon(scale=4.0).cdf).pvalue > P_MIN
    assert out[3].mean() == pytest.approx(1.0 / math.expm1(0.25), rel=0.05)
    assert np.all(out[3] == np.rint(out[3]))


@njit
def _wall_draws(eint, diffuse, sigma, ip, n):
    """n surface interactions of molecule 0 (energies restored before each): rows e_in,
    e_out, rotation after, vibration after."""
    out = np.empty((4, n))
    r0, v0 = eint[0, 0], eint[1, 0]
    for k in range(n):
        eint[0, 0], eint[1, 0] = r0, v0
        _, e0, e1 = wall_internal(stream(KEY, k), eint, 0, diffuse, sigma, ip)
        out[0, k], out[1, k], out[2, k], out[3, k] = e0, e1, eint[0, 0], eint[1, 0]
    eint[0, 0], eint[1, 0] = r0, v0
    return out


def test_parker_floor_temperature():
    # Parker's Z_rot for N2 falls below the exchange's floor 2 (1 + 2/(5 - 2 omega)) =
    # 3.14 near 129 K, for O2 (floor 3.16) near 265 K (S, from the formula)
    for gas, t_expected in (("N2", 129.0), ("O2", 265.0)):
        sp = get_species(gas)
        t = internal.parker_floor_temperature(sp.parker, 2, sp.omega)
        assert t == pytest.approx(t_expected, abs=1.0)
        z_min = 2.0 * (1.0 + 2.0 / (5.0 - 2.0 * sp.omega))
        assert float(internal.parker_zrot(t, *sp.parker)) == pytest.approx(z_min, rel=1e-9)
