"""The DSMC step loop: inject -> move (+walls) -> index -> collide -> sample.

``Simulation`` owns the particles, the random stream and the clock; it turns
the case, plan and geometry into arrays once and then only calls kernels.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Callable

import numba
import numpy as np

from rarefy.case import SIDES, Case
from rarefy.constants import K_B
from rarefy.engine.internal_params import internal_rows, kernel_parameters
from rarefy.engine.particles import NVAR, VX, VY, VZ, X, Y, ParticleStore
from rarefy.engine.steady import SteadyDetector
from rarefy.gas import kinetic
from rarefy.gas.species import get_species
from rarefy.geometry.cutcell import mask_inside_solids
from rarefy.geometry.planar import Geometry, build_geometry
from rarefy.geometry.probes import build_probes
from rarefy.kernels.collide import collide_cells, collide_cells_par
from rarefy.kernels.config import F_N_NEG, F_N_POS, N_SURF_TALLY
from rarefy.kernels.index import counting_sort, counting_sort_par
from rarefy.kernels.inject import N_INFLOW_COLS, inject, seed_generator
from rarefy.kernels.move import compute_keys, move_all, move_all_par
from rarefy.kernels.move_axi import move_all_axi, move_all_axi_par
from rarefy.kernels.rng import run_key, step_key
from rarefy.kernels.sample import sample_probes
from rarefy.threads import run_parallel
from rarefy.plan import Plan
from rarefy.gas.mixture import mixture_of
from rarefy.post.fields import cell_fields, species_internal
from rarefy.sampling.accumulators import Accumulators

__all__ = ["Simulation", "PHASES", "RunStopped", "RESEED_EVERY"]

PHASES = ("inject", "move", "index", "collide", "sample")
# The kernels' random stream is re-seeded every RESEED_EVERY steps from (seed, step), so
# a run resumed from a checkpoint taken at such a step repeats the uninterrupted run bit
# for bit, whatever process it runs in.
RESEED_EVERY = 100
# The parallel kernels draw from counter-based streams keyed by (seed, step, kernel, unit)
# (rarefy.kernels.rng); these tell the kernels' keys apart.
SALT_COLLIDE, SALT_MOVE = 1, 2
MAX_SETTLE_FACTOR = 4
# accumulator arrays a checkpoint carries
ACC_ARRAYS = ("cell_batch", "cell_total", "surf", "flux", "collisions", "particles",
              "probe_mom", "probe_hist")


def segment_seed(seed: int, step: int) -> int:
    """Seed of the random-stream segment that starts at ``step`` (numpy SeedSequence
    mixing of the run seed and the step, 32 bits)."""
    return int(np.random.SeedSequence([int(seed), int(step)]).generate_state(1)[0])


class RunStopped(Exception):
    """Raised after a complete step when ``Simulation.stop_check()`` asks to stop."""

    def __init__(self, step: int):
        super().__init__(f"stopped after step {step}")
        self.step = step


@dataclass
class Clock:
    step: int = 0
    time_s: float = 0.0
    phase_seconds: dict = field(default_factory=lambda: dict.fromkeys(PHASES, 0.0))
    particle_steps: int = 0


class Simulation:
    """One planar DSMC run of ``case`` with ``plan``, seeded by ``seed``."""

    def __init__(self, case: Case, plan: Plan, seed: int, geometry: Geometry | None = None):
        self.case = case
        self.plan = plan
        self.seed = int(seed)
        self.geom = geometry or build_geometry(case, plan)
        g = self.geom
        sp = get_species(case.gas.species)
        self.model = sp.model(case.gas.model)
        self.mass = plan.mass_kg     # of a mixture, the mean at its fractions
        # mixtures (rarefy.gas.mixture): species row after the internal rows; masses over
        # the plan's mean mass; walls' sqrt(kT/m) scaled per species
        self.mix = mixture_of(case.gas)
        self.ip = kernel_parameters(plan, self.mix.models, case.gas.vibration_number)
        self.n_internal = internal_rows(plan)
        self.nsp = self.mix.nspecies
        self.masses = self.mix.masses if self.nsp > 1 else np.array([self.mass])
        self.mass_ratio = self.masses / plan.mass_kg if self.nsp > 1 else np.ones(1)
        self.sigma_factor = np.sqrt(plan.mass_kg / self.masses) if self.nsp > 1 \
            else np.ones(1)
        self.pair = self.mix.sigma_cr_coefficients() if self.nsp > 1 else \
            (np.zeros((1, 1)), np.zeros((1, 1)), np.ones((1, 1)))
        self._no_species = np.zeros(1)
        self.dt = plan.time_step_s
        self.fnum = plan.particle_weight
        self.axi = g.axisymmetric
        self.cell_weight = g.cell_weight
        self.cell_fnum = self.fnum * self.cell_weight
        self.lost_duplicates = 0
        self.row_balance = np.random.default_rng(self.seed + 1).random((2, g.ny))
        self.nsub = plan.subcells
        self.nkeys = g.ncell * self.nsub ** 2
        self.key_start = np.zeros(self.nkeys + 1, dtype=np.int64)
        self.a_coef = kinetic.sigma_cr_coefficient(self.model)
        self.exponent = 2.0 - 2.0 * self.model.omega
        vmp_ref = kinetic.most_probable_speed(self.mass, plan.reference_temperature_k)
        self.sigcr_max = np.full(g.ncell, self.a_coef * (3.0 * vmp_ref) ** self.exponent)
        if self.nsp > 1:   # the largest pair's, at 3 v_mp of the lightest pair
            a, e, _ = self.pair
            light = kinetic.most_probable_speed(self.masses.min(), plan.reference_temperature_k)
            self.sigcr_max[:] = float(np.max(a * (3.0 * light) ** e))
        self.remainder = np.zeros(g.ncell)
        self.coll_stats = np.zeros(3)
        self.nudge = 1e-12 * max(g.box[1] - g.box[0], g.box[3] - g.box[2])
        self.inflow = self._inflow_rows()
        rate = float(self.inflow[:, -1].sum()) if len(self.inflow) else 0.0
        self.inflow_max = int(rate + 10.0 * math.sqrt(rate) + 16)
        self.tfrac = np.zeros(self.inflow_max)
        # sized by the initial fill (ParticleStore.add) and grown as the flow fills the
        # domain; the plan's estimate (the whole domain at the reference density) is far
        # above what open cases hold
        self.store = ParticleStore(self.inflow_max + 1024,
                                   NVAR + self.n_internal + (self.nsp > 1))
        self.clock = Clock()
        steps_per_batch = max(1, plan.sample_steps // plan.batches)
        self.probes = build_probes(case, g)
        nbins = plan.histogram_bins
        self.speed_max = plan.histogram_speed_max_m_s
        self.acc = Accumulators(g.ncell, len(g.facet_owner), len(g.plane_names), plan.batches,
                                steps_per_batch, len(self.probes), nbins, self.nsp)
        # flux-plane rows for the move kernels: end points, histogram bins per m/s, bins
        self.plane_rows = np.hstack([
            g.planes, np.full((len(g.planes), 1), nbins / self.speed_max),
            np.full((len(g.planes), 1), float(nbins))])
        self._no_flux = np.zeros(self.acc.flux.shape[1:])
        self._dummy_surf = np.zeros((len(g.facet_owner) * self.nsp, N_SURF_TALLY))
        self.detector = SteadyDetector()
        self.stop_check: Callable[[], bool] | None = None
        self._window_particles = 0.0
        self.sample_start_step: int | None = None
        self.settle_reason = ""
        self.stop_reason = ""
        seed_generator(self.seed % (2 ** 32))
        self.rng_key = run_key(self.seed)
        self._fill_initial()

    # ------------------------------------------------------------------ set-up
    def _inflow_rows(self) -> np.ndarray:
        """One row per reservoir piece, or per radial row of an axisymmetric end disk
        (layout in ``rarefy.kernels.inject``)."""
        d, g = self.case.domain, self.geom
        rows = []
        pos = {"xmin": d.xmin, "xmax": d.xmax, "ymin": d.ymin, "ymax": d.ymax}
        inward = {"xmin": (1, 0), "xmax": (-1, 0), "ymin": (0, 1), "ymax": (0, -1)}
        for b, k, x in self._reservoir_species():
            n = x * b.pressure_pa / (K_B * b.temperature_k)
            mass = self.masses[k]
            vmp = kinetic.most_probable_speed(mass, b.temperature_k)
            ex, ey = inward[b.side]
            un = b.velocity_m_s[0] * ex + b.velocity_m_s[1] * ey
            flux = kinetic.one_way_number_flux(n, b.temperature_k, mass, un)
            head = (SIDES.index(b.side), pos[b.side], vmp, *b.velocity_m_s)
            if not self.axi:
                per_step = flux * (b.end - b.start) * d.depth_m * self.dt / self.fnum
                rows.append((head[0], b.start, b.end, *head[1:], 0.0, k, per_step))
            elif b.side == "ymax":
                area = 2.0 * math.pi * d.ymax * (b.end - b.start)
                per_step = flux * area * self.dt / (self.fnum * g.row_weight[-1])
                rows.append((head[0], b.start, b.end, *head[1:], 0.0, k, per_step))
            else:  # end disk: one row per radial row of cells, each with its weight
                edges = np.arange(g.ny + 1) * g.dy
                a = np.maximum(b.start, edges[:-1])
                c = np.minimum(b.end, edges[1:])
                keep = c > a
                per_step = (flux * math.pi * (c * c - a * a) * self.dt
                            / (self.fnum * g.row_weight))[keep]
                rows += [(head[0], lo, hi, *head[1:], 1.0, k, rate)
                         for lo, hi, rate in zip(a[keep], c[keep], per_step)]
        return np.array(rows, dtype=np.float64).reshape(-1, N_INFLOW_COLS)

    def _reservoir_species(self):
        """(reservoir piece, species index, mole fraction) of every species a reservoir
        supplies; a pure gas: (piece, 0, 1.0)."""
        for b in self.case.boundaries:
            if b.kind != "reservoir":
                continue
            fractions = b.mole_fractions or self.mix.fractions
            for k, x in enumerate(fractions):
                if x > 0.0:
                    yield b, k, x

    def add_particles(self, x, y, vx, vy, vz, *internal) -> None:
        """Add particles (arrays, SI; then the internal energies per unit mass, m^2/s^2,
        zero when not given) and re-index; those inside solids are dropped."""
        g = self.geom
        keep = np.ones(len(x), dtype=bool)
        if len(g.poly_start) > 1:
            mask_inside_solids(np.ascontiguousarray(x), np.ascontiguousarray(y), g.poly_x,
                               g.poly_y, g.poly_start, keep)
        self.store.add(*(np.asarray(a)[keep] for a in (x, y, vx, vy, vz, *internal)))
        self._index()

    def equilibrium_internal(self, rng: np.random.Generator, count: int, t_k: float,
                             species: np.ndarray | None = None) -> list[np.ndarray]:
        """Internal energies per unit mass (m^2/s^2) of ``count`` molecules in equilibrium
        at ``t_k``: rotation Gamma(zeta_r / 2) kT, vibration whole quanta (geometric);
        a mixture's molecules by their ``species`` (monatomic ones get zeros)."""
        if not self.n_internal:
            return []
        p = self.plan
        if species is None and self.nsp > 1:
            raise ValueError("a mixture's internal energies need each molecule's species")
        if species is None:
            kt_m = K_B * t_k / self.mass
            rows = [rng.gamma(0.5 * p.rot_dof, kt_m, count)]
            if p.vibration:
                th = K_B * p.theta_vib_k / self.mass
                rows.append(np.floor(rng.exponential(kt_m / th, count)) * th)
            return rows
        rows = [np.zeros(count) for _ in range(self.n_internal)]
        for k, dof in enumerate(p.species_rot_dof):
            sel = np.flatnonzero(species == k)
            if not dof or not sel.size:
                continue
            kt_m = K_B * t_k / self.masses[k]
            rows[0][sel] = rng.gamma(0.5 * dof, kt_m, sel.size)
            if p.species_theta_vib_k[k] > 0.0:
                th = K_B * p.species_theta_vib_k[k] / self.masses[k]
                rows[1][sel] = np.floor(rng.exponential(kt_m / th, sel.size)) * th
        return rows

    def _fill_initial(self) -> None:
        init = self.case.initial
        if init.pressure_pa <= 0.0:
            return
        g = self.geom
        rng = np.random.default_rng(self.seed)
        n = init.pressure_pa / (K_B * init.temperature_k)
        lx = g.box[1] - g.box[0]
        if self.axi:  # row by row, radius with density ~ r, count over the row's weight
            r0 = np.arange(g.ny) * g.dy
            counts = rng.poisson(n * math.pi * ((r0 + g.dy) ** 2 - r0 ** 2) * lx
                                 / (self.fnum * g.row_weight))
            row = np.repeat(np.arange(g.ny), counts)
            a, b = r0[row], r0[row] + g.dy
            y = np.sqrt(a * a + rng.random(row.size) * (b * b - a * a))
            count = row.size
        else:
            count = rng.poisson(n * lx * (g.box[3] - g.box[2]) * g.depth / self.fnum)
            y = rng.uniform(g.box[2], g.box[3], count)
        sig = math.sqrt(K_B * init.temperature_k / self.mass)
        species, spc = [], None
        if self.nsp > 1:   # each molecule's species drawn by the mole fractions
            spc = rng.choice(self.nsp, count, p=init.mole_fractions or self.mix.fractions)
            sig = np.sqrt(K_B * init.temperature_k / self.masses)[spc]
            species = [spc.astype(np.float64)]
        u = init.velocity_m_s
        self.add_particles(rng.uniform(g.box[0], g.box[1], count), y,
                           u[0] + sig * rng.standard_normal(count),
                           u[1] + sig * rng.standard_normal(count),
                           u[2] + sig * rng.standard_normal(count),
                           *self.equilibrium_internal(rng, count, init.temperature_k, spc),
                           *species)

    def _index(self) -> None:
        st, g = self.store, self.geom
        compute_keys(st.n, st.state[X], st.state[Y], st.key, g.box, g.nx, g.ny, g.dx, g.dy,
                     self.nsub)
        self._sort()

    def _sort(self, par: bool = False) -> None:
        st = self.store
        sort = counting_sort_par if par else counting_sort
        st.n = sort(st.n, st.key, self.nkeys, self.key_start, st.state, st.spare,
                    numba.get_num_threads() if par else 1)
        st.swap()

    # ------------------------------------------------------------------ the loop
    def step(self, sampling: bool, watch: bool = False) -> None:
        """Advance one time step; tally into the current batch when ``sampling``, or only
        the surface and flux-plane tallies into scratch arrays when ``watch`` (settling)."""
        st, g, acc, ph = self.store, self.geom, self.acc, self.clock.phase_seconds
        if self.clock.step % RESEED_EVERY == 0:
            seed_generator(segment_seed(self.seed, self.clock.step))
        t0 = time.perf_counter()
        n0 = st.n
        # room for the inflow and, axisymmetric, for the duplicates of the radial
        # weighting (a few per cent of the particles a step; 1/4 leaves a wide margin)
        room = n0 + self.inflow_max
        st.reserve(room + (max(4096, room // 4) if self.axi else 0))
        s = st.state
        eint, spc = self._views(s)
        n1 = inject(self.inflow, n0, s[X], s[Y], s[VX], s[VY], s[VZ], eint, self.ip, spc,
                    self.nsp, self.tfrac) if len(self.inflow) else n0
        st.n = n1
        t1 = time.perf_counter()
        stally = acc.surf[acc.batch] if sampling else self._dummy_surf
        ftally = acc.flux[acc.batch] if sampling else self._no_flux
        tally = sampling or watch
        mkey = step_key(self.rng_key, self.clock.step, SALT_MOVE)
        par = run_parallel(n1)
        if self.axi:
            st.n, lost = (move_all_axi_par if par else move_all_axi)(
                n1, n0, self.tfrac, self.dt, s[X], s[Y], s[VX], s[VY], s[VZ], eint, self.ip,
                spc, self.sigma_factor, st.key, g.segs, g.seg_tally, g.box, g.pieces, g.piece_int, self.plane_rows,
                stally, ftally, tally, self.nudge, g.nx, g.ny, g.dx, g.dy, self.nsub, g.free,
                g.row_weight,
                st.capacity, self.row_balance, mkey)
            self.lost_duplicates += lost
        else:
            (move_all_par if par else move_all)(
                n1, n0, self.tfrac, self.dt, s[X], s[Y], s[VX], s[VY], s[VZ], eint, self.ip,
                spc, self.sigma_factor, st.key, g.segs, g.seg_tally, g.box, g.pieces, g.piece_int, self.plane_rows,
                stally, ftally, tally, self.nudge, g.nx, g.ny, g.dx, g.dy, self.nsub, g.free,
                mkey)
        t2 = time.perf_counter()
        self._sort(par)
        s = st.state
        t3 = tc = time.perf_counter()
        if sampling and len(self.probes):  # half the probe sample before collisions
            self._sample_probes(s, 0.5)
            tc = time.perf_counter()
            ph["sample"] += tc - t3
        self.coll_stats[:] = 0.0
        eint, spc = self._views(s)
        (collide_cells_par if par else collide_cells)(
            g.ncell, self.nsub, self.key_start, s[X], s[Y], s[VX], s[VY], s[VZ], g.volume,
            self.sigcr_max, self.remainder, self.cell_fnum, self.dt, self.a_coef,
            self.exponent, self.model.alpha, eint, self.ip, spc, self.mass_ratio, *self.pair,
            step_key(self.rng_key, self.clock.step, SALT_COLLIDE), acc.cell_batch, sampling,
            self.coll_stats)
        t4 = time.perf_counter()
        if sampling:
            if len(self.probes):
                self._sample_probes(s, 0.5)
            acc.collisions[acc.batch] += self.coll_stats
            acc.end_step(st.n, self._batch_fields)
        t5 = time.perf_counter()
        for name, a, b in zip(PHASES, (t0, t1, t2, tc, t4), (t1, t2, t3, t4, t5)):
            ph[name] += b - a
        self.clock.step += 1
        self.clock.time_s += self.dt
        self.clock.particle_steps += st.n

    def _views(self, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(internal-energy rows, species row) of the state ``s``; a pure gas has no
        species row (a dummy stands in, never read)."""
        eint = s[NVAR:NVAR + self.n_internal]
        return eint, (s[NVAR + self.n_internal] if self.nsp > 1 else self._no_species)

    def _sample_probes(self, s: np.ndarray, weight: float) -> None:
        """Probe sums and histograms of the sorted particles, with ``weight`` (the cell
        moments are sampled inside the collision kernel)."""
        g, acc, pr = self.geom, self.acc, self.probes
        sample_probes(pr.box, pr.cells, pr.cell_start, self.nsub, self.key_start,
                      self.cell_weight, s[X], s[Y], s[VX], s[VY], s[VZ], *self._views(s),
                      self.nsp, self.speed_max,
                      acc.probe_mom[acc.batch], acc.probe_hist[acc.batch], weight)

    def _batch_fields(self, sums: np.ndarray, nsteps: int) -> dict:
        return cell_fields(sums, nsteps, self.geom.volume, self.masses, self.cell_fnum,
                           *species_internal(self.plan), self.mix.names)

    def _after_step(self, phase: str, done: int, total: int, progress, every: int,
                    checkpoint) -> None:
        if progress and done % every == 0:
            progress(phase, done, total, self)
        if checkpoint and self.clock.step % RESEED_EVERY == 0:
            checkpoint(self)
        if self.stop_check is not None and self.stop_check():
            raise RunStopped(self.clock.step)

    def _settle(self, progress, every: int, checkpoint) -> None:
        """Settling: the planned steps, then on in windows until the particle count and
        the flux-plane flows are steady (``rarefy.engine.steady``), at most
        MAX_SETTLE_FACTOR times the plan. A settle step count set in the case is kept
        exactly."""
        planned = self.plan.settle_steps
        fixed = self.plan.chosen.get("settle_steps") == "case"
        limit = planned if fixed else MAX_SETTLE_FACTOR * planned
        window = max(10, planned // 10)
        det = self.detector
        self.settle_reason = "settle steps set in the case"
        while self.clock.step < limit:
            if not fixed and self.clock.step >= planned and self.clock.step % window == 0 \
                    and det.steady():
                self.settle_reason = (f"steady state detected after {self.clock.step} "
                                      f"steps (planned at least {planned})")
                break
            self.step(False, watch=not fixed)
            self._window_particles += self.store.n
            if not fixed and self.clock.step % window == 0:
                f = self._no_flux
                det.add_window(self._window_particles / window,
                               (f[:, F_N_POS] - f[:, F_N_NEG]) / window)
                self._window_particles = 0.0
                f[:] = 0.0
            shown = planned if self.clock.step <= planned else limit
            self._after_step("settling", self.clock.step, shown, progress, every, checkpoint)
        else:
            if not fixed:
                self.settle_reason = (f"steady state not detected within {limit} steps "
                                      f"({MAX_SETTLE_FACTOR} x the plan); sampling anyway")
        self.sample_start_step = self.clock.step

    def run(self, progress: Callable[[str, int, int, "Simulation"], None] | None = None,
            every: int = 100, target_error: float | None = None, plane: int = 0,
            max_steps: int | None = None,
            checkpoint: Callable[["Simulation"], None] | None = None) -> Accumulators:
        """Settle (see :meth:`_settle`), then sample until every batch is full.

        With ``target_error``, sampling goes on in batches of the same length until the
        relative standard error of the net flow through flux plane ``plane`` is at most
        the target, or the run has taken ``max_steps`` steps. ``self.stop_reason`` says
        which rule ended the run. ``checkpoint(sim)`` is called at every step that starts
        a random-stream segment (it decides whether to write). A simulation restored from
        a checkpoint continues where it stopped.
        """
        if self.sample_start_step is None:
            self._settle(progress, every, checkpoint)
        self.stop_reason = "planned sampling steps done"
        while True:
            sample_total = self.acc.batches * self.acc.steps_per_batch
            while not self.acc.done:
                self.step(True)
                self._after_step("sampling", self.acc.steps_sampled, sample_total, progress,
                                 every, checkpoint)
            if target_error is None:
                return self.acc
            rel = self.acc.relative_error(plane, self.masses)
            if rel <= target_error:
                self.stop_reason = f"target error reached ({rel:.3g} <= {target_error:g})"
                return self.acc
            room = (max_steps - self.clock.step) // self.acc.steps_per_batch \
                if max_steps else 10 ** 9
            if room < 1:
                self.stop_reason = (f"step cap {max_steps} reached with relative error "
                                    f"{rel:.3g} (target {target_error:g})")
                return self.acc
            # batch means: the error falls as 1/sqrt(batches)
            need = math.ceil(self.acc.batch * (rel / target_error) ** 2 * 1.05) \
                - self.acc.batch if math.isfinite(rel) else self.acc.batch
            self.acc.extend(int(min(max(need, 1), room)))

    # ------------------------------------------------------------------ checkpoints
    def snapshot(self) -> dict:
        """Everything a checkpoint needs to continue this run (arrays and scalars)."""
        st, acc, ck = self.store, self.acc, self.clock
        return {
            "state": st.state[:, : st.n].copy(),
            "remainder": self.remainder, "sigcr_max": self.sigcr_max,
            "row_balance": self.row_balance, "watch_flux": self._no_flux,
            "settle_history": self.detector.summary()["history"],
            "acc": {k: getattr(acc, k) for k in ACC_ARRAYS},
            "field_sum": acc.field_sum, "field_sumsq": acc.field_sumsq,
            "field_count": acc.field_count,
            "scalars": {
                "step": ck.step, "time_s": ck.time_s, "particle_steps": ck.particle_steps,
                "phase_seconds": dict(ck.phase_seconds), "lost_duplicates": self.lost_duplicates,
                "window_particles": self._window_particles,
                "sample_start_step": -1 if self.sample_start_step is None
                else self.sample_start_step,
                "settle_reason": getattr(self, "settle_reason", ""),
                "batches": acc.batches, "batch": acc.batch, "step_in_batch": acc.step_in_batch,
                "steps_per_batch": acc.steps_per_batch,
            },
        }

    def restore(self, snap: dict) -> None:
        """Continue from a :meth:`snapshot` (of a run of the same case, plan and seed)."""
        sc, acc, ck = snap["scalars"], self.acc, self.clock
        state = snap["state"]
        self.store.n = 0
        self.store.reserve(state.shape[1] + self.inflow_max)
        self.store.state[:, : state.shape[1]] = state
        self.store.n = state.shape[1]
        self.remainder[:] = snap["remainder"]
        self.sigcr_max[:] = snap["sigcr_max"]
        self.row_balance[:] = snap["row_balance"]
        self._no_flux[:] = snap["watch_flux"]
        for row in snap["settle_history"]:
            self.detector.rows.append(np.asarray(row, dtype=float))
        acc.batches = int(sc["batches"])
        for k in ACC_ARRAYS:
            setattr(acc, k, np.array(snap["acc"][k]))
        acc.batch, acc.step_in_batch = int(sc["batch"]), int(sc["step_in_batch"])
        acc.steps_per_batch = int(sc["steps_per_batch"])
        for name in ("field_sum", "field_sumsq", "field_count"):
            setattr(acc, name, {k: np.array(v) for k, v in snap[name].items()})
        ck.step, ck.time_s = int(sc["step"]), float(sc["time_s"])
        ck.particle_steps = int(sc["particle_steps"])
        ck.phase_seconds.update(sc["phase_seconds"])
        self.lost_duplicates = int(sc["lost_duplicates"])
        self._window_particles = float(sc["window_particles"])
        start = int(sc["sample_start_step"])
        self.sample_start_step = None if start < 0 else start
        self.settle_reason = sc["settle_reason"]
        self._index()
        # a checkpoint taken between segment starts continues on a stream of its own
        if ck.step % RESEED_EVERY:
            seed_generator(segment_seed(self.seed, ck.step))
