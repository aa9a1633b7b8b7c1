//! Thickener sizing against a hand-derived tangent solution.
//!
//! Promise: for a Vesilind batch flux the limiting flux of the Yoshioka
//! tangent and the Coe–Clevenger unit area agree with each other and with
//! the closed-form tangent point derived below, from the law and from a
//! table of it; the state-point check reads a tank sized on that tangent as
//! critically loaded, a larger one as underloaded and a smaller one as
//! overloaded, with the clarification ratio the law gives; Talmage–Fitch on
//! the exact Kynch settling curve of the same flux (tests/src/kynch.rs, an
//! independent construction) gives the area derived below, and the Oltmann
//! construction the area its geometry gives.
//!
//! # The tangent for a Vesilind flux (own algebra)
//!
//! G_b(C) = C v0 e^(−kC), so G_b′(C) = v0 e^(−kC)(1 − kC). The line from
//! (C_u, 0) touches G_b at C where G_b′(C)(C_u − C) + G_b(C) = 0:
//!
//! ```text
//!   (1 − kC)(C_u − C) + C = 0
//!   C_u − C − kC·C_u + kC² + C = 0
//!   k C² − k C_u C + C_u = 0
//!   C = [C_u ± √(C_u² − 4 C_u/k)] / 2          (real for C_u ≥ 4/k)
//! ```
//!
//! The larger root lies on the convex branch (C ≥ C_u/2 ≥ 2/k, beyond the
//! inflection 2/k); the smaller one is a maximum of G_b/(C_u − C). With the
//! feed above the smaller root, G_b/(C_u − C) falls from C_f to
//! C_L = the larger root and rises beyond, so
//!
//! ```text
//!   u = G_b(C_L)/(C_u − C_L),   G_L = u C_u,   unit area = 1/G_L.
//! ```
//!
//! # Talmage–Fitch on an exact curve (own algebra)
//!
//! The tangent at time t of a Kynch settling curve has intercept
//! h_I = C0 H0/C(t) and slope −v(C(t)) (physics.md §5.2 item 5). It meets
//! H_u = C0 H0/C_u at t_u = (h_I − H_u)/v = C0 H0 (1/C − 1/C_u)/v(C), so the
//! unit area t_u/(C0 H0) is the Coe–Clevenger term at C = C(t). Taking the
//! compression point where C(t) = C_L therefore gives exactly 1/G_L. Inside
//! a fan, t (f − φ f′) = φ0 H (physics.md §5.2 item 5); for Vesilind
//! f − φ f′ = φ² v0 kρs e^(−kρsφ), so in mass terms that point is at
//! t_L = C0 H0 / (C_L² k v(C_L)). There, since C² k v = G_b − C G_b′ =
//! G_b + C u = u C_u at the tangent point, t_L = C0 H0/(u C_u) and the
//! interface height h = −G_b′(C_L) t_L = u t_L = H_u: the curve itself passes
//! through (t_L, H_u), so t_u = t_L whatever the slope. At any other
//! earlier compression time t_c in the fan (h_c above H_u) the tangent
//! matters, and the unit area must be the Coe–Clevenger term at the exact
//! C(t_c), below 1/G_L. For a later one (h_c below H_u) Talmage–Fitch reads
//! t_u where the curve itself crosses H_u, which is t_L again.
//!
//! All parameters are invented (an activated-sludge-like slurry).

use turbid_engine::analysis::curve::{
    CompressionMethod, CompressionPoint, SettlingCurve, SmoothCurve, Smoothing, compression_point,
};
use turbid_engine::analysis::sizing::{
    BatchFluxCurve, DesignBasis, LoadingVerdict, TankOperation, coe_clevenger, oltmann,
    state_point, talmage_fitch, yoshioka,
};
use turbid_engine::analysis::{AnalysisError, CAUTION};
use turbid_engine::physics::hindered::HinderedLaw;
use turbid_validation::assert_rel;
use turbid_validation::kynch::{BatchProblem, FnFluxWithDerivative, KynchSolution};

/// Vesilind v0 = 6 m/h, k = 0.45 L/g (= m³/kg), inside the typical municipal
/// range of physics.md §3.4 [M]; invented.
const V0: f64 = 6.0 / 3600.0;
const K: f64 = 0.45;
/// Floc density and packing limit: ρs φmax = 21 kg/m³ (invented).
const RHO_S: f64 = 1050.0;
const PHI_MAX: f64 = 0.02;
/// Feed and target underflow, kg/m³ (C_u ≥ 4/k = 8.89 so a tangent exists).
const C_F: f64 = 3.5;
const C_U: f64 = 10.0;

fn law() -> BatchFluxCurve {
    BatchFluxCurve::law(
        HinderedLaw::Vesilind {
            v0: V0,
            k: K,
            solid_density: RHO_S,
        },
        0.0,
        PHI_MAX,
        RHO_S,
    )
}

fn g_b(c: f64) -> f64 {
    c * V0 * (-K * c).exp()
}

/// Closed-form tangent (module docs): (C_L, u, G_L).
fn tangent() -> (f64, f64, f64) {
    let disc = C_U * C_U - 4.0 * C_U / K;
    let small = 0.5 * (C_U - disc.sqrt());
    let c_l = 0.5 * (C_U + disc.sqrt());
    // The feed lies between the two roots, as the derivation requires.
    assert!(small < C_F && C_F < c_l, "{small} < {C_F} < {c_l}");
    let u = g_b(c_l) / (C_U - c_l);
    (c_l, u, u * C_U)
}

fn basis() -> DesignBasis {
    DesignBasis {
        feed_solids: 1000.0 / 3600.0 * C_F, // 1000 m³/h of feed
        feed_concentration: C_F,
        underflow_concentration: C_U,
    }
}

#[test]
fn yoshioka_and_coe_clevenger_agree_with_the_tangent_for_a_vesilind_flux() {
    let (c_l, u, g_l) = tangent();
    // C_L = (10 + √(100 − 88.89))/2 = 6.667 kg/m³; G_L = 1.660e-3 kg/(m²·s).
    assert_rel(c_l, 20.0 / 3.0, 1e-12, "tangent point (hand value 20/3)");
    let b = basis();
    let y = yoshioka(&law(), &b).unwrap();
    let cc = coe_clevenger(&law(), &b).unwrap();
    println!(
        "tangent C_L = {c_l:.6} kg/m3, u = {u:.6e} m/s, G_L = {g_l:.6e} kg/m2/s, unit area = {:.6} m2 d/t",
        1.0 / g_l * 1000.0 / 86400.0
    );
    println!(
        "Yoshioka: C_L = {:.6}, unit area {:.8} m2 d/t; Coe-Clevenger: C = {:.6}, {:.8} m2 d/t",
        y.limiting_concentration,
        y.unit_area_m2_day_per_tonne(),
        cc.limiting_concentration,
        cc.unit_area_m2_day_per_tonne()
    );
    // Root finding to ~1e-15 on a central-difference derivative (step 1e-6 of
    // the range): agreement to 1e-8 expected.
    assert_rel(
        y.limiting_concentration,
        c_l,
        1e-7,
        "Yoshioka tangent point",
    );
    assert_rel(y.limiting_flux, g_l, 1e-8, "Yoshioka limiting flux");
    assert_rel(
        y.underflow_velocity.unwrap(),
        u,
        1e-8,
        "Yoshioka underflow velocity",
    );
    // Coe–Clevenger maximum: the same unit area by the other route.
    assert_rel(cc.unit_area, 1.0 / g_l, 1e-9, "Coe-Clevenger unit area");
    assert_rel(
        cc.limiting_concentration,
        c_l,
        1e-4,
        "Coe-Clevenger maximiser",
    );
    assert_rel(y.unit_area, cc.unit_area, 1e-8, "Yoshioka vs Coe-Clevenger");
    // Area for the feed, and the unit of the trade: m²·s/kg × 1000/86400.
    assert_rel(y.area, b.feed_solids / g_l, 1e-8, "area");
    assert_rel(
        y.unit_area_m2_day_per_tonne(),
        1000.0 / 86400.0 / g_l,
        1e-8,
        "unit area in m2 d/t",
    );
    assert_eq!(y.caution, CAUTION);
    assert!(CAUTION.contains("licensed engineer"));

    // The same from a table of the law (200 points, monotone cubic between):
    // interpolation error only.
    let c: Vec<f64> = (0..200).map(|i| 1.0 + 19.0 * i as f64 / 199.0).collect();
    let g: Vec<f64> = c.iter().map(|&c| g_b(c)).collect();
    let table = BatchFluxCurve::table(c, g).unwrap();
    let yt = yoshioka(&table, &b).unwrap();
    let ct = coe_clevenger(&table, &b).unwrap();
    println!(
        "table: Yoshioka {:.6e}, Coe-Clevenger {:.6e} kg/m2/s",
        yt.limiting_flux, ct.limiting_flux
    );
    assert_rel(yt.limiting_flux, g_l, 1e-4, "Yoshioka on a table");
    assert_rel(ct.limiting_flux, g_l, 1e-4, "Coe-Clevenger on a table");
}

#[test]
fn state_point_verdicts_and_clarification() {
    let (_, u, g_l) = tangent();
    let q_f = 1000.0 / 3600.0;
    // The tank the tangent sizes: A = Q_f C_f/G_L with Q_u = u A puts the
    // operating line on the tangent, so the capacity equals the applied flux.
    let area = q_f * C_F / g_l;
    let tank = TankOperation {
        area,
        feed_flow: q_f,
        underflow_flow: u * area,
        feed_concentration: C_F,
    };
    let sp = state_point(&law(), &tank, 0.02).unwrap();
    println!(
        "critical tank: A = {area:.2} m2, ratio {:.8}, capacity {:.6e}, C_lim {:.5}, clarification ratio {:.4}",
        sp.loading_ratio, sp.capacity, sp.limiting_concentration, sp.clarification_ratio
    );
    assert_eq!(sp.verdict, LoadingVerdict::CriticallyLoaded);
    assert_rel(sp.loading_ratio, 1.0, 1e-9, "loading ratio on the tangent");
    assert_rel(
        sp.underflow_concentration,
        C_U,
        1e-12,
        "mass-balance underflow",
    );
    // Clarification: overflow rate (Q_f − Q_u)/A against v(C_f) = v0 e^(−k C_f).
    let v_f = V0 * (-K * C_F).exp();
    let expect = (q_f - u * area) / area / v_f;
    assert_rel(sp.clarification_ratio, expect, 1e-12, "clarification ratio");
    assert!(expect < 1.0 && sp.clarification_ok, "{expect}");

    // Same flows on 25 % more area: the line sinks below the curve.
    let big = TankOperation {
        area: 1.25 * area,
        ..tank
    };
    let sp = state_point(&law(), &big, 0.02).unwrap();
    assert_eq!(
        sp.verdict,
        LoadingVerdict::Underloaded,
        "{}",
        sp.loading_ratio
    );
    // 20 % less: it cuts the curve; the overflow rate also exceeds v(C_f).
    let small = TankOperation {
        area: 0.8 * area,
        ..tank
    };
    let sp = state_point(&law(), &small, 0.02).unwrap();
    assert_eq!(
        sp.verdict,
        LoadingVerdict::Overloaded,
        "{}",
        sp.loading_ratio
    );
    let expect = (q_f - u * area) / (0.8 * area) / v_f;
    println!(
        "small tank: ratio {:.4}, clarification {:.4}",
        sp.loading_ratio, sp.clarification_ratio
    );
    assert_rel(
        sp.clarification_ratio,
        expect,
        1e-12,
        "clarification ratio, small tank",
    );
    assert!(expect > 1.0 && !sp.clarification_ok);
    assert_eq!(sp.caution, CAUTION);

    // Refusals.
    let e = state_point(
        &law(),
        &TankOperation {
            underflow_flow: 2.0 * q_f,
            ..tank
        },
        0.02,
    )
    .unwrap_err();
    assert!(matches!(e, AnalysisError::Invalid { .. }), "{e}");
    let e = yoshioka(
        &law(),
        &DesignBasis {
            underflow_concentration: 2.0,
            ..basis()
        },
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("not above the feed concentration"), "{e}");
}

/// The exact Kynch solution for the Vesilind flux, with H0 = 0.4 m and the
/// feed as the test's loading.
fn exact_curve() -> (KynchSolution, SettlingCurve, f64) {
    let h0 = 0.4;
    let a = K * RHO_S;
    let sol = KynchSolution::new(
        FnFluxWithDerivative {
            flux: move |phi: f64| phi * V0 * (-a * phi).exp(),
            dflux: move |phi: f64| V0 * (-a * phi).exp() * (1.0 - a * phi),
        },
        BatchProblem {
            phi0: C_F / RHO_S,
            height: h0,
            phi_max: PHI_MAX,
        },
    )
    .unwrap();
    let (c_l, _, _) = tangent();
    let t_l = C_F * h0 / (c_l * c_l * K * V0 * (-K * c_l).exp());
    // 400 readings up to 2 t_L.
    let time: Vec<f64> = (0..400).map(|i| 2.0 * t_l * i as f64 / 399.0).collect();
    let height: Vec<f64> = time.iter().map(|&t| sol.interface_height(t)).collect();
    let curve = SettlingCurve::new(time, height, h0, C_F, "exact Kynch, Vesilind").unwrap();
    (sol, curve, t_l)
}

#[test]
fn talmage_fitch_and_oltmann_on_an_exact_settling_curve() {
    let (sol, curve, t_l) = exact_curve();
    let (c_l, _, g_l) = tangent();
    // The compression point chosen lies inside the fan (C_a < C_L).
    let c_at = sol.interface_concentration(t_l) * RHO_S;
    println!(
        "t_L = {t_l:.2} s, first critical time {:.2} s, exact C(t_L) = {c_at:.6} kg/m3",
        sol.first_critical_time()
    );
    assert!(sol.first_critical_time() < t_l);
    assert_rel(c_at, c_l, 1e-9, "exact interface concentration at t_L");

    let smooth = SmoothCurve::new(&curve, Smoothing { half_window: 0 });
    let b = basis();
    let h0 = curve.initial_height;
    let h_u = C_F * h0 / C_U;
    let cp = CompressionPoint::at_time(&curve, &smooth, t_l);
    let tf = talmage_fitch(&curve, &smooth, &cp, &b).unwrap();
    println!(
        "Talmage-Fitch at t_L: h_c = {:.6} m (H_u = {h_u:.6}), t_u = {:.3} s, unit area {:.6} m2 d/t (1/G_L: {:.6})",
        cp.height,
        tf.underflow_time.unwrap(),
        tf.unit_area_m2_day_per_tonne(),
        1000.0 / 86400.0 / g_l
    );
    assert_rel(cp.height, h_u, 1e-6, "the curve passes through (t_L, H_u)");
    assert_rel(
        tf.unit_area,
        1.0 / g_l,
        1e-6,
        "Talmage-Fitch at t_L = 1/G_L",
    );
    assert_rel(tf.area, b.feed_solids / g_l, 1e-6, "Talmage-Fitch area");
    assert_eq!(tf.caution, CAUTION);
    // Elsewhere in the fan: the Coe–Clevenger term at the exact C(t_c).
    for factor in [0.87, 0.95] {
        let t_c = factor * t_l;
        let c = sol.interface_concentration(t_c) * RHO_S;
        let expect = (1.0 / c - 1.0 / C_U) / (V0 * (-K * c).exp());
        let cp = CompressionPoint::at_time(&curve, &smooth, t_c);
        let tf = talmage_fitch(&curve, &smooth, &cp, &b).unwrap();
        println!(
            "Talmage-Fitch at {factor} t_L: C = {c:.6} (Kynch of the smoothed tangent {:.6}), unit area {:.6e} vs {expect:.6e} m2 s/kg",
            cp.concentration, tf.unit_area
        );
        // Monotone cubic slopes of 400 exact samples (second order): measured
        // 1.0e-5 at 0.87 t_L and 8e-7 at 0.95 t_L; 1e-4 allowed.
        assert_rel(
            tf.unit_area,
            expect,
            1e-4,
            "Talmage-Fitch unit area in the fan",
        );
        assert!(tf.unit_area < 1.0 / g_l);
    }
    let cp = CompressionPoint::at_time(&curve, &smooth, 1.5 * t_l);
    let tf = talmage_fitch(&curve, &smooth, &cp, &b).unwrap();
    println!(
        "Talmage-Fitch at 1.5 t_L (below H_u): t_u = {:.3} s, notes {:?}",
        tf.underflow_time.unwrap(),
        tf.notes
    );
    assert_rel(
        tf.underflow_time.unwrap(),
        t_l,
        1e-6,
        "t_u read off the curve",
    );
    assert_rel(
        tf.unit_area,
        1.0 / g_l,
        1e-6,
        "Talmage-Fitch below H_u = 1/G_L",
    );

    // Oltmann at 1.5 t_L: t_u = t_c (H0 − H_u)/(H0 − h_c) with the exact h_c.
    let t_c = 1.5 * t_l;
    let cp = CompressionPoint::at_time(&curve, &smooth, t_c);
    let t_u = t_c * (h0 - h_u) / (h0 - sol.interface_height(t_c));
    let ol = oltmann(&curve, &cp, &b).unwrap();
    println!(
        "Oltmann: t_u = {:.3} s (expected {t_u:.3}), unit area {:.6} m2 d/t",
        ol.underflow_time.unwrap(),
        ol.unit_area_m2_day_per_tonne()
    );
    assert_rel(ol.underflow_time.unwrap(), t_u, 1e-6, "Oltmann t_u");
    assert_rel(ol.unit_area, t_u / (C_F * h0), 1e-6, "Oltmann unit area");

    // The largest curvature sits at the corner where the constant-rate
    // period ends (the first critical time), within one reading.
    let found = compression_point(&curve, &smooth, CompressionMethod::MaxCurvature).unwrap();
    let dt = curve.time[1];
    println!(
        "max curvature at {:.2} s, corner at {:.2} s",
        found.time,
        sol.first_critical_time()
    );
    assert!((found.time - sol.first_critical_time()).abs() <= 1.01 * dt);
}
