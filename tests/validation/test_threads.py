"""The parallel kernels give the same run for every thread count.

No outside reference is needed: the run on one thread is the reference. Collisions and
surface interactions draw from counter-based streams keyed by (seed, step, cell or
particle) (``rarefy.kernels.rng``), the sort keeps store order whatever its chunking,
and the move kernels tally into fixed chunks that are added in order. So particle
states, cell moments and surface and flux-plane tallies must agree bit for bit between
one and two threads, and so must the collision counts and pair separations.

The cases are sized so that every kernel really splits its work: over 131 072
particles (two sort chunks) and many move chunks, with walls, flux planes, probes and
collisions (an axisymmetric orifice at delta ~ 3, the same with a He-Xe-N2 mixture, and a
planar slit of N2 with rotational exchange).
"""

import dataclasses

import numba
import numpy as np
import pytest

from rarefy.case import parse_case
from rarefy.engine.simulation import Simulation
from rarefy.plan import make_plan
from rarefy.templates import orifice_case, slit_case

pytestmark = pytest.mark.validation

STEPS = 24


@pytest.fixture(autouse=True)
def _always_parallel(monkeypatch):
    """The engine's parallel kernels even below their usual particle threshold."""
    import rarefy.engine.simulation as engine
    monkeypatch.setattr(engine, "run_parallel", lambda n: numba.get_num_threads() > 1)


def _run(text: str, particles: float, threads: int) -> Simulation:
    case = parse_case(text)
    plan = make_plan(case)
    scale = plan.expected_particles / particles
    plan = dataclasses.replace(plan, particle_weight=plan.particle_weight * scale,
                               expected_particles=float(particles))
    before = numba.get_num_threads()
    numba.set_num_threads(threads)
    try:
        sim = Simulation(case, plan, seed=99)
        for k in range(STEPS):
            sim.step(k >= STEPS // 3, watch=True)   # settle (watched), then sample
    finally:
        numba.set_num_threads(before)
    return sim


# filled at the start, so that molecules cross the throat within the few steps
FILL = '\n[initial]\npressure = "{p} Pa"\ntemperature = "300 K"\n'
CASES = {
    "orifice": (orifice_case(gas="Ar", upstream_pressure_pa=50.0, radius_m=0.5e-3)
                + FILL.format(p=20.0), 0.5e6),
    "slit": (slit_case(gas="N2", upstream_pressure_pa=20.0, width_m=1e-3)
             + FILL.format(p=8.0), 0.5e6),
    # a mixture: species rows, pair cross-sections, per-species tallies, and a molecule
    # exchanging rotation with per-cell (Parker) collision numbers
    "orifice mixture": (orifice_case(gas="Ar", upstream_pressure_pa=50.0, radius_m=0.5e-3)
                        .replace('species = "Ar"',
                                 'species = ["He", "Xe", "N2"]\n'
                                 'mole_fractions = [0.6, 0.2, 0.2]\nrotation = "parker"')
                        + FILL.format(p=20.0), 0.5e6),
}


@pytest.mark.skipif(numba.config.NUMBA_NUM_THREADS < 2, reason="needs two cores")
@pytest.mark.parametrize("name", sorted(CASES))
def test_one_and_two_threads_give_the_same_run(name):
    text, particles = CASES[name]
    one = _run(text, particles, 1)
    two = _run(text, particles, 2)
    n = one.store.n
    print(f"\n{name}: {n} particles after {STEPS} steps, "
          f"{one.acc.collisions.sum(axis=0)[0]:.0f} collisions")
    assert n > 131072, "too few particles to split the sort"
    assert two.store.n == n
    np.testing.assert_array_equal(two.store.state[:, :n], one.store.state[:, :n])
    for name_ in ("cell_batch", "surf", "flux", "probe_mom", "probe_hist"):
        np.testing.assert_array_equal(getattr(two.acc, name_), getattr(one.acc, name_),
                                      err_msg=name_)
    np.testing.assert_array_equal(two.sigcr_max, one.sigcr_max)
    np.testing.assert_array_equal(two.remainder, one.remainder)
    c1, c2 = one.acc.collisions, two.acc.collisions
    assert c1[:, 0].sum() > 1000                      # collisions did happen
    np.testing.assert_array_equal(c2, c1)             # counts and pair separations
    assert one.acc.surf.sum() > 0 and one.acc.flux.sum() > 0   # tallies were exercised
