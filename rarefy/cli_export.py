"""`rarefy export`: a run's fields, surfaces, flux planes and probes as CSV tables.

Register with ``cli.add_command(export)``. Every input error is one line, exit 2
(:class:`rarefy.cli_errors.InputError`, imported when needed so that ``rarefy.cli`` may
import this module at any point). The tables are made by :func:`rarefy.export.export_csv`.
"""

from __future__ import annotations

from pathlib import Path

import click

__all__ = ["export"]


def _fail(message: str):
    from rarefy.cli_errors import InputError

    raise InputError(message)


@click.command()
@click.argument("rundir", type=click.Path())
@click.option("--csv", "as_csv", is_flag=True,
              help="Write fields.csv, surfaces.csv, flux_planes.csv, probes.csv and "
                   "probe_histograms.csv.")
@click.option("-o", "--output", "output", default=None, type=click.Path(),
              help="Folder for the files.  [default: RUNDIR/export]")
def export(rundir, as_csv, output):
    """Export the result in RUNDIR as tables: one row per cell (fields.csv), per surface
    facet (surfaces.csv), per flux plane (flux_planes.csv) and per probe (probes.csv,
    probe_histograms.csv), SI units in the column names, every sampled value with its
    standard error.

    Example: rarefy export slit-run --csv -o slit-tables
    """
    from rarefy.export import export_csv
    from rarefy.io.result import RESULT_NAME, ResultFormatError

    if not as_csv:
        _fail("choose what to write: --csv (the only export format so far)")
    path = Path(rundir)
    result = path / RESULT_NAME if path.is_dir() else path
    if not result.is_file():
        _fail(f"{rundir}: no {RESULT_NAME} here (run `rarefy run CASE -o {rundir}` first)")
    if output is not None and Path(output).exists() and not Path(output).is_dir():
        _fail(f"-o {output}: exists and is not a folder; give a folder for the CSV files")
    try:
        paths = export_csv(result, output if output is not None
                           else result.parent / "export")
    except ResultFormatError as exc:
        _fail(str(exc))
    except OSError as exc:
        if not result.is_file() or _not_hdf5(result):
            _fail(f"{result}: not a readable result file (HDF5 written by `rarefy run`)")
        _fail(f"-o {output or result.parent / 'export'}: cannot write there "
              f"({exc.strerror or exc})")
    for p in paths:
        click.echo(f"wrote {p}")


def _not_hdf5(path: Path) -> bool:
    import h5py

    try:
        return not h5py.is_hdf5(path)
    except OSError:
        return True
