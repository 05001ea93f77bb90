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
from rarefy.io.result import read_result
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
                                                (["He", "Xe"], [0.8, 0.2])])
def test_equilibrium_collision_rates_per_pair(species, fractions):
    # equilibrium collision rates per unit volume: n_p n_q <sigma_pq c_r> for unlike and
    # (1/2) n_p^2 <sigma_pp c_r> for like pairs (kinetic theory, Bird 1994 eq. 4.78 form,
    # M), with <sigma c_r> integrated here over the relative-speed Maxwellian of the
    # pair's reduced mass (S). The band is 2 %.
    case = parse_case(periodic_box(species, fractions))
    plan = make_plan(case)
    sim = Simulation(case, plan, 5)
    nsp = len(species)
    a, e, _ = sim.pair
    masses = sim.masses
    volume = 10e-3 * 10e-3 * 1e-3
    counts = np.zeros((32, nsp, nsp))
    expected = np.zeros((32, nsp, nsp))
    for _ in range(20):              # the fill is already in equilibrium
        sim.step(False)
    for b in range(32):
        for _ in range(5):
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
            assert se < 0.006, "too few collisions for the check to fail"
            assert abs(mean - 1.0) < min(0.02, 4.0 * se + 0.004), (species[p], species[q])
