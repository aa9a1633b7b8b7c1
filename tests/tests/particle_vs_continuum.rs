//! The particle engine against the continuum engine on the same batch scenarios.
//!
//! Promise: run through either engine, the same scenario text gives the same
//! concentration profiles, and the particle engine converges to the continuum
//! solution as parcels are added: the normalised L1 difference of the
//! recorded profiles falls with the parcel count and is below a stated bound
//! at the largest count, for one size class (Kynch) and for two (MLB).
//!
//! The reference is the continuum engine on a grid much finer than the
//! recording slabs (Godunov/MUSCL for one class, central-upwind for two),
//! itself validated against exact Kynch solutions and the MLB jump conditions
//! in `continuum_batch.rs`; both engines record on the same slabs (the
//! `RunRecord` layout is shared), so the difference is taken slab by slab.
//!
//! Measure: at every record after the start,
//! e(t) = Σ_k |φp_k(t) − φc_k(t)| Δz / (φ0 H) for the total, and the same with
//! φ_i and φ_i⁰ for each class; the figure reported is the mean of e over the
//! records.

use std::time::Instant;
use turbid_engine::continuum::ContinuumEngine;
use turbid_engine::particles::{ParticleEngine, Silent};
use turbid_engine::record::RunRecord;
use turbid_engine::scenario::{self, Setup};
use turbid_validation::bidisperse::{Engine, Pair, PairRun};

/// Fill height, m, and the recording slabs.
const H: f64 = 0.2;
const BINS: u32 = 50;
/// Cells of the continuum reference.
const REFERENCE_CELLS: usize = 800;
/// Largest ratio of successive L1 figures when the parcels (at least)
/// double: a fall of 12 %, three times the ~4 % seed-to-seed spread of the
/// figures (see the test's documentation).
const STEP_FALL: f64 = 0.88;
/// Parcel counts of the convergence study.
const PARCELS: [u64; 3] = [5_000, 10_000, 20_000];
const NEIGHBOURS: u32 = 256;
const SECTION: &str = r#"{ round: { diameter: "20 mm" } }"#;

/// The monodisperse case: 100 µm glass in a 10 mPa·s liquid (Stokes drag,
/// Re ≈ 1e-2), φ0 = 0.10, Richardson–Zaki n = 4.7, φmax = 0.6.
fn mono_yaml(engine: Engine, end: f64, interval: f64) -> String {
    let run = match engine {
        Engine::Particles {
            parcels,
            seed,
            neighbours,
        } => format!(
            "  parcels: {parcels}\n  seed: {seed}\n  engine: particles\nnumerics:\n  neighbours: {neighbours}\n"
        ),
        Engine::Continuum { cells } => {
            format!("  parcels: 1000\n  engine: continuum\nnumerics:\n  cells: {cells}\n")
        }
    };
    format!(
        r#"format: 1
title: particle vs continuum, one class
fluid:
  newtonian: {{ density: "1000 kg/m³", viscosity: "10 mPa·s" }}
solids:
  - name: beads
    density: "2500 kg/m³"
    size: {{ single: "100 µm" }}
vessel:
  column:
    height: "{H} m"
    cross_section: {SECTION}
initial:
  loading: 0.1
models:
  drag: stokes
  hindered:
    richardson_zaki: {{ exponent: 4.7 }}
  max_packing: 0.6
run:
  end_time: "{end:e} s"
  output_interval: "{interval:e} s"
{run}output:
  file: out/compare.h5
  height_bins: {BINS}
"#
    )
}

/// The bidisperse case: the equal-density pair of `particle_bidisperse.rs`.
const PAIR: Pair = Pair {
    name: "equal density (120 µm + 84 µm glass)",
    density: [2500.0, 2500.0],
    diameter: [120e-6, 84e-6],
    mass_share: [0.7, 0.3],
    phi0: 0.15,
    viscosity: 10e-3,
};

fn pair_yaml(engine: Engine, end: f64, interval: f64) -> String {
    PAIR.yaml(&PairRun {
        cross_section: SECTION.into(),
        height: H,
        end,
        interval,
        bins: BINS,
        engine,
    })
}

fn parse(text: &str) -> Setup {
    scenario::parse_str(text, std::path::Path::new("compare.yaml"))
        .unwrap_or_else(|e| panic!("test scenario refused: {e}\n{text}"))
}

fn continuum(text: &str) -> RunRecord {
    let setup = parse(text);
    ContinuumEngine::new(&setup, text)
        .expect("continuum engine")
        .run(&mut Silent, None)
}

fn particles(text: &str) -> (RunRecord, f64) {
    let setup = parse(text);
    let start = Instant::now();
    let record = ParticleEngine::new(&setup, text, 1)
        .expect("particle engine")
        .run(&mut Silent, None);
    (record, start.elapsed().as_secs_f64())
}

/// Time-averaged normalised L1 differences: total first, then per class.
fn l1(p: &RunRecord, c: &RunRecord) -> Vec<f64> {
    let nz = p.layout.nz();
    let nc = p.layout.nclasses();
    assert_eq!(p.layout, c.layout, "both engines record on the same layout");
    assert_eq!(p.frames.len(), c.frames.len());
    let dz = H / nz as f64;
    let initial = &c.frames[0];
    let loads: Vec<f64> = (0..nc)
        .map(|i| initial.phi_class[i * nz..(i + 1) * nz].iter().sum::<f64>() * dz)
        .collect();
    let total_load: f64 = loads.iter().sum();
    let mut sums = vec![0.0; nc + 1];
    let frames = &p.frames[1..];
    for (fp, fc) in frames.iter().zip(&c.frames[1..]) {
        assert_eq!(fp.time, fc.time, "records at the same times");
        let (tp, tc) = (fp.phi_total(nz), fc.phi_total(nz));
        sums[0] += tp.iter().zip(&tc).map(|(a, b)| (a - b).abs()).sum::<f64>() * dz / total_load;
        for i in 0..nc {
            let r = i * nz..(i + 1) * nz;
            sums[i + 1] += fp.phi_class[r.clone()]
                .iter()
                .zip(&fc.phi_class[r])
                .map(|(a, b)| (a - b).abs())
                .sum::<f64>()
                * dz
                / loads[i];
        }
    }
    sums.iter().map(|s| s / frames.len() as f64).collect()
}

/// Parcel counts: the default study, or a comma-separated list in
/// `TURBID_COMPARE_PARCELS` (e.g. to extend the table to 80 000), in
/// increasing order.
fn parcel_counts() -> Vec<u64> {
    let counts: Vec<u64> = match std::env::var("TURBID_COMPARE_PARCELS") {
        Ok(list) => list
            .split(',')
            .map(|s| {
                s.trim()
                    .parse()
                    .expect("TURBID_COMPARE_PARCELS: comma-separated parcel counts")
            })
            .collect(),
        Err(_) => PARCELS.to_vec(),
    };
    assert!(
        counts.len() >= 2 && counts.windows(2).all(|w| w[0] < w[1]),
        "parcel counts must increase: {counts:?}"
    );
    counts
}

/// Seed of the parcel runs (`TURBID_COMPARE_SEED`, default 5).
fn seed() -> u64 {
    std::env::var("TURBID_COMPARE_SEED").map_or(5, |s| s.parse().expect("TURBID_COMPARE_SEED"))
}

/// The noise scale of a binned parcel profile: a column full of suspension
/// whose N parcels fall into nz slabs with Poisson counts of mean λ = N/nz.
/// For large λ, E|X − λ| = √(2λ/π) (normal approximation; the mean absolute
/// deviation of a normal variable is σ √(2/π)), and each parcel carries
/// φ0 H/N of the load, so Σ_k E|X_k − λ| / N = √(2 nz/(π N)).
fn poisson_scale(parcels: f64, slabs: u32) -> f64 {
    (2.0 * slabs as f64 / (std::f64::consts::PI * parcels)).sqrt()
}

/// One row of the convergence table.
struct Row {
    parcels: u64,
    /// Time-averaged L1: one class; two classes total, class 0, class 1.
    mono: f64,
    pair: [f64; 3],
}

/// Runs both cases through both engines and checks that the particle
/// profiles converge to the continuum ones.
///
/// What the error is made of, at these counts: the parcel profile is a
/// histogram, so each slab's content fluctuates with the number of parcels
/// in it, a noise of order [`poisson_scale`] that falls as N^(−1/2); and the
/// kernel window (height b ∝ 1/N in this narrow column, 10 mm at 5 000
/// parcels, 2.5 mm at 20 000) smears the fronts over b, a systematic error
/// that falls as N^(−1) while b is more than a slab (4 mm). Measured (seed 5,
/// table in the closing note of issue 4): one class 0.152, 0.082, 0.040 at
/// 5k, 10k, 20k against a Poisson scale of 0.080, 0.056, 0.040; at 80 000,
/// 0.020 against 0.020. Three seeds at 10k and 20k gave the same figures
/// within 1 % (one class) and 4 % (the minority class).
///
/// Checks:
/// * (a) at the largest count every figure is below 1.5 times the Poisson
///   scale of its parcels (N for the totals, N × volume share for a class):
///   the noise part is at most that scale, because the suspension fills
///   fewer slabs as the bed grows and the bed's parcels sit in a fixed
///   stack, and the factor leaves room for the smeared fronts (measured
///   ratios at 20 000: 1.00, 0.66, 0.79, 0.95).
/// * (b) every figure falls from one count to the next (which at least
///   doubles it) by more than three times its seed-to-seed spread (~4 %):
///   to at most [`STEP_FALL`] = 0.88 of the previous one (measured per
///   doubling at 5k → 20k: 0.45–0.57); and from the first count to the last
///   at least as N^(−1/3), less steeply than the N^(−1/2) of pure binning
///   noise. The fall flattens beyond 20 000 parcels, because the kernel's
///   bias of order 1/nb at a fixed nb = 256 neighbours does not shrink with
///   N: measured 40k → 80k, 0.73–0.80 per doubling, and the class-0 figure
///   of the pair rising from 0.79 to 0.95 of its Poisson scale.
#[test]
fn particle_profiles_converge_to_the_continuum_profiles() {
    // The one-class interface reaches the bed at ≈ 280 s (Kynch shock
    // speeds), the two-class column has settled into one bed by ≈ 600 s
    // (continuum reference: interface within 3 mm of the bed height).
    let (mono_end, pair_end) = (330.0, 600.0);
    let records = 20.0;
    let mono_ref = continuum(&mono_yaml(
        Engine::Continuum {
            cells: REFERENCE_CELLS,
        },
        mono_end,
        mono_end / records,
    ));
    let pair_ref = continuum(&pair_yaml(
        Engine::Continuum {
            cells: REFERENCE_CELLS,
        },
        pair_end,
        pair_end / records,
    ));
    // Both references have settled by their end: interface within two slabs
    // of the bed.
    for (what, r) in [("one class", &mono_ref), ("two classes", &pair_ref)] {
        let f = r.frames.last().unwrap();
        assert!(
            f.interface_height - f.bed_height <= 2.0 * H / BINS as f64,
            "{what}: reference not settled at {} s (interface {:.4} m, bed {:.4} m)",
            f.time,
            f.interface_height,
            f.bed_height
        );
    }
    let share0 = PAIR.initial_fractions()[0] / PAIR.phi0;
    let mut rows: Vec<Row> = Vec::new();
    println!(
        "particle vs continuum ({REFERENCE_CELLS} cells), time-averaged L1 / load over {records} records, {BINS} slabs, {NEIGHBOURS} neighbours, seed {}",
        seed()
    );
    println!(
        "parcels | one class (Poisson scale) | two classes: total, class 0, class 1 | wall s: one, two classes"
    );
    for n in parcel_counts() {
        let engine = Engine::Particles {
            parcels: n,
            seed: seed(),
            neighbours: NEIGHBOURS,
        };
        // The two cases side by side, each on one thread.
        let ((mono, t_mono), (pair, t_pair)) = std::thread::scope(|s| {
            let a = s.spawn(|| particles(&mono_yaml(engine, mono_end, mono_end / records)));
            let b = particles(&pair_yaml(engine, pair_end, pair_end / records));
            (a.join().expect("one-class run"), b)
        });
        let (em, ep) = (l1(&mono, &mono_ref), l1(&pair, &pair_ref));
        println!(
            "{n:>7} | {:.4} ({:.4}) | {:.4}, {:.4}, {:.4} | {t_mono:.1}, {t_pair:.1}",
            em[0],
            poisson_scale(n as f64, BINS),
            ep[0],
            ep[1],
            ep[2]
        );
        rows.push(Row {
            parcels: n,
            mono: em[0],
            pair: [ep[0], ep[1], ep[2]],
        });
    }
    // (a) The bound at the largest count.
    let last = rows.last().unwrap();
    let n = last.parcels as f64;
    let bounds = [
        ("one class", last.mono, n),
        ("two classes, total", last.pair[0], n),
        ("two classes, class 0", last.pair[1], n * share0),
        ("two classes, class 1", last.pair[2], n * (1.0 - share0)),
    ];
    for (what, e, parcels) in bounds {
        let bound = 1.5 * poisson_scale(parcels, BINS);
        assert!(
            e <= bound,
            "{what}: L1 {e:.4} at {} parcels above 1.5 × the Poisson scale ({bound:.4})",
            last.parcels
        );
    }
    // (b) Falling with the parcel count.
    let figures = |r: &Row| {
        [
            ("one class", r.mono),
            ("two classes, total", r.pair[0]),
            ("two classes, class 0", r.pair[1]),
            ("two classes, class 1", r.pair[2]),
        ]
    };
    for w in rows.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        assert!(b.parcels >= 2 * a.parcels, "counts must at least double");
        for ((what, ea), (_, eb)) in figures(a).into_iter().zip(figures(b)) {
            assert!(
                eb <= STEP_FALL * ea,
                "{what}: L1 {ea:.4} at {} parcels → {eb:.4} at {}: fell by less than {STEP_FALL}",
                a.parcels,
                b.parcels
            );
        }
    }
    let (first, last) = (&rows[0], rows.last().unwrap());
    let limit = (first.parcels as f64 / last.parcels as f64).powf(1.0 / 3.0);
    for ((what, ea), (_, eb)) in figures(first).into_iter().zip(figures(last)) {
        assert!(
            eb <= limit * ea,
            "{what}: L1 {ea:.4} at {} parcels → {eb:.4} at {}: fell by less than (N₁/N₂)^(1/3) = {limit:.3}",
            first.parcels,
            last.parcels
        );
    }
}
