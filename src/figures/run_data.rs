//! The data of a run's figures, read back from its output folder (`fields.h5`, `cells.csv`, `summary.json`),
//! so that `run` and `plumefield plot DIR` draw exactly the same pictures from the same files.

use std::path::Path;

use anyhow::{anyhow, Context};

use crate::exit::InputError;
use crate::outputs::RunSummary;

/// The horizontal mid-plane (z = middle of the chamber) of the 3-D fields.
pub struct MidPlane {
    pub nx: usize,
    pub ny: usize,
    /// Grid spacing (m) and lower corner (x, y) (m).
    pub spacing: f64,
    pub origin: [f64; 2],
    /// z of the plane (m).
    pub z: f64,
    /// Concentration per grid cell (molecules/m³), NaN inside cells; index i + nx j.
    pub concentration: Vec<f64>,
    /// Superficial velocity x, y (m/s), when the run wrote it.
    pub velocity: Option<[Vec<f64>; 2]>,
}

/// One cell as the figures need it (SI).
pub struct CellRow {
    pub centre: [f64; 3],
    pub radius: f64,
    pub anisotropy: [f64; 3],
    pub anisotropy_along_flow: f64,
    pub direction_error: f64,
    pub estimate_anisotropy_along_flow: Option<f64>,
    /// Along-flow parts of the anisotropy from the cell's own secretion and from the rest, for a cell with the
    /// self/neighbour split.
    pub split_along_flow: Option<[f64; 2]>,
}

/// Everything the run figures show.
pub struct RunFigureData {
    pub title: String,
    /// Chamber extent along x, y, z (m).
    pub extent: [f64; 3],
    pub plane: Option<MidPlane>,
    pub cells: Vec<CellRow>,
    /// Mean-field estimate of the anisotropy along the flow against x: (x in m, A).
    pub meanfield_profile: Vec<(f64, f64)>,
    /// Isolated-cell low-Péclet anisotropy.
    pub isolated_anisotropy: Option<f64>,
    pub integration_time: Option<f64>,
    /// The direction error below which a cell reads its cue (`readable_error` of the summary; 1 without it).
    pub readable_error: f64,
}

/// The readable level drawn for summaries without a `sensing` section (older versions).
const DEFAULT_READABLE_ERROR: f64 = 1.0;

impl RunFigureData {
    /// Reads a run's output folder. `cells.csv` and `summary.json` are required; the slice needs
    /// `/ligand/concentration` in `fields.h5` (arrows need `/flow/u` and `/flow/v`).
    pub fn read(dir: &Path) -> anyhow::Result<Self> {
        let summary_path = dir.join("summary.json");
        let cells_path = dir.join("cells.csv");
        if !summary_path.exists() || !cells_path.exists() {
            return Err(InputError(format!(
                "{} is not a run output folder (no summary.json or cells.csv)",
                dir.display()
            ))
            .into());
        }
        let summary = RunSummary::read(&summary_path)?;
        let cells = read_cells(&cells_path)?;
        let grid = &summary.grid;
        let extent = [0, 1, 2].map(|a| grid.shape[a] as f64 * grid.spacing);
        let estimates = &summary.estimates;
        let dense = &estimates.case.profile_dense;
        // A value written as null (not finite) is not drawn.
        let meanfield_profile = dense
            .x
            .iter()
            .zip(&dense.anisotropy_along_flow)
            .filter(|(_, a)| !a.is_nan())
            .map(|(&x, &a)| (x, a))
            .collect();
        let plane = read_mid_plane(&dir.join("fields.h5")).ok().flatten();
        Ok(RunFigureData {
            title: summary.title.clone(),
            extent,
            plane,
            cells,
            meanfield_profile,
            isolated_anisotropy: estimates.isolated_anisotropy,
            integration_time: Some(estimates.case.integration_time),
            readable_error: summary.sensing.as_ref().map_or(DEFAULT_READABLE_ERROR, |s| s.readable_error),
        })
    }
}

fn read_cells(path: &Path) -> anyhow::Result<Vec<CellRow>> {
    let mut reader =
        csv::Reader::from_path(path).with_context(|| format!("cannot read {}", path.display()))?;
    let header = reader.headers()?.clone();
    let find = |name: &str| header.iter().position(|h| h == name);
    let need = |name: &str| find(name).ok_or_else(|| anyhow!("{} has no column {name}", path.display()));
    let cols = [
        need("x")?,
        need("y")?,
        need("z")?,
        need("radius")?,
        need("anisotropy_x")?,
        need("anisotropy_y")?,
        need("anisotropy_z")?,
        need("anisotropy_along_flow")?,
        need("direction_error")?,
    ];
    let estimate = find("estimate_anisotropy_along_flow");
    let split = find("anisotropy_from_self_along_flow").zip(find("anisotropy_from_neighbours_along_flow"));
    let mut rows = Vec::new();
    for record in reader.records() {
        let record = record?;
        let v = |i: usize| record.get(i).and_then(|s| s.parse::<f64>().ok()).unwrap_or(f64::NAN);
        rows.push(CellRow {
            centre: [v(cols[0]), v(cols[1]), v(cols[2])],
            radius: v(cols[3]),
            anisotropy: [v(cols[4]), v(cols[5]), v(cols[6])],
            anisotropy_along_flow: v(cols[7]),
            direction_error: v(cols[8]),
            estimate_anisotropy_along_flow: estimate.map(v).filter(|x| x.is_finite()),
            // Not split: NaN in both columns.
            split_along_flow: split.map(|(a, b)| [v(a), v(b)]).filter(|p| p.iter().any(|x| !x.is_nan())),
        });
    }
    Ok(rows)
}

/// The z mid-plane of `fields.h5`, or `None` when the file has no concentration.
fn read_mid_plane(path: &Path) -> anyhow::Result<Option<MidPlane>> {
    let file = hdf5::File::open(path)?;
    if !file.link_exists("ligand") || !file.group("ligand")?.link_exists("concentration") {
        return Ok(None);
    }
    let shape: Vec<u64> = file.dataset("grid/shape")?.read_raw()?;
    let spacing: f64 = file.dataset("grid/spacing")?.read_scalar()?;
    let origin: Vec<f64> = file.dataset("grid/origin")?.read_raw()?;
    let [nx, ny, nz] = [shape[0] as usize, shape[1] as usize, shape[2] as usize];
    let k = nz / 2;
    // Only the plane is read (a hyperslab of the (nz, ny, nx) dataset), x fastest as in the solver.
    let plane = |name: &str| -> anyhow::Result<Vec<f64>> {
        let slab = file.dataset(name)?.read_slice_2d::<f64, _>(ndarray::s![k, .., ..])?;
        Ok(slab.iter().copied().collect())
    };
    let fraction = plane("grid/volume_fraction")?;
    let mut concentration = plane("ligand/concentration")?;
    for (c, phi) in concentration.iter_mut().zip(&fraction) {
        if *phi <= 0.0 {
            *c = f64::NAN;
        }
    }
    let velocity = match (plane("flow/u"), plane("flow/v")) {
        (Ok(u), Ok(v)) => Some([u, v]),
        _ => None,
    };
    Ok(Some(MidPlane {
        nx,
        ny,
        spacing,
        origin: [origin[0], origin[1]],
        z: origin[2] + (k as f64 + 0.5) * spacing,
        concentration,
        velocity,
    }))
}
