"""CSV tables of a result, for spreadsheets and scripts that do not read HDF5.

:func:`export_csv` writes into one folder:

* ``fields.csv``: one row per cell (row-major: x varies fastest), ``x_m``, ``y_m`` (the
  radius in axisymmetric runs), ``volume_m3``, then every cell field and its standard
  error, the unit last in the column name (``number_density_m3``,
  ``number_density_stderr_m3``, ``velocity_x_m_s``, ``temperature_k``, ...);
* ``surfaces.csv``: one row per surface facet: owner, centre, normal, area, and the
  pressure, shear stress, heat flux and number flux to it with standard errors (the
  report's per-wall formulas, :func:`rarefy.post.results.surface_results`, applied to
  every facet alone);
* ``flux_planes.csv``: one row per flux plane with the numbers of ``rarefy report``
  (nested blocks flattened: ``analytic_free_molecular_transmission``);
* ``probes.csv``: one row per probe with the report's scalar numbers (fits flattened:
  ``speed_fit_temperature_k``, ``component_fits_x_temperature_k``, ...);
* ``probe_histograms.csv``: long format, one row per probe, quantity (``speed``,
  ``velocity_x``, ``velocity_y``, ``velocity_z``) and bin: the bin's edges, the
  weighted count summed over the batches, the probability density (normalised over the
  histogram's range; molecules beyond it are counted in ``probes.csv``,
  ``overflow_fraction``) and the batch-means standard errors of both.

Numbers are written in full precision (shortest round-trip form), empty where not
defined (NaN). Every file is written under a temporary name and renamed over the
target.
"""

from __future__ import annotations

import csv
import io
import math
import os
from dataclasses import replace
from pathlib import Path

import numpy as np

from rarefy.io.result import ResultData, read_result
from rarefy.kernels.config import H_SPEED, H_VX, H_VY, H_VZ
from rarefy.post.fields import field_unit
from rarefy.post.results import surface_results
from rarefy.report import build_report

__all__ = ["CSV_FILES", "export_csv", "facet_results", "unit_suffix", "field_columns",
           "flatten"]

CSV_FILES = ("fields.csv", "surfaces.csv", "flux_planes.csv", "probes.csv",
             "probe_histograms.csv")
HISTOGRAMS = (("speed", H_SPEED), ("velocity_x", H_VX), ("velocity_y", H_VY),
              ("velocity_z", H_VZ))
REGION = ("xmin", "xmax", "ymin", "ymax")


def unit_suffix(unit: str) -> str:
    """Column-name form of a unit, as in the report's keys: ``m^-3`` -> ``m3``, ``m/s`` ->
    ``m_s``, ``K`` -> ``k``, ``W/m^2`` -> ``w_m2``; dimensionless (``1``) -> ``""``."""
    if unit in ("", "1"):
        return ""
    return (unit.lower().replace("^-", "").replace("^", "").replace("/", "_")
            .replace(" ", "_"))


def _with_unit(name: str, unit: str) -> str:
    suffix = unit_suffix(unit)
    return f"{name}_{suffix}" if suffix else name


def field_columns(name: str) -> tuple[str, str]:
    """The ``fields.csv`` columns of a cell field and of its standard error."""
    try:
        unit = field_unit(name)
    except KeyError:
        unit = "1"
    return _with_unit(name, unit), _with_unit(name + "_stderr", unit)


def _cell(value) -> str:
    if value is None:
        return ""
    if isinstance(value, (bool, np.bool_)):
        return "1" if value else "0"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return repr(v) if math.isfinite(v) else ""
    return str(value)


def _write_csv(path: Path, header: list, rows) -> Path:
    buf = io.StringIO()
    out = csv.writer(buf, lineterminator="\n")
    out.writerow(header)
    for row in rows:
        out.writerow([_cell(v) for v in row])
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(buf.getvalue(), encoding="utf-8")
    os.replace(tmp, path)
    return path


def flatten(data: dict, prefix: str = "") -> dict:
    """Nested report blocks as one level: ``{"a": {"b_k": 1}}`` -> ``{"a_b_k": 1}``.
    Explanatory ``note`` texts are left out; a probe's ``region_m`` becomes
    ``region_xmin_m`` ... ``region_ymax_m``."""
    out = {}
    for key, value in data.items():
        if key == "note":
            continue
        name = prefix + key
        if isinstance(value, dict):
            out.update(flatten(value, name + "_"))
        elif key == "region_m" and len(value) == 4:
            out.update({f"{prefix}region_{side}_m": v for side, v in zip(REGION, value)})
        elif isinstance(value, (list, tuple)):
            out.update({f"{name}_{i}": v for i, v in enumerate(value)})
        else:
            out[name] = value
    return out


def _table(first: str, rows: dict) -> tuple[list, list]:
    """Header and rows of a table with one row per name in ``rows`` (a dict of flat
    dicts): the union of their keys, in order of appearance."""
    keys: dict = {}
    for row in rows.values():
        keys.update(dict.fromkeys(row))
    header = [first] + list(keys)
    return header, [[name] + [row.get(k) for k in keys] for name, row in rows.items()]


def facet_results(r: ResultData) -> list[dict]:
    """Per surface facet: ``area_m2``, ``pressure_pa``, ``shear_stress_pa``,
    ``heat_flux_w_m2``, ``number_flux_1_m2_s``, each with its ``_stderr`` twin: the
    report's per-wall formulas (:func:`rarefy.post.results.surface_results`) applied to
    each facet on its own."""
    alone = replace(r, facet_owner=[str(k) for k in range(len(r.facet_owner))])
    per = surface_results(alone)
    return [per[str(k)] for k in range(len(r.facet_owner))]


def _fields_table(r: ResultData) -> tuple[list, list]:
    names = list(r.fields)
    header = ["x_m", "y_m", "volume_m3"]
    for name in names:
        header += list(field_columns(name))
    yy, xx = np.meshgrid(r.y, r.x, indexing="ij")
    columns = [xx.ravel(), yy.ravel(), r.volume.ravel()]
    for name in names:
        columns += [r.fields[name].ravel(), r.stderr[name].ravel()]
    return header, np.column_stack(columns).tolist()


def _surfaces_table(r: ResultData) -> tuple[list, list]:
    header = ["facet", "owner", "centre_x_m", "centre_y_m", "normal_x", "normal_y"]
    rows = []
    values = facet_results(r)
    keys = list(values[0]) if values else ["area_m2"]
    for k, row in enumerate(values):
        rows.append([k, r.facet_owner[k], *r.facet_xy[k], *r.facet_normal[k],
                     *(row[key] for key in keys)])
    return header + keys, rows


def _flux_planes_table(r: ResultData, report: dict) -> tuple[list, list]:
    rows = {}
    for k, name in enumerate(r.plane_names):
        x0, y0, x1, y1 = r.plane_points[k]
        rows[name] = {"start_x_m": x0, "start_y_m": y0, "end_x_m": x1, "end_y_m": y1,
                      "mirrored": bool(r.plane_mirrored[k]),
                      **flatten(report["flux_planes"][name])}
    return _table("plane", rows)


def _probes_table(report: dict) -> tuple[list, list]:
    return _table("probe", {name: flatten(row) for name, row in report["probes"].items()})


def _histogram_table(r: ResultData) -> tuple[list, list]:
    header = ["probe", "quantity", "bin_low_m_s", "bin_high_m_s", "count", "pdf",
              "count_stderr", "pdf_stderr"]
    rows = []
    if not r.probe_names or r.speed_edges is None:
        return header, rows
    edges = r.speed_edges
    nb = len(edges) - 1
    vmax = edges[-1]
    cedges = np.linspace(-vmax, vmax, nb + 1)
    batches = r.probe_hist.shape[0]
    for q, name in enumerate(r.probe_names):
        for quantity, h in HISTOGRAMS:
            e = edges if h == H_SPEED else cedges
            per_batch = r.probe_hist[:, q, h, :nb]
            count = per_batch.sum(axis=0)
            err = np.sqrt(batches * per_batch.var(axis=0, ddof=1)) if batches >= 2 \
                else np.full(nb, np.nan)
            total = count.sum()
            width = np.diff(e)
            with np.errstate(invalid="ignore", divide="ignore"):
                pdf = count / (total * width)
                pdf_err = err / (total * width)
            for b in range(nb):
                rows.append([name, quantity, e[b], e[b + 1], count[b], pdf[b], err[b],
                             pdf_err[b]])
    return header, rows


def export_csv(rundir: str | Path, outdir: str | Path | None = None) -> list[Path]:
    """Write the CSV tables of the result in ``rundir`` (a run folder or its
    ``result.h5``) into ``outdir`` (default ``RUNDIR/export``); returns the paths."""
    rundir = Path(rundir)
    folder = rundir if rundir.is_dir() else rundir.parent
    outdir = Path(outdir) if outdir is not None else folder / "export"
    r = read_result(rundir)
    report = build_report(r)
    outdir.mkdir(parents=True, exist_ok=True)
    tables = {
        "fields.csv": _fields_table(r),
        "surfaces.csv": _surfaces_table(r),
        "flux_planes.csv": _flux_planes_table(r, report),
        "probes.csv": _probes_table(report),
        "probe_histograms.csv": _histogram_table(r),
    }
    return [_write_csv(outdir / name, *tables[name]) for name in CSV_FILES]
