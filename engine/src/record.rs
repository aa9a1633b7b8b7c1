//! What a run records: concentration profiles over height and time, total and
//! per size class, the settling curve and the solids inventory. Engines fill a
//! [`RunRecord`]; the writers in [`crate::output`] turn it into files.

/// How the run ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RunStatus {
    /// Reached the end time.
    Complete,
    /// Stopped early (interrupt or time limit): the frames so far are valid.
    Partial,
}

impl RunStatus {
    pub fn as_str(self) -> &'static str {
        match self {
            RunStatus::Complete => "complete",
            RunStatus::Partial => "partial",
        }
    }
}

/// Fixed description of the recording grid and the size classes.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordLayout {
    /// Height of the slab centres above the floor, m (length nz).
    pub z: Vec<f64>,
    /// Slab boundaries, m (length nz + 1), from 0 to the fill height.
    pub z_edges: Vec<f64>,
    /// Representative diameter of each size class, m (length nc).
    pub class_diameter: Vec<f64>,
    /// Lower and upper bound of each class, m.
    pub class_lower: Vec<f64>,
    pub class_upper: Vec<f64>,
    /// Index of the species of each class.
    pub class_species: Vec<usize>,
    /// Species names and solid densities (kg/m³).
    pub species_name: Vec<String>,
    pub species_density: Vec<f64>,
    /// Terminal velocity of each class in clear fluid, m/s.
    pub class_terminal_velocity: Vec<f64>,
    /// Cross-section area of the vessel, m².
    pub area: f64,
}

impl RecordLayout {
    pub fn nz(&self) -> usize {
        self.z.len()
    }
    pub fn nclasses(&self) -> usize {
        self.class_diameter.len()
    }
}

/// One recorded instant.
#[derive(Debug, Clone, PartialEq)]
pub struct Frame {
    /// Simulated time, s.
    pub time: f64,
    /// Solids volume fraction per class and slab, class-major: `[class * nz + k]`.
    pub phi_class: Vec<f64>,
    /// Height of the clear-liquid/suspension interface, m.
    pub interface_height: f64,
    /// Height of the bed (sediment) surface, m.
    pub bed_height: f64,
    /// Solids volume in the vessel, m³.
    pub solids_volume: f64,
}

impl Frame {
    /// Total solids volume fraction per slab (sum over classes).
    pub fn phi_total(&self, nz: usize) -> Vec<f64> {
        let mut total = vec![0.0; nz];
        for chunk in self.phi_class.chunks_exact(nz) {
            for (t, p) in total.iter_mut().zip(chunk) {
                *t += p;
            }
        }
        total
    }
}

/// Everything a run produced, plus what is needed to reproduce it.
#[derive(Debug, Clone, PartialEq)]
pub struct RunRecord {
    pub layout: RecordLayout,
    pub frames: Vec<Frame>,
    pub status: RunStatus,
    /// The scenario text exactly as given.
    pub scenario_yaml: String,
    /// Title from the scenario.
    pub title: String,
    /// Seed of the random streams.
    pub seed: u64,
    /// Which engine produced the record (e.g. "particle").
    pub engine: String,
    /// Number of parcels (particle engine) or cells (continuum engine).
    pub resolution: u64,
    /// Feed and outlets of a continuous vessel (None for a batch column).
    pub outlets: Option<OutletSeries>,
}

/// What crosses the boundaries of a continuous thickener at one record, in
/// SI: flows in m³/s, concentrations in kg/m³ (solids mass per volume of
/// suspension), solids rates in kg/s, cumulative masses in kg.
#[derive(Debug, Clone, PartialEq)]
pub struct OutletSample {
    pub time: f64,
    pub feed_flow: f64,
    pub underflow_flow: f64,
    pub overflow_flow: f64,
    pub feed_concentration: f64,
    pub underflow_concentration: f64,
    pub overflow_concentration: f64,
    /// Per size class, kg/m³.
    pub underflow_concentration_by_class: Vec<f64>,
    pub overflow_concentration_by_class: Vec<f64>,
    /// Instantaneous solids mass flows, kg/s: flow × concentration.
    pub feed_solids_rate: f64,
    pub underflow_solids_rate: f64,
    pub overflow_solids_rate: f64,
    /// Blanket (sludge bed) level above the floor, m ([`blanket_level`]).
    pub blanket_level: f64,
    /// Solids fed, and taken out by the underflow and the overflow, since the
    /// start (time integrals of the engine's own boundary fluxes), kg.
    pub solids_in: f64,
    pub solids_out_underflow: f64,
    pub solids_out_overflow: f64,
    /// Solids in the vessel now and at the start, kg.
    pub inventory: f64,
    pub initial_inventory: f64,
    /// in − out − (inventory − initial inventory), kg; zero up to rounding
    /// for a conservative engine.
    pub balance_residual: f64,
}

impl OutletSample {
    /// |residual| relative to the larger of the solids fed and the initial
    /// inventory (the scale of what could go missing).
    pub fn relative_residual(&self) -> f64 {
        let scale = self.solids_in.max(self.initial_inventory).max(1e-300);
        self.balance_residual.abs() / scale
    }
}

/// The outlet series of a run, one sample per frame.
#[derive(Debug, Clone, PartialEq)]
pub struct OutletSeries {
    /// Feed level above the floor, m.
    pub feed_level: f64,
    /// Height of the overflow lip above the floor, m.
    pub overflow_level: f64,
    /// Blanket threshold, kg/m³ of solids.
    pub blanket_threshold: f64,
    pub samples: Vec<OutletSample>,
}

/// Relative solids-balance residual above which a run's balance is
/// reported as broken (the brief's 0.1 %; a conservative engine stays at
/// rounding, about 1e-12).
pub const BALANCE_TOLERANCE: f64 = 1e-3;

impl OutletSeries {
    /// Largest relative residual over the samples (NaN if any is NaN, so a
    /// broken balance is never hidden).
    pub fn worst_residual(&self) -> f64 {
        self.samples
            .iter()
            .map(OutletSample::relative_residual)
            .fold(0.0, |m: f64, r| {
                if m.is_nan() || r.is_nan() {
                    f64::NAN
                } else {
                    m.max(r)
                }
            })
    }
}

/// Rule used for the interface: scanning down from the top, the first height
/// where the total volume fraction reaches half the initial loading, located by
/// linear interpolation between slab centres (documented in the README).
pub const INTERFACE_THRESHOLD: f64 = 0.5;

/// Height of the clear-liquid/suspension interface from a total profile.
pub fn interface_height(phi_total: &[f64], z: &[f64], phi0: f64, top: f64) -> f64 {
    level_crossing(phi_total, z, INTERFACE_THRESHOLD * phi0, top)
}

/// Blanket (sludge bed) level of a continuous thickener: scanning down from
/// the overflow lip, the first height where the total solids volume
/// fraction reaches `threshold` (the scenario's `blanket_threshold`, by
/// default the feed concentration at the start), interpolated linearly
/// between profile points; `top` if the top point is at or above it, 0 if
/// no point is.
pub fn blanket_level(phi_total: &[f64], z: &[f64], threshold: f64, top: f64) -> f64 {
    level_crossing(phi_total, z, threshold, top)
}

/// Scanning down from the top, the first height where `phi_total` reaches
/// `level`, interpolated between the points `z`.
pub fn level_crossing(phi_total: &[f64], z: &[f64], level: f64, top: f64) -> f64 {
    let nz = phi_total.len();
    if nz == 0 {
        return 0.0;
    }
    if phi_total[nz - 1] >= level {
        return top;
    }
    for k in (0..nz - 1).rev() {
        if phi_total[k] >= level {
            // Between centres k (above level) and k+1 (below).
            let (a, b) = (phi_total[k], phi_total[k + 1]);
            let s = (a - level) / (a - b);
            return z[k] + s * (z[k + 1] - z[k]);
        }
    }
    0.0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interface_is_interpolated_between_slab_centres() {
        let z = [0.05, 0.15, 0.25, 0.35];
        // Suspension at 0.1 below 0.2 m, clear above: the half level 0.05 lies
        // halfway between the centres 0.15 and 0.25.
        let h = interface_height(&[0.1, 0.1, 0.0, 0.0], &z, 0.1, 0.4);
        assert!((h - 0.2).abs() < 1e-15);
        assert_eq!(interface_height(&[0.1; 4], &z, 0.1, 0.4), 0.4);
        assert_eq!(interface_height(&[0.0; 4], &z, 0.1, 0.4), 0.0);
    }
}
