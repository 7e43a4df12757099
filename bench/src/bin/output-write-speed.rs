//! Speed of writing `fields.h5` in each storage (precision × deflate level) against a raw write of the same
//! values (`dd`-like: the bytes in one `write` and an `fsync`, as the atomic writer syncs its files). Six
//! smooth-with-noise fields of n³ grid cells, the five a run writes plus the volume fraction; threads as
//! rayon's pool has them (`RAYON_NUM_THREADS`).
//!
//! `cargo run --release -p plumefield-bench --bin output-write-speed -- [n] [dir]` (n = 192; dir = temp)

use numkit::meter;
use plumefield::io::{write_fields_h5, CellTable, FieldData, FieldStorage, Precision, Provenance};
use std::io::Write as _;
use std::time::Instant;

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().collect();
    let n: usize = args.get(1).map_or(Ok(192), |a| a.parse())?;
    let dir = args.get(2).map_or_else(std::env::temp_dir, std::path::PathBuf::from);
    let grid = mesh::Grid::new([0.0; 3], 2e-6, [n, n, n]);
    let mut rng = numkit::Xoshiro256StarStar::seed_from_u64(15);
    // Smooth fields with a little solver noise in the low bits, like a converged solution.
    let field = |scale: f64, wave: f64, rng: &mut numkit::Xoshiro256StarStar| -> Vec<f64> {
        (0..grid.len())
            .map(|m| {
                let [i, j, k] = grid.ijk(m);
                let smooth = (wave * i as f64).sin() * (0.7 * wave * j as f64).cos() + 0.01 * k as f64;
                scale * (smooth * (1.0 + 1e-9 * rng.next_f64()))
            })
            .collect()
    };
    let values: Vec<(&str, &str, Vec<f64>)> = vec![
        ("ligand", "concentration", field(1e15, 0.02, &mut rng)),
        ("flow", "u", field(1e-6, 0.05, &mut rng)),
        ("flow", "v", field(1e-7, 0.05, &mut rng)),
        ("flow", "w", field(1e-7, 0.05, &mut rng)),
        ("flow", "pressure", field(1e-2, 0.01, &mut rng)),
    ];
    let volume_fraction: Vec<f64> = (0..grid.len()).map(|m| if m % 17 < 3 { 0.5 } else { 1.0 }).collect();
    let fields: Vec<FieldData> =
        values.iter().map(|(g, name, v)| FieldData::borrowed(g, name, "1", "synthetic", v)).collect();
    let provenance = Provenance {
        version: "bench".into(),
        git_revision: None,
        case_sha256: "0".repeat(64),
        case_text: String::new(),
        command_line: "output-write-speed".into(),
    };
    println!(
        "{n}^3 grid, 6 fields, {} threads, load average {}",
        rayon::current_num_threads(),
        plumefield_bench::load_average()
    );
    println!(
        "{:<22} {:>8} {:>8} {:>10} {:>10} {:>9}",
        "storage", "wall s", "CPU s", "file MB", "MB/s raw", "ratio"
    );
    for precision in [Precision::Double, Precision::Single] {
        let bytes = grid.len() * 6 * precision.bytes();
        let raw_path = dir.join("output-write-speed.raw");
        let raw: Vec<u8> = values
            .iter()
            .map(|(_, _, v)| v.as_slice())
            .chain([volume_fraction.as_slice()])
            .flat_map(|v| {
                v.iter().flat_map(move |x| match precision {
                    Precision::Double => x.to_le_bytes().to_vec(),
                    Precision::Single => (*x as f32).to_le_bytes().to_vec(),
                })
            })
            .collect();
        let (cpu0, started) = (meter::process_cpu_seconds(), Instant::now());
        let mut file = std::fs::File::create(&raw_path)?;
        file.write_all(&raw)?;
        file.sync_all()?;
        let raw_s = started.elapsed().as_secs_f64();
        let raw_cpu = meter::process_cpu_seconds().zip(cpu0).map_or(f64::NAN, |(b, a)| b - a);
        std::fs::remove_file(&raw_path)?;
        println!(
            "{:<22} {raw_s:>8.2} {raw_cpu:>8.2} {:>10.1} {:>10.0} {:>9.2}",
            format!("raw {} + fsync", precision.name()),
            bytes as f64 / 1e6,
            bytes as f64 / 1e6 / raw_s,
            1.0
        );
        for compression in [0u8, 1, 2, 4] {
            let path = dir.join("output-write-speed.h5");
            let storage = FieldStorage { precision, compression };
            let (cpu0, started) = (meter::process_cpu_seconds(), Instant::now());
            write_fields_h5(
                &path,
                &grid,
                &volume_fraction,
                &fields,
                &CellTable::default(),
                &provenance,
                storage,
            )?;
            let wall = started.elapsed().as_secs_f64();
            let cpu = meter::process_cpu_seconds().zip(cpu0).map_or(f64::NAN, |(b, a)| b - a);
            let size = std::fs::metadata(&path)?.len() as f64;
            std::fs::remove_file(&path)?;
            println!(
                "{:<22} {wall:>8.2} {cpu:>8.2} {:>10.1} {:>10.0} {:>9.2}",
                format!("{} level {compression}", precision.name()),
                size / 1e6,
                bytes as f64 / 1e6 / wall,
                wall / raw_s
            );
        }
    }
    Ok(())
}
