//! `fields.h5`: the 3-D fields of a run, the grid they live on, the per-cell table and the provenance, in one
//! HDF5 file (layout in DESIGN.md §6).
//!
//! ```text
//! /                      attributes: version, git_revision, case_sha256, case_text, command_line, created_utc
//! /grid/origin           (3,)  lower corner x, y, z (m)
//! /grid/spacing          ()    edge of the cubic grid cells (m)
//! /grid/shape            (3,)  nx, ny, nz
//! /grid/volume_fraction  (nz, ny, nx) fluid fraction of each grid cell (1)
//! /<group>/<name>        (nz, ny, nx) cell-centred fields, e.g. /flow/u, /flow/pressure, /ligand/concentration
//! /cells/<column>        (n_cells,) one dataset per cells.csv column; attribute `columns` keeps the CSV order
//! ```
//!
//! 3-D arrays are stored `(nz, ny, nx)` so x varies fastest: the flat order `i + nx (j + ny k)` of the solver
//! is written unchanged, and XDMF readers take the last dimension as x. Every dataset carries string
//! attributes `units` and `description`. 3-D datasets are stored in the precision of [`FieldStorage`] and
//! chunked (at most 32³); at a compression level above 0 they are compressed with shuffle followed by deflate
//! (byte shuffling first groups the exponent bytes of neighbouring values, which deflate then compresses far
//! better; common practice), chunk by chunk in parallel (`field_chunks.rs`). Object time stamps are off, so the
//! file depends only on its content and `created_utc`.

use std::borrow::Cow;
use std::path::Path;

use anyhow::{anyhow, Context};
use hdf5::types::VarLenUnicode;
use hdf5::{File, Group, Location};
use ndarray::ArrayView1;
use thiserror::Error;

use super::atomic::with_atomic_file;
pub use super::field_chunks::{FieldStorage, Precision};
use super::provenance::created_utc;
use super::table::{CellTable, ColumnValues};

/// One cell-centred field for `fields.h5` and `fields.xmf`.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldData<'a> {
    /// HDF5 group: `"flow"` or `"ligand"`.
    pub group: String,
    /// Dataset name inside the group, e.g. `"u"`, `"pressure"`, `"concentration"`.
    pub name: String,
    /// SI unit string (`"m/s"`, `"Pa"`, `"molecules/m^3"`, `"1"`).
    pub unit: String,
    pub description: String,
    /// One value per grid cell, flat index `i + nx * (j + ny * k)` (borrowed from the solution: no copy).
    pub values: Cow<'a, [f64]>,
}

impl<'a> FieldData<'a> {
    /// A field that borrows its values from the solution.
    pub fn borrowed(group: &str, name: &str, unit: &str, description: &str, values: &'a [f64]) -> Self {
        FieldData {
            group: group.into(),
            name: name.into(),
            unit: unit.into(),
            description: description.into(),
            values: Cow::Borrowed(values),
        }
    }

    /// Path of the dataset inside `fields.h5`, e.g. `/flow/u`.
    pub fn dataset_path(&self) -> String {
        format!("/{}/{}", self.group, self.name)
    }
}

/// Who made the file from what; stored as root attributes.
#[derive(Clone, Debug, PartialEq)]
pub struct Provenance {
    /// Program version (`CARGO_PKG_VERSION`).
    pub version: String,
    /// Source revision, `None` when unknown (stored as `"unknown"`).
    pub git_revision: Option<String>,
    /// SHA-256 of the case file bytes, lower-case hex.
    pub case_sha256: String,
    /// The full text of the case file.
    pub case_text: String,
    /// The command line that produced the run.
    pub command_line: String,
}

/// Why the fields cannot be written as given (caller data, checked before any file is touched).
#[derive(Debug, Error, PartialEq)]
pub enum FieldsError {
    #[error("field {path} has {found} values but the grid has {expected} cells")]
    WrongLength { path: String, found: usize, expected: usize },
    #[error("volume fraction has {found} values but the grid has {expected} cells")]
    WrongVolumeFractionLength { found: usize, expected: usize },
    #[error("field group or name {name:?} is not a plain name (letters, digits, '_', '-', '.')")]
    InvalidName { name: String },
    #[error("field group {group:?} is reserved for {reserved}")]
    ReservedGroup { group: String, reserved: &'static str },
    #[error("field {path} is given twice")]
    Duplicate { path: String },
}

/// Deflate level of the per-cell columns (small): most of the gain of level 9 at a fraction of the time
/// (common practice).
const DEFLATE_LEVEL: u8 = 4;

/// Checks `fields` against `grid`: lengths, plain names, no reserved groups, no duplicates.
pub fn validate_fields(grid: &mesh::Grid, fields: &[FieldData]) -> Result<(), FieldsError> {
    for (index, field) in fields.iter().enumerate() {
        for name in [&field.group, &field.name] {
            let plain = !name.is_empty()
                && name != "."
                && name != ".."
                && name.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-' || c == '.');
            if !plain {
                return Err(FieldsError::InvalidName { name: name.clone() });
            }
        }
        match field.group.as_str() {
            "grid" => {
                return Err(FieldsError::ReservedGroup { group: field.group.clone(), reserved: "the grid" })
            }
            "cells" => {
                return Err(FieldsError::ReservedGroup {
                    group: field.group.clone(),
                    reserved: "the cell table",
                })
            }
            _ => {}
        }
        if field.values.len() != grid.len() {
            return Err(FieldsError::WrongLength {
                path: field.dataset_path(),
                found: field.values.len(),
                expected: grid.len(),
            });
        }
        if fields[..index].iter().any(|f| f.group == field.group && f.name == field.name) {
            return Err(FieldsError::Duplicate { path: field.dataset_path() });
        }
    }
    Ok(())
}

/// Writes `fields.h5` atomically: grid, volume fraction, `fields`, the cell table and provenance.
pub fn write_fields_h5(
    path: &Path,
    grid: &mesh::Grid,
    volume_fraction: &[f64],
    fields: &[FieldData],
    cells: &CellTable,
    provenance: &Provenance,
    storage: FieldStorage,
) -> anyhow::Result<()> {
    write_fields_h5_created(path, grid, volume_fraction, fields, cells, provenance, storage, &created_utc())
}

/// [`write_fields_h5`] with the creation stamp given, so identical content can be shown to give identical bytes.
#[allow(clippy::too_many_arguments)]
fn write_fields_h5_created(
    path: &Path,
    grid: &mesh::Grid,
    volume_fraction: &[f64],
    fields: &[FieldData],
    cells: &CellTable,
    provenance: &Provenance,
    storage: FieldStorage,
    created: &str,
) -> anyhow::Result<()> {
    if volume_fraction.len() != grid.len() {
        return Err(FieldsError::WrongVolumeFractionLength {
            found: volume_fraction.len(),
            expected: grid.len(),
        }
        .into());
    }
    validate_fields(grid, fields)?;
    cells.validate()?;
    with_atomic_file(path, |temp| {
        let file = File::with_options()
            .with_fcpl(|p| p.obj_track_times(false))
            .create(temp)
            .with_context(|| format!("cannot create HDF5 file {}", temp.display()))?;
        write_provenance(&file, provenance, created)?;
        write_grid(&file, grid, volume_fraction, storage)?;
        for field in fields {
            let group = if file.link_exists(&field.group) {
                file.group(&field.group)?
            } else {
                new_group(&file, &field.group)?
            };
            write_field_3d(
                &group,
                &field.name,
                grid,
                &field.values,
                &field.unit,
                &field.description,
                storage,
            )?;
        }
        write_cells(&file, cells)?;
        file.close().context("cannot close the HDF5 file")?;
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}

pub(super) fn write_provenance(file: &File, p: &Provenance, created: &str) -> anyhow::Result<()> {
    set_text_attr(file, "version", &p.version)?;
    set_text_attr(file, "git_revision", p.git_revision.as_deref().unwrap_or("unknown"))?;
    set_text_attr(file, "case_sha256", &p.case_sha256)?;
    set_text_attr(file, "case_text", &p.case_text)?;
    set_text_attr(file, "command_line", &p.command_line)?;
    set_text_attr(file, "created_utc", created)?;
    set_text_attr(
        file,
        "layout",
        "3-D datasets are cell-centred with shape (nz, ny, nx), x varying fastest; SI units throughout",
    )
}

pub(super) fn write_grid(
    file: &File,
    grid: &mesh::Grid,
    volume_fraction: &[f64],
    storage: FieldStorage,
) -> anyhow::Result<()> {
    let g = new_group(file, "grid")?;
    let origin =
        g.new_dataset_builder().with_data(&grid.origin[..]).obj_track_times(false).create("origin")?;
    describe(&origin, "m", "lower corner of the grid (x, y, z)")?;
    let spacing = g
        .new_dataset_builder()
        .with_data(&ndarray::arr0(grid.spacing))
        .obj_track_times(false)
        .create("spacing")?;
    describe(&spacing, "m", "edge length of the cubic grid cells")?;
    let shape_values = grid.shape.map(|n| n as u64);
    let shape =
        g.new_dataset_builder().with_data(&shape_values[..]).obj_track_times(false).create("shape")?;
    describe(&shape, "1", "number of grid cells along x, y, z (nx, ny, nz); 3-D datasets are (nz, ny, nx)")?;
    write_field_3d(
        &g,
        "volume_fraction",
        grid,
        volume_fraction,
        "1",
        "fraction of each grid cell occupied by fluid (1 = open, 0 = inside a cell)",
        storage,
    )
}

/// A 3-D cell-centred dataset `(nz, ny, nx)` stored as `storage` says.
pub(super) fn write_field_3d(
    group: &Group,
    name: &str,
    grid: &mesh::Grid,
    values: &[f64],
    unit: &str,
    description: &str,
    storage: FieldStorage,
) -> anyhow::Result<()> {
    let ds = super::field_chunks::write_chunked_field(group, name, grid.shape, values, storage)?;
    describe(&ds, unit, description)
}

pub(super) fn write_cells(file: &File, table: &CellTable) -> anyhow::Result<()> {
    let g = new_group(file, "cells")?;
    write_table(&g, table)
}

/// One 1-D dataset per column of `table` in `g`, with the attributes `columns` (the order) and `count` (rows).
pub(super) fn write_table(g: &Group, table: &CellTable) -> anyhow::Result<()> {
    let rows = table.validate()?;
    let names =
        table.columns.iter().map(|c| to_h5_text(&c.name)).collect::<anyhow::Result<Vec<VarLenUnicode>>>()?;
    g.new_attr_builder().with_data(&names[..]).create("columns")?;
    g.new_attr::<u64>().shape(()).create("count")?.write_scalar(&(rows as u64))?;
    for column in &table.columns {
        let ds = match &column.values {
            ColumnValues::Int(v) => write_column(g, &column.name, ArrayView1::from(v.as_slice()))?,
            ColumnValues::Real(v) => write_column(g, &column.name, ArrayView1::from(v.as_slice()))?,
        };
        describe(&ds, &column.unit, &column.description)?;
    }
    Ok(())
}

/// A 1-D per-cell dataset; compressed when non-empty (HDF5 chunks must have a non-zero size).
fn write_column<T: hdf5::H5Type>(
    g: &Group,
    name: &str,
    values: ArrayView1<T>,
) -> anyhow::Result<hdf5::Dataset> {
    let n = values.len();
    let builder = g.new_dataset_builder().with_data(values).obj_track_times(false);
    let builder =
        if n > 0 { builder.chunk(n.min(1 << 16)).shuffle().deflate(DEFLATE_LEVEL) } else { builder };
    builder.create(name).with_context(|| format!("cannot write dataset /cells/{name}"))
}

pub(super) fn new_group(file: &File, name: &str) -> anyhow::Result<Group> {
    file.create_group_builder()
        .obj_track_times(false)
        .create(name)
        .with_context(|| format!("cannot create HDF5 group /{name}"))
}

/// The `units` and `description` attributes every dataset carries.
pub(super) fn describe(ds: &hdf5::Dataset, unit: &str, description: &str) -> anyhow::Result<()> {
    set_text_attr(ds, "units", unit)?;
    set_text_attr(ds, "description", description)
}

pub(super) fn set_text_attr(location: &Location, name: &str, value: &str) -> anyhow::Result<()> {
    let text = to_h5_text(value)?;
    location
        .new_attr::<VarLenUnicode>()
        .shape(())
        .create(name)
        .and_then(|a| a.write_scalar(&text))
        .with_context(|| format!("cannot write attribute {name} of {}", location.name()))
}

fn to_h5_text(value: &str) -> anyhow::Result<VarLenUnicode> {
    value.parse::<VarLenUnicode>().map_err(|e| anyhow!("text {value:?} cannot be stored in HDF5: {e}"))
}

#[cfg(test)]
mod tests {
    use super::super::table::Column;
    use super::*;
    use hdf5::filters::Filter;
    use ndarray::{Ix1, Ix3};

    fn grid() -> mesh::Grid {
        mesh::Grid::new([1e-5, -2e-5, 0.0], 2e-6, [5, 4, 3])
    }

    /// A field whose value encodes its own (i, j, k), so any transposition shows.
    fn coded(grid: &mesh::Grid, scale: f64) -> Vec<f64> {
        (0..grid.len())
            .map(|n| {
                let [i, j, k] = grid.ijk(n);
                scale * (i as f64 + 10.0 * j as f64 + 100.0 * k as f64) + 1.0 / 3.0
            })
            .collect()
    }

    fn fields(grid: &mesh::Grid) -> Vec<FieldData<'static>> {
        let f = |group: &str, name: &str, unit: &str, scale: f64| FieldData {
            group: group.into(),
            name: name.into(),
            unit: unit.into(),
            description: format!("test field {name}"),
            values: coded(grid, scale).into(),
        };
        vec![
            f("flow", "u", "m/s", 1e-6),
            f("flow", "pressure", "Pa", 2.0),
            f("ligand", "concentration", "molecules/m^3", 1e15),
        ]
    }

    fn cells() -> CellTable {
        CellTable {
            columns: vec![
                Column::int("id", "1", "cell identifier", vec![0, 1]),
                Column::real("x", "m", "centre x", vec![1.5e-5, 2.5e-5]),
                Column::real("direction_error", "1", "relative error", vec![f64::INFINITY, 0.25]),
            ],
        }
    }

    fn provenance() -> Provenance {
        Provenance {
            version: "0.1.0".into(),
            git_revision: None,
            case_sha256: "ab".repeat(32),
            case_text: "title = \"unit test\"\n[grid]\nspacing = \"2 um\"\n".into(),
            command_line: "plumefield run case.toml".into(),
        }
    }

    fn text_attr(loc: &Location, name: &str) -> String {
        loc.attr(name).unwrap().read_scalar::<VarLenUnicode>().unwrap().as_str().to_string()
    }

    #[test]
    fn written_file_reads_back_with_shapes_units_and_values() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.h5");
        let g = grid();
        let vf: Vec<f64> = (0..g.len()).map(|n| (n % 7) as f64 / 6.0).collect();
        let fs = fields(&g);
        write_fields_h5(&path, &g, &vf, &fs, &cells(), &provenance(), FieldStorage::default()).unwrap();
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1, "temporary file left behind");

        let file = File::open(&path).unwrap();
        assert_eq!(text_attr(&file, "git_revision"), "unknown");
        assert_eq!(text_attr(&file, "case_text"), provenance().case_text);
        assert_eq!(text_attr(&file, "command_line"), "plumefield run case.toml");
        assert!(text_attr(&file, "created_utc").ends_with('Z'));

        let origin = file.dataset("grid/origin").unwrap().read_1d::<f64>().unwrap();
        assert_eq!(origin.to_vec(), g.origin.to_vec());
        assert_eq!(file.dataset("grid/spacing").unwrap().read_scalar::<f64>().unwrap(), g.spacing);
        assert_eq!(file.dataset("grid/shape").unwrap().read_1d::<u64>().unwrap().to_vec(), vec![5, 4, 3]);

        let mut all = vec![("grid/volume_fraction".to_string(), "1".to_string(), vf.clone())];
        all.extend(fs.iter().map(|f| (f.dataset_path(), f.unit.clone(), f.values.to_vec())));
        for (name, unit, values) in all {
            let ds = file.dataset(&name).unwrap();
            assert_eq!(ds.shape(), vec![3, 4, 5], "{name}");
            assert_eq!(text_attr(&ds, "units"), unit);
            assert!(!text_attr(&ds, "description").is_empty());
            assert_eq!(ds.chunk(), Some(vec![3, 4, 5]));
            let filters = ds.filters();
            let level = FieldStorage::default().compression;
            assert_eq!(filters, vec![Filter::Shuffle, Filter::Deflate(level)], "{name}");
            let read = ds.read::<f64, Ix3>().unwrap();
            // Element (k, j, i) of the stored array is grid cell (i, j, k).
            for (n, value) in values.iter().enumerate() {
                let [i, j, k] = g.ijk(n);
                assert_eq!(read[[k, j, i]].to_bits(), value.to_bits(), "{name} at ({i},{j},{k})");
            }
        }

        let cells_group = file.group("cells").unwrap();
        let order = cells_group.attr("columns").unwrap().read_1d::<VarLenUnicode>().unwrap();
        let order: Vec<&str> = order.iter().map(|s| s.as_str()).collect();
        assert_eq!(order, ["id", "x", "direction_error"]);
        assert_eq!(file.dataset("cells/id").unwrap().read_1d::<u64>().unwrap().to_vec(), vec![0, 1]);
        let err = file.dataset("cells/direction_error").unwrap();
        assert_eq!(text_attr(&err, "units"), "1");
        assert_eq!(err.read::<f64, Ix1>().unwrap().to_vec(), vec![f64::INFINITY, 0.25]);
    }

    #[test]
    fn large_fields_are_chunked_at_32_and_compress() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.h5");
        let g = mesh::Grid::new([0.0; 3], 1e-6, [64, 40, 8]);
        let smooth: Vec<f64> = (0..g.len()).map(|n| (g.ijk(n)[0] as f64 * 0.1).sin()).collect();
        let f = FieldData {
            group: "ligand".into(),
            name: "concentration".into(),
            unit: "molecules/m^3".into(),
            description: "smooth".into(),
            values: smooth.into(),
        };
        write_fields_h5(
            &path,
            &g,
            &vec![1.0; g.len()],
            &[f],
            &CellTable::default(),
            &provenance(),
            FieldStorage::default(),
        )
        .unwrap();
        let file = File::open(&path).unwrap();
        let ds = file.dataset("ligand/concentration").unwrap();
        assert_eq!(ds.chunk(), Some(vec![8, 32, 32]));
        let raw_bytes = (g.len() * 8) as u64;
        let stored = ds.storage_size();
        assert!(stored < raw_bytes / 2, "stored {stored} bytes of {raw_bytes}");
        assert!(!file.link_exists("cells/id"));
        assert_eq!(file.group("cells").unwrap().attr("count").unwrap().read_scalar::<u64>().unwrap(), 0);
    }

    #[test]
    fn bad_input_is_rejected_before_any_file_exists() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.h5");
        let g = grid();
        let vf = vec![1.0; g.len()];
        let mut short = fields(&g);
        short[1].values.to_mut().pop();
        let err = write_fields_h5(&path, &g, &vf, &short, &cells(), &provenance(), FieldStorage::default())
            .unwrap_err();
        assert!(err.to_string().contains("/flow/pressure"), "{err}");
        let mut dup = fields(&g);
        dup.push(dup[0].clone());
        assert_eq!(validate_fields(&g, &dup), Err(FieldsError::Duplicate { path: "/flow/u".into() }));
        let mut reserved = fields(&g);
        reserved[0].group = "cells".into();
        assert!(matches!(validate_fields(&g, &reserved), Err(FieldsError::ReservedGroup { .. })));
        let mut slash = fields(&g);
        slash[0].name = "u/v".into();
        assert!(matches!(validate_fields(&g, &slash), Err(FieldsError::InvalidName { .. })));
        assert!(write_fields_h5(
            &path,
            &g,
            &vf[1..],
            &fields(&g),
            &cells(),
            &provenance(),
            FieldStorage::default()
        )
        .is_err());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn failure_inside_hdf5_leaves_no_file() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.h5");
        let g = grid();
        let mut p = provenance();
        // A NUL byte cannot be stored as HDF5 text: the write fails half-way, after the file was created.
        p.command_line = "plumefield run \0".into();
        let err = write_fields_h5(
            &path,
            &g,
            &vec![1.0; g.len()],
            &fields(&g),
            &cells(),
            &p,
            FieldStorage::default(),
        )
        .unwrap_err();
        assert!(format!("{err:#}").contains("cannot be stored"), "{err:#}");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn same_content_gives_identical_bytes() {
        // Reproducible files: with object time stamps off, two writes more than a second apart (HDF5 stamps
        // have one-second resolution) give the same bytes when the content and the creation stamp agree.
        let dir = tempfile::tempdir().unwrap();
        let g = grid();
        let vf = vec![1.0; g.len()];
        let a = dir.path().join("a.h5");
        let b = dir.path().join("b.h5");
        let stamp = "2024-01-01T00:00:00Z";
        let storage = FieldStorage::default();
        for (n, path) in [&a, &b].into_iter().enumerate() {
            if n > 0 {
                std::thread::sleep(std::time::Duration::from_millis(1100));
            }
            write_fields_h5_created(path, &g, &vf, &fields(&g), &cells(), &provenance(), storage, stamp)
                .unwrap();
        }
        assert!(std::fs::read(&a).unwrap() == std::fs::read(&b).unwrap(), "files differ");
    }
}
