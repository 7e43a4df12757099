//! The README's table of case-file keys stays true: every key the case reader knows (the fields of `raw.rs`) has
//! a row, and every default written there as a TOML value gives the same validated case as leaving the key out.

use std::path::Path;

use super::Case;

const README: &str = include_str!("../../README.md");
const RAW: &str = include_str!("raw.rs");

const STEADY: &str = r#"
[chamber]
size = ["96 um", "48 um", "48 um"]
[grid]
spacing = "2 um"
[medium]
model = "darcy"
viscosity = "1e-3 Pa s"
permeability = "1e-13 m^2"
[flow]
mean_velocity = "1 um/s"
[ligand]
diffusivity = "1e-10 m^2/s"
[cells]
radius = "8 um"
secretion_rate = "2000 /h"
layout = { kind = "random", count = 3 }
"#;

const TRANSIENT: &str = "[solve]\nmode = \"transient\"\nend_time = \"1 h\"\ntime_step = \"10 min\"\n";

/// The rows of the table: (keys, default cell).
fn rows() -> Vec<(Vec<String>, String)> {
    let start = README.find("**Every key and its default.**").expect("the README has the table");
    let mut rows = Vec::new();
    for line in README[start..].lines().skip_while(|l| !l.starts_with('|')).take_while(|l| l.starts_with('|'))
    {
        let cells: Vec<&str> = line.split(" | ").collect();
        let first = cells[0].trim_start_matches("| ");
        if !first.starts_with('`') {
            continue;
        }
        let mut keys: Vec<String> = Vec::new();
        for part in first.split(", ") {
            let key = part.trim_matches('`');
            match (key.strip_prefix('.'), keys.first()) {
                (Some(leaf), Some(full)) => {
                    let parent = full.rsplit_once('.').map_or("", |p| p.0);
                    keys.push(format!("{parent}.{leaf}"));
                }
                _ => keys.push(key.to_string()),
            }
        }
        rows.push((keys, cells[1].trim().to_string()));
    }
    rows
}

/// Every key of the case reader, by its dotted path (`cells.list[].x` for the entries of the cell list).
fn reader_keys() -> Vec<String> {
    let section = |name: &str| match name {
        "RawCase" => Some(""),
        "RawChamber" => Some("chamber."),
        "RawGrid" => Some("grid."),
        "RawMedium" => Some("medium."),
        "RawFlow" => Some("flow."),
        "RawBoundaries" => Some("boundaries."),
        "RawLigand" => Some("ligand."),
        "RawCells" => Some("cells."),
        "RawUptake" => Some("cells.uptake."),
        "RawLayout" => Some("cells.layout."),
        "RawCellEntry" => Some("cells.list[]."),
        "RawSolve" => Some("solve."),
        "RawSensing" => Some("sensing."),
        "RawOutput" => Some("output."),
        _ => None,
    };
    let mut keys = Vec::new();
    let mut prefix: Option<&str> = None;
    for line in RAW.lines() {
        if let Some(name) = line.strip_prefix("pub struct ").and_then(|l| l.split_whitespace().next()) {
            prefix = section(name);
            assert!(
                prefix.is_some() || name == "RawNumber",
                "raw.rs has a new table {name}: give it a section here"
            );
        } else if line == "}" {
            prefix = None;
        } else if let (Some(p), Some(field)) = (prefix, line.trim().strip_prefix("pub ")) {
            let (name, ty) = field.split_once(": ").expect("a field");
            // The sections of the top level are tables, not keys.
            if p.is_empty() && ty.contains("Spanned<Raw") {
                continue;
            }
            keys.push(format!("{p}{name}"));
        }
    }
    keys
}

fn has(table: &toml::Table, key: &str) -> bool {
    let (path, leaf) = key.rsplit_once('.').map_or(("", key), |p| p);
    let parent = path.split('.').filter(|p| !p.is_empty()).try_fold(table, |t, part| t.get(part)?.as_table());
    parent.is_some_and(|t| t.contains_key(leaf))
}

fn set(table: &mut toml::Table, key: &str, value: toml::Value) {
    let (path, leaf) = key.rsplit_once('.').map_or(("", key), |p| p);
    let mut here = table;
    for part in path.split('.').filter(|p| !p.is_empty()) {
        here = here
            .entry(part)
            .or_insert_with(|| toml::Value::Table(toml::Table::new()))
            .as_table_mut()
            .expect("a table");
    }
    here.insert(leaf.to_string(), value);
}

/// The case as validated, without the text it was read from.
fn validated(text: &str) -> Result<String, String> {
    let mut case = Case::parse(text, Path::new("case.toml")).map_err(|e| e.to_string())?;
    case.source_text.clear();
    case.sha256.clear();
    // A key given where it has no effect may be warned about; what counts is the case itself.
    case.warnings.clear();
    Ok(format!("{case:?}"))
}

#[test]
fn every_key_of_the_reader_has_a_row() {
    let listed: Vec<String> = rows().into_iter().flat_map(|(keys, _)| keys).collect();
    let missing: Vec<String> = reader_keys().into_iter().filter(|k| !listed.contains(k)).collect();
    assert!(missing.is_empty(), "keys without a row in the README's table: {missing:?}");
}

#[test]
fn written_defaults_are_the_readers_defaults() {
    let mut checked = 0;
    for (keys, default) in rows() {
        let Some(literal) = default.strip_prefix('`').and_then(|d| d.strip_suffix('`')) else { continue };
        let Ok(parsed) = toml::from_str::<toml::Table>(&format!("value = {literal}")) else { continue };
        let value = parsed["value"].clone();
        for key in keys.iter().filter(|k| !k.contains("[]")) {
            let mut compared = false;
            let transient = format!("{STEADY}{TRANSIENT}");
            for base in [STEADY.to_string(), transient.clone(), format!("{transient}adaptive = true\n")] {
                let mut table: toml::Table = toml::from_str(&base).expect("base case");
                if has(&table, key) {
                    continue; // the base sets this key itself
                }
                let without = validated(&base).expect("base case validates");
                set(&mut table, key, value.clone());
                let Ok(with) = validated(&toml::to_string(&table).expect("serialises")) else { continue };
                assert_eq!(with, without, "{key} = {literal} is not what leaving it out gives");
                compared = true;
            }
            assert!(compared, "{key} = {literal} is refused by steady and transient cases alike");
            checked += 1;
        }
    }
    assert!(checked >= 25, "only {checked} defaults checked");
}
