"""The ``rarefy sweep`` command (registered on the main group by :mod:`rarefy.cli`)."""

from __future__ import annotations

import math
from pathlib import Path

import click

from rarefy.case import CaseError
from rarefy.cli_errors import InputError

__all__ = ["sweep", "format_rows"]


def format_rows(rows: list[dict]) -> str:
    """A small text table: value, delta and W ± stderr per point (or its error)."""
    width = max([5] + [len(str(r["value"])) for r in rows])
    lines = [f"  {'#':>2}  {'value':<{width}}  {'delta':>10}  {'W':>8}  {'± stderr':>9}"]
    for i, r in enumerate(rows):
        head = f"  {i:>2}  {str(r['value']):<{width}}  "
        if r.get("error"):
            lines.append(head + f"FAILED: {r['error']}")
            continue
        se = r["transmission_probability_stderr"]
        lines.append(head + f"{r['rarefaction_parameter']:>10.4g}  "
                     f"{r['transmission_probability']:>8.4g}  "
                     + (f"{se:>9.2g}" if math.isfinite(se) else f"{'-':>9}"))
    return "\n".join(lines)


@click.command()
@click.argument("case_file", type=click.Path())
@click.option("--set", "sets", multiple=True, metavar="KEY=V1,V2,...",
              help="Exactly one with comma-separated values is swept, e.g. "
                   "--set 'upstream_pressure=1 Pa,10 Pa,100 Pa' (upstream_pressure sets every "
                   "reservoir piece at the highest pressure); the others are fixed overrides.")
@click.option("-o", "--output", "output", required=True, type=click.Path(file_okay=False),
              help="Folder for point-NN run folders, sweep.csv, sweep.json and sweep.png.")
@click.option("--jobs", type=click.IntRange(1), default=None,
              help="Parallel processes (default: one per point, at most the CPU count).")
@click.option("--seed", type=click.IntRange(0, 2 ** 32 - 1), default=None,
              help="Point i uses SEED + i (default: the case's seed, else a fresh one).")
@click.option("--plane", default=None,
              help="Flux plane reported (default: 'throat' if present, else the first).")
@click.option("-q", "--quiet", is_flag=True, help="No progress lines.")
def sweep(case_file, sets, output, jobs, seed, plane, quiet):
    """Run a case once per value of one key, in parallel, and tabulate and plot the
    transmission probability W against the rarefaction parameter delta. Under
    `mpiexec -n K` the points are shared among the K ranks (needs rarefy[mpi])."""
    from rarefy.mpi import MPIUnavailable
    from rarefy.sweep import parse_sweep, plot_sweep, run_sweep

    out = Path(output)
    if out.exists() and not out.is_dir():
        raise InputError(f"{output}: exists and is not a folder")
    try:
        key, values, fixed = parse_sweep(sets)
        rows = run_sweep(case_file, key, values, out, fixed=fixed, jobs=jobs, seed=seed,
                         quiet=quiet, plane=plane)
    except (CaseError, ValueError, MPIUnavailable) as exc:
        raise InputError(str(exc)) from None
    except KeyboardInterrupt:
        click.echo(f"interrupted: finished points are in {out / 'sweep.csv'}; each stopped "
                   "point holds a checkpoint (continue it with `rarefy run CASE -o "
                   "POINT_DIR --resume` and its --set values)", err=True)
        raise SystemExit(130) from None
    if rows is None:          # an MPI rank other than 0: rank 0 reports
        return
    png = plot_sweep(rows, out / "sweep.png")
    click.echo(f"sweep of {key} over {len(values)} points")
    click.echo(format_rows(rows))
    for name in ("sweep.csv", "sweep.json"):
        click.echo(f"wrote {out / name}")
    click.echo(f"wrote {png}")
    failed = sum(1 for r in rows if r.get("error"))
    if failed:
        raise click.ClickException(f"{failed} of {len(rows)} points failed (see above)")
