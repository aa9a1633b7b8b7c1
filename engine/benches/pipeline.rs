//! Particle-engine benchmark: parcel-steps per second, bytes per parcel and
//! the time split by pipeline stage, for a monodisperse column of 10⁴, 10⁵ and
//! 10⁶ parcels on 1 and 2 threads, with both neighbour indexes.
//!
//! Run with `cargo bench -p turbid-engine --bench pipeline`; pass
//! `-- --sizes 10000,100000 --steps 5` to change what is measured.
//! Timings on shared machines vary by up to 2×: compare rows, not runs.

use std::time::Instant;
use turbid_engine::particles::ParticleEngine;
use turbid_engine::scenario;

fn scenario_text(parcels: u64, search: &str) -> String {
    format!(
        r#"format: 1
title: benchmark column (invented)
fluid:
  water: {{ temperature: "20 °C" }}
solids:
  - name: glass beads
    density: "2500 kg/m³"
    size: {{ single: "98 µm" }}
vessel:
  column:
    height: "1.0 m"
    cross_section: {{ round: {{ diameter: "100 mm" }} }}
initial:
  loading: "10 vol%"
run:
  end_time: "10 min"
  output_interval: "10 min"
  parcels: {parcels}
  seed: 1
numerics:
  neighbour_search: {search}
output:
  file: bench.h5
  height_bins: 100
"#
    )
}

fn arg(name: &str) -> Option<String> {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

fn main() {
    let sizes: Vec<u64> = arg("--sizes")
        .map(|s| s.split(',').filter_map(|x| x.trim().parse().ok()).collect())
        .unwrap_or_else(|| vec![10_000, 100_000, 1_000_000]);
    let steps: u32 = arg("--steps").and_then(|s| s.parse().ok()).unwrap_or(4);
    println!(
        "turbid particle-engine benchmark: monodisperse column, {steps} timed steps after one warm-up step"
    );
    println!(
        "bytes per parcel (component data + neighbour-search copy): {}",
        ParticleEngine::bytes_per_parcel()
    );
    println!();
    println!(
        "{:>9} {:>7} {:>9} {:>15} {:>10}   stage split (% of step time)",
        "parcels", "threads", "search", "parcel-steps/s", "ms/step"
    );
    for &n in &sizes {
        for search in ["cell_list", "kd_tree"] {
            for threads in [1usize, 2] {
                let text = scenario_text(n, search);
                let setup = scenario::parse_str(&text, std::path::Path::new("bench.yaml"))
                    .expect("benchmark scenario is valid");
                let mut engine =
                    ParticleEngine::new(&setup, &text, threads).expect("engine starts");
                engine.step(); // warm-up: first index build, page faults
                let before = engine.stage_times().clone();
                let t0 = Instant::now();
                for _ in 0..steps {
                    engine.step();
                }
                let wall = t0.elapsed().as_secs_f64();
                let after = engine.stage_times();
                // Time spent in each stage during the timed steps only.
                let spent: Vec<(&str, f64)> = after
                    .stages
                    .iter()
                    .map(|(name, d)| {
                        let prev = before
                            .stages
                            .iter()
                            .find(|(n, _)| n == name)
                            .map_or(0.0, |(_, p)| p.as_secs_f64());
                        (*name, d.as_secs_f64() - prev)
                    })
                    .collect();
                let total: f64 = spent.iter().map(|(_, t)| t).sum();
                let split: Vec<String> = spent
                    .iter()
                    .map(|(name, t)| format!("{name} {:.0}", 100.0 * t / total.max(1e-12)))
                    .collect();
                println!(
                    "{:>9} {:>7} {:>9} {:>15.3e} {:>10.1}   {}",
                    n,
                    threads,
                    search,
                    n as f64 * steps as f64 / wall,
                    1e3 * wall / steps as f64,
                    split.join(", ")
                );
            }
        }
    }
}
