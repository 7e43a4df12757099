//! `summary.json`: the run's scalar results (iterations, mass balance, estimates, timing) for people and for
//! `plumefield collect`. The content is built by the caller; this file only fixes the form: pretty-printed,
//! newline-terminated, written atomically.

use std::path::Path;

use anyhow::Context;

use super::atomic::write_atomic;

/// Writes `summary` as pretty JSON to `path`, atomically. JSON has no non-finite numbers: `serde_json`
/// turns them into `null` when the value is built, so a caller that must keep ∞ should store a string.
pub fn write_summary_json(path: &Path, summary: &serde_json::Value) -> anyhow::Result<()> {
    let mut bytes = serde_json::to_vec_pretty(summary).context("cannot serialise the run summary")?;
    bytes.push(b'\n');
    write_atomic(path, &bytes).with_context(|| format!("cannot write {}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn round_trip_keeps_values_exactly() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("summary.json");
        let summary = json!({
            "version": "0.1.0",
            "grid": { "shape": [400, 200, 100], "spacing": 2e-6 },
            "mass_balance": { "secreted": 1.0 / 3.0, "relative_error": 3.2e-11 },
            "cells": { "count": 400, "volume_fraction": 0.05 },
            "not_finite": f64::INFINITY,
        });
        write_summary_json(&path, &summary).unwrap();
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(text.ends_with("}\n"));
        assert!(text.contains("\n  \"grid\": {"), "not pretty: {text}");
        let back: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(back, summary);
        assert_eq!(back["mass_balance"]["secreted"].as_f64().unwrap().to_bits(), (1.0f64 / 3.0).to_bits());
        assert!(back["not_finite"].is_null());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }
}
