"""Free-molecular transmission probabilities of a round tube and a 2-D slot.

Diffuse (cosine-law) re-emission at the walls, cosine-distributed entry, no
intermolecular collisions. The wall emission density obeys a Fredholm equation of the
second kind (Clausing's integral equation for the tube, P. Clausing, Ann. Phys. 12,
961 (1932); the analogous plate-to-plate equation for the slot). Both are solved here
by a Nystrom method on composite Gauss-Legendre panels.

Method
------
The solution is analytic on the closed interval (the sources and kernels are analytic
in a strip about the real axis: branch points at +/- 2i in units of R for the tube, at
+/- i in units of H for the slot), so panels of fixed length with ``order`` Gauss
points converge geometrically; no grading towards the ends is needed. The tube kernel
has a kink at zero separation (a ``|u|`` term), so on each panel's own block the plain
Gauss weights are replaced by product-integration weights: the integral of the kernel
times each Lagrange basis polynomial, split at the target node and computed with twice
as many Gauss points on each side. The slot kernel is smooth and needs no correction.
Halving the panel length changes the result by less than 1e-12 (see the tests).

Lengths are dimensionless: ``l_over_r`` (tube length / radius), ``l_over_h`` (slot
length / gap). Conductance follows as ``C = W * A * cbar / 4``.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from numpy.polynomial import legendre as _leg

__all__ = [
    "channel_transmission",
    "channel_transmission_direct",
    "tube_transmission",
    "tube_transmission_direct",
    "tube_transmission_long",
]

_ORDER = 12  # Gauss points per panel
_TUBE_PANEL = 2.0  # maximum panel length, units of R
_SLOT_PANEL = 1.0  # maximum panel length, units of H


# ---------------------------------------------------------------- tube geometry
def _tube_kernel(u):
    """Ring-to-ring kernel of a cylinder of unit radius, written without cancellation.

    K(u) = 1/2 - |u| (u^2 + 6) / (2 (u^2 + 4)^(3/2)) = -dF/du, F from `_tube_view`.
    """
    a2 = np.asarray(u, dtype=float) ** 2
    a = np.sqrt(a2)
    s3 = (a2 + 4.0) ** 1.5
    return (6.0 * a2 + 32.0) / (s3 * (s3 + a * (a2 + 6.0)))


def _tube_view(x):
    """View factor from a wall ring to an end disk at axial distance ``x`` (units R).

    F(x) = (x^2 + 2) / (2 sqrt(x^2 + 4)) - x/2, written without cancellation.
    """
    x = np.asarray(x, dtype=float)
    s = np.sqrt(x * x + 4.0)
    return 2.0 / (s * (x * x + 2.0 + x * s))


# ---------------------------------------------------------------- slot geometry
def _slot_kernel(u):
    """Plate-to-opposite-plate kernel, gap 1: cos(th1) cos(th2) / (2 r) = 1/(2 r^3)."""
    return 0.5 / (1.0 + np.asarray(u, dtype=float) ** 2) ** 1.5


def _slot_view(x):
    """View factor from a plate line element to the end opening at distance ``x`` (gap 1).

    F(x) = (1 - x / sqrt(1 + x^2)) / 2, written without cancellation.
    """
    x = np.asarray(x, dtype=float)
    s = np.sqrt(1.0 + x * x)
    return 0.5 / (s * (s + x))


# ---------------------------------------------------------------- Nystrom solver
def _self_block(kernel, h: float, order: int) -> np.ndarray:
    """Product-integration weights B[i, j] = int_0^h K(x_i - y) L_j(y) dy on one panel."""
    t, _ = _leg.leggauss(order)
    inv_v = np.linalg.inv(_leg.legvander(t, order - 1))
    tq, wq = _leg.leggauss(2 * order)
    x = 0.5 * h * (t + 1.0)
    block = np.empty((order, order))
    for i, xi in enumerate(x):
        row = np.zeros(order)
        for lo, hi in ((0.0, xi), (xi, h)):
            y = lo + 0.5 * (hi - lo) * (tq + 1.0)
            basis = _leg.legvander(2.0 * y / h - 1.0, order - 1) @ inv_v
            row += (0.5 * (hi - lo) * wq * kernel(xi - y)) @ basis
        block[i] = row
    return block


def _nystrom(kernel, view, ell: float, panel: float, order: int, kinked: bool):
    """Solve n = view(x) + int_0^ell K(x - y) n(y) dy; return nodes, weights, n."""
    m = max(1, int(np.ceil(ell / panel - 1e-12)))
    h = ell / m
    t, w = _leg.leggauss(order)
    x = (np.arange(m)[:, None] * h + 0.5 * h * (t + 1.0)).ravel()
    wx = np.tile(0.5 * h * w, m)
    a = kernel(x[:, None] - x[None, :]) * wx[None, :]
    if kinked:
        block = _self_block(kernel, h, order)
        for p in range(m):
            s = slice(p * order, (p + 1) * order)
            a[s, s] = block
    n = np.linalg.solve(np.eye(x.size) - a, view(x))
    return x, wx, n


def _check_length(value: float, name: str) -> float:
    value = float(value)
    if not np.isfinite(value) or value < 0.0:
        raise ValueError(f"{name} must be finite and >= 0, got {value!r}")
    return value


# ---------------------------------------------------------------- public API
def tube_transmission_direct(l_over_r: float) -> float:
    """Uncollided (line-of-sight) part of the round-tube transmission probability.

    Parameters
    ----------
    l_over_r : float
        Tube length over radius, L/R >= 0.

    Returns
    -------
    float
        W0 = [(L/R)^2 + 2 - (L/R) sqrt((L/R)^2 + 4)] / 2 (disk-to-disk view factor).

    Notes
    -----
    Clausing (1932); see also Livesey, ch. 2 of Lafferty (ed.), Foundations of Vacuum
    Science and Technology (Wiley, 1998). Dimensionless.
    """
    ell = _check_length(l_over_r, "l_over_r")
    s = np.sqrt(ell * ell + 4.0)
    return float(2.0 / (ell * ell + 2.0 + ell * s))


def tube_transmission_long(l_over_r: float) -> float:
    """Long-tube (Knudsen) limit of the round-tube transmission probability, 8R/(3L).

    Notes
    -----
    M. Knudsen, Ann. Phys. 28, 75 (1909). Dimensionless; approached slowly, with a
    relative correction of order ln(L/R)/(L/R).
    """
    ell = _check_length(l_over_r, "l_over_r")
    if ell == 0.0:
        raise ValueError("long-tube limit undefined for L/R = 0")
    return 8.0 / (3.0 * ell)


@lru_cache(maxsize=256)
def tube_transmission(
    l_over_r: float, *, panel: float = _TUBE_PANEL, order: int = _ORDER
) -> float:
    """Free-molecular transmission probability (Clausing factor) of a round tube.

    Parameters
    ----------
    l_over_r : float
        Tube length over radius, L/R >= 0 (L/R = 0 gives 1).
    panel : float, optional
        Maximum Nystrom panel length in units of R (mesh control for convergence checks).
    order : int, optional
        Gauss-Legendre points per panel.

    Returns
    -------
    float
        W = W0 + int_0^L n(x) F(L - x) dx, with n the wall hit density per entering
        molecule, solving Clausing's integral equation
        n(x) = 2 F(x) + int_0^L K(x - y) n(y) dy (lengths in units of R).

    Notes
    -----
    P. Clausing, Ann. Phys. 12, 961 (1932). Kernel K(u) = 1/2 - |u|(u^2+6)/(2(u^2+4)^1.5),
    ring-to-disk view factor F(x) = (x^2+2)/(2 sqrt(x^2+4)) - x/2. Agrees with Berman,
    J. Appl. Phys. 36, 3356 (1965) to all printed digits. Results are cached.
    """
    ell = _check_length(l_over_r, "l_over_r")
    if ell == 0.0:
        return 1.0
    x, wx, n = _nystrom(_tube_kernel, lambda s: 2.0 * _tube_view(s), ell, panel, order, True)
    return float(tube_transmission_direct(ell) + np.sum(wx * n * _tube_view(ell - x)))


def channel_transmission_direct(l_over_h: float) -> float:
    """Uncollided part of the 2-D slot transmission probability, sqrt(1 + (L/H)^2) - L/H.

    Notes
    -----
    Strip-to-strip view factor of two parallel openings (Hottel's crossed-strings rule;
    e.g. Modest, Radiative Heat Transfer, ch. 4). Dimensionless.
    """
    ell = _check_length(l_over_h, "l_over_h")
    return float(1.0 / (np.sqrt(1.0 + ell * ell) + ell))


@lru_cache(maxsize=256)
def channel_transmission(
    l_over_h: float, *, panel: float = _SLOT_PANEL, order: int = _ORDER
) -> float:
    """Free-molecular transmission probability of a slot between parallel plates.

    Parameters
    ----------
    l_over_h : float
        Slot length over gap, L/H >= 0 (infinite width; L/H = 0 gives 1).
    panel : float, optional
        Maximum Nystrom panel length in units of H.
    order : int, optional
        Gauss-Legendre points per panel.

    Returns
    -------
    float
        W = W0 + 2 int_0^L n(x) F(L - x) dx, with n the emission density on each plate
        per entering molecule, n(x) = F(x) + int_0^L K(x - y) n(y) dy (units of H).

    Notes
    -----
    2-D diffuse view factor between line elements dF = cos(th1) cos(th2) / (2 r) ds,
    giving K(u) = 1 / (2 (1 + u^2)^(3/2)) and F(x) = (1 - x / sqrt(1 + x^2)) / 2; the
    slot analogue of Clausing (1932). Reproduces the published-values section 2 table.
    """
    ell = _check_length(l_over_h, "l_over_h")
    if ell == 0.0:
        return 1.0
    x, wx, n = _nystrom(_slot_kernel, _slot_view, ell, panel, order, False)
    return float(channel_transmission_direct(ell) + 2.0 * np.sum(wx * n * _slot_view(ell - x)))
