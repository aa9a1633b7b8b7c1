//! Fitting hindered-settling laws to settling curves.
//!
//! Promise: the Student t quantile behind the confidence intervals matches
//! scipy (tests/data/student_t_quantiles.csv, tools/reference/student_t_table.py);
//! a fit of Richardson–Zaki v∞ and n to two noisy settling curves recovers
//! the parameters they were made with (truth inside the 95 % intervals,
//! intervals narrow enough to mean something), Vesilind and Takács fits to
//! one curve do the same, and the fitted law comes back as a `models:` block that
//! the scenario reader accepts with the fitted values; a fit with too few
//! readings is refused with a message that says how many are needed.
//!
//! The synthetic readings are deterministic Gaussian noise (SplitMix64 and
//! Box–Muller, fixed seeds) on either the exact Kynch (1952) settling curves
//! of tests/src/kynch.rs (an independent construction, not the continuum
//! solver the fit runs: the fit and the solver's grid error together) or
//! the model's own curve at the fit's grid (the fit's statistics alone,
//! where the grid error would otherwise exceed the intervals; see the
//! Vesilind test). Parameters are invented.

use std::path::Path;
use turbid_engine::analysis::AnalysisError;
use turbid_engine::analysis::curve::SettlingCurve;
use turbid_engine::analysis::fit::{FitOptions, FitResult, LawToFit, fit, simulate};
use turbid_engine::analysis::stats;
use turbid_engine::scenario::{self, Setup};
use turbid_validation::kynch::{BatchProblem, FnFluxWithDerivative, KynchSolution, RichardsonZaki};
use turbid_validation::{Table, assert_rel};

#[test]
fn student_t_quantiles_match_scipy() {
    let t = Table::read("student_t_quantiles.csv");
    let (p, dof, q) = (t.col("p [-]"), t.col("dof [-]"), t.col("quantile [-]"));
    let mut worst = 0.0f64;
    for i in 0..p.len() {
        let mine = stats::quantile(p[i], dof[i] as u32);
        worst = worst.max(((mine - q[i]) / q[i]).abs());
        // scipy.stats.t.ppf 1.17.1 (regularized incomplete beta inversion).
        assert_rel(
            mine,
            q[i],
            1e-9,
            &format!("t quantile p = {}, dof = {}", p[i], dof[i]),
        );
    }
    println!("worst relative difference from scipy: {worst:.2e}");
}

/// Deterministic standard normal draws: SplitMix64 (Steele, Lea & Flood
/// 2014) for uniforms, Box–Muller (1958) for the normal.
struct Noise(u64);

impl Noise {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

const RHO_S: f64 = 2500.0;
const PHI_MAX: f64 = 0.6;
const H0: f64 = 0.35;
/// Reading noise, m (a hand-read cylinder; invented).
const SIGMA: f64 = 1.0e-3;

fn base_yaml(models: &str) -> String {
    format!(
        r#"format: 1
title: invented base for fitting
fluid:
  newtonian: {{ density: "1000 kg/m³", viscosity: "1 mPa·s" }}
solids:
  - name: beads
    density: "{RHO_S} kg/m³"
    size: {{ single: "40 µm" }}
vessel:
  column:
    height: "{H0} m"
    cross_section: {{ round: {{ diameter: "60 mm" }} }}
initial:
  loading: 0.1
{models}
run:
  end_time: "1 h"
  output_interval: "10 s"
  parcels: 1000
  engine: continuum
output:
  file: out/fit.h5
  height_bins: 50
"#
    )
}

const RZ_MODELS: &str = "models:\n  drag: stokes\n  hindered:\n    richardson_zaki: { exponent: 4.65 }\n  max_packing: 0.6\n";

fn parse(text: &str) -> Setup {
    scenario::parse_str(text, Path::new("fit.yaml"))
        .unwrap_or_else(|e| panic!("scenario refused: {e}\n{text}"))
}

/// `n` readings of the exact curve `sol` from t = 0 to `t_end`, with noise.
fn readings(sol: &KynchSolution, c0: f64, t_end: f64, n: usize, seed: u64) -> SettlingCurve {
    let mut noise = Noise(seed);
    let time: Vec<f64> = (0..n).map(|i| t_end * i as f64 / (n - 1) as f64).collect();
    let height: Vec<f64> = time
        .iter()
        .map(|&t| {
            if t == 0.0 {
                H0
            } else {
                (sol.interface_height(t) + SIGMA * noise.normal()).min(H0)
            }
        })
        .collect();
    SettlingCurve::new(time, height, H0, c0, format!("synthetic C0 = {c0} kg/m3")).unwrap()
}

fn report(res: &FitResult, truth: &[f64]) {
    for (p, t) in res.parameters.iter().zip(truth) {
        println!(
            "{} = {:.6e} ± {:.2e} ({}), 95 % CI [{:.6e}, {:.6e}], truth {t:.6e}",
            p.name, p.value, p.standard_error, p.unit, p.lower, p.upper
        );
    }
    println!(
        "points {}, dof {}, t {:.4}, rms {:.3e} m, s {:.3e} m, iterations {}, model runs {}, converged {}",
        res.points,
        res.degrees_of_freedom,
        res.t_quantile,
        res.rms_residual,
        res.residual_sd,
        res.iterations,
        res.model_runs,
        res.converged
    );
}

fn check_truth(res: &FitResult, truth: &[f64]) {
    assert!(res.converged);
    for (p, &t) in res.parameters.iter().zip(truth) {
        assert!(
            p.lower <= t && t <= p.upper,
            "{}: truth {t} outside [{}, {}]",
            p.name,
            p.lower,
            p.upper
        );
        // An interval wider than ±10 % would make the check above weak.
        assert!(
            p.upper - p.lower < 0.2 * t,
            "{}: interval [{}, {}] too wide",
            p.name,
            p.lower,
            p.upper
        );
    }
    // The residual spread is the noise put in (plus the model's grid error).
    assert!(
        res.residual_sd > 0.7 * SIGMA && res.residual_sd < 1.5 * SIGMA,
        "residual sd {}",
        res.residual_sd
    );
}

#[test]
fn richardson_zaki_fit_recovers_known_parameters_from_two_noisy_curves() {
    // Truth: v∞ = 1.0 mm/s, n = 4.2 (invented).
    let truth = [1.0e-3, 4.2];
    let base = parse(&base_yaml(RZ_MODELS));
    let mut curves = Vec::new();
    for (phi0, seed) in [(0.05, 11u64), (0.15, 12)] {
        let sol = KynchSolution::new(
            RichardsonZaki::new(truth[0], truth[1]),
            BatchProblem {
                phi0,
                height: H0,
                phi_max: PHI_MAX,
            },
        )
        .unwrap();
        let t_end = 1.1 * sol.final_time();
        curves.push(readings(&sol, phi0 * RHO_S, t_end, 30, seed));
    }
    let res = fit(
        &base,
        LawToFit::RichardsonZaki,
        &curves,
        &FitOptions::default(),
    )
    .unwrap();
    report(&res, &truth);
    check_truth(&res, &truth);
    println!("{}", res.scenario_snippet);
    // The snippet reads back with the fitted exponent (4 significant digits).
    let models = res
        .scenario_snippet
        .lines()
        .filter(|l| !l.starts_with('#'))
        .collect::<Vec<_>>()
        .join("\n");
    let models = models.replace(
        "  hindered:",
        "  drag: stokes\n  max_packing: 0.6\n  hindered:",
    );
    let back = parse(&base_yaml(&models));
    assert_rel(
        back.classes[0].exponent,
        res.parameters[1].value,
        5e-4,
        "exponent read back",
    );
}

#[test]
fn vesilind_fit_recovers_known_parameters_from_one_noisy_curve() {
    // Truth: v0 = 6 m/h, k = 0.45 L/g; flocs of 1050 kg/m³ packing at
    // φmax = 0.02 (21 kg/m³), a test at 3.5 g/L (invented, as in
    // tests/analysis_sizing.rs). Its curve has a fan, so one test fixes both,
    // but v0 is an extrapolation to C = 0 from the concentrations the test
    // covers (3.5–8 kg/m³), so v0 and k are strongly correlated.
    let truth = [6.0 / 3600.0, 0.45];
    let (rho, phi_max, c0) = (1050.0, 0.02, 3.5);
    let start_models = "models:\n  hindered:\n    vesilind: { v0: \"1 m/h\", k: \"1 L/g\" }\n  max_packing: 0.02\n";
    let yaml = base_yaml(start_models)
        .replace(
            &format!("density: \"{RHO_S} kg/m³\""),
            "density: \"1050 kg/m³\"",
        )
        .replace("loading: 0.1", "loading: \"3.5 g/L\"")
        .replace("40 µm", "100 µm");
    let base = parse(&yaml);
    let a = truth[1] * rho;
    let v0 = truth[0];
    let sol = KynchSolution::new(
        FnFluxWithDerivative {
            flux: move |phi: f64| phi * v0 * (-a * phi).exp(),
            dflux: move |phi: f64| v0 * (-a * phi).exp() * (1.0 - a * phi),
        },
        BatchProblem {
            phi0: c0 / rho,
            height: H0,
            phi_max,
        },
    )
    .unwrap();
    let t_end = 3.0 * sol.first_critical_time();
    let options = FitOptions::default();

    // (1) Readings of the model itself at the fit's grid plus noise: the
    // statistics of the fit alone (truth inside the intervals).
    let n = 40;
    let time: Vec<f64> = (0..n).map(|i| t_end * i as f64 / (n - 1) as f64).collect();
    let template = SettlingCurve::new(time.clone(), vec![H0; n], H0, c0, "times").unwrap();
    let clean = simulate(&base, LawToFit::Vesilind, &truth, &template, options.cells).unwrap();
    let mut noise = Noise(31);
    let height: Vec<f64> = clean
        .iter()
        .zip(&time)
        .map(|(h, &t)| {
            if t == 0.0 {
                H0
            } else {
                (h + SIGMA * noise.normal()).min(H0)
            }
        })
        .collect();
    let curve = SettlingCurve::new(time, height, H0, c0, "model readings").unwrap();
    let res = fit(
        &base,
        LawToFit::Vesilind,
        std::slice::from_ref(&curve),
        &options,
    )
    .unwrap();
    report(&res, &truth);
    check_truth(&res, &truth);
    // The optimiser reached the minimum: the sum of squares at the estimate
    // is not above the one at the truth (measured 3.989e-5 against 4.023e-5 m²).
    let ssr = |p: &[f64]| -> f64 {
        let h = simulate(&base, LawToFit::Vesilind, p, &curve, options.cells).unwrap();
        h.iter()
            .zip(&curve.height)
            .map(|(a, b)| (a - b).powi(2))
            .sum::<f64>()
    };
    let fitted: Vec<f64> = res.parameters.iter().map(|p| p.value).collect();
    let (at_fit, at_truth) = (ssr(&fitted), ssr(&truth));
    println!(
        "stop {:?}: sum of squares {at_fit:.6e} at the estimate, {at_truth:.6e} at the truth",
        res.stop
    );
    assert!(at_fit <= at_truth * 1.001, "{at_fit} > {at_truth}");

    // (2) Readings of the exact curve: the solver's grid error (one cell,
    // 2.3 mm here) comes on top of the noise and, along the correlated
    // direction, moves the estimates by more than the intervals. Measured:
    // v0 −3.6 %, k −2.4 % at 150 cells (about a third of that at 600 cells,
    // in a 10-minute run with an earlier forward-difference Jacobian, not
    // repeated here); bounds 6 % and 4 %.
    let exact = readings(&sol, c0, t_end, n, 21);
    let res_exact = fit(&base, LawToFit::Vesilind, &[exact], &options).unwrap();
    report(&res_exact, &truth);
    assert!(res_exact.converged);
    let e_v0 = res_exact.parameters[0].value / truth[0] - 1.0;
    let e_k = res_exact.parameters[1].value / truth[1] - 1.0;
    assert!(
        e_v0.abs() < 0.06 && e_k.abs() < 0.04,
        "v0 {e_v0:+.4}, k {e_k:+.4}"
    );

    println!("{}", res.scenario_snippet);
    let models = res
        .scenario_snippet
        .lines()
        .filter(|l| !l.starts_with('#'))
        .collect::<Vec<_>>()
        .join("\n")
        + "\n  max_packing: 0.02\n";
    let back = parse(&yaml.replace(start_models, &models));
    match back.hindered {
        turbid_engine::scenario::resolve::HinderedChoice::Vesilind { v0, k } => {
            assert_rel(v0, res.parameters[0].value, 5e-4, "v0 read back");
            assert_rel(k, res.parameters[1].value, 5e-4, "k read back");
        }
        other => panic!("snippet read back as {other:?}"),
    }
}

#[test]
fn takacs_fit_recovers_v0_and_r_hindered_from_model_readings() {
    // The benchmark activated-sludge set quoted in physics.md §3.4 [M]:
    // v0′ = 250 m/d, v0 = 474 m/d, r_h = 0.576 L/g, r_p = 2.86 L/g,
    // f_ns = 0.00228; here as invented truth for flocs of 1050 kg/m³ packing
    // at 21 kg/m³, a test at 3.5 g/L. r_p, v0′ and f_ns are held (a batch
    // test does not fix r_p; see `LawToFit::Takacs`).
    const DAY: f64 = 86_400.0;
    let truth = [474.0 / DAY, 0.576];
    let law = LawToFit::Takacs {
        v0_max: 250.0 / DAY,
        r_flocculant: 2.86,
        non_settleable_fraction: 0.00228,
    };
    let start_models = "models:\n  hindered:\n    takacs: { v0_max: \"250 m/d\", v0: \"100 m/d\", r_hindered: \"1 L/g\", r_flocculant: \"2.86 L/g\", non_settleable_fraction: 0.00228 }\n  max_packing: 0.02\n";
    let yaml = base_yaml(start_models)
        .replace(
            &format!("density: \"{RHO_S} kg/m³\""),
            "density: \"1050 kg/m³\"",
        )
        .replace("loading: 0.1", "loading: \"3.5 g/L\"")
        .replace("40 µm", "100 µm");
    let base = parse(&yaml);
    let c0 = 3.5;
    let options = FitOptions::default();
    // Readings of the model at the fit's grid, over 40 min, plus noise.
    let n = 40;
    let time: Vec<f64> = (0..n).map(|i| 2400.0 * i as f64 / (n - 1) as f64).collect();
    let template = SettlingCurve::new(time.clone(), vec![H0; n], H0, c0, "times").unwrap();
    let clean = simulate(&base, law, &truth, &template, options.cells).unwrap();
    let mut noise = Noise(41);
    let height: Vec<f64> = clean
        .iter()
        .zip(&time)
        .map(|(h, &t)| {
            if t == 0.0 {
                H0
            } else {
                (h + SIGMA * noise.normal()).min(H0)
            }
        })
        .collect();
    let curve = SettlingCurve::new(time, height, H0, c0, "model readings").unwrap();
    let res = fit(&base, law, &[curve], &options).unwrap();
    report(&res, &truth);
    check_truth(&res, &truth);
    println!("{}", res.scenario_snippet);
    let models = res
        .scenario_snippet
        .lines()
        .filter(|l| !l.starts_with('#'))
        .collect::<Vec<_>>()
        .join("\n")
        + "\n  max_packing: 0.02\n";
    let back = parse(&yaml.replace(start_models, &models));
    match back.hindered {
        turbid_engine::scenario::resolve::HinderedChoice::Takacs {
            v0,
            r_hindered,
            r_flocculant,
            ..
        } => {
            assert_rel(v0, res.parameters[0].value, 5e-4, "v0 read back");
            assert_rel(r_hindered, res.parameters[1].value, 5e-4, "r_h read back");
            assert_rel(r_flocculant, 2.86, 1e-12, "r_p kept");
        }
        other => panic!("snippet read back as {other:?}"),
    }
}

#[test]
fn a_fit_with_too_few_readings_is_refused() {
    let base = parse(&base_yaml(RZ_MODELS));
    let sol = KynchSolution::new(
        RichardsonZaki::new(1.0e-3, 4.2),
        BatchProblem {
            phi0: 0.1,
            height: H0,
            phi_max: PHI_MAX,
        },
    )
    .unwrap();
    // t = 0 and 7 readings after it: 2 parameters + 6 degrees of freedom = 8 needed.
    let curve = readings(&sol, 250.0, sol.final_time(), 8, 3);
    let err = fit(
        &base,
        LawToFit::RichardsonZaki,
        &[curve],
        &FitOptions::default(),
    )
    .unwrap_err();
    let msg = err.to_string();
    println!("{msg}");
    assert!(matches!(
        err,
        AnalysisError::TooFewPoints {
            points: 7,
            parameters: 2,
            required: 8,
            ..
        }
    ));
    assert!(
        msg.contains("7 measured points (after t = 0) for 2 parameters: at least 8 are needed"),
        "{msg}"
    );
    assert!(msg.contains("read the interface at more times"), "{msg}");
}
