//! `plumefield estimate`: the table and the JSON of the demo case, without a solve.

use std::process::Command;

fn estimate(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .arg("estimate")
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("runs")
}

#[test]
fn demo_estimates_in_table_and_json() {
    let out = estimate(&["cases/demo.toml"]);
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let text = String::from_utf8_lossy(&out.stdout);
    for needle in [
        "Peclet number, cell scale",
        "isolated-cell anisotropy",
        "mean-field background at the outlet",
        "run forecast: memory",
    ] {
        assert!(text.contains(needle), "missing {needle:?} in\n{text}");
    }

    let out = estimate(&["cases/demo.toml", "--json"]);
    assert!(out.status.success());
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
    // demo: U = 1 um/s, a = 8 um, D = 1e-10 m^2/s, L = 400 um → Pe = 0.08, Pe_L = 4.
    let pe = json["peclet_cell"].as_f64().unwrap();
    assert!((pe - 0.08).abs() < 1e-12, "{pe}");
    assert!((json["peclet_chamber"].as_f64().unwrap() - 4.0).abs() < 1e-12);
    // Darcy, Bi = κa/D = 0.08, β = 8e-3: A = Pe·(3/4)/(3[2 + 2β + β² + Bi(1 + β)]) (REFERENCES.md E.6).
    let (bi, beta) = (0.08, 8e-6 * (1e-4f64 / 1e-10).sqrt());
    let expected = pe * 0.75 / (3.0 * (2.0 + 2.0 * beta + beta * beta + bi * (1.0 + beta)));
    let a = json["isolated_anisotropy"].as_f64().unwrap();
    assert!((a / expected - 1.0).abs() < 1e-12, "{a} vs {expected}");
    // The background saturates below S/k_eff = ν/(4πa²κ) (plus decay) and rises along x.
    let profile = json["profile"]["background"].as_array().unwrap();
    let values: Vec<f64> = profile.iter().map(|v| v.as_f64().unwrap()).collect();
    assert!(values.windows(2).all(|w| w[1] >= w[0]), "{values:?}");
    let saturation = 2000.0 / 3600.0 / (4.0 * std::f64::consts::PI * 64e-12 * 1e-6);
    assert!(*values.last().unwrap() < saturation);
    assert!(json["forecast"]["memory_bytes"].as_f64().unwrap() > 1e8);

    // The critical density along x: one per profile point, the last one (x = L) the outlet's.
    let xs: Vec<f64> = json["profile"]["x"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
    let by_position = json["critical_density_by_position"].as_array().unwrap();
    assert_eq!(by_position.len(), xs.len());
    for (p, x) in by_position.iter().zip(&xs) {
        assert_eq!(p["x"].as_f64().unwrap(), *x);
    }
    let last = &by_position.last().unwrap()["critical_density"]["density"];
    assert_eq!(last, &json["critical_density"]["density"]);
    // The demo's chamber Péclet number is 4 (< 6): the regime check says the estimate is not expected to hold,
    // and the outlet layer is 3 D/U = 3 L / Pe_chamber.
    let regime = &json["mean_field_regime"];
    assert_eq!(regime["holds"], false);
    assert!(regime["breaches"][0].as_str().unwrap().contains("chamber Peclet"), "{regime}");
    let length = *xs.last().unwrap();
    let layer = regime["outlet_layer"].as_f64().unwrap();
    assert!((layer - 3.0 * length / 4.0).abs() < 1e-12 * length, "{layer}");
}

#[test]
fn missing_case_is_bad_input() {
    let out = estimate(&["cases/no_such_case.toml"]);
    assert_eq!(out.status.code(), Some(2));
}
