//! `fields.xmf`: the XDMF sidecar that lets general-purpose 3-D viewers open the fields in `fields.h5`
//! without knowing our layout. The XML only describes the grid and points at the HDF5 datasets.
//!
//! XDMF conventions (XDMF model and format, version 2, xdmf.org; common practice in ParaView/VisIt): a
//! `3DCoRectMesh` topology lists *node* counts, slowest axis first (`nz+1 ny+1 nx+1`); `ORIGIN_DXDYDZ`
//! geometry lists origin and spacing in the same z, y, x order; a `Center="Cell"` attribute has the cell
//! counts `nz ny nx`, matching the `(nz, ny, nx)` storage of `fields.h5`.

use std::fmt::Write as _;
use std::path::Path;

use anyhow::Context;

use super::atomic::write_atomic;
use super::fields_h5::{validate_fields, FieldData, Precision};
use super::number_text::format_real;

/// Writes the XDMF sidecar for the fields of `fields.h5` (named `h5_file_name`, relative to the sidecar).
/// Besides one scalar per field it lists `/grid/volume_fraction`, and a `velocity` vector joined from
/// `/flow/u`, `/flow/v`, `/flow/w` when all three are present.
pub fn write_fields_xmf(
    path: &Path,
    h5_file_name: &str,
    grid: &mesh::Grid,
    fields: &[FieldData],
    precision: Precision,
) -> anyhow::Result<()> {
    let text = fields_xmf_text(h5_file_name, grid, fields, precision)?;
    write_atomic(path, text.as_bytes()).with_context(|| format!("cannot write {}", path.display()))
}

/// The grid-cell mesh of `grid` (corner-point topology, origin and spacing in z y x order), each line
/// indented by `indent`; shared by the steady and the temporal sidecar.
pub(super) fn write_mesh(x: &mut String, grid: &mesh::Grid, indent: &str) {
    let [nx, ny, nz] = grid.shape;
    let h = format_real(grid.spacing);
    let [x0, y0, z0] = grid.origin.map(format_real);
    let (i, j) = (indent, format!("{indent}  "));
    // `write!` into a String cannot fail; the results are ignored on purpose.
    let _ = writeln!(
        x,
        r#"{i}<Topology TopologyType="3DCoRectMesh" Dimensions="{} {} {}"/>"#,
        nz + 1,
        ny + 1,
        nx + 1
    );
    let _ = writeln!(x, r#"{i}<Geometry GeometryType="ORIGIN_DXDYDZ">"#);
    let _ = writeln!(
        x,
        r#"{j}<DataItem Name="Origin" Dimensions="3" NumberType="Float" Precision="8" Format="XML">{z0} {y0} {x0}</DataItem>"#
    );
    let _ = writeln!(
        x,
        r#"{j}<DataItem Name="Spacing" Dimensions="3" NumberType="Float" Precision="8" Format="XML">{h} {h} {h}</DataItem>"#
    );
    let _ = writeln!(x, r#"{i}</Geometry>"#);
}

/// The XML text of the sidecar.
pub fn fields_xmf_text(
    h5_file_name: &str,
    grid: &mesh::Grid,
    fields: &[FieldData],
    precision: Precision,
) -> anyhow::Result<String> {
    validate_fields(grid, fields)?;
    let [nx, ny, nz] = grid.shape;
    let cells = format!("{nz} {ny} {nx}");
    let file = escape_xml(h5_file_name);

    let mut x = String::new();
    // `write!` into a String cannot fail; the results are ignored on purpose.
    let _ = writeln!(x, r#"<?xml version="1.0" ?>"#);
    let _ = writeln!(x, r#"<!DOCTYPE Xdmf SYSTEM "Xdmf.dtd" []>"#);
    let _ = writeln!(x, r#"<Xdmf xmlns:xi="http://www.w3.org/2001/XInclude" Version="2.0">"#);
    let _ = writeln!(x, r#"  <Domain>"#);
    let _ = writeln!(x, r#"    <Grid Name="plumefield" GridType="Uniform">"#);
    write_mesh(&mut x, grid, "      ");

    let mut scalars: Vec<(String, String)> = vec![("volume_fraction".into(), "/grid/volume_fraction".into())];
    for field in fields {
        // Field names are unique within a group; qualify a name that recurs in another group.
        let repeated = fields.iter().filter(|f| f.name == field.name).count() > 1;
        let label = if repeated { format!("{}_{}", field.group, field.name) } else { field.name.clone() };
        scalars.push((label, field.dataset_path()));
    }
    for (label, dataset) in &scalars {
        let _ = writeln!(
            x,
            r#"      <Attribute Name="{}" AttributeType="Scalar" Center="Cell">"#,
            escape_xml(label)
        );
        let _ = writeln!(x, "        {}", hdf_item(&cells, &file, dataset, precision));
        let _ = writeln!(x, r#"      </Attribute>"#);
    }

    let has = |name: &str| fields.iter().any(|f| f.group == "flow" && f.name == name);
    if has("u") && has("v") && has("w") && !fields.iter().any(|f| f.name == "velocity") {
        let _ = writeln!(x, r#"      <Attribute Name="velocity" AttributeType="Vector" Center="Cell">"#);
        let _ = writeln!(
            x,
            r#"        <DataItem ItemType="Function" Function="JOIN($0, $1, $2)" Dimensions="{cells} 3">"#
        );
        for component in ["u", "v", "w"] {
            let _ = writeln!(
                x,
                "          {}",
                hdf_item(&cells, &file, &format!("/flow/{component}"), precision)
            );
        }
        let _ = writeln!(x, r#"        </DataItem>"#);
        let _ = writeln!(x, r#"      </Attribute>"#);
    }

    let _ = writeln!(x, r#"    </Grid>"#);
    let _ = writeln!(x, r#"  </Domain>"#);
    let _ = writeln!(x, r#"</Xdmf>"#);
    Ok(x)
}

/// A DataItem that reads one `(nz, ny, nx)` floating-point dataset of `precision` from the HDF5 file.
pub(super) fn hdf_item(cells: &str, file: &str, dataset: &str, precision: Precision) -> String {
    format!(
        r#"<DataItem Dimensions="{cells}" NumberType="Float" Precision="{}" Format="HDF">{file}:{}</DataItem>"#,
        precision.bytes(),
        escape_xml(dataset)
    )
}

/// Escapes the five XML special characters (XML 1.0 §2.4).
pub(super) fn escape_xml(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            _ => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn field(group: &str, name: &str, grid: &mesh::Grid) -> FieldData<'static> {
        FieldData {
            group: group.into(),
            name: name.into(),
            unit: "1".into(),
            description: String::new(),
            values: vec![0.0; grid.len()].into(),
        }
    }

    #[test]
    fn sidecar_lists_node_counts_and_geometry_in_z_y_x_order() {
        let grid = mesh::Grid::new([1e-5, 2e-5, 3e-5], 2.5e-6, [6, 5, 4]);
        let fields = vec![field("flow", "u", &grid), field("ligand", "concentration", &grid)];
        let text = fields_xmf_text("fields.h5", &grid, &fields, Precision::Double).unwrap();
        assert!(text.contains(r#"TopologyType="3DCoRectMesh" Dimensions="5 6 7""#), "{text}");
        assert!(text.contains(">3e-5 2e-5 1e-5</DataItem>"), "{text}");
        assert!(text.contains(">2.5e-6 2.5e-6 2.5e-6</DataItem>"), "{text}");
        assert!(text.contains(
            r#"Dimensions="4 5 6" NumberType="Float" Precision="8" Format="HDF">fields.h5:/flow/u<"#
        ));
        assert!(text.contains("fields.h5:/ligand/concentration<"));
        assert!(text.contains("fields.h5:/grid/volume_fraction<"));
        assert_eq!(text.matches(r#"Center="Cell""#).count(), 3);
        // No velocity vector without all three components.
        assert!(!text.contains("JOIN"));
        assert_eq!(text.matches('<').count(), text.matches('>').count());
    }

    #[test]
    fn velocity_vector_joins_three_components() {
        let grid = mesh::Grid::new([0.0; 3], 1.0, [2, 2, 2]);
        let fields: Vec<FieldData> = ["u", "v", "w"].iter().map(|c| field("flow", c, &grid)).collect();
        let text = fields_xmf_text("out & co.h5", &grid, &fields, Precision::Double).unwrap();
        assert!(text.contains(r#"Function="JOIN($0, $1, $2)" Dimensions="2 2 2 3""#), "{text}");
        assert!(text.contains("out &amp; co.h5:/flow/w"), "{text}");
    }

    #[test]
    fn wrong_length_field_is_rejected_and_nothing_written() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.xmf");
        let grid = mesh::Grid::new([0.0; 3], 1.0, [2, 2, 2]);
        let mut f = field("flow", "u", &grid);
        f.values.to_mut().pop();
        assert!(write_fields_xmf(&path, "fields.h5", &grid, &[f], Precision::Double).is_err());
        assert!(!path.exists());
    }
}
