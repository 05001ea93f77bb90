"""Figures of time-of-flight traces and of speed distributions recovered from them."""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from rarefy.post.speed_distribution import SpeedDistribution  # noqa: E402
from rarefy.tof import Trace, to_flux_weighting  # noqa: E402

__all__ = ["time_unit", "plot_trace", "plot_recovered"]


def time_unit(t_max_s: float) -> tuple[str, float]:
    """Display unit for times up to ``t_max_s`` (s): ("us", 1e6) below 2 ms, else
    ("ms", 1e3)."""
    return ("us", 1e6) if t_max_s < 2e-3 else ("ms", 1e3)


def _label(trace: Trace, default: str) -> str:
    return trace.label or default


def plot_trace(trace: Trace, path, theory: Trace | None = None) -> Path:
    """Plot a TOF trace (signal normalised to unit area, against arrival time).

    Parameters
    ----------
    trace : the trace to draw (solid line).
    path : PNG file to write.
    theory : optional second trace to overlay (dashed), e.g. the same beam with an
        instantaneous gate, or an analytic curve.

    The signal is drawn per display time unit (1/us or 1/ms) so that the area under the
    curve stays 1.
    """
    path = Path(path)
    t_max = float(np.max(trace.times_s))
    if theory is not None:
        t_max = max(t_max, float(np.max(theory.times_s)))
    unit, scale = time_unit(t_max)
    fig, ax = plt.subplots(figsize=(7.5, 4.5), constrained_layout=True)
    ax.plot(trace.times_s * scale, trace.signal / scale, color="C0",
            label=f"{trace.detector} detector" + (f", {trace.gate.label}"
                                                    if trace.gate is not None else ""))
    if theory is not None:
        ax.plot(theory.times_s * scale, theory.signal / scale, color="C3", ls="--",
                label=_label(theory, "theory"))
    ax.set_xlabel(f"arrival time after gate centre ({unit})")
    ax.set_ylabel(f"signal, unit area (1/{unit})")
    title = f"TOF at L = {trace.flight_length_m * 1e3:.4g} mm"
    if trace.ionizer_length_m > 0:
        title += f", ionizer {trace.ionizer_length_m * 1e3:.3g} mm"
    ax.set_title(f"{_label(trace, 'beam')} — {title}")
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small")
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def _step(ax, dist: SpeedDistribution, **kw):
    d = to_flux_weighting(dist)
    pdf = d.pdf()
    edges = np.asarray(d.edges_m_s, dtype=float)
    ax.stairs(pdf * 1e3, edges, **kw)   # per km/s
    if d.counts_stderr is not None:
        err = np.asarray(d.counts_stderr, dtype=float) / (np.sum(d.counts) * d.widths_m_s)
        ok = np.isfinite(err)
        if np.any(ok & (err > 0)):
            c = d.centres_m_s
            ax.errorbar(c[ok], pdf[ok] * 1e3, yerr=err[ok] * 1e3, fmt="none", lw=0.8,
                        color=kw.get("color"), alpha=0.6)


def plot_recovered(recovered: SpeedDistribution, path, reference=None) -> Path:
    """Plot a flux-weighted speed distribution recovered from a trace.

    Parameters
    ----------
    recovered : the recovered histogram (drawn as steps with its standard errors).
    path : PNG file to write.
    reference : a SpeedDistribution or a sequence of them to overlay (e.g. the source
        histogram and the naive t -> v mapping); density-weighted ones are converted to
        flux weighting first.

    The pdf is drawn per km/s (area 1 over speeds in km/s); speeds in m/s.
    """
    path = Path(path)
    if reference is None:
        refs = []
    elif isinstance(reference, SpeedDistribution):
        refs = [reference]
    else:
        refs = list(reference)
    fig, ax = plt.subplots(figsize=(7.5, 4.5), constrained_layout=True)
    for j, ref in enumerate(refs):
        _step(ax, ref, color=f"C{j + 1}", ls="--", label=ref.label or f"reference {j + 1}")
    _step(ax, recovered, color="C0", lw=1.8, label=recovered.label or "recovered")
    ax.set_xlabel("speed (m/s)")
    ax.set_ylabel("flux-weighted pdf (1/(km/s))")
    ax.set_xlim(left=0.0)
    ax.set_ylim(bottom=0.0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small")
    ax.set_title("speed distribution from time of flight")
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path
