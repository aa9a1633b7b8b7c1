//! Hydrodynamic dispersion in the particle engine: a random walk whose
//! displacement variance must grow as 2·D·t per axis (the exact result for
//! Brownian motion with diffusivity D, Einstein 1905).

use std::path::Path;
use turbid_engine::particles::ParticleEngine;
use turbid_engine::scenario;

#[test]
fn random_walk_variance_is_two_d_t() {
    // A very dilute suspension, so hindered settling and the return flow are
    // negligible: every parcel settles at v_t plus its random walk.
    let d: f64 = 2.0e-7; // m²/s
    let yaml = format!(
        r#"format: 1
fluid: {{ newtonian: {{ density: "1000 kg/m³", viscosity: "1 mPa·s" }} }}
solids:
  - name: beads
    density: "2500 kg/m³"
    size: {{ single: "20 µm" }}
vessel:
  column:
    height: "1.0 m"
    cross_section: {{ round: {{ diameter: "200 mm" }} }}
initial:
  loading: 1.0e-6
models:
  drag: stokes
run:
  end_time: "100 s"
  output_interval: "100 s"
  parcels: 40000
  seed: 5
numerics:
  dispersion: "{d} m²/s"
output:
  file: unused.h5
  height_bins: 10
"#
    );
    let setup = scenario::parse_str(&yaml, Path::new("dispersion.yaml")).unwrap();
    let v_t = setup.classes[0].terminal.velocity;
    let mut engine = ParticleEngine::new(&setup, &yaml, 2).unwrap();
    let start = engine.parcel_states();
    engine.run(&mut turbid_engine::particles::Silent, None);
    let end = engine.parcel_states();
    let t: f64 = 100.0;
    // Parcels far from the floor, the free surface and the wall (no reflections).
    let r_max = 0.1 - 6.0 * (2.0 * d * t).sqrt();
    let mut sum = [0.0; 3];
    let mut sum2 = [0.0; 3];
    let mut n = 0.0;
    for (a, b) in start.iter().zip(&end) {
        assert_eq!(a.id, b.id);
        let r0 = (a.position[0].powi(2) + a.position[1].powi(2)).sqrt();
        if a.position[2] < 0.3 || a.position[2] > 0.9 || r0 > r_max {
            continue;
        }
        for k in 0..3 {
            let mut dx = b.position[k] - a.position[k];
            if k == 2 {
                dx += v_t * t; // remove the settling drift
            }
            sum[k] += dx;
            sum2[k] += dx * dx;
        }
        n += 1.0;
    }
    assert!(n > 5000.0, "{n} parcels in the sample");
    for k in 0..3 {
        let mean = sum[k] / n;
        let var = sum2[k] / n - mean * mean;
        // Sample variance of n Gaussian displacements: relative standard error √(2/n) ≈ 1.7 %;
        // allow 4 standard errors plus the sub-percent drift error of the relaxing start.
        let expect = 2.0 * d * t;
        assert!(
            (var / expect - 1.0).abs() < 4.0 * (2.0 / n).sqrt() + 0.01,
            "axis {k}: variance {var:.4e} m², expected 2Dt = {expect:.4e} m²"
        );
        // No drift beyond settling: |mean| within 5 standard errors.
        assert!(
            mean.abs() < 5.0 * (expect / n).sqrt(),
            "axis {k}: mean {mean:.3e}"
        );
    }
}
