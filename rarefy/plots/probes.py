"""Figures of probes and flux-plane speed distributions.

``plot_probe``: the speed histogram with its drifting-Maxwellian fit and the source gas's
Maxwell-Boltzmann curve, and the three velocity-component histograms with their Gaussian
fits. ``plot_speeds_along`` puts the speed distributions of every probe (ordered by
position along x) and the flux-weighted ones of every flux plane on common axes.
"""

from __future__ import annotations

import re
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from scipy import stats  # noqa: E402

from rarefy.constants import K_B  # noqa: E402
from rarefy.io.result import ResultData  # noqa: E402
from rarefy.kernels.config import H_SPEED  # noqa: E402
from rarefy.plots.speeds import overlay_maxwell  # noqa: E402
from rarefy.post.probes import COMPONENTS, speed_distribution, speed_fit_pdf  # noqa: E402

__all__ = ["plot_probe", "plot_speeds_along", "plot_probe_all"]


DISPLAY_BINS = 100


def _coarse(hist_batches: np.ndarray, edges: np.ndarray):
    """Merge adjacent bins so that a figure shows at most DISPLAY_BINS of them."""
    f = max(1, (len(edges) - 1) // DISPLAY_BINS)
    nb = (len(edges) - 1) // f * f
    h = hist_batches[..., :nb].reshape(*hist_batches.shape[:-1], nb // f, f).sum(axis=-1)
    return h, edges[: nb + 1: f]


def _pdf_with_error(hist_batches: np.ndarray, widths: np.ndarray):
    """Normalised pdf of summed batch histograms and its batch-means standard error."""
    total = hist_batches.sum(axis=0)
    norm = total.sum()
    pdf = total / (norm * widths)
    b = hist_batches.shape[0]
    err = np.sqrt(b * hist_batches.var(axis=0, ddof=1)) / (norm * widths) if b > 1 else None
    return pdf, err


def _step(ax, edges, pdf, err, label, color):
    centres = 0.5 * (edges[1:] + edges[:-1])
    ax.stairs(pdf, edges, color=color, label=label)
    if err is not None:
        ax.fill_between(centres, pdf - err, pdf + err, step="mid", color=color, alpha=0.25,
                        lw=0)


def plot_probe(r: ResultData, name: str, row: dict, path: Path) -> Path:
    """Speed and component histograms of probe ``name`` (``row``: its report entry)."""
    q = r.probe_names.index(name)
    mass = r.row_mass(r.probe_species[q])       # of the probe's species in a mixture
    t0 = r.plan["reference_temperature_k"]
    edges = r.speed_edges
    vmax = edges[-1]
    cedges = np.linspace(-vmax, vmax, len(edges))
    hist = r.probe_hist[:, q]
    fig, axes = plt.subplots(2, 2, figsize=(11, 7.5), constrained_layout=True)
    ax = axes[0, 0]
    h, e = _coarse(hist[:, H_SPEED, :-1], edges)
    pdf, err = _pdf_with_error(h, np.diff(e))
    _step(ax, e, pdf, err, "sampled (± 1 std. err.)", "C0")
    v = np.linspace(0.0, vmax, 600)
    fit = row["speed_fit"]
    if np.isfinite(fit["temperature_k"]):
        ax.plot(v, speed_fit_pdf(v, fit["drift_m_s"], fit["temperature_k"], mass), "C3",
                label=f"drifting Maxwellian fit: T {fit['temperature_k']:.4g} K, "
                      f"u {fit['drift_m_s']:.4g} m/s")
    overlay_maxwell(ax, mass, t0, v, label=f"Maxwell-Boltzmann at rest, {t0:.4g} K")
    ax.set_xlabel("speed (m/s)")
    ax.set_ylabel("probability density (s/m)")
    ax.set_title(f"speed, density-weighted (chi$^2$/dof {fit['reduced_chi_square']:.3g})")
    ax.legend(fontsize=8)
    for ax, (c, h) in zip(axes.flat[1:], COMPONENTS):
        hc, e = _coarse(hist[:, h, :-1], cedges)
        pdf, err = _pdf_with_error(hc, np.diff(e))
        _step(ax, e, pdf, err, "sampled", "C0")
        f = row["component_fits"][c]
        vv = np.linspace(-vmax, vmax, 600)
        if np.isfinite(f["temperature_k"]):
            s = np.sqrt(K_B * f["temperature_k"] / mass)
            ax.plot(vv, stats.norm.pdf(vv, f["drift_m_s"], s), "C3",
                    label=f"Gaussian fit: T {f['temperature_k']:.4g} K, "
                          f"u {f['drift_m_s']:.4g} m/s")
        ax.plot(vv, stats.norm.pdf(vv, 0.0, np.sqrt(K_B * t0 / mass)), "k--", lw=1,
                label=f"at rest, {t0:.4g} K")
        ax.set_xlabel(f"v$_{c}$ (m/s)")
        ax.set_ylabel("probability density (s/m)")
        ax.legend(fontsize=8)
    fig.suptitle(f"probe '{name}': n = {row['number_density_m3']:.4g} m$^{{-3}}$, "
                 f"speed ratio {row['speed_ratio']:.3g} — {r.attrs['gas']}, seed "
                 f"{r.attrs['seed']}")
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def plot_speeds_along(r: ResultData, path: Path) -> Path:
    """Speed distributions of every probe, ordered by x, and of every flux plane."""
    fig, ax = plt.subplots(figsize=(9, 5.5), constrained_layout=True)
    order = sorted(range(len(r.probe_names)), key=lambda q: r.probe_box[q, 0])
    colours = plt.cm.viridis(np.linspace(0.0, 0.9, max(len(order), 1)))
    for colour, q in zip(colours, order):
        d = speed_distribution(r, r.probe_names[q])
        if d.counts.sum() > 0:
            x0, x1 = r.probe_box[q, :2] * 1e3
            h, e = _coarse(d.counts[None, :], d.edges_m_s)
            ax.stairs(h[0] / (h.sum() * np.diff(e)), e, color=colour,
                      label=f"probe {d.label}, x {x0:.3g}-{x1:.3g} mm (density-weighted)")
    for k, name in enumerate(r.plane_names):
        d = speed_distribution(r, name)
        if d.counts.sum() > 0:
            h, e = _coarse(d.counts[None, :], d.edges_m_s)
            ax.stairs(h[0] / (h.sum() * np.diff(e)), e, color=f"C{k + 1}", ls=":",
                      label=f"flux plane {name} (flux-weighted crossings)")
    t0 = r.plan["reference_temperature_k"]
    v = np.linspace(0.0, r.speed_edges[-1], 600)
    mixture = len(r.species) > 1
    for k, species in enumerate(r.species if mixture else [None]):
        overlay_maxwell(ax, r.row_mass(k if mixture else -1), t0, v,
                        label=f"Maxwell-Boltzmann at rest, {t0:.4g} K"
                        + (f", {species}" if mixture else ""))
    ax.set_xlabel("speed (m/s)")
    ax.set_ylabel("probability density (s/m)")
    ax.set_title(f"speed distributions by position — {r.attrs['gas']}")
    ax.legend(fontsize=8)
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def _safe(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]", "_", name)


def plot_probe_all(r: ResultData, probes: dict, outdir: Path,
                   only: str | None = None) -> list[Path]:
    """One figure per probe (or only ``only``) and, with two or more sources, the
    comparison along x."""
    outdir.mkdir(parents=True, exist_ok=True)
    names = [only] if only else list(probes)
    paths = [plot_probe(r, n, probes[n], outdir / f"probe_{_safe(n)}.png") for n in names]
    if not only and len(r.probe_names) + len(r.plane_names) >= 2:
        paths.append(plot_speeds_along(r, outdir / "speeds_along_x.png"))
    return paths
