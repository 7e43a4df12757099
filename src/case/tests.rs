//! One test per validation rule: each bad value must be refused with a message that names the key and the line.

use std::path::Path;

use super::{Case, CaseError, LayoutKind, OutputField};
use mesh::layout::PackingMethod;
use solver::problem::{ChamberFace, MediumModel, SurfaceUptake};

const BASE: &str = r#"title = "test chamber"

[chamber]
size = ["96 um", "48 um", "40 um"]

[grid]
spacing = "2 um"

[medium]
model = "darcy"
viscosity = "1e-3 Pa s"
permeability = "1e-13 m^2"

[flow]
mean_velocity = "2 um/s"

[boundaries]
x_min = "inlet"
x_max = "outlet"
y_min = "wall"
y_max = "wall"
z_min = "symmetry"
z_max = "symmetry"

[ligand]
diffusivity = "1e-10 m^2/s"
decay_rate = "0 /s"
inlet_concentration = 0.0

[cells]
radius = "8 um"
secretion_rate = "3600 /h"
uptake = { model = "first_order", rate_constant = "1e-6 m/s" }
layout = { kind = "lattice", spacing = ["24 um", "24 um", "24 um"] }

[solve]
mode = "steady"
tolerance = 1e-8

[sensing]
integration_time = "1 h"

[output]
fields = ["concentration", "velocity", "pressure"]
figures = true
"#;

fn parse(text: &str) -> Result<Case, CaseError> {
    Case::parse(text, Path::new("case.toml"))
}

/// Replace exactly one occurrence of `from` in the base case.
fn edit(from: &str, to: &str) -> String {
    assert_eq!(BASE.matches(from).count(), 1, "test bug: {from:?} must occur once in BASE");
    BASE.replacen(from, to, 1)
}

/// Line (1-based) of the first line of `text` that contains `needle`.
fn line_containing(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .map(|i| i + 1)
        .unwrap_or_else(|| panic!("{needle:?} not in text"))
}

/// Parse `text`, expect an error whose key is `key`, whose line is that of `line_of`, and whose message holds
/// every fragment.
fn expect_error(text: &str, key: &str, line_of: Option<&str>, fragments: &[&str]) {
    let error = match parse(text) {
        Ok(_) => panic!("expected an error about {key}, but the case was accepted"),
        Err(e) => e,
    };
    let message = error.to_string();
    assert_eq!(error.key(), Some(key), "key of: {message}");
    if let Some(needle) = line_of {
        let line = line_containing(text, needle);
        assert_eq!(error.line(), Some(line), "line of: {message}");
        assert!(message.starts_with(&format!("case.toml line {line}: ")), "{message}");
    }
    for fragment in fragments {
        assert!(message.contains(fragment), "expected {fragment:?} in:\n  {message}");
    }
    assert!(!message.contains('\n'), "one line: {message}");
}

#[test]
fn base_case_is_valid_and_in_si() {
    let case = parse(BASE).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(case.title, "test chamber");
    assert_eq!(case.chamber_size, [96e-6, 48e-6, 40e-6]);
    assert_eq!(case.grid.shape, [48, 24, 20]);
    assert_eq!(case.grid.spacing, 2e-6);
    assert_eq!(case.grid.origin, [0.0; 3]);
    assert_eq!(case.flow.mean_velocity, 2e-6);
    assert_eq!(case.flow.medium, MediumModel::Darcy { viscosity: 1e-3, permeability: 1e-13 });
    assert_eq!(case.boundaries.faces[2], [ChamberFace::Symmetry; 2]);
    assert_eq!(case.ligand.diffusivity, 1e-10);
    assert_eq!(case.ligand.uptake, SurfaceUptake::FirstOrder { rate_constant: 1e-6 });
    assert_eq!(case.cell_radius, 8e-6);
    assert_eq!(case.secretion_rate, 1.0);
    assert_eq!(case.layout_kind, LayoutKind::Lattice);
    assert_eq!(case.layout.cells.len(), 8);
    assert_eq!(case.solve.tolerance, 1e-8);
    assert_eq!(case.solve.max_iterations, 300);
    assert_eq!(case.sensing.integration_time, 3600.0);
    assert_eq!(case.output.fields, OutputField::ALL.to_vec());
    assert!(case.output.figures);
    assert_eq!(case.output.storage, crate::io::FieldStorage::default());
    assert!(case.warnings.is_empty(), "{:?}", case.warnings);
    // SHA-256 of the text bytes.
    assert_eq!(case.sha256, super::sha256_hex(BASE.as_bytes()));
}

#[test]
fn defaults_apply_when_sections_are_omitted() {
    let text = BASE
        .replace("[solve]\nmode = \"steady\"\ntolerance = 1e-8\n", "")
        .replace("[sensing]\nintegration_time = \"1 h\"\n", "")
        .replace("[output]\nfields = [\"concentration\", \"velocity\", \"pressure\"]\nfigures = true\n", "")
        .replace("title = \"test chamber\"\n", "")
        .replace("decay_rate = \"0 /s\"\ninlet_concentration = 0.0\n", "")
        .replace("uptake = { model = \"first_order\", rate_constant = \"1e-6 m/s\" }\n", "")
        .replace("[boundaries]\nx_min = \"inlet\"\nx_max = \"outlet\"\ny_min = \"wall\"\ny_max = \"wall\"\nz_min = \"symmetry\"\nz_max = \"symmetry\"\n", "");
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}\n{text}"));
    assert_eq!(case.title, "case");
    assert_eq!(case.solve.tolerance, 1e-8);
    assert_eq!(case.sensing.integration_time, 3600.0);
    assert_eq!(case.output.fields.len(), 3);
    assert_eq!(case.ligand.decay_rate, 0.0);
    assert_eq!(case.ligand.uptake, SurfaceUptake::None);
    assert_eq!(
        case.boundaries.faces,
        [[ChamberFace::Inlet, ChamberFace::Outlet], [ChamberFace::Wall; 2], [ChamberFace::Wall; 2]]
    );
}

#[test]
fn wrong_dimension_names_key_expected_and_given() {
    let text = edit("radius = \"8 um\"", "radius = \"8 s\"");
    expect_error(
        &text,
        "cells.radius",
        Some("radius = \"8 s\""),
        &["cells.radius = \"8 s\" is a time, expected a length"],
    );
    let text = edit("diffusivity = \"1e-10 m^2/s\"", "diffusivity = \"1e-10 m/s\"");
    expect_error(
        &text,
        "ligand.diffusivity",
        Some("diffusivity ="),
        &["is a velocity, expected a diffusivity"],
    );
}

#[test]
fn unknown_unit_names_key_and_unit() {
    let text = edit("mean_velocity = \"2 um/s\"", "mean_velocity = \"2 furlongs/s\"");
    expect_error(
        &text,
        "flow.mean_velocity",
        Some("mean_velocity"),
        &["flow.mean_velocity", "unknown unit \"furlongs\""],
    );
}

#[test]
fn unknown_keys_are_refused_with_their_path() {
    let text = edit("figures = true", "figures = true\ncolour = \"red\"");
    expect_error(&text, "output.colour", Some("colour"), &["output.colour is not a known key"]);
    let text = edit("[flow]", "[flows]");
    expect_error(&text, "flows", Some("[flows]"), &["flows is not a known key"]);
}

#[test]
fn unknown_key_in_an_inline_table_and_a_list_entry() {
    let text = edit(
        "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\", \"24 um\"] }",
        "layout = { kind = \"lattice\", spacings = 3 }",
    );
    expect_error(&text, "cells.layout.spacings", Some("spacings"), &["is not a known key"]);
    let text = edit(
        "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\", \"24 um\"] }",
        "[[cells.list]]\nx = \"20 um\"\ny = \"20 um\"\nz = \"20 um\"\n[[cells.list]]\nx = \"60 um\"\ny = \"20 um\"\nzz = \"20 um\"",
    );
    expect_error(&text, "cells.list[1].zz", Some("zz ="), &["is not a known key"]);
}

#[test]
fn wrong_toml_type_names_the_key() {
    let text = edit("radius = \"8 um\"", "radius = true");
    expect_error(
        &text,
        "cells.radius",
        Some("radius = true"),
        &["cells.radius", "a number or a string with a unit"],
    );
}

#[test]
fn syntax_errors_give_a_line() {
    let text = edit("[flow]", "[flow");
    let error = parse(&text).expect_err("refused");
    assert_eq!(error.line(), Some(line_containing(&text, "[flow")), "{error}");
}

#[test]
fn non_finite_values_are_refused() {
    let text = edit("viscosity = \"1e-3 Pa s\"", "viscosity = nan");
    expect_error(&text, "medium.viscosity", Some("viscosity = nan"), &["not a finite number"]);
    let text = edit("viscosity = \"1e-3 Pa s\"", "viscosity = \"1e999 Pa s\"");
    expect_error(&text, "medium.viscosity", Some("viscosity ="), &["not a finite number"]);
}

#[test]
fn chamber_size_needs_three_positive_lengths() {
    let text = edit("size = [\"96 um\", \"48 um\", \"40 um\"]", "size = [\"96 um\", \"48 um\"]");
    expect_error(&text, "chamber.size", Some("size = "), &["needs three lengths"]);
    let text = edit("size = [\"96 um\", \"48 um\", \"40 um\"]", "size = [\"96 um\", \"-48 um\", \"40 um\"]");
    expect_error(&text, "chamber.size[1]", Some("size = "), &["must be positive"]);
}

#[test]
fn grid_needs_exactly_one_of_spacing_and_cells_per_radius() {
    let text = edit("spacing = \"2 um\"", "spacing = \"2 um\"\ncells_per_radius = 4");
    expect_error(&text, "grid.cells_per_radius", Some("cells_per_radius"), &["give only one"]);
    let text = edit("spacing = \"2 um\"", "");
    expect_error(&text, "grid.spacing", Some("[grid]"), &["grid.spacing is missing"]);
    let text = edit("spacing = \"2 um\"", "cells_per_radius = 4");
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(case.grid.spacing, 2e-6);
    let text = edit("spacing = \"2 um\"", "spacing = \"0 um\"");
    expect_error(&text, "grid.spacing", Some("spacing = \"0 um\""), &["must be positive"]);
}

#[test]
fn chamber_must_be_whole_grid_cells_with_a_suggestion() {
    let text = edit("spacing = \"2 um\"", "spacing = \"2.1 um\"");
    // Fits all three axes (96, 48, 40 um): 96/n with 48/h and 40/h whole → n a multiple of 12; n = 48 → 2 um.
    expect_error(
        &text,
        "grid.spacing",
        Some("spacing = \"2.1 um\""),
        &[
            "does not divide the chamber into whole grid cells",
            "nearest spacing that fits all three axes is 2 um",
        ],
    );
    let text = edit("spacing = \"2 um\"", "cells_per_radius = 3.9");
    expect_error(
        &text,
        "grid.cells_per_radius",
        Some("cells_per_radius"),
        &["nearest grid.cells_per_radius"],
    );
}

#[test]
fn brinkman_and_stokes_models_are_accepted_and_unknown_models_refused() {
    for model in ["brinkman", "stokes"] {
        let text = edit("model = \"darcy\"", &format!("model = \"{model}\""));
        let case = parse(&text).unwrap_or_else(|e| panic!("{model}: {e}"));
        match (model, case.flow.medium) {
            ("brinkman", MediumModel::Brinkman { .. }) | ("stokes", MediumModel::Stokes { .. }) => {}
            (m, other) => panic!("{m} parsed as {other:?}"),
        }
    }
    let text = edit("model = \"darcy\"", "model = \"oseen\"");
    expect_error(&text, "medium.model", Some("model = "), &["is not a flow model"]);
}

#[test]
fn medium_coefficients_must_be_positive() {
    let text = edit("permeability = \"1e-13 m^2\"", "permeability = 0");
    expect_error(&text, "medium.permeability", Some("permeability = 0"), &["must be positive"]);
    let text = edit("permeability = \"1e-13 m^2\"", "");
    expect_error(&text, "medium.permeability", Some("[medium]"), &["medium.permeability is missing"]);
    let text = edit("viscosity = \"1e-3 Pa s\"", "viscosity = \"-1 mPa s\"");
    expect_error(&text, "medium.viscosity", Some("viscosity ="), &["must be positive"]);
}

#[test]
fn effective_viscosity_is_checked_and_noted_for_darcy() {
    let text =
        edit("permeability = \"1e-13 m^2\"", "permeability = \"1e-13 m^2\"\neffective_viscosity = \"2 s\"");
    expect_error(
        &text,
        "medium.effective_viscosity",
        Some("effective_viscosity"),
        &["is a time, expected a viscosity"],
    );
    let text = edit(
        "permeability = \"1e-13 m^2\"",
        "permeability = \"1e-13 m^2\"\neffective_viscosity = \"2 mPa s\"",
    );
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert!(case.warnings.iter().any(|w| w.contains("effective_viscosity is not used by the darcy model")));
}

#[test]
fn mean_velocity_must_not_be_negative() {
    let text = edit("mean_velocity = \"2 um/s\"", "mean_velocity = \"-2 um/s\"");
    expect_error(&text, "flow.mean_velocity", Some("mean_velocity"), &["must not be negative"]);
}

#[test]
fn boundary_rules() {
    let text = edit("y_min = \"wall\"", "y_min = \"open\"");
    expect_error(&text, "boundaries.y_min", Some("y_min"), &["is not a boundary type"]);
    let text = edit("y_min = \"wall\"", "y_min = \"periodic\"");
    expect_error(&text, "boundaries.y_min", Some("y_min"), &["periodic faces come in pairs"]);
    let text = edit("y_max = \"wall\"", "y_max = \"inlet\"");
    expect_error(
        &text,
        "boundaries.y_max",
        Some("y_max"),
        &["only allowed on x_min", "x is the mean-flow direction"],
    );
    let text = edit("z_min = \"symmetry\"", "z_min = \"outlet\"");
    expect_error(&text, "boundaries.z_min", Some("z_min"), &["only allowed on x_max"]);
    let text = edit("x_max = \"outlet\"", "x_max = \"wall\"");
    expect_error(&text, "boundaries.x_max", Some("x_max"), &["needs an outlet or far_field opposite"]);
    let text =
        edit("x_min = \"inlet\"", "x_min = \"wall\"").replace("x_max = \"outlet\"", "x_max = \"symmetry\"");
    expect_error(&text, "boundaries", Some("[boundaries]"), &["no way for the flow to leave"]);
    let text = edit("x_min = \"inlet\"", "x_min = \"wall\"");
    expect_error(&text, "boundaries.x_min", Some("x_min"), &["enters through x_min"]);
    // Periodic pairs are accepted, and a closed box is fine without flow.
    let text =
        edit("y_min = \"wall\"", "y_min = \"periodic\"").replace("y_max = \"wall\"", "y_max = \"periodic\"");
    assert_eq!(parse(&text).map(|c| c.boundaries.periodic_axes()).ok(), Some([false, true, false]));
    let text = edit("x_min = \"inlet\"", "x_min = \"wall\"")
        .replace("x_max = \"outlet\"", "x_max = \"wall\"")
        .replace("mean_velocity = \"2 um/s\"", "mean_velocity = 0");
    assert!(parse(&text).is_ok());
}

#[test]
fn far_field_sources_key() {
    use solver::problem::FarFieldSources;
    let sources = |text: &str| parse(text).map(|c| c.boundaries.far_field_sources).ok();
    assert_eq!(sources(BASE), Some(FarFieldSources::Cells));
    let text = edit("z_max = \"symmetry\"", "z_max = \"symmetry\"\nfar_field_sources = \"centroid\"");
    assert_eq!(sources(&text), Some(FarFieldSources::Centroid));
    let text = edit("z_max = \"symmetry\"", "z_max = \"symmetry\"\nfar_field_sources = \"cells\"");
    assert_eq!(sources(&text), Some(FarFieldSources::Cells));
    let text = edit("z_max = \"symmetry\"", "z_max = \"symmetry\"\nfar_field_sources = \"nearest\"");
    expect_error(
        &text,
        "boundaries.far_field_sources",
        Some("far_field_sources"),
        &["\"nearest\" is not known", "\"cells\"", "\"centroid\""],
    );
}

#[test]
fn ligand_rules() {
    let text = edit("diffusivity = \"1e-10 m^2/s\"", "diffusivity = 0");
    expect_error(&text, "ligand.diffusivity", Some("diffusivity = 0"), &["must be positive"]);
    let text = edit("decay_rate = \"0 /s\"", "decay_rate = \"-1 /h\"");
    expect_error(&text, "ligand.decay_rate", Some("decay_rate"), &["must not be negative"]);
    let text = edit("inlet_concentration = 0.0", "inlet_concentration = \"2 um\"");
    expect_error(
        &text,
        "ligand.inlet_concentration",
        Some("inlet_concentration"),
        &["is a length, expected a concentration"],
    );
    let text = edit("inlet_concentration = 0.0", "inlet_concentration = \"1 nM\"");
    let c = parse(&text).map(|c| c.ligand.inlet_concentration).unwrap_or_else(|e| panic!("{e}"));
    assert!((c - 6.022_140_76e17).abs() < 1e3, "{c}");
}

#[test]
fn cell_rules() {
    let text = edit("radius = \"8 um\"", "radius = 0");
    expect_error(&text, "cells.radius", Some("radius = 0"), &["must be positive"]);
    let text = edit("secretion_rate = \"3600 /h\"", "secretion_rate = \"-1 /h\"");
    expect_error(&text, "cells.secretion_rate", Some("secretion_rate"), &["must not be negative"]);
    let text = edit("secretion_rate = \"3600 /h\"", "secretion_rate = \"3600 h\"");
    expect_error(&text, "cells.secretion_rate", Some("secretion_rate"), &["is a time, expected a rate"]);
}

#[test]
fn uptake_rules() {
    let line = "uptake = { model = \"first_order\", rate_constant = \"1e-6 m/s\" }";
    let text = edit(line, "uptake = { model = \"first_order\" }");
    expect_error(&text, "cells.uptake.rate_constant", Some("uptake"), &["is missing"]);
    let text = edit(line, "uptake = { model = \"first_order\", rate_constant = 0 }");
    expect_error(&text, "cells.uptake.rate_constant", Some("uptake"), &["must be positive"]);
    let text = edit(line, "uptake = { model = \"absorbing\", rate_constant = 1 }");
    expect_error(
        &text,
        "cells.uptake.rate_constant",
        Some("uptake"),
        &["only used by model = \"first_order\""],
    );
    let text = edit(line, "uptake = { model = \"sticky\" }");
    expect_error(&text, "cells.uptake.model", Some("uptake"), &["is not an uptake model"]);
    let text = edit(line, "uptake = { model = \"absorbing\" }");
    assert_eq!(parse(&text).map(|c| c.ligand.uptake).ok(), Some(SurfaceUptake::Absorbing));
}

const LATTICE: &str = "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\", \"24 um\"] }";

#[test]
fn random_layout_rules() {
    let text = edit(LATTICE, "layout = { kind = \"random\", count = 5, min_gap = \"2 um\", seed = 7 }");
    let a = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(a.layout.cells.len(), 5);
    assert_eq!(a.layout_kind, LayoutKind::Random(PackingMethod::SequentialAddition));
    let b = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(a.layout, b.layout, "same seed, same layout");
    let text = edit(LATTICE, "layout = { kind = \"random\", count = 5, volume_fraction = 0.05 }");
    expect_error(&text, "cells.layout.volume_fraction", Some("layout"), &["give only one"]);
    let text = edit(LATTICE, "layout = { kind = \"random\", seed = 3 }");
    expect_error(&text, "cells.layout.count", Some("layout"), &["count = N or volume_fraction"]);
    let text = edit(LATTICE, "layout = { kind = \"random\", count = 2.5 }");
    expect_error(&text, "cells.layout.count", Some("layout"), &["whole number"]);
    let text = edit(LATTICE, "layout = { kind = \"random\", volume_fraction = 1.2 }");
    expect_error(&text, "cells.layout.volume_fraction", Some("layout"), &["below 1"]);
    let text = edit(LATTICE, "layout = { kind = \"random\", count = 3, path = \"x.csv\" }");
    expect_error(&text, "cells.layout.path", Some("layout"), &["not used by kind = \"random\""]);
    let text = edit(LATTICE, "layout = { kind = \"random\", count = 3, min_gap = \"2 s\" }");
    expect_error(&text, "cells.layout.min_gap", Some("layout"), &["is a time, expected a length"]);
    // Too many cells for the chamber: the mesh crate's error, reported under the key and line.
    let text = edit(LATTICE, "layout = { kind = \"random\", count = 400 }");
    let error = parse(&text).expect_err("cannot pack 400 cells of 8 um in 96 x 48 x 40 um");
    assert!(matches!(error, CaseError::Layout { .. }), "{error}");
    // Beyond random close packing: refused at once, blamed on the key that sets the count.
    assert_eq!(error.key(), Some("cells.layout.count"));
    assert_eq!(error.line(), Some(line_containing(&text, "layout = ")));
}

#[test]
fn lattice_and_kind_rules() {
    let text = edit(LATTICE, "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\"] }");
    expect_error(&text, "cells.layout.spacing", Some("layout"), &["three lengths"]);
    let text = edit(LATTICE, "layout = { kind = \"lattice\" }");
    expect_error(&text, "cells.layout.spacing", Some("layout"), &["is missing"]);
    let text = edit(
        LATTICE,
        "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\", \"24 um\"], seed = 2 }",
    );
    expect_error(&text, "cells.layout.seed", Some("layout"), &["not used by kind = \"lattice\""]);
    let text = edit(LATTICE, "layout = { kind = \"hexagonal\" }");
    expect_error(&text, "cells.layout.kind", Some("layout"), &["is not a layout kind"]);
    let text = edit(LATTICE, "");
    expect_error(&text, "cells.layout", Some("[cells]"), &["list = [] for no cells"]);
    let text = edit(LATTICE, &format!("{LATTICE}\nlist = []"));
    expect_error(&text, "cells.list", Some("list = []"), &["give only one"]);
}

#[test]
fn explicit_list_rules() {
    let text = edit(LATTICE, "list = []");
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert!(case.layout.cells.is_empty());
    assert_eq!(case.layout_kind, LayoutKind::List);
    let text = edit(
        LATTICE,
        "[[cells.list]]\nx = \"20 um\"\ny = \"20 um\"\nz = \"20 um\"\n\n[[cells.list]]\nx = \"60 um\"\ny = \"24 um\"\nz = \"20 um\"\nradius = \"10 um\"\nsecretion_rate = \"7200 molecules/h\"",
    );
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(case.layout.cells.len(), 2);
    assert_eq!(case.layout.cells[0].radius, 8e-6);
    assert_eq!(case.layout.cells[1].radius, 1e-5);
    assert_eq!(case.layout.cells[1].secretion_rate, 2.0);
    assert_eq!(case.layout.cells[1].centre, [6e-5, 2.4e-5, 2e-5]);
    // Missing coordinate.
    let bad = text.replacen("z = \"20 um\"\n", "", 1);
    expect_error(&bad, "cells.list[0].z", Some("[[cells.list]]"), &["is missing"]);
    // Overlapping cells: refused with the mesh crate's reason.
    let bad = text.replace("x = \"60 um\"", "x = \"30 um\"");
    let error = parse(&bad).expect_err("overlap");
    assert_eq!(error.key(), Some("cells.list"));
    let chain =
        format!("{error}: {}", std::error::Error::source(&error).map(|s| s.to_string()).unwrap_or_default());
    assert!(chain.contains("cells 0 and 1 overlap"), "{chain}");
    // A cell crossing a wall.
    let bad = text.replace("y = \"24 um\"", "y = \"44 um\"");
    let error = parse(&bad).expect_err("crosses y_max");
    let source = std::error::Error::source(&error).map(|s| s.to_string()).unwrap_or_default();
    assert!(source.contains("y_max"), "{source}");
}

#[test]
fn coarse_cells_are_refused_or_warned() {
    // 8 um on a 4 um grid is 2 spacings per radius: refused.
    let text = edit("spacing = \"2 um\"", "spacing = \"4 um\"");
    let error = parse(&text).expect_err("too coarse");
    assert!(matches!(error, CaseError::Layout { .. }), "{error}");
    // 8 um on 2.4 um (3.33 spacings): accepted with a warning. 96/2.4 = 40, 48/2.4 = 20, 40/2.4 is not whole,
    // so the chamber height becomes 48 um.
    let text = edit("spacing = \"2 um\"", "spacing = \"2.4 um\"").replace("\"40 um\"]\n", "\"48 um\"]\n");
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert!(!case.warnings.is_empty());
    assert!(case.warnings[0].contains("under 4"), "{:?}", case.warnings);
}

#[test]
fn solve_rules() {
    let text = edit("mode = \"steady\"", "mode = \"transient\"");
    expect_error(&text, "solve.end_time", Some("[solve]"), &["is missing"]);
    let text = edit("tolerance = 1e-8", "tolerance = 1e-8\nend_time = \"6 h\"");
    expect_error(&text, "solve.end_time", Some("end_time"), &["only used when solve.mode = \"transient\""]);
    let text = edit("tolerance = 1e-8", "tolerance = 1e-8\ntime_step = \"60 um\"");
    expect_error(&text, "solve.time_step", Some("time_step"), &["is a length, expected a time"]);
    let text = edit("tolerance = 1e-8", "tolerance = 1e-8\nadaptive = true");
    expect_error(&text, "solve.adaptive", Some("adaptive"), &["only used when solve.mode = \"transient\""]);
    // Transient keys accepted in transient mode, and their rules.
    let transient =
        edit("mode = \"steady\"", "mode = \"transient\"\nend_time = \"2 h\"\ntime_step = \"60 s\"");
    let case = parse(&transient.replace("tolerance = 1e-8", "tolerance = 1e-8\noutput_every = \"30 min\""))
        .unwrap_or_else(|e| panic!("{e}"));
    let t = case.solve.transient.expect("transient params");
    assert_eq!((t.end_time, t.time_step, t.adaptive), (7200.0, 60.0, None));
    assert_eq!((t.output_times, t.longest_output_gap), (vec![1800.0, 3600.0, 5400.0, 7200.0], 1800.0));
    let text = transient.replace("tolerance = 1e-8", "tolerance = 1e-8\noutput_every = \"90 s\"");
    expect_error(&text, "solve.output_every", Some("output_every"), &["whole multiple of solve.time_step"]);
    // Output times as a list or spaced in log time; never beside output_every.
    let with = |line: &str| transient.replace("tolerance = 1e-8", &format!("tolerance = 1e-8\n{line}"));
    let t = parse(&with("output_times = [\"1 min\", 600, \"1 h\"]")).unwrap_or_else(|e| panic!("{e}"));
    let t = t.solve.transient.expect("transient");
    assert_eq!((t.output_times, t.longest_output_gap), (vec![60.0, 600.0, 3600.0], 3600.0));
    let t = parse(&with("output_times = { from = \"1 min\", to = \"100 min\", count = 3, scale = \"log\" }"))
        .unwrap_or_else(|e| panic!("{e}"));
    let times = t.solve.transient.expect("transient").output_times;
    assert_eq!(times.len(), 3);
    assert!((times[0], times[2]) == (60.0, 6000.0) && (times[1] - 600.0).abs() < 1e-9, "{times:?}");
    let both = "output_every = \"30 min\"\noutput_times = [60]";
    expect_error(&with(both), "solve.output_times", Some("output_times"), &["not both"]);
    expect_error(
        &with("output_times = [600, 60]"),
        "solve.output_times",
        Some("output_times"),
        &["must increase"],
    );
    expect_error(
        &with("output_times = [\"3 h\"]"),
        "solve.output_times",
        Some("output_times"),
        &["after solve.end_time"],
    );
    let bad_scale = "output_times = { from = 1, to = 9, count = 3, scale = \"cubic\" }";
    expect_error(&with(bad_scale), "solve.output_times", Some("output_times"), &["\"linear\" or \"log\""]);
    let no_count = "output_times = { from = 1, to = 9 }";
    expect_error(&with(no_count), "solve.output_times", Some("output_times"), &["count is missing"]);
    let text = transient.replace("tolerance = 1e-8", "tolerance = 1e-8\nerror_tolerance = 1e-3");
    expect_error(&text, "solve.error_tolerance", Some("error_tolerance"), &["only used with solve.adaptive"]);
    let text = edit("tolerance = 1e-8", "tolerance = 0.1");
    expect_error(&text, "solve.tolerance", Some("tolerance"), &["(0, 1e-2]"]);
    let text = edit("tolerance = 1e-8", "tolerance = 0");
    expect_error(&text, "solve.tolerance", Some("tolerance"), &["must be positive"]);
    let text = edit("tolerance = 1e-8", "tolerance = 1e-6\nmax_iterations = 50");
    let case = parse(&text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!((case.solve.tolerance, case.solve.max_iterations), (1e-6, 50));
}

#[test]
fn sensing_and_output_rules() {
    let text = edit("integration_time = \"1 h\"", "integration_time = 0");
    expect_error(&text, "sensing.integration_time", Some("integration_time"), &["must be positive"]);
    let text = edit("integration_time = \"1 h\"", "integration_time = \"1 um\"");
    expect_error(&text, "sensing.integration_time", Some("integration_time"), &["expected a time"]);
    let text = edit(
        "fields = [\"concentration\", \"velocity\", \"pressure\"]",
        "fields = [\"concentration\", \"vorticity\"]",
    );
    expect_error(&text, "output.fields[1]", Some("fields"), &["is not an output field"]);
    let text = edit(
        "fields = [\"concentration\", \"velocity\", \"pressure\"]",
        "fields = [\"pressure\", \"pressure\"]",
    );
    expect_error(&text, "output.fields[1]", Some("fields"), &["listed twice"]);
    let text = edit("figures = true", "figures = \"yes\"");
    expect_error(&text, "output.figures", Some("figures"), &["output.figures"]);
    let text = edit("figures = true", "figures = true\nprecision = \"half\"");
    expect_error(
        &text,
        "output.precision",
        Some("precision"),
        &["\"half\" is not a precision", "\"single\""],
    );
    let text = edit("figures = true", "figures = true\ncompression = 10");
    expect_error(&text, "output.compression", Some("compression"), &["0 (none) to 9"]);
    let text = edit("figures = true", "figures = true\ncompression = 1.5");
    expect_error(&text, "output.compression", Some("compression"), &["whole number"]);
    let text = edit("figures = true", "figures = true\nprecision = \"single\"\ncompression = 0");
    let storage = parse(&text).unwrap_or_else(|e| panic!("{e}")).output.storage;
    assert_eq!(storage, crate::io::FieldStorage { precision: crate::io::Precision::Single, compression: 0 });
}

#[test]
fn layout_file_is_relative_to_the_case_folder() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("cells.csv"), "x,y,z\n2e-5,2e-5,2e-5\n6e-5,2.4e-5,2e-5\n").expect("write");
    let text = edit(LATTICE, "layout = { kind = \"file\", path = \"cells.csv\" }");
    let case_path = dir.path().join("case.toml");
    std::fs::write(&case_path, &text).expect("write");
    let case = Case::load(&case_path).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(case.layout.cells.len(), 2);
    assert_eq!(case.layout_kind, LayoutKind::File);
    assert_eq!(case.sha256, super::sha256_hex(text.as_bytes()));
    let text = edit(LATTICE, "layout = { kind = \"file\", path = \"missing.csv\" }");
    std::fs::write(&case_path, &text).expect("write");
    let error = Case::load(&case_path).expect_err("missing file");
    assert_eq!(error.key(), Some("cells.layout.path"));
    assert_eq!(error.line(), Some(line_containing(&text, "missing.csv")));
}

#[test]
fn sensing_statistics_keys_default_and_refuse_bad_values() {
    let case = parse(BASE).unwrap_or_else(|e| panic!("{e}"));
    let s = &case.sensing;
    assert_eq!((s.readable_error, s.position_bins, s.statistics_margin), (1.0, 8, 0.0));
    let set = |keys: &str| edit("integration_time = \"1 h\"", &format!("integration_time = \"1 h\"\n{keys}"));
    let case = parse(&set("readable_error = 0.5\nposition_bins = 3\nstatistics_margin = \"20 um\""))
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!((case.sensing.readable_error, case.sensing.position_bins), (0.5, 3));
    assert!((case.sensing.statistics_margin - 2e-5).abs() < 1e-20);
    expect_error(
        &set("readable_error = 0"),
        "sensing.readable_error",
        Some("readable_error"),
        &["must be positive"],
    );
    expect_error(
        &set("position_bins = 0"),
        "sensing.position_bins",
        Some("position_bins"),
        &["whole number"],
    );
    expect_error(
        &set("position_bins = 2.5"),
        "sensing.position_bins",
        Some("position_bins"),
        &["whole number"],
    );
    expect_error(
        &set("position_bins = 5000"),
        "sensing.position_bins",
        Some("position_bins"),
        &["more than"],
    );
    expect_error(
        &set("statistics_margin = \"1 m\""),
        "sensing.statistics_margin",
        Some("statistics_margin"),
        &["leaves no part of the chamber"],
    );
    expect_error(
        &set("statistics_margin = \"1 s\""),
        "sensing.statistics_margin",
        Some("statistics_margin"),
        &["expected a length"],
    );
}

#[test]
fn a_transient_run_splits_only_the_cells_asked_for() {
    use solver::post::decompose::DecomposeSelection;
    let transient =
        edit("mode = \"steady\"", "mode = \"transient\"\nend_time = \"2 h\"\ntime_step = \"60 s\"");
    let quiet = parse(&transient).expect("transient case");
    assert_eq!(
        quiet.sensing.decompose,
        DecomposeSelection::None,
        "a transient case splits nothing by default"
    );
    assert!(!quiet.warnings.iter().any(|w| w.contains("sensing.decompose")), "{:?}", quiet.warnings);
    let asked = parse(
        &transient.replace("integration_time = \"1 h\"", "integration_time = \"1 h\"\ndecompose = \"all\""),
    )
    .expect("transient case with decompose");
    assert_eq!(asked.sensing.decompose, DecomposeSelection::All);
    assert!(!asked.warnings.iter().any(|w| w.contains("sensing.decompose")), "{:?}", asked.warnings);
}
