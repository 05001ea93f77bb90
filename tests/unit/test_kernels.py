"""Every fast kernel against a slow twin or an exact property.

Tags as in shared/reference/published-values.md: P published value seen in a
source; M published value from memory; S computed independently here (method
stated beside the check); T common vacuum-engineering practice.

Statistical checks use fixed seeds (``seed_generator`` seeds the injection kernel's
numba stream; the other kernels draw from counter-based streams under a fixed key). Kolmogorov-Smirnov tests use 4e4 or more samples, so they detect a CDF
error of about 1 % (the KS critical distance 1.95 / sqrt(n) at p = 1e-3); each
distribution test is paired with a wrong-distribution check that must fail, to
show the test has the power to fail.
"""

import math

import numpy as np
from matplotlib.path import Path
from numba import njit
import pytest
from scipy import integrate, stats

from rarefy.constants import K_B
from rarefy.gas import kinetic
from rarefy.gas.species import get_species
from rarefy.geometry.cutcell import solid_area_per_cell
from rarefy.kernels.collide import collide_cells, scatter
from rarefy.kernels.config import (
    BND_PERIODIC, BND_REFLECT, N_FLUX_TALLY, N_SURF_TALLY, SIDE_XMAX, SIDE_XMIN, SIDE_YMAX,
    SIDE_YMIN, T_HITS, T_VN_IN, T_VN_OUT, T_VT_IN, T_VT_OUT, N_INTERNAL_PAR, N_MOMENTS,
)
from rarefy.kernels.index import counting_sort, counting_sort_par
from rarefy.kernels.rng import step_key, stream
from rarefy.kernels.inject import flux_weighted_normal, seed_generator
from rarefy.kernels.move import move_all

KEY = step_key(2024, 0, 1)   # a fixed key for the counter-based streams
P_MIN = 1e-3        # KS acceptance for a correct distribution (fixed seed)
P_WRONG = 1e-6      # KS p-value a wrong distribution must fall below
AR = get_species("Ar")
NOINT = np.zeros((0, 1))            # no internal-energy rows (monatomic)
IP0 = np.zeros((1, N_INTERNAL_PAR))    # internal-energy parameters of a monatomic gas
ONE = (np.zeros(1), np.ones(1))     # one species: species row (unread), sigma factors
PAIR1 = (np.zeros(1), np.ones(1), np.zeros((1, 1)), np.zeros((1, 1)), np.ones((1, 1)))


# ============================================================== collisions
def _one_cell(velocities, sub_counts, rng):
    """Particles of one 1 x 1 cell split into 2 x 2 sub-cells with the given counts,
    already in key order; returns x, y, vx, vy, vz, key_start."""
    xs, ys = [], []
    for k, cnt in enumerate(sub_counts):
        sx, sy = k % 2, k // 2
        xs.append(0.5 * (sx + rng.random(cnt)))
        ys.append(0.5 * (sy + rng.random(cnt)))
    key_start = np.concatenate([[0], np.cumsum(sub_counts)]).astype(np.int64)
    v = np.array(velocities, dtype=np.float64)
    return (np.concatenate(xs), np.concatenate(ys), v[:, 0].copy(), v[:, 1].copy(),
            v[:, 2].copy(), key_start)


def _moments_twin(vx, vy, vz):
    """Slow twin of the cell moments (rarefy.kernels.config M_* order)."""
    c2 = vx * vx + vy * vy + vz * vz
    return np.array([len(vx), vx.sum(), vy.sum(), vz.sum(), (vx * vx).sum(), (vy * vy).sum(),
                     (vz * vz).sum(), (vx * vy).sum(), (vx * vz).sum(), (vy * vz).sum(),
                     (c2 * vx).sum(), (c2 * vy).sum(), c2.sum(), 0.0, 0.0, 0.0, 0.0])


def _totals(vx, vy, vz):
    """Momentum (per unit mass), its scale sum |v|, and twice the energy per unit mass."""
    p = np.array([math.fsum(vx), math.fsum(vy), math.fsum(vz)])
    scale = math.fsum(np.sqrt(vx * vx + vy * vy + vz * vz))
    e = math.fsum(vx * vx + vy * vy + vz * vz)
    return p, scale, e


@pytest.mark.parametrize("kind", ["hs", "vhs"])
@pytest.mark.parametrize("alpha", [1.0, 1.4])
def test_collide_cells_conserves_momentum_and_energy(kind, alpha):
    # exact property: each elastic binary collision conserves momentum and energy
    # (Bird 1994 ch. 2, M, from memory); the kernel must keep them to round-off, 1e-12.
    rng = np.random.default_rng(11)
    model = AR.model(kind)
    sig = math.sqrt(K_B * 300.0 / AR.mass_kg)
    counts = [90, 1, 60, 49]  # the lone particle exercises the partner-from-cell branch
    n = sum(counts)
    vel = sig * rng.standard_normal((n, 3)) + np.array([150.0, -80.0, 40.0])
    x, y, vx, vy, vz, key_start = _one_cell(vel, counts, rng)
    a_coef = kinetic.sigma_cr_coefficient(model)
    exponent = 2.0 - 2.0 * model.omega
    vmp = math.sqrt(2.0 * K_B * 300.0 / AR.mass_kg)
    sigcr_max = np.array([a_coef * (3.0 * vmp) ** exponent])
    remainder = np.zeros(1)
    volume = np.array([1.0])
    dt = 1e-6
    ncand_target = 6000.5
    fnum = ncand_target * volume[0] / (0.5 * n * (n - 1) * sigcr_max[0] * dt)
    stats_ = np.zeros(3)
    p0, scale, e0 = _totals(vx, vy, vz)
    moments = np.zeros((1, N_MOMENTS))
    pre = _moments_twin(vx, vy, vz)
    collide_cells(1, 2, key_start, x, y, vx, vy, vz, volume, sigcr_max, remainder,
                  np.array([fnum]), dt, a_coef, exponent, alpha, NOINT, IP0, *PAIR1, KEY,
                  moments, True, stats_)
    p1, _, e1 = _totals(vx, vy, vz)
    # the fused sampling adds half the moments before and half after the collisions
    np.testing.assert_allclose(moments[0], 0.5 * (pre + _moments_twin(vx, vy, vz)),
                               rtol=1e-12)
    assert stats_[2] == 6000             # NTC candidate count (Bird 1994 sec. 11.1, M)
    assert remainder[0] == pytest.approx(0.5, abs=1e-6)
    assert stats_[0] > 2000                       # many collisions were actually made
    assert not np.allclose(vx, vel[:, 0])         # velocities did change
    assert np.all(np.abs(p1 - p0) <= 1e-12 * scale)
    assert abs(e1 - e0) <= 1e-12 * e0


@pytest.mark.parametrize("alpha", [1.0, 1.4])
def test_every_single_collision_conserves_and_keeps_relative_speed(alpha):
    # one pair, one candidate per call, acceptance forced (sigcr_max below sigma c_r):
    # pair momentum, pair energy and |c_r| are exact invariants (Bird 1994 ch. 2, M)
    rng = np.random.default_rng(12)
    a_coef, exponent = 1.0, 1.0
    dt = 1.0
    key_start = np.array([0, 2], dtype=np.int64)
    x = np.array([0.1, 0.2])
    y = np.array([0.3, 0.4])
    volume = np.array([1.0])
    for step in range(2000):
        v = 400.0 * rng.standard_normal((2, 3)) + 300.0 * rng.standard_normal(3)
        vx, vy, vz = v[:, 0].copy(), v[:, 1].copy(), v[:, 2].copy()
        sigcr_max = np.array([1e-30])
        remainder = np.zeros(1)
        fnum = 1.5 / (1e-30 * dt)   # 0.5 * 2 * 1 * fnum * sigcr_max * dt / V = 1.5
        st = np.zeros(3)
        collide_cells(1, 1, key_start, x, y, vx, vy, vz, volume, sigcr_max, remainder,
                      np.array([fnum]), dt, a_coef, exponent, alpha, NOINT, IP0, *PAIR1,
                      step_key(7, step, 1), np.zeros((1, N_MOMENTS)), False, st)
        assert st[0] == 1.0 and st[2] == 1.0
        assert st[1] == pytest.approx(math.hypot(0.1, 0.1), rel=1e-12)
        p0, scale, e0 = _totals(v[:, 0], v[:, 1], v[:, 2])
        p1, _, e1 = _totals(vx, vy, vz)
        assert np.all(np.abs(p1 - p0) <= 1e-12 * scale)
        assert abs(e1 - e0) <= 1e-12 * e0
        cr0 = np.linalg.norm(v[0] - v[1])
        cr1 = math.sqrt((vx[0] - vx[1]) ** 2 + (vy[0] - vy[1]) ** 2 + (vz[0] - vz[1]) ** 2)
        assert cr1 == pytest.approx(cr0, rel=1e-12)


def _scatter_many(alpha, n, rng):
    """Call the kernel ``scatter`` n times; returns incoming and outgoing c_r."""
    u = rng.standard_normal((n, 3)) * rng.uniform(10.0, 2000.0, (n, 1))
    # a tenth exactly along +x or -x: the kernel's special branch (no y-z part)
    k = n // 10
    u[:k, 1:] = 0.0
    u[: k // 2, 0] = np.abs(u[: k // 2, 0])
    u[k // 2:k, 0] = -np.abs(u[k // 2:k, 0])
    return u, _scatter_all(u, alpha, KEY)


@njit
def _scatter_all(u, alpha, key):
    out = np.empty_like(u)
    s = stream(key, 0)
    for i in range(u.shape[0]):
        cr = np.sqrt(u[i, 0] ** 2 + u[i, 1] ** 2 + u[i, 2] ** 2)
        s, out[i, 0], out[i, 1], out[i, 2] = scatter(s, u[i, 0], u[i, 1], u[i, 2], cr, alpha)
    return out


def _vss_cdf(alpha):
    # cos(chi) = 2 R^(1/alpha) - 1  =>  P(cos chi <= c) = ((1 + c) / 2)^alpha
    # (Koura & Matsumoto 1991, Phys. Fluids A 3, VSS deflection law, M)
    return lambda c: np.clip(0.5 * (1.0 + np.asarray(c)), 0.0, 1.0) ** alpha


@pytest.mark.parametrize("alpha", [1.0, 1.4, 1.61])
def test_scatter_vss_angle_law_and_speed(alpha):
    rng = np.random.default_rng(13)
    n = 40000
    u, w = _scatter_many(alpha, n, rng)
    cu = np.linalg.norm(u, axis=1)
    cw = np.linalg.norm(w, axis=1)
    np.testing.assert_allclose(cw, cu, rtol=1e-12)           # |c_r| preserved (exact)
    cosx = np.clip(np.einsum("ij,ij->i", u, w) / (cu * cw), -1.0, 1.0)
    # Koura & Matsumoto 1991 (M): KS against the exact VSS deflection CDF
    p = stats.kstest(cosx, _vss_cdf(alpha)).pvalue
    mean_cos, se_cos = cosx.mean(), cosx.std(ddof=1) / math.sqrt(n)
    exact_cos = (alpha - 1.0) / (alpha + 1.0)     # integral of 2 R^(1/alpha) - 1 over R (S)
    print(f"\nVSS alpha={alpha}: KS p={p:.3f}, <cos chi>={mean_cos:.4f} +/- {se_cos:.4f} "
          f"(exact {exact_cos:.4f})")
    assert p > P_MIN, f"alpha={alpha}: KS p={p:.2e} against the VSS law"
    assert abs(mean_cos - exact_cos) < 3.0 * se_cos
    # power: the same sample against a neighbouring law must fail
    wrong = 1.0 if alpha != 1.0 else 1.2
    assert stats.kstest(cosx, _vss_cdf(wrong)).pvalue < P_WRONG
    # azimuth of the outgoing c_r about the incoming one is uniform on [0, 2 pi)
    # (axial symmetry of the interaction; Bird 1994 ch. 2, M, from memory)
    uh = u / cu[:, None]
    ref = np.where(np.abs(uh[:, 2:3]) < 0.9, np.array([[0.0, 0.0, 1.0]]),
                   np.array([[1.0, 0.0, 0.0]]))
    e1 = np.cross(uh, ref)
    e1 /= np.linalg.norm(e1, axis=1)[:, None]
    e2 = np.cross(uh, e1)
    phi = np.mod(np.arctan2(np.einsum("ij,ij->i", w, e2), np.einsum("ij,ij->i", w, e1)),
                 2.0 * np.pi)
    keep = np.abs(cosx) < 0.999  # azimuth is undefined for near-zero deflection
    assert stats.kstest(phi[keep], stats.uniform(0.0, 2.0 * np.pi).cdf).pvalue > P_MIN


# ============================================================== inflow sampling
def _flux_weighted_cdf(s):
    """CDF of z exp(-(z - s)^2) on z > 0, by numerical integration (S)."""
    def f(z):
        return z * np.exp(-(z - s) ** 2)
    norm = integrate.quad(f, 0.0, np.inf, epsabs=0.0, epsrel=1e-12)[0]
    grid = np.linspace(0.0, max(s, 0.0) + 9.0, 200001)
    cum = integrate.cumulative_simpson(f(grid), x=grid, initial=0.0)
    assert cum[-1] / norm == pytest.approx(1.0, abs=1e-10)  # grid covers the tail
    cdf = cum / norm
    return lambda z: np.interp(z, grid, cdf)


@pytest.mark.parametrize("s", [-1.0, 0.0, 0.5, 2.0])
def test_flux_weighted_normal_distribution(s):
    # Garcia & Wagner 2006, Phys. Fluids 18 (M): inflow normal speed density
    # ~ z exp(-(z - s)^2), z = v_n / v_mp > 0; CDF normalised numerically (S)
    n = 50000
    seed_generator(21)
    z = np.array([flux_weighted_normal(s) for _ in range(n)])
    assert np.all(z > 0.0)
    p = stats.kstest(z, _flux_weighted_cdf(s)).pvalue
    print(f"\nflux-weighted normal s={s}: KS p={p:.3f} over {n} samples")
    assert p > P_MIN, f"s={s}: KS p={p:.2e}"
    # power: a drift wrong by 0.1 v_mp must be detected
    assert stats.kstest(z, _flux_weighted_cdf(s + 0.1)).pvalue < P_WRONG


# ============================================================== counting sort
@pytest.mark.parametrize("n, nkeys, removed", [(5000, 37, 0.1), (3000, 1, 0.3), (400, 900, 0.05),
                                               (50, 8, 1.0), (0, 5, 0.0),
                                               (300001, 5000, 0.02)])  # one chunk per thread
@pytest.mark.parametrize("sort", [counting_sort, counting_sort_par])
def test_counting_sort_matches_stable_argsort(n, nkeys, removed, sort):
    rng = np.random.default_rng(31)
    cap = n + 17
    key = rng.integers(0, nkeys, cap).astype(np.int32)
    key[:n][rng.random(n) < removed] = -1
    key[n:] = rng.integers(-1, nkeys, cap - n)         # stale entries past n are ignored
    src = rng.standard_normal((5, cap))
    dst = np.full((5, cap), np.nan)
    key_start = np.full(nkeys + 1, -3, dtype=np.int64)
    nalive = sort(n, key, nkeys, key_start, src, dst, 2)
    # slow twin: numpy stable argsort of the surviving particles
    alive = np.flatnonzero(key[:n] >= 0)
    order = alive[np.argsort(key[alive], kind="stable")]
    assert nalive == len(alive)
    np.testing.assert_array_equal(dst[:, :nalive], src[:, order])
    expect_start = np.concatenate([[0], np.cumsum(np.bincount(key[alive], minlength=nkeys))])
    np.testing.assert_array_equal(key_start, expect_start)


# ============================================================== cut cells
GRID = dict(x0=0.1, y0=-0.2, dx=0.13, dy=0.11, nx=12, ny=14)


def _rotated_square():
    c = np.array([0.9, 0.55])
    h = 0.33
    a = math.radians(23.0)
    rot = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
    pts = np.array([[-h, -h], [h, -h], [h, h], [-h, h]]) @ rot.T + c
    return pts[:, 0].copy(), pts[:, 1].copy()


def _l_shape():
    px = np.array([0.25, 1.2, 1.2, 0.6, 0.6, 0.25])
    py = np.array([0.1, 0.1, 0.45, 0.45, 1.2, 1.2])
    return px, py


def _l_shape_on_grid_lines():
    g = GRID
    ix = np.array([2, 9, 9, 5, 5, 2])
    iy = np.array([3, 3, 6, 6, 11, 11])
    return g["x0"] + ix * g["dx"], g["y0"] + iy * g["dy"]


def _shoelace(px, py):
    return 0.5 * abs(np.dot(px, np.roll(py, -1)) - np.dot(np.roll(px, -1), py))


def _inside_even_odd(qx, qy, px, py):
    """Slow twin of a point-in-polygon test (ray casting, numpy)."""
    inside = np.zeros(qx.shape, dtype=bool)
    for k in range(len(px)):
        j = (k + 1) % len(px)
        if py[k] == py[j]:
            continue
        cond = (py[k] > qy) != (py[j] > qy)
        xc = px[k] + (qy - py[k]) * (px[j] - px[k]) / (py[j] - py[k])
        inside ^= cond & (qx < xc)
    return inside


def _sampled_areas(px, py, m):
    """Per-cell solid area by m x m midpoint sampling, with a rigorous error bound:
    only sub-squares the boundary passes through (corners of both kinds, or holding a
    vertex) can be misjudged, each by at most its area."""
    g = GRID
    nx, ny, dx, dy = g["nx"], g["ny"], g["dx"], g["dy"]
    hx, hy = dx / m, dy / m
    xm = g["x0"] + (np.arange(nx * m) + 0.5) * hx
    ym = g["y0"] + (np.arange(ny * m) + 0.5) * hy
    qx, qy = np.meshgrid(xm, ym)
    mid = _inside_even_odd(qx, qy, px, py)
    xc = g["x0"] + np.arange(nx * m + 1) * hx
    yc = g["y0"] + np.arange(ny * m + 1) * hy
    cx, cy = np.meshgrid(xc, yc)
    cor = _inside_even_odd(cx, cy, px, py).astype(int)
    s = cor[:-1, :-1] + cor[1:, :-1] + cor[:-1, 1:] + cor[1:, 1:]
    mixed = (s > 0) & (s < 4)
    vi = np.clip(((px - g["x0"]) / hx).astype(int), 0, nx * m - 1)
    vj = np.clip(((py - g["y0"]) / hy).astype(int), 0, ny * m - 1)
    for di in (-1, 0, 1):           # vertex squares and their neighbours (vertex on a line)
        for dj in (-1, 0, 1):
            mixed[np.clip(vj + dj, 0, ny * m - 1), np.clip(vi + di, 0, nx * m - 1)] = True

    def per_cell(a):
        return a.reshape(ny, m, nx, m).sum(axis=(1, 3)).ravel()
    return per_cell(mid) * hx * hy, per_cell(mixed) * hx * hy


@pytest.mark.parametrize("shape", [_rotated_square, _l_shape, _l_shape_on_grid_lines])
@pytest.mark.parametrize("reverse", [False, True])
def test_solid_area_per_cell(shape, reverse):
    px, py = shape()
    if reverse:
        px, py = px[::-1].copy(), py[::-1].copy()
    g = GRID
    out = np.zeros(g["nx"] * g["ny"])
    moment = np.zeros_like(out)
    solid_area_per_cell(px, py, g["x0"], g["y0"], g["dx"], g["dy"], g["nx"], g["ny"], out,
                        moment)
    # exact: the clipped pieces tile the polygon, so they sum to its shoelace area (S)
    assert out.sum() == pytest.approx(_shoelace(px, py), rel=1e-12)
    # and their first moments about the x axis sum to the polygon's (Pappus volumes, S):
    # integral of y dA over the polygon, by midpoint sampling on a fine grid
    xs = np.linspace(px.min(), px.max(), 801)
    ys = np.linspace(py.min(), py.max(), 801)
    xm, ym = np.meshgrid(0.5 * (xs[1:] + xs[:-1]), 0.5 * (ys[1:] + ys[:-1]))
    inside = Path(np.column_stack([px, py])).contains_points(
        np.column_stack([xm.ravel(), ym.ravel()])).reshape(xm.shape)
    ref = (ym * inside).sum() * (xs[1] - xs[0]) * (ys[1] - ys[0])
    assert moment.sum() == pytest.approx(ref, rel=5e-3)
    assert np.all(out >= 0.0) and np.all(out <= g["dx"] * g["dy"] * (1 + 1e-12))
    # slow twin: fine point sampling, per cell, within its rigorous bound
    sampled, bound = _sampled_areas(px, py, 64)
    err = np.abs(out - sampled)
    assert np.all(err <= bound + 1e-12 * g["dx"] * g["dy"]), err.max()
    assert bound.max() < 0.1 * g["dx"] * g["dy"]       # the bound is tight enough to mean much


# ============================================================== move kernel
BOX = np.array([0.0, 1.0, 0.0, 1.0])
NXM = NYM = 4


def _pieces(ymin_row=None):
    """Four whole sides: x periodic; ymin reflecting with ``ymin_row`` (sigma, acc, vel)
    or periodic; ymax pairs with ymin."""
    rows, ints = [], []
    for side in (SIDE_XMIN, SIDE_XMAX):
        rows.append((0.0, 1.0, 0.0, 0.0, 0.0))
        ints.append((side, BND_PERIODIC, 0, 0))
    if ymin_row is None:
        for side in (SIDE_YMIN, SIDE_YMAX):
            rows.append((0.0, 1.0, 0.0, 0.0, 0.0))
            ints.append((side, BND_PERIODIC, 0, 0))
    else:
        rows.append((0.0, 1.0) + tuple(ymin_row))
        ints.append((SIDE_YMIN, BND_REFLECT, 1, 1))
        rows.append((0.0, 1.0, 0.0, 0.0, 0.0))
        ints.append((SIDE_YMAX, BND_REFLECT, 0, 0))   # specular, untallied
    return np.array(rows, dtype=np.float64), np.array(ints, dtype=np.int64)


def _move(x, y, vx, vy, vz, dt, segs, pieces, piece_int, sampling=False, nudge=0.0):
    n = len(x)
    key = np.zeros(n, dtype=np.int32)
    seg_tally = np.array([[0, 1]] * len(segs), dtype=np.int64).reshape(-1, 2)
    stally = np.zeros((2, N_SURF_TALLY))
    ftally = np.zeros((0, N_FLUX_TALLY))
    planes = np.zeros((0, 4))
    free = np.zeros(NXM * NYM, dtype=np.uint8)   # no fast path: every flight is searched
    removed = move_all(n, n, np.zeros(1), dt, x, y, vx, vy, vz, NOINT, IP0, *ONE, key, segs,
                       seg_tally, BOX,
                       pieces, piece_int, planes, stally, ftally, sampling, nudge, NXM, NYM,
                       1.0 / NXM, 1.0 / NYM, 1, free, KEY)
    return removed, key, stally


SPECULAR_CASES = [
    # segment (x0, y0, x1, y1), start (x, y), velocity (vx, vy, vz)
    ((0.2, 0.3, 0.8, 0.7), (0.3, 0.6), (0.5, -1.2, 0.3)),
    ((0.8, 0.7, 0.2, 0.3), (0.3, 0.6), (0.5, -1.2, 0.3)),     # same wall, reversed points
    ((0.2, 0.3, 0.8, 0.7), (0.7, 0.35), (-0.9, 0.8, -0.2)),   # from the other side
    ((0.15, 0.9, 0.85, 0.1), (0.345, 0.647), (0.734, -0.687, 0.0)),  # steep, near grazing
]


@pytest.mark.parametrize("seg, start, vel", SPECULAR_CASES)
def test_specular_segment_reflection_exact(seg, start, vel):
    segs = np.array([seg + (0.0, 0.0, 0.0)])
    pieces, piece_int = _pieces()
    dt, nudge = 0.25, 1e-12
    x, y = np.array([start[0]]), np.array([start[1]])
    vx, vy, vz = (np.array([c]) for c in vel)
    removed, key, tally = _move(x, y, vx, vy, vz, dt, segs, pieces, piece_int, True, nudge)
    # slow twin: line intersection and mirror image
    a, b = np.array(seg[:2]), np.array(seg[2:])
    p, v = np.array(start), np.array(vel[:2])
    t_hit, s_hit = np.linalg.solve(np.column_stack([v, a - b]), a - p)
    assert 0.0 < t_hit < dt and 0.0 < s_hit < 1.0
    e = (b - a) / np.linalg.norm(b - a)
    nrm = np.array([-e[1], e[0]])
    if v @ nrm > 0.0:
        nrm = -nrm                                   # normal into the side we came from
    v_new = v - 2.0 * (v @ nrm) * nrm
    pos = p + v * t_hit + nudge * nrm + v_new * (dt - t_hit)
    assert removed == 0
    np.testing.assert_allclose([vx[0], vy[0]], v_new, rtol=0, atol=1e-14)
    assert vz[0] == vel[2]
    np.testing.assert_allclose([x[0], y[0]], pos, rtol=0, atol=1e-13)
    ix, iy = int(pos[0] * NXM), int(pos[1] * NYM)
    assert key[0] == iy * NXM + ix
    assert tally[0, T_HITS] == 1.0
    assert tally[0, T_VN_IN] == pytest.approx(-(v @ nrm), rel=1e-13)
    assert tally[0, T_VN_OUT] == pytest.approx(-(v @ nrm), rel=1e-13)
    assert tally[0, T_VT_IN] == pytest.approx(v @ e, rel=1e-12, abs=1e-13)
    assert tally[0, T_VT_OUT] == pytest.approx(v @ e, rel=1e-12, abs=1e-13)


def _diffuse_reference(sigma):
    """Mean and mean square of the normal speed re-emitted by a diffuse wall, from the
    flux-weighted half-range Maxwellian v exp(-v^2 / 2 sigma^2), v > 0, by quadrature (S)."""
    def w(v):
        return v * np.exp(-0.5 * v * v / sigma ** 2)
    z = integrate.quad(w, 0.0, np.inf)[0]
    mean = integrate.quad(lambda v: v * w(v), 0.0, np.inf)[0] / z
    mean2 = integrate.quad(lambda v: v * v * w(v), 0.0, np.inf)[0] / z
    return mean, mean2


@pytest.mark.parametrize("where", ["side", "segment"])
def test_diffuse_wall_reemission(where):
    t_wall = 300.0
    sigma = math.sqrt(K_B * t_wall / AR.mass_kg)
    vwall = 50.0
    n = 200000
    rng = np.random.default_rng(41)
    if where == "side":       # the ymin side is the wall; normal +y, tangent +x
        pieces, piece_int = _pieces((sigma, 1.0, vwall))
        segs = np.zeros((0, 7))
        nrm, tan = np.array([0.0, 1.0]), np.array([1.0, 0.0])
        foot = np.column_stack([rng.uniform(0.1, 0.9, n), np.zeros(n)])
    else:                     # an oblique interior wall segment
        pieces, piece_int = _pieces()
        a, b = np.array([0.2, 0.2]), np.array([0.8, 0.6])
        segs = np.array([[*a, *b, sigma, 1.0, vwall]])
        tan = (b - a) / np.linalg.norm(b - a)
        nrm = np.array([-tan[1], tan[0]])            # the gas is on this side
        foot = a + np.outer(rng.uniform(0.05, 0.95, n), b - a)
    start = foot + 1e-3 * nrm
    vin = -100.0 * nrm + rng.uniform(-60.0, 60.0, (n, 1)) * tan
    x, y = start[:, 0].copy(), start[:, 1].copy()
    vx, vy = vin[:, 0].copy(), vin[:, 1].copy()
    vz = rng.standard_normal(n)
    removed, _, tally = _move(x, y, vx, vy, vz, 2e-5, segs, pieces, piece_int, True)
    assert removed == 0
    assert tally[0 if where == "segment" else 1, T_HITS] == n     # every particle hit once
    v = np.column_stack([vx, vy])
    vn, vt = v @ nrm, v @ tan
    assert np.all(vn > 0.0)
    mean_ref, mean2_ref = _diffuse_reference(sigma)
    # sqrt(pi k T / (2 m)): mean of the flux-weighted half-range Maxwellian (common
    # kinetic theory; Bird 1994 ch. 4 flux distribution, M, from memory); quadrature (S)
    assert mean_ref == pytest.approx(math.sqrt(math.pi * K_B * t_wall / (2 * AR.mass_kg)),
                                     rel=1e-9)
    se = vn.std(ddof=1) / math.sqrt(n)
    print(f"\ndiffuse {where}: <v_n> = {vn.mean():.3f} +/- {se:.3f} m/s, reference "
          f"{mean_ref:.3f}; <v_t> = {vt.mean():.3f} +/- {vt.std() / math.sqrt(n):.3f} "
          f"(wall {vwall}); var v_z / sigma^2 = {vz.var() / sigma ** 2:.4f}")
    assert abs(vn.mean() - mean_ref) < 3.0 * se, (vn.mean(), mean_ref, se)
    assert 3.0 * se < 0.01 * mean_ref                 # the check resolves 1 % at least
    se2 = (vn ** 2).std(ddof=1) / math.sqrt(n)
    assert abs((vn ** 2).mean() - mean2_ref) < 3.0 * se2   # <v_n^2> = 2 k T / m (S)
    # normal speed: Rayleigh CDF 1 - exp(-v^2 / 2 sigma^2) (same distribution, exact)
    assert stats.kstest(vn, lambda q: 1.0 - np.exp(-0.5 * q * q / sigma ** 2)).pvalue > P_MIN
    # tangential components: Gaussian, variance k T_w / m, drifting with the wall
    # (Bird 1994 sec. 12.3 diffuse reflection, M, from memory)
    for comp, drift in ((vt, vwall), (vz, 0.0)):
        assert abs(comp.mean() - drift) < 3.0 * comp.std(ddof=1) / math.sqrt(n)
        dev2 = (comp - drift) ** 2
        assert abs(dev2.mean() - sigma ** 2) < 3.0 * dev2.std(ddof=1) / math.sqrt(n)


CORNER_CASE = """
[gas]
species = "Ar"
[domain]
x = ["0 mm", "20 mm"]
y = ["0 mm", "20 mm"]
depth = "1 mm"
[boundaries.xmin]
kind = "periodic"
[boundaries.xmax]
kind = "periodic"
[boundaries.ymin]
kind = "periodic"
[boundaries.ymax]
kind = "periodic"
[[walls]]
name = "plate"
points = [["5.6 mm", "13.2 mm"], ["15.1 mm", "5.9 mm"]]
surface = "specular"
[initial]
pressure = "1 Pa"
temperature = "300 K"
[resolution]
cell_size = "1 mm"
time_step = "1 us"
"""


def _cells_crossed(seg, x0, y0, dx, dy, nx, ny):
    """Slow twin: every cell whose interior the segment enters (Liang-Barsky clipping)."""
    ax, ay, bx, by = seg
    out = []
    for j in range(ny):
        for i in range(nx):
            t0, t1 = 0.0, 1.0
            for p, q in ((ax - bx, ax - (x0 + i * dx)), (bx - ax, x0 + (i + 1) * dx - ax),
                         (ay - by, ay - (y0 + j * dy)), (by - ay, y0 + (j + 1) * dy - ay)):
                if p == 0.0:
                    if q < 0.0:
                        t0, t1 = 1.0, 0.0
                elif p < 0.0:
                    t0 = max(t0, q / p)
                else:
                    t1 = min(t1, q / p)
            if t1 > t0:
                out.append((i, j))
    return out


def test_fast_path_never_skips_a_wall():
    # exact: a specular plate must turn back every molecule that reaches it, whether or
    # not the flight starts in a cell marked free of walls
    from rarefy.case import parse_case
    from rarefy.geometry.planar import build_geometry
    from rarefy.plan import make_plan
    case = parse_case(CORNER_CASE)
    plan = make_plan(case)
    g = build_geometry(case, plan)
    seg = tuple(g.segs[0, :4])
    # the flight (4.96, 11.96) mm -> (5.955, 12.955) mm crosses the plate's corner clip of
    # cell (5, 12); it is shorter than a cell in x and y, so it may take the fast path
    x, y = np.array([4.96e-3]), np.array([11.96e-3])
    vx, vy, vz = np.array([995.0]), np.array([995.0]), np.zeros(1)
    ex, ey = seg[2] - seg[0], seg[3] - seg[1]
    side0 = np.sign(ex * (y[0] - seg[1]) - ey * (x[0] - seg[0]))
    key = np.zeros(1, dtype=np.int32)
    move_all(1, 1, np.zeros(1), plan.time_step_s, x, y, vx, vy, vz, NOINT, IP0, *ONE, key,
             g.segs,
             g.seg_tally, g.box, g.pieces, g.piece_int, g.planes,
             np.zeros((len(g.facet_owner), N_SURF_TALLY)),
             np.zeros((0, N_FLUX_TALLY)), False, 1e-12 * 20e-3, g.nx, g.ny, g.dx, g.dy,
             plan.subcells, g.free, KEY)
    side1 = np.sign(ex * (y[0] - seg[1]) - ey * (x[0] - seg[0]))
    assert side1 == side0, "the molecule flew through the plate"
    # the invariant the fast path relies on: no free cell next to a cell the wall enters
    free = g.free.reshape(g.ny, g.nx)
    for i, j in _cells_crossed(seg, g.box[0], g.box[2], g.dx, g.dy, g.nx, g.ny):
        block = free[max(j - 1, 0):j + 2, max(i - 1, 0):i + 2]
        assert not block.any(), f"cell ({i}, {j}) is crossed but has a free neighbour"
