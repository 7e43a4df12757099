//! CPU time of dense random packing (`mesh::layout::random_layout` beyond sequential addition) at 10k and 40k
//! cells, volume fractions 0.45 and 0.55 (10 um cells, 0.2 um minimum gap, a closed cube). One thread; run
//! under `flock -x /work/bench.lock` and note the load average printed.

use mesh::layout::{random_layout, ChamberBox, PlacementRegion, RandomLayout, RandomTarget};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let counts: Vec<usize> = args
        .first()
        .map_or(vec![10_000, 40_000], |a| a.split(',').map(|x| x.parse().expect("count")).collect());
    let fractions: Vec<f64> = args
        .get(1)
        .map_or(vec![0.45, 0.55], |a| a.split(',').map(|x| x.parse().expect("fraction")).collect());
    let radius: f64 = 5e-6;
    println!("load average: {}", numkit::meter::load_average().unwrap_or_default());
    println!(
        "cells   fraction  method                                              cpu_s   wall_s  min_gap_um"
    );
    for &count in &counts {
        for &phi in &fractions {
            let side = (count as f64 * 4.0 / 3.0 * std::f64::consts::PI * radius.powi(3) / phi).cbrt();
            let chamber = ChamberBox { lower: [0.0; 3], upper: [side; 3], periodic: [false; 3] };
            let spec = RandomLayout {
                target: RandomTarget::Count(count),
                radius,
                secretion_rate: 1.0,
                min_gap: std::env::var("PK_GAP").map_or(0.2e-6, |v| v.parse().unwrap()),
                seed: 1,
            };
            let cpu0 = numkit::meter::process_cpu_seconds().unwrap_or(f64::NAN);
            let wall = std::time::Instant::now();
            let placed = random_layout(&spec, &chamber, &PlacementRegion::WHOLE_CHAMBER);
            let cpu = numkit::meter::process_cpu_seconds().unwrap_or(f64::NAN) - cpu0;
            match placed {
                Ok(p) => {
                    let stats = p.layout.statistics(&chamber);
                    println!(
                        "{count:<7} {phi:<9} {:<51} {cpu:<7.2} {:<7.2} {:.4}",
                        p.method.describe(),
                        wall.elapsed().as_secs_f64(),
                        stats.nearest_gap_quantiles[0].1 * 1e6
                    );
                }
                Err(e) => println!("{count:<7} {phi:<9} failed: {e} ({cpu:.2} s)"),
            }
        }
    }
}
