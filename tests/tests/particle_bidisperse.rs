//! Bidisperse batch settling in the particle engine against the
//! Masliyah–Lockett–Bassoon (MLB) model, evaluated independently here.
//!
//! Promise: in a uniform bidisperse suspension both classes start at the
//! velocities of the MLB formula (physics.md §4.1, batch closure), and the
//! slower class forms the upper zone that the jump conditions predict: above
//! the mixture, a layer of that class alone at the concentration fixed by the
//! Rankine–Hugoniot conditions across the mixture/upper-zone discontinuity,
//! bounded by the speeds those conditions give.
//!
//! Two cases of our own: an equal-density pair (coarse and fine beads) and an
//! unequal-density pair (a heavy and a light species of one size). Stokes drag
//! and one Richardson–Zaki exponent for both classes, so that the engine's
//! monodisperse velocities are exactly the v_St,i (1 − φ)^n of the papers'
//! form. The suspensions' MLB velocities and jump conditions are evaluated in
//! `turbid_validation::bidisperse`; nothing calls
//! `turbid_engine::physics::polydisperse`.

use std::time::Instant;
use turbid_engine::particles::{ParticleEngine, Silent};
use turbid_engine::record::RunRecord;
use turbid_validation::assert_rel;
use turbid_validation::bidisperse::{Engine, PHI_MAX, Pair, PairRun, first_reach};

/// Equal densities: 120 µm and 84 µm glass beads (δ₂ = 0.49), 70/30 by mass,
/// in a 10 mPa·s liquid (Re < 1e-3).
const EQUAL_DENSITY: Pair = Pair {
    name: "equal density (120 µm + 84 µm glass)",
    density: [2500.0, 2500.0],
    diameter: [120e-6, 84e-6],
    mass_share: [0.7, 0.3],
    phi0: 0.15,
    viscosity: 10e-3,
};

/// Unequal densities, one size: 80 µm grains of 3000 and 2000 kg/m³, 75/25 by
/// mass (so 2/3 and 1/3 by volume).
const UNEQUAL_DENSITY: Pair = Pair {
    name: "unequal density (80 µm, 3000 + 2000 kg/m³)",
    density: [3000.0, 2000.0],
    diameter: [80e-6, 80e-6],
    mass_share: [0.75, 0.25],
    phi0: 0.15,
    viscosity: 10e-3,
};

// ---------------------------------------------------------------- initial velocities

/// Mean first target velocity of each class over the parcels whose kernel
/// lies wholly inside the liquid, against MLB at the initial loadings.
///
/// Tolerance 2 %: the engine's kernel estimate of φ around a parcel carries
/// noise and a bias of order 1/N for N neighbours, and the mean of a
/// nonlinear function of a noisy φ is shifted by its curvature times the
/// variance. With 256 neighbours the mean is within 0.25 % here (about 1 %
/// at 64 neighbours); the 2 % also covers the sampling error of the mean over
/// the 5 000–10 000 parcels of each class away from the boundaries (~0.1 %).
fn check_initial_velocities(pair: &Pair) {
    let (w, depth, height) = (0.1, 0.1, 0.1);
    let run = PairRun {
        cross_section: format!(r#"{{ rectangular: {{ width: "{w} m", depth: "{depth} m" }} }}"#),
        height,
        end: 1000.0,
        interval: 1000.0,
        bins: 50,
        engine: Engine::Particles {
            parcels: 50_000,
            seed: 21,
            neighbours: 256,
        },
    };
    let (setup, text) = pair.setup(&run);
    let mut engine = ParticleEngine::new(&setup, &text, 1).unwrap();
    let (a, b) = engine.kernel_size();
    engine.step();
    let states = engine.parcel_states();
    let expected = pair.mlb(pair.initial_fractions());
    let mut report = Vec::new();
    for (c, &u) in expected.iter().enumerate() {
        let inner: Vec<f64> = states
            .iter()
            .filter(|p| {
                let [x, y, z] = p.position;
                p.class == c
                    && !p.resting
                    && x.abs() < 0.5 * w - a
                    && y.abs() < 0.5 * depth - a
                    && z > 2.0 * b
                    && z < height - 2.0 * b
            })
            .map(|p| p.target_velocity)
            .collect();
        assert!(
            inner.len() > 2000,
            "{}: class {c}: {} parcels",
            pair.name,
            inner.len()
        );
        let mean = inner.iter().sum::<f64>() / inner.len() as f64;
        report.push(format!(
            "class {c}: mean {mean:.5e} vs MLB {u:.5e} m/s ({:+.2} %, {} parcels)",
            100.0 * (mean - u) / u,
            inner.len()
        ));
        assert_rel(
            mean,
            u,
            0.02,
            &format!("{}: mean initial velocity of class {c} vs MLB", pair.name),
        );
    }
    println!("{} (initial): {}", pair.name, report.join("; "));
}

#[test]
fn equal_density_pair_starts_at_the_mlb_velocities() {
    check_initial_velocities(&EQUAL_DENSITY);
}

#[test]
fn unequal_density_pair_starts_at_the_mlb_velocities() {
    check_initial_velocities(&UNEQUAL_DENSITY);
}

// ---------------------------------------------------------------- upper zone

/// Run the pair in a narrow column to a time before the mixture's top meets
/// anything rising from the floor, and check the upper zone.
///
/// * The class-0 front (where class 0 reaches half its initial loading)
///   descends at u₁⁰ and the class-1 front (half of φ₂'') at v₂(1 − φ₂'')^n:
///   each mean speed within 3 % (the kernel bias of order 1/N, ~1 %, as for
///   the monodisperse interface).
/// * Between the two fronts, more than two kernel windows and two slabs from
///   either, class 1 is at φ₂'' within 4 % (binning noise: 100–170 class-1
///   parcels per slab, so up to ±10 % per slab and ±3 % over the 8–11 slabs
///   of the zone, plus the 1/N bias), and class 0 is absent (mean below 1 %
///   of φ₁⁰).
/// * Each class's volume is conserved at every record (N ε).
fn check_upper_zone(pair: &Pair) {
    let zone = pair.upper_zone();
    let phi = pair.initial_fractions();
    assert!(
        zone.upper_speed < zone.lower_speed,
        "{}: the zone would not open",
        pair.name
    );
    let height = 0.2;
    // Time at which the mixture's top would meet a sediment rising at the
    // mass-balance speed Σ φ_i u_i / (φmax − φ0): observe at half of it.
    let u = pair.mlb(phi);
    let rise = (phi[0] * u[0] + phi[1] * u[1]) / (PHI_MAX - pair.phi0);
    let t_obs = 0.5 * height / (zone.lower_speed + rise);
    let parcels = 30_000;
    let run = PairRun {
        cross_section: r#"{ round: { diameter: "20 mm" } }"#.into(),
        height,
        end: t_obs,
        interval: t_obs / 5.0,
        bins: 100,
        engine: Engine::Particles {
            parcels,
            seed: 22,
            neighbours: 256,
        },
    };
    let (setup, text) = pair.setup(&run);
    let start = Instant::now();
    let mut engine = ParticleEngine::new(&setup, &text, 1).unwrap();
    let window = engine.kernel_size().1;
    let record: RunRecord = engine.run(&mut Silent, None);
    let seconds = start.elapsed().as_secs_f64();
    let layout = &record.layout;
    let nz = layout.nz();
    let dz = height / nz as f64;

    // Class inventories.
    let rounding = parcels as f64 * f64::EPSILON;
    let suspension = layout.area * height;
    for f in &record.frames {
        for (c, (profile, phi_c)) in f.phi_class.chunks_exact(nz).zip(phi).enumerate() {
            let v: f64 = profile.iter().sum::<f64>() * layout.area * dz;
            let r = (v - phi_c * suspension).abs() / (phi_c * suspension);
            assert!(
                r <= rounding,
                "{}: class {c} volume {v:e} at t = {} vs φ_i A H (rel {r:.2e})",
                pair.name,
                f.time
            );
        }
    }

    let last = record.frames.last().unwrap();
    let t = last.time;
    let coarse = &last.phi_class[..nz];
    let fine = &last.phi_class[nz..];
    let front0 = first_reach(coarse, &layout.z, 0.5 * phi[0]);
    let front1 = first_reach(fine, &layout.z, 0.5 * zone.phi_zone);
    let speed0 = (height - front0) / t;
    let speed1 = (height - front1) / t;
    let margin = 2.0 * window.max(dz);
    let inside: Vec<usize> = (0..nz)
        .filter(|&k| layout.z[k] > front0 + margin && layout.z[k] < front1 - margin)
        .collect();
    let mean = |p: &[f64]| inside.iter().map(|&k| p[k]).sum::<f64>() / inside.len() as f64;
    let (zone_fine, zone_coarse) = (mean(fine), mean(coarse));
    println!(
        "{} (upper zone) at t = {t:.1} s, run {seconds:.1} s, window {:.2} mm:\n  \
         class-0 front {front0:.4} m, speed {speed0:.4e} vs u₁⁰ = {:.4e} m/s ({:+.2} %)\n  \
         class-1 front {front1:.4} m, speed {speed1:.4e} vs v₂(1 − φ₂'')^n = {:.4e} m/s ({:+.2} %)\n  \
         zone ({} slabs): class 1 at {zone_fine:.5} vs φ₂'' = {:.5} ({:+.2} %), class 0 at {zone_coarse:.2e} (φ₁⁰ = {:.3})",
        pair.name,
        1e3 * window,
        zone.lower_speed,
        100.0 * (speed0 - zone.lower_speed) / zone.lower_speed,
        zone.upper_speed,
        100.0 * (speed1 - zone.upper_speed) / zone.upper_speed,
        inside.len(),
        zone.phi_zone,
        100.0 * (zone_fine - zone.phi_zone) / zone.phi_zone,
        phi[0],
    );
    // The mixture is still there below the zone: the observation is early enough.
    assert!(
        front0 - margin > last.bed_height + 4.0 * margin,
        "{}: the mixture has nearly gone (front {front0:.4} m, bed {:.4} m)",
        pair.name,
        last.bed_height
    );
    assert!(
        inside.len() >= 4,
        "{}: only {} slabs in the zone",
        pair.name,
        inside.len()
    );
    assert_rel(
        speed0,
        zone.lower_speed,
        0.03,
        &format!("{}: class-0 front speed", pair.name),
    );
    assert_rel(
        speed1,
        zone.upper_speed,
        0.03,
        &format!("{}: class-1 front speed", pair.name),
    );
    assert_rel(
        zone_fine,
        zone.phi_zone,
        0.04,
        &format!("{}: class 1 in the upper zone", pair.name),
    );
    assert!(
        zone_coarse <= 0.01 * phi[0],
        "{}: class 0 in the upper zone at {zone_coarse:e}",
        pair.name
    );
}

#[test]
fn equal_density_fines_form_the_predicted_upper_zone() {
    check_upper_zone(&EQUAL_DENSITY);
}

#[test]
fn unequal_density_light_species_forms_the_predicted_upper_zone() {
    check_upper_zone(&UNEQUAL_DENSITY);
}
