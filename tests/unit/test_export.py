"""`rarefy export RUNDIR --csv`: the CSV tables hold the numbers of the result file and of
the report, and bad input is one line with exit status 2."""

import csv
import math
from pathlib import Path

import h5py
import numpy as np
import pytest
from click.testing import CliRunner

from rarefy.case import parse_case
from rarefy.cli import execute
from rarefy.cli_export import export
from rarefy.export import CSV_FILES, facet_results, field_columns, unit_suffix
from rarefy.io.result import read_result
from rarefy.post.fields import FIELD_UNITS
from rarefy.post.probes import speed_distribution
from rarefy.report import load_report
from rarefy.templates import orifice_case

SHORT = {"run.settle_steps": "30", "run.sample_steps": "150", "run.batches": "5"}


def invoke(*args):
    return CliRunner().invoke(export, [str(a) for a in args])


@pytest.fixture(scope="module")
def rundir(tmp_path_factory):
    """An axisymmetric orifice run of a few seconds: walls, a flux plane, three probes."""
    d = Path(tmp_path_factory.mktemp("export")) / "run"
    case = parse_case(orifice_case(upstream_pressure_pa=1.0), "x.toml", overrides=SHORT)
    execute(case, d, seed=1, quiet=True)
    return d


@pytest.fixture(scope="module")
def tables(rundir, tmp_path_factory):
    out = Path(tmp_path_factory.mktemp("tables"))
    res = invoke(rundir, "--csv", "-o", out)
    assert res.exit_code == 0, res.output
    for name in CSV_FILES:
        assert f"wrote {out / name}" in res.output
    assert not list(out.glob("*.tmp"))
    return {name: _read(out / name) for name in CSV_FILES}


def _read(path: Path) -> list[dict]:
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def _num(text: str) -> float:
    return float(text) if text != "" else math.nan


def _same(text: str, value) -> bool:
    """The CSV cell holds ``value`` exactly (NaN as an empty cell)."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return text == ""
    return _num(text) == float(value)


def test_unit_suffixes_follow_the_report():
    assert [unit_suffix(u) for u in ("m^-3", "m/s", "K", "Pa", "W/m^2", "1")] == \
        ["m3", "m_s", "k", "pa", "w_m2", ""]
    assert field_columns("number_density") == ("number_density_m3", "number_density_stderr_m3")
    assert field_columns("particles_per_cell") == ("particles_per_cell",
                                                   "particles_per_cell_stderr")


def test_fields_csv_matches_the_result_file(rundir, tables):
    rows = tables["fields.csv"]
    r = read_result(rundir)
    ny, nx = r.volume.shape
    assert len(rows) == nx * ny
    assert list(rows[0])[:3] == ["x_m", "y_m", "volume_m3"]
    with h5py.File(rundir / "result.h5") as f:
        for name in r.fields:
            unit = FIELD_UNITS[name]
            col, err = field_columns(name)
            assert f[name].attrs["units"] == unit
            values = np.array([_num(row[col]) for row in rows]).reshape(ny, nx)
            errors = np.array([_num(row[err]) for row in rows]).reshape(ny, nx)
            np.testing.assert_array_equal(values, f[name][()])
            np.testing.assert_array_equal(errors, f[name + "_stderr"][()])
        k = 3 * nx + 5   # row 3, column 5: x varies fastest
        assert _num(rows[k]["x_m"]) == f["x"][5] and _num(rows[k]["y_m"]) == f["y"][3]
        assert _num(rows[k]["volume_m3"]) == f["volume"][3, 5]
    assert np.isfinite(values).any()


def test_surfaces_csv_per_facet_adds_up_to_the_report_walls(rundir, tables):
    rows = tables["surfaces.csv"]
    r = read_result(rundir)
    rep = load_report(rundir)
    assert len(rows) == len(r.facet_owner) > 0
    for key in ("owner", "centre_x_m", "centre_y_m", "normal_x", "normal_y", "area_m2",
                "pressure_pa", "pressure_stderr_pa", "shear_stress_pa",
                "shear_stress_stderr_pa", "heat_flux_w_m2", "heat_flux_stderr_w_m2"):
        assert key in rows[0], key
    for k, row in enumerate(rows):
        assert row["owner"] == r.facet_owner[k]
        assert _num(row["centre_x_m"]) == r.facet_xy[k, 0]
        assert _num(row["normal_y"]) == r.facet_normal[k, 1]
        assert _num(row["area_m2"]) == r.facet_area[k]
    for wall, s in rep["surfaces"].items():
        mine = [row for row in rows if row["owner"] == wall]
        area = sum(_num(row["area_m2"]) for row in mine)
        assert area == pytest.approx(s["area_m2"], rel=1e-12)
        for key in ("pressure_pa", "shear_stress_pa", "heat_flux_w_m2"):
            total = sum(_num(row[key]) * _num(row["area_m2"]) for row in mine)
            assert total / area == pytest.approx(s[key], rel=1e-9, abs=1e-12), (wall, key)
    plate = [row for row in rows if row["owner"] == "plate"]
    assert all(_num(row["pressure_stderr_pa"]) > 0 for row in plate)
    assert facet_results(r)[0]["pressure_pa"] == _num(rows[0]["pressure_pa"])


def test_flux_planes_csv_has_the_report_numbers(rundir, tables):
    rows = tables["flux_planes.csv"]
    rep = load_report(rundir)["flux_planes"]
    assert [row["plane"] for row in rows] == list(rep) == ["throat"]
    row, fp = rows[0], rep["throat"]
    for key in ("mass_flow_kg_s", "mass_flow_stderr_kg_s", "transmission_probability",
                "transmission_probability_stderr", "conductance_m3_s",
                "crossing_mean_speed_m_s", "free_molecular_mass_flow_kg_s"):
        assert _same(row[key], fp[key]), key
    assert _same(row["analytic_free_molecular_transmission"],
                 fp["analytic"]["free_molecular_transmission"])
    assert _same(row["analytic_viscous_mass_flow_kg_s"], fp["analytic"]["viscous_mass_flow_kg_s"])
    assert row["analytic_opening"] == "orifice"
    assert _num(row["end_y_m"]) == pytest.approx(0.5e-3, rel=1e-12)
    assert _num(row["mass_flow_kg_s"]) > 0


def test_probes_csv_has_the_report_numbers(rundir, tables):
    rows = tables["probes.csv"]
    rep = load_report(rundir)["probes"]
    assert [row["probe"] for row in rows] == list(rep) == ["axis_1a", "axis_2a", "axis_4a"]
    for row in rows:
        pr = rep[row["probe"]]
        for key in ("number_density_m3", "number_density_stderr_m3", "mean_speed_m_s",
                    "temperature_k", "speed_ratio", "speed_ratio_stderr", "volume_m3",
                    "overflow_fraction"):
            assert _same(row[key], pr[key]), key
        assert _same(row["speed_fit_temperature_k"], pr["speed_fit"]["temperature_k"])
        assert _same(row["component_fits_x_temperature_k"],
                     pr["component_fits"]["x"]["temperature_k"])
        assert _same(row["analytic_mean_speed_m_s"], pr["analytic"]["mean_speed_m_s"])
        assert [_num(row[f"region_{s}_m"]) for s in ("xmin", "xmax", "ymin", "ymax")] == \
            pr["region_m"]
        assert row["direction"] == "x"
        assert not any("note" in key for key in row)


def test_probe_histograms_csv_long_format(rundir, tables):
    rows = tables["probe_histograms.csv"]
    r = read_result(rundir)
    nb = r.histogram_bins
    assert list(rows[0]) == ["probe", "quantity", "bin_low_m_s", "bin_high_m_s", "count",
                             "pdf", "count_stderr", "pdf_stderr"]
    assert len(rows) == len(r.probe_names) * 4 * nb
    for name in r.probe_names:
        dist = speed_distribution(r, name)
        mine = [row for row in rows if row["probe"] == name and row["quantity"] == "speed"]
        assert len(mine) == nb
        np.testing.assert_array_equal([_num(row["count"]) for row in mine], dist.counts)
        np.testing.assert_array_equal([_num(row["bin_low_m_s"]) for row in mine],
                                      dist.edges_m_s[:-1])
        np.testing.assert_array_equal([_num(row["bin_high_m_s"]) for row in mine],
                                      dist.edges_m_s[1:])
        np.testing.assert_allclose([_num(row["pdf"]) for row in mine], dist.pdf(), rtol=1e-12)
        np.testing.assert_allclose([_num(row["count_stderr"]) for row in mine],
                                   dist.counts_stderr, rtol=1e-12)
        vx = [row for row in rows if row["probe"] == name and row["quantity"] == "velocity_x"]
        low = np.array([_num(row["bin_low_m_s"]) for row in vx])
        width = np.array([_num(row["bin_high_m_s"]) for row in vx]) - low
        assert low[0] == -r.speed_edges[-1]
        assert np.sum([_num(row["pdf"]) for row in vx] * width) == pytest.approx(1.0, rel=1e-9)
    assert {row["quantity"] for row in rows} == {"speed", "velocity_x", "velocity_y",
                                                 "velocity_z"}


def test_default_folder_is_rundir_export(rundir):
    res = invoke(rundir, "--csv")
    assert res.exit_code == 0, res.output
    for name in CSV_FILES:
        assert (rundir / "export" / name).stat().st_size > 0


def _one_line_error(res, *words):
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:"), res.output
    for w in words:
        assert w in lines[0], (w, lines[0])


def test_missing_result_is_one_line(tmp_path):
    _one_line_error(invoke(tmp_path, "--csv"), str(tmp_path), "no result.h5", "rarefy run")
    _one_line_error(invoke(tmp_path / "nowhere", "--csv"), "nowhere", "no result.h5")


def test_format_is_required(rundir):
    _one_line_error(invoke(rundir), "--csv")


def test_output_that_is_a_file_is_refused(rundir, tmp_path):
    f = tmp_path / "file.txt"
    f.write_text("x")
    _one_line_error(invoke(rundir, "--csv", "-o", f), "-o", "not a folder")


def test_unreadable_results_are_one_line(tmp_path):
    (tmp_path / "result.h5").write_text("not HDF5")
    _one_line_error(invoke(tmp_path, "--csv"), "result.h5", "not a readable result")
    old = tmp_path / "old"
    old.mkdir()
    with h5py.File(old / "result.h5", "w") as f:
        f.attrs["format"] = "rarefy-result-1"
    _one_line_error(invoke(old, "--csv"), "rarefy-result-1", "run the case again")
