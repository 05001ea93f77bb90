"""Figures of equilibrium (Maxwell-Boltzmann) speed distributions.

:func:`plot_speed_curves` draws the speed pdfs of several gases and temperatures on
common axes; :func:`overlay_maxwell` adds one equilibrium curve to an existing axis,
e.g. over a sampled speed histogram. Speeds are in m/s, densities in s/m; the
formulas and their sources are in :mod:`rarefy.theory.maxwell`.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from scipy.optimize import brentq  # noqa: E402

from rarefy.constants import K_B  # noqa: E402
from rarefy.theory.maxwell import (  # noqa: E402
    drifting_speed_pdf,
    flux_speed_pdf,
    speed_pdf,
)

__all__ = ["plot_speed_curves", "overlay_maxwell", "tail_speed", "WEIGHTINGS"]

WEIGHTINGS = ("density", "flux")

# Reduced speed x = v / sqrt(2kT/m) of the peak of each shape x^n exp(-x^2): the
# density pdf (n = 2) peaks at x = 1, the flux pdf (n = 3) at x = sqrt(3/2).
_SHAPE = {"density": 2, "flux": 3}


def _check_weighting(weighting: str) -> None:
    if weighting not in WEIGHTINGS:
        raise ValueError(f"weighting must be one of {', '.join(WEIGHTINGS)}, "
                         f"not {weighting!r}")


def tail_speed(mass_kg: float, t_k: float, weighting: str = "density",
               fraction: float = 1e-3) -> float:
    """Speed above the peak where the equilibrium pdf has fallen to ``fraction`` of
    its peak value, m/s.

    Parameters
    ----------
    mass_kg : molecular mass, kg. t_k : temperature, K.
    weighting : ``"density"`` (:func:`~rarefy.theory.maxwell.speed_pdf`) or ``"flux"``
        (:func:`~rarefy.theory.maxwell.flux_speed_pdf`).
    fraction : in (0, 1).

    Notes
    -----
    Both pdfs are x^n exp(-x^2) in the reduced speed x = v sqrt(m / 2kT) (n = 2 and 3),
    peaking at x_p = sqrt(n/2); the root of n ln(x/x_p) - (x^2 - x_p^2) = ln(fraction)
    above x_p is found with Brent's method.
    """
    _check_weighting(weighting)
    if not 0.0 < fraction < 1.0:
        raise ValueError(f"fraction must be in (0, 1), got {fraction!r}")
    n = _SHAPE[weighting]
    xp = math.sqrt(n / 2.0)

    def g(x):
        return n * math.log(x / xp) - (x * x - xp * xp) - math.log(fraction)

    hi = xp + 1.0
    while g(hi) > 0.0:
        hi *= 2.0
    x = brentq(g, xp, hi, xtol=1e-12)
    return x * math.sqrt(2.0 * K_B * t_k / mass_kg)


def _pdf(v, mass_kg, t_k, weighting, drift_m_s):
    _check_weighting(weighting)
    if weighting == "flux":
        if drift_m_s:
            raise ValueError("a drift is supported for the density weighting only")
        return flux_speed_pdf(v, mass_kg, t_k)
    if drift_m_s:
        return drifting_speed_pdf(v, mass_kg, t_k, drift_m_s)
    return speed_pdf(v, mass_kg, t_k)


def overlay_maxwell(ax, mass_kg: float, t_k: float, v, weighting: str = "density",
                    scale: float = 1.0, label: str | None = None,
                    drift_m_s: float = 0.0, **style):
    """Draw the equilibrium speed pdf at temperature ``t_k`` on an existing axis.

    Parameters
    ----------
    ax : matplotlib Axes, x in m/s.
    mass_kg : molecular mass, kg. t_k : temperature, K.
    v : speeds at which to draw the curve, m/s (array).
    weighting : ``"density"`` -- molecules in a volume, f(v); ``"flux"`` -- molecules
        crossing a surface, v f(v) / <v>.
    scale : factor applied to the pdf (s/m); 1 for a histogram normalised as a pdf, or
        e.g. total count x bin width (m/s) for raw counts.
    label : legend entry; default ``"Maxwell, <T> K"`` (with ``" (flux)"`` for flux).
    drift_m_s : drift speed for a drifting Maxwellian (density weighting only), m/s.
    **style : passed to ``ax.plot`` (default black dashed line).

    Returns
    -------
    matplotlib.lines.Line2D
    """
    v = np.asarray(v, dtype=float)
    y = scale * _pdf(v, mass_kg, t_k, weighting, drift_m_s)
    if label is None:
        label = f"Maxwell, {t_k:g} K" + (" (flux)" if weighting == "flux" else "")
    kw = {"color": "k", "ls": "--", "lw": 1.2}
    kw.update(style)
    (line,) = ax.plot(v, y, label=label, **kw)
    return line


def plot_speed_curves(curves: Iterable[Sequence], path, flux: bool = False) -> Path:
    """Write a PNG of equilibrium speed pdfs on common axes.

    Parameters
    ----------
    curves : iterable of ``(label, mass_kg, t_k)``
        One curve each: legend label, molecular mass (kg), temperature (K).
    path : file to write (PNG).
    flux : draw the flux-weighted pdfs (molecules crossing a surface) instead of the
        density pdfs.

    Returns
    -------
    Path
        ``path``.

    Notes
    -----
    The speed axis runs from 0 to where the widest curve (the largest sqrt(T/m)) has
    fallen to 1e-3 of its peak (:func:`tail_speed`).
    """
    curves = [(str(label), float(m), float(t)) for label, m, t in curves]
    if not curves:
        raise ValueError("no curves to plot")
    weighting = "flux" if flux else "density"
    v_max = max(tail_speed(m, t, weighting) for _, m, t in curves)
    v = np.linspace(0.0, v_max, 600)
    fig, ax = plt.subplots(figsize=(8, 5), constrained_layout=True)
    for k, (label, m, t) in enumerate(curves):
        overlay_maxwell(ax, m, t, v, weighting=weighting, label=label,
                        color=f"C{k % 10}", ls="-", lw=1.6)
    ax.set_xlim(0.0, v_max)
    ax.set_ylim(bottom=0.0)
    ax.set_xlabel("speed v (m/s)")
    ax.set_ylabel("probability density (s/m)")
    ax.set_title("Maxwell-Boltzmann speed distribution"
                 + (" of molecules crossing a surface" if flux else ""))
    ax.grid(alpha=0.3)
    ax.legend()
    path = Path(path)
    fig.savefig(path, dpi=110, format="png")
    plt.close(fig)
    return path
