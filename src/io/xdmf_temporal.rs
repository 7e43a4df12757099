//! `fields.xmf` of a transient run: an XDMF temporal collection (`GridType="Collection"
//! CollectionType="Temporal"`, one uniform grid per output time carrying `<Time Value=...>`), each grid
//! pointing at that time's `/ligand/<index>` and at the flow in force then (XDMF model and format, version 2,
//! xdmf.org; common practice in ParaView/VisIt, which show the grids as time steps).
//!
//! Same grid conventions as the steady sidecar ([`super::xdmf`]): node counts `nz+1 ny+1 nx+1`, origin and
//! spacing in z, y, x order, cell-centred attributes of dimensions `nz ny nx`.

use std::fmt::Write as _;
use std::path::Path;

use anyhow::Context;

use super::atomic::write_atomic;
use super::fields_h5::Precision;
use super::number_text::format_real;
use super::xdmf::{escape_xml, hdf_item, write_mesh};

/// One time step of the collection.
#[derive(Clone, Debug, PartialEq)]
pub struct TemporalGrid {
    /// Simulated time (s).
    pub time: f64,
    /// Scalar cell attributes: (name shown to the viewer, HDF5 dataset path).
    pub scalars: Vec<(String, String)>,
    /// `(u, v, w)` dataset paths joined into a `velocity` vector, when present.
    pub velocity: Option<[String; 3]>,
}

/// Writes the temporal sidecar for `h5_file_name` (relative to the sidecar).
pub fn write_temporal_xmf(
    path: &Path,
    h5_file_name: &str,
    grid: &mesh::Grid,
    steps: &[TemporalGrid],
    precision: Precision,
) -> anyhow::Result<()> {
    let text = temporal_xmf_text(h5_file_name, grid, steps, precision);
    write_atomic(path, text.as_bytes()).with_context(|| format!("cannot write {}", path.display()))
}

/// The XML text of the temporal sidecar.
pub fn temporal_xmf_text(
    h5_file_name: &str,
    grid: &mesh::Grid,
    steps: &[TemporalGrid],
    precision: Precision,
) -> String {
    let [nx, ny, nz] = grid.shape;
    let cells = format!("{nz} {ny} {nx}");
    let file = escape_xml(h5_file_name);
    let mut x = String::new();
    // `write!` into a String cannot fail; the results are ignored on purpose.
    let _ = writeln!(x, r#"<?xml version="1.0" ?>"#);
    let _ = writeln!(x, r#"<!DOCTYPE Xdmf SYSTEM "Xdmf.dtd" []>"#);
    let _ = writeln!(x, r#"<Xdmf xmlns:xi="http://www.w3.org/2001/XInclude" Version="2.0">"#);
    let _ = writeln!(x, r#"  <Domain>"#);
    let _ = writeln!(
        x,
        r#"    <Grid Name="plumefield_transient" GridType="Collection" CollectionType="Temporal">"#
    );
    for (n, step) in steps.iter().enumerate() {
        let _ = writeln!(x, r#"      <Grid Name="t{n:06}" GridType="Uniform">"#);
        let _ = writeln!(x, r#"        <Time Value="{}"/>"#, format_real(step.time));
        write_mesh(&mut x, grid, "        ");
        for (label, dataset) in &step.scalars {
            let _ = writeln!(
                x,
                r#"        <Attribute Name="{}" AttributeType="Scalar" Center="Cell">"#,
                escape_xml(label)
            );
            let _ = writeln!(x, "          {}", hdf_item(&cells, &file, dataset, precision));
            let _ = writeln!(x, r#"        </Attribute>"#);
        }
        if let Some(components) = &step.velocity {
            let _ =
                writeln!(x, r#"        <Attribute Name="velocity" AttributeType="Vector" Center="Cell">"#);
            let _ = writeln!(
                x,
                r#"          <DataItem ItemType="Function" Function="JOIN($0, $1, $2)" Dimensions="{cells} 3">"#
            );
            for dataset in components {
                let _ = writeln!(x, "            {}", hdf_item(&cells, &file, dataset, precision));
            }
            let _ = writeln!(x, r#"          </DataItem>"#);
            let _ = writeln!(x, r#"        </Attribute>"#);
        }
        let _ = writeln!(x, r#"      </Grid>"#);
    }
    let _ = writeln!(x, r#"    </Grid>"#);
    let _ = writeln!(x, r#"  </Domain>"#);
    let _ = writeln!(x, r#"</Xdmf>"#);
    x
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_grid_per_time_with_its_time_value() {
        let grid = mesh::Grid::new([0.0, 1e-6, 2e-6], 1e-6, [4, 3, 2]);
        let steps: Vec<TemporalGrid> = [30.0, 60.0, 90.5]
            .iter()
            .enumerate()
            .map(|(i, &t)| TemporalGrid {
                time: t,
                scalars: vec![("concentration".into(), format!("/ligand/{i:06}"))],
                velocity: (i == 0).then(|| ["/flow/u".into(), "/flow/v".into(), "/flow/w".into()]),
            })
            .collect();
        let text = temporal_xmf_text("fields.h5", &grid, &steps, Precision::Double);
        assert!(text.contains(r#"GridType="Collection" CollectionType="Temporal""#));
        assert_eq!(text.matches("<Time Value=").count(), 3);
        assert!(text.contains(r#"<Time Value="90.5"/>"#), "{text}");
        assert!(text.contains("fields.h5:/ligand/000002<"));
        assert_eq!(text.matches("JOIN").count(), 1);
        assert_eq!(text.matches(r#"Dimensions="3 4 5""#).count(), 3);
        assert_eq!(text.matches('<').count(), text.matches('>').count());
    }
}
