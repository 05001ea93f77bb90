"""`rarefy speeds`: equilibrium (Maxwell-Boltzmann) speeds of gases, and their curves.

Register with ``cli.add_command(speeds)``. Every input error is one line, exit 2
(:class:`rarefy.cli_errors.InputError`, imported when needed so that ``rarefy.cli`` may
import this module at any point). Formulas and sources: :mod:`rarefy.theory.maxwell`.
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from rarefy.gas.species import SPECIES, get_species
from rarefy.theory.maxwell import characteristic_speeds
from rarefy.units import UnitError, parse_quantity

__all__ = ["speeds", "speed_rows", "format_speed_table"]

# (JSON key, table header); every column is a speed in m/s.
_COLUMNS = (
    ("most_probable_m_s", "most probable"),
    ("mean_m_s", "mean"),
    ("rms_m_s", "rms"),
    ("flux_mean_m_s", "flux-weighted mean"),
)


def _fail(message: str):
    from rarefy.cli_errors import InputError

    raise InputError(message)


def _temperature(value: str) -> float:
    try:
        t = parse_quantity(value, "temperature")
    except UnitError as exc:
        _fail(f"--temperature: {exc}")
    if not t > 0.0:
        _fail(f"--temperature must be above absolute zero (> 0 K), got {value!r} = {t:g} K")
    return t


def _plot_path(value: str) -> Path:
    path = Path(value)
    if path.suffix.lower() != ".png":
        _fail(f"--plot writes a PNG; the file name must end in .png, got {value!r}")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        _fail(f"--plot: folder {str(folder)!r} does not exist; give a file in an existing "
              f"folder")
    return path


def speed_rows(gases, temperatures_k) -> list[dict]:
    """One dict per gas x temperature, SI.

    Parameters
    ----------
    gases : iterable of species names (see :func:`rarefy.gas.species.get_species`).
    temperatures_k : iterable of temperatures, K.

    Returns
    -------
    list of dict
        Keys ``gas``, ``temperature_k``, ``most_probable_m_s``, ``mean_m_s``,
        ``rms_m_s``, ``flux_mean_m_s`` (m/s), from
        :func:`rarefy.theory.maxwell.characteristic_speeds`.
    """
    rows = []
    for name in gases:
        sp = get_species(name)
        for t in temperatures_k:
            c = characteristic_speeds(sp.mass_kg, t)
            row = {"gas": sp.name, "temperature_k": float(t)}
            row.update({key: c[key] for key, _ in _COLUMNS})
            rows.append(row)
    return rows


def format_speed_table(rows: list[dict]) -> str:
    """Plain-text table of :func:`speed_rows`; every number carries its unit."""
    header = ["gas", "T"] + [title for _, title in _COLUMNS]
    body = [[r["gas"], f"{r['temperature_k']:g} K"]
            + [f"{r[key]:.1f} m/s" for key, _ in _COLUMNS] for r in rows]
    widths = [max(len(line[i]) for line in [header] + body) for i in range(len(header))]
    lines = []
    for line in [header] + body:
        cells = [line[0].ljust(widths[0]), line[1].rjust(widths[1])]
        cells += [cell.rjust(w) for cell, w in zip(line[2:], widths[2:])]
        lines.append("  ".join(cells).rstrip())
    lines.append("Maxwell-Boltzmann gas at rest; flux-weighted: molecules crossing a "
                 "surface.")
    return "\n".join(lines)


@click.command("speeds")
@click.argument("gases", nargs=-1, metavar="GAS...")
@click.option("--temperature", "temperatures", multiple=True, default=("300 K",),
              show_default=True,
              help="Gas temperature, e.g. '300 K' or '20 degC'; repeat for several.")
@click.option("--plot", "plot", default=None, metavar="FILE.png",
              help="Write a PNG of the speed distributions of every gas and temperature.")
@click.option("--flux", is_flag=True,
              help="Plot the speed distributions of molecules crossing a surface "
                   "(flux-weighted) instead of those in a volume.")
@click.option("--json", "as_json", is_flag=True, help="Print the table as JSON (SI).")
def speeds(gases, temperatures, plot, flux, as_json):
    """Equilibrium speeds of each GAS: most probable, mean, rms and the mean speed of
    molecules crossing a surface, from the Maxwell-Boltzmann distribution.

    Example: rarefy speeds Ar He --temperature '300 K' --temperature 77K --plot v.png
    """
    allowed = ", ".join(SPECIES)
    if not gases:
        _fail(f"GAS is required: one or more of {allowed}")
    names = []
    for g in gases:
        try:
            names.append(get_species(g).name)
        except KeyError:
            _fail(f"GAS {g!r} is not known; allowed: {allowed}")
    ts = [_temperature(t) for t in temperatures]
    path = _plot_path(plot) if plot is not None else None

    rows = speed_rows(names, ts)
    if as_json:
        click.echo(json.dumps(rows, indent=2))
    else:
        click.echo(format_speed_table(rows))
    if path is not None:
        from rarefy.plots.speeds import plot_speed_curves

        curves = [(f"{r['gas']}, {r['temperature_k']:g} K",
                   get_species(r["gas"]).mass_kg, r["temperature_k"]) for r in rows]
        try:
            plot_speed_curves(curves, path, flux=flux)
        except OSError as exc:
            _fail(f"--plot: cannot write {str(path)!r}: {exc.strerror or exc}")
        click.echo(f"wrote {path}", err=True)
