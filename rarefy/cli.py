"""Command line: wires case -> plan -> engine -> output -> post -> report together.

Library code raises; only this module turns errors into one-line messages and
exit status 2 (bad input) or 1 (failed run).
"""

from __future__ import annotations

import json
import logging
import math
import secrets
import signal
import sys
import threading
import time
from pathlib import Path

import click

from rarefy import __version__
from rarefy.case import CaseError, load_case
from rarefy.cli_errors import InputError
from rarefy.units import UnitError, parse_quantity

log = logging.getLogger("rarefy")

DEMO_CASE = dict(gas="Ar", temperature_k=300.0, upstream_pressure_pa=16.0,
                 downstream_pressure_pa=0.0, width_m=1e-3, thickness_m=0.0)


def _settings(pairs: tuple[str, ...]) -> dict:
    out = {}
    for item in pairs:
        if "=" not in item:
            raise InputError(f"--set {item!r}: expected KEY=VALUE, e.g. --set run.seed=7")
        k, v = item.split("=", 1)
        out[k.strip()] = v.strip()
    return out


def _load(case_path: str, sets: tuple[str, ...] = ()):
    try:
        return load_case(case_path, overrides=_settings(sets) or None)
    except CaseError as exc:
        raise InputError(str(exc)) from None


def _plan(case, time_budget_s: float | None = None):
    """The plan of ``case`` after the guards (``rarefy.guards``); returns (plan, warnings)."""
    from rarefy.guards import GuardError, check_plan
    from rarefy.plan import make_plan
    try:
        plan = make_plan(case)
    except CaseError as exc:
        raise InputError(str(exc)) from None
    except (ValueError, KeyError) as exc:
        raise InputError(f"{case.source_path}: {exc}") from None
    try:   # a GuardError is a ValueError with the path already in its message
        warnings = check_plan(case, plan, time_budget_s=time_budget_s)
    except GuardError as exc:
        raise InputError(str(exc)) from None
    return plan, warnings


def _time_budget(value: str | None) -> float | None:
    if value is None:
        return None
    try:
        seconds = parse_quantity(value, "time")
    except UnitError as exc:
        raise InputError(f"--time-budget: {exc}") from None
    if not seconds > 0.0:
        raise InputError(f"--time-budget: must be > 0, e.g. '2 h'; got {value!r}")
    return seconds


TIME_BUDGET_HELP = ("Refuse a plan whose estimated run time exceeds this, e.g. '30 min' "
                    "(overrides the case's run.time_budget).")


def _rundir(path: str) -> Path:
    p = Path(path)
    if p.exists() and not p.is_dir():
        raise InputError(f"{path}: exists and is not a folder")
    return p


class _Commands(click.Group):
    """The command group; commands kept in other modules are imported only when used,
    so that `rarefy run` does not pay for the imports of the analysis commands (scipy's
    optimisers, for one) before its first step."""

    LAZY = {"estimate": "rarefy.cli_estimate", "export": "rarefy.cli_export",
            "speeds": "rarefy.cli_speeds", "sweep": "rarefy.cli_sweep",
            "tof": "rarefy.cli_tof"}

    def list_commands(self, ctx):
        return sorted(set(super().list_commands(ctx)) | set(self.LAZY))

    def get_command(self, ctx, name):
        if name in self.LAZY and name not in self.commands:
            import importlib
            self.add_command(getattr(importlib.import_module(self.LAZY[name]), name))
        return super().get_command(ctx, name)


@click.group(cls=_Commands, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="rarefy")
def cli():
    """rarefy: rarefied gas flow through slits, channels and apertures by DSMC.

    A typical session: `rarefy new slit -o slit.toml`, `rarefy check slit.toml`,
    `rarefy run slit.toml -o slit-run`, `rarefy report slit-run`,
    `rarefy plot slit-run`.
    """
    logging.basicConfig(level=logging.INFO, format="%(message)s", stream=sys.stderr)


# ------------------------------------------------------------------------------------- new
def _quantity(value, kind, option):
    if value is None:
        return None
    try:
        return parse_quantity(value, kind)
    except UnitError as exc:
        raise InputError(f"{option}: {exc}") from None


@cli.command()
@click.argument("kind", type=click.Choice(["slit", "channel", "orifice", "tube", "box"]))
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False),
              help="Case file to write (TOML).")
@click.option("--gas", default="Ar", show_default=True, help="Species (see `rarefy gases`).")
@click.option("--temperature", default="300 K", show_default=True,
              help="Gas and wall temperature, e.g. '300 K' or '20 degC'.")
@click.option("--pressure", default=None, help="Fill pressure of a box, e.g. '1 Pa'.")
@click.option("--upstream-pressure", default=None,
              help="Upstream reservoir pressure (slit, channel), e.g. '10 Pa', '0.1 mbar'.")
@click.option("--downstream-pressure", default="0", show_default=True,
              help="Downstream pressure; 0 means vacuum.")
@click.option("--width", default="1 mm", show_default=True,
              help="Slit width or channel gap.")
@click.option("--radius", default=None, help="Orifice or tube radius [default: 0.5 mm].")
@click.option("--diameter", default=None, help="Orifice or tube diameter (instead of "
              "--radius).")
@click.option("--length", default="5 mm", show_default=True, help="Channel or tube length.")
@click.option("--thickness", default="0", show_default=True,
              help="Plate thickness of a slit or orifice; 0 is an infinitely thin plate.")
@click.option("--size", default="10 mm", show_default=True, help="Side of a square box.")
@click.option("--force", is_flag=True, help="Overwrite an existing file.")
def new(kind, output, gas, temperature, pressure, upstream_pressure, downstream_pressure,
        width, radius, diameter, length, thickness, size, force):
    """Write a ready-to-run case file: a slit or channel (planar), an orifice or tube
    (axisymmetric) between two volumes, or a closed box (an invented example scenario
    to edit). Openings get a flux plane named `throat`."""
    from rarefy.gas.species import get_species
    from rarefy.templates import TEMPLATES

    try:
        gas = get_species(gas).name
    except KeyError as exc:
        raise InputError(f"--gas: {exc.args[0]}") from None
    t = _quantity(temperature, "temperature", "--temperature")
    if kind == "box":
        p = _quantity(pressure or "1 Pa", "pressure", "--pressure")
        kwargs = dict(pressure_pa=p, size_m=_quantity(size, "length", "--size"))
    else:
        if pressure is not None and upstream_pressure is None:
            upstream_pressure = pressure
        p0 = _quantity(upstream_pressure or "1 Pa", "pressure", "--upstream-pressure")
        p1 = _quantity(downstream_pressure, "pressure", "--downstream-pressure")
        kwargs = dict(upstream_pressure_pa=p0, downstream_pressure_pa=p1)
        if kind in ("orifice", "tube"):
            if radius is not None and diameter is not None:
                raise InputError("give --radius or --diameter, not both")
            kwargs["radius_m"] = (_quantity(radius or "0.5 mm", "length", "--radius")
                                  if diameter is None else
                                  0.5 * _quantity(diameter, "length", "--diameter"))
        else:
            kwargs["width_m"] = _quantity(width, "length", "--width")
        if kind in ("slit", "orifice"):
            kwargs["thickness_m"] = _quantity(thickness, "length", "--thickness")
        else:
            kwargs["length_m"] = _quantity(length, "length", "--length")
    out = Path(output)
    if out.exists() and not force:
        raise InputError(f"{output}: already exists (use --force to overwrite)")
    try:
        text = TEMPLATES[kind](gas=gas, temperature_k=t, **kwargs)
    except ValueError as exc:
        raise InputError(str(exc)) from None
    out.write_text(text)
    click.echo(f"wrote {output}; next: rarefy check {output}")


# ----------------------------------------------------------------------------------- check
@cli.command()
@click.argument("case_file", type=click.Path())
@click.option("--set", "sets", multiple=True, metavar="KEY=VALUE",
              help="Override a case key, e.g. --set initial.pressure='2 Pa'.")
@click.option("--json", "as_json", is_flag=True, help="Print the plan as JSON.")
@click.option("--time-budget", "time_budget", default=None, metavar="TIME",
              help=TIME_BUDGET_HELP)
def check(case_file, sets, as_json, time_budget):
    """Validate a case and print its plan and resolution diagnostics."""
    from rarefy.plan import format_plan

    case = _load(case_file, sets)
    plan, warnings = _plan(case, _time_budget(time_budget))
    if as_json:
        click.echo(json.dumps({**plan.to_dict(), "guard_warnings": warnings}, indent=2))
    else:
        click.echo(format_plan(plan))
        for w in warnings:
            click.echo(f"warning: {w}")


# ------------------------------------------------------------------------------------- run
def _resume_state(case, rundir: Path, seed: int | None):
    """(seed, snapshot) from RUNDIR's checkpoint, after checking it belongs to ``case``."""
    from rarefy.io.checkpoint import CHECKPOINT_NAME, CheckpointError, read_checkpoint
    from rarefy.io.result import RESULT_NAME

    ck = rundir / CHECKPOINT_NAME
    if not ck.exists():
        if (rundir / RESULT_NAME).exists():
            raise InputError(f"--resume: {rundir} holds a finished result and no checkpoint; "
                             "nothing to resume (start a new run in another folder)")
        raise InputError(f"--resume: no checkpoint in {rundir} (expected {ck}); start the "
                         "run without --resume")
    try:
        meta, snap = read_checkpoint(ck)
    except CheckpointError as exc:
        raise InputError(f"--resume: {exc}") from None
    if meta["case_text"] != case.source_text or \
            dict(meta["case_overrides"]) != dict(case.overrides):
        raise InputError(f"--resume: the case file or its --set overrides differ from those "
                         f"of the checkpointed run in {rundir}; resume with the same case "
                         f"and --set options (the run's case is in {rundir / 'case.toml'})")
    if seed is not None and seed != meta["seed"]:
        raise InputError(f"--seed {seed}: the checkpointed run uses seed {meta['seed']}; "
                         "leave --seed out when resuming")
    return meta, snap


def execute(case, rundir: Path, seed: int | None, quiet: bool = False,
            target_error: float | None = None, max_steps: int | None = None,
            plane: str | None = None, resume: bool = False,
            checkpoint_every_s: float = 60.0, time_budget_s: float | None = None,
            checkpoint_steps: int | None = None) -> Path:
    """Run ``case`` into ``rundir``; returns the result file path.

    ``target_error``: keep sampling until the relative standard error of the flow
    through flux plane ``plane`` (default ``throat``, else the first) reaches it, or
    the run has taken ``max_steps`` steps. A checkpoint (and a partial result) is
    written at the first segment start (every RESEED_EVERY steps) after every
    ``checkpoint_every_s`` seconds, or after every ``checkpoint_steps`` steps when that
    is given, and when the run is stopped by SIGINT or SIGTERM; ``resume`` continues
    from it.
    """
    from rarefy.engine.simulation import RunStopped, Simulation
    from rarefy.io.checkpoint import write_checkpoint
    from rarefy.io.result import RESULT_NAME, write_result
    from rarefy.progress import Progress

    from rarefy.io.checkpoint import CHECKPOINT_NAME

    plan, guard_warnings = _plan(case, time_budget_s)
    snap = None
    if resume:
        meta, snap = _resume_state(case, rundir, seed)
        seed = meta["seed"]
        if json.loads(json.dumps(plan.to_dict())) != meta["plan"]:
            raise InputError(f"--resume: this rarefy plans the case differently from the "
                             f"version that wrote {rundir / CHECKPOINT_NAME} "
                             f"({meta['rarefy_version']}); start the run again")
    elif (rundir / CHECKPOINT_NAME).exists():
        raise InputError(f"{rundir} holds a checkpoint of an unfinished run: continue it "
                         "with --resume, or remove "
                         f"{rundir / CHECKPOINT_NAME} to start afresh")
    if seed is None:
        seed = case.run.seed if case.run.seed is not None else secrets.randbits(31)
    rundir.mkdir(parents=True, exist_ok=True)
    if not resume:
        (rundir / "case.toml").write_text(case.source_text)
        if case.overrides:   # what --set changed, so the run can be repeated exactly
            _write_json(rundir / "case-overrides.json", dict(case.overrides))
    names = [fp.name for fp in case.flux_planes]
    plane_index = 0
    if target_error is not None:
        if not names:
            raise InputError(f"{case.source_path}: --target-error needs a flux plane; the "
                             "case has none")
        plane = plane or ("throat" if "throat" in names else names[0])
        if plane not in names:
            raise InputError(f"--plane {plane!r}: no such flux plane; the case has "
                             + ", ".join(names))
        plane_index = names.index(plane)
        if max_steps is None:
            max_steps = 20 * (plan.settle_steps + plan.sample_steps)
    if not quiet:
        log.info("planned %d x %d cells, about %.3g particles, %d + %d steps, seed %d",
                 plan.nx, plan.ny, plan.expected_particles, plan.settle_steps,
                 plan.sample_steps, seed)
        for w in plan.warnings() + guard_warnings:
            log.warning("warning: %s", w)
    sim = Simulation(case, plan, seed)
    if snap is not None:
        sim.restore(snap)
        if not quiet:
            log.info("resumed from %s at step %d", rundir / CHECKPOINT_NAME, sim.clock.step)
    shown = plane_index if names else None
    progress = None if quiet else Progress(shown, names[shown] if names else "")
    every = 1 if progress and progress.tty else \
        max(1, (plan.settle_steps + plan.sample_steps) // 20)
    last = [time.monotonic(), sim.clock.step]

    def save(s, status: str) -> None:
        write_checkpoint(rundir / CHECKPOINT_NAME, s)
        if s.acc.batch >= 2:
            write_result(rundir / RESULT_NAME, s, interrupted=True, status=status)

    def checkpoint(s) -> None:
        due = s.clock.step - last[1] >= checkpoint_steps if checkpoint_steps else \
            time.monotonic() - last[0] >= checkpoint_every_s
        if due:
            save(s, f"running: partial result at step {s.clock.step}")
            last[0], last[1] = time.monotonic(), s.clock.step

    signals = {}

    def request_stop(signum, frame):
        if signals.get("stop") == signal.SIGINT and signum == signal.SIGINT:
            raise KeyboardInterrupt   # a second Ctrl-C stops at once
        signals["stop"] = signum

    # an ignored SIGINT stays ignored (background jobs, sweep workers)
    handled = [sig for sig in (signal.SIGINT, signal.SIGTERM)
               if signal.getsignal(sig) is not signal.SIG_IGN]
    old = {sig: signal.signal(sig, request_stop) for sig in handled} \
        if threading.current_thread() is threading.main_thread() else {}
    sim.stop_check = lambda: "stop" in signals
    try:
        sim.run(progress, every=every, target_error=target_error, plane=plane_index,
                max_steps=max_steps, checkpoint=checkpoint)
    except RunStopped:
        if progress:
            progress.close()
        save(sim, f"stopped at step {sim.clock.step} (signal); resume with --resume")
        log.warning("stopped at step %d: checkpoint in %s%s; continue with "
                    "`rarefy run CASE -o %s --resume`", sim.clock.step,
                    rundir / CHECKPOINT_NAME,
                    f", partial result of {sim.acc.batch} batches in {rundir / RESULT_NAME}"
                    if sim.acc.batch >= 2 else "", rundir)
        raise SystemExit(128 + int(signals["stop"]))
    except KeyboardInterrupt:   # a second Ctrl-C: no new files
        if progress:
            progress.close()
        have = (rundir / CHECKPOINT_NAME).exists()
        log.warning("aborted at step %d; %s", sim.clock.step,
                    f"the last checkpoint in {rundir / CHECKPOINT_NAME} can be resumed "
                    "with --resume" if have else "no checkpoint was written yet")
        raise SystemExit(130) from None
    finally:
        for sig, handler in old.items():
            signal.signal(sig, handler)
    if progress:
        progress.close()
    if not quiet:
        log.info("settling: %s", sim.settle_reason)
        log.info("stopped: %s", sim.stop_reason)
    path = write_result(rundir / RESULT_NAME, sim)
    (rundir / CHECKPOINT_NAME).unlink(missing_ok=True)
    return path


def execute_replicas(case, rundir: Path, seed: int | None, quiet: bool = False,
                     time_budget_s: float | None = None) -> Path | None:
    """Run ``case`` as one replica per MPI rank (``rarefy.mpi``); rank 0 gathers them
    into one result in ``rundir`` and returns its path, the other ranks return None."""
    from rarefy.engine.simulation import Simulation
    from rarefy.io.result import RESULT_NAME, write_result
    from rarefy.mpi import MPIUnavailable, combine_replicas, gather_replicas, replica_seed, world
    from rarefy.progress import Progress

    try:
        comm = world()
    except MPIUnavailable as exc:
        raise InputError(f"--replicas: {exc}") from None
    rank, size = comm.Get_rank(), comm.Get_size()
    plan, guard_warnings = _plan(case, time_budget_s)
    if seed is None:
        seed = case.run.seed if case.run.seed is not None else secrets.randbits(31)
    seed = comm.bcast(seed, root=0)
    if rank == 0:
        rundir.mkdir(parents=True, exist_ok=True)
        (rundir / "case.toml").write_text(case.source_text)
        if case.overrides:
            _write_json(rundir / "case-overrides.json", dict(case.overrides))
        if not quiet:
            log.info("%d replicas of %d x %d cells, about %.3g particles each, %d + %d steps, "
                     "seed %d", size, plan.nx, plan.ny, plan.expected_particles,
                     plan.settle_steps, plan.sample_steps, seed)
            for w in plan.warnings() + guard_warnings:
                log.warning("warning: %s", w)
    sim = Simulation(case, plan, replica_seed(seed, rank))
    names = [fp.name for fp in case.flux_planes]
    progress = Progress(0 if names else None, names[0] if names else "") \
        if rank == 0 and not quiet else None
    sim.run(progress, every=max(1, (plan.settle_steps + plan.sample_steps) // 20))
    if progress:
        progress.close()
    payloads = gather_replicas(comm, sim)
    if rank != 0:
        return None
    combine_replicas(sim, payloads)
    sim.seed = seed
    sim.replicas = size
    sim.stop_reason = f"{sim.stop_reason} ({size} replicas combined)"
    return write_result(rundir / RESULT_NAME, sim)


@cli.command()
@click.argument("case_file", type=click.Path())
@click.option("-o", "--output", "output", required=True, type=click.Path(file_okay=False),
              help="Run folder for result.h5, case.toml and summary.json.")
@click.option("--seed", type=click.IntRange(0, 2 ** 32 - 1), default=None,
              help="Random seed (default: the case's [run] seed, else a fresh one; it is "
                   "recorded in the result).")
@click.option("--set", "sets", multiple=True, metavar="KEY=VALUE",
              help="Override a case key, e.g. --set run.sample_steps=20000.")
@click.option("--target-error", type=click.FloatRange(0.0, 1.0, min_open=True), default=None,
              help="Sample until the relative standard error of the flow through the flux "
                   "plane (default 'throat') is at most this, e.g. 0.01.")
@click.option("--max-steps", type=click.IntRange(1), default=None,
              help="Step cap for --target-error [default: 20 x the planned steps].")
@click.option("--plane", default=None, help="Flux plane for --target-error.")
@click.option("--resume", is_flag=True,
              help="Continue the run in RUNDIR from its checkpoint (same case and --set).")
@click.option("--checkpoint-every", "checkpoint_every", type=click.FloatRange(0.0),
              default=60.0, show_default=True, metavar="SECONDS",
              help="Write a checkpoint and a partial result this often (wall time).")
@click.option("--checkpoint-steps", "checkpoint_steps", type=click.IntRange(1), default=None,
              metavar="N", help="Instead: a checkpoint every N steps (taken at the next "
                                "multiple of 100).")
@click.option("--time-budget", "time_budget", default=None, metavar="TIME",
              help=TIME_BUDGET_HELP)
@click.option("--replicas", is_flag=True,
              help="Under `mpiexec -n K`: K independent replicas combined into one result "
                   "(needs rarefy[mpi]).")
@click.option("--threads", type=click.IntRange(1), default=None, metavar="N",
              help="Threads of the parallel kernels [default: every core; under mpiexec, "
                   "the node's cores shared among its ranks]. The result is the same for "
                   "every N.")
@click.option("-q", "--quiet", is_flag=True, help="No progress display.")
def run(case_file, output, seed, sets, target_error, max_steps, plane, resume,
        checkpoint_every, checkpoint_steps, time_budget, replicas, threads, quiet):
    """Run a case: settle, sample, write RUNDIR/result.h5 and print the summary.

    Progress goes to stderr (a bar on a terminal, a line every 5 % otherwise). Ctrl-C or
    SIGTERM stops after the current step, writes a checkpoint and the batches done so
    far; `--resume` continues from the checkpoint."""
    from rarefy.mpi import local_size
    from rarefy.threads import share_of_cores, use_threads

    use_threads(threads if threads else
                share_of_cores(local_size()) if local_size() > 1 else None)
    if not math.isfinite(checkpoint_every):
        raise InputError(f"--checkpoint-every: must be a number of seconds >= 0; got "
                         f"{checkpoint_every}")
    case = _load(case_file, sets)
    rundir = _rundir(output)
    if replicas:
        for flag, value in (("--resume", resume), ("--target-error", target_error),
                            ("--checkpoint-steps", checkpoint_steps)):
            if value:
                raise InputError(f"{flag} does not combine with --replicas (replica runs "
                                 "sample a fixed number of steps and keep no checkpoints)")
        path = execute_replicas(case, rundir, seed, quiet, _time_budget(time_budget))
        if path is None:      # not rank 0: rank 0 reports
            return
    else:
        path = execute(case, rundir, seed, quiet, target_error, max_steps, plane, resume,
                       checkpoint_every, _time_budget(time_budget), checkpoint_steps)
    from rarefy.report import format_report, load_report
    rep = load_report(rundir)
    _write_json(rundir / "summary.json", rep)
    click.echo(format_report(rep))
    click.echo(f"\nresult: {path}")


def _write_json(path: Path, data: dict) -> None:
    from rarefy.io.atomic import atomic_path

    with atomic_path(path) as tmp:
        tmp.write_text(json.dumps(data, indent=2, default=_json_default))


def _json_default(o):
    if hasattr(o, "item"):
        return o.item()
    raise TypeError(type(o))


def _result_dir(rundir: str) -> Path:
    """The run folder (or result file) after checking that a readable result is there."""
    import h5py

    from rarefy.io.result import FORMAT

    p = Path(rundir)
    f = p / "result.h5" if p.is_dir() else p
    if not f.is_file():
        raise InputError(f"{rundir}: no result.h5 here (run `rarefy run CASE -o {rundir}`)")
    try:
        with h5py.File(f, "r") as h:
            found = h.attrs.get("format")
    except OSError:
        raise InputError(f"{f}: not an HDF5 result file") from None
    if found != FORMAT:
        raise InputError(f"{f}: result format {found!r}; this rarefy reads {FORMAT!r} "
                         "(run the case again)")
    return p


# ---------------------------------------------------------------------------------- report
@cli.command()
@click.argument("rundir", type=click.Path())
@click.option("--json", "as_json", is_flag=True, help="Print the summary as JSON.")
def report(rundir, as_json):
    """Summarise a run: flow rates, transmission probability, surfaces, diagnostics."""
    from rarefy.report import format_report, load_report

    rep = load_report(_result_dir(rundir))
    if as_json:
        click.echo(json.dumps(_nan_to_none(rep), indent=2, default=_json_default))
    else:
        click.echo(format_report(rep))


def _nan_to_none(o):
    if isinstance(o, dict):
        return {k: _nan_to_none(v) for k, v in o.items()}
    if isinstance(o, list):
        return [_nan_to_none(v) for v in o]
    if isinstance(o, float) and not math.isfinite(o):
        return None
    return o


# ------------------------------------------------------------------------------------ plot
@cli.command()
@click.argument("rundir", type=click.Path())
@click.option("--probe", default=None, metavar="NAME",
              help="Only the histograms of this probe (with fits and theory).")
def plot(rundir, probe):
    """Write PNG figures (field maps, profiles, probe histograms, speed distributions by
    position) into RUNDIR/plots."""
    from rarefy.io.result import read_result

    d = _result_dir(rundir)
    r = read_result(d)
    if probe is not None and probe not in r.probe_names:
        raise InputError(f"--probe {probe!r}: the result has no probe of that name; allowed: "
                         + (", ".join(r.probe_names) or "(none defined in the case)"))
    outdir = (d if d.is_dir() else d.parent) / "plots"
    for p in _plot_all(r, outdir, probe):
        click.echo(f"wrote {p}")


def _plot_all(r, outdir: Path, probe: str | None = None) -> list:
    from rarefy.plots.fields import plot_all
    from rarefy.plots.probes import plot_probe_all
    from rarefy.post.probes import probe_results

    paths = [] if probe else plot_all(r, outdir)
    if r.probe_names or (len(r.plane_names) >= 2 and not probe):
        paths += plot_probe_all(r, probe_results(r), outdir, probe)
    return paths


# ----------------------------------------------------------------------------------- gases
@cli.command()
@click.option("--json", "as_json", is_flag=True, help="Print the table as JSON.")
def gases(as_json):
    """List the gases with their molecular-model data and sources."""
    from rarefy.gas.table import format_gas_table, gas_table_rows

    if as_json:
        click.echo(json.dumps(gas_table_rows(), indent=2))
    else:
        click.echo(format_gas_table())


# ------------------------------------------------------------------------------------ demo
@cli.command()
@click.option("-o", "--output", "output", default="demo-run", show_default=True,
              type=click.Path(file_okay=False), help="Run folder.")
@click.option("--seed", type=click.IntRange(0, 2 ** 32 - 1), default=2026, show_default=True)
@click.option("-q", "--quiet", is_flag=True)
def demo(output, seed, quiet):
    """Run the built-in example: argon through a 1 mm slit into vacuum at 16 Pa
    (transitional flow; an invented scenario), then report and plot it."""
    from rarefy.case import parse_case
    from rarefy.io.result import read_result
    from rarefy.report import format_report, load_report
    from rarefy.templates import slit_case

    rundir = _rundir(output)
    rundir.mkdir(parents=True, exist_ok=True)
    case_path = rundir / "demo-case.toml"
    case_path.write_text(slit_case(**DEMO_CASE))
    case = parse_case(case_path.read_text(), str(case_path))
    execute(case, rundir, seed, quiet)
    rep = load_report(rundir)
    _write_json(rundir / "summary.json", rep)
    click.echo(format_report(rep))
    for p in _plot_all(read_result(rundir), rundir / "plots"):
        click.echo(f"wrote {p}")


def main():
    cli(prog_name="rarefy")


if __name__ == "__main__":  # pragma: no cover
    main()
