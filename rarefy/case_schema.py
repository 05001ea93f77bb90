"""Validation of raw case-file dictionaries (see :mod:`rarefy.case`).

:func:`build_case` checks a dictionary produced by ``tomllib`` section by
section and returns the keyword arguments for :class:`rarefy.case.Case`;
:func:`apply_override` applies one ``--set key=value`` override to it.
The geometric checks (boundary tiling, walls, flux planes) follow the
section readers.
"""

from __future__ import annotations

import math
import re
import sys
from typing import Any, NoReturn

from rarefy.case import (
    SIDES, Boundary, CaseError, Domain, FluxPlane, GasSpec, Histograms, InitialState, Probe,
    Resolution, RunControl, Surface, Wall,
)
from rarefy.gas.internal import DEFAULT_ZROT
from rarefy.units import UNITS, UnitError, parse_quantity, show

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["build_case", "apply_override", "Checker"]

TOP_KEYS = ("title", "gas", "domain", "boundaries", "walls", "flux_planes", "probes",
            "histograms", "initial", "resolution", "run")
SECTION_KEYS = {
    "gas": ("species", "model", "mole_fractions", "rotation", "vibration",
            "vibration_number"),
    "domain": ("geometry", "x", "y", "depth", "characteristic_length"),
    "initial": ("pressure", "temperature", "velocity", "mole_fractions"),
    "resolution": ("cell_size", "time_step", "particles_per_cell", "particle_weight", "subcells"),
    "run": ("settle_steps", "sample_steps", "batches", "seed", "time_budget"),
    "histograms": ("speed_max", "bins"),
}
BOUNDARY_KEYS = {
    "reservoir": ("kind", "from", "to", "pressure", "temperature", "velocity",
                  "mole_fractions"),
    "vacuum": ("kind", "from", "to"),
    "periodic": ("kind",),
    "symmetry": ("kind", "from", "to"),
    "axis": ("kind",),
    "wall": ("kind", "from", "to", "surface", "temperature", "accommodation", "velocity"),
}
ALL_BOUNDARY_KEYS = ("kind", "from", "to", "pressure", "temperature", "velocity", "surface",
                     "accommodation", "mole_fractions")
ARRAY_KEYS = {
    "walls": ("name", "points", "solid", "surface", "temperature", "accommodation", "velocity"),
    "flux_planes": ("name", "points", "mirrored", "opening", "opening_length"),
    "probes": ("name", "x", "y", "direction"),
}
MAX_HISTOGRAM_BINS = 5000
MODELS = ("hs", "vhs", "vss")
GEOMETRIES = ("planar", "axisymmetric")
OPENINGS = ("orifice", "tube", "slit", "channel")
SURFACES = ("diffuse", "specular", "maxwell")

# Magnitudes a quantity may have, by kind: (smallest non-zero, largest). They reach far
# beyond any rarefied-gas case (1e-20 Pa is an almost empty space, 1e9 Pa ten thousand
# atmospheres; 1 mK to 1e6 K; 10 km; 1000 km/s), and inside them every number the
# planner derives (number density, mean free path, cell counts, steps) stays a finite
# double instead of overflowing or rounding to zero.
RANGES: dict[str, tuple[float, float]] = {
    "pressure": (1e-20, 1e9),
    "temperature": (1e-3, 1e6),
    "length": (0.0, 1e4),          # positions; sizes also have MIN_SIZE_M
    "time": (1e-18, 1e9),
    "velocity": (0.0, 1e6),
    "dimensionless": (0.0, math.inf),
}
MIN_SIZE_M = 1e-12                 # cell size, depth, characteristic length
MIN_DOMAIN_M = 1e-9                # domain extent: a few molecular diameters
PARTICLES_PER_CELL_RANGE = (1e-6, 1e9)
PARTICLE_WEIGHT_RANGE = (1e-20, 1e40)
MAX_COUNT = 10 ** 12               # step counts and batches
MAX_SUBCELLS = 100
MAX_SPECIES = 8


def _join(prefix: str, name: str) -> str:
    return f"{prefix}.{name}" if prefix else name


def _units(kind: str) -> str:
    return ", ".join(UNITS[kind])


class Checker:
    """Typed access to raw TOML values; every failure raises :class:`CaseError`."""

    def __init__(self, path: str) -> None:
        self.path = path

    def fail(self, key: str, message: str) -> NoReturn:
        raise CaseError(self.path, key, message)

    def table(self, value: Any, key: str, allowed: tuple[str, ...]) -> dict:
        """Return ``value`` as a table after rejecting keys not in ``allowed``."""
        if not isinstance(value, dict):
            self.fail(key, f"must be a table with keys: {', '.join(allowed)}")
        for name in value:
            if name not in allowed:
                self.fail(_join(key, name), f"unknown key; allowed keys here: {', '.join(allowed)}")
        return value

    def require(self, tbl: dict, key: str, name: str, hint: str) -> Any:
        if name not in tbl:
            self.fail(_join(key, name), f"required key is missing; {hint}")
        return tbl[name]

    def quantity(self, value: Any, key: str, kind: str, minimum: float | None = None,
                 strict: bool = True, limits: tuple[float, float] | None = None) -> float:
        """Parse a quantity; ``minimum`` with ``strict`` means ``> minimum`` else ``>=``.

        A non-zero value must also have a magnitude within ``limits`` (default
        :data:`RANGES` of ``kind``)."""
        try:
            result = parse_quantity(value, kind)
        except UnitError as exc:
            self.fail(key, str(exc))
        unit = next(iter(UNITS[kind]), "")
        if minimum is not None and (result <= minimum if strict else result < minimum):
            op = ">" if strict else ">="
            self.fail(key, f"must be {op} {minimum:g} {unit}".rstrip() + f"; got {show(value)}")
        lo, hi = limits or RANGES[kind]
        if abs(result) > hi or (result != 0.0 and abs(result) < lo):
            if minimum is None:
                allowed = (f"from {-hi:g} to {hi:g}" if lo == 0.0 else
                           f"0 or of magnitude {lo:g} to {hi:g}")
            elif strict or lo == 0.0:
                allowed = f"from {max(lo, minimum):g} to {hi:g}"
            else:
                allowed = f"0 or from {lo:g} to {hi:g}"
            self.fail(key, f"must be {allowed} {unit}".rstrip() + f"; got {show(value)}")
        return result

    def integer(self, value: Any, key: str, minimum: int, maximum: int | None = None) -> int:
        top = MAX_COUNT if maximum is None else maximum
        if isinstance(value, bool) or not isinstance(value, int) or not minimum <= value <= top:
            self.fail(key, f"must be an integer >= {minimum} (at most {top}); got {show(value)}")
        return value

    def string(self, value: Any, key: str, what: str = "a string") -> str:
        if not isinstance(value, str) or not value.strip():
            self.fail(key, f"must be {what} (non-empty, in quotes); got {show(value)}")
        return value

    def boolean(self, value: Any, key: str) -> bool:
        if not isinstance(value, bool):
            self.fail(key, f"must be true or false; got {show(value)}")
        return value

    def choice(self, value: Any, key: str, choices: tuple[str, ...]) -> str:
        if isinstance(value, str) and value.strip().lower() in choices:
            return value.strip().lower()
        self.fail(key, f"must be one of: {', '.join(choices)}; got {show(value)}")

    def vector3(self, value: Any, key: str) -> tuple[float, float, float]:
        if not isinstance(value, list) or len(value) != 3:
            self.fail(key, f'must be [vx, vy, vz], e.g. ["0 m/s", "0 m/s", "0 m/s"]; '
                           f"allowed units: {_units('velocity')}; got {show(value)}")
        return tuple(self.quantity(v, f"{key}[{i}]", "velocity") for i, v in enumerate(value))

    def point(self, value: Any, key: str) -> tuple[float, float]:
        if not isinstance(value, list) or len(value) != 2:
            self.fail(key, f'must be a point [x, y], e.g. ["0 mm", "1 mm"]; allowed units: '
                           f"{_units('length')}; got {show(value)}")
        return (self.quantity(value[0], key, "length"), self.quantity(value[1], key, "length"))

    def surface(self, tbl: dict, key: str) -> Surface:
        """Read surface / temperature / accommodation / velocity of a wall."""
        kind = self.choice(tbl.get("surface", "diffuse"), _join(key, "surface"), SURFACES)
        temperature = None
        if kind != "specular":
            self.require(tbl, key, "temperature",
                         f'surface = "{kind}" needs a temperature, e.g. "300 K" '
                         f"(allowed units: {_units('temperature')})")
        if "temperature" in tbl:
            temperature = self.quantity(tbl["temperature"], _join(key, "temperature"),
                                        "temperature", 0.0)
        accommodation = {"diffuse": 1.0, "specular": 0.0}.get(kind)
        if kind == "maxwell":
            value = self.require(tbl, key, "accommodation",
                                 'surface = "maxwell" needs accommodation, a number 0 < a <= 1')
            accommodation = self.quantity(value, _join(key, "accommodation"), "dimensionless")
            if not 0.0 < accommodation <= 1.0:
                self.fail(_join(key, "accommodation"),
                          f"must be a number with 0 < accommodation <= 1; got {show(value)}")
        elif "accommodation" in tbl:
            self.fail(_join(key, "accommodation"),
                      f'allowed only with surface = "maxwell" (here surface = "{kind}")')
        velocity = self.quantity(tbl.get("velocity", 0.0), _join(key, "velocity"), "velocity")
        return Surface(kind, temperature, accommodation, velocity)


def _species(chk: Checker, gas: dict) -> GasSpec:
    from rarefy.gas.species import SPECIES

    name = chk.require(gas, "gas", "species", f"allowed: {', '.join(SPECIES)}")
    canon = {k.lower(): k for k in SPECIES}
    if isinstance(name, list):
        return _mixture(chk, gas, name, canon)
    if "mole_fractions" in gas:
        chk.fail("gas.mole_fractions", "allowed only for a mixture: give species as a list, "
                                       'e.g. species = ["He", "Xe"]')
    if not isinstance(name, str) or name.strip().lower() not in canon:
        chk.fail("gas.species", f"unknown species {show(name)}; allowed: {', '.join(SPECIES)}")
    species = canon[name.strip().lower()]
    model = chk.choice(gas.get("model", "vhs"), "gas.model", MODELS)
    entry = SPECIES[species]
    if model == "vss" and entry.alpha is None:
        chk.fail("gas.model", f'"vss" needs VSS data, which {species} lacks; allowed for '
                              f"{species}: hs, vhs")
    if not entry.rot_dof:
        for key in ("rotation", "vibration", "vibration_number"):
            if key in gas:
                chk.fail(f"gas.{key}", f"{species} is monatomic: it has no internal energy; "
                                       "remove the key")
        return GasSpec(species, model)
    rotation = _collision_number(chk, gas.get("rotation", DEFAULT_ZROT), "gas.rotation",
                                 "parker", entry.parker is not None, species)
    vibration, number = _vibration(chk, gas, [species])
    return GasSpec(species, model, rotation, vibration, number, "rotation" in gas)


def _vibration(chk: Checker, gas: dict, molecules: list) -> tuple[bool, float | str | None]:
    """(vibration on, Z_vib) of ``molecules``: each must have vibrational data when on."""
    from rarefy.gas.species import SPECIES

    vibration = chk.boolean(gas.get("vibration", False), "gas.vibration")
    for s in molecules:
        if vibration and SPECIES[s].theta_vib_k is None:
            chk.fail("gas.vibration", f"no vibrational data for {s}: rarefy models the one "
                                      "mode of diatomic molecules (H2, N2, O2); allowed: false")
    if "vibration_number" in gas and not vibration:
        chk.fail("gas.vibration_number", "allowed only with vibration = true")
    if not vibration:
        return False, None
    return True, _collision_number(chk, gas.get("vibration_number", "millikan-white"),
                                   "gas.vibration_number", "millikan-white", True,
                                   ", ".join(molecules))


def _mixture(chk: Checker, gas: dict, names: list, canon: dict) -> GasSpec:
    """A mixture: species a list of distinct species, mole_fractions its default
    composition. Molecules in it take ``rotation`` (one value for every molecule, or a
    table by species), ``vibration`` (every molecule with vibrational data) and
    ``vibration_number`` as a pure gas does."""
    from rarefy.gas.species import SPECIES

    if not 2 <= len(names) <= MAX_SPECIES:
        chk.fail("gas.species", f"a mixture lists 2 to {MAX_SPECIES} species; got {show(names)}")
    species = []
    for k, n in enumerate(names):
        if not isinstance(n, str) or n.strip().lower() not in canon:
            chk.fail(f"gas.species[{k}]", f"unknown species {show(n)}; allowed: "
                                          f"{', '.join(SPECIES)}")
        s = canon[n.strip().lower()]
        if s in species:
            chk.fail(f"gas.species[{k}]", f"{s} is listed twice")
        species.append(s)
    model = chk.choice(gas.get("model", "vhs"), "gas.model", MODELS)
    for s in species:
        if model == "vss" and SPECIES[s].alpha is None:
            chk.fail("gas.model", f'"vss" needs VSS data, which {s} lacks; allowed: hs, vhs')
    molecules = [s for s in species if SPECIES[s].rot_dof]
    if not molecules:
        for key in ("rotation", "vibration", "vibration_number"):
            if key in gas:
                chk.fail(f"gas.{key}", "a mixture of monatomic gases has no internal "
                                       "energy; remove the key")
    fractions = mole_fractions(chk, chk.require(gas, "gas", "mole_fractions",
                                                f"one number per species, summing to 1, e.g. "
                                                f"[{', '.join(['0.5'] * len(species))}]"),
                               "gas.mole_fractions", len(species))
    if not molecules:
        return GasSpec(species[0], model, mixture=tuple(species), mole_fractions=fractions)
    rotation, given = _mixture_rotation(chk, gas.get("rotation", DEFAULT_ZROT), species,
                                        "rotation" in gas)
    vibration, number = _vibration(chk, gas, molecules)
    return GasSpec(species[0], model, rotation, vibration, number, "rotation" in gas, given,
                   mixture=tuple(species), mole_fractions=fractions)


def _mixture_rotation(chk: Checker, value: Any, species: list,
                      given: bool) -> tuple[tuple, tuple]:
    """(Z_rot of every species of a mixture, None for monatomic ones; whether each came
    from the case): one value for every molecule, or a table by species name (molecules
    left out take the default)."""
    from rarefy.gas.species import SPECIES

    molecules = [s for s in species if SPECIES[s].rot_dof]
    if isinstance(value, dict):
        canon = {s.lower(): s for s in molecules}
        table = {}
        for name, v in value.items():
            s = canon.get(name.strip().lower())
            if s is None:
                chk.fail(f"gas.rotation.{name}", "names no molecule of the mixture; allowed: "
                                                 f"{', '.join(molecules)}")
            if s in table:
                chk.fail(f"gas.rotation.{name}", f"{s} is given twice")
            table[s] = _collision_number(chk, v, f"gas.rotation.{name}", "parker",
                                         SPECIES[s].parker is not None, s)
        return (tuple(table.get(s, DEFAULT_ZROT) if SPECIES[s].rot_dof else None
                      for s in species), tuple(s in table for s in species))
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        chk.fail("gas.rotation", 'must be a number from 1 to 1e12, "parker", or a table by '
                                 f"species, e.g. {{{molecules[0]} = 5}}; got {show(value)}")
    if isinstance(value, str) and value.strip().lower() == "parker":
        lacking = [s for s in molecules if SPECIES[s].parker is None]
        if lacking:
            chk.fail("gas.rotation", f'"parker" needs published constants, which '
                                     f"{', '.join(lacking)} lacks; give a number >= 1, or a "
                                     'table by species, e.g. {N2 = "parker", '
                                     f"{lacking[0]} = 5}}")
    z = _collision_number(chk, value, "gas.rotation", "parker", True, molecules[0])
    return (tuple(z if SPECIES[s].rot_dof else None for s in species),
            tuple(given and bool(SPECIES[s].rot_dof) for s in species))


def mole_fractions(chk: Checker, value: Any, key: str, count: int) -> tuple[float, ...]:
    """``count`` mole fractions >= 0 that sum to 1 (within 1e-6; rescaled to exactly 1)."""
    if not isinstance(value, list) or len(value) != count or any(
            isinstance(v, bool) or not isinstance(v, (int, float)) or not 0.0 <= v <= 1.0
            for v in value):
        chk.fail(key, f"must be a list of {count} numbers from 0 to 1, one per species in the "
                      f"order of gas.species; got {show(value)}")
    total = math.fsum(value)
    if abs(total - 1.0) > 1e-6:
        chk.fail(key, f"must sum to 1; got {show(value)} (sum {total:.6g})")
    return tuple(float(v) / total for v in value)


def _collision_number(chk: Checker, value: Any, key: str, formula: str, has_formula: bool,
                      species: str) -> float | str:
    """A collision number: a plain number >= 1 or the name of the formula."""
    if isinstance(value, str) and value.strip().lower() == formula:
        if not has_formula:
            chk.fail(key, f'"{formula}" needs published constants, which {species} lacks; '
                          "give a number >= 1")
        return formula
    if isinstance(value, bool) or not isinstance(value, (int, float)) \
            or not 1.0 <= value <= 1e12:
        chk.fail(key, f'must be a number from 1 to 1e12 or "{formula}"; got {show(value)}')
    return float(value)


def _domain(chk: Checker, tbl: dict) -> Domain:
    spans = []
    for axis in ("x", "y"):
        key = f"domain.{axis}"
        value = chk.require(tbl, "domain", axis, f'give [min, max], e.g. ["0 mm", "10 mm"]')
        if not isinstance(value, list) or len(value) != 2:
            chk.fail(key, f'must be [min, max] with lengths, e.g. ["0 mm", "10 mm"]; '
                          f"allowed units: {_units('length')}; got {show(value)}")
        lo, hi = (chk.quantity(v, key, "length") for v in value)
        if not hi > lo:
            chk.fail(key, f"max ({hi:.6g} m) must be greater than min ({lo:.6g} m)")
        if hi - lo < MIN_DOMAIN_M:
            chk.fail(key, f"the domain must span at least {MIN_DOMAIN_M:g} m (a few molecular "
                          f"diameters); got {hi - lo:.6g} m")
        spans.append((lo, hi))
    geometry = chk.choice(tbl.get("geometry", "planar"), "domain.geometry", GEOMETRIES)
    if geometry == "axisymmetric":
        if "depth" in tbl:
            chk.fail("domain.depth", "not used in an axisymmetric domain (y is the radius); "
                                     "remove it")
        if abs(spans[1][0]) > 1e-12 * (spans[1][1] - spans[1][0]):
            chk.fail("domain.y", "an axisymmetric domain starts on the axis: y = [0, R] "
                                 f"(y is the radius); got min {spans[1][0]:.6g} m")
    size = (MIN_SIZE_M, RANGES["length"][1])
    depth = chk.quantity(tbl.get("depth", 1.0), "domain.depth", "length", 0.0, limits=size)
    lc = tbl.get("characteristic_length")
    if lc is not None:
        lc = chk.quantity(lc, "domain.characteristic_length", "length", 0.0, limits=size)
    return Domain(spans[0][0], spans[0][1], 0.0 if geometry == "axisymmetric" else spans[1][0],
                  spans[1][1], depth, lc, geometry)


def _fractions_of(chk: Checker, tbl: dict, key: str, nspecies: int) -> tuple | None:
    """The table's own mole_fractions (a mixture's reservoir or initial fill), or None."""
    if "mole_fractions" not in tbl:
        return None
    if nspecies < 2:
        chk.fail(_join(key, "mole_fractions"), "allowed only for a mixture: give gas.species "
                                               'as a list, e.g. ["He", "Xe"]')
    return mole_fractions(chk, tbl["mole_fractions"], _join(key, "mole_fractions"), nspecies)


def _initial(chk: Checker, tbl: dict, default_t: float, nspecies: int = 1) -> InitialState:
    p = chk.quantity(tbl.get("pressure", 0.0), "initial.pressure", "pressure", 0.0, strict=False)
    if p > 0.0:
        chk.require(tbl, "initial", "temperature",
                    f'needed when pressure > 0, e.g. "300 K" (units: {_units("temperature")})')
    t = default_t
    if "temperature" in tbl:
        t = chk.quantity(tbl["temperature"], "initial.temperature", "temperature", 0.0)
    v = chk.vector3(tbl.get("velocity", [0.0, 0.0, 0.0]), "initial.velocity")
    return InitialState(p, t, v, _fractions_of(chk, tbl, "initial", nspecies))


def _resolution(chk: Checker, tbl: dict) -> Resolution:
    def opt(name: str, kind: str, limits: tuple[float, float] | None = None) -> float | None:
        if name not in tbl:
            return None
        return chk.quantity(tbl[name], f"resolution.{name}", kind, 0.0, limits=limits)

    subcells = tbl.get("subcells")
    if subcells is not None:
        subcells = chk.integer(subcells, "resolution.subcells", 1, MAX_SUBCELLS)
    return Resolution(opt("cell_size", "length", (MIN_SIZE_M, RANGES["length"][1])),
                      opt("time_step", "time"),
                      opt("particles_per_cell", "dimensionless", PARTICLES_PER_CELL_RANGE),
                      opt("particle_weight", "dimensionless", PARTICLE_WEIGHT_RANGE), subcells)


def _run(chk: Checker, tbl: dict) -> RunControl:
    limits = {"settle_steps": (0, MAX_COUNT), "sample_steps": (1, MAX_COUNT),
              "batches": (2, MAX_COUNT), "seed": (0, 2 ** 32 - 1)}
    vals = {k: (chk.integer(tbl[k], f"run.{k}", lo, hi) if k in tbl else None)
            for k, (lo, hi) in limits.items()}
    if vals["sample_steps"] is not None and vals["batches"] is not None:
        if vals["sample_steps"] < vals["batches"]:
            chk.fail("run.sample_steps", f"must be >= run.batches ({vals['batches']}); "
                                         f"got {vals['sample_steps']}")
    budget = None
    if "time_budget" in tbl:
        budget = chk.quantity(tbl["time_budget"], "run.time_budget", "time", 0.0)
    return RunControl(**vals, time_budget_s=budget)


# ----------------------------------------------------------------------------- geometry

def _tol(domain: Domain) -> float:
    return 1e-9 * max(domain.width, domain.height)


def _array(chk: Checker, value: Any, key: str) -> list:
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        chk.fail(key, f"must be an array of tables, each written [[{key}]]")
    return value


def _piece(chk: Checker, tbl: dict, key: str, side: str, span: tuple, single: bool,
           nspecies: int = 1) -> Boundary:
    kinds = tuple(BOUNDARY_KEYS)
    kind = chk.choice(chk.require(tbl, key, "kind", f"allowed: {', '.join(kinds)}"),
                      f"{key}.kind", kinds)
    allowed = BOUNDARY_KEYS[kind]
    for name in tbl:
        if name not in allowed:
            chk.fail(f"{key}.{name}", f'not allowed with kind = "{kind}"; allowed keys for '
                                      f'"{kind}": {", ".join(allowed)}')
    if kind == "periodic" and not single:
        chk.fail(f"{key}.kind", f"periodic must cover the whole side; write boundaries.{side} "
                                "as a single table")
    ends = []
    for name, default in (("from", span[0]), ("to", span[1])):
        if not single:
            chk.require(tbl, key, name, "a side split into pieces needs from and to on every "
                        f"piece (lengths along the side, {span[0]:.6g} m to {span[1]:.6g} m)")
        ends.append(chk.quantity(tbl.get(name, default), f"{key}.{name}", "length"))
    if not ends[1] > ends[0]:
        chk.fail(f"{key}.to", f"must be greater than from ({ends[0]:.6g} m); "
                              f"got {show(tbl.get('to'))}")
    p = t = surface = fractions = None
    v = (0.0, 0.0, 0.0)
    if kind == "reservoir":
        fractions = _fractions_of(chk, tbl, key, nspecies)
        p = chk.quantity(chk.require(tbl, key, "pressure", f"a reservoir needs a pressure > 0, "
                                     f"e.g. \"1 Pa\" (units: {_units('pressure')})"),
                         f"{key}.pressure", "pressure", 0.0)
        t = chk.quantity(chk.require(tbl, key, "temperature", f"a reservoir needs a temperature"
                                     f" > 0, e.g. \"300 K\" (units: {_units('temperature')})"),
                         f"{key}.temperature", "temperature", 0.0)
        v = chk.vector3(tbl.get("velocity", [0.0, 0.0, 0.0]), f"{key}.velocity")
    elif kind == "wall":
        surface = chk.surface(tbl, key)
        t = surface.temperature_k
    return Boundary(side, ends[0], ends[1], kind, p, t, v, surface, fractions)


def _boundaries(chk: Checker, value: Any, domain: Domain,
                nspecies: int = 1) -> tuple[Boundary, ...]:
    table = chk.table(value, "boundaries", SIDES)
    result: list[Boundary] = []
    for side in SIDES:
        key = f"boundaries.{side}"
        if side not in table:
            chk.fail(key, "missing; all four sides must be defined: " + ", ".join(SIDES))
        raw = table[side]
        if isinstance(raw, dict):
            items = [(key, raw)]
        elif isinstance(raw, list) and raw and all(isinstance(v, dict) for v in raw):
            items = [(f"{key}[{i}]", v) for i, v in enumerate(raw)]
        else:
            chk.fail(key, f"must be a table [{key}] (whole side) or an array of tables "
                          f"[[{key}]] (pieces)")
        span = domain.side_range(side)
        pieces = sorted(((k, _piece(chk, v, k, side, span, len(items) == 1, nspecies))
                         for k, v in items),
                        key=lambda item: item[1].start)
        tol, pos = 1e-9 * (span[1] - span[0]), span[0]
        for i, (k, b) in enumerate(pieces):
            if abs(b.start - pos) > tol:
                what = "a gap" if b.start > pos else "an overlap"
                chk.fail(f"{k}.from", f"pieces must tile the side from {span[0]:.6g} m to "
                         f"{span[1]:.6g} m without gaps or overlaps; this piece starts at "
                         f"{b.start:.6g} m, leaving {what} after {pos:.6g} m")
            end = span[1] if i == len(pieces) - 1 else b.end
            if i == len(pieces) - 1 and abs(b.end - span[1]) > tol:
                chk.fail(f"{k}.to", f"pieces must tile the side from {span[0]:.6g} m to "
                         f"{span[1]:.6g} m; the last piece ends at {b.end:.6g} m")
            result.append(Boundary(side, pos, end, b.kind, b.pressure_pa, b.temperature_k,
                                   b.velocity_m_s, b.surface, b.mole_fractions))
            pos = end
    kinds = {b.side: b.kind for b in result}
    for b in result:
        if b.kind == "axis" and not (domain.axisymmetric and b.side == "ymin"):
            chk.fail(f"boundaries.{b.side}.kind", '"axis" is only for boundaries.ymin of a '
                     'domain with geometry = "axisymmetric"')
    if domain.axisymmetric:
        if kinds["ymin"] != "axis":
            chk.fail("boundaries.ymin.kind", 'an axisymmetric domain needs kind = "axis" on '
                     "ymin (the axis of symmetry, y = 0)")
        if kinds["ymax"] == "periodic":
            chk.fail("boundaries.ymax.kind", "periodic is not possible in the radial "
                     "direction; allowed: reservoir, vacuum, symmetry, wall")
    for a, b in (("xmin", "xmax"), ("ymin", "ymax")):
        if (kinds[a] == "periodic") != (kinds[b] == "periodic"):
            have, other = (a, b) if kinds[a] == "periodic" else (b, a)
            chk.fail(f"boundaries.{other}", f"boundaries.{have} is periodic, so boundaries."
                     f"{other} must be periodic too (whole side); periodic pairs: xmin with "
                     "xmax, ymin with ymax")
    return tuple(result)


def _points(chk: Checker, value: Any, key: str, domain: Domain, count: str, least: int,
            most: int | None = None) -> list[tuple[float, float]]:
    if not isinstance(value, list) or len(value) < least or (most and len(value) > most):
        chk.fail(key, f'must be a list of {count} points [x, y], e.g. [["0 mm", "0 mm"], '
                      f'["0 mm", "1 mm"]]; got {show(value)}')
    tol, pts = _tol(domain), []
    for i, item in enumerate(value):
        x, y = chk.point(item, key)
        if not (domain.xmin - tol <= x <= domain.xmax + tol
                and domain.ymin - tol <= y <= domain.ymax + tol):
            chk.fail(key, f"point {i} ({x:.6g} m, {y:.6g} m) lies outside the domain x in "
                          f"[{domain.xmin:.6g}, {domain.xmax:.6g}] m, y in [{domain.ymin:.6g}, "
                          f"{domain.ymax:.6g}] m (points on its edge are allowed)")
        pts.append((min(max(x, domain.xmin), domain.xmax), min(max(y, domain.ymin), domain.ymax)))
    return pts


def _unique_name(chk: Checker, tbl: dict, key: str, seen: dict[str, str]) -> str:
    name = chk.string(chk.require(tbl, key, "name", "give a unique name, e.g. \"plate\""),
                      f"{key}.name", "a name string")
    if name in seen:
        chk.fail(f"{key}.name", f"name {show(name)} is already used by {seen[name]}; names "
                                "must be unique")
    seen[name] = key
    return name


def _walls(chk: Checker, value: Any, domain: Domain) -> tuple[Wall, ...]:
    walls, seen, tol = [], {}, _tol(domain)
    for i, tbl in enumerate(_array(chk, value, "walls")):
        key = f"walls[{i}]"
        chk.table(tbl, key, ARRAY_KEYS["walls"])
        name = _unique_name(chk, tbl, key, seen)
        raw_points = chk.require(tbl, key, "points", "give a list of at least 2 points [x, y]")
        solid = chk.boolean(tbl.get("solid", False), f"{key}.solid")
        pts = _points(chk, raw_points, f"{key}.points", domain,
                      "at least 3" if solid else "at least 2", 3 if solid else 2)
        n = len(pts) if solid else len(pts) - 1
        for j in range(n):
            (x0, y0), (x1, y1) = pts[j], pts[(j + 1) % len(pts)]
            if math.hypot(x1 - x0, y1 - y0) <= tol:
                chk.fail(f"{key}.points", f"points {j} and {(j + 1) % len(pts)} coincide "
                         "(zero-length segment)" + ("; a solid polygon closes itself, do not "
                                                    "repeat the first point" if solid else ""))
        if solid:
            area = 0.5 * sum(pts[j - 1][0] * pts[j][1] - pts[j][0] * pts[j - 1][1]
                             for j in range(len(pts)))
            if abs(area) <= 1e-12 * domain.width * domain.height:
                chk.fail(f"{key}.points", "the solid polygon has zero area; give at least 3 "
                                          "points that are not on one line")
        walls.append(Wall(name, tuple(pts), solid, chk.surface(tbl, key)))
    return tuple(walls)


def _on_symmetry(pt: tuple, boundaries: tuple, domain: Domain, tol: float) -> bool:
    x, y = pt
    for b in boundaries:
        if b.kind != "symmetry":
            continue
        across, along = (x, y) if b.side in ("xmin", "xmax") else (y, x)
        if abs(across - getattr(domain, b.side)) <= tol and b.start - tol <= along <= b.end + tol:
            return True
    return False


def _flux_planes(chk: Checker, value: Any, domain: Domain,
                 boundaries: tuple) -> tuple[FluxPlane, ...]:
    planes, seen, tol = [], {}, _tol(domain)
    for i, tbl in enumerate(_array(chk, value, "flux_planes")):
        key = f"flux_planes[{i}]"
        chk.table(tbl, key, ARRAY_KEYS["flux_planes"])
        name = _unique_name(chk, tbl, key, seen)
        raw_points = chk.require(tbl, key, "points", "give exactly 2 points [x, y]")
        a, b = _points(chk, raw_points, f"{key}.points", domain, "exactly 2", 2, 2)
        if math.hypot(b[0] - a[0], b[1] - a[1]) <= tol:
            chk.fail(f"{key}.points", "the 2 points coincide; they must be distinct")
        mirrored = chk.boolean(tbl.get("mirrored", False), f"{key}.mirrored")
        if mirrored and domain.axisymmetric:
            chk.fail(f"{key}.mirrored", "not used in an axisymmetric domain (a plane from the "
                     "axis already stands for the whole disk); allowed: false")
        if mirrored and not any(_on_symmetry(p, boundaries, domain, tol) for p in (a, b)):
            chk.fail(f"{key}.mirrored", "true is allowed only when one end of the plane lies "
                     'on a boundary piece with kind = "symmetry"; allowed here: false')
        opening = tbl.get("opening")
        if opening is not None:
            opening = chk.choice(opening, f"{key}.opening", OPENINGS)
        length = chk.quantity(tbl.get("opening_length", 0.0), f"{key}.opening_length",
                              "length", 0.0, strict=False)
        planes.append(FluxPlane(name, a, b, mirrored, opening, length))
    return tuple(planes)


def _span(chk: Checker, value: Any, key: str, lo: float, hi: float, what: str) -> tuple:
    if not isinstance(value, list) or len(value) != 2:
        chk.fail(key, f'must be [min, max] with lengths, e.g. ["1 mm", "2 mm"]; allowed units: '
                      f"{_units('length')}; got {show(value)}")
    a, b = (chk.quantity(v, key, "length") for v in value)
    tol = 1e-9 * (hi - lo)
    if not b > a:
        chk.fail(key, f"max ({b:.6g} m) must be greater than min ({a:.6g} m)")
    if a < lo - tol or b > hi + tol:
        chk.fail(key, f"[{a:.6g}, {b:.6g}] m reaches outside the domain's {what} range "
                      f"[{lo:.6g}, {hi:.6g}] m")
    return (max(a, lo), min(b, hi))


def _probes(chk: Checker, value: Any, domain: Domain, names: dict) -> tuple[Probe, ...]:
    probes, seen = [], dict(names)
    for i, tbl in enumerate(_array(chk, value, "probes")):
        key = f"probes[{i}]"
        chk.table(tbl, key, ARRAY_KEYS["probes"])
        name = _unique_name(chk, tbl, key, seen)
        hint = 'give [min, max], e.g. ["1 mm", "2 mm"]'
        xs = _span(chk, chk.require(tbl, key, "x", hint), f"{key}.x", domain.xmin,
                   domain.xmax, "x")
        ys = _span(chk, chk.require(tbl, key, "y", hint), f"{key}.y", domain.ymin, domain.ymax,
                   "radius" if domain.axisymmetric else "y")
        direction = chk.choice(tbl.get("direction", "x"), f"{key}.direction", ("x", "y"))
        probes.append(Probe(name, xs, ys, direction))
    return tuple(probes)


def _histograms(chk: Checker, tbl: dict) -> Histograms:
    vmax = tbl.get("speed_max")
    if vmax is not None:
        vmax = chk.quantity(vmax, "histograms.speed_max", "velocity", 0.0)
    bins = tbl.get("bins")
    if bins is not None:
        bins = chk.integer(bins, "histograms.bins", 10)
        if bins > MAX_HISTOGRAM_BINS:
            chk.fail("histograms.bins", f"must be an integer from 10 to {MAX_HISTOGRAM_BINS}; "
                                        f"got {bins}")
    return Histograms(vmax, bins)


def build_case(raw: dict, path: str) -> dict[str, Any]:
    """Validate a raw case dictionary.

    Parameters
    ----------
    raw : dict
        The parsed TOML document (overrides already applied).
    path : str
        File name used in error messages.

    Returns
    -------
    dict
        Keyword arguments for :class:`rarefy.case.Case` (without the source
        fields).

    Raises
    ------
    CaseError
        For the first problem found.
    """
    chk = Checker(path)
    chk.table(raw, "", TOP_KEYS)
    title = raw.get("title", "")
    if not isinstance(title, str):
        chk.fail("title", f"must be a string; got {show(title)}")
    for name in ("gas", "domain", "boundaries"):
        chk.require(raw, "", name, f"the case needs a [{name}] section")
    gas = _species(chk, chk.table(raw["gas"], "gas", SECTION_KEYS["gas"]))
    domain = _domain(chk, chk.table(raw["domain"], "domain", SECTION_KEYS["domain"]))
    boundaries = _boundaries(chk, raw["boundaries"], domain, len(gas.names))
    walls = _walls(chk, raw.get("walls", []), domain)
    planes = _flux_planes(chk, raw.get("flux_planes", []), domain, boundaries)
    probes = _probes(chk, raw.get("probes", []), domain,
                     {fp.name: "a flux plane" for fp in planes})
    histograms = _histograms(chk, chk.table(raw.get("histograms", {}), "histograms",
                                            SECTION_KEYS["histograms"]))
    reservoirs = [b for b in boundaries if b.kind == "reservoir"]
    default_t = reservoirs[0].temperature_k if reservoirs else 300.0
    initial = _initial(chk, chk.table(raw.get("initial", {}), "initial",
                                      SECTION_KEYS["initial"]), default_t, len(gas.names))
    resolution = _resolution(chk, chk.table(raw.get("resolution", {}), "resolution",
                                            SECTION_KEYS["resolution"]))
    run = _run(chk, chk.table(raw.get("run", {}), "run", SECTION_KEYS["run"]))
    if not reservoirs and initial.pressure_pa <= 0.0:
        chk.fail("boundaries", "no source of gas: give at least one boundary with "
                               'kind = "reservoir", or [initial] pressure > 0')
    return dict(title=title, gas=gas, domain=domain, boundaries=boundaries, walls=walls,
                flux_planes=planes, initial=initial, resolution=resolution, run=run,
                probes=probes, histograms=histograms)


# ----------------------------------------------------------------------------- overrides

_PART_RE = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)(?:\[(\d+)\])?")
# run.time_budget (a time) is listed apart from the run counts (integers)
_HELP_GROUPS = [(s, tuple(k for k in keys if k != "time_budget"))
                for s, keys in SECTION_KEYS.items()]
_HELP_GROUPS.insert([s for s, _ in _HELP_GROUPS].index("run") + 1, ("run", ("time_budget",)))
_OVERRIDE_HELP = (
    "allowed: title; " + "; ".join(f"{s}.{{{','.join(k)}}}" if len(k) > 1 else f"{s}.{k[0]}"
                                   for s, k in _HELP_GROUPS)
    + f"; boundaries.SIDE.KEY or boundaries.SIDE[i].KEY with SIDE in {{{','.join(SIDES)}}} and "
    f"KEY in {{{','.join(ALL_BOUNDARY_KEYS)}}}; "
    + "; ".join(f"{a}[i].{{{','.join(k)}}}" for a, k in ARRAY_KEYS.items())
)


def _override_value(value: object) -> object:
    if not isinstance(value, str) or "\n" in value:
        return value
    try:
        doc = tomllib.loads(f"v = {value}")
    except ValueError:   # TOMLDecodeError, or an integer too long for Python to read
        return value
    return doc["v"] if list(doc) == ["v"] else value


def apply_override(raw: dict, key: str, value: object, path: str) -> None:
    """Set dotted ``key`` (e.g. ``"run.seed"``, ``"walls[0].temperature"``) in ``raw``.

    Raises
    ------
    CaseError
        If the key is not part of the case format or names a missing entry.
    """
    chk = Checker(path)
    parts = [_PART_RE.fullmatch(p) for p in key.split(".")]
    if not key or any(m is None for m in parts):
        chk.fail(key, f"malformed override key; {_OVERRIDE_HELP}")
    names = [m.group(1) for m in parts]
    index = [None if m.group(2) is None else int(m.group(2)) for m in parts]
    value = _override_value(value)
    top = names[0]
    if names == ["title"] and index == [None]:
        raw["title"] = value
        return
    if top in SECTION_KEYS and len(names) == 2 and index == [None, None] \
            and names[1] in SECTION_KEYS[top]:
        target = raw.setdefault(top, {})
    elif top in ARRAY_KEYS and len(names) == 2 and index[0] is not None and index[1] is None \
            and names[1] in ARRAY_KEYS[top]:
        entries = raw.get(top, [])
        if not isinstance(entries, list) or index[0] >= len(entries):
            count = len(entries) if isinstance(entries, list) else 0
            chk.fail(key, f"no such entry: the case has {count} {top} (counted from 0)")
        target = entries[index[0]]
    elif top == "boundaries" and len(names) == 3 and index[0] is None and index[2] is None \
            and names[1] in SIDES and names[2] in ALL_BOUNDARY_KEYS:
        table = raw.setdefault("boundaries", {})
        if not isinstance(table, dict):
            chk.fail("boundaries", "must be a table")
        side = table.setdefault(names[1], {})
        pieces = side if isinstance(side, list) else [side]
        i = index[1] if index[1] is not None else 0
        if index[1] is None and len(pieces) > 1:
            chk.fail(key, f"boundaries.{names[1]} has {len(pieces)} pieces; name one, e.g. "
                          f"boundaries.{names[1]}[0].{names[2]}")
        if i >= len(pieces):
            chk.fail(key, f"no such piece: boundaries.{names[1]} has {len(pieces)} (from 0)")
        target = pieces[i]
    else:
        chk.fail(key, f"unknown override key; {_OVERRIDE_HELP}")
    if not isinstance(target, dict):
        chk.fail(key.rsplit(".", 1)[0], "must be a table")
    target[names[-1]] = value
