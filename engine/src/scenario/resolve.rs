//! From a parsed scenario to engine inputs in SI units, refusing anything
//! unphysical with its reason and the key it came from.

use super::distribution::{ClassShare, Distribution};
use super::error::Problem;
use super::locate::Locations;
use super::spec::*;
pub use super::spec::{EngineSpec, SearchSpec};
use super::units::Loading;
use crate::operation::{Operation, Schedule, Underflow};
use crate::physics::drag::DragLaw;
use crate::physics::hindered::{ExponentRule, HinderedLaw};
use crate::physics::terminal::{Terminal, relaxation_time, terminal_velocity};
use crate::physics::{Fluid, Particle, STANDARD_GRAVITY, water};
use std::path::PathBuf;

/// Smallest particle turbid accepts: below about 0.1 µm Brownian motion, not
/// gravity, decides where particles go (common practice).
pub const MIN_DIAMETER: f64 = 0.1e-6;
/// Largest particle: the drag correlations end near Re ≈ 2×10⁵, reached by
/// dense grains of about 100 mm in water.
pub const MAX_DIAMETER: f64 = 0.1;
/// Upper bound on the packing limit: even strongly polydisperse beds stay below it.
pub const MAX_PACKING_LIMIT: f64 = 0.9;
/// Most size classes per species.
pub const MAX_CLASSES: u32 = 64;
/// Most size classes over all species (the engines keep per-class sums on the stack).
pub const MAX_TOTAL_CLASSES: usize = 128;

/// How the particle shape enters the drag law.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shape {
    Sphere,
    NonSpherical { sphericity: f64 },
    NaturalGrains,
}

/// A solid species after resolution.
#[derive(Debug, Clone, PartialEq)]
pub struct Species {
    pub name: String,
    /// Solid density, kg/m³.
    pub density: f64,
    pub shape: Shape,
    /// Share of the total solids volume.
    pub volume_share: f64,
}

/// One size class of one species, with its single-particle settling data.
#[derive(Debug, Clone, PartialEq)]
pub struct SizeClass {
    pub species: usize,
    /// Class bounds and representative diameter, m.
    pub lower: f64,
    pub upper: f64,
    pub diameter: f64,
    /// Share of the total solids volume.
    pub volume_share: f64,
    pub drag: DragLaw,
    /// Terminal settling in the clear fluid.
    pub terminal: Terminal,
    /// Velocity relaxation time, s.
    pub relaxation_time: f64,
    /// Hindered-settling exponent n for this class.
    pub exponent: f64,
}

/// The batch column, or the tank of a thickener.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    /// Fill height, m.
    pub height: f64,
    /// Cross-section area, m².
    pub area: f64,
    /// Diameter for wall effects: the diameter of a round column, 4A/P of a rectangular one, m.
    pub wall_diameter: f64,
    /// Human-readable cross-section.
    pub description: String,
    /// Shape of the cross-section, m.
    pub shape: ColumnShape,
}

/// Cross-section shape of a column, m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ColumnShape {
    Round { diameter: f64 },
    Rectangular { width: f64, depth: f64 },
}

/// Which hindered-settling law applies (the exponent is per class).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum HinderedChoice {
    RichardsonZaki,
    MichaelsBolger,
    /// v0 in m/s, k in m³/kg.
    Vesilind {
        v0: f64,
        k: f64,
    },
    /// Velocities in m/s, r_h and r_p in m³/kg, C_min in kg/m³.
    Takacs {
        v0_max: f64,
        v0: f64,
        r_hindered: f64,
        r_flocculant: f64,
        min_concentration: f64,
    },
}

/// Run control in SI.
#[derive(Debug, Clone, PartialEq)]
pub struct RunControl {
    pub end_time: f64,
    pub output_interval: f64,
    pub parcels: u64,
    pub seed: u64,
}

/// Numerical settings in SI.
#[derive(Debug, Clone, PartialEq)]
pub struct Numerics {
    pub neighbours: u32,
    pub kernel_aspect: f64,
    pub courant: f64,
    pub search: SearchSpec,
    /// Dispersion diffusivity, m²/s (0 for none).
    pub dispersion: f64,
    /// Cells over the height (continuum engine).
    pub cells: usize,
}

/// Power-law effective solids stress σe = σ0((φ/φc)^k − 1) above φc.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Compression {
    /// σ0, Pa.
    pub yield_stress: f64,
    /// φc.
    pub gel_point: f64,
    /// k.
    pub exponent: f64,
}

/// Output settings.
#[derive(Debug, Clone, PartialEq)]
pub struct OutputControl {
    pub file: PathBuf,
    pub height_bins: usize,
}

/// A checked scenario, ready for an engine.
#[derive(Debug, Clone)]
pub struct Setup {
    pub title: String,
    pub gravity: f64,
    pub fluid: Fluid,
    /// Where the fluid properties come from.
    pub fluid_source: String,
    /// Water temperature, K, when the fluid is water.
    pub temperature: Option<f64>,
    pub species: Vec<Species>,
    pub classes: Vec<SizeClass>,
    pub column: Column,
    /// Initial solids volume fraction φ0.
    pub initial_volume_fraction: f64,
    pub max_packing: f64,
    pub hindered: HinderedChoice,
    /// Bed compression, if the scenario gives it.
    pub compression: Option<Compression>,
    /// Feed, outlets and flows of a continuous thickener (None for a batch
    /// column). The tank's height and cross-section are in `column`
    /// (height = floor to overflow lip); `initial_volume_fraction` is the
    /// tank's content at the start (0 = clear liquid).
    pub thickener: Option<Operation>,
    /// Which engine runs the scenario.
    pub engine: EngineSpec,
    pub run: RunControl,
    pub numerics: Numerics,
    pub output: OutputControl,
    /// Things the user should know that do not stop the run.
    pub warnings: Vec<Problem>,
}

impl Setup {
    /// Hindered-settling law of one class.
    pub fn hindered_law(&self, class: &SizeClass) -> HinderedLaw {
        match self.hindered {
            HinderedChoice::RichardsonZaki => HinderedLaw::RichardsonZaki { n: class.exponent },
            HinderedChoice::MichaelsBolger => HinderedLaw::MichaelsBolger { n: class.exponent },
            HinderedChoice::Vesilind { v0, k } => HinderedLaw::Vesilind {
                v0,
                k,
                solid_density: self.species[class.species].density,
            },
            HinderedChoice::Takacs {
                v0_max,
                v0,
                r_hindered,
                r_flocculant,
                min_concentration,
            } => HinderedLaw::Takacs {
                v0_max,
                v0,
                r_hindered,
                r_flocculant,
                min_concentration,
                solid_density: self.species[class.species].density,
            },
        }
    }

    /// Hindered settling velocity of a class in the initial suspension, m/s.
    pub fn initial_hindered_velocity(&self, class: &SizeClass) -> f64 {
        self.hindered_law(class).velocity(
            class.terminal.velocity,
            self.initial_volume_fraction,
            self.max_packing,
        )
    }

    /// Mean solid density, kg/m³ (volume-weighted over species).
    pub fn mean_solid_density(&self) -> f64 {
        self.species
            .iter()
            .map(|s| s.volume_share * s.density)
            .sum()
    }
}

/// Collects problems and warnings, each located through the key path.
struct Checker<'a> {
    locs: &'a Locations,
    problems: Vec<Problem>,
    warnings: Vec<Problem>,
}

impl Checker<'_> {
    fn problem(&self, key: &str, message: String, hint: Option<String>) -> Problem {
        let (line, column) = match self.locs.find(key) {
            Some((l, c)) => (Some(l), Some(c)),
            None => (None, None),
        };
        Problem {
            key: key.to_string(),
            message,
            hint,
            line,
            column,
        }
    }
    fn refuse(&mut self, key: &str, message: impl Into<String>, hint: impl Into<String>) {
        let hint = hint.into();
        let p = self.problem(key, message.into(), (!hint.is_empty()).then_some(hint));
        self.problems.push(p);
    }
    fn warn(&mut self, key: &str, message: impl Into<String>) {
        let p = self.problem(key, message.into(), None);
        self.warnings.push(p);
    }
    /// Refuse a non-positive or non-finite value; returns whether it was fine.
    fn positive(&mut self, key: &str, value: f64, what: &str, unit: &str) -> bool {
        if value.is_finite() && value > 0.0 {
            return true;
        }
        self.refuse(
            key,
            format!("{what} must be positive, found {} {unit}", fmt_si(value)),
            "check the sign and the unit of this value",
        );
        false
    }
}

/// A value in SI with four significant digits, e.g. `-9.800e-5` or `2650`.
fn fmt_si(v: f64) -> String {
    let a = v.abs();
    if v == 0.0 || (1e-2..1e5).contains(&a) {
        format!("{v}")
    } else {
        format!("{v:.3e}")
    }
}

fn um(d: f64) -> String {
    format!("{:.4} µm", d * 1e6)
}

/// Resolve a parsed scenario. `locs` locates keys in the source text.
pub fn resolve(spec: &ScenarioSpec, locs: &Locations) -> Result<Setup, Vec<Problem>> {
    let mut ck = Checker {
        locs,
        problems: Vec::new(),
        warnings: Vec::new(),
    };
    let g = STANDARD_GRAVITY;

    if spec.format != 1 {
        ck.refuse(
            "format",
            format!("scenario format {} is not known to this build", spec.format),
            "this build of turbid reads `format: 1`",
        );
    }

    // Fluid.
    let (fluid, fluid_source, temperature) = match &spec.fluid {
        FluidSpec::Water { temperature } => {
            let tc = temperature.si() - 273.15;
            if !(water::MIN_CELSIUS..=water::MAX_CELSIUS).contains(&tc) {
                ck.refuse(
                    "fluid.water.temperature",
                    format!(
                        "{tc:.2} °C is outside the liquid range of water at atmospheric pressure ({} to {} °C)",
                        water::MIN_CELSIUS,
                        water::MAX_CELSIUS
                    ),
                    "give a temperature between 0 and 100 °C, or describe the liquid as `newtonian` with its density and viscosity",
                );
                (
                    Fluid {
                        density: 1000.0,
                        viscosity: 1e-3,
                    },
                    String::new(),
                    None,
                )
            } else {
                (
                    Fluid {
                        density: water::density(tc),
                        viscosity: water::viscosity(tc),
                    },
                    format!(
                        "water at {tc:.2} °C, 0.101325 MPa (density IAPWS-95, viscosity IAPWS 2008)"
                    ),
                    Some(temperature.si()),
                )
            }
        }
        FluidSpec::Newtonian { density, viscosity } => {
            ck.positive(
                "fluid.newtonian.density",
                density.si(),
                "fluid density",
                "kg/m³",
            );
            ck.positive(
                "fluid.newtonian.viscosity",
                viscosity.si(),
                "fluid viscosity",
                "Pa·s",
            );
            (
                Fluid {
                    density: density.si(),
                    viscosity: viscosity.si(),
                },
                "Newtonian liquid as given".to_string(),
                None,
            )
        }
    };

    // Vessel.
    let (column, thickener_geometry) = vessel(&mut ck, &spec.vessel);
    // Models.
    let max_packing = spec.models.max_packing;
    if !(max_packing > 0.0 && max_packing <= MAX_PACKING_LIMIT) {
        ck.refuse(
            "models.max_packing",
            format!(
                "maximum packing fraction must lie in (0, {MAX_PACKING_LIMIT}], found {max_packing}"
            ),
            "random close packing of equal spheres is 0.64; settled beds are typically 0.55–0.65",
        );
    } else if !(0.45..=0.75).contains(&max_packing) {
        ck.warn(
            "models.max_packing",
            format!("maximum packing fraction {max_packing} is unusual; settled beds of non-colloidal particles are typically 0.55–0.65"),
        );
    }
    let (hindered, exponent_spec) = match &spec.models.hindered {
        HinderedSpec::RichardsonZaki { exponent } => (HinderedChoice::RichardsonZaki, *exponent),
        HinderedSpec::MichaelsBolger { exponent } => (HinderedChoice::MichaelsBolger, *exponent),
        HinderedSpec::Vesilind { v0, k } => {
            ck.positive("models.hindered.vesilind.v0", v0.si(), "Vesilind v0", "m/s");
            ck.positive("models.hindered.vesilind.k", k.si(), "Vesilind k", "m³/kg");
            (
                HinderedChoice::Vesilind {
                    v0: v0.si(),
                    k: k.si(),
                },
                ExponentSpec::Auto,
            )
        }
        HinderedSpec::Takacs {
            v0_max,
            v0,
            r_hindered,
            r_flocculant,
            non_settleable_fraction,
        } => {
            let key = "models.hindered.takacs";
            ck.positive(
                &format!("{key}.v0_max"),
                v0_max.si(),
                "Takács v0_max",
                "m/s",
            );
            ck.positive(&format!("{key}.v0"), v0.si(), "Takács v0", "m/s");
            ck.positive(
                &format!("{key}.r_hindered"),
                r_hindered.si(),
                "Takács r_h",
                "m³/kg",
            );
            ck.positive(
                &format!("{key}.r_flocculant"),
                r_flocculant.si(),
                "Takács r_p",
                "m³/kg",
            );
            if !(0.0..1.0).contains(non_settleable_fraction) {
                ck.refuse(
                    &format!("{key}.non_settleable_fraction"),
                    format!("the non-settleable share must lie in [0, 1), found {non_settleable_fraction}"),
                    "activated sludges have shares of about 0.001–0.01",
                );
            }
            (
                HinderedChoice::Takacs {
                    v0_max: v0_max.si(),
                    v0: v0.si(),
                    r_hindered: r_hindered.si(),
                    r_flocculant: r_flocculant.si(),
                    // f_ns for now; scaled by the initial concentration once it is known.
                    min_concentration: *non_settleable_fraction,
                },
                ExponentSpec::Auto,
            )
        }
    };
    let exponent_key = match &spec.models.hindered {
        HinderedSpec::RichardsonZaki { .. } => "models.hindered.richardson_zaki.exponent",
        _ => "models.hindered.michaels_bolger.exponent",
    };
    if let ExponentSpec::Fixed(n) = exponent_spec {
        if !(n.is_finite() && n > 1.0) {
            ck.refuse(
                exponent_key,
                format!("the hindered-settling exponent must exceed 1, found {n}"),
                "Richardson–Zaki found n from 2.39 (turbulent) to 4.65 (creeping flow); write `auto` to compute it",
            );
        } else if !(2.0..=6.0).contains(&n) {
            ck.warn(
                exponent_key,
                format!("exponent n = {n} lies outside the 2–6 range seen in experiments"),
            );
        }
    }

    // Species.
    if spec.solids.is_empty() {
        ck.refuse(
            "solids",
            "at least one solid species is needed",
            "add a list item under `solids:`",
        );
    }
    let many = spec.solids.len() > 1;
    let mut species = Vec::new();
    let mut mass_shares = Vec::new();
    let mut class_shares: Vec<Vec<ClassShare>> = Vec::new();
    for (i, s) in spec.solids.iter().enumerate() {
        let key = format!("solids[{i}]");
        let rho = s.density.si();
        if ck.positive(&format!("{key}.density"), rho, "particle density", "kg/m³")
            && rho <= fluid.density
        {
            ck.refuse(
                &format!("{key}.density"),
                format!(
                    "particles of {} kg/m³ are not denser than the fluid ({:.1} kg/m³): they would not settle",
                    fmt_si(rho),
                    fluid.density
                ),
                "give the density of the solid material itself (not its bulk density); floating particles are outside turbid's scope",
            );
        }
        let shape = match &s.shape {
            ShapeSpec::Sphere => Shape::Sphere,
            ShapeSpec::NaturalGrains => Shape::NaturalGrains,
            ShapeSpec::NonSpherical { sphericity } => {
                let psi = *sphericity;
                if !(psi > 0.0 && psi <= 1.0) {
                    ck.refuse(
                        &format!("{key}.shape.non_spherical.sphericity"),
                        format!("sphericity must lie in (0, 1], found {psi}"),
                        "a sphere has sphericity 1; a cube 0.806; typical sand grains 0.7–0.9",
                    );
                } else if psi < 0.026 {
                    ck.warn(
                        &format!("{key}.shape.non_spherical.sphericity"),
                        "sphericity below 0.026 lies outside the data Haider–Levenspiel fitted",
                    );
                }
                Shape::NonSpherical { sphericity: psi }
            }
        };
        let share = match (s.mass_share, many) {
            (Some(f), _) => {
                if !(f.0 > 0.0 && f.0 <= 1.0) {
                    ck.refuse(
                        &format!("{key}.mass_share"),
                        format!("mass share must lie in (0, 1], found {}", f.0),
                        "write a fraction such as 0.35 or a percentage such as \"35 %\"",
                    );
                }
                f.0
            }
            (None, false) => 1.0,
            (None, true) => {
                ck.refuse(
                    &key,
                    format!("species `{}` has no `mass_share`", s.name),
                    "with several species, give each one's share of the dry solids, e.g. `mass_share: \"35 %\"`",
                );
                0.0
            }
        };
        mass_shares.push(share);

        let dist = size_distribution(&mut ck, &format!("{key}.size"), &s.size);
        let n = match (&s.size, s.size_classes) {
            (SizeSpec::Single(_), Some(n)) if n != 1 => {
                ck.refuse(
                    &format!("{key}.size_classes"),
                    format!("a single size makes one class, not {n}"),
                    "remove `size_classes` or describe a distribution",
                );
                1
            }
            (_, Some(n)) if n == 0 || n > MAX_CLASSES => {
                ck.refuse(
                    &format!("{key}.size_classes"),
                    format!("size classes must be between 1 and {MAX_CLASSES}, found {n}"),
                    "6–12 classes resolve most distributions",
                );
                1
            }
            (SizeSpec::Single(_), None) => 1,
            (_, Some(n)) => n as usize,
            (_, None) => 8,
        };
        let cls = dist
            .as_ref()
            .map(|d| d.classes(n, (MIN_DIAMETER, MAX_DIAMETER)))
            .unwrap_or_default();
        if let Some(d) = &dist {
            let colloidal = d.passing(MIN_DIAMETER);
            if colloidal > 0.01 {
                ck.warn(
                    &format!("{key}.size"),
                    format!(
                        "{:.1} % of the solids is finer than {}; it is represented by the finest class, which overstates its settling (Brownian motion keeps such fines suspended)",
                        colloidal * 100.0,
                        um(MIN_DIAMETER)
                    ),
                );
            }
        }
        let out_of_range = dist.is_some() && cls.is_empty();
        for c in &cls {
            if c.diameter < MIN_DIAMETER || c.diameter > MAX_DIAMETER {
                ck.refuse(
                    &format!("{key}.size"),
                    format!(
                        "particle size {} lies outside the {} – {} mm range turbid covers",
                        um(c.diameter),
                        um(MIN_DIAMETER),
                        MAX_DIAMETER * 1e3
                    ),
                    "below 0.1 µm Brownian motion dominates settling; above 100 mm the drag laws end",
                );
                break;
            }
        }
        if out_of_range {
            ck.refuse(
                &format!("{key}.size"),
                format!(
                    "the size distribution lies outside the {} – {} mm range turbid covers",
                    um(MIN_DIAMETER),
                    MAX_DIAMETER * 1e3
                ),
                "below 0.1 µm Brownian motion dominates settling; above 100 mm the drag laws end",
            );
        }
        if let Some(Distribution::Table(rows)) = &dist
            && rows[0].1 > 0.05
        {
            ck.warn(
                &format!("{key}.size"),
                format!(
                    "{:.1} % of the solids is finer than the finest size given ({}); it is treated as particles of that size, which overstates their settling",
                    rows[0].1 * 100.0,
                    um(rows[0].0)
                ),
            );
        }
        class_shares.push(cls);
        species.push(Species {
            name: s.name.clone(),
            density: rho,
            shape,
            volume_share: 0.0,
        });
    }
    if many && ck.problems.is_empty() {
        let total: f64 = mass_shares.iter().sum();
        if (total - 1.0).abs() > 1e-6 {
            ck.refuse(
                "solids",
                format!("species mass shares add up to {:.4}, not 1", total),
                "the shares are fractions of the dry solids and must add up to 1 (100 %)",
            );
        }
    }

    // Volume shares from mass shares, and the mean solid density.
    let vol: Vec<f64> = species
        .iter()
        .zip(&mass_shares)
        .map(|(s, w)| if s.density > 0.0 { w / s.density } else { 0.0 })
        .collect();
    let vol_total: f64 = vol.iter().sum();
    for (s, v) in species.iter_mut().zip(&vol) {
        s.volume_share = if vol_total > 0.0 { v / vol_total } else { 0.0 };
    }
    let rho_s_mean: f64 = species.iter().map(|s| s.volume_share * s.density).sum();

    // Initial loading as a volume fraction: required for a column; a
    // thickener starts with clear liquid unless told otherwise.
    let continuous = thickener_geometry.is_some();
    let phi0 = match &spec.initial {
        Some(init) => loading_fraction(init.loading, rho_s_mean, fluid.density),
        None if continuous => 0.0,
        None => {
            ck.refuse(
                "initial",
                "a batch column needs its initial loading",
                "add `initial: { loading: \"10 vol%\" }`",
            );
            0.0
        }
    };
    if ck.problems.is_empty() {
        let low = if continuous {
            !(phi0.is_finite() && phi0 >= 0.0)
        } else {
            !(phi0.is_finite() && phi0 > 0.0)
        };
        if low {
            ck.refuse(
                "initial.loading",
                if continuous {
                    "the initial solids loading cannot be negative (and a mass fraction must be below 100 %)"
                } else {
                    "the solids loading must be positive (and a mass fraction below 100 %)"
                },
                "write e.g. \"8 vol%\", \"25 wt%\" or \"120 g/L\"",
            );
        } else if phi0 >= max_packing {
            ck.refuse(
                "initial.loading",
                format!(
                    "a loading of {:.2} vol% is at or above the maximum packing fraction ({:.2} vol%): the suspension would already be a bed",
                    phi0 * 100.0,
                    max_packing * 100.0
                ),
                "lower the loading, or raise `models.max_packing` if the bed really packs denser",
            );
        }
    }

    // Continuous operation.
    let mut thickener = match (&spec.operation, thickener_geometry) {
        (Some(op), Some(geometry)) => operation(
            &mut ck,
            op,
            &column,
            geometry,
            (rho_s_mean, fluid.density),
            max_packing,
            spec.run.end_time.si(),
        ),
        (None, Some(_)) => {
            ck.refuse(
                "vessel.thickener",
                "a thickener needs its feed and underflow under `operation`",
                "add `operation: { feed_flow: \"450 m³/h\", feed_solids: \"3.5 g/L\", underflow: { ratio: 0.4 } }`",
            );
            None
        }
        (Some(_), None) => {
            ck.refuse(
                "operation",
                "a batch column has no feed or outlets, so `operation` does not apply",
                "remove `operation`, or describe the vessel as `thickener:`",
            );
            None
        }
        (None, None) => None,
    };

    let hindered = match hindered {
        HinderedChoice::Takacs {
            v0_max,
            v0,
            r_hindered,
            r_flocculant,
            min_concentration: fns,
        } => HinderedChoice::Takacs {
            v0_max,
            v0,
            r_hindered,
            r_flocculant,
            // C_min = f_ns × feed concentration; in a batch column the feed
            // is the initial suspension, in a thickener the feed at the start.
            min_concentration: fns
                * thickener.as_ref().map_or(phi0, |op| op.feed_solids.at(0.0))
                * rho_s_mean,
        },
        other => other,
    };

    // Run and output.
    let run = RunControl {
        end_time: spec.run.end_time.si(),
        output_interval: spec.run.output_interval.si(),
        parcels: spec.run.parcels,
        seed: spec.run.seed,
    };
    if ck.positive("run.end_time", run.end_time, "end time", "s")
        && ck.positive(
            "run.output_interval",
            run.output_interval,
            "output interval",
            "s",
        )
    {
        if run.output_interval > run.end_time {
            ck.refuse(
                "run.output_interval",
                "the output interval is longer than the run",
                "make `output_interval` at most `end_time`",
            );
        } else if run.end_time / run.output_interval > 1e6 {
            ck.refuse(
                "run.output_interval",
                format!(
                    "{:.0} records would be written",
                    run.end_time / run.output_interval
                ),
                "a few hundred to a few thousand records resolve a settling curve",
            );
        }
    }
    let nclasses: usize = class_shares.iter().map(Vec::len).sum();
    if run.parcels < nclasses.max(1) as u64 {
        ck.refuse(
            "run.parcels",
            format!(
                "{} parcels cannot represent {} size classes",
                run.parcels, nclasses
            ),
            "use at least one parcel per class; 10⁴–10⁶ parcels give smooth profiles",
        );
    }
    let bins = spec.output.height_bins;
    if !(2..=100_000).contains(&bins) {
        ck.refuse(
            "output.height_bins",
            format!("height bins must be between 2 and 100000, found {bins}"),
            "50–200 bins resolve a laboratory column",
        );
    }
    let nm = &spec.numerics;
    if !(8..=1000).contains(&nm.neighbours) {
        ck.refuse(
            "numerics.neighbours",
            format!(
                "the kernel neighbour target must be between 8 and 1000, found {}",
                nm.neighbours
            ),
            "32–128 neighbours balance noise against resolution",
        );
    }
    if !(nm.kernel_aspect.is_finite() && (1.0..=20.0).contains(&nm.kernel_aspect)) {
        ck.refuse(
            "numerics.kernel_aspect",
            format!(
                "the kernel aspect ratio must be between 1 and 20, found {}",
                nm.kernel_aspect
            ),
            "4 suits columns whose concentration varies mainly with height",
        );
    }
    if !(nm.courant.is_finite() && nm.courant > 0.0 && nm.courant <= 1.0) {
        ck.refuse(
            "numerics.courant",
            format!(
                "the Courant number must lie in (0, 1], found {}",
                nm.courant
            ),
            "0.5 is a safe choice",
        );
    }
    let dispersion = nm.dispersion.map_or(0.0, |d| d.si());
    if !(dispersion.is_finite() && dispersion >= 0.0) {
        ck.refuse(
            "numerics.dispersion",
            format!("the dispersion coefficient must not be negative, found {dispersion} m²/s"),
            "leave it out for no dispersion",
        );
    }
    if !(10..=100_000).contains(&nm.cells) {
        ck.refuse(
            "numerics.cells",
            format!(
                "the continuum grid needs 10–100000 cells, found {}",
                nm.cells
            ),
            "200–1000 cells resolve a laboratory column",
        );
    }
    let compression = match &spec.models.compression {
        None => None,
        Some(CompressionSpec::PowerLaw {
            yield_stress,
            gel_point,
            exponent,
        }) => {
            let key = "models.compression.power_law";
            ck.positive(
                &format!("{key}.yield_stress"),
                yield_stress.si(),
                "yield stress",
                "Pa",
            );
            if !(gel_point.is_finite() && *gel_point > 0.0 && *gel_point < max_packing) {
                ck.refuse(
                    &format!("{key}.gel_point"),
                    format!("the gel point must lie between 0 and the maximum packing fraction ({max_packing}), found {gel_point}"),
                    "flocculated slurries gel at volume fractions of about 0.05–0.25",
                );
            }
            if !(exponent.is_finite() && *exponent > 1.0) {
                ck.refuse(
                    &format!("{key}.exponent"),
                    format!("the stress exponent must exceed 1, found {exponent}"),
                    "values of 5–10 are typical",
                );
            }
            Some(Compression {
                yield_stress: yield_stress.si(),
                gel_point: *gel_point,
                exponent: *exponent,
            })
        }
    };
    let numerics = Numerics {
        neighbours: nm.neighbours,
        kernel_aspect: nm.kernel_aspect,
        courant: nm.courant,
        search: nm.neighbour_search,
        dispersion,
        cells: nm.cells as usize,
    };
    if nclasses > MAX_TOTAL_CLASSES {
        ck.refuse(
            "solids",
            format!("{nclasses} size classes in all; at most {MAX_TOTAL_CLASSES} are supported"),
            "lower `size_classes`",
        );
    }
    if spec.output.file.trim().is_empty() {
        ck.refuse(
            "output.file",
            "the output file name is empty",
            "e.g. `file: out/run.h5`",
        );
    }

    if !ck.problems.is_empty() {
        return Err(ck.problems);
    }

    // Per-class single-particle data.
    let mut classes = Vec::new();
    for (si, cls) in class_shares.iter().enumerate() {
        let sp = &species[si];
        let key = format!("solids[{si}]");
        for c in cls {
            let p = Particle {
                diameter: c.diameter,
                density: sp.density,
            };
            let Some(drag) = drag_law(
                &mut ck,
                &spec.models.drag,
                sp,
                &spec.solids[si].size,
                &key,
                &p,
                &fluid,
            ) else {
                break;
            };
            let terminal = terminal_velocity(&drag, &p, &fluid, g);
            let exponent = match exponent_spec {
                ExponentSpec::Auto => ExponentRule::RichardsonZaki1954 {
                    d_over_column: c.diameter / column.wall_diameter,
                },
                ExponentSpec::Smooth => ExponentRule::Rowe1987,
                ExponentSpec::Fixed(n) => ExponentRule::Fixed(n),
            }
            .exponent(terminal.reynolds);
            classes.push(SizeClass {
                species: si,
                lower: c.lower,
                upper: c.upper,
                diameter: c.diameter,
                volume_share: c.volume_share * sp.volume_share,
                drag,
                terminal,
                relaxation_time: relaxation_time(&p, &fluid, &terminal),
                exponent,
            });
        }
    }
    if !ck.problems.is_empty() {
        return Err(ck.problems);
    }
    range_warnings(&mut ck, &spec.models.drag, &classes, &column);
    if let Some(op) = &mut thickener {
        op.feed_class_share = classes.iter().map(|c| c.volume_share).collect();
        op.class_density = classes.iter().map(|c| species[c.species].density).collect();
    }

    Ok(Setup {
        title: spec.title.clone().unwrap_or_default(),
        gravity: g,
        fluid,
        fluid_source,
        temperature,
        species,
        classes,
        column,
        initial_volume_fraction: phi0,
        max_packing,
        hindered,
        compression,
        thickener,
        engine: spec.run.engine,
        run,
        numerics,
        output: OutputControl {
            file: PathBuf::from(spec.output.file.trim()),
            height_bins: bins as usize,
        },
        warnings: ck.warnings,
    })
}

/// Check a size description and turn it into a [`Distribution`].
fn size_distribution(ck: &mut Checker, key: &str, size: &SizeSpec) -> Option<Distribution> {
    match size {
        SizeSpec::Single(d) => ck
            .positive(&format!("{key}.single"), d.si(), "particle size", "m")
            .then(|| Distribution::Single(d.si())),
        SizeSpec::LogNormal {
            median,
            geometric_sd,
        } => {
            let ok = ck.positive(
                &format!("{key}.log_normal.median"),
                median.si(),
                "median size",
                "m",
            );
            if !(geometric_sd.is_finite() && *geometric_sd > 1.0) {
                ck.refuse(
                    &format!("{key}.log_normal.geometric_sd"),
                    format!("the geometric standard deviation must exceed 1, found {geometric_sd}"),
                    "σg = d84/d50; 1.2 is a narrow sieve cut, 2–3 a broad natural distribution; use `single` for one size",
                );
                return None;
            }
            ok.then(|| Distribution::LogNormal {
                median: median.si(),
                geometric_sd: *geometric_sd,
            })
        }
        SizeSpec::RosinRammler { size_63, spread } => {
            let ok = ck.positive(
                &format!("{key}.rosin_rammler.size_63"),
                size_63.si(),
                "size",
                "m",
            );
            if !(spread.is_finite() && *spread > 0.0) {
                ck.refuse(
                    &format!("{key}.rosin_rammler.spread"),
                    format!("the spread exponent must be positive, found {spread}"),
                    "ground ores typically have spreads of 0.7–1.5",
                );
                return None;
            }
            ok.then(|| Distribution::RosinRammler {
                size_63: size_63.si(),
                spread: *spread,
            })
        }
        SizeSpec::CumulativePassing(points) => {
            let key = format!("{key}.cumulative_passing");
            if points.len() < 2 {
                ck.refuse(
                    &key,
                    "a size table needs at least two rows",
                    "give at least the finest and the coarsest size",
                );
                return None;
            }
            for (i, p) in points.iter().enumerate() {
                let k = format!("{key}[{i}]");
                if !ck.positive(&format!("{k}.size"), p.size.si(), "size", "m") {
                    return None;
                }
                if !(0.0..=100.0).contains(&p.percent) {
                    ck.refuse(
                        &format!("{k}.percent"),
                        format!("percent passing must lie in 0–100, found {}", p.percent),
                        "",
                    );
                    return None;
                }
            }
            // Accept rows in either order of size, but the order must be consistent.
            let mut rows: Vec<(f64, f64)> = points
                .iter()
                .map(|p| (p.size.si(), p.percent / 100.0))
                .collect();
            let ascending = rows[1].0 > rows[0].0;
            if !ascending {
                rows.reverse();
            }
            let n = points.len();
            for j in 1..n {
                let i = if ascending { j } else { n - 1 - j };
                let k = format!("{key}[{i}]");
                if rows[j].0 <= rows[j - 1].0 {
                    ck.refuse(
                        &format!("{k}.size"),
                        "sizes in the table are not monotone (repeated, or out of order)",
                        "list rows from fine to coarse or from coarse to fine, each size once",
                    );
                    return None;
                }
                if rows[j].1 < rows[j - 1].1 {
                    ck.refuse(
                        &format!("{k}.percent"),
                        "percent passing decreases with size: the table is not monotone",
                        "cumulative passing must grow (or stay level) from the finest to the coarsest size",
                    );
                    return None;
                }
            }
            if (rows[n - 1].1 - 1.0).abs() > 1e-9 {
                let i = if ascending { n - 1 } else { 0 };
                ck.refuse(
                    &format!("{key}[{i}].percent"),
                    format!("the coarsest size passes {} %, not 100 %", rows[n - 1].1 * 100.0),
                    "add the top size (the smallest aperture that passes everything) with `percent: 100`",
                );
                return None;
            }
            Some(Distribution::Table(rows))
        }
    }
}

/// Choose the drag law for a class; None (with a problem recorded) if the
/// choice does not fit the species.
fn drag_law(
    ck: &mut Checker,
    choice: &DragSpec,
    sp: &Species,
    size: &SizeSpec,
    key: &str,
    p: &Particle,
    fluid: &Fluid,
) -> Option<DragLaw> {
    let sphere_only = |ck: &mut Checker, law: &str| {
        ck.refuse(
            "models.drag",
            format!(
                "`{law}` is a drag law for spheres, but species `{}` is not spherical",
                sp.name
            ),
            "choose `auto`, or `haider_levenspiel` for a known sphericity",
        );
        None
    };
    let law = match (choice, sp.shape) {
        (DragSpec::Auto, Shape::Sphere) => DragLaw::CliftGraceWeber,
        (DragSpec::Auto, Shape::NonSpherical { sphericity }) => {
            DragLaw::HaiderLevenspiel { sphericity }
        }
        (DragSpec::Auto | DragSpec::FergusonChurch, Shape::NaturalGrains) => {
            DragLaw::FERGUSON_CHURCH_NATURAL_SIEVE
        }
        (DragSpec::FergusonChurch, Shape::Sphere) => DragLaw::FERGUSON_CHURCH_SMOOTH_SPHERES,
        (DragSpec::FergusonChurch, Shape::NonSpherical { .. }) => {
            ck.refuse(
                "models.drag",
                format!("Ferguson–Church covers spheres and natural grains, not species `{}` of given sphericity", sp.name),
                "use `haider_levenspiel` (or `auto`) for particles of known sphericity",
            );
            return None;
        }
        (DragSpec::HaiderLevenspiel, Shape::Sphere) => {
            DragLaw::HaiderLevenspiel { sphericity: 1.0 }
        }
        (DragSpec::HaiderLevenspiel, Shape::NonSpherical { sphericity }) => {
            DragLaw::HaiderLevenspiel { sphericity }
        }
        (DragSpec::HaiderLevenspiel, Shape::NaturalGrains) => {
            ck.refuse(
                &format!("{key}.shape"),
                format!("Haider–Levenspiel needs a sphericity, and species `{}` is given as natural grains", sp.name),
                "write `shape: { non_spherical: { sphericity: 0.8 } }`, or keep natural grains with `ferguson_church`",
            );
            return None;
        }
        (_, Shape::NonSpherical { .. } | Shape::NaturalGrains) => {
            return sphere_only(ck, drag_spec_name(choice));
        }
        (DragSpec::Stokes, Shape::Sphere) => DragLaw::Stokes,
        (DragSpec::SchillerNaumann, Shape::Sphere) => DragLaw::SchillerNaumann,
        (DragSpec::CliftGraceWeber, Shape::Sphere) => DragLaw::CliftGraceWeber,
        (DragSpec::BrownLawler, Shape::Sphere) => DragLaw::BrownLawler,
        (DragSpec::TwoTerm(TwoTermSpec::Derived { newton_cd }), Shape::Sphere) => {
            if !(newton_cd.is_finite() && *newton_cd > 0.0) {
                ck.refuse(
                    "models.drag.two_term.derived.newton_cd",
                    format!("the Newton drag coefficient must be positive, found {newton_cd}"),
                    "0.44 for smooth spheres",
                );
                return None;
            }
            DragLaw::two_term_derived(*newton_cd)
        }
        (DragSpec::TwoTerm(TwoTermSpec::Coefficients { k1, k2 }), Shape::Sphere) => {
            if !matches!(size, SizeSpec::Single(_)) {
                ck.refuse(
                    "models.drag.two_term.coefficients",
                    format!("given k1 and k2 hold for one particle size, but species `{}` has a size distribution", sp.name),
                    "use `two_term: { derived: { newton_cd: 0.44 } }` to scale the coefficients with size",
                );
                return None;
            }
            let ok1 = ck.positive(
                "models.drag.two_term.coefficients.k1",
                k1.si(),
                "k1",
                "N·s/m",
            );
            let ok2 = k2.si() >= 0.0 && k2.si().is_finite();
            if !ok2 {
                ck.refuse(
                    "models.drag.two_term.coefficients.k2",
                    format!("k2 must not be negative, found {} N·s²/m²", k2.si()),
                    "",
                );
            }
            if !(ok1 && ok2) {
                return None;
            }
            DragLaw::two_term_from_coefficients(k1.si(), k2.si(), p, fluid)
        }
    };
    Some(law)
}

fn drag_spec_name(d: &DragSpec) -> &'static str {
    match d {
        DragSpec::Auto => "auto",
        DragSpec::Stokes => "stokes",
        DragSpec::SchillerNaumann => "schiller_naumann",
        DragSpec::CliftGraceWeber => "clift_grace_weber",
        DragSpec::BrownLawler => "brown_lawler",
        DragSpec::HaiderLevenspiel => "haider_levenspiel",
        DragSpec::FergusonChurch => "ferguson_church",
        DragSpec::TwoTerm(_) => "two_term",
    }
}

/// Warnings about laws used outside the range they were fitted on.
fn range_warnings(ck: &mut Checker, choice: &DragSpec, classes: &[SizeClass], column: &Column) {
    let re_max = classes
        .iter()
        .map(|c| c.terminal.reynolds)
        .fold(0.0, f64::max);
    match choice {
        DragSpec::Stokes if re_max > 0.3 => ck.warn(
            "models.drag",
            format!("Stokes drag used up to Re = {re_max:.3}; above Re ≈ 0.3 it overstates the settling velocity by several percent"),
        ),
        DragSpec::BrownLawler if re_max > 2e5 => ck.warn(
            "models.drag",
            format!("Brown–Lawler used up to Re = {re_max:.3e}, beyond its fitted range (Re < 2×10⁵)"),
        ),
        _ => {}
    }
    let d_over_d = classes.iter().map(|c| c.diameter).fold(0.0, f64::max) / column.wall_diameter;
    if d_over_d > 0.04 {
        ck.warn(
            "vessel.column.cross_section",
            format!("the largest particles are {:.1} % of the column width; wall effects exceed the range Richardson–Zaki covered (d/D ≤ 0.04)", d_over_d * 100.0),
        );
    }
}

/// Feed level of a thickener, m above the floor (the rest of its geometry
/// is in [`Column`]).
#[derive(Debug, Clone, Copy, PartialEq)]
struct ThickenerGeometry {
    feed_level: f64,
}

/// The vessel's geometry: a [`Column`] for both kinds (for a thickener its
/// height is floor to overflow lip), plus the feed level of a thickener.
fn vessel(ck: &mut Checker, spec: &VesselSpec) -> (Column, Option<ThickenerGeometry>) {
    match spec {
        VesselSpec::Column {
            height,
            cross_section,
        } => {
            ck.positive("vessel.column.height", height.si(), "column height", "m");
            let (area, wall_diameter, description, shape) = match cross_section {
                CrossSectionSpec::Round { diameter } => {
                    round(ck, "vessel.column.cross_section", diameter.si(), "column")
                }
                CrossSectionSpec::Rectangular { width, depth } => rectangular(
                    ck,
                    "vessel.column.cross_section",
                    width.si(),
                    depth.si(),
                    "column",
                ),
            };
            (
                Column {
                    height: height.si(),
                    area,
                    wall_diameter,
                    description,
                    shape,
                },
                None,
            )
        }
        VesselSpec::Thickener {
            height,
            feed_level,
            cross_section,
        } => {
            let key = "vessel.thickener";
            let h = height.si();
            let zf = feed_level.si();
            let ok = ck.positive(&format!("{key}.height"), h, "thickener height", "m");
            if ck.positive(&format!("{key}.feed_level"), zf, "feed level", "m") && ok && zf >= h {
                ck.refuse(
                    &format!("{key}.feed_level"),
                    format!(
                        "the feed level ({zf} m above the floor) must lie inside the vessel, below the overflow lip at {h} m"
                    ),
                    "give the height of the feed well outlet above the floor, between 0 and `height`",
                );
            }
            let sk = format!("{key}.cross_section");
            let (area, wall_diameter, description, shape) = match cross_section {
                TankSectionSpec::Round { diameter } => round(ck, &sk, diameter.si(), "tank"),
                TankSectionSpec::Rectangular { width, depth } => {
                    rectangular(ck, &sk, width.si(), depth.si(), "tank")
                }
                TankSectionSpec::Area(a) => {
                    let a = a.si();
                    ck.positive(&format!("{sk}.area"), a, "tank area", "m²");
                    // Only the area matters to a 1-D model; a round tank of
                    // that area stands in wherever a shape is needed.
                    let d = (4.0 * a.max(0.0) / std::f64::consts::PI).sqrt();
                    (
                        a,
                        d,
                        format!(
                            "area {a:.4} m² (round tank of {d:.3} m diameter assumed for shape)"
                        ),
                        ColumnShape::Round { diameter: d },
                    )
                }
            };
            (
                Column {
                    height: h,
                    area,
                    wall_diameter,
                    description,
                    shape,
                },
                Some(ThickenerGeometry { feed_level: zf }),
            )
        }
    }
}

fn round(ck: &mut Checker, key: &str, d: f64, what: &str) -> (f64, f64, String, ColumnShape) {
    ck.positive(
        &format!("{key}.round.diameter"),
        d,
        &format!("{what} diameter"),
        "m",
    );
    let description = if d >= 2.0 {
        format!("round, {d:.2} m diameter")
    } else {
        format!("round, {:.1} mm diameter", d * 1e3)
    };
    (
        std::f64::consts::PI / 4.0 * d * d,
        d,
        description,
        ColumnShape::Round { diameter: d },
    )
}

fn rectangular(
    ck: &mut Checker,
    key: &str,
    w: f64,
    dp: f64,
    what: &str,
) -> (f64, f64, String, ColumnShape) {
    ck.positive(
        &format!("{key}.rectangular.width"),
        w,
        &format!("{what} width"),
        "m",
    );
    ck.positive(
        &format!("{key}.rectangular.depth"),
        dp,
        &format!("{what} depth"),
        "m",
    );
    let description = if w.max(dp) >= 2.0 {
        format!("rectangular, {w:.2} × {dp:.2} m")
    } else {
        format!("rectangular, {:.1} × {:.1} mm", w * 1e3, dp * 1e3)
    };
    (
        w * dp,
        2.0 * w * dp / (w + dp),
        description,
        ColumnShape::Rectangular {
            width: w,
            depth: dp,
        },
    )
}

/// A solids loading as a volume fraction (NaN for a mass fraction outside [0, 1)).
fn loading_fraction(loading: Loading, rho_s_mean: f64, rho_f: f64) -> f64 {
    match loading {
        Loading::VolumeFraction(v) => v,
        Loading::MassConcentration(c) => c / rho_s_mean,
        Loading::MassFraction(w) => {
            if !(0.0..1.0).contains(&w) {
                f64::NAN
            } else {
                (w / rho_s_mean) / (w / rho_s_mean + (1.0 - w) / rho_f)
            }
        }
    }
}

/// Check a schedule's times and convert it; `value` converts (and checks)
/// one value given its key. None if a time is wrong.
fn schedule<T: Clone>(
    ck: &mut Checker,
    key: &str,
    spec: &Scheduled<T>,
    mut value: impl FnMut(&mut Checker, &str, &T) -> f64,
) -> Option<Schedule> {
    let rows = |ck: &mut Checker,
                kind: &str,
                rows: &[ScheduleRow<T>],
                value: &mut dyn FnMut(&mut Checker, &str, &T) -> f64| {
        let k = format!("{key}.{kind}");
        if rows.is_empty() {
            ck.refuse(
                &k,
                "a schedule needs at least one row",
                "e.g. `- { at: \"0 h\", value: ... }`",
            );
            return None;
        }
        let mut out = Vec::with_capacity(rows.len());
        let mut ok = true;
        for (i, r) in rows.iter().enumerate() {
            let t = r.at.si();
            let tk = format!("{k}[{i}].at");
            if !(t.is_finite() && t >= 0.0) {
                ck.refuse(
                    &tk,
                    format!("schedule times count from the start of the run and cannot be negative, found {t} s"),
                    "write times since the start, e.g. \"0 h\", \"6 h\"",
                );
                ok = false;
            } else if let Some(&(prev, _)) = out.last()
                && t <= prev
            {
                ck.refuse(
                    &tk,
                    format!("schedule times must increase from row to row: {t} s follows {prev} s"),
                    "list the rows in order of time, each time once",
                );
                ok = false;
            }
            let v = value(ck, &format!("{k}[{i}].value"), &r.value);
            out.push((t, v));
        }
        ok.then_some(out)
    };
    match spec {
        Scheduled::Constant(v) => Some(Schedule::Constant(value(ck, key, v))),
        Scheduled::Steps(r) => rows(ck, "steps", r, &mut value).map(Schedule::Steps),
        Scheduled::Table(r) => rows(ck, "table", r, &mut value).map(Schedule::Table),
        Scheduled::Ramp(r) => {
            let k = format!("{key}.ramp");
            let (t0, t1) = (r.start.si(), r.end.si());
            let a = value(ck, &format!("{k}.from"), &r.from);
            let b = value(ck, &format!("{k}.to"), &r.to);
            if !(t0.is_finite() && t0 >= 0.0) {
                ck.refuse(
                    &format!("{k}.start"),
                    format!("the ramp cannot start before the run, found {t0} s"),
                    "write a time since the start, e.g. \"2 h\"",
                );
                return None;
            }
            if !(t1.is_finite() && t1 > t0) {
                ck.refuse(
                    &format!("{k}.end"),
                    format!("the ramp must end after it starts ({t0} s), found {t1} s"),
                    "for a sudden change use `steps`",
                );
                return None;
            }
            Some(Schedule::Table(vec![(t0, a), (t1, b)]))
        }
    }
}

/// Refuse a negative or non-finite value; returns the value.
fn non_negative(ck: &mut Checker, key: &str, v: f64, what: &str, unit: &str) -> f64 {
    if !(v.is_finite() && v >= 0.0) {
        ck.refuse(
            key,
            format!("{what} cannot be negative, found {} {unit}", fmt_si(v)),
            "check the sign and the unit of this value",
        );
    }
    v
}

/// Flows and feed of a thickener, checked (volume fractions from the mean
/// solid density). The class shares and densities are filled in later.
fn operation(
    ck: &mut Checker,
    spec: &OperationSpec,
    column: &Column,
    geometry: ThickenerGeometry,
    (rho_s_mean, rho_f): (f64, f64),
    max_packing: f64,
    end_time: f64,
) -> Option<Operation> {
    let key = "operation";
    let to_h = |q: f64| q * 3600.0;
    let feed_flow = schedule(
        ck,
        &format!("{key}.feed_flow"),
        &spec.feed_flow,
        |ck, k, q| non_negative(ck, k, q.si(), "the feed flow", "m³/s"),
    );
    let feed_solids = schedule(
        ck,
        &format!("{key}.feed_solids"),
        &spec.feed_solids,
        |ck, k, l| {
            let phi = loading_fraction(*l, rho_s_mean, rho_f);
            if !(phi.is_finite() && phi >= 0.0) {
                ck.refuse(
                    k,
                    "the feed solids cannot be negative (and a mass fraction must be below 100 %)",
                    "write e.g. \"3.5 g/L\", \"2 vol%\" or \"15 wt%\"",
                );
            } else if phi >= max_packing {
                ck.refuse(
                    k,
                    format!(
                        "a feed of {:.2} vol% solids is at or above the maximum packing fraction ({:.2} vol%)",
                        phi * 100.0,
                        max_packing * 100.0
                    ),
                    "a thickener feed is a dilute slurry: a few g/L to a few hundred g/L",
                );
            }
            phi
        },
    );
    let underflow = match &spec.underflow {
        UnderflowSpec::Flow(s) => schedule(ck, &format!("{key}.underflow.flow"), s, |ck, k, q| {
            non_negative(ck, k, q.si(), "the underflow", "m³/s")
        })
        .map(Underflow::Flow),
        UnderflowSpec::Ratio(s) => {
            schedule(ck, &format!("{key}.underflow.ratio"), s, |ck, k, r| {
                if !(r.is_finite() && (0.0..1.0).contains(r)) {
                    ck.refuse(
                        k,
                        format!("the underflow/feed ratio must lie in [0, 1), found {r}"),
                        "the underflow is a part of the feed; the rest leaves over the lip (typically 0.2–0.6)",
                    );
                }
                *r
            })
            .map(Underflow::Ratio)
        }
    };
    let threshold = spec.blanket_threshold.map(|c| c.si());
    if let Some(c) = threshold {
        ck.positive(
            &format!("{key}.blanket_threshold"),
            c,
            "the blanket threshold",
            "kg/m³",
        );
    }
    let (feed_flow, feed_solids, underflow) = (feed_flow?, feed_solids?, underflow?);
    // Q_u < Q_f wherever the feed runs (both piecewise linear: the ends and
    // the breakpoints bound the difference).
    if let Underflow::Flow(u) = &underflow {
        let mut times = vec![0.0, end_time];
        for t in feed_flow.breakpoints().into_iter().chain(u.breakpoints()) {
            if (0.0..=end_time).contains(&t) {
                times.push(t);
                times.push((t - t.abs().max(1.0) * 1e-12).max(0.0));
            }
        }
        times.sort_by(f64::total_cmp);
        for t in times {
            let (qf, qu) = (feed_flow.at(t), u.at(t));
            if qu > 0.0 && qu >= qf {
                ck.refuse(
                    &format!("{key}.underflow.flow"),
                    format!(
                        "at t = {:.4} h the underflow ({:.4} m³/h) is not less than the feed ({:.4} m³/h): nothing would leave over the lip, or liquid would have to enter there",
                        t / 3600.0,
                        to_h(qu),
                        to_h(qf)
                    ),
                    "draw less underflow than the feed, or give it as `ratio:` of the feed",
                );
                break;
            }
        }
    }
    let blanket = match threshold {
        Some(c) => c / rho_s_mean,
        None => {
            let phi = feed_solids.at(0.0);
            if phi <= 0.0 {
                ck.refuse(
                    &format!("{key}.blanket_threshold"),
                    "the feed carries no solids at the start, so the blanket threshold has no default",
                    "give `blanket_threshold`, e.g. \"3 g/L\"",
                );
            }
            phi
        }
    };
    Some(Operation {
        area: column.area,
        height: column.height,
        feed_level: geometry.feed_level,
        feed_flow,
        feed_solids,
        underflow,
        feed_class_share: Vec::new(),
        class_density: Vec::new(),
        blanket_threshold: blanket,
    })
}
