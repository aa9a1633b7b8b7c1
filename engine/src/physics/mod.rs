//! Physics laws as small pure functions, all in SI units.
//!
//! Nothing here knows about parcels, grids or files: the particle engine and
//! the continuum solver both call these same functions.

pub mod compression;
pub mod drag;
pub mod hindered;
pub mod polydisperse;
pub mod terminal;
pub mod water;

/// Standard acceleration of gravity, m/s² (CGPM 1901, exact by definition).
pub const STANDARD_GRAVITY: f64 = 9.80665;

/// A Newtonian liquid at the conditions of the run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fluid {
    /// Density, kg/m³.
    pub density: f64,
    /// Dynamic viscosity, Pa·s.
    pub viscosity: f64,
}

impl Fluid {
    /// Kinematic viscosity ν = μ/ρ, m²/s.
    pub fn kinematic_viscosity(&self) -> f64 {
        self.viscosity / self.density
    }
}

/// One solid particle, described by its equal-volume sphere.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Particle {
    /// Diameter of the sphere of equal volume, m.
    pub diameter: f64,
    /// Density of the solid, kg/m³.
    pub density: f64,
}

impl Particle {
    /// Volume, m³.
    pub fn volume(&self) -> f64 {
        std::f64::consts::PI / 6.0 * self.diameter.powi(3)
    }

    /// Submerged specific gravity R = (ρp − ρf)/ρf.
    pub fn submerged_specific_gravity(&self, fluid: &Fluid) -> f64 {
        (self.density - fluid.density) / fluid.density
    }

    /// Archimedes number Ar = ρf (ρp − ρf) g d³ / μ²; equal to the
    /// dimensionless grain size d*³ of Haider–Levenspiel and Dietrich's D*.
    pub fn archimedes_number(&self, fluid: &Fluid, g: f64) -> f64 {
        fluid.density * (self.density - fluid.density) * g * self.diameter.powi(3)
            / (fluid.viscosity * fluid.viscosity)
    }

    /// Buoyant weight (ρp − ρf) g V, N.
    pub fn buoyant_weight(&self, fluid: &Fluid, g: f64) -> f64 {
        (self.density - fluid.density) * g * self.volume()
    }

    /// Particle Reynolds number ρf v d / μ at speed `v`.
    pub fn reynolds(&self, fluid: &Fluid, v: f64) -> f64 {
        fluid.density * v.abs() * self.diameter / fluid.viscosity
    }
}
