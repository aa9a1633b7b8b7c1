//! The Kynch construction recovers the batch flux a settling curve was made
//! with.
//!
//! Promise: a settling curve produced by the continuum engine (one class,
//! Vesilind law, a loading below the inflection so a rarefaction fan reaches
//! the interface) gives back, by the Kynch construction of
//! `analysis::curve`, the flux G_b(C) = C v0 e^(−kC) of the law within 2 %
//! over the concentrations the fan brings to the interface during the run;
//! and the initial settling velocity and C0, H0 of the record. The range is
//! taken from the exact solution of the same problem (tests/src/kynch.rs):
//! from the top of the shock C0 → C_a that ends the constant-rate period
//! (below C_a a test only shows the chord of that shock, see the
//! `analysis::curve` docs) to the interface concentration at the end of the
//! run. The flux to compare with is the published formula evaluated here.
//!
//! Parameters are invented (an activated-sludge-like slurry).

use std::path::Path;
use turbid_engine::analysis::curve::{SettlingCurve, Smoothing, kynch};
use turbid_engine::analysis::sizing::BatchFluxCurve;
use turbid_engine::continuum::ContinuumEngine;
use turbid_engine::particles::Silent;
use turbid_engine::scenario;
use turbid_validation::assert_rel;
use turbid_validation::kynch::{BatchProblem, FnFluxWithDerivative, KynchSolution, WaveKind};

const V0: f64 = 6.0 / 3600.0; // m/s
const K: f64 = 0.45; // m³/kg
const RHO_S: f64 = 1050.0; // kg/m³
const PHI_MAX: f64 = 0.02;
const C0: f64 = 3.5; // kg/m³
const H0: f64 = 0.4; // m
const END: f64 = 1800.0; // s

fn scenario_text(cells: usize) -> String {
    format!(
        r#"format: 1
title: invented sludge column for the Kynch construction
fluid:
  newtonian: {{ density: "1000 kg/m³", viscosity: "1 mPa·s" }}
solids:
  - name: sludge flocs
    density: "{RHO_S} kg/m³"
    size: {{ single: "100 µm" }}
vessel:
  column:
    height: "{H0} m"
    cross_section: {{ round: {{ diameter: "70 mm" }} }}
initial:
  loading: "{C0} g/L"
models:
  hindered:
    vesilind: {{ v0: "6 m/h", k: "0.45 L/g" }}
  max_packing: {PHI_MAX}
run:
  end_time: "{END} s"
  output_interval: "10 s"
  parcels: 1000
  engine: continuum
numerics:
  cells: {cells}
output:
  file: out/kynch.h5
  height_bins: {cells}
"#
    )
}

fn g_b(c: f64) -> f64 {
    c * V0 * (-K * c).exp()
}

#[test]
fn kynch_construction_recovers_the_vesilind_flux_from_a_continuum_run() {
    let cells = 800;
    let text = scenario_text(cells);
    let setup = scenario::parse_str(&text, Path::new("kynch.yaml")).expect("scenario");
    let record = ContinuumEngine::new(&setup, &text)
        .expect("engine")
        .run(&mut Silent, None);
    let curve = SettlingCurve::from_record(&record).unwrap();
    // The record's C0 and H0 are the scenario's.
    assert_rel(curve.initial_concentration, C0, 1e-12, "C0 from the record");
    assert_rel(curve.initial_height, H0, 1e-12, "H0 from the record");

    // The exact solution: where the fan starts and what reaches the
    // interface by the end.
    let a = K * RHO_S;
    let sol = KynchSolution::new(
        FnFluxWithDerivative {
            flux: move |phi: f64| phi * V0 * (-a * phi).exp(),
            dflux: move |phi: f64| V0 * (-a * phi).exp() * (1.0 - a * phi),
        },
        BatchProblem {
            phi0: C0 / RHO_S,
            height: H0,
            phi_max: PHI_MAX,
        },
    )
    .unwrap();
    let fan = sol
        .waves()
        .iter()
        .find(|w| w.kind == WaveKind::Fan)
        .expect("a fan for a loading below the inflection 2/k");
    let c_a = fan.phi_above * RHO_S;
    let c_end = sol.interface_concentration(END) * RHO_S;
    println!(
        "fan from C_a = {c_a:.4} kg/m3; at the end ({END} s) C = {c_end:.4} kg/m3; t1 = {:.1} s",
        sol.first_critical_time()
    );

    for w in [3usize, 5] {
        let k = kynch(&curve, Smoothing { half_window: w }, None).unwrap();
        // Initial settling velocity: v(C0) = v0 e^(−k C0).
        let v_c0 = V0 * (-K * C0).exp();
        assert_rel(
            k.points[1].settling_velocity,
            v_c0,
            0.01,
            "initial settling velocity",
        );
        let (lo, hi) = k.covered_range().unwrap();
        println!(
            "half-window {w}: covered {lo:.4} – {hi:.4} kg/m3 ({} points)",
            k.points.len()
        );
        // The construction reaches at least 95 % of the exact end concentration.
        assert!(
            hi >= c_a + 0.95 * (c_end - c_a),
            "covered up to {hi}, exact {c_end}"
        );
        let mut worst = (0.0f64, 0.0);
        let mut compared = 0;
        for p in &k.points {
            if p.concentration > 1.01 * c_a && p.concentration <= c_end {
                let e = (p.flux - g_b(p.concentration)) / g_b(p.concentration);
                if e.abs() > worst.0.abs() {
                    worst = (e, p.concentration);
                }
                compared += 1;
            }
        }
        println!(
            "half-window {w}: {compared} points, worst flux error {:+.3} % at C = {:.4} kg/m3",
            100.0 * worst.0,
            worst.1
        );
        assert!(compared > 100, "{compared}");
        assert!(
            worst.0.abs() < 0.02,
            "flux error {} at {}",
            worst.0,
            worst.1
        );

        // The table a sizing would use interpolates the same flux.
        let table = BatchFluxCurve::from_kynch(&k).unwrap();
        let c_mid = 0.5 * (c_a + c_end);
        assert_rel(
            table.flux(c_mid),
            g_b(c_mid),
            0.02,
            "tabulated flux mid-fan",
        );
    }
}
