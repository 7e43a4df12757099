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

/// A periodic chamber closed by walls, with uptake and decay: the mean-field background is the uniform balance
/// `c = n ν' /(φ_f k + n k_on)` (ν' = ν/(1 + Bi), k_on = 4πDa·Bi/(1 + Bi), REFERENCES.md G) with no gradient.
const CLOSED: &str = r#"title = "closed periodic chamber with uptake"
[chamber]
size = ["200 um", "100 um", "100 um"]
[grid]
spacing = "2 um"
[medium]
model = "darcy"
viscosity = "1e-3 Pa s"
permeability = "1e-13 m^2"
[flow]
mean_velocity = "1 um/s"
[boundaries]
x_min = "periodic"
x_max = "periodic"
y_min = "wall"
y_max = "wall"
z_min = "wall"
z_max = "wall"
[ligand]
diffusivity = "1e-10 m^2/s"
decay_rate = "1e-2 /s"
[cells]
radius = "5 um"
secretion_rate = "200000 /h"
uptake = { model = "first_order", rate_constant = "1e-6 m/s" }
layout = { kind = "random", count = 10, min_gap = "2 um", seed = 3 }
[sensing]
integration_time = "10 h"
readable_error = LEVEL
"#;

/// The density at which the estimated direction error reaches `level`, derived independently of the library.
///
/// Derivation (REFERENCES.md D, E.6, G, H; the superposition of `estimate_cell_sensing`): in a uniform
/// background c (no gradient) a first-order-uptake cell has ⟨c⟩ = o + c/(1 + Bi) with o its own surface value,
/// and ⟨c cosθ⟩ = A_iso·o − q c with q = Bi·Pe·(3/4)/(3(1 + Bi)(2 + Bi)), the background's uptake carried by
/// the flow. The contrast is Â = (3/2)⟨c cosθ⟩/⟨c⟩, the counts N = κ·4πa²·⟨c⟩·T, and the direction error
/// E = √((1 − Â²)/N)/|Â| (Berg & Purcell 1977, delta method). E depends on the density only through c, and
/// rises with c (⟨c⟩ grows, ⟨c cosθ⟩ falls): solve E(c) = level for c, then the balance
/// c = nν'/(φ_f k + n k_on) for n = c φ_f k/(ν' − c k_on). For small Â, E² ≈ ⟨c⟩/((9/4)(A_iso o − q c)² κ4πa²T):
/// halving the level needs a background, hence a density, well below the one of level 1.
fn closed_form_density(level: f64, isolated_anisotropy: f64, volume_fraction: f64) -> f64 {
    let (a, d, kappa, nu, k, t, u): (f64, f64, f64, f64, f64, f64, f64) =
        (5e-6, 1e-10, 1e-6, 200000.0 / 3600.0, 1e-2, 36000.0, 1e-6);
    let pi = std::f64::consts::PI;
    let bi = kappa * a / d;
    let beta = a * (k / d).sqrt();
    let own = nu / (4.0 * pi * d * a) / (1.0 + beta + bi);
    let pe = u * a / d;
    let q = bi * pe * 0.75 / (3.0 * (1.0 + bi) * (2.0 + bi));
    let error = |c: f64| {
        let mean = own + c / (1.0 + bi);
        let contrast = 1.5 * (isolated_anisotropy * own - q * c) / mean;
        let n = kappa * 4.0 * pi * a * a * mean * t;
        ((1.0 - contrast * contrast) / n).sqrt() / contrast.abs()
    };
    let (mut lo, mut hi) = (0.0, isolated_anisotropy * own / q);
    assert!(error(lo) < level, "a nearly isolated cell already fails: {}", error(lo));
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if error(mid) > level {
            hi = mid
        } else {
            lo = mid
        }
    }
    let c = 0.5 * (lo + hi);
    let (release, k_on) = (nu / (1.0 + bi), 4.0 * pi * d * a * bi / (1.0 + bi));
    c * (1.0 - volume_fraction) * k / (release - c * k_on)
}

#[test]
fn critical_density_is_taken_at_readable_error() {
    let dir = tempfile::tempdir().unwrap();
    let mut densities = Vec::new();
    for level in [0.5, 1.0] {
        let case = dir.path().join(format!("closed_{level}.toml"));
        std::fs::write(&case, CLOSED.replace("LEVEL", &level.to_string())).unwrap();
        let out = estimate(&[case.to_str().unwrap(), "--json"]);
        assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
        let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
        assert_eq!(json["background"]["kind"], "uniform", "{}", json["background"]);
        let critical = &json["critical_density"];
        assert_eq!(critical["readable_error"].as_f64(), Some(level));
        let density = critical["density"].as_f64().unwrap_or_else(|| panic!("no density: {critical}"));
        let expected = closed_form_density(
            level,
            json["isolated_anisotropy"].as_f64().unwrap(),
            json["volume_fraction"].as_f64().unwrap(),
        );
        assert!((density / expected - 1.0).abs() < 1e-6, "level {level}: {density:e} against {expected:e}");
        // A uniform background: the same at every position.
        for p in json["critical_density_by_position"].as_array().unwrap() {
            let at = p["critical_density"]["density"].as_f64().unwrap();
            assert!((at / density - 1.0).abs() < 1e-9, "{p}");
        }
        densities.push(density);
    }
    assert!(densities[0] < 0.9 * densities[1], "{densities:?}");
}

#[test]
fn no_critical_density_where_the_gradient_only_helps() {
    // The demo at x = 0: its error falls below readable_error as cells are added (the background gradient
    // grows with them) and never rises back: no density, and the reason instead.
    let out = estimate(&["cases/demo.toml", "--json"]);
    assert!(out.status.success());
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
    let first = &json["critical_density_by_position"][0];
    assert_eq!(first["x"].as_f64(), Some(0.0));
    assert!(first["critical_density"]["density"].is_null(), "{first}");
    let why = first["critical_density"]["none_because"].as_str().unwrap();
    assert!(why.contains("falls below readable_error"), "{why}");
    let out = estimate(&["cases/demo.toml"]);
    let text = String::from_utf8_lossy(&out.stdout);
    let table = text.split("by position:").nth(1).expect("the by-position table");
    let row = table.lines().find(|l| l.trim_start().starts_with("0.0 ")).expect("an x = 0 row");
    assert!(row.contains("none") && row.contains("gradient"), "{row}");
}
