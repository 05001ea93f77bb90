"""Figures of a result: field maps with the walls drawn, and profiles along y = ymin."""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.colors import LogNorm  # noqa: E402

from rarefy.io.result import ResultData  # noqa: E402

__all__ = ["plot_fields", "plot_profiles", "plot_all"]

MAPS = (  # name, colour-bar label, logarithmic colour scale
    ("number_density", "number density (m$^{-3}$)", True),
    ("speed", "flow speed (m/s)", False),
    ("temperature", "temperature (K)", False),
    ("pressure", "pressure (Pa)", True),
)


def _field(r: ResultData, name: str) -> np.ndarray:
    if name == "speed":
        return np.hypot(r.fields["velocity_x"], r.fields["velocity_y"])
    return r.fields[name]


def _draw_walls(ax, r: ResultData) -> None:
    for (x0, y0, x1, y1) in r.walls:
        ax.plot([x0 * 1e3, x1 * 1e3], [y0 * 1e3, y1 * 1e3], color="k", lw=1.5)
    for k, name in enumerate(r.plane_names):
        x0, y0, x1, y1 = r.plane_points[k]
        ax.plot([x0 * 1e3, x1 * 1e3], [y0 * 1e3, y1 * 1e3], color="w", lw=1.0, ls="--")


def plot_fields(r: ResultData, path: Path) -> Path:
    """2 x 2 maps of density, flow speed, temperature and pressure (solid cells blank)."""
    fig, axes = plt.subplots(2, 2, figsize=(11, 7), constrained_layout=True)
    xe = np.concatenate([r.x - 0.5 * (r.x[1] - r.x[0] if r.x.size > 1 else 1),
                         [r.x[-1] + 0.5 * (r.x[1] - r.x[0] if r.x.size > 1 else 1)]]) * 1e3
    ye = np.concatenate([r.y - 0.5 * (r.y[1] - r.y[0] if r.y.size > 1 else 1),
                         [r.y[-1] + 0.5 * (r.y[1] - r.y[0] if r.y.size > 1 else 1)]]) * 1e3
    for ax, (name, label, logscale) in zip(axes.flat, MAPS):
        raw = np.where(r.volume > 0, _field(r, name), np.nan)
        if logscale:
            raw = np.where(raw > 0, raw, np.nan)
        data = np.ma.masked_invalid(raw)
        norm = LogNorm() if logscale and data.count() else None
        mesh = ax.pcolormesh(xe, ye, data, shading="flat", cmap="viridis", norm=norm)
        fig.colorbar(mesh, ax=ax, label=label)
        _draw_walls(ax, r)
        ax.set_aspect("equal")
        ax.set_xlabel("x (mm)")
        ax.set_ylabel("r (mm)" if r.attrs.get("geometry") == "axisymmetric" else "y (mm)")
    fig.suptitle(f"{r.attrs.get('title') or 'rarefy result'} — {r.attrs['gas']}, "
                 f"seed {r.attrs['seed']}")
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def plot_profiles(r: ResultData, path: Path) -> Path:
    """Density, axial velocity and temperature along the first cell row (y = ymin),
    with one-standard-error bands."""
    fig, axes = plt.subplots(3, 1, figsize=(8, 8), sharex=True, constrained_layout=True)
    x = r.x * 1e3
    for ax, (name, label) in zip(axes, (("number_density", "n (m$^{-3}$)"),
                                        ("velocity_x", "u$_x$ (m/s)"),
                                        ("temperature", "T (K)"))):
        v = r.fields[name][0]
        e = r.stderr[name][0]
        ax.plot(x, v, color="C0")
        ax.fill_between(x, v - e, v + e, color="C0", alpha=0.3, lw=0)
        ax.set_ylabel(label)
        ax.grid(alpha=0.3)
    axes[-1].set_xlabel("x (mm), along the lowest cell row"
                        + (" (next to the axis)" if r.attrs.get("geometry") == "axisymmetric"
                           else ""))
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def plot_all(r: ResultData, outdir: Path) -> list[Path]:
    outdir.mkdir(parents=True, exist_ok=True)
    return [plot_fields(r, outdir / "fields.png"), plot_profiles(r, outdir / "profiles.png")]
