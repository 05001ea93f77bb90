"""The result file read by general tools: netCDF-4 readers (xarray with h5netcdf) see the
cell fields on their coordinates with units, every group has named dimensions, and the
XDMF sidecar references datasets that exist with the stated dimensions."""

import xml.etree.ElementTree as ET
from pathlib import Path

import h5py
import numpy as np
import pytest
import xarray as xr  # test extra, with h5netcdf (engine="h5netcdf")

from rarefy.case import parse_case
from rarefy.cli import execute
from rarefy.io.result import FORMAT, ResultFormatError, read_result
from rarefy.io.xdmf import write_xdmf
from rarefy.post.fields import FIELD_UNITS, INTERNAL_FIELDS
from rarefy.templates import orifice_case, slit_case

GROUPS = ("case", "surfaces", "flux_planes", "probes", "histograms", "walls", "raw")
SHORT = {"run.settle_steps": "20", "run.sample_steps": "120", "run.batches": "4"}


@pytest.fixture(scope="module", params=["orifice", "slit"])
def result(request, tmp_path_factory):
    """(result.h5 path, axisymmetric?) of a run of a few seconds."""
    if request.param == "orifice":
        text = orifice_case(upstream_pressure_pa=1.0)
        over = dict(SHORT)
    else:
        text = slit_case(upstream_pressure_pa=5.0, width_m=1e-3)
        over = dict(SHORT, **{"resolution.cell_size": "0.25 mm"})
    case = parse_case(text, "x.toml", overrides=over)
    rundir = tmp_path_factory.mktemp(request.param)
    path = execute(case, Path(rundir), seed=1, quiet=True)
    return path, request.param == "orifice"


def test_xarray_opens_fields_on_coordinates_with_units(result):
    path, _ = result
    r = read_result(path)
    with xr.open_dataset(path, engine="h5netcdf") as ds, h5py.File(path) as f:
        assert ds.attrs["format"] == FORMAT == f.attrs["format"]
        np.testing.assert_array_equal(ds["x"].values, f["x"][()])
        np.testing.assert_array_equal(ds["y"].values, f["y"][()])
        np.testing.assert_array_equal(ds["x"].values, r.x)
        assert ds["x"].attrs["units"] == ds["y"].attrs["units"] == "m"
        assert set(FIELD_UNITS) - set(INTERNAL_FIELDS) <= set(ds.data_vars)
        assert set(r.fields) <= set(FIELD_UNITS)
        for name in r.fields:
            unit = FIELD_UNITS[name]
            for var in (name, name + "_stderr"):
                da = ds[var]
                assert da.dims == ("y", "x"), var
                assert da.attrs["units"] == unit == f[var].attrs["units"], var
                assert da.attrs["long_name"], var
            np.testing.assert_array_equal(ds[name].values, r.fields[name])
            np.testing.assert_array_equal(ds[name + "_stderr"].values, r.stderr[name])
        for var in list(ds.variables):
            assert "units" in ds[var].attrs, var
        # the coordinates travel with the fields
        row = ds["number_density"].isel(y=0)
        np.testing.assert_array_equal(row["x"].values, f["x"][()])


def test_every_group_opens_with_named_dimensions_and_units(result):
    path, _ = result
    r = read_result(path)
    with h5py.File(path) as f:
        for group in GROUPS:
            with xr.open_dataset(path, engine="h5netcdf", group=group) as ds:
                assert set(ds.data_vars) == {k for k in f[group]}, group
                for var in ds.data_vars:
                    assert "units" in ds[var].attrs, (group, var)
                    assert not any(d.startswith("phony") for d in ds[var].dims), (group, var)
                    assert ds[var].shape == f[group][var].shape, (group, var)
                    values = ds[var].values
                    if values.dtype.kind in "fiu":
                        np.testing.assert_array_equal(values, f[group][var][()])
        with xr.open_dataset(path, engine="h5netcdf", group="raw") as raw:
            assert raw["flux_tally"].dims == ("batch", "plane", "flux_tally_column")
            assert raw.sizes["batch"] == r.batches
            np.testing.assert_array_equal(raw["flux_tally"].values, r.flux)
            assert raw["cell_total"].dims == ("y", "x", "moment")
            np.testing.assert_array_equal(raw["cell_total"].values.reshape(r.cell_total.shape),
                                          r.cell_total)
            assert raw["probe_histograms"].dims == ("batch", "probe", "histogram", "bin")


def test_strings_are_readable(result):
    path, _ = result
    r = read_result(path)
    with xr.open_dataset(path, engine="h5netcdf", group="flux_planes") as ds:
        assert [str(s) for s in ds["name"].values] == r.plane_names == ["throat"]
    with xr.open_dataset(path, engine="h5netcdf", group="surfaces") as ds:
        assert [str(s) for s in ds["owner"].values] == r.facet_owner
    with xr.open_dataset(path, engine="h5netcdf", group="probes") as ds:
        assert [str(s) for s in ds["name"].values] == r.probe_names
    with xr.open_dataset(path, engine="h5netcdf", group="case") as ds:
        assert str(ds["text"].values.item()) == r.case_text
        assert "[gas]" in r.case_text
    with xr.open_dataset(path, engine="h5netcdf") as ds:
        assert isinstance(ds.attrs["plan"], str) and ds.attrs["gas"] == "Ar"
        assert int(ds.attrs["interrupted"]) == 0 and r.attrs["interrupted"] is False


def _xdmf(path: Path):
    side = path.with_suffix(".xdmf")
    assert side.is_file()
    return ET.parse(side).getroot()


def test_xdmf_references_exist_with_stated_dimensions(result):
    path, axisymmetric = result
    root = _xdmf(path)
    assert root.tag == "Xdmf" and root.get("Version") == "3.0"
    grids = root.findall("./Domain/Grid")
    assert len(grids) == 1
    grid = grids[0]
    r = read_result(path)
    ny, nx = r.volume.shape
    topo = grid.find("Topology")
    assert topo.get("TopologyType") == "2DRectMesh"
    assert topo.get("Dimensions").split() == [str(ny + 1), str(nx + 1)]
    geo = grid.find("Geometry")
    assert geo.get("GeometryType") == "VXVY"
    items = root.iter("DataItem")
    checked = 0
    with h5py.File(path) as f:
        for item in items:
            assert item.get("Format") == "HDF"
            file_name, dataset = item.text.strip().split(":", 1)
            assert file_name == path.name
            assert dataset in f, dataset
            dims = tuple(int(d) for d in item.get("Dimensions").split())
            assert f[dataset].shape == dims, dataset
            assert int(item.get("Precision")) == f[dataset].dtype.itemsize
            checked += 1
        xn, yn = (f[d.text.split(":", 1)[1]][()] for d in geo.findall("DataItem"))
        np.testing.assert_allclose(0.5 * (xn[1:] + xn[:-1]), r.x, rtol=0, atol=1e-15)
        np.testing.assert_allclose(0.5 * (yn[1:] + yn[:-1]), r.y, rtol=0, atol=1e-15)
    attributes = {a.get("Name"): a for a in grid.findall("Attribute")}
    names = [n for n in FIELD_UNITS if n in attributes]
    assert set(FIELD_UNITS) - set(INTERNAL_FIELDS) <= set(names)
    for name in names:
        for var in (name, name + "_stderr"):
            a = attributes[var]
            assert a.get("Center") == "Cell" and a.get("AttributeType") == "Scalar"
            assert a.find("DataItem").text.strip() == f"{path.name}:/{var}"
            assert a.find("Information[@Name='units']").get("Value") == FIELD_UNITS[name]
    assert checked == 2 + len(attributes)
    info = grid.find("Information[@Name='axisymmetric']")
    if axisymmetric:
        assert info is not None and "radius" in info.get("Value")
    else:
        assert info is None


def test_sidecars_are_written_atomically(result, tmp_path):
    path, _ = result
    assert not list(path.parent.glob("*.tmp"))
    copy = tmp_path / "result.h5"
    copy.write_bytes(path.read_bytes())
    (tmp_path / "result.xdmf").write_text("stale")
    out = write_xdmf(copy)
    assert out == tmp_path / "result.xdmf"
    assert ET.parse(out).getroot().tag == "Xdmf"
    assert not list(tmp_path.glob("*.tmp"))


def test_other_formats_are_refused(tmp_path):
    old = tmp_path / "result.h5"
    with h5py.File(old, "w") as f:
        f.attrs["format"] = "rarefy-result-1"
    with pytest.raises(ResultFormatError, match="rarefy-result-1"):
        read_result(old)
