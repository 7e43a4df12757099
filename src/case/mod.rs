//! Case file: units, raw TOML, validated case.
