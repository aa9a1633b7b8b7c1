//! The particle engine against exact and independent references.
//!
//! Promise: a dilute parcel relaxes exactly as v_t (1 − e^(−t/τ)) to the
//! terminal velocity of its drag law; a monodisperse batch settles as the
//! exact Kynch (1952) solution says (interface speed, settling curve, final
//! bed), in a shock-only and in a fan case; the solids inventory is exact at
//! every record; and a run gives bit-identical records on 1 and 2 threads.
//!
//! Every reference here is computed in the test from the published formula
//! (Stokes' law, Richardson–Zaki, the exact Kynch solution of
//! `turbid_validation::kynch`) or is a check value of physics.md §9; nothing is
//! taken from the engine's own output. The bidisperse (MLB) checks are in
//! `particle_bidisperse.rs`.

use std::path::Path;
use std::sync::OnceLock;
use std::time::Instant;
use turbid_engine::particles::{ParcelState, ParticleEngine, Silent};
use turbid_engine::record::RunRecord;
use turbid_engine::scenario::{self, Setup};
use turbid_validation::assert_rel;
use turbid_validation::kynch::{BatchProblem, KynchSolution, RichardsonZaki, Structure};

/// Standard gravity, m/s² (CGPM 1901, exact; physics.md conventions).
const G: f64 = 9.80665;

/// A single-species batch column, written as scenario text.
#[derive(Debug, Clone)]
struct Column {
    /// `fluid:` entry, e.g. `water: { temperature: "20 °C" }`.
    fluid: String,
    /// Solid density, kg/m³, and particle diameter, µm.
    density: f64,
    diameter_um: f64,
    /// `models.drag` and `richardson_zaki.exponent` choices.
    drag: &'static str,
    exponent: &'static str,
    /// Initial volume fraction and packing limit.
    phi0: f64,
    phi_max: f64,
    /// Fill height, m, and diameter of the round column, mm.
    height: f64,
    column_mm: f64,
    parcels: u64,
    end: f64,
    interval: f64,
    bins: u32,
    seed: u64,
    /// Target number of parcels in the concentration kernel.
    neighbours: u32,
}

impl Column {
    fn yaml(&self) -> String {
        format!(
            r#"format: 1
title: validation column
fluid:
  {fluid}
solids:
  - name: beads
    density: "{density} kg/m³"
    size: {{ single: "{d} µm" }}
vessel:
  column:
    height: "{height} m"
    cross_section: {{ round: {{ diameter: "{column} mm" }} }}
initial:
  loading: {phi0:e}
models:
  drag: {drag}
  hindered:
    richardson_zaki: {{ exponent: {exponent} }}
  max_packing: {phi_max}
run:
  end_time: "{end:e} s"
  output_interval: "{interval:e} s"
  parcels: {parcels}
  seed: {seed}
numerics:
  neighbours: {neighbours}
output:
  file: out/validation.h5
  height_bins: {bins}
"#,
            fluid = self.fluid,
            density = self.density,
            d = self.diameter_um,
            height = self.height,
            column = self.column_mm,
            phi0 = self.phi0,
            drag = self.drag,
            exponent = self.exponent,
            phi_max = self.phi_max,
            end = self.end,
            interval = self.interval,
            parcels = self.parcels,
            seed = self.seed,
            bins = self.bins,
            neighbours = self.neighbours,
        )
    }

    fn setup(&self) -> (Setup, String) {
        let text = self.yaml();
        let setup = scenario::parse_str(&text, Path::new("validation.yaml"))
            .unwrap_or_else(|e| panic!("test scenario refused: {e}\n{text}"));
        (setup, text)
    }
}

// ---------------------------------------------------------------- 1. one dilute parcel

/// Follow dilute parcels from rest, one record every τ/4 up to 12 τ, and check
/// the velocity of every moving parcel against v_t (1 − e^(−t/τ)).
///
/// The engine relaxes v towards its target T over a step as
/// v ← T + (v − T) e^(−Δt/τ), exact for a constant T, so from rest
/// v(t) = T (1 − e^(−t/τ)) at every step end. In a suspension of volume
/// fraction φ_loc the target of a lone class is T = v_t (1 − φ_loc)^n
/// (Richardson–Zaki, the N = 1 reduction of MLB, physics.md §4.1), so
/// |T − v_t| ≤ n φ_loc v_t. With φ_loc ≤ 1e-6 that is below 1e-5 v_t, which is
/// the tolerance of the curve check.
fn relax_from_rest(column: &Column, v_terminal_reference: f64, what: &str) {
    let (probe, _) = column.setup();
    let class = &probe.classes[0];
    let (v_t, tau) = (class.terminal.velocity, class.relaxation_time);
    // Terminal velocity of the drag law (setup) against the reference.
    assert_rel(
        v_t,
        v_terminal_reference,
        5e-3,
        &format!("{what}: resolved terminal velocity"),
    );
    let mut col = column.clone();
    col.interval = tau / 4.0;
    col.end = 12.0 * tau;
    let (setup, text) = col.setup();
    let mut engine = ParticleEngine::new(&setup, &text, 1).unwrap();
    let n = col.parcels as usize;
    let mut worst_curve: f64 = 0.0;
    let mut steps = 0;
    while !engine.finished() {
        engine.step();
        steps += 1;
        let t = engine.time();
        if steps == 1 {
            // The Courant step is far longer than τ/4, so steps end on the
            // records: the first check is at an early time, t = τ/4.
            assert_rel(
                t,
                0.25 * tau,
                1e-12,
                &format!("{what}: end of the first step"),
            );
        }
        let expected = v_t * (1.0 - (-t / tau).exp());
        let states = engine.parcel_states();
        let moving: Vec<&ParcelState> = states.iter().filter(|p| !p.resting).collect();
        assert!(
            moving.len() >= n * 95 / 100,
            "{what}: only {} of {n} parcels still moving at t = {t:e} s",
            moving.len()
        );
        for p in moving {
            assert!(
                p.local_volume_fraction <= 1e-6,
                "{what}: parcel {} sees φ = {:e}, not dilute",
                p.id,
                p.local_volume_fraction
            );
            let err = (p.velocity - expected).abs() / v_t;
            worst_curve = worst_curve.max(err);
            assert!(
                err <= 1e-5,
                "{what}: parcel {} at t = {:.3} τ: v = {:e}, v_t(1 − e^(−t/τ)) = {expected:e} (error {err:.2e} v_t > 1e-5)",
                p.id,
                t / tau,
                p.velocity
            );
        }
    }
    assert!(steps >= 48, "{what}: {steps} steps");
    // After 12 relaxation times: every parcel at the terminal velocity of its
    // drag law (setup) and of the independent reference, within 0.5 %.
    let mut worst_terminal: f64 = 0.0;
    for p in engine.parcel_states().iter().filter(|p| !p.resting) {
        worst_terminal = worst_terminal.max(((p.velocity - v_t) / v_t).abs());
        assert_rel(
            p.velocity,
            v_t,
            5e-3,
            &format!("{what}: parcel {} vs setup terminal velocity", p.id),
        );
        assert_rel(
            p.velocity,
            v_terminal_reference,
            5e-3,
            &format!("{what}: parcel {} vs reference terminal velocity", p.id),
        );
    }
    println!(
        "{what}: v_t = {v_t:.6e} m/s (reference {v_terminal_reference:.6e}), τ = {tau:.4e} s; \
         worst |v − v_t(1−e^(−t/τ))|/v_t = {worst_curve:.2e}; worst |v − v_t|/v_t at 12 τ = {worst_terminal:.2e}"
    );
}

#[test]
fn dilute_parcels_reach_the_stokes_velocity_along_the_exponential() {
    // A viscous liquid keeps Re ≈ 1e-5, where Stokes' law is exact.
    let (rho_f, mu, rho_p, d) = (1150.0, 20e-3, 2500.0, 150e-6);
    let column = Column {
        fluid: format!(
            r#"newtonian: {{ density: "{rho_f} kg/m³", viscosity: "{} mPa·s" }}"#,
            mu * 1e3
        ),
        density: rho_p,
        diameter_um: d * 1e6,
        drag: "stokes",
        exponent: "auto",
        phi0: 1e-8, // 1e-6 vol%
        phi_max: 0.6,
        height: 0.1,
        column_mm: 50.0,
        parcels: 200,
        end: 1.0,
        interval: 1.0,
        bins: 20,
        seed: 1,
        neighbours: 64,
    };
    // Stokes (physics.md §1.2): v = (ρp − ρf) g d² / (18 μ).
    let v_stokes = (rho_p - rho_f) * G * d * d / (18.0 * mu);
    // Creeping-flow relaxation time with added mass (½ ρf V):
    // (ρp + ½ρf) V dv/dt = (ρp − ρf) g V − 3πμ d v ⇒ τ = (ρp + ½ρf) d² / (18 μ).
    let tau_stokes = (rho_p + 0.5 * rho_f) * d * d / (18.0 * mu);
    let (setup, _) = column.setup();
    assert_rel(
        setup.classes[0].terminal.velocity,
        v_stokes,
        1e-12,
        "Stokes terminal velocity, closed form",
    );
    assert_rel(
        setup.classes[0].relaxation_time,
        tau_stokes,
        1e-12,
        "Stokes relaxation time, closed form",
    );
    relax_from_rest(&column, v_stokes, "Stokes drag");
}

#[test]
fn dilute_parcels_reach_the_clift_grace_weber_velocity_along_the_exponential() {
    // 100 µm quartz in water at 20 °C, Re ≈ 0.8, drag law chosen by shape
    // (spheres → Clift, Grace & Weber 1978).
    let column = Column {
        fluid: r#"water: { temperature: "20 °C" }"#.into(),
        density: 2650.0,
        diameter_um: 100.0,
        drag: "auto",
        exponent: "auto",
        phi0: 1e-8,
        phi_max: 0.6,
        height: 0.1,
        column_mm: 50.0,
        parcels: 200,
        end: 1.0,
        interval: 1.0,
        bins: 20,
        seed: 2,
        neighbours: 64,
    };
    // physics.md §9 #13: v_t of 100 µm quartz in water at 20 °C (Clift), 8.093e-3 m/s, tol 5e-3 [O].
    relax_from_rest(&column, 8.093e-3, "Clift–Grace–Weber drag");
}

// ---------------------------------------------------------------- 2. Kynch batch settling

/// Parcels and kernel neighbours of the Kynch runs.
///
/// The kernel estimate of φ carries an error of order 1/N for N neighbours
/// (a correlation hole in front of each parcel, and the curvature of
/// (1 − φ)^n acting on the estimate's noise), and both make hindered settling
/// fast by an amount that grows with φ. Measured on the fan case (φ0 = 0.30):
/// interface speed +6.1 % at 64 neighbours, +2.8–3.1 % at 128 (the default),
/// +0.2–0.8 % at 256. 256 neighbours keep the 3 % acceptance with a margin;
/// 30 000 parcels in a narrow column then give a window b = 256 H / 30 000
/// ≈ 2.6 mm along gravity.
const KYNCH_PARCELS: u64 = 30_000;
const KYNCH_NEIGHBOURS: u32 = 256;

/// A monodisperse batch run with its exact Kynch solution.
struct KynchRun {
    name: &'static str,
    setup: Setup,
    exact: KynchSolution,
    record: RunRecord,
    /// Parcels after the first step.
    first_step: Vec<ParcelState>,
    /// Column diameter, m.
    diameter: f64,
    /// Height of the kernel window along gravity, m.
    window: f64,
    seconds: f64,
}

impl KynchRun {
    fn run(name: &'static str, mut column: Column) -> KynchRun {
        let (probe, _) = column.setup();
        let class = &probe.classes[0];
        // The engine's resolved v_t and n in the exact solution.
        let exact = KynchSolution::new(
            RichardsonZaki::new(class.terminal.velocity, class.exponent),
            BatchProblem {
                phi0: column.phi0,
                height: column.height,
                phi_max: column.phi_max,
            },
        )
        .unwrap();
        let t_final = exact.final_time();
        assert!(t_final.is_finite(), "{name}: the interface must stop");
        column.end = 1.3 * t_final;
        column.interval = column.end / 50.0;
        let (setup, text) = column.setup();
        let start = Instant::now();
        let mut engine = ParticleEngine::new(&setup, &text, 1).unwrap();
        let window = engine.kernel_size().1;
        engine.step();
        let first_step = engine.parcel_states();
        let record = engine.run(&mut Silent, None);
        KynchRun {
            name,
            setup,
            exact,
            record,
            first_step,
            diameter: column.column_mm * 1e-3,
            window,
            seconds: start.elapsed().as_secs_f64(),
        }
    }
}

/// φ0 = 0.10: below the flux inflection, the sediment grows as one shock.
/// Water at 20 °C, 50 µm glass, drag and exponent chosen by the engine.
fn shock_case() -> &'static KynchRun {
    static RUN: OnceLock<KynchRun> = OnceLock::new();
    RUN.get_or_init(|| {
        KynchRun::run(
            "shock-only (φ0 = 0.10)",
            Column {
                fluid: r#"water: { temperature: "20 °C" }"#.into(),
                density: 2500.0,
                diameter_um: 50.0,
                drag: "auto",
                exponent: "auto",
                phi0: 0.10,
                phi_max: 0.6,
                height: 0.3,
                column_mm: 20.0,
                parcels: KYNCH_PARCELS,
                end: 1.0,
                interval: 1.0,
                bins: 100,
                seed: 3,
                neighbours: KYNCH_NEIGHBOURS,
            },
        )
    })
}

/// φ0 = 0.30, φmax = 0.64: the chord to (φmax, 0) cuts the convex part of f,
/// so a fan opens between two shocks. With φmax = 0.64 the fan moves the
/// settling curve off the straight line by up to 2.5 % of H (0.6 % at 0.6),
/// enough to be seen through the binning. Stokes drag in a viscous liquid.
fn fan_case() -> &'static KynchRun {
    static RUN: OnceLock<KynchRun> = OnceLock::new();
    RUN.get_or_init(|| {
        KynchRun::run(
            "fan (φ0 = 0.30)",
            Column {
                fluid: r#"newtonian: { density: "1000 kg/m³", viscosity: "10 mPa·s" }"#.into(),
                density: 2500.0,
                diameter_um: 100.0,
                drag: "stokes",
                exponent: "auto",
                phi0: 0.30,
                phi_max: 0.64,
                height: 0.3,
                column_mm: 20.0,
                parcels: KYNCH_PARCELS,
                end: 1.0,
                interval: 1.0,
                bins: 100,
                seed: 4,
                neighbours: KYNCH_NEIGHBOURS,
            },
        )
    })
}

/// Least-squares slope of y(x).
fn slope(points: &[(f64, f64)]) -> f64 {
    let n = points.len() as f64;
    let (mx, my) = points
        .iter()
        .fold((0.0, 0.0), |(a, b), (x, y)| (a + x / n, b + y / n));
    let sxy: f64 = points.iter().map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = points.iter().map(|(x, _)| (x - mx) * (x - mx)).sum();
    sxy / sxx
}

/// The acceptance checks shared by both Kynch cases.
fn check_against_kynch(run: &KynchRun, structure: Structure) {
    let name = run.name;
    let class = &run.setup.classes[0];
    let (v_t, n) = (class.terminal.velocity, class.exponent);
    let (phi0, phi_max, h) = (
        run.setup.initial_volume_fraction,
        run.setup.max_packing,
        run.setup.column.height,
    );
    let exact = &run.exact;
    assert_eq!(exact.structure(), structure, "{name}: wave structure");
    let t1 = exact.first_critical_time();

    // (a) Each moving parcel's first target is the Richardson–Zaki velocity
    // at its own kernel estimate, v_t (1 − φ_loc)^n (RZ 1954 eq. 28; MLB with
    // one class reduces to it exactly, physics.md §4.1): round-off only.
    let mut checked = 0;
    for p in run.first_step.iter().filter(|p| !p.resting) {
        let rz = v_t * (1.0 - p.local_volume_fraction).powf(n);
        assert!(
            (p.target_velocity - rz).abs() <= 1e-12 * rz,
            "{name}: parcel {} at φ = {}: target {:e} vs v_t(1 − φ)^n = {rz:e}",
            p.id,
            p.local_volume_fraction,
            p.target_velocity
        );
        checked += 1;
    }
    assert!(checked > run.first_step.len() / 2);

    // (b) Interface speed over the straight part, before the first critical
    // time: v_t (1 − φ0)^n (physics.md §5.2 item 1).
    let early: Vec<(f64, f64)> = run
        .record
        .frames
        .iter()
        .filter(|f| f.time >= 0.1 * t1 && f.time <= 0.8 * t1)
        .map(|f| (f.time, f.interface_height))
        .collect();
    assert!(
        early.len() >= 10,
        "{name}: {} records in the fit",
        early.len()
    );
    let v_interface = -slope(&early);
    let v_rz = v_t * (1.0 - phi0).powf(n);
    assert_rel(
        v_rz,
        exact.initial_settling_velocity(),
        1e-12,
        "RZ v(φ0) in the exact solution",
    );
    let slope_err = (v_interface - v_rz) / v_rz;

    // (c) Final bed height φ0 H / φmax (mass balance, physics.md §5.3).
    let last = run.record.frames.last().unwrap();
    assert!(last.time > exact.final_time());
    let h_final = phi0 * h / phi_max;
    let bed_err = (last.bed_height - h_final) / h_final;
    // The recorded interface is found between slab centres, so it locates the
    // bed surface only to within one slab.
    let dz = h / run.record.layout.nz() as f64;
    let final_interface_err = last.interface_height - h_final;

    // (d) Settling curve against the exact curve at every record. The
    // sediment surface too: the engine's bed holds only parcels at rest, and
    // the sediment shock above it is smeared over about one kernel window b,
    // so the bed surface is allowed 3 % of H plus 2 b.
    let bed_tol = 0.03 + 2.0 * run.window / h;
    let mut worst_curve = (0.0, 0.0);
    let mut worst_bed = (0.0, 0.0);
    for f in &run.record.frames {
        let e = (f.interface_height - exact.interface_height(f.time)) / h;
        let b = (f.bed_height - exact.bed_height(f.time)) / h;
        if e.abs() > f64::abs(worst_curve.0) {
            worst_curve = (e, f.time);
        }
        if b.abs() > f64::abs(worst_bed.0) {
            worst_bed = (b, f.time);
        }
    }
    println!(
        "{name}: v_t = {v_t:.5e} m/s, n = {n:.4}, structure {:?}, critical times {:?} s, {} records, run {:.1} s\n  \
         interface speed {v_interface:.5e} vs v_t(1 − φ0)^n = {v_rz:.5e} m/s ({:+.2} %, tol 3 %)\n  \
         final bed {:.5} vs φ0H/φmax = {h_final:.5} m ({:+.2} %, tol 3 %); final interface off by {:+.2} mm (tol one slab, {:.1} mm)\n  \
         worst settling-curve error {:+.2} % of H at t = {:.0} s (tol 3 %); worst bed-surface error {:+.2} % of H at t = {:.0} s (tol {:.1} %)",
        exact.structure(),
        exact.critical_times(),
        run.record.frames.len(),
        run.seconds,
        100.0 * slope_err,
        last.bed_height,
        100.0 * bed_err,
        1e3 * final_interface_err,
        1e3 * dz,
        100.0 * worst_curve.0,
        worst_curve.1,
        100.0 * worst_bed.0,
        worst_bed.1,
        100.0 * bed_tol,
    );
    assert_rel(
        v_interface,
        v_rz,
        0.03,
        &format!("{name}: interface speed vs v_t(1 − φ0)^n"),
    );
    assert_rel(
        last.bed_height,
        h_final,
        0.03,
        &format!("{name}: final bed height"),
    );
    assert!(
        final_interface_err.abs() <= dz,
        "{name}: final interface {:.5} m vs φ0H/φmax = {h_final:.5} m",
        last.interface_height
    );
    assert!(
        f64::abs(worst_curve.0) <= 0.03,
        "{name}: settling curve off the exact one by {:+.2} % of H at t = {:.1} s",
        100.0 * worst_curve.0,
        worst_curve.1
    );
    assert!(
        f64::abs(worst_bed.0) <= bed_tol,
        "{name}: bed surface off the exact one by {:+.2} % of H at t = {:.1} s",
        100.0 * worst_bed.0,
        worst_bed.1
    );
}

#[test]
fn batch_settling_matches_kynch_shock_only() {
    check_against_kynch(shock_case(), Structure::ShockOnly);
}

#[test]
fn batch_settling_matches_kynch_with_a_fan() {
    let run = fan_case();
    check_against_kynch(run, Structure::ShockFanShock);
    // Inside the fan the interface slows down: where the exact curve departs
    // from the straight line H − v(φ0) t (continued down to the final height)
    // by more than 1 % of H, the measured curve must lie closer to the exact
    // one. A run without the fan would follow the straight line.
    let exact = &run.exact;
    let h = run.setup.column.height;
    let v0 = exact.initial_settling_velocity();
    let (t1, tf) = (exact.first_critical_time(), exact.final_time());
    let mut inside = 0;
    for f in run
        .record
        .frames
        .iter()
        .filter(|f| f.time > t1 && f.time < tf)
    {
        let curve = exact.interface_height(f.time);
        let line = (h - v0 * f.time).max(exact.final_height());
        if (curve - line).abs() <= 0.01 * h {
            continue;
        }
        inside += 1;
        let (to_curve, to_line) = (
            (f.interface_height - curve).abs(),
            (f.interface_height - line).abs(),
        );
        println!(
            "fan at t = {:.1} s: measured {:.4} m, exact {curve:.4} m, straight line {line:.4} m",
            f.time, f.interface_height
        );
        assert!(
            to_curve < to_line,
            "at t = {:.1} s the interface ({:.4} m) is closer to the no-fan line ({line:.4} m) than to the exact curve ({curve:.4} m)",
            f.time,
            f.interface_height
        );
    }
    assert!(inside >= 3, "only {inside} records where the fan shows");
}

// ---------------------------------------------------------------- 3. conservation

#[test]
fn solids_volume_is_conserved_at_every_record() {
    for run in [shock_case(), fan_case()] {
        let name = run.name;
        let layout = &run.record.layout;
        let nz = layout.nz();
        let first = run.record.frames[0].solids_volume;
        // Exact inventory: φ0 times the suspension volume π D²/4 · H
        // (physics.md §9 #32). The engine sums N parcel volumes (in parcel
        // order for the total, slab by slab for the profiles): N ε bounds
        // the rounding of either sum.
        let rounding = run.first_step.len() as f64 * f64::EPSILON;
        let area = std::f64::consts::PI * run.diameter * run.diameter / 4.0;
        assert_rel(
            layout.area,
            area,
            1e-12,
            &format!("{name}: cross-section π D²/4"),
        );
        let inventory = run.setup.initial_volume_fraction * area * run.setup.column.height;
        let r = (first - inventory).abs() / inventory;
        assert!(
            r <= rounding,
            "{name}: initial solids volume {first:e} vs φ0 A H = {inventory:e} (rel {r:.2e} > N ε = {rounding:.2e})"
        );
        let (mut worst_total, mut worst_profile): (f64, f64) = (0.0, 0.0);
        for f in &run.record.frames {
            // The same parcels at every record: equal to round-off.
            let r = (f.solids_volume - first).abs() / first;
            worst_total = worst_total.max(r);
            assert!(
                r <= 1e-12,
                "{name}: solids volume {:e} at t = {} vs {first:e} at t = 0 (rel {r:e})",
                f.solids_volume,
                f.time
            );
            // Σ_class Σ_k φ A Δz over the recorded profiles.
            let mut profile = 0.0;
            for c in 0..layout.nclasses() {
                for k in 0..nz {
                    let dz = layout.z_edges[k + 1] - layout.z_edges[k];
                    profile += f.phi_class[c * nz + k] * layout.area * dz;
                }
            }
            let r = (profile - f.solids_volume).abs() / f.solids_volume;
            worst_profile = worst_profile.max(r);
            assert!(
                r <= rounding,
                "{name}: Σ φ A Δz = {profile:e} vs solids volume {:e} at t = {} (rel {r:.2e} > N ε = {rounding:.2e})",
                f.solids_volume,
                f.time
            );
        }
        println!(
            "{name}: {} records; |V(0) − φ0 A H|/V = {:.2e} (tol N ε = {rounding:.1e}); worst |V(t) − V(0)|/V = {worst_total:.2e} (tol 1e-12); \
             worst |Σ φ A Δz − V|/V = {worst_profile:.2e} (tol N ε)",
            run.record.frames.len(),
            (first - inventory).abs() / inventory,
        );
    }
}

// ---------------------------------------------------------------- 5. threads

/// A small bidisperse run with dispersion (random walk), so that the MLB
/// mixture terms and the random streams are all exercised.
const THREADS_SCENARIO: &str = r#"format: 1
title: thread reproducibility
fluid:
  water: { temperature: "15 °C" }
solids:
  - name: heavy
    density: "4000 kg/m³"
    size: { single: "70 µm" }
    mass_share: 0.7
  - name: light
    density: "1800 kg/m³"
    size: { log_normal: { median: "40 µm", geometric_sd: 1.5 } }
    size_classes: 3
    mass_share: 0.3
vessel:
  column:
    height: "0.15 m"
    cross_section: { rectangular: { width: "30 mm", depth: "20 mm" } }
initial:
  loading: "12 vol%"
models:
  max_packing: 0.6
run:
  end_time: "60 s"
  output_interval: "5 s"
  parcels: 6000
  seed: 99
numerics:
  dispersion: "2e-9 m²/s"
output:
  file: out/threads.h5
  height_bins: 60
"#;

fn run_with_threads(threads: usize) -> (RunRecord, Vec<ParcelState>) {
    let setup = scenario::parse_str(THREADS_SCENARIO, Path::new("threads.yaml")).unwrap();
    let mut engine = ParticleEngine::new(&setup, THREADS_SCENARIO, threads).unwrap();
    let record = engine.run(&mut Silent, None);
    (record, engine.parcel_states())
}

#[test]
fn records_are_bit_identical_on_one_and_two_threads() {
    let (a, pa) = run_with_threads(1);
    let (b, pb) = run_with_threads(2);
    // Not a vacuous comparison: the run has settled visibly.
    let last = a.frames.last().unwrap();
    assert_eq!(a.frames.len(), 13);
    assert!(
        last.interface_height < 0.14 && last.bed_height > 0.0,
        "{last:?}"
    );
    assert_eq!(a.layout, b.layout);
    assert_eq!(a.frames.len(), b.frames.len());
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<u64>>();
    for (i, (fa, fb)) in a.frames.iter().zip(&b.frames).enumerate() {
        let scalars = |f: &turbid_engine::record::Frame| {
            bits(&[f.time, f.interface_height, f.bed_height, f.solids_volume])
        };
        assert_eq!(
            scalars(fa),
            scalars(fb),
            "frame {i}: time, interface, bed or solids differ"
        );
        assert_eq!(
            bits(&fa.phi_class),
            bits(&fb.phi_class),
            "frame {i}: profiles differ"
        );
    }
    assert_eq!(pa.len(), pb.len());
    for (p, q) in pa.iter().zip(&pb) {
        let state = |s: &ParcelState| {
            let mut v = bits(&s.position);
            v.extend(bits(&[
                s.velocity,
                s.target_velocity,
                s.local_volume_fraction,
                s.volume,
            ]));
            (s.id, s.class, s.resting, v)
        };
        assert_eq!(state(p), state(q), "parcel {} differs", p.id);
    }
    println!(
        "threads: {} frames and {} parcels bit-identical on 1 and 2 threads (final interface {:.4} m, bed {:.4} m)",
        a.frames.len(),
        pa.len(),
        last.interface_height,
        last.bed_height
    );
}
