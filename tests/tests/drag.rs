//! Drag coefficient laws C_D(Re).
//!
//! Promise: every drag law reproduces (1) an independent Python
//! implementation of the same published formulas to near machine precision
//! (`tests/data/drag_coefficients.csv`, written by
//! `tools/reference/drag_tables.py` with numpy 2.4.6, scipy 1.17.1), which
//! catches transcription errors in coefficients and branch limits, and (2) the
//! published check values of the physics reference sheet
//! (`/work/shared/reference/physics.md` §1.8 and §9 #9–#12) to the digits
//! printed there, which catches errors shared by both implementations.

use turbid_engine::physics::drag::{
    DragLaw, ferguson_church_cd, haider_levenspiel_coefficients, haider_levenspiel_sphere,
    morsi_alexander,
};
use turbid_engine::physics::terminal::drag_force;
use turbid_engine::physics::{Fluid, Particle};
use turbid_validation::{Table, assert_printed, assert_rel, drag_laws, rel_diff};

#[test]
fn every_law_matches_the_python_reference_table() {
    // Source: tests/data/drag_coefficients.csv, tools/reference/drag_tables.py
    // (Python 3.11.7, numpy 2.4.6, scipy 1.17.1); same formulas, separate code,
    // Ferguson–Church by brentq instead of the closed form.
    let table = Table::read("drag_coefficients.csv");
    let re = table.col("re [-]");
    for (law, column) in drag_laws() {
        let expected = table.col(&format!("cd_{column} [-]"));
        let mut worst = 0.0_f64;
        for (&r, &e) in re.iter().zip(&expected) {
            let cd = law.drag_coefficient(r);
            assert_rel(
                cd,
                e,
                1e-12,
                &format!("{} C_D at Re = {r} vs drag_tables.py", law.name()),
            );
            worst = worst.max(rel_diff(cd, e));
        }
        println!(
            "{:<20} worst rel. diff vs drag_tables.py: {worst:.2e}",
            column
        );
    }
}

#[test]
fn check_functions_match_the_python_reference_table() {
    // Source: tests/data/drag_coefficients.csv (drag_tables.py, numpy 2.4.6).
    let table = Table::read("drag_coefficients.csv");
    let re = table.col("re [-]");
    let sphere_fit = table.col("cd_haider_levenspiel_sphere_fit [-]");
    let standard = table.col("cd_morsi_alexander [-]");
    for i in 0..re.len() {
        assert_rel(
            haider_levenspiel_sphere(re[i]),
            sphere_fit[i],
            1e-12,
            "H–L sphere fit vs drag_tables.py",
        );
        assert_rel(
            morsi_alexander(re[i]),
            standard[i],
            1e-12,
            "Morsi–Alexander vs drag_tables.py",
        );
    }
}

#[test]
fn clift_grace_weber_matches_physics_sheet_table_1_8() {
    // physics.md §1.8, column "Clift et al." [O values of Clift, Grace & Weber
    // 1978 Table 5.2], printed to 4 significant digits.
    for (re, printed) in [
        (0.1, "244.3"),
        (1.0, "27.16"),
        (10.0, "4.258"),
        (100.0, "1.087"),
        (1000.0, "0.4711"),
        (1e4, "0.4052"),
        (1e5, "0.5018"),
    ] {
        assert_printed(
            DragLaw::CliftGraceWeber.drag_coefficient(re),
            printed,
            &format!("Clift et al. C_D at Re = {re}, physics.md §1.8"),
        );
    }
}

/// One column of physics.md §1.8: name, C_D(Re), printed values at
/// Re = 0.1, 1, 10, 100, 10³, 10⁴, 10⁵ ("" where the sheet has none).
type SheetColumn = (&'static str, Box<dyn Fn(f64) -> f64>, [&'static str; 7]);

#[test]
fn other_laws_match_physics_sheet_table_1_8() {
    // physics.md §1.8 [O values of the formulas of §1.3/§1.6], printed to 4
    // significant digits. Schiller–Naumann at 10³ is the formula value
    // "(0.438)" (the law switches to 0.44 only above 10³).
    let re = [0.1, 1.0, 10.0, 100.0, 1000.0, 1e4, 1e5];
    let law = |l: DragLaw| Box::new(move |r: f64| l.drag_coefficient(r)) as Box<dyn Fn(f64) -> f64>;
    let columns: [SheetColumn; 6] = [
        (
            "Schiller–Naumann",
            law(DragLaw::SchillerNaumann),
            ["247.4", "27.60", "4.151", "1.092", "0.438", "", ""],
        ),
        (
            "Brown–Lawler",
            law(DragLaw::BrownLawler),
            [
                "247.5", "27.60", "4.128", "1.073", "0.4634", "0.4106", "0.4661",
            ],
        ),
        (
            "Haider–Lev. (sphere)",
            Box::new(haider_levenspiel_sphere),
            [
                "249.8", "28.33", "4.319", "1.095", "0.4535", "0.4204", "0.4715",
            ],
        ),
        (
            "H–L general, ψ=1",
            law(DragLaw::HaiderLevenspiel { sphericity: 1.0 }),
            [
                "249.9", "28.47", "4.411", "1.150", "0.4839", "0.4396", "0.4904",
            ],
        ),
        (
            "H–L, ψ=0.8",
            law(DragLaw::HaiderLevenspiel { sphericity: 0.8 }),
            [
                "259.4", "30.74", "4.774", "1.302", "1.255", "1.426", "1.415",
            ],
        ),
        (
            "24/Re",
            law(DragLaw::Stokes),
            ["240", "24", "2.4", "0.24", "", "", ""],
        ),
    ];
    for (name, cd, printed) in columns {
        for (&r, p) in re.iter().zip(printed).filter(|(_, p)| !p.is_empty()) {
            assert_printed(
                cd(r),
                p,
                &format!("{name} C_D at Re = {r}, physics.md §1.8"),
            );
        }
    }
    // Two-term 24/Re + 0.44 at Re = 100: 0.24 + 0.44 = 0.68 (exact arithmetic).
    assert_rel(
        DragLaw::two_term_derived(0.44).drag_coefficient(100.0),
        0.68,
        1e-15,
        "two-term at Re = 100 (exact)",
    );
}

#[test]
fn check_values_9_to_12() {
    // physics.md §9 #9: Clift et al. 1978 Table 5.2 [C; O values], tol 1e-3.
    for (re, v) in [(1.0, 27.16), (100.0, 1.087), (1000.0, 0.4711)] {
        assert_rel(
            DragLaw::CliftGraceWeber.drag_coefficient(re),
            v,
            1e-3,
            &format!("§9 #9 Clift C_D(Re = {re})"),
        );
    }
    // §9 #10: Schiller–Naumann C_D(1) = 27.60 [O], tol 1e-4.
    assert_rel(
        DragLaw::SchillerNaumann.drag_coefficient(1.0),
        27.60,
        1e-4,
        "§9 #10 Schiller–Naumann C_D(1)",
    );
    // §9 #11: standard curve (Morsi & Alexander 1972 fit) [C coeff.; O], tol 1e-3.
    for (re, v) in [(1.0, 26.5), (10.0, 4.10), (100.0, 1.07)] {
        assert_rel(
            morsi_alexander(re),
            v,
            1e-3,
            &format!("§9 #11 Morsi–Alexander C_D(Re = {re})"),
        );
    }
    // §1.8: Morsi & Alexander's own Table 1 values 240.0 at Re = 0.1, 0.458 at
    // 10³ and 0.407 at 10⁴ (the fit passes through them) [C].
    assert_printed(
        morsi_alexander(0.1),
        "240.0",
        "Morsi–Alexander Table 1 at Re = 0.1",
    );
    assert_printed(
        morsi_alexander(1000.0),
        "0.458",
        "Morsi–Alexander Table 1 at Re = 1e3",
    );
    assert_printed(
        morsi_alexander(1e4),
        "0.407",
        "Morsi–Alexander Table 1 at Re = 1e4",
    );
    // §9 #12: Haider–Levenspiel sphere fit C_D(100) = 1.095 [O], tol 1e-3.
    assert_rel(
        haider_levenspiel_sphere(100.0),
        1.095,
        1e-3,
        "§9 #12 H–L sphere C_D(100)",
    );
}

#[test]
fn haider_levenspiel_coefficients_at_sphericity_one() {
    // Haider & Levenspiel 1989 general form at ψ = 1, coefficients evaluated by
    // hand from physics.md §1.6: A = exp(−1.6807) = 0.186226, B = 0.6529,
    // C = exp(−0.8271) = 0.437316, D = exp(8.8798) = 7185.4 (own arithmetic,
    // Python 3.11 math.exp).
    let [a, b, c, d] = haider_levenspiel_coefficients(1.0);
    assert_rel(a, (-1.6807f64).exp(), 1e-13, "H–L A(ψ=1)");
    assert_rel(b, 0.6529, 1e-13, "H–L B(ψ=1)");
    assert_rel(c, (-0.8271f64).exp(), 1e-13, "H–L C(ψ=1)");
    assert_rel(d, 8.8798f64.exp(), 1e-13, "H–L D(ψ=1)");
    assert_printed(d, "7185.4", "H–L D(ψ=1) = exp(8.8798)");
}

#[test]
fn ferguson_church_implied_drag_limits() {
    // Exact limits of C_D = (1/3)(k + √(k² + 4C1/Re))², k² = 0.75 C2 (own
    // algebra from Ferguson & Church 2004 eq. 4): 4C1/(3Re) as Re → 0 and C2
    // as Re → ∞.
    for (c1, c2) in [(18.0, 0.4), (18.0, 1.0), (20.0, 1.1), (24.0, 1.2)] {
        let law = DragLaw::FergusonChurch { c1, c2 };
        assert_rel(
            law.cd_re(0.0),
            4.0 * c1 / 3.0,
            1e-15,
            "Ferguson–Church C_D·Re at Re = 0",
        );
        assert_rel(
            law.drag_coefficient(1e-12) * 1e-12,
            4.0 * c1 / 3.0,
            1e-5,
            "Ferguson–Church C_D·Re as Re → 0",
        );
        assert_rel(
            law.drag_coefficient(1e16),
            c2,
            1e-6,
            "Ferguson–Church C_D as Re → ∞",
        );
        assert_eq!(law.drag_coefficient(7.0), ferguson_church_cd(c1, c2, 7.0));
    }
    // Inverse check: with C_D from the closed form, Ar = (3/4) C_D Re² must
    // satisfy the law Re (C1 + √(0.75 C2 Ar)) = Ar (Ferguson & Church 2004).
    for re in [1e-6, 0.3, 12.0, 480.0, 3e4, 1e7] {
        let ar = 0.75 * ferguson_church_cd(18.0, 1.0, re) * re * re;
        assert_rel(
            re * (18.0 + (0.75 * 1.0 * ar).sqrt()),
            ar,
            1e-13,
            "Ferguson–Church law recovered from C_D",
        );
    }
}

#[test]
fn best_number_is_finite_as_re_goes_to_zero() {
    // C_D ~ 24/Re as Re → 0 for every law (Stokes limit), so C_D·Re → 24 and
    // C_D·Re² → 24·Re → 0 (exact limits of each formula).
    for (law, column) in drag_laws() {
        assert_eq!(law.best_number(0.0), 0.0, "{column}: C_D·Re² at Re = 0");
        assert_rel(
            law.cd_re(0.0),
            24.0,
            1e-15,
            &format!("{column}: C_D·Re at Re = 0"),
        );
        for re in [1e-300, 1e-200, 1e-30] {
            assert_rel(
                law.best_number(re),
                24.0 * re,
                1e-9,
                &format!("{column}: C_D·Re² ≈ 24 Re at Re = {re:e}"),
            );
        }
        assert!(
            law.drag_coefficient(0.0).is_infinite(),
            "{column}: C_D(0) is +∞"
        );
    }
}

#[test]
fn drag_is_never_below_stokes_drag() {
    // C_D ≥ 24/Re is what brackets the terminal-velocity search in (0, Ar/18]
    // (physics.md §1.1); checked on a dense log grid from 1e-8 to 1e8.
    let mut all = drag_laws();
    all.push((
        DragLaw::HaiderLevenspiel { sphericity: 0.3 },
        "haider_levenspiel_psi0p3",
    ));
    for (law, column) in all {
        for i in 0..=1600 {
            let re = 10f64.powf(-8.0 + i as f64 * 0.01);
            assert!(
                law.cd_re(re) >= 24.0 * (1.0 - 1e-15),
                "{column}: C_D·Re < 24 at Re = {re:e}"
            );
        }
    }
}

#[test]
fn piecewise_laws_jump_where_expected() {
    // Relative jump C_D(b⁺)/C_D(b) − 1 at each branch boundary b, from the
    // independent Python functions of tools/reference/drag_tables.py
    // evaluated at b and numpy.nextafter(b, 2b) (Python 3.11.7, numpy 2.4.6).
    // A/B at 0.01 is also 2404.56/2400.1875 − 1 by hand from physics.md §1.3,
    // and I/J is continuous: 0.1·6 − 0.49 = 0.19 − 8e4/1e6 = 0.11 (exact).
    let jump =
        |law: DragLaw, b: f64| law.drag_coefficient(b.next_up()) / law.drag_coefficient(b) - 1.0;
    let law = DragLaw::CliftGraceWeber;
    let expected = [
        (0.01, 0.0018224859168185503),
        (20.0, 0.00755876510631226),
        (260.0, 9.091864781596293e-05),
        (1500.0, 0.0006506431194157614),
        (1.2e4, -8.631377185575051e-05),
        (4.4e4, -0.00012760046213899923),
        (3.38e5, 0.005943410036042707),
        (4e5, -0.2118950752107498),
        (1e6, 0.0),
    ];
    assert_eq!(law.breakpoints(), expected.map(|(b, _)| b));
    for (b, j) in expected {
        assert!(
            (jump(law, b) - j).abs() < 1e-9,
            "Clift et al. jump at Re = {b}: {} vs {j}",
            jump(law, b)
        );
    }
    assert_rel(
        law.drag_coefficient(0.01),
        2400.1875,
        1e-15,
        "branch A owns Re = 0.01: 3/16 + 2400 (exact)",
    );
    assert_rel(
        law.drag_coefficient(1e6),
        0.11,
        1e-12,
        "Clift et al. C_D(1e6) (exact)",
    );
    // Schiller–Naumann: 0.44 / [0.024 (1 + 0.15·1000^0.687)] − 1 (same script).
    assert_eq!(DragLaw::SchillerNaumann.breakpoints(), [1000.0]);
    assert!((jump(DragLaw::SchillerNaumann, 1000.0) - 0.0039057866816221143).abs() < 1e-9);
    assert!(DragLaw::BrownLawler.breakpoints().is_empty());
}

#[test]
fn drag_force_agrees_with_the_drag_coefficient_definition() {
    // F = C_D·½ρf v²·πd²/4 (physics.md §1.1) with C_D from the Python table at
    // the velocity giving each tabulated Re; fluid from §1.9.
    let table = Table::read("drag_coefficients.csv");
    let re = table.col("re [-]");
    let fluid = Fluid {
        density: 998.2072,
        viscosity: 1.0015961e-3,
    };
    let p = Particle {
        diameter: 2e-3,
        density: 2650.0,
    };
    let area = std::f64::consts::PI * p.diameter * p.diameter / 4.0;
    for (law, column) in drag_laws() {
        let cd = table.col(&format!("cd_{column} [-]"));
        for (&r, &c) in re.iter().zip(&cd) {
            let v = r * fluid.viscosity / (fluid.density * p.diameter);
            let expected = c * 0.5 * fluid.density * v * v * area;
            assert_rel(
                drag_force(&law, &p, &fluid, v),
                expected,
                1e-11,
                &format!("{column}: F at Re = {r}"),
            );
            assert_rel(
                drag_force(&law, &p, &fluid, -v),
                -expected,
                1e-11,
                &format!("{column}: F odd in v"),
            );
        }
        assert_eq!(
            drag_force(&law, &p, &fluid, 0.0),
            0.0,
            "{column}: no drag at rest"
        );
    }
}

#[test]
fn two_term_law_from_dimensional_coefficients() {
    // k1 = 3πμd, k2 = (π/8)ρf d² C∞ must map to a = 24, b = C∞ (physics.md
    // §1.4, exact), and the force must be k1 v + k2 v² (exact algebra).
    let pi = std::f64::consts::PI;
    let fluid = Fluid {
        density: 998.2072,
        viscosity: 1.0015961e-3,
    };
    let p = Particle {
        diameter: 0.35e-3,
        density: 1050.0,
    };
    let (k1, k2) = (
        3.0 * pi * fluid.viscosity * p.diameter,
        pi / 8.0 * fluid.density * p.diameter.powi(2) * 0.44,
    );
    let DragLaw::TwoTerm { a, b } = DragLaw::two_term_from_coefficients(k1, k2, &p, &fluid) else {
        panic!("two_term_from_coefficients must return TwoTerm");
    };
    assert_rel(a, 24.0, 1e-14, "a from k1 = 3πμd");
    assert_rel(b, 0.44, 1e-14, "b from k2 = (π/8)ρf d² 0.44");
    assert_eq!(
        DragLaw::two_term_derived(0.44),
        DragLaw::TwoTerm { a: 24.0, b: 0.44 }
    );
    // An arbitrary dimensional law, F = 2e-6 v + 3e-4 v².
    let law = DragLaw::two_term_from_coefficients(2e-6, 3e-4, &p, &fluid);
    for v in [1e-6, 1e-3, 0.05, 2.0] {
        assert_rel(
            drag_force(&law, &p, &fluid, v),
            2e-6 * v + 3e-4 * v * v,
            1e-13,
            "F = k1 v + k2 v²",
        );
    }
}

#[test]
fn names_and_constants() {
    // Ferguson & Church 2004 Table 1 [C] (physics.md §1.5).
    assert_eq!(
        DragLaw::FERGUSON_CHURCH_SMOOTH_SPHERES,
        DragLaw::FergusonChurch { c1: 18.0, c2: 0.4 }
    );
    assert_eq!(
        DragLaw::FERGUSON_CHURCH_NATURAL_SIEVE,
        DragLaw::FergusonChurch { c1: 18.0, c2: 1.0 }
    );
    let names: Vec<&str> = drag_laws().iter().map(|(l, _)| l.name()).collect();
    assert_eq!(
        names,
        [
            "Stokes",
            "Schiller-Naumann",
            "Clift-Grace-Weber",
            "Brown-Lawler",
            "Haider-Levenspiel",
            "Haider-Levenspiel",
            "Ferguson-Church",
            "Ferguson-Church",
            "two-term"
        ]
    );
}
