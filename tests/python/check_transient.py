#!/usr/bin/env python3
"""Checks a transient plumefield run directory with readers that share no code with the writers.

Usage: python3 check_transient.py DIR [--require-vtk]

Reads DIR/fields.h5 with h5py, DIR/cells.csv and DIR/cells_timeseries.csv with Python's csv module, and
DIR/fields.xmf with xml.etree and (when importable) VTK's XDMF reader, the reader behind ParaView. Checks:
  * the common checks of check_outputs.py on fields.h5 (shapes, chunking, units, provenance);
  * the steady layout of the final state: /ligand/concentration, /flow/*, /cells/<column> = cells.csv;
  * /ligand/<index> per output time with a `time` attribute (and `time_units` = "s"), /ligand/times in order;
  * /cells/timeseries/<column> = cells_timeseries.csv bit for bit; its `time` column takes exactly the output
    times, each with one row per cell;
  * fields.xmf is a temporal collection with one uniform grid per output time, <Time Value> equal to the
    HDF5 `time` attribute of the dataset it points at, every dataset existing with shape (nz, ny, nx);
  * VTK reports one time step per output time and, at the last one, cell values equal to HDF5 at probes.
Exit status 0 when all checks pass, 1 on the first failed check, 2 on bad usage.
"""

import csv
import os
import sys
import xml.etree.ElementTree as ET

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from check_outputs import CheckFailed, check_h5, require, text  # noqa: E402


def read_csv(path):
    with open(path, newline="") as fh:
        reader = csv.reader(fh)
        header = next(reader)
        rows = list(reader)
    require(all(len(r) == len(header) for r in rows), f"{path} has ragged rows")
    return header, rows


def same_bits(cell, stored, integer):
    if integer:
        return int(cell) == int(stored)
    return np.float64(float(cell)).tobytes() == np.float64(float(stored)).tobytes()


def check_table(group, header, rows, label):
    order = [text(s) for s in group.attrs["columns"]]
    require(order == header, f"{label}: HDF5 column order {order} differs from the csv header {header}")
    datasets = sorted(k for k in group.keys() if isinstance(group[k], h5py.Dataset))
    require(datasets == sorted(header), f"{label}: HDF5 holds {datasets}, csv {sorted(header)}")
    require(int(group.attrs["count"]) == len(rows), f"{label}: count {group.attrs['count']} vs {len(rows)} rows")
    for col, name in enumerate(header):
        values = group[name][()]
        require(values.shape == (len(rows),), f"{label}/{name} has shape {values.shape}")
        integer = values.dtype.kind in "iu"
        for row, record in enumerate(rows):
            require(same_bits(record[col], values[row], integer),
                    f"{label} {name} row {row}: text {record[col]!r} vs HDF5 {values[row]!r}")


def check_series(directory, shape):
    nx, ny, nz = shape
    with h5py.File(os.path.join(directory, "fields.h5"), "r") as f:
        for name in ("ligand/concentration", "ligand/steady_concentration", "ligand/times", "flow/u", "flow/pressure"):
            require(name in f, f"/{name} missing")
        times = f["ligand/times"][()]
        require(len(times) > 0 and np.all(np.diff(times) > 0), f"/ligand/times not increasing: {times}")
        for index, t in enumerate(times):
            name = f"ligand/{index:06d}"
            require(name in f, f"/{name} missing for output time {t}")
            ds = f[name]
            require(ds.shape == (nz, ny, nx), f"/{name} shape {ds.shape}")
            require(float(ds.attrs["time"]) == float(t), f"/{name} time {ds.attrs['time']} vs /ligand/times {t}")
            require(text(ds.attrs["time_units"]) == "s", f"/{name} time_units {ds.attrs['time_units']}")
        final = f[f"ligand/{len(times) - 1:06d}"][()]
        require(np.array_equal(final, f["ligand/concentration"][()]),
                "the last output time differs from /ligand/concentration (the final state)")

        header, rows = read_csv(os.path.join(directory, "cells.csv"))
        check_table(f["cells"], header, rows, "cells.csv")
        n_cells = len(rows)
        header, rows = read_csv(os.path.join(directory, "cells_timeseries.csv"))
        require(header[:2] == ["time", "id"], f"cells_timeseries.csv starts with {header[:2]}")
        check_table(f["cells/timeseries"], header, rows, "cells_timeseries.csv")
        column = [float(r[0]) for r in rows]
        require(len(rows) == n_cells * len(times), f"{len(rows)} time-series rows for {n_cells} cells x {len(times)} times")
        for index, t in enumerate(times):
            block = column[index * n_cells:(index + 1) * n_cells]
            require(all(v == float(t) for v in block), f"time-series rows of output {index} are not at t = {t}")
    print(f"fields.h5: {len(times)} output times with time attributes; cells.csv and cells_timeseries.csv "
          f"({len(rows)} rows) equal /cells and /cells/timeseries bit for bit")
    return times


def check_temporal_xmf(directory, shape, times, require_vtk):
    nx, ny, nz = shape
    xmf_path = os.path.join(directory, "fields.xmf")
    root = ET.parse(xmf_path).getroot()
    collection = root.find("Domain/Grid")
    require(collection is not None and collection.get("GridType") == "Collection"
            and collection.get("CollectionType") == "Temporal", "fields.xmf is not a temporal collection")
    grids = collection.findall("Grid")
    require(len(grids) == len(times), f"{len(grids)} grids in the collection, {len(times)} output times")
    with h5py.File(os.path.join(directory, "fields.h5"), "r") as f:
        for grid, t in zip(grids, times):
            value = float(grid.find("Time").get("Value"))
            require(value == float(t), f"<Time Value={value}> vs output time {t}")
            dims = tuple(int(d) for d in grid.find("Topology").get("Dimensions").split())
            require(dims == (nz + 1, ny + 1, nx + 1), f"topology {dims}")
            for item in grid.iter("DataItem"):
                if item.get("Format") != "HDF":
                    continue
                file_name, dataset = item.text.strip().split(":", 1)
                require(file_name == "fields.h5", f"points at {file_name}")
                require(dataset in f, f"points at missing dataset {dataset}")
                require(f[dataset].shape == (nz, ny, nx), f"{dataset} shape {f[dataset].shape}")
            conc = [a for a in grid.findall("Attribute") if a.get("Name") == "concentration"]
            require(len(conc) == 1, "a grid without its concentration")
            path = conc[0].find("DataItem").text.strip().split(":", 1)[1]
            require(float(f[path].attrs["time"]) == value, f"{path} has time {f[path].attrs['time']}, grid {value}")
    print(f"fields.xmf: temporal collection of {len(grids)} grids, each at its dataset's time")

    try:
        from vtkmodules.vtkIOXdmf2 import vtkXdmfReader
        from vtkmodules.vtkCommonExecutionModel import vtkStreamingDemandDrivenPipeline
        from vtkmodules.util.numpy_support import vtk_to_numpy
    except ImportError as e:
        if require_vtk:
            raise CheckFailed(f"vtk required but not importable: {e}")
        print(f"SKIPPED the VTK part: {e}")
        return
    reader = vtkXdmfReader()
    reader.SetFileName(xmf_path)
    reader.UpdateInformation()
    info = reader.GetOutputInformation(0)
    key = vtkStreamingDemandDrivenPipeline.TIME_STEPS()
    steps = [info.Get(key, i) for i in range(info.Length(key))] if info.Has(key) else []
    require(np.allclose(steps, times, rtol=1e-12, atol=0.0), f"VTK time steps {steps}, expected {list(times)}")
    reader.UpdateTimeStep(float(times[-1]))
    image = reader.GetOutputDataObject(0)
    if image.IsA("vtkMultiBlockDataSet"):
        image = image.GetBlock(0)
    require(image is not None and image.IsA("vtkImageData"), "VTK did not read an image")
    values = vtk_to_numpy(image.GetCellData().GetArray("concentration"))
    with h5py.File(os.path.join(directory, "fields.h5"), "r") as f:
        last = f[f"ligand/{len(times) - 1:06d}"]
        for (i, j, k) in [(0, 0, 0), (nx - 1, ny - 1, nz - 1), (nx // 2, ny // 3, nz // 2)]:
            require(float(values[i + nx * (j + ny * k)]) == float(last[k, j, i]),
                    f"VTK concentration at ({i},{j},{k}) differs from HDF5 at the last time")
    print(f"fields.xmf: VTK {reader.GetClassName()} sees {len(steps)} time steps; the last equals HDF5 at probes")


def main(argv):
    args = [a for a in argv[1:] if not a.startswith("--")]
    flags = [a for a in argv[1:] if a.startswith("--")]
    if len(args) != 1 or any(flag != "--require-vtk" for flag in flags):
        print(__doc__, file=sys.stderr)
        return 2
    directory = args[0]
    try:
        for name in ("fields.h5", "fields.xmf", "cells.csv", "cells_timeseries.csv", "summary.json"):
            require(os.path.isfile(os.path.join(directory, name)), f"{name} missing")
        leftovers = [n for n in os.listdir(directory) if n.endswith(".tmp")]
        require(not leftovers, f"temporary files left behind: {leftovers}")
        shape, _, _, _ = check_h5(os.path.join(directory, "fields.h5"))
        times = check_series(directory, shape)
        check_temporal_xmf(directory, shape, times, "--require-vtk" in flags)
    except CheckFailed as e:
        print(f"FAILED: {e}", file=sys.stderr)
        return 1
    print("all transient output checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
