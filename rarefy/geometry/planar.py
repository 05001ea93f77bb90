"""Domain geometry: grid, cut-cell volumes, wall segments, boundary pieces, flux planes.

Turns the case's named objects into the plain arrays the kernels take (column
layouts in ``rarefy.kernels.config``) plus the tables post-processing needs to
name and size every surface facet.

Planar domains have extent ``depth`` in z. Axisymmetric domains are (x, r) half-planes
turned about the x axis: a cell is a ring whose volume, by Pappus' theorem, is 2 pi
times the first moment of its fluid area about the axis (cut cells: the solid part's
moment comes from the clipped polygon); a wall or flux-plane segment sweeps the
surface pi (r_a + r_b) |b - a|. Each radial row j of cells carries the particle weight
factor 2j + 1 (its ring volume over that of the row on the axis), so every row holds
about the same number of particles.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rarefy.case import SIDES, Case, Surface
from rarefy.constants import K_B
from rarefy.geometry.cutcell import solid_area_per_cell
from rarefy.kernels.config import BND_ABSORB, BND_PERIODIC, BND_REFLECT
from rarefy.plan import Plan

__all__ = ["Geometry", "build_geometry"]


@dataclass
class Geometry:
    """Arrays describing a planar domain (SI units)."""

    box: np.ndarray            # xmin, xmax, ymin, ymax
    nx: int
    ny: int
    dx: float
    dy: float
    depth: float
    volume: np.ndarray         # cell volumes, m^3, row-major (iy * nx + ix)
    segs: np.ndarray           # wall segments: x0, y0, x1, y1, sigma, acc, vel
    seg_tally: np.ndarray      # first facet, number of facets
    pieces: np.ndarray         # boundary pieces: start, end, sigma, acc, vel
    piece_int: np.ndarray      # side, kind, first facet, number of facets
    planes: np.ndarray         # flux planes: x0, y0, x1, y1
    plane_names: list
    plane_mirrored: np.ndarray
    facet_owner: list          # name of the wall or boundary each facet belongs to
    facet_xy: np.ndarray       # facet centre (x, y), m
    facet_normal: np.ndarray   # unit normal into the gas (sides) or left normal (walls)
    facet_area: np.ndarray     # facet length x depth, m^2
    poly_x: np.ndarray         # solid polygons, concatenated
    poly_y: np.ndarray
    poly_start: np.ndarray
    free: np.ndarray           # uint8 per cell: 1 where no wall or flux plane is near
    plane_area: np.ndarray     # flux-plane areas, m^2 (mirror images included)
    axisymmetric: bool = False
    row_weight: np.ndarray | None = None   # particle weight factor per radial row

    @property
    def cell_weight(self) -> np.ndarray:
        """Particle weight factor of every cell (row-major)."""
        return np.repeat(self.row_weight, self.nx)

    @property
    def ncell(self) -> int:
        return self.nx * self.ny

    def cell_centres(self) -> tuple[np.ndarray, np.ndarray]:
        xc = self.box[0] + (np.arange(self.nx) + 0.5) * self.dx
        yc = self.box[2] + (np.arange(self.ny) + 0.5) * self.dy
        return xc, yc


def _surface_row(surface: Surface, mass_kg: float) -> tuple[float, float, float]:
    if surface.kind == "specular" or surface.temperature_k is None:
        return 0.0, 0.0, surface.velocity_m_s
    sigma = math.sqrt(K_B * surface.temperature_k / mass_kg)
    return sigma, surface.accommodation, surface.velocity_m_s


def _nbins(length: float, cell: float) -> int:
    return max(1, int(round(length / cell)))


def swept_area(x0, y0, x1, y1, depth: float, axisymmetric: bool) -> float:
    """Area of the surface a segment stands for, m^2: length x depth (planar) or the
    surface of revolution pi (r0 + r1) length (axisymmetric, Pappus)."""
    length = math.hypot(x1 - x0, y1 - y0)
    return math.pi * (y0 + y1) * length if axisymmetric else length * depth


def build_geometry(case: Case, plan: Plan) -> Geometry:
    """Build the kernel arrays for ``case`` on the grid of ``plan``."""
    d = case.domain
    axi = d.axisymmetric
    m = plan.mass_kg
    cell = min(plan.cell_dx_m, plan.cell_dy_m)
    owners, fxy, fnorm, farea = [], [], [], []

    def add_facets(name, x0, y0, x1, y1, normal):
        n = _nbins(math.hypot(x1 - x0, y1 - y0), cell)
        first = len(owners)
        for b in range(n):
            f, fa, fb = (b + 0.5) / n, b / n, (b + 1) / n
            owners.append(name)
            fxy.append((x0 + f * (x1 - x0), y0 + f * (y1 - y0)))
            fnorm.append(normal)
            farea.append(swept_area(x0 + fa * (x1 - x0), y0 + fa * (y1 - y0),
                                    x0 + fb * (x1 - x0), y0 + fb * (y1 - y0), d.depth_m, axi))
        return first, n

    segs, seg_tally = [], []
    polys = []
    for wall in case.walls:
        pts = list(wall.points)
        if wall.solid:
            polys.append(pts)
            pts = pts + [pts[0]]
        sigma, acc, vel = _surface_row(wall.surface, m)
        for (x0, y0), (x1, y1) in zip(pts[:-1], pts[1:]):
            ln = math.hypot(x1 - x0, y1 - y0)
            normal = (-(y1 - y0) / ln, (x1 - x0) / ln)
            first, n = add_facets(wall.name, x0, y0, x1, y1, normal)
            segs.append((x0, y0, x1, y1, sigma, acc, vel))
            seg_tally.append((first, n))

    pieces, piece_int = [], []
    inward = {"xmin": (1.0, 0.0), "xmax": (-1.0, 0.0), "ymin": (0.0, 1.0), "ymax": (0.0, -1.0)}
    for b in case.boundaries:
        side = SIDES.index(b.side)
        if b.kind in ("vacuum", "reservoir", "axis"):
            pieces.append((b.start, b.end, 0.0, 0.0, 0.0))
            piece_int.append((side, BND_ABSORB, 0, 0))
        elif b.kind == "periodic":
            pieces.append((b.start, b.end, 0.0, 0.0, 0.0))
            piece_int.append((side, BND_PERIODIC, 0, 0))
        else:
            if b.kind == "symmetry":
                row, first, n = (0.0, 0.0, 0.0), 0, 0
            else:
                row = _surface_row(b.surface, m)
                if b.side in ("xmin", "xmax"):
                    xs = d.xmin if b.side == "xmin" else d.xmax
                    first, n = add_facets(f"boundary {b.side}", xs, b.start, xs, b.end,
                                          inward[b.side])
                else:
                    ys = d.ymin if b.side == "ymin" else d.ymax
                    first, n = add_facets(f"boundary {b.side}", b.start, ys, b.end, ys,
                                          inward[b.side])
            pieces.append((b.start, b.end) + tuple(row))
            piece_int.append((side, BND_REFLECT, first, n))

    nx, ny, dx, dy = plan.nx, plan.ny, plan.cell_dx_m, plan.cell_dy_m
    solid = np.zeros(nx * ny)
    solid_moment = np.zeros(nx * ny)
    px = np.array([p[0] for poly in polys for p in poly], dtype=np.float64)
    py = np.array([p[1] for poly in polys for p in poly], dtype=np.float64)
    pstart = np.cumsum([0] + [len(poly) for poly in polys]).astype(np.int64)
    for q in range(len(polys)):
        solid_area_per_cell(px[pstart[q]:pstart[q + 1]], py[pstart[q]:pstart[q + 1]],
                            d.xmin, d.ymin, dx, dy, nx, ny, solid, solid_moment)
    area = dx * dy
    fluid = np.clip(area - solid, 0.0, area)
    empty = fluid < 1e-9 * area
    if axi:
        r0 = d.ymin + dy * np.repeat(np.arange(ny), nx)
        full_moment = dx * 0.5 * ((r0 + dy) ** 2 - r0 ** 2)
        volume = 2.0 * math.pi * np.clip(full_moment - solid_moment, 0.0, full_moment)
        row_weight = 2.0 * np.arange(ny) + 1.0
    else:
        volume = fluid * d.depth_m
        row_weight = np.ones(ny)
    volume[empty] = 0.0

    planes = np.array([fp.start + fp.end for fp in case.flux_planes],
                      dtype=np.float64).reshape(-1, 4)
    lines = [s[:4] for s in segs] + [tuple(p) for p in planes]
    free = _free_cells(lines, d.xmin, d.ymin, dx, dy, nx, ny)
    return Geometry(
        box=np.array([d.xmin, d.xmax, d.ymin, d.ymax], dtype=np.float64),
        nx=nx, ny=ny, dx=dx, dy=dy, depth=d.depth_m,
        volume=volume,
        segs=np.array(segs, dtype=np.float64).reshape(-1, 7),
        seg_tally=np.array(seg_tally, dtype=np.int64).reshape(-1, 2),
        pieces=np.array(pieces, dtype=np.float64).reshape(-1, 5),
        piece_int=np.array(piece_int, dtype=np.int64).reshape(-1, 4),
        planes=planes,
        plane_names=[fp.name for fp in case.flux_planes],
        plane_mirrored=np.array([fp.mirrored for fp in case.flux_planes], dtype=bool),
        facet_owner=owners,
        facet_xy=np.array(fxy, dtype=np.float64).reshape(-1, 2),
        facet_normal=np.array(fnorm, dtype=np.float64).reshape(-1, 2),
        facet_area=np.array(farea, dtype=np.float64),
        poly_x=px, poly_y=py, poly_start=pstart, free=free,
        plane_area=np.array([swept_area(*fp.start, *fp.end, d.depth_m, axi)
                             * (2.0 if fp.mirrored else 1.0) for fp in case.flux_planes]),
        axisymmetric=axi, row_weight=row_weight,
    )


def _free_cells(lines, x0, y0, dx, dy, nx, ny) -> np.ndarray:
    """1 for cells that no segment touches, dilated by one cell in every direction.

    A cell is touched when the segment meets the closed cell rectangle (Liang-Barsky
    clipping, exact), so no wall can slip between sampled points.
    """
    touched = np.zeros((ny + 2, nx + 2), dtype=bool)
    for (ax, ay, bx, by) in lines:
        i0 = max(int(np.floor((min(ax, bx) - x0) / dx)) - 1, -1)
        i1 = min(int(np.floor((max(ax, bx) - x0) / dx)) + 1, nx)
        j0 = max(int(np.floor((min(ay, by) - y0) / dy)) - 1, -1)
        j1 = min(int(np.floor((max(ay, by) - y0) / dy)) + 1, ny)
        ii, jj = np.meshgrid(np.arange(i0, i1 + 1), np.arange(j0, j1 + 1))
        lo, hi = np.zeros(ii.shape), np.ones(ii.shape)
        for p, q in ((ax - bx, ax - (x0 + ii * dx)), (bx - ax, x0 + (ii + 1) * dx - ax),
                     (ay - by, ay - (y0 + jj * dy)), (by - ay, y0 + (jj + 1) * dy - ay)):
            if p == 0.0:
                hi = np.where(q < 0.0, -1.0, hi)
            elif p < 0.0:
                lo = np.maximum(lo, q / p)
            else:
                hi = np.minimum(hi, q / p)
        hit = lo <= hi
        touched[jj[hit] + 1, ii[hit] + 1] = True
    grown = touched.copy()
    for sy in (-1, 0, 1):
        for sx in (-1, 0, 1):
            grown[1:-1, 1:-1] |= touched[1 + sy:ny + 1 + sy, 1 + sx:nx + 1 + sx]
    return (~grown[1:-1, 1:-1]).astype(np.uint8).ravel()
