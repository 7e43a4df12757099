//! `fields.h5` of a transient run: the steady file's layout for the final state (so every reader of a steady
//! run reads it unchanged), plus one dataset per output time and the per-cell time series (DESIGN.md §6).
//!
//! ```text
//! /grid/*, root attributes           as in a steady run
//! /flow/{u,v,w,pressure}             the flow in force at the end of the run
//! /flow_initial/{u,v,w,pressure}     the flow before `flow.change_at` (only when the flow changes)
//! /ligand/concentration              the final field
//! /ligand/steady_concentration       the steady field of the final configuration (the approach's target)
//! /ligand/<index>                    (only when output.fields lists "concentration", as are the two above)
//!                                    (nz, ny, nx) field at output time number <index> (six digits, from 000000),
//!                                    attributes `time` (s) and `time_units` = "s"
//! /ligand/times                      (n_times,) output times (s), in index order
//! /cells/<column>                    the final per-cell table (= cells.csv)
//! /cells/timeseries/<column>         the long-format table of every output time (= cells_timeseries.csv)
//! ```

use std::path::Path;

use anyhow::Context;
use hdf5::File;
use ndarray::ArrayView1;

use super::atomic::with_atomic_file;
use super::fields_h5::{
    describe, new_group, set_text_attr, validate_fields, write_field_3d, write_grid, write_provenance,
    write_table, FieldData, FieldStorage, Provenance,
};
use super::provenance::created_utc;
use super::table::CellTable;

/// Name of the dataset of output time `index` inside `/ligand`.
pub fn output_dataset_name(index: usize) -> String {
    format!("{index:06}")
}

/// One output time of the file.
#[derive(Clone, Debug, PartialEq)]
pub struct OutputTime {
    pub index: usize,
    /// Simulated time (s).
    pub time: f64,
    /// HDF5 group of the flow in force at that time (`"flow"` or `"flow_initial"`).
    pub flow_group: String,
}

/// Everything of a transient `fields.h5` except the per-time fields, which are fetched one at a time.
pub struct TransientFile<'a> {
    pub grid: &'a mesh::Grid,
    pub volume_fraction: &'a [f64],
    /// Flow fields, final concentration, steady reference: written as in a steady file.
    pub fields: &'a [FieldData<'a>],
    pub outputs: &'a [OutputTime],
    /// Write `/ligand/<index>` per output time (`[output] fields` lists the concentration); `field_at` is not
    /// called otherwise.
    pub snapshots: bool,
    pub cells: &'a CellTable,
    pub timeseries: &'a CellTable,
    pub provenance: &'a Provenance,
    /// Precision and compression of every 3-D dataset.
    pub storage: FieldStorage,
}

/// Writes the file atomically; `field_at(i)` returns the concentration of `outputs[i]`.
pub fn write_transient_fields_h5(
    path: &Path,
    file: &TransientFile,
    field_at: &mut dyn FnMut(usize) -> anyhow::Result<Vec<f64>>,
) -> anyhow::Result<()> {
    validate_fields(file.grid, file.fields)?;
    file.cells.validate()?;
    file.timeseries.validate()?;
    with_atomic_file(path, |temp| {
        let h5 = File::with_options()
            .with_fcpl(|p| p.obj_track_times(false))
            .create(temp)
            .with_context(|| format!("cannot create HDF5 file {}", temp.display()))?;
        write_provenance(&h5, file.provenance, &created_utc())?;
        set_text_attr(&h5, "solve_mode", "transient")?;
        write_grid(&h5, file.grid, file.volume_fraction, file.storage)?;
        for field in file.fields {
            let group = if h5.link_exists(&field.group) {
                h5.group(&field.group)?
            } else {
                new_group(&h5, &field.group)?
            };
            let (name, unit, description) = (&field.name, &field.unit, &field.description);
            write_field_3d(&group, name, file.grid, &field.values, unit, description, file.storage)?;
        }
        let ligand = if h5.link_exists("ligand") { h5.group("ligand")? } else { new_group(&h5, "ligand")? };
        for (i, output) in file.outputs.iter().enumerate().filter(|_| file.snapshots) {
            let values = field_at(i)?;
            let name = output_dataset_name(output.index);
            write_field_3d(
                &ligand,
                &name,
                file.grid,
                &values,
                "molecules/m^3",
                &format!("ligand concentration at t = {} s, cell-centred (zero inside cells)", output.time),
                file.storage,
            )?;
            let ds = ligand.dataset(&name)?;
            ds.new_attr::<f64>()
                .shape(())
                .create("time")
                .and_then(|a| a.write_scalar(&output.time))
                .with_context(|| format!("cannot write the time of /ligand/{name}"))?;
            set_text_attr(&ds, "time_units", "s")?;
        }
        let times: Vec<f64> = file.outputs.iter().map(|o| o.time).collect();
        let ds = ligand
            .new_dataset_builder()
            .with_data(ArrayView1::from(times.as_slice()))
            .obj_track_times(false)
            .create("times")
            .context("cannot write /ligand/times")?;
        let what = if file.snapshots {
            "output times; /ligand/<index> holds the field at times[index]"
        } else {
            "output times (no fields kept: output.fields does not list the concentration)"
        };
        describe(&ds, "s", what)?;

        super::fields_h5::write_cells(&h5, file.cells)?;
        let cells = h5.group("cells")?;
        let series = cells
            .create_group_builder()
            .obj_track_times(false)
            .create("timeseries")
            .context("cannot create HDF5 group /cells/timeseries")?;
        write_table(&series, file.timeseries)?;
        h5.close().context("cannot close the HDF5 file")?;
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}
