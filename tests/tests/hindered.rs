//! Hindered settling: Richardson–Zaki exponents and the v(φ) laws.
//!
//! Promise: the exponent correlations reproduce the check values of
//! physics.md §9 (#17–#19) and the published equations branch by branch; the
//! hindered-settling laws give the published batch-flux extremum (§9 #21),
//! reduce correctly (#22), and stop settling at the packing limit φmax.

use turbid_engine::physics::hindered::{
    ExponentRule, HinderedLaw, michaels_bolger, richardson_zaki, rz_exponent_1954,
    rz_exponent_garside_al_dibouni1977, rz_exponent_rowe1987, vesilind,
};
use turbid_validation::assert_rel;

#[test]
fn richardson_zaki_1954_check_values() {
    // physics.md §9 #17, RZ 1954 eqs. 33, 38, 34 [C; O], tol 1e-4.
    assert_rel(
        rz_exponent_1954(0.1, 0.0),
        4.65,
        1e-4,
        "§9 #17 n(Re < 0.2, d/D = 0)",
    );
    assert_rel(
        rz_exponent_1954(10.0, 0.0),
        3.5348,
        1e-4,
        "§9 #17 n(Re = 10, d/D = 0)",
    );
    assert_rel(
        rz_exponent_1954(10.0, 0.01),
        3.6777,
        1e-4,
        "§9 #17 n(Re = 10, d/D = 0.01)",
    );
    assert_rel(
        rz_exponent_1954(1000.0, 0.0),
        2.39,
        1e-4,
        "§9 #17 n(Re > 500)",
    );
}

#[test]
fn richardson_zaki_1954_each_branch() {
    // Points inside each range of RZ 1954 (physics.md §3.1 table), evaluated
    // from the paper's equations with Python 3.11.7 float arithmetic [O]:
    //   eq. 33: 4.65 + 19.5·0.02                      = 5.04
    //   eq. 37: 4.35·0.5^−0.03                        = 4.441402746826291
    //           (4.35 + 17.5·0.02)·0.5^−0.03          = 4.798756990823808
    //   eq. 38: 4.45·20^−0.1                          = 3.2980482985259174
    //           (4.45 + 18·0.02)·20^−0.1              = 3.5648567002044187
    //   eq. 39: 4.45·300^−0.1 (no wall term)          = 2.515636489106326
    //   eq. 34: 2.39 (no wall term)
    let cases = [
        (0.05, 0.0, 4.65, "eq. 33"),
        (0.05, 0.02, 5.04, "eq. 33"),
        (0.5, 0.0, 4.441402746826291, "eq. 37"),
        (0.5, 0.02, 4.798756990823808, "eq. 37"),
        (20.0, 0.0, 3.2980482985259174, "eq. 38"),
        (20.0, 0.02, 3.5648567002044187, "eq. 38"),
        (300.0, 0.0, 2.515636489106326, "eq. 39"),
        (300.0, 0.02, 2.515636489106326, "eq. 39"),
        (2000.0, 0.0, 2.39, "eq. 34"),
        (7000.0, 0.04, 2.39, "eq. 34"),
    ];
    for (re, wall, n, eq) in cases {
        assert_rel(
            rz_exponent_1954(re, wall),
            n,
            1e-13,
            &format!("RZ 1954 {eq} at Re = {re}, d/D = {wall}"),
        );
    }
}

#[test]
fn richardson_zaki_1954_jumps_between_branches() {
    // physics.md §3.1 [C, from the transcription]: n jumps by 1.8 % at
    // Re = 0.2, 2.3 % at Re = 1 and up to 14 % at Re = 200 (d/D = 0.04);
    // printed to 2 significant digits, so checked to ±0.05 percentage points.
    let jump = |re: f64, wall: f64| {
        let below = rz_exponent_1954(re.next_down(), wall);
        (below - rz_exponent_1954(re, wall)).abs() / below
    };
    for (re, wall, percent) in [(0.2, 0.0, 1.8), (1.0, 0.0, 2.3), (200.0, 0.04, 14.0)] {
        let j = 100.0 * jump(re, wall);
        let half_digit = if percent >= 10.0 { 0.5 } else { 0.05 };
        assert!(
            (j - percent).abs() <= half_digit,
            "jump at Re = {re}: {j:.3} % vs {percent} %"
        );
    }
}

#[test]
fn smooth_exponent_fits() {
    // physics.md §9 #18, Rowe 1987 [C formula; O], tol 1e-4.
    assert_rel(rz_exponent_rowe1987(0.0), 4.7, 1e-4, "§9 #18 Rowe n(0)");
    assert_rel(
        rz_exponent_rowe1987(10.0),
        3.5309,
        1e-4,
        "§9 #18 Rowe n(10)",
    );
    assert_rel(
        rz_exponent_rowe1987(100.0),
        2.7036,
        1e-4,
        "§9 #18 Rowe n(100)",
    );
    // physics.md §3.2 [O]: Rowe n(1) = 4.349, n(1000) = 2.416; limit
    // 0.41/0.175 = 2.342857… as Re → ∞ (exact).
    assert_rel(rz_exponent_rowe1987(1.0), 4.349, 2e-4, "Rowe n(1), §3.2");
    assert_rel(
        rz_exponent_rowe1987(1000.0),
        2.416,
        2e-4,
        "Rowe n(1000), §3.2",
    );
    assert_rel(rz_exponent_rowe1987(1e20), 0.41 / 0.175, 1e-6, "Rowe n(∞)");
    // physics.md §9 #19 (formula from memory [M]; O value), tol 1e-4, and §3.2
    // values n(1) = 4.882, n(100) = 3.028; limits 5.1 and 2.7 (exact).
    assert_rel(
        rz_exponent_garside_al_dibouni1977(10.0),
        4.0375,
        1e-4,
        "§9 #19 Garside–Al-Dibouni n(10)",
    );
    assert_rel(
        rz_exponent_garside_al_dibouni1977(1.0),
        4.882,
        2e-4,
        "G–AD n(1), §3.2",
    );
    assert_rel(
        rz_exponent_garside_al_dibouni1977(100.0),
        3.028,
        2e-4,
        "G–AD n(100), §3.2",
    );
    assert_rel(
        rz_exponent_garside_al_dibouni1977(0.0),
        5.1,
        1e-15,
        "G–AD n(0)",
    );
    assert_rel(
        rz_exponent_garside_al_dibouni1977(1e30),
        2.7,
        1e-9,
        "G–AD n(∞)",
    );
    // The defining relation (5.1 − n)/(n − 2.7) = 0.1 Re^0.9 (physics.md §3.2).
    for re in [0.01, 3.0, 250.0, 5e4] {
        let n = rz_exponent_garside_al_dibouni1977(re);
        assert_rel(
            (5.1 - n) / (n - 2.7),
            0.1 * f64::powf(re, 0.9),
            1e-12,
            "G–AD defining relation",
        );
    }
}

#[test]
fn exponent_rule_dispatch() {
    // Same check values as above (physics.md §9 #17, #18).
    assert_rel(
        ExponentRule::RichardsonZaki1954 {
            d_over_column: 0.01,
        }
        .exponent(10.0),
        3.6777,
        1e-4,
        "§9 #17",
    );
    assert_rel(
        ExponentRule::Rowe1987.exponent(10.0),
        3.5309,
        1e-4,
        "§9 #18",
    );
    assert_eq!(ExponentRule::Fixed(4.65).exponent(123.0), 4.65);
}

/// Golden-section search for the maximum of a unimodal `f` on [a, b].
fn argmax(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let (mut c, mut d) = (b - r * (b - a), a + r * (b - a));
    while b - a > 1e-12 {
        if f(c) > f(d) {
            b = d;
        } else {
            a = c;
        }
        c = b - r * (b - a);
        d = a + r * (b - a);
    }
    0.5 * (a + b)
}

#[test]
fn richardson_zaki_flux_maximum_and_inflection() {
    // physics.md §9 #21 [O]: for n = 4.65 the batch flux φ(1 − φ)^n peaks at
    // φ = 0.176991 with f_max/v∞ = 0.0715455 and has its inflection at
    // 0.353982, tol 1e-5. Exact values: 1/(n + 1) and 2/(n + 1) (own calculus).
    let law = HinderedLaw::RichardsonZaki { n: 4.65 };
    let flux = |phi: f64| law.batch_flux(1.0, phi, 1.0);
    let phi_star = argmax(flux, 0.0, 0.6);
    assert_rel(phi_star, 0.176991, 1e-5, "§9 #21 argmax of the RZ flux");
    assert_rel(phi_star, 1.0 / 5.65, 1e-6, "argmax = 1/(n+1)");
    assert_rel(flux(phi_star), 0.0715455, 1e-5, "§9 #21 f_max/v∞");
    // Inflection: sign change of the central second difference, by bisection.
    let h = 1e-4;
    let curvature = |phi: f64| flux(phi + h) - 2.0 * flux(phi) + flux(phi - h);
    let (mut lo, mut hi) = (0.2, 0.6);
    assert!(curvature(lo) < 0.0 && curvature(hi) > 0.0);
    while hi - lo > 1e-10 {
        let mid = 0.5 * (lo + hi);
        if curvature(mid) < 0.0 {
            lo = mid
        } else {
            hi = mid
        }
    }
    assert_rel(
        0.5 * (lo + hi),
        0.353982,
        1e-5,
        "§9 #21 inflection of the RZ flux",
    );
}

#[test]
fn richardson_zaki_reduction_and_limits() {
    // physics.md §9 #22: 0.9^4.65 = 0.612671 [O]; Python 3.11:
    // 0.9**4.65 = 0.6126714864887843.
    assert_rel(
        richardson_zaki(1.0, 0.1, 4.65),
        0.6126714864887843,
        1e-12,
        "§9 #22 (1 − 0.1)^4.65",
    );
    assert_rel(
        richardson_zaki(2.5e-3, 0.1, 4.65),
        2.5e-3 * 0.6126714864887843,
        1e-12,
        "scales with v∞",
    );
    assert_eq!(richardson_zaki(1.0, 0.0, 4.65), 1.0, "dilute limit");
    assert_eq!(richardson_zaki(1.0, 1.0, 4.65), 0.0, "no settling at φ = 1");
    assert_eq!(richardson_zaki(1.0, 1.2, 4.65), 0.0, "φ clamped to 1");
    // Initial slope −n·v∞ (derivative of (1 − φ)^n at 0, exact), against
    // Batchelor's −6.55 (physics.md §9 #20) for comparison only.
    let slope = (richardson_zaki(1.0, 1e-7, 4.65) - 1.0) / 1e-7;
    assert_rel(slope, -4.65, 1e-5, "RZ initial slope −n");
}

#[test]
fn michaels_bolger_stops_at_packing() {
    // (1 − φ/φmax)^n, zero at and above φmax (physics.md §3.4 [P]).
    // φ = 0.3, φmax = 0.6: 0.5^4.65 = 0.03983001960372693 (Python 3.11).
    assert_rel(
        michaels_bolger(1.0, 0.3, 0.6, 4.65),
        0.03983001960372693,
        1e-12,
        "MB at φ/φmax = 1/2",
    );
    assert_eq!(michaels_bolger(1.0, 0.6, 0.6, 4.65), 0.0, "MB zero at φmax");
    assert_eq!(
        michaels_bolger(1.0, 0.7, 0.6, 4.65),
        0.0,
        "MB zero above φmax"
    );
    assert!(
        michaels_bolger(1.0, 0.6 - 1e-9, 0.6, 4.65) > 0.0,
        "MB positive just below φmax"
    );
    assert_eq!(
        michaels_bolger(3.0, 0.0, 0.6, 4.65),
        3.0,
        "MB dilute limit v∞"
    );
    // Smooth approach: v ~ (1 − φ/φmax)^n, so 1e-3 below φmax gives ~ (1/600)^4.65.
    let near = michaels_bolger(1.0, 0.599, 0.6, 4.65);
    assert_rel(near, (0.001f64 / 0.6).powf(4.65), 1e-12, "MB near φmax");
}

#[test]
fn vesilind_by_hand() {
    // v0 = 8 m/h = 8/3600 m/s, k = 0.5 m³/kg, X = 3 kg/m³:
    // v = (8/3600)·e^−1.5 = 4.95844800329844e-4 m/s (by hand; Python 3.11
    // math.exp(-1.5) = 0.22313016014842982).
    let v0 = 8.0 / 3600.0;
    assert_rel(
        vesilind(v0, 0.5, 3.0),
        4.95844800329844e-4,
        1e-13,
        "Vesilind by hand",
    );
    assert_eq!(vesilind(v0, 0.5, 0.0), v0);
    // Through HinderedLaw: X = ρs φ, 2500 kg/m³ × 1.2e-3 = 3 kg/m³.
    let law = HinderedLaw::Vesilind {
        v0,
        k: 0.5,
        solid_density: 2500.0,
    };
    assert_rel(
        law.velocity(123.0, 1.2e-3, 0.1),
        4.95844800329844e-4,
        1e-12,
        "Vesilind via HinderedLaw",
    );
}

#[test]
fn every_law_stops_at_phi_max_and_flux_is_phi_times_velocity() {
    // Packing limit (physics.md §3.5, §4): v = 0 at φ ≥ φmax for every law;
    // batch flux f = φ·v (physics.md §3).
    let laws = [
        HinderedLaw::RichardsonZaki { n: 4.65 },
        HinderedLaw::MichaelsBolger { n: 4.65 },
        HinderedLaw::Vesilind {
            v0: 2e-3,
            k: 0.4,
            solid_density: 2650.0,
        },
    ];
    let phi_max = 0.62;
    for law in laws {
        for phi in [phi_max, 0.63, 0.9, 1.0] {
            assert_eq!(
                law.velocity(1e-3, phi, phi_max),
                0.0,
                "{} at φ = {phi}",
                law.name()
            );
            assert_eq!(law.batch_flux(1e-3, phi, phi_max), 0.0);
        }
        for phi in [0.0, 0.05, 0.3, 0.61] {
            let v = law.velocity(1e-3, phi, phi_max);
            assert!(v > 0.0, "{} at φ = {phi}", law.name());
            assert_eq!(law.batch_flux(1e-3, phi, phi_max), phi * v);
        }
    }
    assert_eq!(
        HinderedLaw::RichardsonZaki { n: 4.65 }.velocity(1e-3, 0.2, phi_max),
        richardson_zaki(1e-3, 0.2, 4.65)
    );
    assert_eq!(
        HinderedLaw::MichaelsBolger { n: 4.65 }.velocity(1e-3, 0.2, phi_max),
        michaels_bolger(1e-3, 0.2, phi_max, 4.65)
    );
    let names: Vec<&str> = laws.iter().map(|l| l.name()).collect();
    assert_eq!(names, ["Richardson-Zaki", "Michaels-Bolger", "Vesilind"]);
}

#[test]
fn takacs_benchmark_values_cap_and_floor() {
    use turbid_engine::physics::hindered::takacs;
    // Parameters: the COST/IWA BSM1 set quoted in physics.md §3.4, which the
    // sheet marks as from memory [M] (unconfirmed): v0′ = 250 m/d,
    // v0 = 474 m/d, r_h = 5.76e-4 m³/g, r_p = 2.86e-3 m³/g, f_ns = 2.28e-3.
    // Converted to SI here: 1 d = 86 400 s, 1 m³/g = 1000 m³/kg.
    const DAY: f64 = 86_400.0;
    let (v0_max, v0) = (250.0 / DAY, 474.0 / DAY);
    let (r_h, r_p, f_ns) = (0.576, 2.86, 2.28e-3);
    // Settling velocity [m/d] at X [g/m³] for feed concentration X_f [g/m³].
    let speed = |x_f: f64, x: f64| takacs(v0_max, v0, r_h, r_p, f_ns * x_f / 1e3, x / 1e3) * DAY;

    // The sheet prints v_s(3000) = 84.498, v_s(5000) = 26.730 and
    // v_s(10000) = 1.5005 m/d without X_f. Solving each value for X_f
    // (bisection, Python 3.11.7 [O]) gives 3501.1, 3495.4 and 3495.9 g/m³:
    // they are consistent with X_f = 3500 g/m³ (X_min = 7.98 g/m³), to the
    // printed digits. Exact values there, Python 3.11.7 math.exp in g/m³ and
    // m/d [O]: 84.49787909258737, 26.73016294220804, 1.500508126241069.
    let cases = [
        (3000.0, 84.498, 5e-4, 84.49787909258737),
        (5000.0, 26.730, 5e-4, 26.73016294220804),
        (10000.0, 1.5005, 5e-5, 1.500508126241069),
    ];
    for (x, printed, half_digit, exact) in cases {
        let v = speed(3500.0, x);
        assert!(
            (v - printed).abs() <= half_digit,
            "v_s({x}) = {v} m/d, sheet prints {printed}"
        );
        assert_rel(v, exact, 1e-12, &format!("Takács v_s({x}) [O]"));
        // X_f = 3000 or 4000 g/m³ would not reproduce the printed digits
        // (e.g. 84.4426 and 84.5531 m/d at 3000 g/m³, [O]).
        for other in [3000.0, 4000.0] {
            let w = speed(other, x);
            assert!(
                (w - printed).abs() > half_digit,
                "X_f = {other} also fits v_s({x})"
            );
        }
    }

    // Cap v0′: the bracket peaks at X_min + ln(r_p/r_h)/(r_p − r_h)
    // = 709.586 g/m³ with 474·[…] = 252.696 m/d > 250 [O]; it exceeds 250 m/d
    // only between 602.65 and 831.46 g/m³ (bisection [O]). Inside, the cap
    // is returned exactly; outside, the formula: 474·[…] at 600 g/m³
    // = 249.85592582519757 and at 900 g/m³ = 246.58717975903832 m/d [O].
    let x_min = f_ns * 3.5; // kg/m³
    for x in [0.65, 0.70, 0.7096, 0.8] {
        assert_eq!(
            takacs(v0_max, v0, r_h, r_p, x_min, x),
            v0_max,
            "cap at {x} kg/m³"
        );
    }
    assert_rel(
        speed(3500.0, 600.0),
        249.85592582519757,
        1e-12,
        "below the cap at 600 g/m³ [O]",
    );
    assert_rel(
        speed(3500.0, 900.0),
        246.58717975903832,
        1e-12,
        "below the cap at 900 g/m³ [O]",
    );

    // Floor: at and below X_min the bracket is ≤ 0 (r_p > r_h), v = 0.
    for x in [0.0, 0.5 * x_min, x_min] {
        assert_eq!(
            takacs(v0_max, v0, r_h, r_p, x_min, x),
            0.0,
            "floor at {x} kg/m³"
        );
    }
    // 1 g/m³ above X_min: 474·(e^(−5.76e-4) − e^(−2.86e-3)) = 1.080757897395229 m/d [O].
    assert_rel(
        speed(3500.0, 8.98),
        1.080757897395229,
        1e-11,
        "just above X_min [O]",
    );

    // Through HinderedLaw: X = ρs φ (ρs = 1050 kg/m³, the sludge density of
    // physics.md §6.1 [M]); the terminal velocity is ignored; zero at φmax.
    let law = HinderedLaw::Takacs {
        v0_max,
        v0,
        r_hindered: r_h,
        r_flocculant: r_p,
        min_concentration: x_min,
        solid_density: 1050.0,
    };
    let phi = 3.0 / 1050.0;
    assert_rel(
        law.velocity(1e-3, phi, 0.5) * DAY,
        84.49787909258737,
        1e-12,
        "via HinderedLaw",
    );
    assert_eq!(law.velocity(1e-3, phi, 0.5), law.velocity(7.0, phi, 0.5));
    assert_eq!(
        law.batch_flux(1e-3, phi, 0.5),
        phi * law.velocity(1e-3, phi, 0.5)
    );
    assert_eq!(law.velocity(1e-3, 0.5, 0.5), 0.0);
    assert_eq!(law.velocity(1e-3, 0.0, 0.5), 0.0, "below X_min");
    assert_eq!(law.name(), "Takacs");
}
