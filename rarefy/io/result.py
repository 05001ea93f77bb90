"""HDF5 result files: one self-describing file per run, written atomically.

Layout (every dataset carries a ``units`` attribute):

/                 attrs: format, rarefy_version, seed, title, gas, model, created,
                  plan (JSON), steps, interrupted
/case/text        the case file as given
/grid/x, /grid/y  cell centres (m), attached as dimension scales of every field
/grid/volume      cell volumes (m^3)
/fields/NAME      cell fields [y, x] (``NAME_stderr``: batch-means standard error)
/surfaces/...     facet owner, centre, normal, area
/flux_planes/...  names, end points, mirrored flags
/probes/...       names, rectangles, gas volumes, flow directions; per-batch velocity
                  sums and histograms in /raw (speed bin edges in /histograms)
/raw/...          the accumulated sums (cell moments, per-batch surface, flux-plane
                  and collision tallies) from which ``rarefy.post`` derives results

The file is first written under a temporary name in the same folder and then
renamed over the target (``os.replace``), so a reader sees either the old file
or the complete new one.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from dataclasses import field as dataclass_field
from datetime import datetime, timezone
from pathlib import Path

import h5py
import numpy as np

from rarefy import __version__
from rarefy.post.fields import FIELD_UNITS, fields_from_moments

__all__ = ["RESULT_NAME", "ResultData", "write_result", "read_result"]

RESULT_NAME = "result.h5"
FORMAT = "rarefy-result-1"


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

    @property
    def histogram_bins(self) -> int:
        return len(self.speed_edges) - 1 if self.speed_edges is not None else 0

    @property
    def batches(self) -> int:
        return self.flux.shape[0]


def _dataset(group, name, data, units):
    ds = group.create_dataset(name, data=data)
    ds.attrs["units"] = units
    return ds


def write_result(path: str | Path, sim, interrupted: bool = False) -> Path:
    """Write the state of ``sim`` (its completed batches) to ``path`` atomically."""
    path = Path(path)
    tmp = path.with_name(path.name + ".tmp")
    acc, geom, plan = sim.acc, sim.geom, sim.plan
    nb = acc.batch
    nsteps = max(1, nb * acc.steps_per_batch)
    with h5py.File(tmp, "w") as f:
        f.attrs.update(
            format=FORMAT, rarefy_version=__version__, seed=sim.seed, title=sim.case.title,
            gas=plan.gas, model=plan.model, plan=json.dumps(plan.to_dict()),
            created=datetime.now(timezone.utc).isoformat(timespec="seconds"),
            steps=sim.clock.step, interrupted=interrupted,
            phase_seconds=json.dumps(sim.clock.phase_seconds),
            particle_steps=sim.clock.particle_steps, mass_kg=sim.mass,
            particle_weight=sim.fnum, time_step_s=sim.dt, steps_per_batch=acc.steps_per_batch,
            sample_start_step=plan.settle_steps, geometry=sim.case.domain.geometry,
            lost_duplicates=sim.lost_duplicates,
            case_overrides=json.dumps([list(kv) for kv in sim.case.overrides]),
            stop_reason="interrupted" if interrupted else getattr(sim, "stop_reason", ""),
        )
        f.create_group("case").create_dataset("text", data=sim.case.source_text)
        grid = f.create_group("grid")
        xc, yc = geom.cell_centres()
        gx = _dataset(grid, "x", xc, "m")
        gy = _dataset(grid, "y", yc, "m")
        gx.make_scale("x")
        gy.make_scale("y")
        _dataset(grid, "volume", geom.volume.reshape(geom.ny, geom.nx), "m^3")
        fields = fields_from_moments(acc.cell_total, nsteps, geom.volume, sim.mass,
                                     sim.cell_fnum)
        fg = f.create_group("fields")
        for name, value in fields.items():
            for suffix, data in (("", value), ("_stderr", acc.field_stderr(name)
                                                if nb >= 2 and name in acc.field_sum
                                                else np.full_like(value, np.nan))):
                ds = _dataset(fg, name + suffix, data.reshape(geom.ny, geom.nx),
                              FIELD_UNITS[name])
                ds.dims[0].attach_scale(gy)
                ds.dims[1].attach_scale(gx)
        sg = f.create_group("surfaces")
        sg.create_dataset("owner", data=np.array(geom.facet_owner, dtype="S"))
        _dataset(sg, "centre", geom.facet_xy, "m")
        _dataset(sg, "normal", geom.facet_normal, "1")
        _dataset(sg, "area", geom.facet_area, "m^2")
        pg = f.create_group("flux_planes")
        pg.create_dataset("name", data=np.array(geom.plane_names, dtype="S"))
        _dataset(pg, "points", geom.planes, "m")
        pg.create_dataset("mirrored", data=geom.plane_mirrored)
        _dataset(pg, "area", geom.plane_area, "m^2")
        _dataset(grid, "row_weight", geom.row_weight, "1")
        hg = f.create_group("histograms")
        _dataset(hg, "speed_edges", np.linspace(0.0, sim.speed_max, acc.nbins + 1), "m/s")
        prg = f.create_group("probes")
        pr = sim.probes
        prg.create_dataset("name", data=np.array(pr.names, dtype="S"))
        _dataset(prg, "box", pr.box, "m")
        _dataset(prg, "volume", pr.volume, "m^3")
        prg.create_dataset("direction", data=np.array(pr.direction, dtype="S"))
        wg = f.create_group("walls")
        _dataset(wg, "segments", geom.segs[:, :4], "m")
        raw = f.create_group("raw")
        _dataset(raw, "cell_total", acc.cell_total, "sums of 1, v, vv, c^2 v, c^2 (SI)")
        _dataset(raw, "surface_tally", acc.surf[:nb], "per batch: hits, sums of v (m/s), c^2")
        _dataset(raw, "flux_tally", acc.flux[:nb], "per batch: crossings, sums of c, c^2, "
                 "then speed histograms of positive and negative crossings (+ overflow)")
        _dataset(raw, "probe_moments", acc.probe_mom[:nb], "per batch: weighted sums of 1, v "
                 "(m/s), vv, c, c^2")
        _dataset(raw, "probe_histograms", acc.probe_hist[:nb], "per batch: weighted counts of "
                 "speed, vx, vy, vz per bin (+ overflow)")
        _dataset(raw, "collisions", acc.collisions[:nb], "per batch: count, separation (m), "
                 "candidates")
        _dataset(raw, "particles", acc.particles[:nb], "per batch: sum over steps of count")
    os.replace(tmp, path)
    return path


def _strings(ds) -> list:
    return [s.decode() if isinstance(s, bytes) else str(s) for s in ds[()]]


def read_result(path: str | Path) -> ResultData:
    """Read a result file written by :func:`write_result`."""
    path = Path(path)
    if path.is_dir():
        path = path / RESULT_NAME
    with h5py.File(path, "r") as f:
        attrs = {k: (v.item() if hasattr(v, "item") else v) for k, v in f.attrs.items()}
        names = [k for k in f["fields"] if not k.endswith("_stderr")]
        ny, nx = f["grid/volume"].shape
        text = f["case/text"][()]
        return ResultData(
            path=str(path), attrs=attrs, plan=json.loads(attrs["plan"]),
            case_text=text.decode() if isinstance(text, bytes) else str(text),
            x=f["grid/x"][()], y=f["grid/y"][()], volume=f["grid/volume"][()],
            fields={k: f["fields"][k][()] for k in names},
            stderr={k: f["fields"][k + "_stderr"][()] for k in names},
            cell_total=f["raw/cell_total"][()], surf=f["raw/surface_tally"][()],
            flux=f["raw/flux_tally"][()], collisions=f["raw/collisions"][()],
            particles=f["raw/particles"][()], steps_per_batch=int(attrs["steps_per_batch"]),
            facet_owner=_strings(f["surfaces/owner"]), facet_xy=f["surfaces/centre"][()],
            facet_normal=f["surfaces/normal"][()], facet_area=f["surfaces/area"][()],
            plane_names=_strings(f["flux_planes/name"]),
            plane_points=f["flux_planes/points"][()],
            plane_mirrored=f["flux_planes/mirrored"][()],
            plane_area=f["flux_planes/area"][()],
            walls=[tuple(s) for s in f["walls/segments"][()]],
            **_probe_data(f),
        ) if nx * ny else None


def _probe_data(f) -> dict:
    if "probes" not in f:
        return {}
    return dict(
        probe_names=_strings(f["probes/name"]), probe_box=f["probes/box"][()],
        probe_volume=f["probes/volume"][()], probe_direction=_strings(f["probes/direction"]),
        probe_mom=f["raw/probe_moments"][()], probe_hist=f["raw/probe_histograms"][()],
        speed_edges=f["histograms/speed_edges"][()])
