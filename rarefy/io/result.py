"""HDF5 result files: one self-describing file per run, written atomically.

The file is also a netCDF-4 file: every array has named dimensions (HDF5 dimension
scales defined at the root, so every group sees them), and every variable a ``units`` and
a ``long_name`` attribute. ``xarray.open_dataset(path, engine="h5netcdf")`` gives the cell
fields on their coordinates ``x`` and ``y``; ``group="raw"`` (or ``"surfaces"``,
``"flux_planes"``, ``"probes"``, ...) the other groups. A sidecar ``result.xdmf``
(:mod:`rarefy.io.xdmf`) describes the grid and fields for XDMF readers.

Layout (format ``rarefy-result-2``; dimensions in brackets):

/                      attrs: format, rarefy_version, seed, title, gas, model, created,
                       plan (JSON), steps, interrupted (0/1), geometry, cell_fields (the
                       field names, space-separated), ...
/x [x], /y [y]         cell centres (m); coordinate variables (in an axisymmetric run x is
                       the axis and y the radius)
/x_node [x_node],      cell edges (m), nx + 1 and ny + 1 of them
/y_node [y_node]
/volume [y, x]         cell volumes (m^3; 0 inside solids)
/row_weight [y]        particle weight factor per cell row
/NAME [y, x]           cell fields (``field_unit``: a mixture adds number_density_SP,
                       mole_fraction_SP, velocity_x_SP, velocity_y_SP per species SP);
                       ``NAME_stderr``: batch-means standard error (NaN with fewer than
                       two batches)
/batch, /facet, ...    dimensions without values (netCDF "dimension but not variable"):
                       batch, facet, plane, probe, segment, xy, end_point_coordinate,
                       rectangle_side, speed_edge, bin, histogram, moment, probe_moment,
                       surface_tally_column, flux_tally_column, collision_column, species
/case/text             the case file as given (string)
/gas/                  species [species] (string; one entry, the gas, for a pure gas),
                       mass [species] (kg)
/surfaces/             owner [facet] (string), centre [facet, xy], normal [facet, xy],
                       area [facet]
/flux_planes/          name [plane] (string), points [plane, end_point_coordinate],
                       mirrored [plane] (0/1), area [plane]
/probes/               name [probe] (string), box [probe, rectangle_side], volume
                       [probe], direction [probe] (string)
/histograms/           speed_edges [speed_edge]: speed-histogram bin edges (m/s)
/walls/                segments [segment, end_point_coordinate]
/raw/                  the accumulated sums from which ``rarefy.post`` derives results:
                       cell_total [y, x, moment], surface_tally [batch, facet,
                       surface_tally_column], flux_tally [batch, plane, flux_tally_column],
                       probe_moments [batch, probe, probe_moment], probe_histograms
                       [batch, probe, histogram, bin] (the last bin collects what falls
                       outside), collisions [batch, collision_column], particles [batch];
                       a ``columns`` attribute names each column. A mixture's tallies
                       have a species dimension after facet, plane, probe or x:
                       cell_total [y, x, species, moment], surface_tally [batch, facet,
                       species, ...], flux_tally [batch, plane, species, ...], probe
                       sums [batch, probe, species, ...]

Strings are variable-length UTF-8 (netCDF ``string``); flags are 0/1 integers.

The file is first written under a temporary name in the same folder and then
renamed over the target (``os.replace``), so a reader sees either the old file
or the complete new one; the XDMF sidecar follows the same way.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from dataclasses import field as dataclass_field
from datetime import datetime, timezone
from pathlib import Path

import h5py
import numpy as np

from rarefy import __version__
from rarefy.io.atomic import atomic_path
from rarefy.kernels.config import T_HITS
from rarefy.post.fields import cell_fields, field_unit, species_internal

__all__ = ["RESULT_NAME", "FORMAT", "ResultData", "ResultFormatError", "write_result",
           "read_result"]

RESULT_NAME = "result.h5"
FORMAT = "rarefy-result-2"

# netCDF-4 marks a dimension that has no coordinate values with this NAME on its scale
NOT_A_VARIABLE = "This is a netCDF dimension but not a netCDF variable."

FIELD_LONG_NAMES = {
    "number_density": "number density",
    "velocity_x": "flow velocity, x component",
    "velocity_y": "flow velocity, y component (radial in axisymmetric runs)",
    "velocity_z": "flow velocity, z component (swirl in axisymmetric runs)",
    "temperature": "translational temperature",
    "temperature_x": "translational temperature from the x velocity component",
    "temperature_y": "translational temperature from the y velocity component",
    "temperature_z": "translational temperature from the z velocity component",
    "pressure": "pressure (n k T)",
    "shear_stress_xy": "shear stress, xy component",
    "heat_flux_x": "heat flux (translational and internal energy), x component",
    "heat_flux_y": "heat flux (translational and internal energy), y component",
    "particles_per_cell": "mean number of simulated particles per cell",
    "temperature_rotational": "rotational temperature",
    "temperature_vibrational": "vibrational temperature (harmonic mode)",
    "temperature_overall": "overall temperature (translation, rotation, vibration)",
}

MOMENT_COLUMNS = ("count (1), sum vx (m/s), sum vy (m/s), sum vz (m/s), sum vx^2 (m^2/s^2), "
                  "sum vy^2, sum vz^2, sum vx vy, sum vx vz, sum vy vz, sum c^2 vx "
                  "(m^3/s^3), sum c^2 vy, sum c^2 (m^2/s^2), sum of rotational energy per "
                  "unit mass (m^2/s^2), sum of vibrational energy per unit mass, sums of the "
                  "internal energy per unit mass times vx and times vy (m^3/s^3)")
SURFACE_COLUMNS = ("hits (1), sum of incident normal speed (m/s), sum of reflected normal "
                   "speed, sum of incident tangential velocity (m/s), sum of reflected "
                   "tangential velocity, sum of incident c^2 (m^2/s^2), sum of reflected c^2, "
                   "sums of incident and of re-emitted internal energy per unit mass "
                   "(m^2/s^2)")
FLUX_COLUMNS = ("positive crossings (1), negative crossings (1), sums of c (m/s) positive, "
                "negative, sums of c^2 (m^2/s^2) positive, negative, then the speed "
                "histogram of positive crossings (bins of speed_edges, then overflow) and "
                "that of negative crossings (the same)")
PROBE_MOMENT_COLUMNS = ("weighted sums of 1, vx, vy, vz (m/s), vx^2, vy^2, vz^2, vx vy, "
                        "vx vz, vy vz (m^2/s^2), c (m/s), c^2 (m^2/s^2), rotational and "
                        "vibrational energy per unit mass (m^2/s^2)")
HISTOGRAM_ROWS = ("speed on [0, vmax), vx, vy, vz on [-vmax, vmax); bins of equal width, "
                  "the last bin collecting what falls outside")
COLLISION_COLUMNS = "collisions (1), sum of collision-pair separations (m), candidates (1)"


class ResultFormatError(ValueError):
    """The file is not a result this version of rarefy can read."""


@dataclass
class ResultData:
    """Everything post-processing needs from a result file (SI units)."""

    path: str
    attrs: dict
    plan: dict
    case_text: str
    x: np.ndarray
    y: np.ndarray
    volume: np.ndarray
    fields: dict
    stderr: dict
    cell_total: np.ndarray
    surf: np.ndarray
    flux: np.ndarray
    collisions: np.ndarray
    particles: np.ndarray
    steps_per_batch: int
    facet_owner: list
    facet_xy: np.ndarray
    facet_normal: np.ndarray
    facet_area: np.ndarray
    plane_names: list
    plane_points: np.ndarray
    plane_mirrored: np.ndarray
    plane_area: np.ndarray
    walls: list
    probe_names: list = dataclass_field(default_factory=list)
    probe_box: np.ndarray = None
    probe_volume: np.ndarray = None
    probe_direction: list = dataclass_field(default_factory=list)
    probe_mom: np.ndarray = None       # [batch, probe, PM_*]
    probe_hist: np.ndarray = None      # [batch, probe, H_*, bins + 1]
    speed_edges: np.ndarray = None     # bin edges of the speed histograms (m/s)
    # mixtures: the species and their masses; flux-plane rows are the whole gas
    # (plane_species -1) followed by one row per species; probe rows one per species
    species: list = dataclass_field(default_factory=list)
    species_mass: np.ndarray = None
    plane_species: list = None
    plane_index: list = None
    probe_species: list = None
    probe_index: list = None

    def row_mass(self, k: int) -> float:
        """Molecular mass (kg) of species k; the gas's (mean) mass for k < 0."""
        return float(self.species_mass[k]) if k >= 0 else float(self.attrs["mass_kg"])

    @property
    def histogram_bins(self) -> int:
        return len(self.speed_edges) - 1 if self.speed_edges is not None else 0

    @property
    def batches(self) -> int:
        return self.flux.shape[0]


class _Writer:
    """Creates netCDF-4 dimensions (HDF5 dimension scales at the root, visible from every
    group) and variables attached to them, each with ``units`` and ``long_name``."""

    def __init__(self, f: h5py.File):
        self.f = f
        self.dims: dict[str, h5py.Dataset] = {}

    def _register(self, name: str, ds: h5py.Dataset) -> None:
        ds.attrs["_Netcdf4Dimid"] = np.int32(len(self.dims))
        self.dims[name] = ds

    def coordinate(self, name: str, data, units: str, long_name: str) -> h5py.Dataset:
        """A 1-D coordinate variable: a dimension of the same name with values."""
        ds = self.f.create_dataset(name, data=np.asarray(data, dtype=float))
        ds.attrs.update(units=units, long_name=long_name)
        ds.make_scale(name)
        self._register(name, ds)
        return ds

    def dimension(self, name: str, size: int) -> None:
        """A dimension without values (netCDF's 'dimension but not variable')."""
        ds = self.f.create_dataset(name, shape=(int(size),), dtype="f4")
        ds.make_scale(f"{NOT_A_VARIABLE}{int(size):10d}")
        self._register(name, ds)

    def variable(self, group, name: str, data, dims: tuple, units: str, long_name: str,
                 text: bool = False, **attrs) -> h5py.Dataset:
        """A variable on the named dimensions (created before with :meth:`dimension` or
        :meth:`coordinate`); ``text``: strings, stored as variable-length UTF-8."""
        data = np.asarray(data, dtype=object if text else None)
        if text:
            data = np.array([str(s) for s in data.ravel()], dtype=object).reshape(data.shape)
            ds = group.create_dataset(name, data=data, dtype=h5py.string_dtype())
        else:
            ds = group.create_dataset(name, data=data)
        if ds.ndim != len(dims):
            raise ValueError(f"{ds.name}: {ds.ndim} axes but dimensions {dims}")
        for axis, d in enumerate(dims):
            scale = self.dims[d]
            if scale.shape[0] != ds.shape[axis]:
                raise ValueError(f"{ds.name}: axis {axis} has {ds.shape[axis]} entries but "
                                 f"dimension {d!r} {scale.shape[0]}")
            ds.dims[axis].attach_scale(scale)
        ds.attrs.update(units=units, long_name=long_name, **attrs)
        return ds


def write_result(path: str | Path, sim, interrupted: bool = False,
                 status: str | None = None) -> Path:
    """Write the state of ``sim`` (its completed batches) to ``path`` atomically, and the
    XDMF sidecar (``result.xdmf``) next to it. ``status`` (e.g. "running: ...") is
    recorded as the stop reason instead of the simulation's own."""
    from rarefy.io.xdmf import write_xdmf

    path = Path(path)
    with atomic_path(path) as tmp:
        _write(tmp, sim, interrupted, status)
    write_xdmf(path)
    return path


def _write(tmp: Path, sim, interrupted: bool, status: str | None) -> None:
    acc, geom, plan = sim.acc, sim.geom, sim.plan
    nb = acc.batch
    nsteps = max(1, nb * acc.steps_per_batch)
    fields = cell_fields(acc.cell_total, nsteps, geom.volume, sim.masses, sim.cell_fnum,
                         *species_internal(plan), sim.mix.names)
    nsp = sim.nsp
    axisymmetric = sim.case.domain.geometry == "axisymmetric"
    with h5py.File(tmp, "w") as f:
        f.attrs.update(
            format=FORMAT, rarefy_version=__version__, seed=sim.seed, title=sim.case.title,
            gas=plan.gas, model=plan.model, plan=json.dumps(plan.to_dict()),
            created=datetime.now(timezone.utc).isoformat(timespec="seconds"),
            steps=sim.clock.step, interrupted=np.int8(bool(interrupted)),
            phase_seconds=json.dumps(sim.clock.phase_seconds),
            particle_steps=sim.clock.particle_steps, mass_kg=sim.mass,
            particle_weight=sim.fnum, time_step_s=sim.dt, steps_per_batch=acc.steps_per_batch,
            sample_start_step=plan.settle_steps if getattr(sim, "sample_start_step", None)
            is None else sim.sample_start_step,
            settle_reason=getattr(sim, "settle_reason", ""),
            geometry=sim.case.domain.geometry,
            lost_duplicates=sim.lost_duplicates,
            case_overrides=json.dumps([list(kv) for kv in sim.case.overrides]),
            stop_reason=status or getattr(sim, "stop_reason", "") or (
                "interrupted" if interrupted else ""),
            cell_fields=" ".join(fields),
            replicas=getattr(sim, "replicas", 1),
            replica_seeds=json.dumps(getattr(sim, "replica_seeds", [])),
        )
        w = _Writer(f)
        xc, yc = geom.cell_centres()
        ylong = "radius" if axisymmetric else "y"
        w.coordinate("x", xc, "m", "cell centre, x" + (" (along the axis)" if axisymmetric
                                                        else ""))
        w.coordinate("y", yc, "m", f"cell centre, {ylong}")
        w.coordinate("x_node", geom.box[0] + np.arange(geom.nx + 1) * geom.dx, "m",
                     "cell edge, x")
        w.coordinate("y_node", geom.box[2] + np.arange(geom.ny + 1) * geom.dy, "m",
                     f"cell edge, {ylong}")
        pr = sim.probes
        nbins = acc.nbins
        for name, size in (("batch", nb), ("facet", len(geom.facet_owner)),
                           ("plane", len(geom.plane_names)), ("probe", len(pr.names)),
                           ("segment", len(geom.segs)), ("xy", 2),
                           ("end_point_coordinate", 4), ("rectangle_side", 4),
                           ("speed_edge", nbins + 1), ("bin", nbins + 1),
                           ("histogram", acc.probe_hist.shape[2]),
                           ("moment", acc.cell_total.shape[1] // nsp),
                           ("probe_moment", acc.probe_mom.shape[2]),
                           ("surface_tally_column", acc.surf.shape[2]),
                           ("flux_tally_column", acc.flux.shape[2]),
                           ("collision_column", acc.collisions.shape[1]),
                           ("species", nsp)):
            w.dimension(name, size)
        yx = ("y", "x")
        w.variable(f, "volume", geom.volume.reshape(geom.ny, geom.nx), yx, "m^3",
                   "cell volume (gas part; 0 inside solids)")
        w.variable(f, "row_weight", geom.row_weight, ("y",), "1",
                   "particle weight factor of the cell row")
        for name, value in fields.items():
            err = acc.field_stderr(name) if nb >= 2 and name in acc.field_sum \
                else np.full_like(value, np.nan)
            long_name = FIELD_LONG_NAMES.get(name, name.replace("_", " "))
            w.variable(f, name, value.reshape(geom.ny, geom.nx), yx, field_unit(name),
                       long_name, ancillary_variables=name + "_stderr")
            w.variable(f, name + "_stderr", err.reshape(geom.ny, geom.nx), yx,
                       field_unit(name), "standard error of the " + long_name)
        w.variable(f.create_group("case"), "text", sim.case.source_text, (), "1",
                   "the case file as given", text=True)
        gg = f.create_group("gas")
        w.variable(gg, "species", list(sim.mix.names) if nsp > 1 else [plan.gas],
                   ("species",), "1", "the species, in the order of their index", text=True)
        w.variable(gg, "mass", sim.masses, ("species",), "kg", "molecular mass")
        sp_dim = ("species",) if nsp > 1 else ()

        def per_species(a, rows):   # [batch, rows * nsp, ...] -> [batch, rows, nsp, ...]
            return a.reshape(a.shape[0], rows, nsp, *a.shape[2:]) if nsp > 1 else a
        sg = f.create_group("surfaces")
        w.variable(sg, "owner", geom.facet_owner, ("facet",), "1",
                   "wall or boundary the facet belongs to", text=True)
        w.variable(sg, "centre", geom.facet_xy.reshape(-1, 2), ("facet", "xy"), "m",
                   "facet centre")
        w.variable(sg, "normal", geom.facet_normal.reshape(-1, 2), ("facet", "xy"), "1",
                   "unit normal into the gas (domain sides) or left normal (walls)")
        w.variable(sg, "area", geom.facet_area, ("facet",), "m^2", "facet area")
        pg = f.create_group("flux_planes")
        w.variable(pg, "name", geom.plane_names, ("plane",), "1", "flux plane name", text=True)
        w.variable(pg, "points", np.asarray(geom.planes).reshape(-1, 4),
                   ("plane", "end_point_coordinate"), "m", "end points x0, y0, x1, y1")
        w.variable(pg, "mirrored", np.asarray(geom.plane_mirrored, dtype=np.int8),
                   ("plane",), "1", "1 where the plane stands for itself and its mirror "
                   "image in a symmetry plane")
        w.variable(pg, "area", geom.plane_area, ("plane",), "m^2",
                   "flux plane area (mirror images included)")
        hg = f.create_group("histograms")
        w.variable(hg, "speed_edges", np.linspace(0.0, sim.speed_max, nbins + 1),
                   ("speed_edge",), "m/s", "bin edges of the speed histograms")
        prg = f.create_group("probes")
        w.variable(prg, "name", pr.names, ("probe",), "1", "probe name", text=True)
        w.variable(prg, "box", np.asarray(pr.box, dtype=float).reshape(-1, 4),
                   ("probe", "rectangle_side"), "m", "probe region xmin, xmax, ymin, ymax")
        w.variable(prg, "volume", pr.volume, ("probe",), "m^3", "probe volume")
        w.variable(prg, "direction", pr.direction, ("probe",), "1",
                   "flow direction of the probe (x, y or z)", text=True)
        wg = f.create_group("walls")
        w.variable(wg, "segments", geom.segs[:, :4], ("segment", "end_point_coordinate"),
                   "m", "wall segments x0, y0, x1, y1")
        raw = f.create_group("raw")
        mixed = "SI, per column (see columns)"
        w.variable(raw, "cell_total",
                   acc.cell_total.reshape(geom.ny, geom.nx, *((nsp,) if nsp > 1 else ()),
                                          -1),
                   yx + sp_dim + ("moment",), mixed, "sums over the sampled steps of the particles' "
                   "velocity moments per cell", columns=MOMENT_COLUMNS)
        w.variable(raw, "surface_tally", per_species(acc.surf[:nb], len(geom.facet_owner)),
                   ("batch", "facet", *sp_dim, "surface_tally_column"), mixed,
                   "per batch and facet: wall hits and momentum and energy sums",
                   columns=SURFACE_COLUMNS)
        w.variable(raw, "flux_tally", per_species(acc.flux[:nb], len(geom.plane_names)),
                   ("batch", "plane", *sp_dim, "flux_tally_column"),
                   mixed, "per batch and flux plane: crossings, speed sums and speed "
                   "histograms", columns=FLUX_COLUMNS)
        w.variable(raw, "probe_moments", per_species(acc.probe_mom[:nb], len(pr.names)),
                   ("batch", "probe", *sp_dim, "probe_moment"), mixed,
                   "per batch and probe: weighted velocity sums", columns=PROBE_MOMENT_COLUMNS)
        w.variable(raw, "probe_histograms", per_species(acc.probe_hist[:nb], len(pr.names)),
                   ("batch", "probe", *sp_dim, "histogram", "bin"), "1",
                   "per batch and probe: weighted counts of speed, vx, vy, vz per bin",
                   columns=HISTOGRAM_ROWS)
        w.variable(raw, "collisions", acc.collisions[:nb], ("batch", "collision_column"),
                   mixed, "per batch: collision tallies", columns=COLLISION_COLUMNS)
        w.variable(raw, "particles", acc.particles[:nb], ("batch",), "1",
                   "per batch: sum over its steps of the number of simulated particles")


def _strings(ds) -> list:
    value = ds[()]
    if np.ndim(value) == 0:
        value = [value]
    return [s.decode() if isinstance(s, bytes) else str(s) for s in value]


def _attr(value):
    if isinstance(value, bytes):
        return value.decode()
    return value.item() if hasattr(value, "item") else value


def read_result(path: str | Path) -> ResultData:
    """Read a result file written by :func:`write_result`; raises
    :class:`ResultFormatError` for a file of another format."""
    path = Path(path)
    if path.is_dir():
        path = path / RESULT_NAME
    with h5py.File(path, "r") as f:
        attrs = {k: _attr(v) for k, v in f.attrs.items()}
        if attrs.get("format") != FORMAT:
            raise ResultFormatError(
                f"{path}: result format {attrs.get('format', '(none)')!r}, this version of "
                f"rarefy reads {FORMAT!r}; run the case again")
        attrs["interrupted"] = bool(attrs.get("interrupted", 0))
        names = str(attrs.get("cell_fields", "")).split()
        ny, nx = f["volume"].shape
        data = ResultData(
            path=str(path), attrs=attrs, plan=json.loads(attrs["plan"]),
            case_text=_strings(f["case/text"])[0],
            x=f["x"][()], y=f["y"][()], volume=f["volume"][()],
            fields={k: f[k][()] for k in names},
            stderr={k: f[k + "_stderr"][()] for k in names},
            cell_total=f["raw/cell_total"][()].reshape(nx * ny, -1),
            surf=f["raw/surface_tally"][()],
            flux=f["raw/flux_tally"][()], collisions=f["raw/collisions"][()],
            particles=f["raw/particles"][()], steps_per_batch=int(attrs["steps_per_batch"]),
            facet_owner=_strings(f["surfaces/owner"]), facet_xy=f["surfaces/centre"][()],
            facet_normal=f["surfaces/normal"][()], facet_area=f["surfaces/area"][()],
            plane_names=_strings(f["flux_planes/name"]),
            plane_points=f["flux_planes/points"][()],
            plane_mirrored=f["flux_planes/mirrored"][()].astype(bool),
            plane_area=f["flux_planes/area"][()],
            walls=[tuple(s) for s in f["walls/segments"][()]],
            **_probe_data(f),
        ) if nx * ny else None
        if data is not None:
            species = _strings(f["gas/species"]) if "gas" in f else [attrs.get("gas", "")]
            masses = f["gas/mass"][()] if "gas" in f else np.array([attrs["mass_kg"]])
            _arrange_species(data, species, masses)
        return data


def _arrange_species(r: ResultData, species: list, masses: np.ndarray) -> None:
    """Per-species tallies of a mixture as rows the post-processing reads: surfaces summed
    (momentum and energy weighted by m_k / m_mean, as for a pure gas of the mean mass),
    flux planes as the whole gas then one row per species ("throat He"), probes one row
    per species ("jet He")."""
    r.species, r.species_mass = list(species), np.asarray(masses, dtype=float)
    nplane, nprobe = len(r.plane_names), len(r.probe_names)
    r.plane_species, r.plane_index = [-1] * nplane, list(range(nplane))
    r.probe_species, r.probe_index = [-1] * nprobe, list(range(nprobe))
    nsp = len(species)
    if nsp < 2:
        return
    w = r.species_mass / float(r.attrs["mass_kg"])
    weight = np.ones((nsp, r.surf.shape[-1])) * w[:, None]
    weight[:, T_HITS] = 1.0
    r.surf = (r.surf * weight).sum(axis=2)
    rows, names, pidx, psp = [], [], [], []
    for p, name in enumerate(r.plane_names):
        rows.append(r.flux[:, p].sum(axis=1))
        names.append(name)
        pidx.append(p)
        psp.append(-1)
        for k, sp in enumerate(species):
            rows.append(r.flux[:, p, k])
            names.append(f"{name} {sp}")
            pidx.append(p)
            psp.append(k)
    r.flux = np.stack(rows, axis=1) if rows else r.flux[:, :, 0]
    r.plane_names, r.plane_index, r.plane_species = names, pidx, psp
    r.plane_points = r.plane_points[pidx]
    r.plane_mirrored = r.plane_mirrored[pidx]
    r.plane_area = r.plane_area[pidx]
    q_idx = [q for q in range(nprobe) for _ in range(nsp)]
    r.probe_species = [k for _ in range(nprobe) for k in range(nsp)]
    r.probe_names = [f"{r.probe_names[q]} {species[k]}"
                     for q, k in zip(q_idx, r.probe_species)]
    r.probe_index = q_idx
    r.probe_mom = r.probe_mom.reshape(r.probe_mom.shape[0], nprobe * nsp,
                                      *r.probe_mom.shape[3:])
    r.probe_hist = r.probe_hist.reshape(r.probe_hist.shape[0], nprobe * nsp,
                                        *r.probe_hist.shape[3:])
    r.probe_box = r.probe_box[q_idx]
    r.probe_volume = r.probe_volume[q_idx]
    r.probe_direction = [r.probe_direction[q] for q in q_idx]


def _probe_data(f) -> dict:
    return dict(
        probe_names=_strings(f["probes/name"]), probe_box=f["probes/box"][()],
        probe_volume=f["probes/volume"][()], probe_direction=_strings(f["probes/direction"]),
        probe_mom=f["raw/probe_moments"][()], probe_hist=f["raw/probe_histograms"][()],
        speed_edges=f["histograms/speed_edges"][()])
