"""Axisymmetric free flight (``rarefy.kernels.move_axi``) against slow twins and exact
invariants.

Tags as in shared/reference/published-values.md: S computed independently here (method
stated beside the check). Everything here is exact geometry or an exact conservation law
of straight 3-D flight; the random draws (fixed seeds) only choose the test cases.

Exact invariants used (S, elementary mechanics): a straight flight in 3-D keeps the speed
and the angular momentum about the x axis, y v_z - z v_y, which in the (x, r) frame is
r * v_theta; a specular reflection from a surface of revolution has its normal in the
meridional plane, so it keeps v_theta and r, hence r * v_theta as well; a cylinder flips
only v_r and an end disk only v_x, so inside a closed specular can |v_x| and
v_r^2 + v_theta^2 are kept separately.
"""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from rarefy.kernels.config import (
    BND_ABSORB, BND_PERIODIC, BND_REFLECT, N_FLUX_TALLY, N_SURF_TALLY, SIDE_XMAX, SIDE_XMIN,
    SIDE_YMAX, SIDE_YMIN, T_HITS, N_INTERNAL_PAR,
)
from rarefy.kernels.rng import step_key
from rarefy.kernels.move_axi import move_all_axi, rotate_to, surface_hit


# ============================================================== surface_hit vs slow twin
def _radius(px, pr, ux, ur, ut, t):
    return np.hypot(pr + ur * t, ut * t)


def _brute_hit(px, pr, ux, ur, ut, ax, ar, bx, br, tmin, t_end=8.0, npts=50001):
    """Slow twin (S): sample the straight 3-D flight finely on (tmin, t_end], find where
    it changes side of the surface of revolution of a-b (disk: x - ax; cone or cylinder:
    r(t) minus the surface's radius at x(t)), refine by bisection, keep the first root
    that lies on the segment. Returns (t, s) or (inf, -1)."""
    ex, er = bx - ax, br - ar
    if ex == 0.0:
        def f(t):
            return px + ux * t - ax
    else:
        def f(t):
            s = (px + ux * t - ax) / ex
            return _radius(px, pr, ux, ur, ut, t) - (ar + er * s)
    # the grid starts just after tmin so a root at tmin itself is not found again
    ts = np.linspace(tmin + 1e-9 * t_end, t_end, npts)
    fs = f(ts)
    idx = np.nonzero(np.sign(fs[:-1]) * np.sign(fs[1:]) < 0.0)[0]
    for i in idx:
        t = brentq(f, ts[i], ts[i + 1], xtol=1e-15, rtol=1e-15, maxiter=200)
        if ex == 0.0:
            s = (_radius(px, pr, ux, ur, ut, t) - ar) / er
        else:
            s = (px + ux * t - ax) / ex
        if 0.0 <= s <= 1.0:
            return t, s
    return math.inf, -1.0


def _random_segment(kind, rng):
    if kind == "disk":
        ax = bx = rng.uniform(-1.0, 1.0)
        ar, br = rng.uniform(0.0, 1.0, 2)
        if rng.random() < 0.3:
            ar = 0.0                               # a disk from the axis
    elif kind == "cylinder":
        ax, bx = rng.uniform(-1.0, 1.0, 2)
        ar = br = rng.uniform(0.1, 1.0)
    else:                                          # cone, converging or diverging
        ax, bx = rng.uniform(-1.0, 1.0, 2)
        ar, br = rng.uniform(0.0, 1.0, 2)
        if kind == "cone_up" and (bx - ax) * (br - ar) < 0.0:
            ar, br = br, ar                        # radius grows with x
        if kind == "cone_down" and (bx - ax) * (br - ar) > 0.0:
            ar, br = br, ar                        # radius shrinks with x
    return ax, ar, bx, br


@pytest.mark.parametrize("kind", ["disk", "cylinder", "cone_up", "cone_down"])
def test_surface_hit_matches_brute_force(kind):
    # S: slow twin by sampling the straight 3-D line (no quadratic formula), over random
    # segments, starting points inside and outside, and isotropic unit velocities; the
    # second crossing (tmin = first hit) is checked as well, as flux planes need it
    rng = np.random.default_rng({"disk": 1, "cylinder": 2, "cone_up": 3, "cone_down": 4}[kind])
    hits = second = inside = 0
    for _ in range(300):
        ax, ar, bx, br = _random_segment(kind, rng)
        px, pr = rng.uniform(-1.5, 1.5), rng.uniform(0.0, 1.3)
        u = rng.standard_normal(3)
        if rng.random() < 0.7:     # aim at a random point of the surface, so most meet it
            f, phi = rng.random(), rng.uniform(0.0, 2.0 * math.pi)
            rho = ar + f * (br - ar)
            u = np.array([ax + f * (bx - ax) - px, rho * math.cos(phi) - pr,
                          rho * math.sin(phi)]) + 0.05 * u
        ux, ur, ut = u / np.linalg.norm(u)
        tk, sk = surface_hit(px, pr, ux, ur, ut, ax, ar, bx, br, 0.0)
        tb, sb = _brute_hit(px, pr, ux, ur, ut, ax, ar, bx, br, 0.0)
        case = (kind, px, pr, ux, ur, ut, ax, ar, bx, br)
        if math.isinf(tb):
            assert math.isinf(tk) and sk == -1.0, case
            continue
        hits += 1
        if kind == "cylinder" and pr < ar and min(ax, bx) < px < max(ax, bx):
            inside += 1
        assert tk == pytest.approx(tb, rel=1e-9, abs=1e-12), case
        assert sk == pytest.approx(sb, rel=1e-9, abs=1e-9), case
        # the same surface with its points given in reverse order: same time, 1 - s
        tr, sr = surface_hit(px, pr, ux, ur, ut, bx, br, ax, ar, 0.0)
        assert tr == pytest.approx(tk, rel=1e-12, abs=1e-14), case
        assert sr == pytest.approx(1.0 - sk, rel=1e-9, abs=1e-9), case
        # the hit point lies on the surface (round-off of near-grazing roots: 1e-10)
        hx, hr = px + ux * tk, _radius(px, pr, ux, ur, ut, tk)
        assert hx == pytest.approx(ax + sk * (bx - ax), abs=1e-10)
        assert hr == pytest.approx(ar + sk * (br - ar), abs=1e-10)
        # second crossing, searched after the first
        t2k, s2k = surface_hit(px, pr, ux, ur, ut, ax, ar, bx, br, tk)
        t2b, s2b = _brute_hit(px, pr, ux, ur, ut, ax, ar, bx, br, tk)
        if math.isinf(t2b):
            assert math.isinf(t2k), case
        else:
            second += 1
            assert t2k == pytest.approx(t2b, rel=1e-9, abs=1e-12), case
            assert s2k == pytest.approx(s2b, rel=1e-9, abs=1e-9), case
    # enough of the draws meet the surface for the comparison to mean something
    assert hits >= 150, hits
    if kind != "disk":
        assert second >= 30, second
    if kind == "cylinder":
        assert inside >= 20, inside


# exact cases worked by hand (S): (start x, r), velocity, segment a -> b, (t, s)
EXACT_CASES = [
    ((0.0, 0.5), (1.0, 0.0, 0.0), (1.0, 0.0, 1.0, 1.0), (1.0, 0.5)),           # disk
    ((0.0, 0.5), (1.0, 0.0, 0.0), (1.0, 1.0, 1.0, 0.0), (1.0, 0.5)),           # reversed
    ((0.0, 0.2), (1.0, 0.0, 0.6), (2.0, 0.5, 2.0, 1.5), (2.0, math.hypot(0.2, 1.2) - 0.5)),
    #   annulus, met at t = 2 where y = 0.2, z = 1.2
    ((0.5, 0.0), (0.0, 0.0, 1.0), (0.0, 1.0, 2.0, 1.0), (1.0, 0.25)),          # cylinder,
    #   from the axis, azimuthal
    ((1.0, 0.5), (0.0, 0.0, 1.0), (0.0, 1.0, 2.0, 1.0), (math.sqrt(0.75), 0.5)),  # inside,
    #   azimuthal flight: r(t)^2 = 0.25 + t^2
    ((1.0, 2.0), (0.0, -1.0, 0.0), (0.0, 1.0, 2.0, 1.0), (1.0, 0.5)),          # outside
    ((1.0, 2.0), (0.0, 0.0, 1.0), (0.0, 1.0, 2.0, 1.0), (math.inf, -1.0)),     # outside,
    #   azimuthal flight: r(t)^2 = 4 + t^2 never reaches 1
    ((1.0, 2.0), (0.0, 1.0, 0.0), (0.0, 1.0, 2.0, 1.0), (math.inf, -1.0)),     # moving out
    ((0.5, 1.0), (0.0, -1.0, 0.0), (0.0, 0.0, 1.0, 1.0), (0.5, 0.5)),          # 45 deg cone
    ((0.5, 1.0), (0.0, -1.0, 0.0), (1.0, 1.0, 0.0, 0.0), (0.5, 0.5)),          # reversed
    ((0.0, 0.25), (1.0, 0.0, 0.0), (0.0, 1.0, 1.0, 0.0), (0.75, 0.75)),        # converging
    #   cone r = 1 - x met by the axial flight at r = 0.25
    ((-1.0, 0.5), (1.0, 0.0, 0.0), (0.0, 0.0, 1.0, 1.0), (1.5, 0.5)),          # apex first:
    #   the mirror cone r = -x at x = -0.5 must not count
]


@pytest.mark.parametrize("start, vel, seg, expect", EXACT_CASES)
def test_surface_hit_exact_cases(start, vel, seg, expect):
    t, s = surface_hit(*start, *vel, *seg, 0.0)
    if math.isinf(expect[0]):
        assert math.isinf(t) and s == -1.0
    else:
        assert t == pytest.approx(expect[0], rel=1e-14)
        assert s == pytest.approx(expect[1], rel=1e-12, abs=1e-14)


# ============================================================== rotate_to
def test_rotate_to_keeps_speed_and_angular_momentum():
    # S: after a flight of time t from (x, r, 0), the 3-D position is (r + vr t, vt t);
    # the rotated radius must equal its distance from the axis, the in-plane speed
    # sqrt(vr^2 + vt^2) is unchanged and r * vt = r0 * vt0 (angular momentum about x)
    rng = np.random.default_rng(7)
    for _ in range(20000):
        pr = rng.uniform(0.0, 1.0) if rng.random() < 0.9 else 0.0
        ur, ut = rng.standard_normal(2)
        t = rng.exponential(1.0)
        r, vr, vt = rotate_to(pr, ur, ut, t)
        speed = math.hypot(ur, ut)
        assert r == pytest.approx(math.hypot(pr + ur * t, ut * t), rel=1e-14, abs=1e-300)
        assert math.hypot(vr, vt) == pytest.approx(speed, rel=1e-13)
        assert r * vt == pytest.approx(pr * ut, rel=1e-11, abs=1e-13 * (1.0 + speed))
        # the radial velocity is the rate of change of r: dr/dt = (y vy + z vz) / r
        y, z = pr + ur * t, ut * t
        if r > 1e-8:
            assert vr == pytest.approx((y * ur + z * ut) / r, rel=1e-12, abs=1e-14)
    # a flight that ends on the axis keeps its speed too
    r, vr, vt = rotate_to(0.5, -2.0, 0.0, 0.25)
    assert r == 0.0 and vr == pytest.approx(2.0) and vt == 0.0


# ============================================================== specular cans
NUDGE = 1e-12
KEY = step_key(2024, 0, 2)   # a fixed key for the per-particle streams
NOINT = np.zeros((0, 1))     # no internal-energy rows (monatomic)
IP0 = np.zeros((1, N_INTERNAL_PAR))
ONE = (np.zeros(1), np.ones(1))     # one species: species row (unread), sigma factors


def _move(x, r, vx, vr, vt, dt, segs, pieces, piece_int, box, nx, ny, free, weights=None,
          stally=None, seg_tally=None):
    """One step of move_all_axi with unit row weights (unless ``weights``); wall hits are
    tallied into ``stally`` when given (facets as in ``seg_tally`` and ``piece_int``)."""
    n = len(x)
    key = np.zeros(n, dtype=np.int32)
    if seg_tally is None:
        seg_tally = np.zeros((len(segs), 2), dtype=np.int64)
    sampling = stally is not None
    if stally is None:
        stally = np.zeros((0, N_SURF_TALLY))
    row_weight = np.ones(ny) if weights is None else weights
    m, lost = move_all_axi(n, n, np.zeros(1), dt, x, r, vx, vr, vt, NOINT, IP0, *ONE, key,
                           segs,
                           seg_tally, box,
                           pieces, piece_int, np.zeros((0, 4)), stally,
                           np.zeros((0, N_FLUX_TALLY)), sampling, NUDGE, nx, ny,
                           (box[1] - box[0]) / nx, (box[3] - box[2]) / ny, 1, free,
                           row_weight, n, np.zeros((2, ny)), KEY)
    return m, lost, key


def _fill_can(n, x0, x1, radius, rng):
    """Uniform in the volume of the can, isotropic unit velocities."""
    x = rng.uniform(x0, x1, n)
    r = radius * np.sqrt(rng.random(n))
    v = rng.standard_normal((n, 3))
    v /= np.linalg.norm(v, axis=1)[:, None]
    return x, r, v[:, 0].copy(), v[:, 1].copy(), v[:, 2].copy()


def _check_invariants(x, r, vx, vr, vt, ax0, perp0, lz0):
    np.testing.assert_allclose(np.abs(vx), ax0, rtol=0, atol=1e-12)
    np.testing.assert_allclose(np.hypot(vr, vt), perp0, rtol=0, atol=1e-12)
    # every wall hit moves the molecule NUDGE off the wall, changing r v_theta by up to
    # NUDGE |v|: a few hundred hits allow 1e-9 at most
    np.testing.assert_allclose(r * vt, lz0, rtol=0, atol=1e-9)


def test_specular_can_of_wall_segments_never_leaks():
    # A closed can made of three wall segments (end disks and a cylinder) inside an
    # absorbing box: 1e4 molecules bounce specularly for 60 steps (more than 50 wall hits
    # each, counted). None may leave (the box sides would remove it) and every flight
    # keeps |v_x|, v_r^2 + v_theta^2 and r v_theta (exact invariants, S).
    x0, x1, rw = 0.2, 0.8, 0.6
    segs = np.array([[x0, 0.0, x0, rw, 0.0, 0.0, 0.0],     # end disk (specular: acc 0)
                     [x0, rw, x1, rw, 0.0, 0.0, 0.0],      # cylinder
                     [x1, rw, x1, 0.0, 0.0, 0.0, 0.0]])    # end disk, reversed points
    seg_tally = np.array([[0, 1], [1, 1], [2, 1]], dtype=np.int64)
    stally = np.zeros((3, N_SURF_TALLY))
    box = np.array([0.0, 1.0, 0.0, 1.0])
    pieces = np.array([[0.0, 1.0, 0.0, 0.0, 0.0]] * 4)
    piece_int = np.array([[s, BND_ABSORB, 0, 0] for s in (SIDE_XMIN, SIDE_XMAX, SIDE_YMIN,
                                                            SIDE_YMAX)], dtype=np.int64)
    nx = ny = 5
    free = np.zeros(nx * ny, dtype=np.uint8)     # walls everywhere: no fast path
    rng = np.random.default_rng(3)
    n = 10000
    x, r, vx, vr, vt = _fill_can(n, x0, x1, rw, rng)
    ax0, perp0, lz0 = np.abs(vx), np.hypot(vr, vt), r * vt
    for _ in range(60):
        m, lost, key = _move(x, r, vx, vr, vt, 1.0, segs, pieces, piece_int, box, nx, ny, free,
                             stally=stally, seg_tally=seg_tally)
        assert m == n and lost == 0
        assert np.all(key >= 0), "a molecule left the can"
        assert np.all((x > x0) & (x < x1)), (x.min(), x.max())
        assert np.all(r < rw) and np.all(r >= 0.0), r.max()
        _check_invariants(x, r, vx, vr, vt, ax0, perp0, lz0)
    hits = stally[:, T_HITS]
    print(f"\nspecular can: wall hits per molecule: disks {hits[0] / n:.1f}, "
          f"{hits[2] / n:.1f}; cylinder {hits[1] / n:.1f}")
    assert hits.sum() > 50 * n and hits.min() > 10 * n


@pytest.mark.parametrize("fast", [False, True])
def test_specular_outer_cylinder_side_never_leaks(fast):
    # The domain's own outer cylinder (side ymax) as a specular wall, periodic in x: 1e4
    # molecules, with and without the fast path (which must hand every flight that could
    # reach r = R to the full search), until each has hit the wall 20 times on average
    # (counted). Nothing may cross r = R and the exact invariants hold (S).
    box = np.array([0.0, 1.0, 0.0, 1.0])
    pieces = np.array([[0.0, 1.0, 0.0, 0.0, 0.0]] * 4)
    piece_int = np.array([[SIDE_XMIN, BND_PERIODIC, 0, 0], [SIDE_XMAX, BND_PERIODIC, 0, 0],
                          [SIDE_YMIN, BND_ABSORB, 0, 0], [SIDE_YMAX, BND_REFLECT, 0, 1]],
                         dtype=np.int64)
    stally = np.zeros((1, N_SURF_TALLY))
    nx = ny = 8
    free = np.full(nx * ny, 1 if fast else 0, dtype=np.uint8)
    rng = np.random.default_rng(5 + fast)
    n = 10000
    x, r, vx, vr, vt = _fill_can(n, 0.0, 1.0, 1.0, rng)
    dt = 0.1 if fast else 1.5        # short steps: most flights take the fast path
    perp0, lz0 = np.hypot(vr, vt), r * vt
    speed0 = np.sqrt(vx * vx + perp0 ** 2)
    steps = 0
    while stally[0, T_HITS] < 20 * n:
        m, lost, key = _move(x, r, vx, vr, vt, dt, np.zeros((0, 7)), pieces, piece_int, box,
                             nx, ny, free, stally=stally)
        steps += 1
        assert m == n and lost == 0 and np.all(key >= 0)
        assert np.all(r < 1.0) and np.all(r >= 0.0), r.max()
        assert np.all((x >= 0.0) & (x <= 1.0))
        np.testing.assert_allclose(np.sqrt(vx * vx + vr * vr + vt * vt), speed0, atol=1e-12)
        np.testing.assert_allclose(np.hypot(vr, vt), perp0, rtol=0, atol=1e-12)
        np.testing.assert_allclose(r * vt, lz0, rtol=0, atol=1e-9)   # NUDGE per hit
    print(f"\nouter cylinder ({'fast path' if fast else 'full search'}): {steps} steps")
    assert steps < 2000


def test_radial_weights_unbiased_in_one_step():
    # One step of 5e4 molecules in a specular cylinder with rows of weight 2j + 1. The
    # flights are deterministic (specular walls), so a twin run with unit weights gives
    # each molecule's end row j1 from its start row j0; the weighted run must then put,
    # in expectation, w0 / w1 particles into row j1 for each molecule: survival with
    # probability w0 / w1 < 1, or 1 + int(w0 / w1 - 1 + U) copies (Bird 1994 sec. 15.2,
    # M, from memory; the expectation and its variance, p (1 - p) or f (1 - f) with f
    # the fractional part, are exact, S). Checked per end row and in total over 8 seeds,
    # within 4 standard deviations; the total's deviation must be able to show a 1 % bias.
    box = np.array([0.0, 1.0, 0.0, 1.0])
    pieces = np.array([[0.0, 1.0, 0.0, 0.0, 0.0]] * 4)
    piece_int = np.array([[SIDE_XMIN, BND_PERIODIC, 0, 0], [SIDE_XMAX, BND_PERIODIC, 0, 0],
                          [SIDE_YMIN, BND_ABSORB, 0, 0], [SIDE_YMAX, BND_REFLECT, 0, 0]],
                         dtype=np.int64)
    nx, ny, n, cap = 4, 10, 50000, 400000
    weights = 2.0 * np.arange(ny) + 1.0
    free = np.zeros(nx * ny, dtype=np.uint8)
    rng = np.random.default_rng(11)
    start = _fill_can(n, 0.0, 1.0, 1.0, rng)
    j0 = np.minimum((start[1] * ny).astype(np.int64), ny - 1)
    twin = [a.copy() for a in start]
    m, lost, _ = _move(*twin, 0.3, np.zeros((0, 7)), pieces, piece_int, box, nx, ny, free)
    assert m == n and lost == 0
    j1 = np.minimum((twin[1] * ny).astype(np.int64), ny - 1)
    ratio = weights[j0] / weights[j1]
    assert np.mean(j1 != j0) > 0.5                 # most molecules change row
    frac = np.where(ratio < 1.0, ratio, ratio - np.floor(ratio))
    var = frac * (1.0 - frac)
    expect_row = np.bincount(j1, weights=ratio, minlength=ny)
    var_row = np.bincount(j1, weights=var, minlength=ny)
    seeds = range(8)
    got_row = np.zeros(ny)
    for seed in seeds:
        arrays = []
        for a in start:
            b = np.zeros(cap)
            b[:n] = a
            arrays.append(b)
        key = np.zeros(cap, dtype=np.int32)
        m, lost = move_all_axi(n, n, np.zeros(1), 0.3, *arrays, NOINT, IP0, *ONE, key,
                               np.zeros((0, 7)),
                               np.zeros((0, 2), dtype=np.int64), box, pieces, piece_int,
                               np.zeros((0, 4)), np.zeros((0, N_SURF_TALLY)),
                               np.zeros((0, N_FLUX_TALLY)), False, NUDGE, nx, ny, 1.0 / nx,
                               1.0 / ny, 1, free, weights, cap,
                               np.random.default_rng(seed).random((2, ny)), KEY)
        assert lost == 0
        # the flights themselves are those of the twin, duplicates are exact copies
        np.testing.assert_array_equal(arrays[1][:n], twin[1])
        alive = np.concatenate([key[:n] >= 0, np.ones(m - n, dtype=bool)])
        assert np.all(key[n:m] >= 0)
        r_end = arrays[1][:m][alive]
        got_row += np.bincount(np.minimum((r_end * ny).astype(np.int64), ny - 1),
                               minlength=ny)
    k = len(seeds)
    sd_row = np.sqrt(k * var_row)
    print("\nrow: particles expected, got, sd:",
          [(round(k * e), int(g), round(s_)) for e, g, s_ in zip(expect_row, got_row, sd_row)])
    assert np.all(np.abs(got_row - k * expect_row) <= 4.0 * sd_row + 1e-9)
    # total number of molecules stood for (weights), expected: the starting total
    w_expect = k * np.sum(weights[j0])
    w_got = np.sum(got_row * weights)
    w_sd = math.sqrt(k * np.sum(var * weights[j1] ** 2))
    print(f"molecules: expected {w_expect:.0f}, got {w_got:.0f} +- {w_sd:.0f}")
    assert abs(w_got - w_expect) <= 4.0 * w_sd
    assert 4.0 * w_sd < 0.01 * w_expect


CLOSED_CAN = """
[gas]
species = "Ar"
[domain]
geometry = "axisymmetric"
x = ["0 mm", "4 mm"]
y = ["0 mm", "2 mm"]
[boundaries.xmin]
kind = "wall"
surface = "specular"
[boundaries.xmax]
kind = "wall"
surface = "specular"
[boundaries.ymin]
kind = "axis"
[boundaries.ymax]
kind = "wall"
surface = "specular"
[initial]
pressure = "1e-5 Pa"
temperature = "300 K"
[resolution]
cell_size = "0.25 mm"
particles_per_cell = 20
time_step = "1 us"
"""


def test_closed_specular_cylinder_keeps_every_molecule():
    # The whole engine (radial weights with duplicates and deletions, sorting, the
    # collision step) on a closed specular cylinder with practically no collisions
    # (1e-5 Pa: mean free path about 700 m): after every step every particle is inside
    # the domain and no duplicate is dropped for want of room (exact). The number of
    # molecules the particles stand for, sum of F_N (2j + 1), is kept only in the mean
    # (checked above); without collisions or diffuse walls duplicates never decorrelate,
    # so it wanders widely and is only printed here.
    from rarefy.case import parse_case
    from rarefy.engine.simulation import Simulation
    from rarefy.plan import make_plan
    case = parse_case(CLOSED_CAN)
    plan = make_plan(case)
    sim = Simulation(case, plan, seed=21)
    g = sim.geom
    st = sim.store

    def molecules():
        rows = np.minimum((st.state[1, :st.n] / g.dy).astype(np.int64), g.ny - 1)
        return sim.fnum * g.row_weight[rows].sum()

    n_start = molecules()
    totals = []
    for _ in range(300):
        sim.step(False)
        s = st.state[:, :st.n]
        assert np.all((s[0] >= g.box[0]) & (s[0] <= g.box[1])), "left through an end wall"
        assert np.all((s[1] >= 0.0) & (s[1] <= g.box[3])), "left through the cylinder"
        totals.append(molecules())
    assert sim.lost_duplicates == 0
    drift = np.array(totals) / n_start - 1.0
    print(f"\nclosed specular cylinder: {st.n} particles at the end; molecule count "
          f"drift {drift[-1] * 100:+.2f} % (largest {np.abs(drift).max() * 100:.2f} %)")
    assert st.n > 0
