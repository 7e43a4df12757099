//! `run` draws the four figures of DESIGN.md §6 into DIR/figures (unless `[output] figures = false`), and
//! `plumefield plot DIR` redraws them from the output folder alone.

use std::path::Path;
use std::process::Command;

mod common;

/// The small chamber with smaller cells, five of them, and figures on (`figures`), the split of `decompose`.
fn case_text(figures: bool, decompose: &str) -> String {
    common::small_chamber(&[
        ("chamber.size", r#"["96 um", "48 um", "32 um"]"#),
        ("flow.mean_velocity", r#""1 um/s""#),
        ("cells.radius", r#""6 um""#),
        ("cells.layout", r#"{ kind = "random", count = 5, min_gap = "2 um", seed = 5 }"#),
        ("sensing.decompose", decompose),
        ("output.figures", if figures { "true" } else { "false" }),
    ])
}

const FIGURES: [&str; 4] = [
    "concentration_slice.png",
    "anisotropy_map.png",
    "anisotropy_profile.png",
    "direction_error_histogram.png",
];

fn plumefield(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_plumefield")).args(args).output().expect("runs")
}

/// Width and height from the PNG header (IHDR follows the 8-byte signature).
fn png_size(path: &Path) -> (u32, u32) {
    let bytes = std::fs::read(path).unwrap();
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "{} is not a PNG", path.display());
    let be = |o: usize| u32::from_be_bytes([bytes[o], bytes[o + 1], bytes[o + 2], bytes[o + 3]]);
    (be(16), be(20))
}

#[test]
fn run_draws_figures_and_plot_redraws_them() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("case.toml");
    std::fs::write(&case, case_text(true, r#""none""#)).unwrap();
    let out = dir.path().join("out");
    let run = plumefield(&["run", case.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    let mut sizes = Vec::new();
    for name in FIGURES {
        let path = out.join("figures").join(name);
        let (w, h) = png_size(&path);
        assert!(w >= 600 && h >= 300, "{name}: {w}x{h}");
        sizes.push(std::fs::metadata(&path).unwrap().len());
    }
    // No temporary files left behind.
    let names: Vec<String> = std::fs::read_dir(out.join("figures"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 4, "{names:?}");
    assert!(!out.join("figures/approach_to_steady.png").exists(), "a steady run has no approach figure");

    std::fs::remove_dir_all(out.join("figures")).unwrap();
    let plot = plumefield(&["plot", out.to_str().unwrap()]);
    assert!(plot.status.success(), "{}", String::from_utf8_lossy(&plot.stderr));
    for (name, size) in FIGURES.iter().zip(sizes) {
        // Same data, same drawing code: the same bytes.
        assert_eq!(std::fs::metadata(out.join("figures").join(name)).unwrap().len(), size, "{name}");
    }

    // What can be checked without eyes, on every figure: no NaN plotted, ranges holding every finite value,
    // non-finite values stated, log axes where positive data span decades, legends clear of the data.
    let drawn = plumefield::figures::run_figures::draw_run_figures(&out).expect("figures");
    assert_eq!(drawn.len(), FIGURES.len());
    for (path, record) in &drawn {
        assert_eq!(record.check(), Ok(()), "{}", path.display());
        assert!(record.x.is_some() && record.y.is_some(), "{}", path.display());
    }

    let missing = plumefield(&["plot", dir.path().join("nothing").to_str().unwrap()]);
    assert_eq!(missing.status.code(), Some(2));
}

/// With the split of every cell, `run` also draws the own/neighbour signal figure, and it passes the checks.
#[test]
fn a_split_run_draws_own_against_neighbour_signal() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("case.toml");
    std::fs::write(&case, case_text(true, r#""all""#)).unwrap();
    let out = dir.path().join("out");
    let run = plumefield(&["run", case.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    let path = out.join("figures/self_and_neighbour_signal.png");
    let (w, h) = png_size(&path);
    assert!(w >= 600 && h >= 300, "{w}x{h}");
    let drawn = plumefield::figures::run_figures::draw_run_figures(&out).expect("figures");
    assert_eq!(drawn.len(), FIGURES.len() + 1);
    let (_, record) = drawn.iter().find(|(p, _)| p.ends_with("self_and_neighbour_signal.png")).unwrap();
    assert_eq!(record.check(), Ok(()));
    // Five cells, two parts each, plus each bin's means.
    assert!(record.points.len() >= 12, "{}", record.points.len());
    assert_eq!(record.not_drawn, 0);
}

#[test]
fn figures_false_draws_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("case.toml");
    std::fs::write(&case, case_text(false, r#""none""#)).unwrap();
    let out = dir.path().join("out");
    let run = plumefield(&["run", case.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    assert!(!out.join("figures").exists());
}
