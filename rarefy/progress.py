"""Progress of a run: a one-line bar on a terminal, plain log lines otherwise.

Shown: the phase (settling or sampling), steps done of the expected total, particles,
collisions in the last step, the net mass flow through the watched flux plane with its
relative standard error (once two batches are complete) and the estimated time left.
"""

from __future__ import annotations

import math
import sys
import time

from rarefy.kernels.config import F_N_NEG, F_N_POS

__all__ = ["Progress", "format_seconds"]

BAR = 24


def format_seconds(s: float) -> str:
    if not math.isfinite(s) or s < 0:
        return "--:--"
    s = int(round(s))
    h, rem = divmod(s, 3600)
    m, sec = divmod(rem, 60)
    return f"{h}:{m:02d}:{sec:02d}" if h else f"{m:02d}:{sec:02d}"


class Progress:
    """Callable for ``Simulation.run(progress=...)``.

    Parameters
    ----------
    plane : index of the flux plane whose flow is shown (None: none).
    plane_name : its name for the display.
    stream : where to write (default stderr).
    tty : draw a bar redrawn in place (default: whether ``stream`` is a terminal); else
        one plain line per call.
    """

    def __init__(self, plane: int | None = None, plane_name: str = "", stream=None,
                 tty: bool | None = None):
        self.stream = stream or sys.stderr
        self.tty = self.stream.isatty() if tty is None else tty
        self.plane = plane
        self.plane_name = plane_name
        self.start = time.monotonic()
        self.last_draw = 0.0
        self.rate: float | None = None     # seconds per step, smoothed
        self._last = (time.monotonic(), 0)

    def _flow(self, sim) -> str:
        if self.plane is None or sim.acc.batch < 2:
            return ""
        acc = sim.acc
        nb = acc.batch
        mirrored = bool(sim.geom.plane_mirrored[self.plane])
        if acc.nspecies == 1:
            net = acc.flux[:nb, self.plane, F_N_POS] - acc.flux[:nb, self.plane, F_N_NEG]
            mass = sim.mass
        else:          # a mixture: its species' rows, each with its mass
            net = acc.net_flow(self.plane, sim.masses)
            mass = 1.0
        flow = net.mean() * sim.fnum * (2.0 if mirrored else 1.0) * mass \
            / (acc.steps_per_batch * sim.dt)
        rel = acc.relative_error(self.plane, sim.masses)
        return f" | {self.plane_name} {flow:.4g} kg/s ± {100 * rel:.2g} %"

    def __call__(self, phase: str, done: int, total: int, sim) -> None:
        now = time.monotonic()
        t0, s0 = self._last
        steps = sim.clock.step - s0
        if steps > 0 and now > t0:
            r = (now - t0) / steps
            self.rate = r if self.rate is None else 0.7 * self.rate + 0.3 * r
            self._last = (now, sim.clock.step)
        if self.tty and now - self.last_draw < 0.2 and done < total:
            return
        self.last_draw = now
        if phase == "settling":
            left = (total - done) + sim.acc.batches * sim.acc.steps_per_batch
        else:
            left = total - done
        eta = format_seconds(left * self.rate) if self.rate else "--:--"
        frac = min(max(done / total, 0.0), 1.0) if total else 1.0
        text = (f"{phase:<8} step {done}/{total} | {sim.store.n:.3g} particles | "
                f"{sim.coll_stats[0]:.3g} collisions/step{self._flow(sim)} | ETA {eta}")
        if self.tty:
            fill = int(round(frac * BAR))
            bar = "█" * fill + "░" * (BAR - fill)
            self.stream.write(f"\r\x1b[2K{bar} {100 * frac:3.0f}% {text}")
        else:
            self.stream.write(f"[{format_seconds(now - self.start)}] {text}\n")
        self.stream.flush()

    def close(self) -> None:
        if self.tty:
            self.stream.write("\n")
            self.stream.flush()
