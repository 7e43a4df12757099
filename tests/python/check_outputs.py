#!/usr/bin/env python3
"""Checks a plumefield run directory with readers that share no code with the writers.

Usage: python3 check_outputs.py DIR [--require-vtk] [--columns REGISTRY.json]

Reads DIR/fields.h5 with h5py, DIR/cells.csv with Python's csv module and, when the `vtk` wheel is
importable, DIR/fields.xmf with VTK's XDMF reader (the reader behind ParaView's XDMF support). Checks:
  * /grid/shape is (nx, ny, nz) and every 3-D dataset has shape (nz, ny, nx), chunked, float32 or float64
    (all alike), either shuffle + gzip or unfiltered (all alike);
  * every dataset carries string attributes `units` and `description`; the root carries the provenance;
  * /cells/<column> equals the cells.csv column of the same name to the last bit, in the header's order;
  * the XDMF sidecar names only datasets that exist, with matching dimensions, and VTK opens it as an image
    of (nx+1, ny+1, nz+1) points whose cell data equal the HDF5 values at probe cells.
Exit status 0 when all checks pass, 1 on the first failed check (with a message), 2 on bad usage.
--require-vtk turns a missing `vtk` module into a failure instead of a skipped part.
--columns REGISTRY.json (a list of {"name", "unit"}, written by the test from the product's column registry):
  cells.csv starts with exactly these columns in this order, and /cells/<name> and summary.json's
  units["cells.csv"] carry these units.
"""

import csv
import math
import os
import sys
import xml.etree.ElementTree as ET

import h5py
import numpy as np

PROVENANCE = ("version", "git_revision", "case_sha256", "case_text", "command_line", "created_utc")


class CheckFailed(Exception):
    pass


def require(condition, message):
    if not condition:
        raise CheckFailed(message)


def text(value):
    return value.decode() if isinstance(value, bytes) else value


def check_h5(path):
    with h5py.File(path, "r") as f:
        for key in PROVENANCE:
            require(key in f.attrs, f"root attribute {key!r} missing")
            require(isinstance(text(f.attrs[key]), str), f"root attribute {key!r} is not a string")
        shape = tuple(int(n) for n in f["grid/shape"][()])
        require(len(shape) == 3 and all(n > 0 for n in shape), f"/grid/shape is {shape}")
        nx, ny, nz = shape
        origin = f["grid/origin"][()]
        require(origin.shape == (3,), f"/grid/origin has shape {origin.shape}")
        spacing = float(f["grid/spacing"][()])
        require(spacing > 0 and math.isfinite(spacing), f"/grid/spacing is {spacing}")

        datasets = {}
        f.visititems(lambda name, obj: datasets.__setitem__(name, obj) if isinstance(obj, h5py.Dataset) else None)
        n_3d = 0
        storage = set()
        for name, ds in datasets.items():
            for attr in ("units", "description"):
                require(attr in ds.attrs, f"/{name} has no {attr!r} attribute")
                require(isinstance(text(ds.attrs[attr]), str), f"/{name} attribute {attr!r} is not a string")
            if ds.ndim == 3:
                n_3d += 1
                require(ds.shape == (nz, ny, nx), f"/{name} has shape {ds.shape}, expected (nz, ny, nx) = {(nz, ny, nx)}")
                require(ds.chunks is not None, f"/{name} is not chunked")
                filters = (bool(ds.shuffle), ds.compression)
                require(filters in ((True, "gzip"), (False, None)), f"/{name}: shuffle={ds.shuffle} compression={ds.compression}")
                require(ds.dtype in (np.float32, np.float64), f"/{name} has dtype {ds.dtype}")
                storage.add((ds.dtype.itemsize, filters))
                require(np.all(np.isfinite(ds[()])), f"/{name} holds non-finite values")
        require(len(storage) == 1, f"3-D datasets stored in different ways: {sorted(storage, key=str)}")
        require("grid/volume_fraction" in datasets, "/grid/volume_fraction missing")
        vf = f["grid/volume_fraction"][()]
        require(vf.min() >= 0.0 and vf.max() <= 1.0, f"volume fraction outside [0, 1]: {vf.min()}..{vf.max()}")
        ((itemsize, (shuffled, compression)),) = storage
        print(f"fields.h5: grid (nx, ny, nz) = {shape}, h = {spacing:g} m, {len(datasets)} datasets "
              f"({n_3d} 3-D, {8 * itemsize}-bit, {compression or 'uncompressed'}), all with units and description")
        return shape, origin, spacing, itemsize


def check_cells(h5_path, csv_path):
    with open(csv_path, newline="") as fh:
        reader = csv.reader(fh)
        header = next(reader)
        rows = list(reader)
    require(all(len(r) == len(header) for r in rows), "cells.csv has ragged rows")
    with h5py.File(h5_path, "r") as f:
        group = f["cells"]
        order = [text(s) for s in group.attrs["columns"]]
        require(order == header, f"/cells column order {order} differs from cells.csv header {header}")
        require(sorted(group.keys()) == sorted(header), f"/cells holds {sorted(group.keys())}, csv {sorted(header)}")
        require(int(group.attrs["count"]) == len(rows), f"/cells count {group.attrs['count']} vs {len(rows)} rows")
        for col, name in enumerate(header):
            values = group[name][()]
            require(values.shape == (len(rows),), f"/cells/{name} has shape {values.shape}, csv {len(rows)} rows")
            for row, record in enumerate(rows):
                cell = record[col]
                if values.dtype.kind in "iu":
                    same = int(cell) == int(values[row])
                else:
                    parsed = float(cell)
                    stored = float(values[row])
                    # Bit-for-bit equality (NaN compares by bits too).
                    same = np.float64(parsed).tobytes() == np.float64(stored).tobytes()
                require(same, f"cells.csv {name} row {row}: text {cell!r} vs HDF5 {values[row]!r}")
    print(f"cells.csv: {len(rows)} rows x {len(header)} columns equal /cells/* bit for bit")


def check_registry(h5_path, csv_path, summary_path, registry_path):
    import json
    with open(registry_path) as fh:
        registry = json.load(fh)
    names = [c["name"] for c in registry]
    with open(csv_path, newline="") as fh:
        header = next(csv.reader(fh))
    require(header[:len(names)] == names, f"cells.csv starts with {header[:len(names)]}, the registry lists {names}")
    with h5py.File(h5_path, "r") as f:
        for c in registry:
            unit = text(f["cells"][c["name"]].attrs["units"])
            require(unit == c["unit"], f"/cells/{c['name']} has units {unit!r}, the registry says {c['unit']!r}")
    if os.path.isfile(summary_path):
        with open(summary_path) as fh:
            units = json.load(fh).get("units", {}).get("cells.csv")
        if units is not None:
            for c in registry:
                require(units.get(c["name"]) == c["unit"],
                        f"summary.json units of {c['name']} are {units.get(c['name'])!r}, the registry says {c['unit']!r}")
    print(f"cells.csv: the {len(names)} registered columns come first, in order, with their units")


def xdmf_attributes(xmf_path, h5_name, shape, itemsize):
    """Maps each XDMF attribute to the HDF5 dataset paths it reads, checking dimensions against the grid."""
    nx, ny, nz = shape
    root = ET.parse(xmf_path).getroot()
    grid = root.find("Domain/Grid")
    require(grid is not None, "fields.xmf has no Domain/Grid")
    topology = grid.find("Topology")
    require(topology.get("TopologyType") == "3DCoRectMesh", f"topology {topology.get('TopologyType')}")
    dims = tuple(int(d) for d in topology.get("Dimensions").split())
    require(dims == (nz + 1, ny + 1, nx + 1), f"topology node counts {dims}, expected {(nz + 1, ny + 1, nx + 1)}")
    require(grid.find("Geometry").get("GeometryType") == "ORIGIN_DXDYDZ", "geometry is not ORIGIN_DXDYDZ")
    attributes = {}
    for attr in grid.findall("Attribute"):
        require(attr.get("Center") == "Cell", f"attribute {attr.get('Name')} is not cell-centred")
        paths = []
        for item in attr.iter("DataItem"):
            if item.get("Format") == "HDF":
                file_name, dataset = item.text.strip().split(":", 1)
                require(file_name == h5_name, f"attribute {attr.get('Name')} points at {file_name}")
                item_dims = tuple(int(d) for d in item.get("Dimensions").split())
                require(item_dims == (nz, ny, nx), f"{dataset}: DataItem dimensions {item_dims}")
                require(item.get("Precision") == str(itemsize),
                        f"{dataset}: DataItem Precision {item.get('Precision')}, HDF5 stores {itemsize} bytes")
                paths.append(dataset)
        require(paths, f"attribute {attr.get('Name')} reads no HDF5 data")
        attributes[attr.get("Name")] = paths
    return attributes


def check_xdmf(directory, shape, itemsize, origin, spacing, require_vtk):
    h5_path = os.path.join(directory, "fields.h5")
    xmf_path = os.path.join(directory, "fields.xmf")
    attributes = xdmf_attributes(xmf_path, "fields.h5", shape, itemsize)
    with h5py.File(h5_path, "r") as f:
        for name, paths in attributes.items():
            for p in paths:
                require(p in f, f"fields.xmf attribute {name} points at missing dataset {p}")
    print(f"fields.xmf: {len(attributes)} cell attributes, all pointing at existing datasets of shape (nz, ny, nx)")

    try:
        from vtkmodules.vtkIOXdmf2 import vtkXdmfReader
        from vtkmodules.util.numpy_support import vtk_to_numpy
    except ImportError as e:
        if require_vtk:
            raise CheckFailed(f"vtk required but not importable: {e}")
        print(f"SKIPPED the VTK part of the XDMF check: the vtk module is not importable ({e})")
        return

    reader = vtkXdmfReader()
    reader.SetFileName(xmf_path)
    reader.Update()
    image = reader.GetOutputDataObject(0)
    if image.IsA("vtkMultiBlockDataSet"):
        image = image.GetBlock(0)
    require(image is not None and image.IsA("vtkImageData"), f"VTK read {image.GetClassName() if image else None}")
    nx, ny, nz = shape
    require(tuple(image.GetDimensions()) == (nx + 1, ny + 1, nz + 1),
            f"VTK point dimensions {image.GetDimensions()}, expected {(nx + 1, ny + 1, nz + 1)}")
    require(np.allclose(image.GetOrigin(), origin, rtol=1e-12, atol=0.0),
            f"VTK origin {image.GetOrigin()}, expected {tuple(origin)}")
    require(np.allclose(image.GetSpacing(), (spacing,) * 3, rtol=1e-12, atol=0.0),
            f"VTK spacing {image.GetSpacing()}, expected {spacing}")
    cell_data = image.GetCellData()
    rng = np.random.default_rng(20240501)
    probes = [(0, 0, 0), (nx - 1, ny - 1, nz - 1)] + [
        (int(rng.integers(nx)), int(rng.integers(ny)), int(rng.integers(nz))) for _ in range(8)]
    with h5py.File(h5_path, "r") as f:
        for name, paths in attributes.items():
            array = cell_data.GetArray(name)
            require(array is not None, f"VTK sees no cell array {name!r}")
            values = vtk_to_numpy(array)
            for (i, j, k) in probes:
                cell_id = i + nx * (j + ny * k)  # VTK image cells: x fastest
                expected = [float(f[p][k, j, i]) for p in paths]
                got = np.atleast_1d(values[cell_id]).astype(float).tolist()
                require(got == expected, f"VTK {name} at cell ({i},{j},{k}) = {got}, HDF5 {expected}")
    print(f"fields.xmf: VTK {reader.GetClassName()} opens it: dimensions {image.GetDimensions()}, "
          f"{len(attributes)} arrays equal HDF5 at {len(probes)} probe cells")


def main(argv):
    args, flags, registry = [], [], None
    rest = argv[1:]
    while rest:
        a = rest.pop(0)
        if a == "--columns" and rest:
            registry = rest.pop(0)
        elif a.startswith("--"):
            flags.append(a)
        else:
            args.append(a)
    if len(args) != 1 or any(flag != "--require-vtk" for flag in flags):
        print(__doc__, file=sys.stderr)
        return 2
    directory = args[0]
    try:
        h5_path = os.path.join(directory, "fields.h5")
        csv_path = os.path.join(directory, "cells.csv")
        for p in (h5_path, csv_path, os.path.join(directory, "fields.xmf")):
            require(os.path.isfile(p), f"{p} missing")
        leftovers = [n for n in os.listdir(directory) if n.startswith(".") and n.endswith(".tmp")]
        require(not leftovers, f"temporary files left behind: {leftovers}")
        shape, origin, spacing, itemsize = check_h5(h5_path)
        check_cells(h5_path, csv_path)
        if registry is not None:
            check_registry(h5_path, csv_path, os.path.join(directory, "summary.json"), registry)
        check_xdmf(directory, shape, itemsize, origin, spacing, "--require-vtk" in flags)
        summary = os.path.join(directory, "summary.json")
        if os.path.isfile(summary):
            import json
            with open(summary) as fh:
                json.load(fh)
            print("summary.json: valid JSON")
    except CheckFailed as e:
        print(f"FAILED: {e}", file=sys.stderr)
        return 1
    print("all output checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
