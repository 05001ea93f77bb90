"""`rarefy estimate`: analytic free-molecular and continuum limits, no simulation.

Register with ``cli.add_command(estimate)``. Every input error is one line, exit 2
(:class:`rarefy.cli_errors.InputError`).
"""

from __future__ import annotations

import json

import click

from rarefy.cli_errors import fail, parse_option
from rarefy.estimate import KINDS, ROUND, THIN
from rarefy.estimate import estimate as compute_estimate
from rarefy.estimate import format_estimate
from rarefy.gas.species import get_species

__all__ = ["estimate"]

UNIT_SYSTEMS = ("si", "vacuum")


_fail = fail
_parse = parse_option


def _positive(value, option: str, what: str):
    if value is not None and not value > 0.0:
        _fail(f"{option} must be > 0 {what}, got {value:g}")
    return value


@click.command()
@click.argument("kind", required=False, metavar="KIND")
@click.option("--gas", default="Ar", show_default=True, help="Species (see `rarefy gases`).")
@click.option("--temperature", default="293.15 K", show_default=True,
              help="Gas temperature on both sides, e.g. '293.15 K' or '20 degC'.")
@click.option("--upstream-pressure", default=None,
              help="Upstream pressure p0 (required), e.g. '1 Pa', '0.01 mbar'.")
@click.option("--downstream-pressure", default="0", show_default=True,
              help="Downstream pressure p1, 0 <= p1 <= p0; 0 means vacuum.")
@click.option("--radius", default=None, help="Radius of an orifice or tube, e.g. '1 mm'.")
@click.option("--diameter", default=None, help="Diameter of an orifice or tube (instead of "
              "--radius).")
@click.option("--width", default=None, help="Slit width or channel gap, e.g. '0.5 mm'.")
@click.option("--length", default="0", show_default=True,
              help="Tube or channel length (> 0); orifices and slits are thin (0).")
@click.option("--depth", default=None, help="Slit or channel extent across the flow; "
              "results are per this depth.  [default: 1 m]")
@click.option("--units", "units", default="vacuum", show_default=True, metavar="si|vacuum",
              help="si: kg/s, Pa m^3/s, m^3/s; vacuum: mbar L/s, L/s, sccm.")
@click.option("--json", "as_json", is_flag=True, help="Print the result as JSON (SI).")
def estimate(kind, gas, temperature, upstream_pressure, downstream_pressure, radius,
             diameter, width, length, depth, units, as_json):
    """Analytic quick answers for KIND = orifice, tube, slit or channel.

    Shows the free-molecular limit (transmission probability, conductance) beside the
    ideal continuum limit (isentropic, choked or not) and the regime at the upstream
    pressure. Between the limits a DSMC simulation (`rarefy run`) is needed.

    Example: rarefy estimate orifice --gas N2 --upstream-pressure '0.1 mbar'
    --diameter '1 mm'
    """
    allowed = ", ".join(KINDS)
    if kind is None:
        _fail(f"KIND is required: one of {allowed}")
    if kind not in KINDS:
        _fail(f"KIND {kind!r} is not allowed; use one of {allowed}")
    try:
        gas = get_species(gas).name
    except KeyError as exc:
        _fail(f"--gas: {exc.args[0]}")
    if units not in UNIT_SYSTEMS:
        _fail(f"--units {units!r} is not allowed; use si or vacuum")
    if upstream_pressure is None:
        _fail("--upstream-pressure is required, e.g. --upstream-pressure '1 Pa'")
    t = _positive(_parse(temperature, "temperature", "--temperature"), "--temperature",
                  "(kelvin)")
    p0 = _positive(_parse(upstream_pressure, "pressure", "--upstream-pressure"),
                   "--upstream-pressure", "")
    p1 = _parse(downstream_pressure, "pressure", "--downstream-pressure")
    if not 0.0 <= p1 <= p0:
        _fail(f"--downstream-pressure must be between 0 and the upstream pressure "
              f"({p0:g} Pa), got {p1:g} Pa")
    r = _positive(_parse(radius, "length", "--radius"), "--radius", "")
    d = _positive(_parse(diameter, "length", "--diameter"), "--diameter", "")
    w = _positive(_parse(width, "length", "--width"), "--width", "")
    ell = _parse(length, "length", "--length")
    dep = _positive(_parse(depth, "length", "--depth"), "--depth", "")

    if kind in ROUND:
        if r is not None and d is not None:
            _fail("give --radius or --diameter, not both")
        if r is None and d is None:
            _fail(f"--radius (or --diameter) is required for a {kind}")
        if w is not None:
            _fail(f"--width applies to slit and channel only; give --radius or --diameter "
                  f"for a {kind}")
        if dep is not None:
            _fail("--depth applies to slit and channel only")
        r = r if r is not None else 0.5 * d
    else:
        if r is not None or d is not None:
            _fail(f"--radius/--diameter apply to orifice and tube only; give --width for "
                  f"a {kind}")
        if w is None:
            _fail(f"--width is required for a {kind}")
    if kind in THIN and ell != 0.0:
        _fail(f"--length must be 0 for a thin {kind}; use "
              f"{'tube' if kind == 'orifice' else 'channel'} for a finite length")
    if kind not in THIN and not ell > 0.0:
        _fail(f"--length is required for a {kind} and must be > 0")

    try:
        result = compute_estimate(kind, gas, t, p0, p1, radius_m=r, width_m=w, length_m=ell,
                                  depth_m=dep if dep is not None else 1.0)
    except ValueError as exc:  # all inputs are checked above; kept as a safety net
        _fail(str(exc))
    if as_json:
        click.echo(json.dumps(result, indent=2))
    else:
        click.echo(format_estimate(result, units))
