#!/usr/bin/env python3
"""Engine benchmark: particle-steps per second and ns per particle-step per phase.

Cases
-----
collisional_box     closed periodic box of hard-sphere argon, about 20 particles per
                    cell, ``--particles`` particles (default 1e6); every phase works.
collisionless_slit  free-molecular argon slit into vacuum (Kn about 100): injection,
                    moves with wall and flux-plane events, no collisions to speak of.

Run from the repository root: ``python tools/bench.py [--json] [--particles N]``.
Numba compile time is measured apart (the first steps) and excluded from the rates.
Speed goals live here, never in timed tests.
"""

from __future__ import annotations

import argparse
import json
import math
import time

import numba

from rarefy.case import parse_case
from rarefy.engine.simulation import PHASES, Simulation
from rarefy.plan import make_plan
from rarefy.templates import slit_case

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


def box_case(particles: float):
    ncell = particles / 20.0
    n_side = int(round(math.sqrt(ncell)))
    p = 10.0
    # mean free path of HS argon at 10 Pa and 300 K is about 0.7 mm; cells of lambda/3
    cell = 0.7e-3 / 3.0
    return parse_case(BOX.format(side=n_side * cell, p=p, cell=cell), "bench-box")


def slit_case_fm(particles: float):
    text = slit_case(gas="Ar", temperature_k=300.0, upstream_pressure_pa=0.05, width_m=1e-3)
    # upstream region is 5 x 5 mm; choose the cell count so it holds `particles`
    cells_up = particles / 20.0
    cell = 5e-3 / math.sqrt(cells_up)
    return parse_case(text, "bench-slit", overrides={
        "resolution.cell_size": f"{cell} m", "resolution.particles_per_cell": 20,
        "resolution.time_step": f"{0.5 * cell / 400.0} s"})


def measure(case, steps: int, warmup: int) -> dict:
    plan = make_plan(case)
    t0 = time.perf_counter()
    sim = Simulation(case, plan, seed=1)
    setup = time.perf_counter() - t0
    t0 = time.perf_counter()
    for _ in range(warmup):
        sim.step(True if sim.clock.step % 2 else False)
    warm = time.perf_counter() - t0
    for k in sim.clock.phase_seconds:
        sim.clock.phase_seconds[k] = 0.0
    ps0 = sim.clock.particle_steps
    t0 = time.perf_counter()
    for _ in range(steps):
        sim.step(True)
    wall = time.perf_counter() - t0
    ps = sim.clock.particle_steps - ps0
    return {
        "particles": sim.store.n,
        "cells": plan.ncell,
        "steps": steps,
        "particle_steps_per_s": ps / wall,
        "phases": {k: sim.clock.phase_seconds[k] / ps * 1e9 for k in PHASES},
        "setup_s": setup,
        "warmup_s": warm,
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--json", action="store_true", help="print one JSON object")
    ap.add_argument("--particles", type=float, default=1e6)
    ap.add_argument("--steps", type=int, default=30)
    ap.add_argument("--threads", type=int, default=1,
                    help="numba threads (the kernels are serial in this version)")
    args = ap.parse_args()
    numba.set_num_threads(max(1, min(args.threads, numba.config.NUMBA_NUM_THREADS)))
    out = {
        "collisional_box": measure(box_case(args.particles), args.steps, warmup=5),
        "collisionless_slit": measure(slit_case_fm(args.particles), args.steps,
                                      warmup=int(3 * 10e-3 / 400.0 /
                                                 (0.5 * 5e-3 / math.sqrt(args.particles / 20)
                                                  / 400.0))),
        "threads": numba.get_num_threads(),
        "numba_version": numba.__version__,
    }
    if args.json:
        print(json.dumps(out, indent=2))
        return
    for name in ("collisional_box", "collisionless_slit"):
        r = out[name]
        print(f"{name}: {r['particles']} particles, {r['cells']} cells, "
              f"{r['particle_steps_per_s'] / 1e6:.1f} M particle-steps/s")
        print("   " + "  ".join(f"{k} {v:.1f} ns" for k, v in r["phases"].items()))


if __name__ == "__main__":
    main()
