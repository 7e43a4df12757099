//! The outside readers: Python with h5py and numpy (and VTK's XDMF reader where importable), which share no code
//! with our writers. `scripts/setup` installs them; a test never installs anything.
//!
//! When they are required (`PLUMEFIELD_REQUIRE_PYTHON=1`, set by `scripts/test`, or a `CI` environment) and
//! missing, the test fails and says what is missing; otherwise it prints that it skipped the part.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// What the outside readers can do on this machine.
#[derive(Clone, Copy, Debug)]
pub struct Readers {
    /// VTK's `vtkXdmfReader` is importable (the XDMF part runs with it).
    pub vtk: bool,
}

fn python_succeeds(args: &[&str]) -> bool {
    Command::new("python3").args(args).output().map(|o| o.status.success()).unwrap_or(false)
}

/// Whether the environment requires the outside readers to run.
fn required() -> bool {
    std::env::var("PLUMEFIELD_REQUIRE_PYTHON").is_ok_and(|v| v == "1")
        || std::env::var("CI").is_ok_and(|v| !v.is_empty() && v != "0" && v != "false")
}

/// The outside readers, decided once per test binary; `None` (the caller skips its part) when Python or h5py is
/// missing and they are not required. Panics, naming what is missing, when they are required.
pub fn readers() -> Option<Readers> {
    static READERS: std::sync::OnceLock<Result<Readers, String>> = std::sync::OnceLock::new();
    match READERS.get_or_init(find) {
        Ok(readers) => Some(*readers),
        Err(missing) if required() => {
            panic!("the outside-reader check is required here but cannot run: {missing} (run scripts/setup)")
        }
        Err(missing) => {
            println!("SKIPPED the outside-reader part: {missing} (scripts/setup installs it)");
            None
        }
    }
}

fn find() -> Result<Readers, String> {
    if !python_succeeds(&["--version"]) {
        return Err("python3 is not available".into());
    }
    if !python_succeeds(&["-c", "import h5py, numpy"]) {
        return Err("python3 cannot import h5py and numpy".into());
    }
    let vtk = python_succeeds(&["-c", "import vtkmodules.vtkIOXdmf2"]);
    if !vtk {
        println!("note: python3 cannot import VTK; the XDMF part runs without VTK's reader");
    }
    Ok(Readers { vtk })
}

/// Writes the product's per-cell column registry (name and unit of each column, in file order) to
/// `dir/column_registry.json`, for a script's `--columns`: the outside readers check the files against the
/// registry itself, not a copy of it.
pub fn write_column_registry(dir: &Path) -> PathBuf {
    let registry: Vec<serde_json::Value> = plumefield::outputs::columns::CELL_COLUMNS
        .iter()
        .map(|c| serde_json::json!({ "name": c.name, "unit": c.unit }))
        .collect();
    let path = dir.join("column_registry.json");
    std::fs::write(&path, serde_json::to_vec(&registry).expect("a list of strings serialises"))
        .expect("write");
    path
}

/// `tests/python/<name>`.
pub fn script(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("python").join(name)
}

/// Runs `tests/python/<name> ARGS…` and echoes its output (shown when the test fails).
pub fn run_script(name: &str, args: &[&str]) -> Output {
    let mut cmd = Command::new("python3");
    // Parallel tests fork Python while holding HDF5 files open; the child inherits those descriptors and with
    // them HDF5's flock, so a reader in another test could find its file locked. Reading needs no lock.
    cmd.env("HDF5_USE_FILE_LOCKING", "FALSE");
    cmd.arg(script(name)).args(args);
    let out = cmd.output().expect("python3 ran a moment ago");
    println!("--- {name} {} ---", args.join(" "));
    println!("{}", String::from_utf8_lossy(&out.stdout));
    println!("{}", String::from_utf8_lossy(&out.stderr));
    out
}
