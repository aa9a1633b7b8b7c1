//! The bidisperse suspensions of the validation tests, shared by the particle
//! and the continuum engine: two classes in a Newtonian liquid, Stokes drag
//! and one Richardson–Zaki exponent for both, so that each class alone settles
//! at exactly v_St,i (1 − φ)^n and the mixture follows the
//! Masliyah–Lockett–Bassoon (MLB) velocities of physics.md §4.1, evaluated
//! here independently of `turbid_engine::physics::polydisperse`.

use crate::assert_rel;
use std::path::Path;
use turbid_engine::scenario::{self, Setup};

/// Standard gravity, m/s² (CGPM 1901, exact; physics.md conventions).
pub const G: f64 = 9.80665;
/// Density of the liquid, kg/m³.
pub const RHO_F: f64 = 1000.0;
/// Richardson–Zaki exponent of both classes: V(φ) = (1 − φ)^(n−2) in MLB.
pub const N_RZ: f64 = 4.7;
/// Packing limit.
pub const PHI_MAX: f64 = 0.6;

/// A bidisperse suspension: class 0 settles faster than class 1.
#[derive(Debug, Clone, Copy)]
pub struct Pair {
    pub name: &'static str,
    /// Solid densities, kg/m³.
    pub density: [f64; 2],
    /// Diameters, m.
    pub diameter: [f64; 2],
    /// Shares of the dry solids by mass.
    pub mass_share: [f64; 2],
    /// Total initial volume fraction.
    pub phi0: f64,
    /// Viscosity of the liquid, Pa·s (viscous enough that Re ≪ 1).
    pub viscosity: f64,
}

/// The engine and resolution a [`Pair`] scenario asks for.
#[derive(Debug, Clone, Copy)]
pub enum Engine {
    Particles {
        parcels: u64,
        seed: u64,
        neighbours: u32,
    },
    Continuum {
        cells: usize,
    },
}

/// Vessel and run settings of a [`Pair`] scenario.
#[derive(Debug, Clone)]
pub struct PairRun {
    /// `vessel.column.cross_section` entry, e.g. `{ round: { diameter: "50 mm" } }`.
    pub cross_section: String,
    /// Fill height, m.
    pub height: f64,
    /// End time and record interval, s.
    pub end: f64,
    pub interval: f64,
    /// Recording slabs over the height.
    pub bins: u32,
    pub engine: Engine,
}

/// Scanning down from the top, the first height at which `profile` reaches
/// `level`, interpolated linearly between slab centres `z` (the rule of
/// `record::interface_height`, for any level).
pub fn first_reach(profile: &[f64], z: &[f64], level: f64) -> f64 {
    let nz = profile.len();
    if profile[nz - 1] >= level {
        return z[nz - 1];
    }
    for k in (0..nz - 1).rev() {
        if profile[k] >= level {
            let s = (profile[k] - level) / (profile[k] - profile[k + 1]);
            return z[k] + s * (z[k + 1] - z[k]);
        }
    }
    0.0
}

impl Pair {
    /// Initial volume fraction of each class: volume shares from mass shares,
    /// (w_i/ρ_i) / Σ (w_k/ρ_k), times φ0.
    pub fn initial_fractions(&self) -> [f64; 2] {
        let v = [
            self.mass_share[0] / self.density[0],
            self.mass_share[1] / self.density[1],
        ];
        [
            self.phi0 * v[0] / (v[0] + v[1]),
            self.phi0 * v[1] / (v[0] + v[1]),
        ]
    }

    /// Stokes velocity of class i alone, (ρ_i − ρ_f) g d_i² / (18 μ_f)
    /// (physics.md §1.2); = μ δ_i ρ̄_i in the notation of §4.1.
    pub fn stokes(&self, i: usize) -> f64 {
        (self.density[i] - RHO_F) * G * self.diameter[i] * self.diameter[i]
            / (18.0 * self.viscosity)
    }

    /// MLB settling velocities relative to the vessel in a closed batch column
    /// (physics.md §4.1, boxed flux divided by φ_i):
    ///
    /// u_i = μ V(φ) [δ_i (ρ̄_i − ρ̄ᵀΦ) − Σ_k δ_k φ_k (ρ̄_k − ρ̄ᵀΦ)],
    /// μ = g d_1² / (18 μ_f), δ_i = d_i²/d_1², V(φ) = (1 − φ)^(n−2).
    pub fn mlb(&self, phi: [f64; 2]) -> [f64; 2] {
        let total = phi[0] + phi[1];
        let excess = [self.density[0] - RHO_F, self.density[1] - RHO_F];
        let mixture = excess[0] * phi[0] + excess[1] * phi[1];
        let mu = G * self.diameter[0] * self.diameter[0] / (18.0 * self.viscosity);
        let delta = [1.0, (self.diameter[1] / self.diameter[0]).powi(2)];
        let v = (1.0 - total).powf(N_RZ - 2.0);
        let sum: f64 = (0..2)
            .map(|k| delta[k] * phi[k] * (excess[k] - mixture))
            .sum();
        [
            mu * v * (delta[0] * (excess[0] - mixture) - sum),
            mu * v * (delta[1] * (excess[1] - mixture) - sum),
        ]
    }

    /// The scenario text of this pair for `run`.
    pub fn yaml(&self, run: &PairRun) -> String {
        let species = |i: usize| {
            format!(
                "  - name: class{i}\n    density: \"{} kg/m³\"\n    size: {{ single: \"{} µm\" }}\n    mass_share: {}\n",
                self.density[i],
                self.diameter[i] * 1e6,
                self.mass_share[i]
            )
        };
        let (engine, numerics) = match run.engine {
            Engine::Particles {
                parcels,
                seed,
                neighbours,
            } => (
                format!("  parcels: {parcels}\n  seed: {seed}\n  engine: particles\n"),
                format!("  neighbours: {neighbours}\n"),
            ),
            // `run.parcels` is required by the format; the continuum engine ignores it.
            Engine::Continuum { cells } => (
                "  parcels: 1000\n  engine: continuum\n".to_string(),
                format!("  cells: {cells}\n"),
            ),
        };
        format!(
            r#"format: 1
title: {name}
fluid:
  newtonian: {{ density: "{RHO_F} kg/m³", viscosity: "{mu} mPa·s" }}
solids:
{s0}{s1}vessel:
  column:
    height: "{height} m"
    cross_section: {section}
initial:
  loading: {phi0}
models:
  drag: stokes
  hindered:
    richardson_zaki: {{ exponent: {N_RZ} }}
  max_packing: {PHI_MAX}
run:
  end_time: "{end:e} s"
  output_interval: "{interval:e} s"
{engine}numerics:
{numerics}output:
  file: out/bidisperse.h5
  height_bins: {bins}
"#,
            name = self.name,
            mu = self.viscosity * 1e3,
            s0 = species(0),
            s1 = species(1),
            height = run.height,
            section = run.cross_section,
            phi0 = self.phi0,
            end = run.end,
            interval = run.interval,
            bins = run.bins,
        )
    }

    /// Parse the scenario and check that the engine reads the suspension as
    /// intended (class order, per-class loadings, Stokes velocities, n).
    pub fn setup(&self, run: &PairRun) -> (Setup, String) {
        let text = self.yaml(run);
        let setup = scenario::parse_str(&text, Path::new("bidisperse.yaml"))
            .unwrap_or_else(|e| panic!("test scenario refused: {e}\n{text}"));
        let phi = self.initial_fractions();
        assert_eq!(setup.classes.len(), 2);
        for (i, c) in setup.classes.iter().enumerate() {
            assert_eq!(c.species, i);
            assert_rel(
                setup.initial_volume_fraction * c.volume_share,
                phi[i],
                1e-12,
                &format!("{}: initial φ of class {i}", self.name),
            );
            assert_rel(
                c.terminal.velocity,
                self.stokes(i),
                1e-12,
                &format!("{}: Stokes velocity of class {i}", self.name),
            );
            assert_eq!(c.exponent, N_RZ);
        }
        (setup, text)
    }

    /// The top of the column at early times (physics.md §4.3): clear liquid,
    /// then a zone of class 1 alone at φ₂'', then the initial mixture.
    ///
    /// Across the lower discontinuity (speed s, down) the Rankine–Hugoniot
    /// condition holds for each class: s [φ_i] = [f_i]. Class 0 is absent
    /// above, so s φ₁⁰ = f₁(mixture), i.e. s = u₁⁰. For class 1, with its flux
    /// in the upper zone f = φ v₂ (1 − φ)^n (MLB with one class, physics.md
    /// §4.1):
    ///
    ///   u₁⁰ (φ₂⁰ − φ₂'') = φ₂⁰ u₂⁰ − φ₂'' v₂ (1 − φ₂'')^n.
    ///
    /// The upper discontinuity (clear liquid / zone) descends at
    /// f(φ₂'')/φ₂'' = v₂ (1 − φ₂'')^n.
    pub fn upper_zone(&self) -> UpperZone {
        let phi = self.initial_fractions();
        let u = self.mlb(phi);
        let v2 = self.stokes(1);
        let jump = |z: f64| u[0] * (phi[1] - z) - (phi[1] * u[1] - z * v2 * (1.0 - z).powf(N_RZ));
        // The root that grows from 0 as φ₂⁰ → 0: the first sign change on a
        // grid from 0 up, refined by bisection.
        let grid: Vec<f64> = (0..=4000).map(|i| PHI_MAX * i as f64 / 4000.0).collect();
        let k = grid
            .windows(2)
            .position(|w| jump(w[0]).signum() != jump(w[1]).signum())
            .expect("the jump condition has a root in (0, φmax)");
        let (mut lo, mut hi) = (grid[k], grid[k + 1]);
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if jump(mid).signum() == jump(lo).signum() {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let phi_zone = 0.5 * (lo + hi);
        UpperZone {
            phi_zone,
            lower_speed: u[0],
            upper_speed: v2 * (1.0 - phi_zone).powf(N_RZ),
        }
    }
}

/// The upper zone of a [`Pair`] (see [`Pair::upper_zone`]).
#[derive(Debug, Clone, Copy)]
pub struct UpperZone {
    /// Concentration φ₂'' of class 1 in the zone.
    pub phi_zone: f64,
    /// Descent speeds of the mixture/zone and the zone/clear-liquid fronts, m/s.
    pub lower_speed: f64,
    pub upper_speed: f64,
}
