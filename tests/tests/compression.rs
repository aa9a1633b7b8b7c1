//! Compression of flocculated suspensions (physics.md §6, §8.3).
//!
//! Promise: the power-law effective stress is continuous at the gel point and
//! its derivative is right; the Bürger–Concha diffusion coefficient is
//! v_hs σe′/(Δρ g); the tabulated A(φ) = ∫₀^φ a matches closed forms and an
//! independent fine quadrature; the closed-form final sediment of a closed
//! column (physics.md §6.2, derived in `physics::compression`) agrees with an
//! independent RK4 integration of the equilibrium ODE and with a quadrature
//! of the height integral, holds exactly the loaded solids, and reports the
//! cases the closed form does not cover.
//!
//! All parameter sets are invented for these tests (within the ranges of
//! physics.md §6.1 where that is possible).

use turbid_engine::physics::compression::{
    IntegratedDiffusion, PowerLawStress, SteadySediment, SteadySedimentError, diffusion,
    integrated_diffusion,
};
use turbid_engine::physics::hindered::HinderedLaw;
use turbid_validation::{assert_rel, rel_diff};

/// Δρ = ρs − ρf [kg/m³] and g [m/s²] used throughout (invented: a mineral
/// of 2500 kg/m³ in water of 1000 kg/m³, g = 9.81 as in many sedimentation
/// papers, physics.md conventions).
const DRHO: f64 = 1500.0;
const G: f64 = 9.81;

/// Composite Simpson rule on [lo, hi] with `n` (even) intervals: an
/// integration method independent of the engine's Gauss–Legendre one.
fn simpson(f: impl Fn(f64) -> f64, lo: f64, hi: f64, n: usize) -> f64 {
    assert!(n.is_multiple_of(2));
    let h = (hi - lo) / n as f64;
    let mut sum = f(lo) + f(hi);
    for i in 1..n {
        let w = if i % 2 == 1 { 4.0 } else { 2.0 };
        sum += w * f(lo + i as f64 * h);
    }
    sum * h / 3.0
}

/// Derivative of the power-law stress for φ > φc, written out by hand:
/// d/dφ σ0[(φ/φc)^k − 1] = σ0 k φ^(k−1)/φc^k.
fn hand_derivative(s: &PowerLawStress, phi: f64) -> f64 {
    s.yield_stress * s.exponent * phi.powf(s.exponent - 1.0) / s.gel_point.powf(s.exponent)
}

/// The test cases of the steady sediment: (stress, φ0, H0 [m]). σ0 and k
/// span a stiff k < 1, the exponential case k = 1, and k up to 10.
fn sediment_cases() -> Vec<(PowerLawStress, f64, f64)> {
    let p = |yield_stress, gel_point, exponent| PowerLawStress {
        yield_stress,
        gel_point,
        exponent,
    };
    vec![
        (p(1.0, 0.10, 6.0), 0.05, 1.0),
        (p(230.0, 0.15, 0.5), 0.02, 0.5),
        (p(440.0, 0.08, 1.0), 0.03, 2.0),
        (p(75.0, 0.12, 2.5), 0.05, 1.5),
        (p(0.2, 0.05, 10.0), 0.04, 3.0),
    ]
}

const PHI_MAX: f64 = 0.64;

#[test]
fn power_law_stress_is_continuous_at_the_gel_point() {
    let s = PowerLawStress {
        yield_stress: 2.0,
        gel_point: 0.12,
        exponent: 5.0,
    };
    // Zero at and below φc (physics.md §6.1).
    for phi in [0.0, 0.05, 0.1199999, 0.12] {
        assert_eq!(s.stress(phi), 0.0, "σe({phi})");
        assert_eq!(s.stress_derivative(phi), 0.0, "σe′({phi})");
    }
    // Just above φc: σ0((1+ε)^k − 1) = σ0(kε + k(k−1)ε²/2 + …), exact
    // expansion; with ε = 1e-9 the stress is 1.0e-8 Pa → continuous.
    let eps = 1e-9;
    let just_above = s.stress(0.12 * (1.0 + eps));
    assert_rel(just_above, 2.0 * 5.0 * eps, 1e-6, "σe(φc(1+ε)) ≈ σ0 k ε");
    // The derivative jumps to σ0 k/φc = 83.333… Pa (exact, from the form).
    assert_rel(
        s.stress_derivative(0.12 * (1.0 + 1e-12)),
        2.0 * 5.0 / 0.12,
        1e-10,
        "σe′(φc+) = σ0 k/φc",
    );
    // By hand at φ = 2φc: σe = σ0(2⁵ − 1) = 62 Pa; σe′ = σ0 k 2⁴/φc = 1333.33 Pa.
    assert_rel(s.stress(0.24), 62.0, 1e-14, "σe(2φc) by hand");
    assert_rel(
        s.stress_derivative(0.24),
        160.0 / 0.12,
        1e-14,
        "σe′(2φc) by hand",
    );
    // Derivative against a central difference of the stress (error
    // O(h²) ≈ 1e-9 relative here) and against the hand-written formula.
    for phi in [0.13, 0.2, 0.35, 0.5] {
        let h = 1e-5 * phi;
        let fd = (s.stress(phi + h) - s.stress(phi - h)) / (2.0 * h);
        assert_rel(
            s.stress_derivative(phi),
            fd,
            1e-7,
            "σe′ vs central difference",
        );
        assert_rel(
            s.stress_derivative(phi),
            hand_derivative(&s, phi),
            1e-13,
            "σe′ vs σ0 k φ^(k−1)/φc^k",
        );
    }
}

#[test]
fn diffusion_coefficient_by_hand() {
    // State: Richardson–Zaki v∞ = 1e-4 m/s, n = 4.65, φ = 0.24; power law
    // σ0 = 2 Pa, φc = 0.12, k = 5; Δρ = 1500 kg/m³, g = 9.81 m/s².
    // Python 3.11.7 float arithmetic [O]:
    //   v_hs = 1e-4·0.76^4.65            = 2.791150176381504e-05 m/s
    //   σe′  = 2·5·2⁴/0.12               = 1333.3333333333335 Pa
    //   a    = v_hs σe′/(1500·9.81)      = 2.5290748002097674e-06 m²/s
    let s = PowerLawStress {
        yield_stress: 2.0,
        gel_point: 0.12,
        exponent: 5.0,
    };
    let law = HinderedLaw::RichardsonZaki { n: 4.65 };
    let v = law.velocity(1e-4, 0.24, PHI_MAX);
    assert_rel(v, 2.791150176381504e-05, 1e-13, "RZ v_hs(0.24)");
    let a = diffusion(v, s.stress_derivative(0.24), DRHO, G);
    assert_rel(a, 2.5290748002097674e-06, 1e-13, "a(0.24) by hand");
    // Equivalent form f_bk σe′/(Δρ g φ) of physics.md §6.1.
    let f = law.batch_flux(1e-4, 0.24, PHI_MAX);
    assert_rel(
        a,
        f * s.stress_derivative(0.24) / (DRHO * G * 0.24),
        1e-14,
        "a = f_bk σe′/(Δρ g φ)",
    );
    // Degenerate below the gel point, and zero at packing.
    assert_eq!(
        diffusion(
            law.velocity(1e-4, 0.1, PHI_MAX),
            s.stress_derivative(0.1),
            DRHO,
            G
        ),
        0.0
    );
    assert_eq!(
        diffusion(
            law.velocity(1e-4, PHI_MAX, PHI_MAX),
            s.stress_derivative(PHI_MAX),
            DRHO,
            G
        ),
        0.0
    );
}

/// a(φ) for Richardson–Zaki (exponent `n`, v∞ = 1e-4 m/s, truncated at
/// φmax) and a power-law stress, through the engine's functions.
fn rz_diffusion(s: PowerLawStress, n: f64) -> impl Fn(f64) -> f64 {
    let law = HinderedLaw::RichardsonZaki { n };
    move |phi| {
        diffusion(
            law.velocity(1e-4, phi, PHI_MAX),
            s.stress_derivative(phi),
            DRHO,
            G,
        )
    }
}

#[test]
fn integrated_diffusion_matches_the_closed_form_for_an_integer_exponent() {
    // With RZ exponent n = 5 (an integer) a(φ) = C (1 − φ)^5 φ^(k−1) on
    // (φc, φmax), C = v∞ σ0 k/(φc^k Δρ g), so by the binomial theorem
    //   A(φ) = C Σ_{j=0}^{5} (5 choose j)(−1)^j (φ^(k+j) − φc^(k+j))/(k+j)
    // for φc ≤ φ ≤ φmax, 0 below φc and A(φmax) above (exact derivation).
    let s = PowerLawStress {
        yield_stress: 1.5,
        gel_point: 0.1,
        exponent: 6.5,
    };
    let k = s.exponent;
    let c = 1e-4 * s.yield_stress * k / (s.gel_point.powf(k) * DRHO * G);
    let binom = [1.0, 5.0, 10.0, 10.0, 5.0, 1.0];
    let exact = |phi: f64| {
        let phi = phi.clamp(s.gel_point, PHI_MAX);
        let mut sum = 0.0;
        for (j, b) in binom.iter().enumerate() {
            let p = k + j as f64;
            let sign = if j % 2 == 0 { 1.0 } else { -1.0 };
            sum += sign * b * (phi.powf(p) - s.gel_point.powf(p)) / p;
        }
        c * sum
    };
    // 257 cells: φc = 0.1 is not a node (0.1·257/0.64 = 40.16), so the jump
    // of a at φc falls inside a cell; φmax is the last node.
    let n = 257;
    let values = integrated_diffusion(rz_diffusion(s, 5.0), PHI_MAX, n);
    assert_eq!(values.len(), n + 1);
    let scale = exact(PHI_MAX);
    let mut worst = 0.0_f64;
    for (i, v) in values.iter().enumerate() {
        let phi = i as f64 * PHI_MAX / n as f64;
        worst = worst.max((v - exact(phi)).abs() / scale);
    }
    println!("A(φ) nodes vs binomial closed form: max |ΔA|/A(φmax) = {worst:.2e}");
    assert!(worst < 1e-12, "worst {worst:e}");
    assert_eq!(values[0], 0.0);
    assert_eq!(values[40], 0.0, "below the gel point A = 0");

    // Lookup: exact at nodes; between nodes linear interpolation is within
    // h²/8·max|a′| of A (interpolation error bound for a C² piece) except in
    // the cell holding the kink at φc, where it is within h·a(φc+)/4.
    let table = IntegratedDiffusion::tabulate(rz_diffusion(s, 5.0), PHI_MAX, n);
    assert_eq!(table.values(), &values[..]);
    let h = PHI_MAX / n as f64;
    // |a′| = C|(1−φ)^4 φ^(k−2)((k−1)(1−φ) − 5φ)| ≤ C·30 on [0.1, 0.64]
    // (crude bound: φ^(k−2) ≤ 1, (1−φ)^4 ≤ 1, |…| ≤ 5.5 + 3.2 < 30).
    let smooth_bound = h * h / 8.0 * c * 30.0;
    for i in 0..n {
        let mid = (i as f64 + 0.5) * h;
        let err = (table.value(mid) - exact(mid)).abs();
        let bound = if i == 40 {
            h * c * s.gel_point.powf(k - 1.0) * 0.9f64.powi(5) / 4.0 + smooth_bound
        } else {
            smooth_bound
        };
        assert!(err <= bound, "cell {i}: error {err:e} > bound {bound:e}");
        let at_node = table.value((i + 1) as f64 * h);
        assert!(
            (at_node - values[i + 1]).abs() <= 1e-12 * scale,
            "node lookup {}: {at_node:e} vs {:e}",
            i + 1,
            values[i + 1]
        );
    }
    assert_eq!(table.value(-0.1), 0.0);
    assert_eq!(table.value(0.9), values[n], "A is constant above φmax");
    assert_eq!(table.phi_max(), PHI_MAX);
}

#[test]
fn integrated_diffusion_matches_fine_simpson_quadrature() {
    // Non-integer exponents (RZ n = 4.65, k = 6.3): no closed form, so the
    // independent reference is composite Simpson with 200 000 intervals on
    // [φc, φ] (a is smooth there; Simpson's error ~h⁴ is below 1e-15 of A).
    let s = PowerLawStress {
        yield_stress: 0.8,
        gel_point: 0.14,
        exponent: 6.3,
    };
    let a = rz_diffusion(s, 4.65);
    let n = 100;
    let values = integrated_diffusion(&a, PHI_MAX, n);
    let mut worst = 0.0_f64;
    for i in [22, 30, 50, 77, 99, 100] {
        let phi = i as f64 * PHI_MAX / n as f64;
        // Up to φmax the integrand is the untruncated formula; Simpson must
        // not evaluate the law at φmax itself, where it is cut to zero.
        let untruncated =
            |x: f64| 1e-4 * (1.0 - x).powf(4.65) * hand_derivative(&s, x) / (DRHO * G);
        let reference = simpson(untruncated, s.gel_point, phi, 200_000);
        worst = worst.max(rel_diff(values[i], reference));
        assert_rel(values[i], reference, 1e-12, &format!("A({phi}) vs Simpson"));
    }
    println!("A(φ) (RZ 4.65, k 6.3) vs Simpson 2e5: max rel. diff = {worst:.2e}");
}

/// RK4 integration of the equilibrium ODE (1) of `physics::compression`,
/// written in depth ζ = h_s − z below the sediment surface:
/// dφ/dζ = Δρ g φ/σe′(φ) and dm/dζ = φ (solids above ζ), from φ = φc, m = 0,
/// until m = φ0 H0. Independent of the closed form: it uses only the
/// hand-written σe′ and the load. Returns (h_s, φb, [(ζ_j, φ_j)]).
fn rk4_sediment(s: &PowerLawStress, phi0: f64, h0: f64) -> (f64, f64, Vec<(f64, f64)>) {
    let rhs = |y: [f64; 2]| [DRHO * G * y[0] / hand_derivative(s, y[0]), y[0]];
    let step = |y: [f64; 2], d: f64| {
        let add = |y: [f64; 2], k: [f64; 2], c: f64| [y[0] + c * k[0], y[1] + c * k[1]];
        let k1 = rhs(y);
        let k2 = rhs(add(y, k1, d / 2.0));
        let k3 = rhs(add(y, k2, d / 2.0));
        let k4 = rhs(add(y, k3, d));
        [
            y[0] + d / 6.0 * (k1[0] + 2.0 * k2[0] + 2.0 * k3[0] + k4[0]),
            y[1] + d / 6.0 * (k1[1] + 2.0 * k2[1] + 2.0 * k3[1] + k4[1]),
        ]
    };
    let target = phi0 * h0;
    // Since φ ≥ φc in the sediment, h_s ≤ φ0 H0/φc: a step from that bound.
    let d = target / s.gel_point / 200_000.0;
    let mut y = [s.gel_point, 0.0];
    let mut steps = 0_u32;
    let mut path = vec![(0.0, s.gel_point)];
    loop {
        let next = step(y, d);
        if next[1] >= target {
            break;
        }
        y = next;
        steps += 1;
        path.push((f64::from(steps) * d, y[0]));
    }
    // Last partial step: Newton on its length δ, with dm/dδ = φ.
    let mut delta = (target - y[1]) / y[0];
    for _ in 0..8 {
        let end = step(y, delta);
        delta -= (end[1] - target) / end[0];
    }
    let end = step(y, delta);
    (f64::from(steps) * d + delta, end[0], path)
}

fn sediment(s: &PowerLawStress, phi0: f64, h0: f64) -> SteadySediment {
    s.steady_sediment(DRHO, G, phi0, h0, PHI_MAX)
        .unwrap_or_else(|e| panic!("{s:?}: {e}"))
}

#[test]
fn steady_sediment_matches_rk4_of_the_equilibrium_ode() {
    let mut worst = [0.0_f64; 3];
    for (s, phi0, h0) in sediment_cases() {
        let sed = sediment(&s, phi0, h0);
        let (h_rk, phi_b_rk, path) = rk4_sediment(&s, phi0, h0);
        // RK4 with ≤ 200 000 steps of at most 0.005 λ (λ = σ0 k/(Δρ g φc), the
        // length over which φ changes): global error ~ (step/λ)⁴ ≪ 1e-10.
        assert_rel(sed.height, h_rk, 1e-10, &format!("h_s, k = {}", s.exponent));
        assert_rel(
            sed.bottom_volume_fraction,
            phi_b_rk,
            1e-10,
            &format!("φb, k = {}", s.exponent),
        );
        worst[0] = worst[0].max(rel_diff(sed.height, h_rk));
        worst[1] = worst[1].max(rel_diff(sed.bottom_volume_fraction, phi_b_rk));
        for &(zeta, phi) in path.iter().step_by(4999) {
            let closed = s.steady_profile(&sed, sed.height - zeta);
            assert_rel(
                closed,
                phi,
                1e-10,
                &format!("φ(ζ = {zeta}), k = {}", s.exponent),
            );
            worst[2] = worst[2].max(rel_diff(closed, phi));
        }
    }
    println!(
        "steady sediment vs RK4: h_s {:.1e}, φb {:.1e}, profile {:.1e} (max rel. diff)",
        worst[0], worst[1], worst[2]
    );
}

#[test]
fn steady_sediment_matches_the_height_integral_and_the_sheet_formula() {
    // physics.md §6.2: σe(φb) = Δρ g φ0 H0 and h_s = ∫_{φc}^{φb} σe′/(Δρ g φ) dφ.
    // Here φb comes from bisection on the stress (not from its inverse) and
    // h_s from Simpson's rule; the sheet's closed form
    // h_s = σ0 k/(Δρ g φc^k (k−1))(φb^(k−1) − φc^(k−1)) is evaluated as
    // printed (k ≠ 1), or σ0/(Δρ g φc) ln(φb/φc) (k = 1, own derivation).
    for (s, phi0, h0) in sediment_cases() {
        let sed = sediment(&s, phi0, h0);
        let load = DRHO * G * phi0 * h0;
        let (mut lo, mut hi) = (s.gel_point, 1.0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if s.stress(mid) < load {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let phi_b = 0.5 * (lo + hi);
        assert_rel(sed.bottom_volume_fraction, phi_b, 1e-14, "φb vs bisection");
        assert_rel(sed.bottom_stress, load, 1e-15, "σe(φb) = Δρ g φ0 H0");
        let integral = simpson(
            |phi| hand_derivative(&s, phi) / (DRHO * G * phi),
            s.gel_point,
            phi_b,
            20_000,
        );
        assert_rel(
            sed.height,
            integral,
            1e-12,
            "h_s vs Simpson of §6.2 integral",
        );
        let (sigma0, phi_c, k) = (s.yield_stress, s.gel_point, s.exponent);
        let sheet = if k == 1.0 {
            sigma0 / (DRHO * G * phi_c) * (phi_b / phi_c).ln()
        } else {
            sigma0 * k / (DRHO * G * phi_c.powf(k) * (k - 1.0))
                * (phi_b.powf(k - 1.0) - phi_c.powf(k - 1.0))
        };
        assert_rel(
            sed.height,
            sheet,
            1e-12,
            "h_s vs physics.md §6.2 closed form",
        );
        assert_rel(
            sed.length_scale,
            sigma0 * k / (DRHO * G * phi_c),
            1e-15,
            "λ = σ0 k/(Δρ g φc)",
        );
    }
}

#[test]
fn steady_profile_holds_the_loaded_mass_and_the_stress_balance() {
    for (s, phi0, h0) in sediment_cases() {
        let sed = sediment(&s, phi0, h0);
        let profile = |z: f64| s.steady_profile(&sed, z);
        // Mass (physics.md §6.2): ∫₀^{h_s} φ dz = φ0 H0.
        // Simpson with 200 000 intervals: near the surface φ varies on the
        // length λ (2.7 mm for k = 10), so fewer intervals leave ~1e-10.
        let mass = simpson(profile, 0.0, sed.height, 200_000);
        assert_rel(mass, phi0 * h0, 1e-12, "∫φ dz = φ0 H0");
        // Ends and supernate.
        assert_rel(profile(sed.height), s.gel_point, 1e-15, "φ(h_s) = φc");
        assert_rel(profile(0.0), sed.bottom_volume_fraction, 1e-12, "φ(0) = φb");
        assert_eq!(profile(sed.height * (1.0 + 1e-12)), 0.0, "clear supernate");
        assert_eq!(
            profile(-1.0),
            profile(0.0),
            "below the floor reads as the floor"
        );
        // Stress balance σe(φ(z)) = Δρ g ∫_z^{h_s} φ dz′ at interior heights.
        for frac in [0.1, 0.37, 0.8] {
            let z = frac * sed.height;
            let above = simpson(profile, z, sed.height, 200_000);
            assert_rel(
                s.stress(profile(z)),
                DRHO * G * above,
                1e-11,
                "σe(φ(z)) = Δρ g ∫_z^{h_s} φ",
            );
        }
        // Monotone: denser towards the floor.
        let mut last = 0.0;
        for i in 0..=100 {
            let phi = profile(sed.height * (1.0 - i as f64 / 100.0));
            assert!(phi >= last, "profile not monotone at step {i}");
            last = phi;
        }
    }
}

#[test]
fn steady_sediment_is_continuous_through_k_equal_one() {
    // k = 1 uses the limits of expm1(βL)/β and ln1p(βs)/β; k = 1 ± 1e-9
    // uses the general formulas. d(h_s)/dk and dφ/dk are O(1) here, so the
    // results may differ by O(1e-9) relative (plus rounding).
    let base = PowerLawStress {
        yield_stress: 440.0,
        gel_point: 0.08,
        exponent: 1.0,
    };
    let at_one = sediment(&base, 0.03, 2.0);
    for k in [1.0 - 1e-9, 1.0 + 1e-9] {
        let s = PowerLawStress {
            exponent: k,
            ..base
        };
        let near = sediment(&s, 0.03, 2.0);
        assert_rel(near.height, at_one.height, 1e-8, "h_s near k = 1");
        assert_rel(
            near.bottom_volume_fraction,
            at_one.bottom_volume_fraction,
            1e-8,
            "φb near k = 1",
        );
        for frac in [0.0, 0.5, 0.99] {
            let z = frac * at_one.height;
            assert_rel(
                s.steady_profile(&near, z),
                base.steady_profile(&at_one, z),
                1e-8,
                "φ(z) near k = 1",
            );
        }
    }
    // k = 1 by hand: φ = φc e^s, s = (h_s − z)/λ, λ = σ0/(Δρ g φc), so
    // φ(0) = φb = φc(1 + Δρ g φ0 H0/σ0) = 0.08·(1 + 882.9/440) [exact
    // arithmetic: 1500·9.81·0.03·2 = 882.9].
    assert_rel(
        at_one.bottom_volume_fraction,
        0.08 * (1.0 + 882.9 / 440.0),
        1e-14,
        "φb at k = 1 by hand",
    );
}

#[test]
fn small_loads_give_a_thin_layer_at_the_gel_point() {
    // As φ0 H0 → 0: φb → φc and h_s → φ0 H0/φc (module docs, "Limits"),
    // with relative corrections of order Δρ g φ0 H0/σ0 (= 1.5e-6 here).
    let s = PowerLawStress {
        yield_stress: 1.0,
        gel_point: 0.1,
        exponent: 6.0,
    };
    let (phi0, h0) = (1e-8, 0.01);
    let sed = sediment(&s, phi0, h0);
    let w = DRHO * G * phi0 * h0 / s.yield_stress;
    assert!(sed.bottom_volume_fraction > s.gel_point);
    assert_rel(
        sed.height,
        phi0 * h0 / s.gel_point,
        2.0 * w,
        "h_s ≈ φ0 H0/φc",
    );
    // φb/φc − 1 = (1 + w)^(1/k) − 1 ≈ w/k (first-order Taylor).
    assert_rel(
        sed.bottom_volume_fraction / s.gel_point - 1.0,
        w / s.exponent,
        w,
        "φb/φc − 1 ≈ w/k",
    );
    let mass = simpson(|z| s.steady_profile(&sed, z), 0.0, sed.height, 200);
    assert_rel(mass, phi0 * h0, 1e-12, "mass of a thin layer");
    // Zero load: a sediment of zero height.
    let empty = sediment(&s, 0.0, 1.0);
    assert_eq!(empty.height, 0.0);
    assert_eq!(empty.bottom_volume_fraction, s.gel_point);
}

#[test]
fn steady_sediment_reports_what_the_closed_form_cannot_describe() {
    // Packing: the first case has φb = 0.30053 (see the RK4 test), so a
    // packing limit of 0.25 is exceeded.
    let (s, phi0, h0) = sediment_cases()[0];
    match s.steady_sediment(DRHO, G, phi0, h0, 0.25) {
        Err(SteadySedimentError::ExceedsPacking {
            bottom_volume_fraction,
            phi_max,
        }) => {
            assert_eq!(phi_max, 0.25);
            assert_rel(bottom_volume_fraction, 0.3005292107055308, 1e-12, "φb [O]");
        }
        other => panic!("expected ExceedsPacking, got {other:?}"),
    }
    // Python 3.11.7 [O]: φb = 0.1·(1 + 1500·9.81·0.05/1.0)^(1/6)
    //                      = 0.3005292107055308.

    // Stiff network filled above its gel point (φ0 = 0.2 > φc = 0.1,
    // σ0 = 1000 Pa, k = 2): φb = 0.1·√(1 + 2.943) = 0.19857 < φ0, and
    // h_s = 1000·2/(1500·9.81·0.1·1)·(1.9857 − 1) = 1.340 m > H0 = 1 m.
    let stiff = PowerLawStress {
        yield_stress: 1000.0,
        gel_point: 0.1,
        exponent: 2.0,
    };
    match stiff.steady_sediment(DRHO, G, 0.2, 1.0, PHI_MAX) {
        Err(SteadySedimentError::FillsColumn {
            height,
            column_height,
        }) => {
            assert_eq!(column_height, 1.0);
            let expected = 2000.0 / (DRHO * G * 0.1) * ((1.0_f64 + 2.943).sqrt() - 1.0);
            assert_rel(height, expected, 1e-13, "h_s of the stiff network by hand");
        }
        other => panic!("expected FillsColumn, got {other:?}"),
    }
    // A softer network (σ0 = 100 Pa) filled above its gel point does settle:
    // φb = 0.1·√(1 + 29.43) = 0.5516, h_s = 0.1359·(5.516 − 1) = 0.614 m
    // (hand arithmetic), and it still holds its mass.
    let soft = PowerLawStress {
        yield_stress: 100.0,
        ..stiff
    };
    let sed = sediment(&soft, 0.2, 1.0);
    assert!(sed.height < 1.0);
    let mass = simpson(|z| soft.steady_profile(&sed, z), 0.0, sed.height, 20_000);
    assert_rel(mass, 0.2, 1e-12, "mass, φ0 > φc");
}
