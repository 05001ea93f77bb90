"""`rarefy tof`: the time-of-flight trace a chopped beam from a run would give, and the
speed distribution recovered from that trace.

Register with ``cli.add_command(tof)``. Every input error is one line, exit 2
(:class:`rarefy.cli_errors.InputError`). The physics is in :mod:`rarefy.tof`; the source
histogram comes from ``rarefy.post.probes.load_speed_distribution(rundir, name)``.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace
from pathlib import Path

import click
import numpy as np

from rarefy.cli_errors import fail, parse_option
from rarefy.post.speed_distribution import SpeedDistribution
from rarefy.tof import (DETECTORS, Gate, Trace, channel_widths, chopper_gate,
                        default_times, flux_quantile_speeds, mean_speed, mean_speed_stderr,
                        naive_speed_distribution, peak_time, predict_trace,
                        recover_speed_distribution, rectangular_gate, signal_mean_time,
                        to_flux_weighting)
from rarefy.units import format_quantity

__all__ = ["tof", "gate_from_options", "coarsen", "choose_n_times", "analyse",
           "format_summary",
           "write_trace_csv", "write_speeds_csv", "write_outputs", "file_stem",
           "MAX_RECOVERY_BINS"]

MAX_RECOVERY_BINS = 100  # the recovered histogram uses the source's bins, merged to this
MIN_TIMES, MAX_TIMES = 400, 5000  # time channels of a trace, see choose_n_times


_fail = fail
_parse = parse_option


def _positive(value, option: str):
    if value is not None and not value > 0.0:
        _fail(f"{option} must be > 0, got {value:g}")
    return value


def gate_from_options(open_time=None, slit_width=None, rim_speed=None,
                      beam_width=None) -> Gate:
    """The chopper gate from the command's option strings (units allowed).

    Either ``open_time`` (a rectangular gate) or ``slit_width`` with ``rim_speed`` and
    optionally ``beam_width`` (a chopper slit, :func:`rarefy.tof.chopper_gate`); any
    other combination, a bad quantity or a non-positive value is an InputError.
    """
    if open_time is not None and slit_width is not None:
        _fail("give either --open-time or --slit-width (with --rim-speed), not both")
    if open_time is None and slit_width is None:
        _fail("a gate is required: --open-time T, or --slit-width W with --rim-speed V")
    if open_time is not None:
        if rim_speed is not None or beam_width is not None:
            _fail("--rim-speed and --beam-width go with --slit-width, not with --open-time")
        t = _positive(_parse(open_time, "time", "--open-time"), "--open-time")
        return rectangular_gate(t)
    if rim_speed is None:
        _fail("--slit-width needs --rim-speed, e.g. --rim-speed '200 m/s'")
    w = _positive(_parse(slit_width, "length", "--slit-width"), "--slit-width")
    v = _positive(_parse(rim_speed, "velocity", "--rim-speed"), "--rim-speed")
    b = _parse(beam_width, "length", "--beam-width") if beam_width is not None else 0.0
    if not b >= 0.0:
        _fail(f"--beam-width must be >= 0 (0 = a line beam), got {b:g}")
    return chopper_gate(w, v, b)


def coarsen(dist: SpeedDistribution, max_bins: int = MAX_RECOVERY_BINS) -> SpeedDistribution:
    """Merge neighbouring bins (sums; standard errors in quadrature) so that at most
    ``max_bins`` remain; the histogram itself when it has no more."""
    n = len(dist.counts)
    if n <= max_bins:
        return dist
    k = math.ceil(n / max_bins)
    idx = np.arange(0, n, k)
    edges = np.append(np.asarray(dist.edges_m_s, float)[idx], dist.edges_m_s[-1])
    counts = np.add.reduceat(np.asarray(dist.counts, float), idx)
    err = None
    if dist.counts_stderr is not None:
        err = np.sqrt(np.add.reduceat(np.asarray(dist.counts_stderr, float) ** 2, idx))
    return SpeedDistribution(edges, counts, err, dist.weighting, dist.label, dist.mass_kg,
                             dist.temperature_k)


def choose_n_times(dist: SpeedDistribution, flight_length_m: float, gate: Gate,
                   ionizer_length_m: float, speed_edges_m_s) -> int:
    """Number of time channels for the trace: channels no wider than half the shorter of
    the gate FWHM and the arrival spread L dv / v**2 of a recovery bin at the fast end
    of the beam (99.95 % flux quantile), between MIN_TIMES and MAX_TIMES."""
    t = default_times(dist, flight_length_m, gate, ionizer_length_m, 3)
    _, v_high = flux_quantile_speeds(dist)
    dv = float(np.min(np.diff(np.asarray(speed_edges_m_s, float))))
    dt = 0.5 * min(gate.fwhm_s, flight_length_m * dv / v_high ** 2)
    n = math.ceil((t[-1] - t[0]) / dt) + 1
    return int(min(max(n, MIN_TIMES), MAX_TIMES))


def analyse(dist: SpeedDistribution, flight_length_m: float, gate: Gate,
            detector: str = "density", ionizer_length_m: float = 0.0) -> dict:
    """Trace, ideal-gate trace, recovered and naive distributions and the summary
    numbers (SI) for one source; no file I/O. Raises ValueError for an unusable
    histogram or geometry."""
    source = replace(coarsen(to_flux_weighting(dist)), label=f"{dist.label or 'source'} "
                     "(source)")
    n_times = choose_n_times(dist, flight_length_m, gate, ionizer_length_m,
                             source.edges_m_s)
    # the trace comes from the merged bins: single bins of a sampled histogram carry
    # counting noise that a gate much shorter than their arrival spread would show as
    # spikes
    smooth = coarsen(dist)
    trace = predict_trace(smooth, flight_length_m, gate, detector, ionizer_length_m,
                          n_times=n_times)
    ideal = predict_trace(smooth, flight_length_m, None, detector, ionizer_length_m,
                          times_s=trace.times_s)
    ideal = replace(ideal, label="instantaneous gate")
    recovered = recover_speed_distribution(trace, gate, source.edges_m_s)
    naive = naive_speed_distribution(trace, source.edges_m_s)
    return {
        "trace": trace, "ideal": ideal, "source": source, "recovered": recovered,
        "naive": naive, "peak_time_s": peak_time(trace),
        "mean_time_s": signal_mean_time(trace),
        "n_times": n_times, "channel_width_s": float(np.mean(channel_widths(trace.times_s))),
        "source_mean_speed_m_s": mean_speed(dist, "flux"),
        "source_mean_speed_stderr_m_s": mean_speed_stderr(dist, "flux"),
        "recovered_mean_speed_m_s": mean_speed(recovered),
        "naive_mean_speed_m_s": mean_speed(naive),
    }


def _time_unit(t_s: float) -> str:
    return "us" if t_s < 2e-3 else "ms"


def format_summary(result: dict, source: str) -> str:
    """Printed summary of :func:`analyse`: times and flux-weighted mean speeds, with
    units."""
    tr: Trace = result["trace"]
    unit = _time_unit(float(np.max(tr.times_s)))
    ref = result["source_mean_speed_m_s"]

    def dev(v):
        return f"{(v - ref) / ref:+.2%}" if ref > 0 else ""

    gate = tr.gate
    gate_line = (f"gate: {gate.label}; FWHM {format_quantity(gate.fwhm_s, 'time', 'us', 4)}"
                 f", open-time integral {format_quantity(gate.area_s, 'time', 'us', 4)}")
    ionizer = (f", ionizer {format_quantity(tr.ionizer_length_m, 'length', 'mm', 4)}"
               if tr.ionizer_length_m > 0 else "")
    peak = format_quantity(result["peak_time_s"], "time", unit, 5)
    mean_t = format_quantity(result["mean_time_s"], "time", unit, 5)
    err = result.get("source_mean_speed_stderr_m_s", float("nan"))
    src_err = f" +- {err:.2g} m/s (standard error)" if math.isfinite(err) else ""
    rec = result["recovered_mean_speed_m_s"]
    naive = result["naive_mean_speed_m_s"]
    lines = [
        (f"TOF of {source!r}: {tr.detector} detector at "
         f"{format_quantity(tr.flight_length_m, 'length', 'mm', 5)}{ionizer}"),
        gate_line,
        f"sampled in {result['n_times']} time channels of "
        f"{format_quantity(result['channel_width_s'], 'time', 'us', 4)}",
        f"peak arrival time      {peak} (after the gate centre)",
        f"mean flight time       {mean_t} (signal-weighted mean arrival time)",
        "flux-weighted mean speed:",
        f"  source               {format_quantity(ref, 'velocity', 'm/s', 5)}{src_err}",
        f"  recovered from TOF   {format_quantity(rec, 'velocity', 'm/s', 5)}  {dev(rec)}",
        f"  naive t -> v = L/t   {format_quantity(naive, 'velocity', 'm/s', 5)}  {dev(naive)}",
    ]
    return "\n".join(lines)


def _settings_lines(trace: Trace, source: str) -> list[str]:
    g = trace.gate
    return [
        "# rarefy tof",
        f"# source: {source}",
        f"# detector: {trace.detector}",
        f"# flight_length_m: {trace.flight_length_m:.9g}",
        f"# ionizer_length_m: {trace.ionizer_length_m:.9g}",
        f"# gate: {g.label if g is not None else 'instantaneous'}",
        f"# gate_fwhm_s: {g.fwhm_s if g is not None else 0.0:.9g}",
        f"# gate_open_time_integral_s: {g.area_s if g is not None else 0.0:.9g}",
        "# time zero: centre of the gate",
        f"# sampling: {trace.sampling} ("
        + ("mean over each time channel" if trace.sampling == "channel"
           else "value at each time") + ")",
        f"# channel_width_s: {float(np.mean(channel_widths(trace.times_s))):.9g}",
    ]


def write_trace_csv(trace: Trace, path, source: str) -> Path:
    """Write ``time_s,signal_per_s`` (signal normalised to unit area) with the settings
    as comment lines."""
    path = Path(path)
    lines = _settings_lines(trace, source)
    lines.append("# signal: detector signal normalised to unit area over the times, 1/s")
    lines.append("time_s,signal_per_s")
    lines += [f"{t:.9e},{s:.9e}" for t, s in zip(trace.times_s, trace.signal, strict=True)]
    path.write_text("\n".join(lines) + "\n")
    return path


def _pdf(dist: SpeedDistribution):
    return np.asarray(dist.counts, float) / (float(np.sum(dist.counts)) * dist.widths_m_s)


def write_speeds_csv(result: dict, path, source: str) -> Path:
    """Write the flux-weighted pdfs (s/m) per speed bin: recovered (with standard
    error), naive and source, with the settings as comment lines."""
    path = Path(path)
    rec, naive, src = result["recovered"], result["naive"], result["source"]
    err = (np.asarray(rec.counts_stderr, float) / (float(np.sum(rec.counts)) * rec.widths_m_s)
           if rec.counts_stderr is not None else np.full(len(rec.counts), np.nan))
    lines = _settings_lines(result["trace"], source)
    lines.append("# flux-weighted probability densities, s/m; stderr nan: bin not seen")
    lines.append("speed_low_m_s,speed_high_m_s,recovered_pdf_s_per_m,"
                 "recovered_pdf_stderr_s_per_m,naive_pdf_s_per_m,source_pdf_s_per_m")
    e = np.asarray(rec.edges_m_s, float)
    for row in zip(e[:-1], e[1:], _pdf(rec), err, _pdf(naive), _pdf(src), strict=True):
        lines.append(",".join(f"{x:.9e}" for x in row))
    path.write_text("\n".join(lines) + "\n")
    return path


def file_stem(source: str) -> str:
    """The source name made safe for a file name."""
    return re.sub(r"[^A-Za-z0-9_.-]", "_", source) or "source"


def write_outputs(result: dict, outdir, source: str) -> list[Path]:
    """Write tof_<source>.csv/.png and speeds_from_tof_<source>.csv/.png into outdir."""
    from rarefy.plots.tof import plot_recovered, plot_trace

    outdir = Path(outdir)
    stem = file_stem(source)
    return [
        write_trace_csv(result["trace"], outdir / f"tof_{stem}.csv", source),
        plot_trace(result["trace"], outdir / f"tof_{stem}.png", theory=result["ideal"]),
        write_speeds_csv(result, outdir / f"speeds_from_tof_{stem}.csv", source),
        plot_recovered(result["recovered"], outdir / f"speeds_from_tof_{stem}.png",
                       reference=[result["source"], result["naive"]]),
    ]


@click.command("tof")
@click.argument("rundir", metavar="RUNDIR")
@click.option("--source", default=None,
              help="Probe or flux plane whose speed distribution forms the beam (required).")
@click.option("--flight-length", default=None,
              help="Chopper-to-detector distance L (required), e.g. '0.5 m'.")
@click.option("--open-time", default=None,
              help="Rectangular gate: time the chopper is open, e.g. '20 us'.")
@click.option("--slit-width", default=None,
              help="Chopper slit width along the rim, e.g. '1 mm' (with --rim-speed).")
@click.option("--rim-speed", default=None,
              help="Speed of the slit across the beam, e.g. '200 m/s'.")
@click.option("--beam-width", default=None,
              help="Beam width at the wheel along the rim.  [default: 0, a line beam]")
@click.option("--detector", default="density", show_default=True, metavar="density|flux",
              help="density: signal ~ flux / v (ionizer); flux: signal ~ flux.")
@click.option("--ionizer-length", default="0", show_default=True,
              help="Length of a density detector along the beam, averaged over.")
@click.option("-o", "--output", "outdir", default=None,
              help="Folder for the CSV and PNG files.  [default: RUNDIR/tof]")
def tof(rundir, source, flight_length, open_time, slit_width, rim_speed, beam_width,
        detector, ionizer_length, outdir):
    """Time-of-flight trace of a chopped beam formed by a run's speed distribution.

    The beam has the speed distribution sampled at the probe or flux plane SOURCE of
    RUNDIR; a chopper at distance 0 opens it for a short time and a detector at
    --flight-length records density or flux against time. Writes the trace, and the
    speed distribution recovered from it by deconvolution beside the naive t -> L/t
    mapping and the source itself.

    Example: rarefy tof slit-run --source throat --flight-length '0.5 m'
    --slit-width '1 mm' --rim-speed '250 m/s'
    """
    run_path = Path(rundir)
    if not run_path.exists():
        _fail(f"RUNDIR {rundir!r} does not exist (run `rarefy run CASE -o {rundir}`)")
    if source is None:
        _fail("--source is required: the name of a probe or flux plane of the run")
    if flight_length is None:
        _fail("--flight-length is required, e.g. --flight-length '0.5 m'")
    L = _positive(_parse(flight_length, "length", "--flight-length"), "--flight-length")
    gate = gate_from_options(open_time, slit_width, rim_speed, beam_width)
    if detector not in DETECTORS:
        _fail(f"--detector {detector!r} is not allowed; use density or flux")
    ell = _parse(ionizer_length, "length", "--ionizer-length")
    if not ell >= 0.0:
        _fail(f"--ionizer-length must be >= 0, got {ell:g}")
    if ell > 0.0 and detector == "flux":
        _fail("--ionizer-length applies to --detector density only")
    if not ell < 2.0 * L:
        _fail(f"--ionizer-length must be shorter than twice --flight-length ({2 * L:g} m), "
              f"got {ell:g} m")
    base = run_path if run_path.is_dir() else run_path.parent
    out = Path(outdir) if outdir is not None else base / "tof"
    if out.exists() and not out.is_dir():
        _fail(f"-o {out}: exists and is not a folder")

    from rarefy.post.probes import load_speed_distribution

    dist = load_speed_distribution(run_path, source)
    try:
        result = analyse(dist, L, gate, detector, ell)
    except ValueError as exc:
        _fail(f"--source {source}: {exc}")
    try:
        out.mkdir(parents=True, exist_ok=True)
        click.echo(format_summary(result, source))
        for p in write_outputs(result, out, source):
            click.echo(f"wrote {p}")
    except OSError as exc:
        _fail(f"-o {out}: cannot write there ({exc.strerror or exc})")
