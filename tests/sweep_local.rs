//! `plumefield sweep` on this machine: bad axes exit 2 naming the axis; `--plan` lists ids and forecasts;
//! a failing case is recorded, the others finish, and the exit code says how many failed; `collect` gives one
//! row per case.

mod common;

use common::sweep::*;

#[test]
fn bad_axes_exit_2_naming_the_axis() {
    let dir = tempfile::tempdir().unwrap();
    let cases = [
        ("[[axis]]\nkey = \"flow.mean_speed\"\nvalues = [\"1 um/s\"]\n", "axis flow.mean_speed"),
        ("[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = []\n", "axis flow.mean_velocity: values = [] is empty"),
        ("[[axis]]\nkey = \"flow.mean_velocity\"\nfrom = 1\nto = 2\ncount = 0\nunit = \"um/s\"\n", "axis flow.mean_velocity: count = 0 gives an empty range"),
        ("[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"2 h\"]\n", "axis flow.mean_velocity = \"2 h\""),
        ("[[axis]]\nkey = \"cells.radius\"\nvalues = [6, 7]\nunit = \"parsec\"\n", "axis cells.radius: unit = \"parsec\""),
        ("combine = \"zip\"\n[[axis]]\nkey = \"cells.radius\"\nvalues = [\"6 um\", \"7 um\"]\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"1 um/s\"]\n", "axis flow.mean_velocity: has 1 values but axis cells.radius has 2"),
    ];
    for (sweep, expected) in cases {
        let path = write_sweep(dir.path(), sweep);
        for extra in [&["--plan"][..], &["-o", dir.path().join("out").to_str().unwrap()][..]] {
            let mut args = vec!["sweep", path.to_str().unwrap()];
            args.extend_from_slice(extra);
            let out = pf(&args);
            assert_eq!(out.status.code(), Some(2), "{sweep}\n{}", show(&out));
            let stderr = text(&out.stderr);
            assert!(stderr.contains(expected), "expected {expected:?} in:\n{}", show(&out));
            assert_eq!(stderr.lines().count(), 1, "one sentence:\n{stderr}");
        }
        assert!(!dir.path().join("out").join("cases").exists(), "nothing may run for a bad sweep");
    }
}

#[test]
fn plan_lists_ids_parameters_and_forecast() {
    let dir = tempfile::tempdir().unwrap();
    let path = write_sweep(
        dir.path(),
        "seeds = 2\n[[axis]]\nkey = \"medium.permeability\"\nfrom = \"1e-14 m^2\"\nto = \"1e-12 m^2\"\ncount = 3\nscale = \"log\"\n",
    );
    let out = pf(&["sweep", path.to_str().unwrap(), "--plan"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let stdout = text(&out.stdout);
    assert!(stdout.contains("(6 cases"), "{stdout}");
    assert!(stdout.contains("case-0005"), "{stdout}");
    assert!(stdout.contains("medium.permeability = \"1e-13 m^2\", cells.layout.seed = 8"), "{stdout}");
    assert!(stdout.contains("48x24x16") && stdout.contains(" MB"), "{stdout}");
    assert!(!dir.path().join("out").exists());
}

#[test]
fn failing_case_is_recorded_and_counted_in_the_exit_code() {
    let dir = tempfile::tempdir().unwrap();
    // One iteration cannot reach the solve tolerance: the solver reports no convergence for that case.
    let path = write_sweep(dir.path(), "[[axis]]\nkey = \"solve.max_iterations\"\nvalues = [300, 1, 200]\n");
    let out_dir = dir.path().join("out");
    let out = pf(&["sweep", path.to_str().unwrap(), "-o", out_dir.to_str().unwrap(), "--jobs", "2"]);
    assert_eq!(out.status.code(), Some(101), "{}", show(&out));
    assert!(text(&out.stderr).contains("1 of 3 cases failed"), "{}", show(&out));
    let failed: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out_dir.join("cases/case-0001/failed.json")).unwrap()).unwrap();
    assert_eq!(failed["kind"], "solver", "{failed}");
    assert!(!out_dir.join("cases/case-0001/done.json").exists());
    assert_case_intact(&out_dir.join("cases/case-0000"));
    assert_case_intact(&out_dir.join("cases/case-0002"));
    let csv = out_dir.join("sweep.csv");
    assert_eq!(column(&csv, "case_id"), ["case-0000", "case-0001", "case-0002"]);
    assert_eq!(column(&csv, "status"), ["done", "failed", "done"]);
    assert_eq!(column(&csv, "solve.max_iterations"), ["300", "1", "200"]);
    let median = column(&csv, "bound_rate_median");
    assert!(median[0].parse::<f64>().unwrap() > 0.0 && median[1] == "nan", "{median:?}");
    // The same physics with a different iteration cap gives the same row, apart from the parameter.
    assert_eq!(median[0], median[2]);
    assert!(out_dir.join("sweep.h5").exists() && out_dir.join("figures").is_dir());

    // Rerun: the failed case is retried (and fails again), the done ones are not touched.
    let before = std::fs::read(out_dir.join("cases/case-0000/done.json")).unwrap();
    let out = pf(&["sweep", path.to_str().unwrap(), "-o", out_dir.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(101), "{}", show(&out));
    assert!(text(&out.stderr).contains("2 already done, 1 to run"), "{}", show(&out));
    assert_eq!(std::fs::read(out_dir.join("cases/case-0000/done.json")).unwrap(), before);

    // collect alone reproduces the table.
    let table = std::fs::read(&csv).unwrap();
    std::fs::remove_file(&csv).unwrap();
    let out = pf(&["collect", out_dir.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    assert_eq!(std::fs::read(&csv).unwrap(), table);

    // The figures pass the checks that need no eyes, and the failed case is stated, not drawn.
    let (table, plan, _) = plumefield::sweep::collect::collect(&out_dir).unwrap();
    let drawn =
        plumefield::sweep::sweep_curves::draw_sweep_figures(&table, &plan, &dir.path().join("figures"))
            .unwrap();
    assert!(!drawn.is_empty());
    for (path, record) in &drawn {
        assert_eq!(record.check(), Ok(()), "{}", path.display());
        assert!(record.notes.iter().any(|n| n.contains("1 cases failed")), "{:?}", record.notes);
    }
}

#[test]
fn collect_of_a_folder_that_is_no_sweep_exits_2() {
    let dir = tempfile::tempdir().unwrap();
    let out = pf(&["collect", dir.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2), "{}", show(&out));
    assert!(text(&out.stderr).contains("is not a sweep folder"), "{}", show(&out));
}

#[test]
fn transient_cases_run_as_transient() {
    let dir = tempfile::tempdir().unwrap();
    let transient = "[solve]\nmode = \"transient\"\nend_time = \"20 min\"\ntime_step = \"2 min\"\noutput_every = \"10 min\"\n";
    std::fs::write(dir.path().join("base.toml"), format!("{BASE}{transient}")).unwrap();
    let path = dir.path().join("sweep.toml");
    std::fs::write(
        &path,
        "base = \"base.toml\"\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"1 um/s\", \"2 um/s\"]\n",
    )
    .unwrap();
    let out_dir = dir.path().join("out");
    let out = pf(&["sweep", path.to_str().unwrap(), "-o", out_dir.to_str().unwrap(), "--jobs", "2"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    for id in ["case-0000", "case-0001"] {
        let case_dir = out_dir.join("cases").join(id);
        assert_case_intact(&case_dir);
        let summary: serde_json::Value =
            serde_json::from_slice(&std::fs::read(case_dir.join("summary.json")).unwrap()).unwrap();
        assert!(summary["transient"]["steps"].as_u64().unwrap() >= 10, "{id}: {}", summary["transient"]);
        let times = column(&case_dir.join("cells_timeseries.csv"), "time");
        assert_eq!(times.len(), 6 * 2, "{id}: rows of cells_timeseries.csv (t = 10, 20 min)");
    }
    // The sweep's case equals a plain `run` of the same case file.
    let single = dir.path().join("single");
    let case_file = out_dir.join("cases/case-0001/case.toml");
    let out = pf(&["run", case_file.to_str().unwrap(), "-o", single.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    assert_eq!(
        column(&single.join("cells.csv"), "bound_rate"),
        column(&out_dir.join("cases/case-0001/cells.csv"), "bound_rate")
    );
}
