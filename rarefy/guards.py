"""Guards: refuse a plan that cannot finish on this machine before a run starts.

:func:`check_plan` looks at a case and its plan and raises :class:`GuardError` (one
line naming the case file, the key to change and what the estimate was) when

* the particles (and the per-cell and per-batch arrays) would need more memory than
  the budget (default: half the machine's physical memory);
* the grid has more than :data:`MAX_CELLS` cells, or more than
  :data:`MAX_SUBCELL_KEYS` collision sub-cells;
* the plan needs more than :data:`MAX_STEPS` steps;
* a user-set time step lets a molecule at the mean speed fly across more than
  :data:`MAX_TRANSIT_FRACTION` cells in one step while the step is more than
  :data:`MAX_COLLISIONAL_DT_OVER_TAU` of the mean collision time, so that collisions
  would be placed cells away from where they belong (between 1 and 2 cells the plan
  only warns, see :meth:`rarefy.plan.Plan.warnings`; in nearly free-molecular flow long
  flights are harmless and allowed);
* the estimated wall time exceeds a time budget (``time_budget_s``, or the case key
  ``run.time_budget``).

It returns warnings for estimates that come near a budget, or for a run longer than a
day when no time budget is set. The estimates are rough upper bounds, stated with the
figures they rest on so that a user can judge them.
"""

from __future__ import annotations

import itertools
import math
import os

from rarefy.case import Case, one_line
from rarefy.kernels.config import N_MOMENTS
from rarefy.plan import Plan

__all__ = [
    "ASSUMED_PARTICLE_STEPS_PER_S",
    "BYTES_PER_PARTICLE",
    "MAX_CELLS",
    "MAX_STEPS",
    "MAX_SUBCELL_KEYS",
    "MAX_TRANSIT_FRACTION",
    "MAX_COLLISIONAL_DT_OVER_TAU",
    "STORE_HEADROOM",
    "SORT_BYTES_PER_PARTICLE",
    "bytes_per_particle",
    "GuardError",
    "check_plan",
    "default_memory_budget",
    "estimate_memory_bytes",
    "estimate_wall_time_s",
    "particle_steps",
]

# Particle state in rarefy.engine.particles.ParticleStore: 5 float64 (x, y, vx, vy, vz)
# in two buffers (the sorted copy is written into the second, then they swap), plus an
# int32 sort key: (5 * 8) * 2 + 4 = 84 bytes per particle of a monatomic gas; each
# internal-energy row (rotation, vibration) adds 16 (:func:`bytes_per_particle`).
BYTES_PER_PARTICLE = 5 * 8 * 2 + 4
# The store grows by at least 1.25 x when it must (rarefy.engine.particles), so it may
# hold up to 1.25 x the particles it carries.
STORE_HEADROOM = 1.25
# Per-cell arrays of the engine: two sampling rows of 17 float64 moments, the
# maximum sigma*c_r, the collision remainder and the cell flags, about 38 float64.
BYTES_PER_CELL = 38 * 8
# Sort keys: one int64 start index per collision sub-cell.
BYTES_PER_SUBCELL = 8
# During the sort: per-chunk counts, at most two int64 per particle
# (rarefy.kernels.index).
SORT_BYTES_PER_PARTICLE = 16
# Tallies kept per sampling batch: per flux plane 6 sums and two histograms of
# bins + 1, per probe 14 moments and four histograms of bins + 1, per surface facet
# 9 sums; float64 each.
FLUX_TALLY, PROBE_TALLY, FACET_TALLY = 6, 14, 9


def bytes_per_particle(plan: Plan) -> int:
    """Bytes a particle slot takes for the plan's gas: 84, plus 16 for rotation and 16
    more with vibration, and 16 for the species of a mixture."""
    return (BYTES_PER_PARTICLE + 16 * ((1 + int(plan.vibration)) if plan.rot_dof else 0)
            + 16 * (len(plan.species) > 1))

# Throughput assumed for the wall-time estimate: 5e6 particle-steps per second, a
# conservative figure for this engine on one core of an ordinary laptop (move,
# index, collide and sample together); faster machines finish sooner.
ASSUMED_PARTICLE_STEPS_PER_S = 5e6

MAX_CELLS = 5_000_000            # cells of the sampling grid
MAX_SUBCELL_KEYS = 50_000_000    # cells x subcells^2 (400 MB of sort keys)
MAX_TRANSIT_FRACTION = 2.0       # cells crossed per step at the mean speed
MAX_COLLISIONAL_DT_OVER_TAU = 0.05   # ... when a step is this much of a collision time
MAX_STEPS = 10 ** 9              # settle + sample steps (beyond any run that could finish)
LONG_RUN_S = 86400.0             # without a time budget, warn beyond a day
NEAR_BUDGET = 0.5                # warn when an estimate passes this share of its budget
FALLBACK_MEMORY_BYTES = 8 * 2 ** 30

_PARTICLE_KEYS = ("a lower resolution.particles_per_cell, a larger resolution.cell_size or "
                  "a larger resolution.particle_weight")


class GuardError(ValueError):
    """A plan that would not finish within the machine's memory or the time budget.

    ``str()`` is one line: ``"FILE: KEY: MESSAGE"``.
    """

    def __init__(self, path: str, key: str, message: str) -> None:
        self.path = str(path)
        self.key = key
        self.message = message
        super().__init__(str(self))

    def __str__(self) -> str:
        return one_line(f"{self.path}: {self.key}: {self.message}")


def default_memory_budget() -> int:
    """Half the machine's physical memory in bytes (8 GiB when it cannot be told)."""
    try:
        total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (AttributeError, ValueError, OSError):
        return FALLBACK_MEMORY_BYTES
    if not isinstance(total, int) or total <= 0:
        return FALLBACK_MEMORY_BYTES
    return total // 2


def _gib(n: float) -> str:
    if n >= 2 ** 30:
        return f"{n / 2 ** 30:.3g} GiB"
    return f"{n / 2 ** 20:.3g} MiB"


def _duration(seconds: float) -> str:
    if seconds >= 86400.0:
        return f"{seconds / 86400.0:.3g} d"
    if seconds >= 3600.0:
        return f"{seconds / 3600.0:.3g} h"
    if seconds >= 60.0:
        return f"{seconds / 60.0:.3g} min"
    return f"{seconds:.3g} s"


def _facets(case: Case, plan: Plan) -> float:
    """Surface facets (about one per cell length of wall, as the geometry cuts them)."""
    cell = min(plan.cell_dx_m, plan.cell_dy_m)
    length = 0.0
    for w in case.walls:
        pts = list(w.points) + ([w.points[0]] if w.solid else [])
        length += sum(math.dist(a, b) for a, b in itertools.pairwise(pts))
    length += sum(b.end - b.start for b in case.boundaries if b.kind == "wall")
    return length / cell + len(case.walls) + len(case.boundaries)


def estimate_memory_bytes(case: Case, plan: Plan) -> dict[str, float]:
    """Memory the run allocates, by part (bytes).

    ``particles``: ``plan.expected_particles`` (the whole domain at the densest gas the
    case supplies, reservoir or initial fill, so the upstream fill is included) x
    :data:`STORE_HEADROOM` x :func:`bytes_per_particle`; ``grid``: per-cell arrays and
    the sub-cell sort keys; ``batches``: the per-batch tallies of flux planes, probes
    and surfaces.
    """
    bins = plan.histogram_bins + 1
    nsp = max(1, len(plan.species))      # a mixture keeps every tally per species
    per_batch = 8.0 * nsp * (len(case.flux_planes) * (FLUX_TALLY + 2 * bins)
                             + len(case.probes) * (PROBE_TALLY + 4 * bins)
                             + _facets(case, plan) * FACET_TALLY) + 32.0
    return {
        "particles": float(plan.expected_particles) * (STORE_HEADROOM
                                                       * bytes_per_particle(plan)
                                                       + SORT_BYTES_PER_PARTICLE),
        "grid": float(plan.ncell) * (BYTES_PER_CELL + 16 * N_MOMENTS * (nsp - 1)
                                     + BYTES_PER_SUBCELL * plan.subcells ** 2),
        "batches": per_batch * plan.batches,
    }


def particle_steps(plan: Plan) -> float:
    """Particle-steps of the planned run: expected particles x (settle + sample steps)."""
    return float(plan.expected_particles) * (plan.settle_steps + plan.sample_steps)


def estimate_wall_time_s(plan: Plan) -> float:
    """Wall time (s) at :data:`ASSUMED_PARTICLE_STEPS_PER_S`."""
    return particle_steps(plan) / ASSUMED_PARTICLE_STEPS_PER_S


def _particle_key(case: Case) -> str:
    """The key that sets the particle count: the one the case gives, else particles per cell."""
    if case.resolution.particle_weight:
        return "resolution.particle_weight"
    return "resolution.particles_per_cell"


def check_plan(case: Case, plan: Plan, *, memory_budget_bytes: float | None = None,
               time_budget_s: float | None = None) -> list[str]:
    """Refuse a plan that would exhaust memory or overrun the time budget.

    Parameters
    ----------
    case : Case
        The case; ``case.source_path`` names the file in messages, and
        ``case.run.time_budget_s`` is the time budget when ``time_budget_s`` is None.
    plan : Plan
        Its plan (:func:`rarefy.plan.make_plan`).
    memory_budget_bytes : float, optional
        Memory the run may use; default :func:`default_memory_budget`.
    time_budget_s : float, optional
        Wall-time budget in seconds; wins over ``run.time_budget`` of the case.
        Neither given: no time limit (a warning when the estimate passes a day).

    Returns
    -------
    list of str
        Warnings (estimates above half of a budget, or a run longer than a day without
        a time budget); the plan's own resolution warnings (:meth:`Plan.warnings`,
        among them a time step crossing 1 to 2 cells) are not repeated here.

    Raises
    ------
    GuardError
        One line naming ``case.source_path``, the key to change and the estimate.
    """
    path = case.source_path
    warnings: list[str] = []

    # grid size
    if plan.ncell > MAX_CELLS:
        raise GuardError(path, "resolution.cell_size",
                         f"{plan.nx} x {plan.ny} = {plan.ncell:,} cells is more than the "
                         f"{MAX_CELLS:,} allowed; choose a larger resolution.cell_size "
                         f"(now {plan.cell_dx_m:.4g} m) or leave it out for the automatic one")
    keys = plan.ncell * plan.subcells ** 2
    if keys > MAX_SUBCELL_KEYS:
        raise GuardError(path, "resolution.subcells",
                         f"{plan.ncell:,} cells x {plan.subcells}^2 sub-cells = {keys:,} "
                         f"collision sub-cells is more than the {MAX_SUBCELL_KEYS:,} allowed; "
                         "choose fewer resolution.subcells (default 2) or a larger "
                         "resolution.cell_size")

    # step count
    steps = plan.settle_steps + plan.sample_steps
    if steps > MAX_STEPS:
        if case.run.sample_steps is not None and plan.sample_steps >= plan.settle_steps:
            key = "run.sample_steps"
        elif case.run.settle_steps is not None:
            key = "run.settle_steps"
        elif case.resolution.time_step_s:
            key = "resolution.time_step"
        else:
            key = "run.settle_steps"
        raise GuardError(path, key,
                         f"the plan needs {plan.settle_steps:,} + {plan.sample_steps:,} steps "
                         f"of {plan.time_step_s:.3g} s, more than the {MAX_STEPS:,} allowed; "
                         "set fewer run.settle_steps and run.sample_steps, or a longer "
                         "resolution.time_step (the automatic one is a fifth of the mean "
                         "collision time, which a high pressure makes short)")

    # time step
    transit = plan.transit_fraction
    # only where collisions happen within a flight: in nearly free-molecular flow a long
    # flight crosses cells harmlessly (the move follows it through every cell and wall)
    if not transit <= MAX_TRANSIT_FRACTION and \
            not plan.dt_over_tau <= MAX_COLLISIONAL_DT_OVER_TAU:
        raise GuardError(path, "resolution.time_step",
                         f"time step {plan.time_step_s:.4g} s lets a molecule at the mean "
                         f"speed ({plan.mean_speed_m_s:.4g} m/s) cross {transit:.3g} cells "
                         f"per step (at most {MAX_TRANSIT_FRACTION:g} allowed, below 1 "
                         "advised); choose resolution.time_step <= "
                         f"{min(plan.cell_dx_m, plan.cell_dy_m) / plan.mean_speed_m_s:.3g} s "
                         "or leave it out for the automatic one")

    # memory
    budget = default_memory_budget() if memory_budget_bytes is None else memory_budget_bytes
    parts = estimate_memory_bytes(case, plan)
    total = sum(parts.values())
    if total > budget:
        if parts["particles"] >= max(parts["grid"], parts["batches"]):
            key = _particle_key(case)
            raise GuardError(path, key,
                             f"about {plan.expected_particles:.3g} particles would need about "
                             f"{_gib(total)} of memory ({bytes_per_particle(plan)} bytes each, "
                             f"x{STORE_HEADROOM:g} reserved, {SORT_BYTES_PER_PARTICLE} more while "
                             f"sorting), more than the budget of "
                             f"{_gib(budget)}; use fewer particles: {_PARTICLE_KEYS}")
        if parts["grid"] >= parts["batches"]:
            raise GuardError(path, "resolution.cell_size",
                             f"the grid of {plan.ncell:,} cells with {plan.subcells}^2 "
                             f"sub-cells would need about {_gib(total)} of memory, more than "
                             f"the budget of {_gib(budget)}; choose a larger "
                             "resolution.cell_size or fewer resolution.subcells")
        raise GuardError(path, "run.batches",
                         f"{plan.batches:,} sampling batches would need about {_gib(total)} "
                         f"of tallies, more than the budget of {_gib(budget)}; choose fewer "
                         "run.batches (default 20)")
    if total > NEAR_BUDGET * budget:
        warnings.append(f"the run needs about {_gib(total)} of memory, more than half of "
                        f"the budget of {_gib(budget)}")

    # wall time
    limit = time_budget_s if time_budget_s is not None else case.run.time_budget_s
    estimate = estimate_wall_time_s(plan)
    how = (f"{plan.expected_particles:.3g} particles x {steps:,} steps at an assumed "
           f"{ASSUMED_PARTICLE_STEPS_PER_S:.0e} particle-steps/s, a conservative figure for "
           "one core")
    if limit is not None and estimate > limit:
        key = "run.sample_steps" if case.run.sample_steps is not None else _particle_key(case)
        budget_key = "--time-budget" if time_budget_s is not None else "run.time_budget"
        raise GuardError(path, key,
                         f"the run would take about {_duration(estimate)} ({how}), more than "
                         f"the time budget of {_duration(limit)} ({budget_key}); shorten it "
                         "with run.settle_steps, run.sample_steps or fewer particles "
                         f"({_PARTICLE_KEYS}), or raise {budget_key}")
    if limit is not None and estimate > NEAR_BUDGET * limit:
        warnings.append(f"the run may take about {_duration(estimate)} ({how}), more than "
                        f"half of the time budget of {_duration(limit)}")
    elif limit is None and estimate > LONG_RUN_S:
        warnings.append(f"the run may take about {_duration(estimate)} ({how}); set "
                        "run.time_budget (or --time-budget) to refuse runs longer than "
                        "you can wait")
    return warnings
