//! What the end-to-end tests share, one module for every test binary: the small chamber of
//! `small_chamber.toml`, changed key by key with the sweep's own dotted-key setter (`chamber.size`,
//! `solve.mode`, `cells.uptake.rate_constant`, …); the outside readers in Python ([`python`]); the sweep
//! helpers ([`sweep`]).

// Each test binary uses a part of this module.
#![allow(dead_code)]

pub mod python;
pub mod sweep;

/// The small chamber's case text with `changes` applied: (dotted key, value as TOML text, e.g. `"\"4 um\""` or
/// `"[\"120 um\", \"60 um\", \"40 um\"]"`); a value of `""` removes the key.
pub fn small_chamber(changes: &[(&str, &str)]) -> String {
    let mut table: toml::Table =
        toml::from_str(include_str!("small_chamber.toml")).expect("small_chamber.toml parses");
    for (key, value) in changes {
        if value.is_empty() {
            remove_dotted(&mut table, key);
            continue;
        }
        let parsed: toml::Table = toml::from_str(&format!("value = {value}"))
            .unwrap_or_else(|e| panic!("the value of {key} is not TOML: {value}: {e}"));
        let value = parsed["value"].clone();
        plumefield::sweep::expand::set_dotted(&mut table, key, value)
            .unwrap_or_else(|e| panic!("cannot set {key}: {e}"));
    }
    toml::to_string(&table).expect("the changed chamber serialises")
}

fn remove_dotted(table: &mut toml::Table, key: &str) {
    let (path, last) = key.rsplit_once('.').map_or(("", key), |(p, l)| (p, l));
    let mut here = table;
    for part in path.split('.').filter(|p| !p.is_empty()) {
        here = match here.get_mut(part) {
            Some(toml::Value::Table(t)) => t,
            _ => panic!("cannot remove {key}: {part} is not a table"),
        };
    }
    here.remove(last).unwrap_or_else(|| panic!("cannot remove {key}: it is not in the small chamber"));
}
