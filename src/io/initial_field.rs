//! The initial ligand field of a transient run read from another run's `fields.h5` (`/ligand/concentration`,
//! the steady or final field), after checking that it was computed on the same grid.

use std::path::Path;

/// Why the initial field cannot be used (all are input errors: exit code 2).
#[derive(Debug, thiserror::Error)]
pub enum InitialFieldError {
    #[error("solve.initial_condition: cannot open {path} as HDF5 ({message})")]
    Open { path: String, message: String },
    #[error("solve.initial_condition: {path} has no dataset {dataset} ({message})")]
    Missing { path: String, dataset: &'static str, message: String },
    #[error(
        "solve.initial_condition: the grid of {path} ({found}) differs from this case's grid ({expected})"
    )]
    GridMismatch { path: String, found: String, expected: String },
    #[error("solve.initial_condition: {path} {dataset} holds non-finite values")]
    BadValues { path: String, dataset: &'static str },
}

fn describe(shape: &[u64], spacing: f64, origin: &[f64]) -> String {
    format!("shape {shape:?}, spacing {spacing:e} m, origin {origin:?} m")
}

/// Reads `/ligand/concentration` of `path` (flat order `i + nx (j + ny k)`), requiring `/grid/shape`,
/// `/grid/spacing` and `/grid/origin` to equal `grid`'s (spacing and origin to 1e-9 relative).
pub fn read_initial_concentration(path: &Path, grid: &mesh::Grid) -> Result<Vec<f64>, InitialFieldError> {
    let name = path.display().to_string();
    let file = hdf5::File::open(path)
        .map_err(|e| InitialFieldError::Open { path: name.clone(), message: e.to_string() })?;
    let missing = |dataset: &'static str| {
        let name = name.clone();
        move |e: hdf5::Error| InitialFieldError::Missing { path: name, dataset, message: e.to_string() }
    };
    // Every dataset is read only after its size is checked against what it must hold (three numbers, one, the
    // grid's cells), so that a foreign or damaged file cannot make the run allocate more.
    let sized = |name: &'static str, expected: usize| -> Result<hdf5::Dataset, InitialFieldError> {
        let dataset = file.dataset(name).map_err(missing(name))?;
        if dataset.size() != expected {
            return Err(InitialFieldError::GridMismatch {
                path: path.display().to_string(),
                found: format!("/{name} with {} values", dataset.size()),
                expected: format!("{expected}"),
            });
        }
        Ok(dataset)
    };
    let shape: Vec<u64> = sized("grid/shape", 3)?.read_raw().map_err(missing("/grid/shape"))?;
    let spacing: f64 = sized("grid/spacing", 1)?.read_scalar().map_err(missing("/grid/spacing"))?;
    let origin: Vec<f64> = sized("grid/origin", 3)?.read_raw().map_err(missing("/grid/origin"))?;
    let expected_shape: Vec<u64> = grid.shape.iter().map(|&n| n as u64).collect();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * grid.spacing.max(a.abs().max(b.abs()));
    let same = shape == expected_shape
        && close(spacing, grid.spacing)
        && origin.len() == 3
        && origin.iter().zip(grid.origin).all(|(&a, b)| close(a, b));
    if !same {
        return Err(InitialFieldError::GridMismatch {
            path: name,
            found: describe(&shape, spacing, &origin),
            expected: describe(&expected_shape, grid.spacing, &grid.origin),
        });
    }
    let values: Vec<f64> =
        sized("ligand/concentration", grid.len())?.read_raw().map_err(missing("/ligand/concentration"))?;
    if values.len() != grid.len() {
        return Err(InitialFieldError::GridMismatch {
            path: name,
            found: format!("/ligand/concentration with {} values", values.len()),
            expected: format!("{} grid cells", grid.len()),
        });
    }
    if values.iter().any(|v| !v.is_finite()) {
        return Err(InitialFieldError::BadValues { path: name, dataset: "/ligand/concentration" });
    }
    Ok(values)
}
