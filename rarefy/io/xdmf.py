"""XDMF sidecar of a result file: the grid and the cell fields for XDMF readers.

XDMF (eXtensible Data Model and Format, version 3) is an open XML description of
heavy data kept in HDF5. The sidecar ``result.xdmf`` written next to ``result.h5``
describes one uniform grid:

* topology ``2DRectMesh`` on the cell edges ``/x_node`` and ``/y_node`` (geometry
  ``VXVY``; dimensions are given slowest first, ``ny + 1  nx + 1``);
* every cell field of the result (``cell_fields`` attribute of the file) and its
  ``_stderr`` twin, plus ``/volume``, as a scalar ``Attribute`` with ``Center="Cell"``
  whose ``DataItem`` references the HDF5 dataset by path (``result.h5:/NAME``,
  relative to the sidecar), dimensions ``ny nx``; each carries its unit in an
  ``Information`` element.

For axisymmetric runs an ``Information`` element (and an XML comment) says that x is the
axis of symmetry and y the radius. The sidecar is written under a temporary name and
renamed over the target, like the result file itself.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import h5py

from rarefy.io.atomic import atomic_path

__all__ = ["XDMF_NAME", "write_xdmf", "xdmf_tree"]

XDMF_NAME = "result.xdmf"


def _text(value) -> str:
    if isinstance(value, bytes):
        return value.decode()
    return str(value)


def _data_item(parent, h5_name: str, dataset, dims: tuple) -> ET.Element:
    precision = dataset.dtype.itemsize
    number = "Float" if dataset.dtype.kind == "f" else "Int"
    item = ET.SubElement(parent, "DataItem", Dimensions=" ".join(str(d) for d in dims),
                         NumberType=number, Precision=str(precision), Format="HDF")
    item.text = f"{h5_name}:{dataset.name}"
    return item


def xdmf_tree(h5_path: str | Path) -> ET.ElementTree:
    """The XDMF document describing the result file ``h5_path`` (referenced by its file
    name, so the sidecar must sit in the same folder)."""
    h5_path = Path(h5_path)
    with h5py.File(h5_path, "r") as f:
        axisymmetric = _text(f.attrs.get("geometry", "")) == "axisymmetric"
        names = _text(f.attrs.get("cell_fields", "")).split()
        ny, nx = f["volume"].shape
        root = ET.Element("Xdmf", Version="3.0")
        domain = ET.SubElement(root, "Domain")
        title = _text(f.attrs.get("title", "")) or "rarefy result"
        grid = ET.SubElement(domain, "Grid", Name="cells", GridType="Uniform")
        ET.SubElement(grid, "Information", Name="title", Value=title)
        if axisymmetric:
            grid.append(ET.Comment(" axisymmetric run: x is the axis of symmetry, y is the "
                                   "radius (m); fields are averages over the rings "
                                   "swept by the cells "))
            ET.SubElement(grid, "Information", Name="axisymmetric",
                          Value="x is the axis of symmetry, y is the radius (m)")
        ET.SubElement(grid, "Topology", TopologyType="2DRectMesh",
                      Dimensions=f"{ny + 1} {nx + 1}")
        geometry = ET.SubElement(grid, "Geometry", GeometryType="VXVY")
        _data_item(geometry, h5_path.name, f["x_node"], (nx + 1,))
        _data_item(geometry, h5_path.name, f["y_node"], (ny + 1,))
        for name in ["volume"] + [n + s for n in names for s in ("", "_stderr")]:
            ds = f[name]
            attribute = ET.SubElement(grid, "Attribute", Name=name, AttributeType="Scalar",
                                      Center="Cell")
            ET.SubElement(attribute, "Information", Name="units",
                          Value=_text(ds.attrs.get("units", "")))
            _data_item(attribute, h5_path.name, ds, (ny, nx))
    ET.indent(root)
    return ET.ElementTree(root)


def write_xdmf(h5_path: str | Path) -> Path:
    """Write ``result.xdmf`` (the result's file name with the suffix ``.xdmf``) next to the
    result file ``h5_path`` atomically; returns its path."""
    h5_path = Path(h5_path)
    target = h5_path.with_suffix(".xdmf")
    with atomic_path(target) as tmp:
        with open(tmp, "wb") as out:
            xdmf_tree(h5_path).write(out, encoding="utf-8", xml_declaration=True)
            out.write(b"\n")
    return target
