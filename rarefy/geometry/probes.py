"""Probe regions on the grid: which cells each probe overlaps, and its gas volume.

A probe is a rectangle [x0, x1] x [y0, y1] of the (x, y) plane: planar, a box of the
domain's depth; axisymmetric (y = r), a ring of volume pi (y1^2 - y0^2)(x1 - x0). Its
gas volume is the sum over the cells it overlaps of each cell's gas volume times the
part of the cell it covers (by area, or by ring volume in axisymmetric domains): exact
where the cells are not cut by walls, and the cell-level approximation where they are.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rarefy.case import Case
from rarefy.geometry.planar import Geometry

__all__ = ["ProbeSet", "build_probes"]


@dataclass
class ProbeSet:
    """Arrays for ``rarefy.kernels.sample.sample_probes`` (SI units)."""

    names: list
    box: np.ndarray          # [nprobe, 4]: x0, x1, y0, y1 (m)
    cells: np.ndarray        # overlapped cell indices, concatenated (int64)
    cell_start: np.ndarray   # [nprobe + 1] offsets into ``cells``
    volume: np.ndarray       # gas volume of each probe (m^3)
    direction: list          # "x" or "y": the flow direction of each probe

    def __len__(self) -> int:
        return len(self.names)


def _overlap(lo: float, hi: float, edges: np.ndarray) -> np.ndarray:
    """Length of [lo, hi] inside each interval [edges[k], edges[k+1]]."""
    return np.clip(np.minimum(hi, edges[1:]) - np.maximum(lo, edges[:-1]), 0.0, None)


def build_probes(case: Case, geom: Geometry) -> ProbeSet:
    """The probes of ``case`` on the grid of ``geom``."""
    xe = geom.box[0] + geom.dx * np.arange(geom.nx + 1)
    ye = geom.box[2] + geom.dy * np.arange(geom.ny + 1)
    boxes, cells, starts, volumes = [], [], [0], []
    for pr in case.probes:
        fx = _overlap(*pr.x, xe) / geom.dx
        if geom.axisymmetric:
            a = np.clip(ye[:-1], pr.y[0], pr.y[1])
            b = np.clip(ye[1:], pr.y[0], pr.y[1])
            fy = (b * b - a * a) / (ye[1:] ** 2 - ye[:-1] ** 2)
        else:
            fy = _overlap(*pr.y, ye) / geom.dy
        frac = np.outer(fy, fx).ravel()          # row-major like the cells
        idx = np.flatnonzero(frac > 0.0)
        boxes.append((*pr.x, *pr.y))
        cells.append(idx)
        starts.append(starts[-1] + idx.size)
        volumes.append(float(np.sum(geom.volume[idx] * frac[idx])))
    return ProbeSet(
        names=[p.name for p in case.probes],
        box=np.array(boxes, dtype=np.float64).reshape(-1, 4),
        cells=np.concatenate(cells).astype(np.int64) if cells else np.zeros(0, np.int64),
        cell_start=np.array(starts, dtype=np.int64),
        volume=np.array(volumes, dtype=np.float64),
        direction=[p.direction for p in case.probes],
    )
