#!/usr/bin/env python3
"""Engine benchmark: speed, memory, roofline, compile and start-up times of rarefy.

Run from the repository root::

    PYTHONPATH=. python3 tools/bench.py [--json] [--sizes 1e5,1e6,1e7] [--steps 10]
        [--repeats 3] [--threads N] [--no-startup] [--time-to-answer]

Cases
-----
collisional_box       closed periodic box of hard-sphere argon at 10 Pa, 20 particles per
                      cell; the grid grows with the size. Starts in equilibrium.
collisionless_slit    free-molecular argon slit (0.05 Pa, Kn about 100) into vacuum, about
                      20 particles per cell upstream; the grid grows with the size.
collisionless_tube    free-molecular argon tube, L/R = 5 (R = 0.5 mm, 0.001 Pa), into vacuum,
                      axisymmetric (``rarefy.templates.tube_case``); the planned grid,
                      the particle weight scaled to reach the size.
transitional_orifice  thin round orifice at delta = 1 (argon, 16.14 Pa, R = 0.5 mm) into
                      vacuum, axisymmetric; the planned grid, the weight scaled.

The three open cases need a steady particle population. Settling one at 1e6 or 1e7
particles would take most of the run, so each is settled once at its planned size (20
particles per reference cell, a few 1e4 particles, the planned settling steps), and
that population is scaled up: each settled particle's cell receives as many new
particles as the factor asks (cell counts kept in proportion), placed uniformly in the
cell (in the ring's volume when axisymmetric; the template walls lie on cell edges),
each with the velocity of a particle of that cell drawn at random, the symmetric
component (vz, or the azimuthal vt) with a random sign, in random memory order. The
particle weight is set so that the mean count over the second half of settling becomes
the size; the count then fluctuates by a few per cent, as the settled one did. Plain
copies would not do: runs of identical particles make branches and memory accesses
predictable and flatter the large sizes (by about 25 % for the tube at 1e6). Checked
against the tube and the orifice settled in full at 1e5 and the tube at 1e6: the same
rates within the run-to-run noise.

Per case and size
-----------------
``particle_steps_per_s``  particle-steps per wall-clock second over a block of ``steps``
    sampled steps (``--steps``, default 10, raised so that a block holds at least
    ``--min-particle-steps``, default 1e7: 100 steps at 1e5), best of ``--repeats``
    blocks (the machine has other work; the best block is the least disturbed one);
    ``block_rates`` lists every block.
``phases``  ns per particle-step in each phase (inject, move, index, collide, sample),
    from the best block. Sampling runs on every timed step (it always does once a run
    samples), with batches of 50 steps (fewer when the measurement is shorter than
    100 steps, so that a batch closes). The cell moments are sampled inside the
    collision kernel, so "collide" includes them and "sample" is the probes alone.
``collisions_per_particle_step``, ``candidates_per_particle_step``  NTC collisions and
    candidate pairs per particle-step (what the collide phase pays for).
``bytes_owned_per_particle``  bytes of every numpy buffer the Simulation holds (particle
    store at capacity, both sort buffers, keys, geometry, accumulators), found by
    walking its attributes, over the particle count: what the process must reserve.
``rss_bytes_per_particle``  (peak resident set during the warm-up and timed steps -
    resident set before the Simulation was built) / particles: what the pages really
    touched cost, transient allocations of the steps included. Freed heap pages are
    handed back first (glibc ``malloc_trim``) and the peak is reset after the set-up
    via /proc/self/clear_refs (Linux), so set-up temporaries stay out; zero pages of
    the store that are never written stay out too. Small sizes are dominated by the
    fixed costs (grid arrays, compiled code, the interpreter's own allocations).
``traffic_bytes_per_particle_step``, ``roofline_particle_steps_per_s``, ``roofline_ratio``
    see below.

Roofline
--------
The copy bandwidth B is measured in the same run: ``numpy.copyto`` of a 512 MB float64
array into another, best of 5, counting read + write (2 x 512 MB per copy); one
thread, like the kernels. The least memory traffic a step must cause per particle,
from the kernels as they are (``rarefy/kernels``; x, y/r, vx, vy/vr, vz/vt are float64
rows of the store, keys int64):

* move, planar (``move_all``): reads x, y, vx, vy (32 B), writes x, y (16 B) and the
  int32 key (4 B) = 52 B; vz is read only at events. Axisymmetric (``move_all_axi``):
  reads all five (40 B), writes x, r, vr, vt (32 B) and the key (4 B) = 76 B.
* index (``counting_sort``): the counting pass reads the keys (4 B); the scatter pass
  reads them again (4 B), reads the five rows (40 B) and writes them to the spare
  buffer (40 B) = 88 B. The writes go to 5 x (number of keys) streams at once, so at
  large sizes each lands in a different cache line: the real traffic is higher
  (write-allocate, partly used lines), which is why this phase is far from the bound.
* collide (``collide_cells``, which also samples the cell moments, half before and half
  after the collisions, while the cell is in cache): reads vx, vy, vz once (24 B) and,
  in collisional cases, writes them back (24 B) = 48 B; collisionless cases 24 B.
* sample (``sample_probes``): probes touch few particles: 0 B.
* inject: the new particles only, a small fraction of a step: 0 B.

Planar collisional: 52 + 88 + 48 = 188 B; planar collisionless 164 B; axisymmetric
collisionless 188 B; axisymmetric collisional 212 B. The roofline is
``B / bytes``; ``roofline_ratio`` = achieved / roofline. It bounds the data movement
only: the arithmetic (random numbers, sqrt, pow, sin and cos in collisions; the
quadratic surface equations of axisymmetric moves) is not in it.

Threads
-------
``--threads N`` calls ``numba.set_num_threads`` (default: all cores). Move, sort and
collide have parallel builds, which the engine uses on more than one thread from
``rarefy.threads.parallel_min_particles()`` particles on; their serial twins run on one
thread. The output lists the parallel kernels, the threading layer numba chose and the
process CPU time over the wall time of the timed steps (about 1.0 = one busy core).

Start-up (``startup``; ``--no-startup`` skips it)
-------------------------------------------------
Child processes run ``python3 -m rarefy.cli run`` on the orifice case (settling cut to
one step with ``--set run.settle_steps=1``) and stop right after the first step and
after the first sampled step (every kernel a run uses has then run once):
``cold_*`` with ``NUMBA_CACHE_DIR`` pointed at an empty folder (everything compiles;
``--cold-repeats``, default 1), ``cached_*`` with that folder filled (best of
``--repeats``). Times are from the moment the child is spawned (wall clock), so they
include the interpreter, the imports, planning and geometry. ``compile_s`` =
cold - cached to the first sampled step.

Scaling (``cost_ratio``)
------------------------
Per case, the cost per particle-step (1 / rate) at the largest size over that at the
smallest, when ``--sizes`` names more than one.

Time to answer (``--time-to-answer``, minutes)
----------------------------------------------
``rarefy run CASE -q --target-error 0.01 --seed S`` for the orifice at delta = 1 and the
free-molecular tube L/R = 5 as child processes; CPU seconds (user + system) of the
whole child from ``getrusage(RUSAGE_CHILDREN)``: start-up, settling and sampling.

JSON (``--json``)
-----------------
Top level: ``machine`` (cpu, cores, copy_bandwidth_gb_s, versions), ``threads``,
``parallel_kernels``, ``threads_note``, ``sizes``, ``startup`` (null when skipped),
``time_to_answer`` (null unless asked) and one entry per case (``collisional_box``,
``collisionless_slit``, ``collisionless_tube``, ``transitional_orifice``) holding the
figures above at the first size, ``by_size`` (the figures at every size) and
``cost_ratio`` ({small, large, ratio}, null for one size).

Speed goals and the measured figures are in docs/performance.md, never in timed tests.
"""

from __future__ import annotations

import argparse
import gc
import json
import math
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numba
import numpy as np

REPO = Path(__file__).resolve().parent.parent
if str(REPO) not in sys.path:   # `python3 tools/bench.py` without PYTHONPATH
    sys.path.insert(0, str(REPO))

from rarefy.case import parse_case  # noqa: E402
from rarefy.engine.particles import VX, VY, VZ  # noqa: E402
from rarefy.engine.simulation import PHASES, Simulation  # noqa: E402
from rarefy.plan import make_plan  # noqa: E402
from rarefy.templates import orifice_case, slit_case, tube_case  # noqa: E402
from rarefy.threads import parallel_min_particles  # noqa: E402

CASES = ("collisional_box", "collisionless_slit", "collisionless_tube", "transitional_orifice")
BATCH_STEPS = 50            # sampling batch length during the benchmark
BASE_PPC = 20               # particles per cell of the settling run and of box and slit
ORIFICE_PRESSURE_PA = 16.14  # argon, 300 K, R = 0.5 mm: delta = 1.000 (rarefy check)
TUBE_PRESSURE_PA = 0.001
RADIUS_M = 0.5e-3
TUBE_LENGTH_M = 5 * RADIUS_M

# bytes a step must move per particle, per phase (derivation in the module docstring)
_MOVE = {False: 52, True: 76}      # planar, axisymmetric
_INDEX = 88
_COLLIDE = {False: 24, True: 48}   # collisionless, collisional (cell sampling included)
_SAMPLE = 0

BOX = """
title = "benchmark: periodic box of argon (invented)"
[gas]
species = "Ar"
model = "hs"
[domain]
x = [0, {side}]
y = [0, {side}]
[boundaries.xmin]
kind = "periodic"
[boundaries.xmax]
kind = "periodic"
[boundaries.ymin]
kind = "periodic"
[boundaries.ymax]
kind = "periodic"
[initial]
pressure = "{p} Pa"
temperature = "300 K"
[resolution]
cell_size = {cell}
particles_per_cell = 20
[run]
seed = 1
"""


# ---------------------------------------------------------------------- cases
def _batch_overrides(total_steps: int) -> dict:
    """Batches of BATCH_STEPS steps, shorter if needed so that at least one batch closes
    during the measurement (closing creates the per-cell field sums, which count in the
    memory figures)."""
    length = max(1, min(BATCH_STEPS, total_steps // 2))
    batches = max(20, math.ceil(total_steps / length) + 2)
    return {"run.batches": batches, "run.sample_steps": batches * length}


def box_case(particles: float, total_steps: int = 100):
    """Periodic hard-sphere argon box with about ``particles`` particles, 20 per cell."""
    ncell = particles / BASE_PPC
    n_side = max(2, int(round(math.sqrt(ncell))))
    # mean free path of HS argon at 10 Pa and 300 K is about 0.7 mm; cells of lambda/3
    cell = 0.7e-3 / 3.0
    return parse_case(BOX.format(side=n_side * cell, p=10.0, cell=cell), "bench-box",
                      overrides=_batch_overrides(total_steps))


SLIT_TEXT = slit_case(gas="Ar", temperature_k=300.0, upstream_pressure_pa=0.05, width_m=1e-3)
TUBE_TEXT = tube_case(gas="Ar", temperature_k=300.0, upstream_pressure_pa=TUBE_PRESSURE_PA,
                      radius_m=RADIUS_M, length_m=TUBE_LENGTH_M)
ORIFICE_TEXT = orifice_case(gas="Ar", temperature_k=300.0,
                            upstream_pressure_pa=ORIFICE_PRESSURE_PA, radius_m=RADIUS_M)
OPEN_TEXT = {"collisionless_slit": SLIT_TEXT, "collisionless_tube": TUBE_TEXT,
             "transitional_orifice": ORIFICE_TEXT}


def open_case(name: str, particles: float | None = None, weight: float | None = None,
              total_steps: int = 100, settle_steps: int | None = None):
    """One of the open cases. ``particles`` (slit only) sets the grid for that many
    particles at 20 per upstream cell; ``weight`` sets the particle weight."""
    over = _batch_overrides(total_steps)
    if name == "collisionless_slit" and particles is not None:
        # the upstream region is 5 x 5 mm; cells so that it holds `particles` at 20 each
        cell = 5e-3 / math.sqrt(particles / BASE_PPC)
        over.update({"resolution.cell_size": f"{cell} m",
                     "resolution.time_step": f"{0.5 * cell / 400.0} s"})
    if weight is not None:
        over["resolution.particle_weight"] = weight
    if settle_steps is not None:
        over["run.settle_steps"] = settle_steps
    return parse_case(OPEN_TEXT[name], f"bench-{name}", overrides=over)


def settled(name: str, settle_steps: int | None = None) -> Simulation:
    """The open case at its planned size, settled for its planned settling steps."""
    case = open_case(name, settle_steps=settle_steps)
    plan = make_plan(case)
    sim = Simulation(case, plan, seed=7)
    counts = []
    for k in range(plan.settle_steps):
        sim.step(False)
        if 2 * k >= plan.settle_steps:
            counts.append(sim.store.n)
    # the count the scaled-up runs aim at: the mean over the second half of settling
    sim.bench_mean_particles = float(np.mean(counts)) if counts else float(sim.store.n)
    return sim


def scaled_up(small: Simulation, case, particles: int, seed: int = 11) -> Simulation:
    """A Simulation of ``case`` (which carries the scaled particle weight) filled with
    ``particles`` particles drawn from ``small``'s settled ones (module docstring)."""
    sim = Simulation(case, make_plan(case), seed=seed)
    st0, n, g = small.store, small.store.n, small.geom
    ns2 = small.nsub ** 2
    starts = small.key_start[::ns2]                 # first slot of every cell, and the end
    rng = np.random.default_rng(seed)
    full, extra = divmod(int(particles), n)
    src = np.concatenate([np.tile(np.arange(n), full), rng.choice(n, extra, replace=False)])
    rng.shuffle(src)                                # memory order within a cell: random
    # cell of every sorted slot, from the cell ranges of the last sort (the store's keys
    # are those of the next move, not of the sorted order)
    cell = np.repeat(np.arange(g.ncell), np.diff(starts))[src]
    del src
    ix = cell % g.nx
    iy = cell // g.nx
    x = g.box[0] + (ix + rng.random(cell.size)) * g.dx
    del ix
    if small.axi:   # uniform in the ring's volume: density ~ r across the row
        r0 = iy * g.dy
        y = np.sqrt(r0 * r0 + rng.random(cell.size) * (2.0 * r0 * g.dy + g.dy * g.dy))
        del r0
    else:
        y = g.box[2] + (iy + rng.random(cell.size)) * g.dy
    del iy
    lo = starts[cell]
    donor = lo + (rng.random(cell.size) * (starts[cell + 1] - lo)).astype(np.int64)
    del lo, cell
    # the flows are symmetric in vz (planar) and in the azimuthal vt (axisymmetric)
    vz = st0.state[VZ, donor] * np.where(rng.random(donor.size) < 0.5, -1.0, 1.0)
    sim.add_particles(x, y, st0.state[VX, donor], st0.state[VY, donor], vz)
    return sim


# ---------------------------------------------------------------------- measurements
def copy_bandwidth(megabytes: int = 512, repeats: int = 5) -> float:
    """Copy bandwidth in GB/s (read + write) of ``numpy.copyto``, best of ``repeats``."""
    n = megabytes * 2 ** 20 // 8
    src = np.ones(n)
    dst = np.zeros(n)
    np.copyto(dst, src)   # touch both
    best = math.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        np.copyto(dst, src)
        best = min(best, time.perf_counter() - t0)
    return 2.0 * src.nbytes / best / 1e9


def _rss_bytes(field: str = "VmRSS") -> int | None:
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith(field + ":"):
                return int(line.split()[1]) * 1024
    except OSError:
        pass
    return None


def _trim_heap() -> None:
    """Hand freed heap pages back to the system (glibc), so the resident set that
    follows counts live data only."""
    try:
        import ctypes
        ctypes.CDLL("libc.so.6").malloc_trim(0)
    except (OSError, AttributeError):
        pass


def _reset_peak() -> bool:
    try:
        Path("/proc/self/clear_refs").write_text("5")
        return True
    except OSError:
        return False


def owned_bytes(obj, seen: set | None = None, depth: int = 0) -> int:
    """Bytes of the distinct numpy buffers reachable from ``obj``'s attributes."""
    seen = set() if seen is None else seen
    if depth > 6 or id(obj) in seen:
        return 0
    seen.add(id(obj))
    if isinstance(obj, np.ndarray):
        base = obj
        while isinstance(base.base, np.ndarray):
            base = base.base
        key = ("buf", base.__array_interface__["data"][0])
        if key in seen:
            return 0
        seen.add(key)
        return base.nbytes
    if isinstance(obj, dict):
        return sum(owned_bytes(v, seen, depth + 1) for v in obj.values())
    if isinstance(obj, (list, tuple)):
        return sum(owned_bytes(v, seen, depth + 1) for v in obj)
    if hasattr(obj, "__dict__") and type(obj).__module__.startswith("rarefy"):
        return sum(owned_bytes(v, seen, depth + 1) for v in vars(obj).values())
    return 0


def traffic(axisymmetric: bool, collisional: bool) -> dict:
    """Bytes per particle-step each phase must move (module docstring)."""
    return {"inject": 0, "move": _MOVE[axisymmetric], "index": _INDEX,
            "collide": _COLLIDE[collisional], "sample": _SAMPLE}


def parallel_kernels() -> list[str]:
    """Names of the kernels compiled with parallel=True."""
    import importlib
    import pkgutil

    import rarefy.kernels
    found = []
    mods = [f"rarefy.kernels.{m.name}" for m in pkgutil.iter_modules(rarefy.kernels.__path__)]
    for name in mods + ["rarefy.geometry.cutcell"]:
        mod = importlib.import_module(name)
        for attr, val in vars(mod).items():
            if isinstance(val, numba.core.registry.CPUDispatcher) and \
                    val.targetoptions.get("parallel"):
                found.append(f"{name}.{attr}")
    return found


def measure(sim: Simulation, steps: int, repeats: int, warmup: int, bandwidth: float,
            collisional: bool, rss0: int | None) -> dict:
    """Time ``repeats`` blocks of ``steps`` sampled steps after ``warmup`` steps."""
    _trim_heap()
    have_peak = _reset_peak()
    for k in range(warmup):
        sim.step(k % 2 == 1)
    blocks = []
    for _ in range(repeats):
        ph = sim.clock.phase_seconds
        for k in ph:
            ph[k] = 0.0
        ps0 = sim.clock.particle_steps
        coll0 = sim.acc.collisions.sum(axis=0)
        c0 = time.process_time()
        t0 = time.perf_counter()
        for _ in range(steps):
            sim.step(True)
        wall = time.perf_counter() - t0
        cpu = time.process_time() - c0
        ps = sim.clock.particle_steps - ps0
        coll = (sim.acc.collisions.sum(axis=0) - coll0) / ps
        blocks.append((ps / wall, {k: ph[k] / ps * 1e9 for k in PHASES}, cpu / wall, coll))
    peak = _rss_bytes("VmHWM") if have_peak else None
    n = sim.store.n
    rate, phases, cpu_ratio, coll = max(blocks, key=lambda b: b[0])
    move = traffic(sim.axi, collisional)
    total = sum(move.values())
    roof = bandwidth * 1e9 / total
    return {
        "particles": int(n),
        "cells": int(sim.geom.ncell),
        "particles_per_cell": n / sim.geom.ncell,
        "steps": steps,
        "repeats": repeats,
        "particle_steps_per_s": rate,
        "ns_per_particle_step": 1e9 / rate,
        "block_rates": [b[0] for b in blocks],
        "phases": phases,
        "cpu_over_wall": cpu_ratio,
        "collisions_per_particle_step": float(coll[0]),
        "candidates_per_particle_step": float(coll[2]),
        "bytes_owned_per_particle": owned_bytes(sim) / n,
        "store_capacity": int(sim.store.capacity),
        "rss_bytes_per_particle": (peak - rss0) / n if peak and rss0 else None,
        "traffic_bytes_per_particle_step": dict(move, total=total),
        "phase_gb_s": {k: (move[k] / phases[k] if phases[k] > 0 and move[k] else 0.0)
                       for k in PHASES},
        "roofline_particle_steps_per_s": roof,
        "roofline_ratio": rate / roof,
    }


def run_case(name: str, size: float, steps: int, repeats: int, bandwidth: float,
             small: Simulation | None, warmup: int = 4, min_particle_steps: float = 0.0) -> dict:
    steps = max(steps, math.ceil(min_particle_steps / size))
    total = warmup + steps * repeats
    gc.collect()
    _trim_heap()
    rss0 = _rss_bytes()
    t0 = time.perf_counter()
    if name == "collisional_box":
        case = box_case(size, total)
        sim = Simulation(case, make_plan(case), seed=1)
    else:
        weight = small.fnum * small.bench_mean_particles / size
        case = open_case(name, particles=size, weight=weight, total_steps=total)
        sim = scaled_up(small, case, int(round(size)))
    setup = time.perf_counter() - t0
    gc.collect()
    out = measure(sim, steps, repeats, warmup, bandwidth,
                  collisional=name in ("collisional_box", "transitional_orifice"), rss0=rss0)
    out["size"] = size
    out["setup_s"] = setup
    out["plan"] = {"delta": sim.plan.rarefaction_parameter, "knudsen": sim.plan.knudsen_number,
                   "axisymmetric": bool(sim.axi), "nx": sim.plan.nx, "ny": sim.plan.ny,
                   "subcells": sim.nsub}
    del sim
    gc.collect()
    return out


# ---------------------------------------------------------------------- child processes
_HOOK = r"""
import json, os, sys, time
marks = {"hook_start": time.time()}
import rarefy.engine.simulation as _s
_orig = _s.Simulation.step
def _step(self, sampling, watch=False):
    _orig(self, sampling, watch)
    marks.setdefault("first_step", time.time())
    if sampling:
        marks["first_sampled_step"] = time.time()
        print("BENCH_MARKS " + json.dumps(marks), flush=True)
        os._exit(0)
_s.Simulation.step = _step
import runpy
sys.argv = ["rarefy"] + sys.argv[1:]
runpy.run_module("rarefy.cli", run_name="__main__", alter_sys=True)
"""


def _child_env(**extra) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(REPO)] + [p for p in
                                        env.get("PYTHONPATH", "").split(os.pathsep) if p])
    env.update(extra)
    return env


def _first_steps(case_file: Path, workdir: Path, cache_dir: Path) -> dict:
    rundir = Path(tempfile.mkdtemp(dir=workdir))
    cmd = [sys.executable, "-c", _HOOK, "run", str(case_file), "-o", str(rundir), "-q",
           "--seed", "1", "--set", "run.settle_steps=1"]
    t0 = time.time()
    p = subprocess.run(cmd, env=_child_env(NUMBA_CACHE_DIR=str(cache_dir)), cwd=workdir,
                       capture_output=True, text=True, timeout=900)
    marks = [ln for ln in p.stdout.splitlines() if ln.startswith("BENCH_MARKS ")]
    if not marks:
        raise RuntimeError(f"start-up child failed ({p.returncode}): {p.stderr[-2000:]}")
    m = json.loads(marks[-1].split(" ", 1)[1])
    return {"interpreter_s": m["hook_start"] - t0, "first_step_s": m["first_step"] - t0,
            "first_sampled_step_s": m["first_sampled_step"] - t0}


def startup(repeats: int = 3, cold_repeats: int = 1) -> dict:
    """Cold and cached times from spawning ``rarefy run`` to its first (sampled) step."""
    with tempfile.TemporaryDirectory(prefix="rarefy-bench-") as tmp:
        work = Path(tmp)
        case_file = work / "orifice.toml"
        case_file.write_text(ORIFICE_TEXT)
        cold = []
        for k in range(cold_repeats):
            cache = work / f"cache{k}"
            cache.mkdir()
            cold.append(_first_steps(case_file, work, cache))
        cached = [_first_steps(case_file, work, work / "cache0") for _ in range(repeats)]
    best = lambda runs, key: min(r[key] for r in runs)  # noqa: E731
    out = {"case": "transitional_orifice via `python3 -m rarefy.cli run -q "
                   "--set run.settle_steps=1`",
           "cold_repeats": cold_repeats, "cached_repeats": repeats}
    for label, runs in (("cold", cold), ("cached", cached)):
        for key in ("interpreter_s", "first_step_s", "first_sampled_step_s"):
            out[f"{label}_{key}"] = best(runs, key)
    out["compile_s"] = out["cold_first_sampled_step_s"] - out["cached_first_sampled_step_s"]
    return out


def time_to_answer(target: float = 0.01, seed: int = 1) -> dict:
    """CPU seconds of `rarefy run --target-error` for the orifice and the tube."""
    out = {}
    with tempfile.TemporaryDirectory(prefix="rarefy-tta-") as tmp:
        work = Path(tmp)
        for name, text in (("transitional_orifice", ORIFICE_TEXT),
                           ("collisionless_tube", TUBE_TEXT)):
            case_file = work / f"{name}.toml"
            case_file.write_text(text)
            rundir = work / name
            ru0 = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "rarefy.cli", "run", str(case_file), "-o",
                            str(rundir), "-q", "--target-error", str(target), "--seed",
                            str(seed)], env=_child_env(), cwd=work, check=True,
                           capture_output=True, timeout=3600)
            wall = time.perf_counter() - t0
            ru1 = resource.getrusage(resource.RUSAGE_CHILDREN)
            rep = subprocess.run([sys.executable, "-m", "rarefy.cli", "report", str(rundir),
                                  "--json"], env=_child_env(), cwd=work, check=True,
                                 capture_output=True, text=True)
            r = json.loads(rep.stdout)
            fp = r["flux_planes"]["throat"]
            out[name] = {
                "cpu_s": (ru1.ru_utime - ru0.ru_utime) + (ru1.ru_stime - ru0.ru_stime),
                "wall_s": wall, "steps": r["steps"], "sampled_steps": r["sampled_steps"],
                "transmission_probability": fp["transmission_probability"],
                "transmission_probability_stderr": fp["transmission_probability_stderr"],
                "rarefaction_parameter": r["rarefaction_parameter"],
                "stop_reason": r["stop_reason"], "seed": seed}
    return out


# ---------------------------------------------------------------------- driver
def machine(bandwidth: float) -> dict:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return {"cpu": cpu, "cores": os.cpu_count(), "copy_bandwidth_gb_s": bandwidth,
            "python": platform.python_version(), "numpy": np.__version__,
            "numba": numba.__version__}


def run_bench(sizes=(1e6,), steps: int = 10, repeats: int = 3, threads: int | None = None,
              cases=CASES, with_startup: bool = True, cold_repeats: int = 1,
              with_time_to_answer: bool = False, bandwidth_mb: int = 512,
              settle_steps: int | None = None, min_particle_steps: float = 0.0,
              log=None) -> dict:
    """Run the benchmark and return the JSON-ready result (keys in the module docstring).

    ``settle_steps`` shortens the settling of the open cases (tests);
    ``min_particle_steps`` lengthens the blocks of small sizes; ``log`` receives
    progress lines.
    """
    say = log or (lambda _msg: None)
    threads = numba.config.NUMBA_NUM_THREADS if threads is None else threads
    numba.set_num_threads(max(1, min(int(threads), numba.config.NUMBA_NUM_THREADS)))
    bw = copy_bandwidth(bandwidth_mb)
    say(f"copy bandwidth {bw:.1f} GB/s")
    par = parallel_kernels()
    # load the compiled kernels once, so that no case pays for it (time or memory)
    warm = Simulation(box_case(2e4), make_plan(box_case(2e4)), seed=1)
    warm.step(False)
    warm.step(True)
    del warm
    out = {"machine": machine(bw), "threads": numba.get_num_threads(),
           "parallel_kernels": par,
           "numba_version": numba.__version__, "sizes": list(sizes)}
    for name in cases:
        small = None
        if name != "collisional_box":
            t0 = time.perf_counter()
            small = settled(name, settle_steps)
            say(f"{name}: settled {small.store.n} particles in {small.clock.step} steps "
                f"({time.perf_counter() - t0:.1f} s)")
        per_size = []
        for size in sizes:
            r = run_case(name, float(size), steps, repeats, bw, small,
                         min_particle_steps=min_particle_steps)
            say(f"{name} at {size:.3g}: {r['particle_steps_per_s'] / 1e6:.1f} M "
                "particle-steps/s")
            per_size.append(r)
        del small
        entry = dict(per_size[0])
        entry["by_size"] = per_size
        if len(per_size) > 1:
            lo = min(per_size, key=lambda r: r["size"])
            hi = max(per_size, key=lambda r: r["size"])
            entry["cost_ratio"] = {"small": lo["size"], "large": hi["size"],
                                   "ratio": lo["particle_steps_per_s"]
                                   / hi["particle_steps_per_s"]}
        else:
            entry["cost_ratio"] = None
        out[name] = entry
    out["startup"] = startup(repeats, cold_repeats) if with_startup else None
    out["time_to_answer"] = time_to_answer() if with_time_to_answer else None
    try:
        layer = numba.threading_layer()
    except ValueError:     # no parallel kernel has run (one thread, or small counts)
        layer = None
    out["threading_layer"] = layer
    out["parallel_min_particles"] = parallel_min_particles()
    out["threads_note"] = (
        "no kernel is compiled with parallel=True: --threads does not change these figures"
        if not par else
        f"{len(par)} kernels have a parallel build, used from "
        f"{parallel_min_particles():,} particles on {out['threads']} threads (pool: "
        f"{layer or 'not started'}); their serial twins run below that and on one thread")
    return out


def _fmt_table(out: dict) -> str:
    head = (f"{'case':<21} {'particles':>10} {'cells':>8} {'M p-st/s':>9} "
            + " ".join(f"{k:>7}" for k in PHASES)
            + f" {'B/p own':>8} {'B/p RSS':>8} {'B/p-st':>7} {'roof':>6} {'cpu/wall':>8}")
    lines = [head]
    for name in CASES:
        if name not in out:
            continue
        for r in out[name]["by_size"]:
            rss = r["rss_bytes_per_particle"]
            lines.append(
                f"{name:<21} {r['particles']:>10d} {r['cells']:>8d} "
                f"{r['particle_steps_per_s'] / 1e6:>9.1f} "
                + " ".join(f"{r['phases'][k]:>7.1f}" for k in PHASES)
                + f" {r['bytes_owned_per_particle']:>8.0f} "
                + (f"{rss:>8.0f}" if rss is not None else f"{'-':>8}")
                + f" {r['traffic_bytes_per_particle_step']['total']:>7d}"
                + f" {r['roofline_ratio']:>6.2f} {r['cpu_over_wall']:>8.2f}")
    return "\n".join(lines)


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--json", action="store_true", help="print one JSON object")
    ap.add_argument("--sizes", default="1e6",
                    help="comma-separated particle counts, e.g. 1e5,1e6,1e7 (default 1e6)")
    ap.add_argument("--particles", type=float, default=None,
                    help="one size (older spelling of --sizes)")
    ap.add_argument("--steps", type=int, default=10, help="timed steps per block")
    ap.add_argument("--min-particle-steps", type=float, default=1e7,
                    help="at least this many particle-steps per block: small sizes get "
                         "more steps (default 1e7)")
    ap.add_argument("--repeats", type=int, default=3,
                    help="timed blocks per case (the best counts) and cached start-ups")
    ap.add_argument("--threads", type=int, default=None,
                    help="numba threads (default: all cores)")
    ap.add_argument("--cases", default=",".join(CASES), help="comma-separated subset")
    ap.add_argument("--no-startup", action="store_true",
                    help="skip the compile and start-up child processes")
    ap.add_argument("--cold-repeats", type=int, default=1,
                    help="cold-compile child runs (best counts)")
    ap.add_argument("--time-to-answer", action="store_true",
                    help="also run the orifice and tube to 1 %% error (minutes)")
    ap.add_argument("--bandwidth-mb", type=int, default=512,
                    help="size of the arrays of the copy-bandwidth measurement")
    ap.add_argument("--settle-steps", type=int, default=None,
                    help="settling steps of the open cases (default: the plan's)")
    args = ap.parse_args(argv)
    sizes = [args.particles] if args.particles else \
        [float(s) for s in args.sizes.split(",") if s.strip()]
    cases = [c.strip() for c in args.cases.split(",") if c.strip()]
    bad = [c for c in cases if c not in CASES]
    if bad:
        ap.error(f"unknown case(s) {', '.join(bad)}; choose from {', '.join(CASES)}")
    log = None if args.json else (lambda m: print(m, file=sys.stderr, flush=True))
    out = run_bench(sizes, args.steps, args.repeats, args.threads, cases,
                    not args.no_startup, args.cold_repeats, args.time_to_answer,
                    bandwidth_mb=args.bandwidth_mb, settle_steps=args.settle_steps,
                    min_particle_steps=args.min_particle_steps, log=log)
    if args.json:
        print(json.dumps(out, indent=2))
        return
    m = out["machine"]
    print(f"{m['cpu']}, {m['cores']} cores, copy bandwidth {m['copy_bandwidth_gb_s']:.1f} "
          f"GB/s (read + write); numba {m['numba']}, {out['threads']} thread(s): "
          f"{out['threads_note']}")
    print(f"best of {args.repeats} blocks of at least {args.steps} sampled steps and "
          f"{args.min_particle_steps:.3g} particle-steps; phases in ns per particle-step; "
          "B/p = bytes per particle; roof = achieved / roofline")
    print(_fmt_table(out))
    for name in cases:
        cr = out[name]["cost_ratio"]
        if cr:
            print(f"{name}: cost per particle-step at {cr['large']:.3g} / at "
                  f"{cr['small']:.3g} = {cr['ratio']:.2f}")
    s = out["startup"]
    if s:
        print(f"start-up ({s['case']}): cold {s['cold_first_step_s']:.2f} s to the first step, "
              f"{s['cold_first_sampled_step_s']:.2f} s to the first sampled step; cached "
              f"{s['cached_first_step_s']:.2f} s / {s['cached_first_sampled_step_s']:.2f} s; "
              f"compile {s['compile_s']:.2f} s")
    for name, t in (out["time_to_answer"] or {}).items():
        print(f"time to answer, {name}: {t['cpu_s']:.1f} CPU s ({t['wall_s']:.1f} s wall), "
              f"transmission {t['transmission_probability']:.4g} +- "
              f"{t['transmission_probability_stderr']:.2g}, {t['steps']} steps")


if __name__ == "__main__":
    main()
