"""Cut cells: the part of each grid cell covered by solid polygons.

A solid polygon is clipped against each rectangular cell it overlaps
(Sutherland-Hodgman clipping against a convex window, valid for any simple
subject polygon as far as the clipped area goes) and the area of the clipped
polygon comes from the shoelace formula. Kernels only; see ``planar.py``.
"""

import numpy as np
from numba import njit

from rarefy.kernels.config import JIT


@njit(**JIT)
def _clip_edge(px, py, n, axis, value, keep_greater, ox, oy):
    """Clip polygon (px, py)[:n] by the half-plane coord[axis] >= / <= value."""
    m = 0
    for k in range(n):
        ax, ay = px[k], py[k]
        bx, by = px[(k + 1) % n], py[(k + 1) % n]
        ca = ax if axis == 0 else ay
        cb = bx if axis == 0 else by
        ina = ca >= value if keep_greater else ca <= value
        inb = cb >= value if keep_greater else cb <= value
        if ina:
            ox[m] = ax
            oy[m] = ay
            m += 1
        if ina != inb:
            t = (value - ca) / (cb - ca)
            ox[m] = ax + t * (bx - ax)
            oy[m] = ay + t * (by - ay)
            m += 1
    return m


@njit(**JIT)
def polygon_area(px, py, n):
    """Signed shoelace area of polygon (px, py)[:n], m^2."""
    a = 0.0
    for k in range(n):
        j = (k + 1) % n
        a += px[k] * py[j] - px[j] * py[k]
    return 0.5 * a


@njit(**JIT)
def polygon_y_moment(px, py, n):
    """Signed first moment about the x axis, integral of y dA (m^3), of polygon
    (px, py)[:n]; divided by the area it gives the centroid's y (shoelace form)."""
    a = 0.0
    for k in range(n):
        j = (k + 1) % n
        a += (py[k] + py[j]) * (px[k] * py[j] - px[j] * py[k])
    return a / 6.0


@njit(**JIT)
def solid_area_per_cell(poly_x, poly_y, x0, y0, dx, dy, nx, ny, out, out_moment):
    """Add the area of polygon (poly_x, poly_y) inside every cell to ``out[ny * nx]`` and
    its first moment about the x axis (integral of y dA) to ``out_moment``; by Pappus'
    theorem 2 pi times the moment is the volume the area sweeps about the x axis."""
    n = poly_x.shape[0]
    cap = 2 * n + 8
    ax = np.empty(cap)
    ay = np.empty(cap)
    bx = np.empty(cap)
    by = np.empty(cap)
    i0 = max(0, int((poly_x.min() - x0) / dx))
    i1 = min(nx - 1, int((poly_x.max() - x0) / dx))
    j0 = max(0, int((poly_y.min() - y0) / dy))
    j1 = min(ny - 1, int((poly_y.max() - y0) / dy))
    for j in range(j0, j1 + 1):
        for i in range(i0, i1 + 1):
            cx0 = x0 + i * dx
            cy0 = y0 + j * dy
            m = n
            for k in range(n):
                ax[k] = poly_x[k]
                ay[k] = poly_y[k]
            m = _clip_edge(ax, ay, m, 0, cx0, True, bx, by)
            if m == 0:
                continue
            m = _clip_edge(bx, by, m, 0, cx0 + dx, False, ax, ay)
            if m == 0:
                continue
            m = _clip_edge(ax, ay, m, 1, cy0, True, bx, by)
            if m == 0:
                continue
            m = _clip_edge(bx, by, m, 1, cy0 + dy, False, ax, ay)
            if m < 3:
                continue
            area = polygon_area(ax, ay, m)
            sign = 1.0 if area >= 0.0 else -1.0
            out[j * nx + i] += sign * area
            out_moment[j * nx + i] += sign * polygon_y_moment(ax, ay, m)


@njit(**JIT)
def inside_polygon(px, py, poly_x, poly_y):
    """Even-odd test: is point (px, py) inside the polygon?"""
    n = poly_x.shape[0]
    inside = False
    for k in range(n):
        j = (k + 1) % n
        yk = poly_y[k]
        yj = poly_y[j]
        if (yk > py) != (yj > py):
            xc = poly_x[k] + (py - yk) * (poly_x[j] - poly_x[k]) / (yj - yk)
            if px < xc:
                inside = not inside
    return inside


@njit(**JIT)
def mask_inside_solids(x, y, poly_x, poly_y, poly_start, keep):
    """Set ``keep[i] = False`` for points inside any solid polygon.

    Polygon q occupies poly_x[poly_start[q]:poly_start[q + 1]].
    """
    for i in range(x.shape[0]):
        for q in range(poly_start.shape[0] - 1):
            a = poly_start[q]
            b = poly_start[q + 1]
            if inside_polygon(x[i], y[i], poly_x[a:b], poly_y[a:b]):
                keep[i] = False
                break
