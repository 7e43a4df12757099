//! `plumefield run` on transient cases: the outputs (checked by outside readers, tests/python/
//! check_transient.py), the summary's approach-to-steady section, an initial condition taken from a steady
//! run's fields.h5, the early stop at steady state, and the input errors of the transient-only options.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

mod common;

/// This file's chamber: the small chamber with bigger cells, four of them, bulk decay and a clean inlet;
/// `changes` on top.
fn case_text(changes: &[(&str, &str)]) -> String {
    let mut all = vec![
        ("chamber.size", r#"["120 um", "60 um", "40 um"]"#),
        ("grid.spacing", r#""4 um""#),
        ("ligand.decay_rate", r#""1e-4 /s""#),
        ("ligand.inlet_concentration", "0.0"),
        ("cells.radius", r#""10 um""#),
        ("cells.layout", r#"{ kind = "random", count = 4, min_gap = "3 um", seed = 2 }"#),
        ("sensing.integration_time", r#""10 min""#),
        ("output.fields", r#"["concentration", "velocity", "pressure"]"#),
    ];
    all.extend_from_slice(changes);
    common::small_chamber(&all)
}

const CONTRACT_COLUMNS: &str = "id,x,y,z,radius,secretion_rate,mean_surface_concentration,bound_rate,anisotropy_x,anisotropy_y,anisotropy_z,anisotropy_along_flow,front_back_contrast,direction_error,drag_x,drag_y,drag_z,local_speed";

const TRANSIENT: [(&str, &str); 4] = [
    ("solve.mode", r#""transient""#),
    ("solve.end_time", r#""10 min""#),
    ("solve.time_step", r#""10 s""#),
    ("solve.output_every", r#""2 min""#),
];
const STEADY: (&str, &str) = ("solve.mode", r#""steady""#);

fn folder(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("plumefield-transient-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

fn run(dir: &Path, file: &str, text: &str, extra: &[&str]) -> (PathBuf, Output) {
    let case = dir.join(file);
    std::fs::write(&case, text).expect("write case");
    let out = dir.join(format!("out-{file}"));
    let mut args =
        vec!["run".to_string(), case.display().to_string(), "-o".into(), out.display().to_string()];
    args.extend(extra.iter().map(|a| a.to_string()));
    let output = Command::new(env!("CARGO_BIN_EXE_plumefield")).args(&args).output().expect("run the binary");
    (out, output)
}

fn summary(out: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary.json"))
        .expect("summary parses")
}

fn read(path: &Path, dataset: &str) -> Vec<f64> {
    let file = hdf5::File::open(path).expect("open");
    file.dataset(dataset).and_then(|d| d.read_raw::<f64>()).unwrap_or_else(|e| panic!("{dataset}: {e}"))
}

fn relative_l2(a: &[f64], b: &[f64]) -> f64 {
    let num: f64 = a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum();
    let den: f64 = b.iter().map(|y| y * y).sum();
    (num / den).sqrt()
}

#[test]
fn transient_outputs_are_read_by_outside_readers() {
    let dir = folder("outputs");
    let (out, output) = run(&dir, "case.toml", &case_text(&TRANSIENT), &[]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{stderr}");
    // The closing line names the folder the user asked for, not the staging folder beside it.
    assert!(stderr.contains(&format!("outputs in {}", out.display())), "{stderr}");
    assert!(!stderr.contains(".partial"), "{stderr}");
    for name in ["fields.h5", "fields.xmf", "cells.csv", "cells_timeseries.csv", "summary.json"] {
        assert!(out.join(name).exists(), "{name} missing");
    }
    // The steady contract columns lead both tables, in order (DESIGN.md §6).
    let header = |name: &str| {
        std::fs::read_to_string(out.join(name)).expect(name).lines().next().unwrap_or_default().to_string()
    };
    assert!(header("cells.csv").starts_with(&format!("{CONTRACT_COLUMNS},")), "{}", header("cells.csv"));
    assert!(header("cells_timeseries.csv").starts_with(&format!("time,{CONTRACT_COLUMNS},")));
    for column in ["window_bound_count", "window_direction_error", "secretion_start"] {
        assert!(header("cells_timeseries.csv").contains(column), "{column}");
    }
    assert!(header("cells.csv").contains("time_to_90_percent"));
    let s = summary(&out);
    let t = &s["transient"];
    assert_eq!(t["steps"].as_u64(), Some(60));
    assert_eq!(t["outputs"]["time"].as_array().map(Vec::len), Some(5));
    // Per-step mass balance closes to the solver tolerance (1e-8) at every step.
    let worst = s["mass_balance"]["worst_step_relative_error"].as_f64().expect("worst");
    assert!(worst > 0.0 && worst < 1e-7, "worst step balance {worst:e}");
    // The outlet reaches 90% before 99%, and both before the end.
    let t90 = t["time_to_steady"]["90_percent"]["outlet_concentration"].as_f64().expect("t90");
    let t99 = t["time_to_steady"]["99_percent"]["outlet_concentration"].as_f64().expect("t99");
    assert!(0.0 < t90 && t90 < t99 && t99 < 600.0, "t90 {t90}, t99 {t99}");
    let cells = &t["time_to_steady"]["90_percent"]["cell_sensed_rate"];
    let (p10, median, max) = (
        cells["p10"].as_f64().expect("p10"),
        cells["median"].as_f64().expect("median"),
        cells["max"].as_f64().expect("max"),
    );
    assert!(p10 <= median && median <= max, "{cells}");
    // The last output is the final state, and after 10 min it is close to the steady field.
    let h5 = out.join("fields.h5");
    let last = read(&h5, "ligand/000004");
    assert_eq!(last, read(&h5, "ligand/concentration"));
    let distance = relative_l2(&last, &read(&h5, "ligand/steady_concentration"));
    assert!(distance < 0.05, "distance to steady after 10 min: {distance:e}");
    // `plot` on a transient folder adds the approach-to-steady figure (the case itself draws none).
    assert!(header("cells.csv").contains("steady_bound_rate"));
    let plot = Command::new(env!("CARGO_BIN_EXE_plumefield")).arg("plot").arg(&out).output().expect("plot");
    assert!(plot.status.success(), "{}", String::from_utf8_lossy(&plot.stderr));
    let png = std::fs::read(out.join("figures/approach_to_steady.png")).expect("approach_to_steady.png");
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    let be = |o: usize| u32::from_be_bytes([png[o], png[o + 1], png[o + 2], png[o + 3]]);
    let (w, h, bytes) = (be(16), be(20), png.len());
    assert!(w >= 600 && h >= 300 && bytes > 20_000, "{w}x{h}, {bytes} bytes");
    // Every figure of the transient folder, the readable fraction over time among them, passes the checks
    // that need no eyes.
    let drawn = plumefield::figures::run_figures::draw_run_figures(&out).expect("figures");
    assert!(drawn.iter().any(|(p, _)| p.ends_with("readable_cue_over_time.png")), "{drawn:?}");
    for (path, record) in &drawn {
        assert_eq!(record.check(), Ok(()), "{}", path.display());
    }

    if common::python::readers().is_none() {
        return;
    }
    let check = common::python::run_script("check_transient.py", &[out.to_str().expect("UTF-8 path")]);
    let text = String::from_utf8_lossy(&check.stdout);
    assert!(check.status.success(), "check_transient.py failed");
    assert!(text.contains("all transient output checks passed"));
}

#[test]
fn steady_fields_as_initial_condition_stay_steady_and_stop_early() {
    let dir = folder("initial");
    let (steady_out, output) = run(&dir, "steady.toml", &case_text(&[STEADY]), &[]);
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));

    let initial = format!("\"{}\"", steady_out.join("fields.h5").display());
    let solve =
        [&TRANSIENT[..], &[("solve.initial_condition", initial.as_str()), ("solve.stop_at_steady", "true")]]
            .concat();
    let (out, output) = run(&dir, "from_steady.toml", &case_text(&solve), &[]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{stderr}");
    assert!(stderr.contains("steady state reached"), "{stderr}");
    let s = summary(&out);
    assert_eq!(s["transient"]["stopped_at_steady"].as_bool(), Some(true));
    assert!(s["transient"]["final_time"].as_f64().expect("final time") < 600.0);
    // The steady run's field and the transient run's own steady reference agree; the run stays on them.
    let steady = read(&steady_out.join("fields.h5"), "ligand/concentration");
    let reference = read(&out.join("fields.h5"), "ligand/steady_concentration");
    let d_ref = relative_l2(&reference, &steady);
    let d_final = relative_l2(&read(&out.join("fields.h5"), "ligand/concentration"), &steady);
    println!("steady run vs reference {d_ref:e}, final vs steady {d_final:e}");
    assert!(d_ref <= 1e-6 && d_final <= 1e-4, "reference {d_ref:e}, final {d_final:e}");
}

/// Brinkman flow feeds the time loop as it feeds the steady solve: same drag, same steady reference.
#[test]
fn brinkman_flow_runs_transient_and_matches_the_steady_run() {
    let dir = folder("brinkman");
    let brinkman = |solve: &[(&str, &str)]| {
        let medium = [("medium.model", r#""brinkman""#), ("medium.permeability", r#""1e-10 m^2""#)];
        case_text(&[solve, &medium[..]].concat())
    };
    let (steady_out, output) = run(&dir, "steady.toml", &brinkman(&[STEADY]), &[]);
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let (out, output) = run(&dir, "transient.toml", &brinkman(&TRANSIENT), &[]);
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let steady = read(&steady_out.join("fields.h5"), "ligand/concentration");
    let reference = read(&out.join("fields.h5"), "ligand/steady_concentration");
    let d_ref = relative_l2(&reference, &steady);
    assert!(d_ref <= 1e-6, "steady Brinkman run vs the transient run's reference: {d_ref:e}");
    let drag = |dir: &Path| -> Vec<f64> {
        let text = std::fs::read_to_string(dir.join("cells.csv")).expect("cells.csv");
        let mut lines = text.lines();
        let header: Vec<&str> = lines.next().unwrap_or_default().split(',').collect();
        let k = header.iter().position(|h| h.starts_with("drag_x")).expect("drag_x column");
        lines.map(|l| l.split(',').nth(k).and_then(|v| v.parse().ok()).expect("drag_x value")).collect()
    };
    let (a, b) = (drag(&steady_out), drag(&out));
    assert!(a.iter().any(|&d| d != 0.0), "Brinkman drag is not zero: {a:?}");
    for (x, y) in a.iter().zip(&b) {
        assert!((x - y).abs() <= 1e-9 * x.abs(), "drag_x steady {x:e} vs transient {y:e}");
    }
}

#[test]
fn transient_input_errors_exit_2_with_the_name() {
    let dir = folder("errors");
    // Missing initial-condition file.
    let solve = [&TRANSIENT[..], &[("solve.initial_condition", r#""nowhere/fields.h5""#)]].concat();
    let (_, output) = run(&dir, "missing.toml", &case_text(&solve), &[]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("nowhere/fields.h5") && stderr.contains("initial_condition"), "{stderr}");

    // A fields.h5 of another grid.
    let (other, output) =
        run(&dir, "coarse.toml", &case_text(&[STEADY, ("grid.spacing", r#""2.5 um""#)]), &[]);
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let initial = format!("\"{}\"", other.join("fields.h5").display());
    let solve = [&TRANSIENT[..], &[("solve.initial_condition", initial.as_str())]].concat();
    let (_, output) = run(&dir, "mismatch.toml", &case_text(&solve), &[]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("grid") && stderr.contains("differs"), "{stderr}");

    // Restart options on a steady case.
    let (_, output) = run(&dir, "steady.toml", &case_text(&[STEADY]), &["--resume"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&output.stderr).contains("transient"));
}
